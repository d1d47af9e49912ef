"""The tipping family's figure: the grid over its varying strengths, with where it tips."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.errors import InputError
from ..output.figures import (
    Mark,
    figure_paths,
    filled_levels,
    legend_below,
    legend_point,
    new_figure,
    own_marks,
    percent_axis,
    save_figure,
    tip_line,
)

AXIS_LABELS = {
    "prevalence_treated": "Prevalence of the confounder among the treated",
    "prevalence_control": "Prevalence of the confounder among the controls",
    "outcome_effect": "Effect of the confounder on the outcome",
    "rr_treatment": "Risk ratio relating the confounder to the treatment",
    "rr_outcome": "Risk ratio relating the confounder to the outcome",
    "r2_treatment": "Confounder's share of the treatment's residual variance (partial R²)",
    "r2_outcome": "Confounder's share of the outcome's residual variance (partial R²)",
    "difference": "Difference in the confounder's mean, treated minus controls (SDs)",
}
SHARES = ("prevalence_treated", "prevalence_control", "r2_treatment", "r2_outcome")
#: The most characters of a one-line title that stay within the figure at its width.
TITLE_WIDTH = 78


def check_plot_input(kind: str, limits: Mark | None, marks: Sequence[Mark]) -> None:
    """What a view's axes fix before any grid: partial R² axes are shares (limits in (0, 1],
    marks in [0, 1)); the bounding view's risk ratios start at 1 (limits above 1)."""
    if kind == "partial-r2":
        for value in limits or ():
            if not 0 < value <= 1:
                raise InputError(
                    f"`limits` are partial R² axes: each must lie in (0, 1]; got {value:g}",
                    "limits",
                )
        for value in (v for mark in marks for v in mark):
            if not 0 <= value < 1:
                raise InputError(
                    f"each value of `marks` is a partial R² (a share: 0.05 for 5%) and must "
                    f"lie in [0, 1); got {value:g}",
                    "marks",
                )
    if kind == "bounding":
        for value in limits or ():
            if not value > 1:
                raise InputError(
                    f"`limits` are risk-ratio axes starting at 1: each must exceed 1; got "
                    f"{value:g}",
                    "limits",
                )


def check_axes(result: Any, limits: Mark | None) -> None:
    """Each upper limit of `limits` lies above the start of its varying axis (an axis that
    ends where it starts, or before, draws nothing)."""
    for (name, axis), value in zip((result.axes[i] for i in result.varying), limits or (),
                                   strict=False):  # fmt: skip
        if not value > float(np.min(axis)):
            raise InputError(
                f"`limits`: the {AXIS_LABELS[name].lower()} axis starts at "
                f"{float(np.min(axis)):g}, so its upper limit must exceed that; got {value:g}",
                "limits",
            )


def check_varying(result: Any) -> None:
    """A figure draws one or two varying strengths: with none (each a single value) there is
    nothing to draw a line over, with three the grid needs one of them fixed."""
    count = len(result.varying)
    if count in (1, 2):
        return
    fix = (
        "give one of them a range START:STOP:STEP"
        if count == 0
        else "give one of them a single value"
    )
    raise InputError(f"`plot` needs one or two varying parameters; got {count} ({fix})", "plot")


def tipping_figure(
    result: Any,
    path: str | Path | Sequence[str | Path],
    limits: Mark | None = None,
    marks: Sequence[Mark] = (),
) -> list[Path]:
    """The grid as filled levels over its two varying strengths (a line chart when one
    varies), with the lines where the estimate and its interval reach the target."""
    paths = figure_paths(path)
    check_varying(result)
    varying = result.varying
    check_plot_input(result.kind, limits, marks)
    check_axes(result, limits)
    goal = "the null" if result.target_is_null else f"{result.target:g}"
    level = f"{result.level} CI"
    est = np.squeeze(result.cells["bias_adjusted_estimate"])
    near_key = (
        "bias_adjusted_ci_lower" if result.estimate >= result.target else "bias_adjusted_ci_upper"
    )
    near = np.squeeze(result.cells[near_key]) if near_key in result.cells else None
    colour = "Bias-adjusted estimate"
    if result.kind == "bounding":
        code = str(result.scale)
        colour = f"Worst-case bound on the {code.upper()} (after the bounding factor)"
    fig, ax = new_figure()
    handles: list = []
    if len(varying) == 1:
        name, x = result.axes[varying[0]]
        ax.plot(x, est, color="black", lw=2, label=colour)
        if near is not None:
            lo = np.squeeze(result.cells["bias_adjusted_ci_lower"])
            up = np.squeeze(result.cells["bias_adjusted_ci_upper"])
            ax.fill_between(x, lo, up, color="#c9c9c9", label=f"Bias-adjusted {level}")
        ax.axhline(result.target, color="#d62728", lw=1.2, ls=":", label=f"Target ({goal})")
        ax.set_xlabel(AXIS_LABELS[name])
        ax.set_ylabel(colour)
        if name in SHARES:
            percent_axis(ax, "x")
        if limits is not None:
            ax.set_xlim(right=limits[0])
        handles = ax.get_legend_handles_labels()[0]
    else:
        (xn, x), (yn, y) = (result.axes[i] for i in varying)
        sign = 1 if result.estimate >= result.target else -1
        filled_levels(ax, x, y, est, colour, result.target)
        line = (
            "E-value curve: estimate reaches" if result.kind == "bounding" else "Estimate reaches"
        )
        tip_line(ax, x, y, sign * (est - result.target), 0.0, "estimate", f"{line} {goal}", handles)
        if near is not None:
            tip_line(
                ax,
                x,
                y,
                sign * (near - result.target),
                0.0,
                "ci",
                f"{level} reaches {goal}",
                handles,
            )
        e = result.extra.get("evalue")
        if result.kind == "bounding" and e is not None and e <= min(x.max(), y.max()):
            ax.plot([e], [e], "o", ms=7, mfc="black", mec="white", zorder=5)
            handles.append(
                legend_point(
                    "o",
                    mfc="black",
                    mec="white",
                    label=f"E-value ({e:.2f}, {e:.2f})",
                )
            )
        own_marks(ax, marks, handles)
        ax.set_xlabel(AXIS_LABELS[xn])
        ax.set_ylabel(AXIS_LABELS[yn])
        for which, n in (("x", xn), ("y", yn)):
            if n in SHARES:
                percent_axis(ax, which)
        if limits is not None:
            ax.set_xlim(x.min(), limits[0])
            ax.set_ylim(y.min(), limits[1])
    fixed = [
        f"{AXIS_LABELS[n].lower()} " + (f"{100 * v[0]:g}%" if n in SHARES else f"{v[0]:g}")
        for n, v in result.axes
        if len(v) == 1
    ]
    what = "coefficient" if result.kind == "partial-r2" else result.scale.upper()
    observed = f"observed {what} {result.estimate:g}"
    if result.ci is not None:
        observed += f", {level} {result.ci[0]:g} to {result.ci[1]:g}"
    title = f"Where the conclusion tips ({result.kind} view; {observed})"
    if len(title) > TITLE_WIDTH:  # centred on the axes, a longer line runs off the figure
        title = f"Where the conclusion tips ({result.kind} view)\nO{observed[1:]}"
    if fixed:
        title += "\nwith " + "; ".join(fixed)
    ax.set_title(title)
    legend_below(ax, handles)
    save_figure(fig, paths)
    return paths
