"""Figures. Presentation only: every number drawn comes from the computation modules.

matplotlib is imported here and only here, inside the functions, with the Agg backend, so
no display is needed and one-number commands never pay for it.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from ..common.errors import InputError

PLOT_FORMATS = (".png", ".svg", ".pdf")


def check_plot_path(path: str | Path, argument: str = "plot") -> Path:
    """Refuse an unsupported extension or a missing folder before any work is done."""
    p = Path(path)
    if p.suffix.lower() not in PLOT_FORMATS:
        raise InputError(f"`{argument}` must end in .png, .svg or .pdf; got {p.name!r}")
    if not p.parent.exists():
        raise InputError(f"`{argument}`: folder {str(p.parent)!r} does not exist")
    return p


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _save(fig: Any, path: str | Path) -> None:
    fig.savefig(path, dpi=150, bbox_inches="tight")
    _pyplot().close(fig)


def _r2_limit(result: Any) -> float:
    """Axis range: room for the robustness value and every scenario point."""
    pts = [result.robustness_value * 1.6, 0.1]
    pts += [max(s.r2_treatment, s.r2_outcome) * 1.25 for s in result.scenarios]
    return float(min(0.99, max(pts)))


def _percent_axes(ax, lim, ylim=None):
    from matplotlib.ticker import PercentFormatter

    ax.set_xlim(0, lim)
    ax.set_ylim(0, lim if ylim is None else ylim)
    ax.xaxis.set_major_formatter(PercentFormatter(1.0, decimals=None))
    ax.yaxis.set_major_formatter(PercentFormatter(1.0, decimals=None))


def partial_r2_contours(
    result: Any,
    path: str | Path,
    statistic: str = "estimate",
    limit: float | None = None,
    size: int = 241,
) -> Path:
    """Contours of the bias-adjusted estimate (or t) over the two partial R² of a confounder.

    Draws the target contour (estimate reaches zero, or (1 - fraction) times itself), the
    significance contour (the adjusted interval reaches it), the observed point, and every
    scenario (benchmarks and hypothetical confounders) labelled.
    """
    from ..partial_r2.core import surface, t_critical

    path = check_plot_path(path)
    lim = float(limit) if limit is not None else _r2_limit(result)
    grid = np.linspace(0, lim, size)
    s = surface(result.estimate, result.se, result.dof, grid, grid, result.alpha)
    target = (1 - result.fraction) * result.estimate
    crit = float(t_critical(result.alpha, result.dof - 1))
    sign = np.sign(result.estimate)
    # signed distance of the adjusted interval's near limit from the target, in se units
    dist_t = sign * (s["estimate"] - target) / s["se"]
    value = s["estimate"] if statistic == "estimate" else s["t"]

    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 5.6))
    X, Y = grid, grid  # x: treatment side (rows of the surface), y: outcome side
    cs = ax.contour(
        X, Y, value.T, levels=12, colors="0.55", linewidths=0.8, negative_linestyles="solid"
    )
    ax.clabel(cs, fontsize=7, fmt="%.3g")
    if statistic == "estimate":
        ax.contour(
            X, Y, (sign * (s["estimate"] - target)).T, levels=[0], colors="crimson", linewidths=2.2
        )
    else:
        ax.contour(X, Y, (sign * s["t"]).T, levels=[0], colors="crimson", linewidths=2.2)
    ax.contour(X, Y, dist_t.T, levels=[crit], colors="crimson", linewidths=1.6, linestyles="dashed")
    goal = "zero" if result.fraction == 1 else f"{target:.3g}"
    handles = [
        plt.Line2D([], [], color="crimson", lw=2.2, label=f"Estimate reaches {goal}"),
        plt.Line2D(
            [],
            [],
            color="crimson",
            lw=1.6,
            ls="--",
            label=f"{1 - result.alpha:.0%} interval reaches {goal}",
        ),
    ]
    ax.plot([0], [0], marker="^", color="black", ms=8, clip_on=False)
    ax.annotate(
        f"observed ({result.estimate:.3g})",
        (0, 0),
        xytext=(8, 5),
        textcoords="offset points",
        fontsize=8,
    )
    for sc in result.scenarios:
        marker = "D" if sc.kind == "benchmark" else "s"
        ax.plot([sc.r2_treatment], [sc.r2_outcome], marker=marker, color="black", ms=6)
        ax.annotate(
            f"{sc.label}\n({sc.estimate:.3g})",
            (sc.r2_treatment, sc.r2_outcome),
            xytext=(6, -2),
            textcoords="offset points",
            fontsize=7.5,
        )
    who = f" of {result.treatment}" if result.treatment else ""
    stat = "bias-adjusted estimate" if statistic == "estimate" else "bias-adjusted t value"
    ax.set_title(
        f"Contours of the {stat}{who}\nunder a hidden confounder of given strength", fontsize=10
    )
    ax.set_xlabel(
        "Confounder's share of the treatment's residual variance (partial R²)", fontsize=9
    )
    ax.set_ylabel("Confounder's share of the outcome's residual variance (partial R²)", fontsize=9)
    _percent_axes(ax, lim)
    ax.legend(handles=handles, loc="upper right", fontsize=8, framealpha=0.9)
    _save(fig, path)
    return path


AXIS_LABELS = {
    "prevalence_treated": "Prevalence of the confounder among the treated",
    "prevalence_control": "Prevalence of the confounder among the controls",
    "outcome_effect": "Effect of the confounder on the outcome",
    "rr_treatment": "Risk ratio relating the confounder to the treatment",
    "rr_outcome": "Risk ratio relating the confounder to the outcome",
    "r2_treatment": "Confounder's share of the treatment's residual variance (partial R²)",
    "r2_outcome": "Confounder's share of the outcome's residual variance (partial R²)",
}


def tipping_figure(result: Any, path: str | Path) -> Path:
    """Heat map of the bias-adjusted estimate over the two varying strengths, with the
    tipping lines (estimate and interval reach the target) drawn and labelled; a line chart
    when only one strength varies."""
    path = check_plot_path(path)
    varying = result.varying
    if len(varying) not in (1, 2):
        raise InputError(
            f"`plot` needs one or two varying parameters; got {len(varying)} (give one of "
            "them a single value)"
        )
    plt = _pyplot()
    goal = "the null" if result.target_is_null else f"{result.target:g}"
    est = np.squeeze(result.cells["bias_adjusted_estimate"])
    near_key = (
        "bias_adjusted_ci_lower" if result.estimate >= result.target else "bias_adjusted_ci_upper"
    )
    near = np.squeeze(result.cells[near_key]) if near_key in result.cells else None
    fig, ax = plt.subplots(figsize=(6.8, 5.4))
    if len(varying) == 1:
        name, x = result.axes[varying[0]]
        ax.plot(x, est, color="black", lw=2, label="Bias-adjusted estimate")
        if near is not None:
            lo = np.squeeze(result.cells["bias_adjusted_ci_lower"])
            up = np.squeeze(result.cells["bias_adjusted_ci_upper"])
            ax.fill_between(x, lo, up, color="0.8", label="Bias-adjusted interval")
        ax.axhline(result.target, color="crimson", lw=1.5, label=f"Target ({goal})")
        ax.set_xlabel(AXIS_LABELS[name])
        ax.set_ylabel("Bias-adjusted estimate")
        ax.legend(fontsize=8)
    else:
        (xn, x), (yn, y) = (result.axes[i] for i in varying)
        from matplotlib.colors import TwoSlopeNorm

        vmin, vmax = float(np.nanmin(est)), float(np.nanmax(est))
        center = min(
            max(result.target, vmin + 1e-12 * abs(vmin) + 1e-300), vmax - 1e-12 * abs(vmax) - 1e-300
        )
        norm = TwoSlopeNorm(
            vcenter=center, vmin=min(vmin, center - 1e-9), vmax=max(vmax, center + 1e-9)
        )
        mesh = ax.pcolormesh(x, y, est.T, cmap="RdBu_r", norm=norm, shading="nearest")
        fig.colorbar(mesh, ax=ax, label="Bias-adjusted estimate")
        handles = []
        if np.nanmin(est) <= result.target <= np.nanmax(est):
            ax.contour(x, y, est.T, levels=[result.target], colors="black", linewidths=2.2)
            label = f"Estimate reaches {goal}"
            if result.kind == "bounding":
                label = f"E-value curve: estimate reaches {goal}"
            handles.append(plt.Line2D([], [], color="black", lw=2.2, label=label))
        if near is not None and np.nanmin(near) <= result.target <= np.nanmax(near):
            ax.contour(
                x,
                y,
                near.T,
                levels=[result.target],
                colors="black",
                linewidths=1.5,
                linestyles="dashed",
            )
            handles.append(
                plt.Line2D([], [], color="black", lw=1.5, ls="--", label=f"Interval reaches {goal}")
            )
        e = result.extra.get("evalue")
        if result.kind == "bounding" and e is not None and e <= min(x.max(), y.max()):
            ax.plot([e], [e], marker="o", color="black", ms=7)
            ax.annotate(
                f"E-value ({e:.2f}, {e:.2f})",
                (e, e),
                xytext=(8, -14),
                textcoords="offset points",
                fontsize=8,
                bbox={"boxstyle": "round", "fc": "white", "alpha": 0.85, "lw": 0},
            )
        ax.set_xlabel(AXIS_LABELS[xn], fontsize=9)
        ax.set_ylabel(AXIS_LABELS[yn], fontsize=9)
        if handles:
            ax.legend(handles=handles, loc="upper right", fontsize=8, framealpha=0.9)
    fixed = [f"{n.replace('_', ' ')} = {v[0]:g}" for n, v in result.axes if len(v) == 1]
    title = f"Where the conclusion tips ({result.kind} view)"
    if fixed:
        title += "\n" + ", ".join(fixed)
    ax.set_title(title, fontsize=10)
    _save(fig, path)
    return path
