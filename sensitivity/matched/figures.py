"""The matched family's figure: the p-value bounds against Gamma."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..output.figures import (
    MARK_COLOUR,
    MARK_SHAPE,
    figure_paths,
    legend_below,
    new_figure,
    save_figure,
)


def matched_figure(result: Any, path: str | Path | Sequence[str | Path]) -> list[Path]:
    """The worst-case (and best-case) one-sided p-value against Gamma, with alpha and the
    Gamma at which the worst case stops being below it."""
    paths = figure_paths(path)
    fig, ax = new_figure()
    ax.plot(result.gamma, result.p_upper, color="black", lw=2, marker="o", ms=3,
            label="Worst-case p")  # fmt: skip
    ax.plot(result.gamma, result.p_lower, color="black", lw=1, ls="--",
            label="Best-case p")  # fmt: skip
    ax.axhline(result.alpha, color="#d62728", lw=1, ls=":", label=f"alpha = {result.alpha:g}")
    g = result.gamma_at_alpha
    if g is not None and np.isfinite(g) and result.gamma.min() <= g <= result.gamma.max():
        ax.plot([g], [result.alpha], MARK_SHAPE, color=MARK_COLOUR, mec="white", ms=13,
                label=f"Stops being below alpha at Gamma = {g:.2f}")  # fmt: skip
    ax.set_xlabel("Gamma: how much more likely hidden bias could make one unit the treated one")
    ax.set_ylabel("One-sided p-value")
    name = "sign test" if result.test == "sign" else "signed-rank test"
    ax.set_title(f"Rosenbaum bounds ({name}, {result.pairs:,} pairs)")
    legend_below(ax, ax.get_legend_handles_labels()[0])
    save_figure(fig, paths)
    return paths
