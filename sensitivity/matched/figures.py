"""The matched family's figure: the p-value bounds against Gamma."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..output.figures import figure_paths, legend_below, new_figure, save_figure


def matched_figure(result: Any, path: str | Path | Sequence[str | Path]) -> list[Path]:
    """The upper bound on the one-sided p-value against Gamma, with alpha and the crossing."""
    paths = figure_paths(path)
    fig, ax = new_figure()
    ax.plot(result.gamma, result.p_upper, color="black", lw=2, marker="o", ms=3,
            label="Upper bound on the p-value")  # fmt: skip
    ax.plot(result.gamma, result.p_lower, color="black", lw=1, ls="--",
            label="Lower bound on the p-value")  # fmt: skip
    ax.axhline(result.alpha, color="#d62728", lw=1, ls=":", label=f"alpha = {result.alpha:g}")
    g = result.gamma_at_alpha
    if g is not None and np.isfinite(g) and result.gamma.min() <= g <= result.gamma.max():
        ax.plot([g], [result.alpha], "D", color="#d62728", ms=7,
                label=f"Crossing at Gamma = {g:.2f}")  # fmt: skip
    ax.set_xlabel("Gamma: how much more likely hidden bias could make one unit the treated one")
    ax.set_ylabel("One-sided p-value")
    name = "sign test" if result.test == "sign" else "signed-rank test"
    ax.set_title(f"Rosenbaum bounds ({name}, {result.pairs:,} pairs)")
    legend_below(ax, ax.get_legend_handles_labels()[0])
    save_figure(fig, paths)
    return paths
