"""The partial-R² family's figure: the bias-adjusted estimate over the two partial R² of a
hidden confounder."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.errors import InputError
from ..common.levels import level_text
from ..output.figures import (
    Mark,
    figure_paths,
    filled_levels,
    legend_point,
    numbered_markers,
    own_marks,
    percent_axis,
    plot_label,
    save_figure,
    tip_line,
)
from ..output.tables import number

#: Scenarios farther out than this many times the region where the conclusion changes do not
#: widen the default axes (they would squeeze that region into a corner): they are drawn on
#: the axes' edge and named beyond it.
FAR = 3.0


def check_limits(limits: Sequence[float] | None) -> None:
    """The axes' upper limits are partial R²: each in (0, 1]."""
    for value in limits or ():
        if not 0 < value <= 1:
            raise InputError(
                f"`limits` are partial R² axes: each must lie in (0, 1]; got {value:g}", "limits"
            )


def check_marks(marks: Sequence[Mark]) -> None:
    """A marked confounder's two partial R² are shares: each in [0, 1)."""
    for mark in marks:
        for value in mark:
            if not 0 <= value < 1:
                raise InputError(
                    f"each value of `marks` is a partial R² (a share: 0.05 for 5%) and must "
                    f"lie in [0, 1); got {value:g}",
                    "marks",
                )


def _r2_limits(result: Any, limits: Mark | None) -> Mark:
    """The default zoom: where the conclusion changes (twice the larger robustness value)
    and every scenario within FAR times that, with room around them."""
    if limits is not None:
        check_limits(limits)
        return float(limits[0]), float(limits[1])
    region = max(2 * result.robustness_value, 0.05)
    pts = [region]
    pts += [m for s in result.scenarios if not s.impossible
            and (m := max(s.r2_treatment, s.r2_outcome) * 1.2) <= FAR * region]  # fmt: skip
    lim = float(min(0.99, max(pts)))
    return lim, lim


def _beyond(result: Any, xlim: float, ylim: float) -> tuple[list[Mark], str]:
    """Scenario points clipped to the axes, and a line naming those beyond them."""
    points: list[Mark] = []
    far = []
    for i, sc in enumerate(result.scenarios, 1):
        x, y = sc.r2_treatment, sc.r2_outcome
        if np.isfinite(x) and np.isfinite(y) and (x > xlim or y > ylim):
            far.append(f"{i} ({x:.0%}, {y:.0%})")
            x, y = min(x, xlim), min(y, ylim)
        points.append((x, y))
    text = "" if not far else "Beyond the axes, drawn on their edge: " + "; ".join(far)
    return points, text


def partial_r2_contours(
    result: Any,
    path: str | Path | Sequence[str | Path],
    limits: Mark | None = None,
    marks: Sequence[Mark] = (),
    size: int = 241,
) -> list[Path]:
    """Two panels side by side over the two partial R² of a hidden confounder: the
    bias-adjusted estimate (left) and its t value (right).

    Filled levels with a colour bar in each; black lines where the estimate (solid) and its
    interval (dashed) reach the target; the scenarios numbered as in the scenario table;
    `marks` (the user's own confounders) as the project's own marker (see `own_marks`).
    `limits` sets the axes (partial R², 0 to 1).
    """
    from ..output.figures import STYLE, pyplot
    from .core import surface, t_critical

    paths = figure_paths(path)
    check_marks(marks)
    xlim, ylim = _r2_limits(result, limits)
    gx = np.linspace(0, min(xlim, 0.999), size)
    gy = np.linspace(0, min(ylim, 0.999), size)
    s = surface(result.estimate, result.se, result.dof, gx, gy, result.alpha)
    target = (1 - result.reduce_by) * result.estimate
    crit = float(t_critical(result.alpha, result.dof - 1))
    sign = np.sign(result.estimate) or 1.0
    level = level_text(alpha=result.alpha)
    goal = "zero" if result.reduce_by == 1 else f"{target:.3g}"
    plt = pyplot()
    plt.rcParams.update(STYLE)
    fig, axes = plt.subplots(1, 2, figsize=(12.4, 6.0), layout="constrained", sharey=True)
    panels = (
        (s["estimate"], "Bias-adjusted estimate", target, f"estimate {result.estimate:.3g}"),
        (s["t"], "Bias-adjusted t value", 0.0, f"t = {number(result.t, 2)}"),
    )
    distance = sign * (s["estimate"] - target)
    handles: list = []
    for i, (ax, (value, label, center, shown)) in enumerate(zip(axes, panels, strict=True)):
        filled_levels(ax, gx, gy, value, label, center)
        keep: list = handles if i == 0 else []
        tip_line(ax, gx, gy, distance, 0.0, "estimate", f"Estimate reaches {goal}", keep)
        tip_line(ax, gx, gy, distance / s["se"], crit, "ci", f"{level} CI reaches {goal}", keep)
        # numbered as in the table; an impossible benchmark has no point (NaN is not drawn); a
        # scenario far beyond the region where the conclusion changes sits on the edge, named
        points, beyond = _beyond(result, xlim, ylim)
        numbered_markers(ax, points)
        if beyond:
            ax.annotate(plot_label(beyond, limit=120), (0.95, 0.95), xycoords="axes fraction",
                        ha="right", va="top", fontsize=8,
                        bbox={"boxstyle": "round", "fc": "white", "ec": "0.6"})  # fmt: skip
        own_marks(ax, marks, keep)
        ax.set_title(f"{label} (observed {shown})")
        ax.set_xlabel("Confounder's share of the treatment's residual variance (partial R²)")
        ax.set_xlim(0, xlim)
        ax.set_ylim(0, ylim)
        percent_axis(ax, "x")
        percent_axis(ax, "y")
    axes[0].set_ylabel("Confounder's share of the outcome's residual variance (partial R²)")
    who = f" of {plot_label(result.treatment)}" if result.treatment else ""
    fig.suptitle(f"Where a hidden confounder moves the coefficient{who}")
    if result.scenarios:
        handles.append(
            legend_point(
                "o", mfc="white", mec="black", ms=9, label="Scenario (numbered as in the table)"
            )
        )
    if handles:
        fig.legend(handles=handles, loc="outside lower center", ncols=min(4, len(handles)),
                   frameon=False)  # fmt: skip
    save_figure(fig, paths)
    return paths
