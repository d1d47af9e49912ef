"""The stability family's figure: the bias-adjusted coefficient against delta."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..output.figures import figure_paths, legend_below, new_figure, pyplot, save_figure


def stability_figure(result: Any, path: str | Path | Sequence[str | Path]) -> list[Path]:
    """The bias-adjusted coefficient against delta: exact (the root nearest the long
    estimate, where the variances are given) and approximate, with the target and delta = 1."""
    from .core import real_roots

    paths = figure_paths(path)
    r = result
    top = max(2.0, 1.5 * abs(r.delta_for_target_approx or 0), 1.5 * abs(r.delta_for_target or 0))
    deltas = np.linspace(0, min(top, 20.0), 301)
    approx = r.estimate_long - deltas * (r.estimate_short - r.estimate_long) * (
        r.r2_max - r.r2_long
    ) / (r.r2_long - r.r2_short)
    fig, ax = new_figure()
    plt = pyplot()
    if r.variances is not None:
        exact = [
            (roots[0] if (roots := real_roots(d, r.estimate_short, r.estimate_long, r.r2_short,
                          r.r2_long, r.r2_max, *r.variances)).size else np.nan)
            for d in deltas
        ]  # fmt: skip
        exact_arr = np.asarray(exact, float)
        steps = np.abs(np.diff(exact_arr))
        typical = np.nanmedian(steps) if np.isfinite(steps).any() else 0.0
        jumps = np.flatnonzero(steps > 20 * max(typical, 1e-12))
        exact_arr[jumps + 1] = np.nan  # the chosen root changes there: no line across the gap
        ax.plot(deltas, exact_arr, color="black", lw=2, label="Bias-adjusted coefficient (exact)")
    ax.plot(deltas, approx, color="black", lw=1.3, ls="--", label="Approximation")
    ax.axhline(r.target, color="#d62728", lw=1, ls=":", label=f"Target ({r.target:g})")
    ax.axvline(1.0, color="0.5", lw=1, ls="-.", label="delta = 1")
    ax.set_xlabel("delta: selection on unobservables relative to observables")
    ax.set_ylabel("Bias-adjusted coefficient")
    ax.set_title(f"Coefficient stability (observed {r.estimate_long:.3g} with controls, "
                 f"R-max {r.r2_max:.3g})")  # fmt: skip
    legend_below(ax, ax.get_legend_handles_labels()[0])
    del plt
    save_figure(fig, paths)
    return paths
