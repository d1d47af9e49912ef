"""Figures. Presentation only: every number drawn comes from the computation modules.

matplotlib is imported here and only here, inside the functions, with the Agg backend, so
no display is needed and one-number commands never pay for it.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

PLOT_FORMATS = (".png", ".svg", ".pdf")


def check_plot_path(path, argument: str = "plot") -> Path:
    """Refuse an unsupported extension or a missing folder before any work is done."""
    p = Path(path)
    if p.suffix.lower() not in PLOT_FORMATS:
        raise ValueError(f"`{argument}` must end in .png, .svg or .pdf; got {p.name!r}")
    if not p.parent.exists():
        raise ValueError(f"`{argument}`: folder {str(p.parent)!r} does not exist")
    return p


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _save(fig, path) -> None:
    fig.savefig(path, dpi=150, bbox_inches="tight")
    _pyplot().close(fig)


def _r2_limit(result) -> float:
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


def partial_r2_contours(result, path, statistic: str = "estimate", limit=None, size: int = 241):
    """Contours of the bias-adjusted estimate (or t) over the two partial R² of a confounder.

    Draws the target contour (estimate reaches zero, or (1 - fraction) times itself), the
    significance contour (the adjusted interval reaches it), the observed point, and every
    scenario (benchmarks and hypothetical confounders) labelled.
    """
    from .partial_r2 import surface, t_critical

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
        tipping = ax.contour(
            X, Y, (sign * (s["estimate"] - target)).T, levels=[0], colors="crimson", linewidths=2.2
        )
    else:
        tipping = ax.contour(X, Y, (sign * s["t"]).T, levels=[0], colors="crimson", linewidths=2.2)
    sig = ax.contour(
        X, Y, dist_t.T, levels=[crit], colors="crimson", linewidths=1.6, linestyles="dashed"
    )
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
    del tipping, sig
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
