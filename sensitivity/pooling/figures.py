"""The pooled analysis drawn: a forest plot with each study's E-values, and the share of
meaningfully strong effects against the common bias factor. matplotlib only inside functions.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.levels import level_text
from ..output.figures import (
    figure_paths,
    legend_below,
    log_ticks,
    new_figure,
    percent_axis,
    plot_label,
    pyplot,
    save_figure,
)

#: The figures, by key: their captions (the report and `--plot` name them).
CAPTIONS = {
    "forest": "Each pooled study's risk ratio and interval (marker size by its random-effects "
    "weight), the pooled estimate (diamond, its confidence interval), the null and the "
    "threshold; on the right, each study's E-value and, in brackets, the E-value of its "
    "confidence interval (the pooled one's on the last row).",
    "share": "The estimated share of true effects beyond the threshold after removing a "
    "common bias factor from every study, with a pointwise delta-method band, the chosen "
    "share and the least bias factor that brings the share down to it.",
}


def forest(result: Any, paths: str | Path | Sequence[str | Path]) -> list[Path]:
    """A forest plot of the pooled studies and the pooled estimate, with E-values."""
    out = figure_paths(paths)
    r = result
    s = r.studies
    used = np.flatnonzero(np.asarray(s["used"], bool))
    n = used.size
    plt = pyplot()
    fig, ax = new_figure((6.4, max(2.6, 0.32 * (n + 3) + 1.2)))
    ys = np.arange(n, 0, -1) + 1.0  # studies from the top; the pooled row at y = 1
    rr, lo, hi = (np.asarray(s[k], float)[used] for k in ("rr", "rr_lower", "rr_upper"))
    weight = np.asarray(s["weight"], float)[used]
    ax.hlines(ys, lo, hi, color="black", lw=1.1)
    ax.scatter(rr, ys, s=20 + 180 * weight / max(weight.max(), 1e-12), marker="s",
               color="black", zorder=3)  # fmt: skip
    lo_p, hi_p = r.ci
    ax.fill([lo_p, r.pooled_estimate, hi_p, r.pooled_estimate], [1, 1.28, 1, 0.72],
            color="#5e3c99", zorder=3)  # fmt: skip
    ax.axvline(1.0, color="0.4", lw=1)
    ax.axvline(r.threshold, color="#e66101", lw=1.2, ls=":")
    low = min(float(np.nanmin(lo)), lo_p, r.threshold, 1.0) / 1.1
    high = max(float(np.nanmax(hi)), hi_p, r.threshold, 1.0) * 1.1
    log_ticks(ax, low, high)
    labels = [plot_label(str(v), 40) for v in np.asarray(s["label"], dtype=object)[used]]
    ax.set_yticks([*ys, 1.0], [*labels, "Pooled"])
    ax.set_ylim(0.3, n + 1.7)
    ev, ev_ci = (np.asarray(s[k], float)[used] for k in ("evalue", "evalue_ci"))
    right = ax.secondary_yaxis("right")
    right.set_yticks(
        [*ys, 1.0],
        [f"{e:.2f} ({c:.2f})" for e, c in zip(ev, ev_ci, strict=True)]
        + [f"{r.evalue:.2f} ({r.evalue_ci:.2f})"],
    )
    levels = np.asarray(s.get("level", np.full(len(s["label"]), 0.95)), float)[used]
    shared = {float(v) for v in levels[np.isfinite(lo)]} | {float(r.level)}
    of = f"of the {level_text(shared.pop())} CI" if len(shared) == 1 else "of each row's CI"
    right.set_ylabel(f"E-value ({of})")
    ax.set_xlabel("Risk ratio (log scale)")
    ax.set_title(
        f"{n} studies pooled: {r.pooled_estimate:.2f} ({level_text(r.level)} CI {lo_p:.2f} to "
        f"{hi_p:.2f}), tau² {r.tau2:.3g}"
    )
    handles = [
        plt.Line2D([], [], color="0.4", lw=1, label="Null (1)"),
        plt.Line2D([], [], color="#e66101", lw=1.2, ls=":", label=f"Threshold ({r.threshold:g})"),
    ]
    legend_below(ax, handles)
    return save_figure(fig, out)


def share_curve(result: Any, paths: str | Path | Sequence[str | Path]) -> list[Path]:
    """The share beyond the threshold against the common bias factor."""
    from scipy.special import ndtri

    from .core import share_beyond, share_se

    out = figure_paths(paths)
    r = result
    plt = pyplot()
    fig, ax = new_figure((6.4, 4.6))
    top = max(float(np.max(r.bias)), r.bias_to_reduce * 1.25, 1.5)
    grid = np.linspace(1.0, top, 301)
    q = np.log(r.threshold)
    args = (r.log_estimate, r.tau, q, grid, r.direction, r.bias_sd)
    p = share_beyond(*args)
    z = float(-ndtri(r.alpha / 2))
    if r.tau > 0:
        var_tau = r.tau_se**2
        se = share_se(r.log_estimate, r.tau, r.log_se**2, var_tau, q, grid, r.direction,
                      r.bias_sd)  # fmt: skip
        ax.fill_between(grid, np.clip(p - z * se, 0, 1), np.clip(p + z * se, 0, 1),
                        color="#b2abd2", alpha=0.6, lw=0,
                        label=f"Pointwise {level_text(r.level)} band (delta method)")  # fmt: skip
    ax.plot(grid, p, color="black", lw=2, label=f"Share {r.direction} {r.threshold:g}")
    ax.axhline(
        r.share,
        color="#e66101",
        lw=1.2,
        ls=":",
        label=f"Share {r.share:.0%} (your choice, not a pass mark)",
    )
    if r.bias_to_reduce_raw > 1:
        ax.axvline(r.bias_to_reduce, color="0.3", lw=1, ls="--",
                   label=f"Least bias factor {r.bias_to_reduce:.2f}")  # fmt: skip
    ax.set_xlim(1.0, top)
    ax.set_ylim(0, 1)
    percent_axis(ax, "y")
    ax.set_xlabel("Common bias factor removed from every study (risk-ratio scale)")
    ax.set_ylabel(f"Share of true effects {r.direction} {r.threshold:g}")
    ax.set_title(f"Meaningfully strong effects under confounding ({r.k} studies, "
                 f"{r.method_name})")  # fmt: skip
    legend_below(ax, ax.get_legend_handles_labels()[0])
    del plt
    return save_figure(fig, out)


DRAW = {"forest": forest, "share": share_curve}


def draw_for_paths(result: Any, paths: Sequence[str | Path]) -> list[Path]:
    """`--plot PATH`: a stem ending in -forest or -share draws that figure; any other path
    draws both, as STEM-forest.EXT and STEM-share.EXT."""
    written: list[Path] = []
    for path in paths:
        p = Path(path)
        key = next((k for k in DRAW if p.stem.endswith(f"-{k}")), None)
        if key is not None:
            written += DRAW[key](result, [p])
        else:
            for k, draw in DRAW.items():
                written += draw(result, [p.with_name(f"{p.stem}-{k}{p.suffix}")])
    return written
