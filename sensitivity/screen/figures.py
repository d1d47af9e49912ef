"""The screen's figure: the distribution of E-values by scale, drawn from the tally."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.errors import InputError
from ..common.scales import SCALES
from ..output.figures import (
    LINE,
    STYLE,
    Mark,
    figure_paths,
    log_ticks,
    percent_axis,
    pyplot,
    save_figure,
)


def screen_figure(
    summary: Any, path: str | Path | Sequence[str | Path], limits: Mark | None = None
) -> list[Path]:
    """The distribution of E-values by scale: for each scale, the share of results whose
    E-value (solid) and interval E-value (dashed) is at most x, on a log axis. Drawn from the
    screen's tally, so a file of millions of rows costs no more than one of ten."""
    paths = figure_paths(path)
    codes = [c for c, (h, _) in summary.histograms.items() if h.sum() > 0]
    if not codes:
        raise InputError(
            "`plot`: no row could be screened, so there is no distribution to draw", "plot"
        )
    plt = pyplot()
    plt.rcParams.update(STYLE)
    cols = min(3, len(codes))
    rows = -(-len(codes) // cols)
    fig, axes = plt.subplots(
        rows, cols, figsize=(3.4 * cols, 2.9 * rows + 0.8), squeeze=False, layout="constrained"
    )
    edges = np.exp(summary.log_edges())
    top = float(limits[0]) if limits is not None else None

    right = 1.0
    for code in codes:
        for counts in summary.histograms[code]:
            if counts.sum():
                share = np.cumsum(counts) / counts.sum()
                right = max(right, float(edges[min(int(np.searchsorted(share, 0.999)) + 1,
                                                   len(edges) - 1)]))  # fmt: skip
    right = top if top else right * 1.05
    for ax, code in zip(axes.flat, codes, strict=False):
        est, ci = summary.histograms[code]
        for counts, key, label in ((est, "estimate", "estimate"), (ci, "ci", "interval limit")):
            if counts.sum() == 0:
                continue
            share = np.cumsum(counts) / counts.sum()
            last = int(np.searchsorted(share, 0.999)) + 2
            color, style, width = LINE[key]
            ax.step(np.r_[1.0, edges[:last]], np.r_[0.0, share[:last]], where="post",
                    color=color, ls=style, lw=width, label=label)  # fmt: skip
        name = SCALES[code].name if code in SCALES else "regression coefficient"
        ax.set_title(f"{name.capitalize()}s ({summary.per_scale[code]['rows']:,})")
        log_ticks(ax, 1, right)
        ax.set_ylim(0, 1)
        percent_axis(ax, "y")
        ax.set_xlabel("E-value")
        ax.set_ylabel("Share of results at or below")
        if summary.threshold is not None:
            ax.axvline(summary.threshold, color="#d62728", lw=1, ls=":")
    for ax in list(axes.flat)[len(codes) :]:
        ax.set_visible(False)
    handles, labels = axes.flat[0].get_legend_handles_labels()
    if summary.threshold is not None:
        handles.append(plt.Line2D([], [], color="#d62728", lw=1, ls=":"))
        labels.append(f"threshold {summary.threshold:g} (your choice, not a pass mark)")
    fig.legend(handles, labels, loc="outside lower center", ncols=3, frameon=False)
    fig.suptitle(f"E-values of {summary.rows - summary.n_flagged:,} screened results, by scale")
    save_figure(fig, paths)
    return paths
