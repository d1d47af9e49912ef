"""The E-value family's figures: the pairs of risk ratios that could explain a result away,
and (for a report) every estimate with its E-values."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.errors import InputError
from ..common.levels import level_text
from ..output.figures import (
    LINE,
    Mark,
    figure_paths,
    legend_below,
    legend_point,
    new_figure,
    numbered_markers,
    pyplot,
    save_figure,
)


def check_limits(limits: Sequence[float] | None) -> None:
    """The axes are risk ratios from 1: each upper limit must exceed 1."""
    for value in limits or ():
        if not value > 1:
            raise InputError(
                f"`limits` are risk-ratio axes starting at 1: each must exceed 1; got {value:g}",
                "limits",
            )


def evalue_figure(
    result: Any, path: str | Path | Sequence[str | Path], limits: Mark | None = None
) -> list[Path]:
    """The pairs of risk ratios (treatment-confounder, confounder-outcome) that could explain
    the estimate and its interval away: B(a, b) = R on the curve b = R (a - 1) / (a - R),
    through the E-value point (E, E). The user's hypothetical confounders are numbered as in
    the confounder table."""
    paths = figure_paths(path)
    check_limits(limits)
    if not result.is_scalar:
        raise InputError("`plot` draws one E-value result; give one estimate", "plot")
    plt = pyplot()
    ratio = float(result.rr / result.rr_target)
    r_est = max(ratio, 1 / ratio)
    curves = [("estimate", r_est, float(result.evalue))]
    if result.rr_ci is not None and float(result.evalue_ci) > 1:
        lo, up = (float(v) / float(result.rr_target) for v in result.rr_ci)
        near = lo if ratio >= 1 else up
        curves.append(("ci", max(near, 1 / near), float(result.evalue_ci)))
    conf = result.confounders
    pts: list[Mark] = []
    if conf is not None:
        pts = list(
            zip(
                np.ravel(conf.rr_treatment).tolist(),
                np.ravel(conf.rr_outcome).tolist(),
                strict=True,
            )
        )
    # zoom on where the conclusion changes, in excess over 1: the E-value point sits about two
    # fifths of the way up whatever its size (a floor of 3 hid the curve of an E-value of 1.09)
    top = max([1 + 2.5 * (e - 1) for _, _, e in curves]
              + [1 + 1.15 * (max(p) - 1) for p in pts] + [1.2])  # fmt: skip
    xlim = ylim = top
    if limits is not None:
        xlim, ylim = float(limits[0]), float(limits[1])
    fig, ax = new_figure()
    handles: list = []
    grid = np.linspace(1, xlim, 400)
    goal = "the null" if result.target_is_null else f"{float(result.target_value):g}"
    level = f"{level_text(result.ci_level)} CI"
    for key, r, e in curves:
        a = grid[grid > r * (1 + 1e-9)]
        b = r * (a - 1) / (a - r)
        color, style, width = LINE[key]
        name = "estimate" if key == "estimate" else f"{level}"
        ax.plot(a, b, color=color, ls=style, lw=width)
        if key == "estimate":
            # only where the curve is below the top: above it, the fill ran from the curve down
            # to the top edge, and its clipped edge drew a hairline along the top
            ax.fill_between(a, b, ylim, where=b < ylim, interpolate=True,
                            color="#e7d7a8", alpha=0.8, lw=0)  # fmt: skip
            handles.append(
                plt.Rectangle(
                    (0, 0),
                    1,
                    1,
                    fc="#e7d7a8",
                    label=f"Could explain the estimate away (reach {goal})",
                )
            )
        handles.append(
            plt.Line2D(
                [],
                [],
                color=color,
                ls=style,
                lw=width,
                label=f"Least strength for the {name} (E-value {e:.2f})",
            )
        )
        ax.plot([e], [e], "o", ms=6, mfc=color, mec="white", zorder=5)
    if pts:
        numbered_markers(ax, pts)
        handles.append(
            legend_point(
                "o",
                mfc="white",
                mec="black",
                ms=9,
                label="Your confounder (numbered as in the table)",
            )
        )
    ax.set_xlim(1, xlim)
    ax.set_ylim(1, ylim)
    ax.set_xlabel("Risk ratio relating the confounder to the treatment")
    ax.set_ylabel("Risk ratio relating the confounder to the outcome")
    name = str(result.scale).upper()
    obs = f"{name} {float(result.estimate):.3g}"
    if result.ci is not None:
        obs += f", {level} {float(result.ci[0]):.3g} to {float(result.ci[1]):.3g}"
    ax.set_title(f"Confounders strong enough to explain the result away\n(observed {obs})")
    legend_below(ax, handles)
    save_figure(fig, paths)
    return paths


_FLOOR, _CEILING = 1e-12, 1e12


def forest_figure(items: Sequence[tuple[str, Any]], paths: Sequence[str | Path]) -> list[Path]:
    """Every estimate on the risk-ratio scale with its interval, and its E-values beside.

    The axis names the intervals' level when the estimates share one; otherwise each label
    carries its own."""
    from ..output.figures import STYLE, log_ticks, plot_label

    plt = pyplot()
    plt.rcParams.update(STYLE)
    n = len(items)
    levels = {f"{level_text(r.ci_level)} CI" for _, r in items if r.rr_ci is not None}
    shared = levels.pop() if len(levels) == 1 else None
    fig, ax = plt.subplots(figsize=(8.6, 1.3 + 0.42 * n), layout="constrained")
    y = np.arange(n)[::-1]
    names = []
    # the axis spans at most 1e-12 to 1e12 (a limit of 1e300 or an infinite one, from an SMD
    # of 800, would break the log axis): what lies beyond is drawn to the edge with an arrow
    limits = [float(v) for _, e in items
              for v in ([e.rr] if e.rr_ci is None else [e.rr_ci[0], e.rr_ci[1]])]  # fmt: skip
    low = max(min(limits + [1.0]) / 1.1, _FLOOR)
    high = min(max(limits + [1.0]) * 1.1, _CEILING)
    for yi, (label, e) in zip(y, items, strict=True):
        rr = float(np.clip(float(e.rr), low, high))
        if e.rr_ci is not None:
            ends = [float(e.rr_ci[0]), float(e.rr_ci[1])]
            shown = [float(np.clip(v, low, high)) for v in ends]
            ax.plot(shown, [yi, yi], color="black", lw=1.4)
            if ends[1] > high:
                ax.plot([high], [yi], ">", color="black", ms=6, clip_on=False)
            if ends[0] < low:
                ax.plot([low], [yi], "<", color="black", ms=6, clip_on=False)
        ax.plot([rr], [yi], "s", color="black", ms=6)
        ci = "-" if e.evalue_ci is None else f"{float(e.evalue_ci):.2f}"
        ax.annotate(f"{float(e.evalue):.2f}   {ci}", (1.02, yi),
                    xycoords=("axes fraction", "data"), va="center", fontsize=8.5)  # fmt: skip
        own = "" if shared or e.rr_ci is None else f" ({level_text(e.ci_level)} CI)"
        names.append(plot_label(label) + own)
    ax.axvline(1.0, color="#d62728", lw=1, ls=":")
    ax.set_yticks(y, names)
    log_ticks(ax, low, high)
    level = f" ({shared})" if shared else " (each with its own interval level)"
    ax.set_xlabel(f"Estimate on the risk-ratio scale{level}, log axis")
    head = f"E-value  ({shared})" if shared else "E-value  (its row's CI)"
    ax.annotate(head, (1.02, n - 0.4), xycoords=("axes fraction", "data"),
                fontsize=8.5, fontweight="bold")  # fmt: skip
    ax.set_ylim(-0.7, n - 0.2)
    fig.suptitle("Each estimate on the risk-ratio scale, with its E-values")
    return save_figure(fig, list(paths))
