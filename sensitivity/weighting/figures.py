"""The weighting family's figure: bounds and intervals against Λ.

One panel, the effect on the difference scale against Λ: each method's interval as a band
(sharp darker, box lighter), its point bounds as lines, the target as a thin black line,
and the least Λ at which each interval includes the target as a dotted vertical line, all
named in the legend below the plot (no free text on the plot).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.levels import level_text
from ..output.figures import figure_paths, legend_below, new_figure, save_figure

COLOURS = {"sharp": "#5e3c99", "percentile": "#e66101"}  # the ends of the diverging fill
NAMES = {"sharp": "Sharp", "percentile": "Box"}


def draw(result: Any, paths: str | Path | Sequence[str | Path]) -> list[Path]:
    """Draw `result`'s bounds and intervals against Λ into each of `paths`."""
    out = figure_paths(paths)
    fig, ax = new_figure(figsize=(6.4, 4.8))
    lam = np.asarray(result.lam, float)
    level = level_text(result.ci_level)
    handles = []
    for method, alpha in (("percentile", 0.18), ("sharp", 0.32)):
        if method not in result.methods:
            continue
        t = result.table[method]
        colour = COLOURS[method]
        band = ax.fill_between(
            lam,
            t["ci_lower"],
            t["ci_upper"],
            color=colour,
            alpha=alpha,
            lw=0,
            label=f"{NAMES[method]}: {level} interval",
        )
        (line,) = ax.plot(lam, t["lower"], color=colour, lw=1.8, label=f"{NAMES[method]}: bounds")
        ax.plot(lam, t["upper"], color=colour, lw=1.8)
        handles += [band, line]
        crossing = result.lambda_at_null[method]
        if crossing is not None and crossing > 1:
            handles.append(
                ax.axvline(
                    crossing,
                    color=colour,
                    ls=":",
                    lw=1.4,
                    label=f"{NAMES[method]}: interval reaches {result.target:g} at "
                    f"Λ = {crossing:.2f}",
                )
            )
    handles.append(
        ax.axhline(result.target, color="black", lw=0.9, label=f"Target {result.target:g}")
    )
    if lam.size == 1:
        ax.set_xlim(0.95, float(lam[0]) + 0.05)
    else:
        ax.set_xlim(float(lam.min()), float(lam.max()))
    ax.set_xlabel("Λ: most a hidden confounder multiplies a unit's odds of treatment")
    scale = "risk difference" if result.outcome_type == "binary" else "difference in means"
    ax.set_ylabel(f"Weighted {result.estimand.upper()} ({scale})")
    ax.set_title(
        f"Weighted {result.estimand.upper()} {result.estimate:.3g} under hidden confounding up to Λ"
    )
    legend_below(ax, handles)
    return save_figure(fig, out)
