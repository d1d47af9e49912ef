"""The partial-R² family's figure: the bias-adjusted estimate over the two partial R² of a
hidden confounder."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.levels import level_text
from ..output.figures import (
    Mark,
    figure_paths,
    filled_levels,
    legend_below,
    legend_point,
    new_figure,
    numbered_markers,
    own_marks,
    percent_axis,
    plot_label,
    save_figure,
    tip_line,
)

#: Scenarios farther out than this many times the region where the conclusion changes do not
#: widen the default axes (they would squeeze that region into a corner): they are drawn on
#: the axes' edge and named beyond it.
FAR = 3.0


def _r2_limits(result: Any, limits: Mark | None) -> Mark:
    """The default zoom: where the conclusion changes (twice the larger robustness value)
    and every scenario within FAR times that, with room around them."""
    if limits is not None:
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
    statistic: str = "estimate",
    limits: Mark | None = None,
    marks: Sequence[Mark] = (),
    size: int = 241,
) -> list[Path]:
    """The bias-adjusted estimate (or t) over the two partial R² of a hidden confounder.

    Filled levels with a colour bar; black lines where the estimate (solid) and its interval
    (dashed) reach the target; the scenarios numbered as in the scenario table; `marks` (the
    user's own confounders) as red diamonds. `limits` sets the axes (partial R², 0 to 1).
    """
    from .core import surface, t_critical

    paths = figure_paths(path)
    xlim, ylim = _r2_limits(result, limits)
    gx = np.linspace(0, min(xlim, 0.999), size)
    gy = np.linspace(0, min(ylim, 0.999), size)
    s = surface(result.estimate, result.se, result.dof, gx, gy, result.alpha)
    target = (1 - result.fraction) * result.estimate
    crit = float(t_critical(result.alpha, result.dof - 1))
    sign = np.sign(result.estimate) or 1.0
    if statistic == "estimate":
        value, label = s["estimate"], "Bias-adjusted estimate"
    else:
        value, label = s["t"], "Bias-adjusted t value"
    level = level_text(alpha=result.alpha)
    goal = "zero" if result.fraction == 1 else f"{target:.3g}"
    fig, ax = new_figure()
    filled_levels(ax, gx, gy, value, label, 0.0 if statistic == "t" else target)
    handles: list = []
    distance = sign * (s["estimate"] - target)
    tip_line(ax, gx, gy, distance, 0.0, "estimate", f"Estimate reaches {goal}", handles)
    tip_line(ax, gx, gy, distance / s["se"], crit, "ci", f"{level} CI reaches {goal}", handles)
    # numbered as in the table; an impossible benchmark has no point (NaN is not drawn); a
    # scenario far beyond the region where the conclusion changes sits on the edge, named
    points, beyond = _beyond(result, xlim, ylim)
    numbered_markers(ax, points)
    if beyond:
        ax.annotate(plot_label(beyond, limit=120), (0.95, 0.95), xycoords="axes fraction",
                    ha="right", va="top", fontsize=8,
                    bbox={"boxstyle": "round", "fc": "white", "ec": "0.6"})  # fmt: skip
    own_marks(ax, marks, handles)
    who = f" of {plot_label(result.treatment)}" if result.treatment else ""
    shown = f"t = {result.t:.2f}" if statistic == "t" else f"estimate {result.estimate:.3g}"
    ax.set_title(f"Where a hidden confounder moves the coefficient{who}\n(observed {shown})")
    ax.set_xlabel("Confounder's share of the treatment's residual variance (partial R²)")
    ax.set_ylabel("Confounder's share of the outcome's residual variance (partial R²)")
    ax.set_xlim(0, xlim)
    ax.set_ylim(0, ylim)
    percent_axis(ax, "x")
    percent_axis(ax, "y")
    if result.scenarios:
        handles.append(
            legend_point(
                "o", mfc="white", mec="black", ms=9, label="Scenario (numbered as in the table)"
            )
        )
    legend_below(ax, handles)
    save_figure(fig, paths)
    return paths
