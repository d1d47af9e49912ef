"""The debiased family's figure: the bound on the effect over the two strengths of a hidden
confounder (cd2 across, cy2 up), with the benchmarks and chosen strengths numbered."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.levels import level_text
from ..output.figures import (
    figure_paths,
    filled_levels,
    legend_below,
    legend_point,
    new_figure,
    numbered_markers,
    percent_axis,
    plot_label,
    save_figure,
    tip_line,
)


def limits(result: Any) -> float:
    """The default zoom: twice the robustness value and every scenario, with room."""
    pts = [2 * result.robustness_value, 0.05]
    pts += [max(s.cy2, s.cd2) * 1.2 for s in result.scenarios]
    return float(min(0.99, max(pts)))


def contours(result: Any, path: str | Path | Sequence[str | Path], size: int = 241) -> list[Path]:
    """The bound nearest the target over (cd2, cy2): filled levels with a colour bar, a solid
    line where the bound reaches the target and a dashed one where its one-sided confidence
    bound does, the scenarios numbered as in the scenario table."""
    from .core import surface

    paths = figure_paths(path)
    lim = limits(result)
    grid = np.linspace(0, min(lim, 0.999), size)
    s = surface(result.moments, grid, grid, result.rho, result.alpha)
    side = 1.0 if result.estimate >= result.target else -1.0
    near, conf = ("bound_lower", "ci_lower") if side > 0 else ("bound_upper", "ci_upper")
    level = level_text(alpha=result.alpha)
    goal = "zero" if result.target == 0 else f"{result.target:.3g}"
    fig, ax = new_figure()
    edge = "lower" if side > 0 else "upper"
    # Levels over the informative range: from the estimate to as far past the target as the
    # estimate lies before it (beyond that, near cd2 = 1, the bound runs off to infinity).
    reach = abs(result.estimate - result.target) or 1.0
    shown = np.clip(s[near], result.target - reach, result.target + reach)
    filled_levels(ax, grid, grid, shown, f"The {edge} bound on the effect", result.target)
    handles: list = []
    tip_line(ax, grid, grid, side * (s[near] - result.target), 0.0, "estimate",
             f"Bound reaches {goal}", handles)  # fmt: skip
    tip_line(ax, grid, grid, side * (s[conf] - result.target), 0.0, "ci",
             f"One-sided {level} confidence bound reaches {goal}", handles)  # fmt: skip
    numbered_markers(ax, [(sc.cd2, sc.cy2) for sc in result.scenarios])
    who = f" of {plot_label(result.treatment)}" if result.treatment else ""
    rho = "" if result.rho == 1 else f", |rho| = {result.rho:g}"
    ax.set_title(
        f"Where a hidden confounder could move the effect{who}\n"
        f"(debiased ML estimate {result.estimate:.3g}{rho})"
    )
    ax.set_xlabel("cd2: confounder's share of the Riesz representer's variation")
    ax.set_ylabel("cy2: confounder's share of the outcome's residual variation")
    ax.set_xlim(0, lim)
    ax.set_ylim(0, lim)
    percent_axis(ax, "x")
    percent_axis(ax, "y")
    if result.scenarios:
        handles.append(
            legend_point(
                "o", mfc="white", mec="black", ms=9, label="Scenario (numbered as in the table)"
            )
        )
    legend_below(ax, handles)
    return save_figure(fig, paths)
