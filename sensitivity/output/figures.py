"""Figures in the project's own visual language, shared by every family.

Every strength map is drawn the same way: filled levels of the bias-adjusted value with a
colour bar, the lines where the conclusion tips drawn in black and named in a legend below
the plot, scenarios as numbered white markers keyed to the rows of the scenario table, the
observed estimate in the title, and shares (partial R², prevalences) in percent. Labels are
numbers, never free text on the plot, so nothing overlaps or is cut at the edge.

matplotlib is imported here and only here, inside the functions, with the Agg backend, so
no display is needed and one-number commands never pay for it. Vector output embeds its
fonts: TrueType in PDF (fonttype 42), glyphs as paths in SVG.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.errors import InputError

PLOT_FORMATS = (".png", ".svg", ".pdf")
STYLE = {
    "font.family": "DejaVu Sans",
    "font.size": 9,
    "axes.titlesize": 10,
    "axes.labelsize": 9,
    "legend.fontsize": 8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "pdf.fonttype": 42,
    "ps.fonttype": 42,
    "svg.fonttype": "path",
    "savefig.dpi": 200,
}
FILL = "PuOr"  # diverging at the target; readable by colour-blind readers
LINE = {"estimate": ("black", "-", 2.0), "ci": ("black", "--", 1.5)}
Mark = tuple[float, float]


def check_plot_path(path: str | Path, argument: str = "plot") -> Path:
    """Refuse an unsupported extension or a missing folder before any work is done."""
    p = Path(path)
    if p.suffix.lower() not in PLOT_FORMATS:
        raise InputError(f"`{argument}` must end in .png, .svg or .pdf; got {p.name!r}")
    if not p.parent.exists():
        raise InputError(f"`{argument}`: folder {str(p.parent)!r} does not exist")
    return p


def _pyplot() -> Any:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _figure() -> tuple[Any, Any]:
    plt = _pyplot()
    plt.rcParams.update(STYLE)
    fig, ax = plt.subplots(figsize=(6.4, 5.6), layout="constrained")
    return fig, ax


def _save(fig: Any, paths: Sequence[str | Path]) -> None:
    for path in paths:
        fig.savefig(
            path, metadata={"Creator": "sensitivity"} if str(path).endswith(".pdf") else None
        )
    _pyplot().close(fig)


def _percent(ax: Any, which: str) -> None:
    from matplotlib.ticker import PercentFormatter

    axis = ax.xaxis if which == "x" else ax.yaxis
    low, high = ax.get_xlim() if which == "x" else ax.get_ylim()
    decimals = 0 if high - low >= 0.05 else None
    axis.set_major_formatter(PercentFormatter(1.0, decimals=decimals))


def _legend(ax: Any, handles: list) -> None:
    if handles:
        longest = max(len(h.get_label()) for h in handles)
        ncols = 1 if longest > 42 else 2 if longest > 26 else 3
        ax.legend(
            handles=handles,
            loc="upper center",
            bbox_to_anchor=(0.5, -0.13),
            ncols=min(ncols, len(handles)),
            frameon=False,
        )


def _numbered(ax: Any, points: Sequence[Mark], start: int = 1) -> None:
    """Numbered markers: white discs with the row number of the table they belong to."""
    for i, (x, y) in enumerate(points, start):
        ax.plot([x], [y], "o", ms=13, mfc="white", mec="black", mew=1.0, zorder=5, clip_on=False)
        ax.annotate(str(i), (x, y), ha="center", va="center", fontsize=7.5, zorder=6)


def _point(marker: str, **style: Any) -> Any:
    """A legend entry for a marker with no line."""
    return _pyplot().Line2D([], [], marker=marker, ls="", **style)


def _marks(ax: Any, marks: Sequence[Mark], handles: list) -> None:
    """The user's own confounders (the reviewer's question): red diamonds."""
    if not marks:
        return
    xs, ys = zip(*marks, strict=True)
    ax.plot(xs, ys, "D", ms=7, mfc="#d62728", mec="white", mew=0.8, zorder=6, clip_on=False)
    handles.append(_point("D", mfc="#d62728", mec="white", label="Your confounder"))


def _filled(
    ax: Any, x: np.ndarray, y: np.ndarray, z: np.ndarray, label: str, center: float
) -> None:
    """Filled levels of z (rows along x) with a colour bar named `label`. The colours
    diverge at `center` (the target), so the side of the target a cell lies on is plain."""
    from matplotlib.colors import TwoSlopeNorm
    from matplotlib.ticker import MaxNLocator

    finite = z[np.isfinite(z)]
    lo, hi = (float(finite.min()), float(finite.max())) if finite.size else (0.0, 1.0)
    if hi <= lo:
        hi = lo + 1.0
    levels = MaxNLocator(nbins=12).tick_values(lo, hi)
    span = max(abs(hi - center), abs(center - lo), 1e-12)
    norm = TwoSlopeNorm(vcenter=center, vmin=center - span, vmax=center + span)
    filled = ax.contourf(x, y, z.T, levels=levels, cmap=FILL, norm=norm, extend="both")
    bar = ax.figure.colorbar(filled, ax=ax, shrink=0.85, pad=0.02)
    bar.set_label(label)


def _tip_line(
    ax: Any,
    x: np.ndarray,
    y: np.ndarray,
    z: np.ndarray,
    level: float,
    key: str,
    label: str,
    handles: list,
) -> None:
    plt = _pyplot()
    finite = z[np.isfinite(z)]
    if finite.size and finite.min() <= level <= finite.max():
        color, style, width = LINE[key]
        ax.contour(x, y, z.T, levels=[level], colors=color, linestyles=style, linewidths=width)
        handles.append(plt.Line2D([], [], color=color, ls=style, lw=width, label=label))


def log_ticks(ax: Any, low: float, high: float) -> None:
    """A log x axis labelled with plain numbers (0.8, 1, 1.5, 2), no minor labels."""
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter, NullLocator

    nice = [0.1, 0.2, 0.3, 0.5, 0.67, 0.8, 1, 1.25, 1.5, 2, 3, 5, 10, 20, 50, 100, 1e3, 1e4]
    ax.set_xscale("log")
    ax.set_xlim(low, high)
    ax.xaxis.set_major_locator(FixedLocator([v for v in nice if low <= v <= high]))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    ax.xaxis.set_minor_locator(NullLocator())
    ax.xaxis.set_minor_formatter(NullFormatter())


# --------------------------------------------------------------------------- partial R²
def _r2_limits(result: Any, limits: Mark | None) -> Mark:
    """The default zoom: where the conclusion changes (twice the larger robustness value)
    and every scenario, with room around them."""
    if limits is not None:
        return float(limits[0]), float(limits[1])
    pts = [2 * result.robustness_value, 0.05]
    pts += [max(s.r2_treatment, s.r2_outcome) * 1.2 for s in result.scenarios]
    lim = float(min(0.99, max(pts)))
    return lim, lim


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
    from ..partial_r2.core import surface, t_critical

    paths = [check_plot_path(p) for p in ([path] if isinstance(path, (str, Path)) else path)]
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
    level = f"{1 - result.alpha:.0%}"
    goal = "zero" if result.fraction == 1 else f"{target:.3g}"
    fig, ax = _figure()
    _filled(ax, gx, gy, value, label, 0.0 if statistic == "t" else target)
    handles: list = []
    distance = sign * (s["estimate"] - target)
    _tip_line(ax, gx, gy, distance, 0.0, "estimate", f"Estimate reaches {goal}", handles)
    _tip_line(ax, gx, gy, distance / s["se"], crit, "ci", f"{level} CI reaches {goal}", handles)
    _numbered(ax, [(sc.r2_treatment, sc.r2_outcome) for sc in result.scenarios])
    _marks(ax, marks, handles)
    who = f" of {result.treatment}" if result.treatment else ""
    shown = f"t = {result.t:.2f}" if statistic == "t" else f"estimate {result.estimate:.3g}"
    ax.set_title(f"Where a hidden confounder moves the coefficient{who}\n(observed {shown})")
    ax.set_xlabel("Confounder's share of the treatment's residual variance (partial R²)")
    ax.set_ylabel("Confounder's share of the outcome's residual variance (partial R²)")
    ax.set_xlim(0, xlim)
    ax.set_ylim(0, ylim)
    _percent(ax, "x")
    _percent(ax, "y")
    if result.scenarios:
        handles.append(
            _point("o", mfc="white", mec="black", ms=9, label="Scenario (numbered as in the table)")
        )
    _legend(ax, handles)
    _save(fig, paths)
    return paths


# --------------------------------------------------------------------------- tipping grids
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


def tipping_figure(
    result: Any,
    path: str | Path | Sequence[str | Path],
    limits: Mark | None = None,
    marks: Sequence[Mark] = (),
) -> list[Path]:
    """The grid as filled levels over its two varying strengths (a line chart when one
    varies), with the lines where the estimate and its interval reach the target."""
    paths = [check_plot_path(p) for p in ([path] if isinstance(path, (str, Path)) else path)]
    varying = result.varying
    if len(varying) not in (1, 2):
        raise InputError(
            f"`plot` needs one or two varying parameters; got {len(varying)} (give one of "
            "them a single value)"
        )
    goal = "the null" if result.target_is_null else f"{result.target:g}"
    level = f"{result.ci_level:.0%} CI"
    est = np.squeeze(result.cells["bias_adjusted_estimate"])
    near_key = (
        "bias_adjusted_ci_lower" if result.estimate >= result.target else "bias_adjusted_ci_upper"
    )
    near = np.squeeze(result.cells[near_key]) if near_key in result.cells else None
    colour = "Bias-adjusted estimate"
    if result.kind == "bounding":
        colour = "Worst-case bound on the estimate (bounding factor)"
    fig, ax = _figure()
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
            _percent(ax, "x")
        if limits is not None:
            ax.set_xlim(right=limits[0])
        handles = ax.get_legend_handles_labels()[0]
    else:
        (xn, x), (yn, y) = (result.axes[i] for i in varying)
        sign = 1 if result.estimate >= result.target else -1
        _filled(ax, x, y, est, colour, result.target)
        line = (
            "E-value curve: estimate reaches" if result.kind == "bounding" else "Estimate reaches"
        )
        _tip_line(
            ax, x, y, sign * (est - result.target), 0.0, "estimate", f"{line} {goal}", handles
        )
        if near is not None:
            _tip_line(
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
                _point(
                    "o",
                    mfc="black",
                    mec="white",
                    label=f"E-value ({e:.2f}, {e:.2f})",
                )
            )
        _marks(ax, marks, handles)
        ax.set_xlabel(AXIS_LABELS[xn])
        ax.set_ylabel(AXIS_LABELS[yn])
        for which, n in (("x", xn), ("y", yn)):
            if n in SHARES:
                _percent(ax, which)
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
    if fixed:
        title += "\nwith " + "; ".join(fixed)
    ax.set_title(title)
    _legend(ax, handles)
    _save(fig, paths)
    return paths


# --------------------------------------------------------------------------- E-values
def evalue_figure(
    result: Any, path: str | Path | Sequence[str | Path], limits: Mark | None = None
) -> list[Path]:
    """The pairs of risk ratios (treatment-confounder, confounder-outcome) that could explain
    the estimate and its interval away: B(a, b) = R on the curve b = R (a - 1) / (a - R),
    through the E-value point (E, E). The user's hypothetical confounders are numbered as in
    the confounder table."""
    paths = [check_plot_path(p) for p in ([path] if isinstance(path, (str, Path)) else path)]
    if not result.is_scalar:
        raise InputError("`plot` draws one E-value result; give one estimate")
    plt = _pyplot()
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
    fig, ax = _figure()
    handles: list = []
    grid = np.linspace(1, xlim, 400)
    goal = "the null" if result.target_is_null else f"{float(result.target_value):g}"
    level = f"{result.ci_level:.0%} CI"
    for key, r, e in curves:
        a = grid[grid > r * (1 + 1e-9)]
        b = r * (a - 1) / (a - r)
        color, style, width = LINE[key]
        name = "estimate" if key == "estimate" else f"{level}"
        ax.plot(a, b, color=color, ls=style, lw=width)
        if key == "estimate":
            ax.fill_between(a, b, ylim, color="#e7d7a8", alpha=0.8, lw=0)
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
        _numbered(ax, pts)
        handles.append(
            _point(
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
    _legend(ax, handles)
    _save(fig, paths)
    return paths


# --------------------------------------------------------------------------- the screen
def screen_figure(
    summary: Any, path: str | Path | Sequence[str | Path], limits: Mark | None = None
) -> list[Path]:
    """The distribution of E-values by scale: for each scale, the share of results whose
    E-value (solid) and interval E-value (dashed) is at most x, on a log axis. Drawn from the
    screen's tally, so a file of millions of rows costs no more than one of ten."""
    paths = [check_plot_path(p) for p in ([path] if isinstance(path, (str, Path)) else path)]
    codes = [c for c, (h, _) in summary.histograms.items() if h.sum() > 0]
    if not codes:
        raise InputError("`plot`: no row could be screened, so there is no distribution to draw")
    plt = _pyplot()
    plt.rcParams.update(STYLE)
    cols = min(3, len(codes))
    rows = -(-len(codes) // cols)
    fig, axes = plt.subplots(
        rows, cols, figsize=(3.4 * cols, 2.9 * rows + 0.8), squeeze=False, layout="constrained"
    )
    edges = np.exp(summary.log_edges())
    top = float(limits[0]) if limits is not None else None

    from ..common.scales import SCALES

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
        _percent(ax, "y")
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
    _save(fig, paths)
    return paths


# --------------------------------------------------------------------------- stability
def stability_figure(result: Any, path: str | Path | Sequence[str | Path]) -> list[Path]:
    """The bias-adjusted coefficient against delta: exact (the root nearest the long
    estimate, where the variances are given) and approximate, with the target and delta = 1."""
    from ..stability.core import real_roots

    paths = [check_plot_path(p) for p in ([path] if isinstance(path, (str, Path)) else path)]
    r = result
    top = max(2.0, 1.5 * abs(r.delta_for_target_approx or 0), 1.5 * abs(r.delta_for_target or 0))
    deltas = np.linspace(0, min(top, 20.0), 301)
    approx = r.estimate_long - deltas * (r.estimate_short - r.estimate_long) * (
        r.r2_max - r.r2_long
    ) / (r.r2_long - r.r2_short)
    fig, ax = _figure()
    plt = _pyplot()
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
    _legend(ax, ax.get_legend_handles_labels()[0])
    del plt
    _save(fig, paths)
    return paths


# --------------------------------------------------------------------------- matched pairs
def matched_figure(result: Any, path: str | Path | Sequence[str | Path]) -> list[Path]:
    """The upper bound on the one-sided p-value against Gamma, with alpha and the crossing."""
    paths = [check_plot_path(p) for p in ([path] if isinstance(path, (str, Path)) else path)]
    fig, ax = _figure()
    ax.plot(result.gamma, result.p_upper, color="black", lw=2, marker="o", ms=3,
            label="Upper bound on the p-value")  # fmt: skip
    ax.plot(result.gamma, result.p_lower, color="black", lw=1, ls="--",
            label="Lower bound on the p-value")  # fmt: skip
    ax.axhline(result.alpha, color="#d62728", lw=1, ls=":", label=f"alpha = {result.alpha:g}")
    g = result.gamma_at_alpha
    if g is not None and np.isfinite(g) and result.gamma.min() <= g <= result.gamma.max():
        ax.plot([g], [result.alpha], "D", color="#d62728", ms=7,
                label=f"Crossing at Gamma = {g:.2f}")  # fmt: skip
    ax.set_xlabel("Gamma: how much more likely hidden bias could make one unit the treated one")
    ax.set_ylabel("One-sided p-value")
    name = "sign test" if result.test == "sign" else "signed-rank test"
    ax.set_title(f"Rosenbaum bounds ({name}, {result.pairs:,} pairs)")
    _legend(ax, ax.get_legend_handles_labels()[0])
    _save(fig, paths)
    return paths


# --------------------------------------------------------------------------- simulation
def simulation_figure(result: Any, path: str | Path | Sequence[str | Path]) -> list[Path]:
    """The distribution of bias-adjusted estimates (systematic, and with random error), with
    the observed estimate, its interval and the target marked."""
    paths = [check_plot_path(p) for p in ([path] if isinstance(path, (str, Path)) else path)]
    from ..common.scales import RATIO_SCALES

    fig, ax = _figure()
    ratio = result.scale in RATIO_SCALES
    values = [np.log(result.sample_total), np.log(result.sample)] if ratio else [
        result.sample_total, result.sample]  # fmt: skip
    lo = min(float(np.percentile(v, 0.5)) for v in values)
    hi = max(float(np.percentile(v, 99.5)) for v in values)
    bins = np.linspace(lo, hi, 80)
    ax.hist(values[0], bins=bins, color="#c9c9c9", label="With random error", density=True)
    ax.hist(values[1], bins=bins, histtype="step", color="black", lw=1.8,
            label="Systematic error only", density=True)  # fmt: skip
    f = np.log if ratio else (lambda v: v)
    ax.axvline(f(result.estimate), color="black", lw=1.2, ls="--", label="Observed estimate")
    ax.axvspan(f(result.ci[0]), f(result.ci[1]), color="#4c72b0", alpha=0.12,
               label=f"Observed {result.ci_level:.0%} CI")  # fmt: skip
    ax.axvline(
        f(result.target), color="#d62728", lw=1.2, ls=":", label=f"Target ({result.target:g})"
    )
    if ratio:
        from matplotlib.ticker import FuncFormatter

        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{np.exp(v):.3g}"))
        ax.set_xlabel("Bias-adjusted estimate (log axis)")
    else:
        ax.set_xlabel("Bias-adjusted estimate")
    ax.set_ylabel("Density")
    ax.set_yticks([])
    ax.set_title(f"Probabilistic bias analysis ({result.draws - result.discarded:,} draws, "
                 f"seed {result.seed})")  # fmt: skip
    _legend(ax, ax.get_legend_handles_labels()[0])
    _save(fig, paths)
    return paths
