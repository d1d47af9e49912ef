"""Tipping-point grids: where does the conclusion tip under a hidden confounder?

Three views of one question, all vectorised over the whole grid (no loop per cell):

- `binary_confounder_grid`: a binary U with prevalence `prevalence_treated` among the treated,
  `prevalence_control` among the controls, and effect `outcome_effect` on the outcome (a
  difference for md/rd, a ratio for rr/or/hr) (Lin, Psaty & Kronmal 1998; VanderWeele &
  Arah 2011).
- `bounding_grid`: the confounder's two risk ratios, through the bounding factor (Ding &
  VanderWeele 2016), with the E-value curve.
- `partial_r2_grid`: the two partial R² for an OLS coefficient (Cinelli & Hazlett 2020),
  computed by `partial_r2.surface`.

Each returns a `TippingGrid`: the long-format rows, and the tipping points: for each value of
the other varying parameters, the least grid value of the last varying one at which the
estimate (and, separately, the interval limit nearest the target) reaches the target, with
the exact crossing from the closed form beside it.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import (
    AT_LEAST_ONE,
    POSITIVE,
    PROBABILITY,
    R2_STRENGTH,
    inside_interval,
    interval_order,
    require,
    require_all,
    require_choice,
)
from ..common.errors import InputError
from ..common.scales import RATIO_SCALES
from .result import TippingGrid

#: The largest grid computed (cells = product of the axis lengths): about 40 MB per column.
MAX_CELLS = 5_000_000
SCALES = ("md", "rd", "rr", "or", "hr")


# --------------------------------------------------------------------------- ranges
def value_range(
    start: float, stop: float | None = None, step: float | None = None, name: str = "range"
) -> np.ndarray:
    """Grid values START, START+STEP, ... up to STOP (included when the steps reach it).

    A single value when only `start` is given. Refuses an empty or backwards range and a
    step that is not positive.

    Examples
    --------
    >>> value_range(0, 1, 0.25).tolist()
    [0.0, 0.25, 0.5, 0.75, 1.0]
    >>> value_range(1, 2, 0.3).tolist()
    [1.0, 1.3, 1.6, 1.9]
    """
    start = float(require(start, name))
    if stop is None and step is None:
        return np.array([start])
    stop = float(require(stop, name))
    step = float(require(step, name))
    if step <= 0:
        raise InputError(f"`{name}` step must be positive; got {step:g}")
    if stop < start:
        raise InputError(f"`{name}` is backwards or empty: stop {stop:g} is below start {start:g}")
    count = int(np.floor((stop - start) / step * (1 + 1e-12) + 1e-9)) + 1
    if count > MAX_CELLS:
        raise InputError(f"`{name}` has {count:,} values; the grid limit is {MAX_CELLS:,} cells")
    # round away binary fuzz (0.1 + 0.2) so printed and exported values are the ones typed
    return np.round(start + step * np.arange(count), 12)


def parse_range(text: str, name: str) -> np.ndarray:
    """'START:STOP:STEP' or a single number, as grid values (used by the CLI)."""
    parts = str(text).split(":")
    if len(parts) not in (1, 3):
        raise InputError(f"`{name}` must be a number or START:STOP:STEP; got {text!r}")
    try:
        numbers = [float(p) for p in parts]
    except ValueError:
        raise InputError(f"`{name}` must be a number or START:STOP:STEP; got {text!r}") from None
    if len(numbers) == 1:
        return value_range(numbers[0], name=name)
    return value_range(numbers[0], numbers[1], numbers[2], name=name)


def _or(value, default):
    return default if value is None else value


def _axis(values, name, *rules):
    return np.atleast_1d(require(values, name, *rules)).astype(float).ravel()


def _check_size(axes):
    cells = int(np.prod([len(v) for _, v in axes]))
    if cells > MAX_CELLS:
        sizes = " x ".join(str(len(v)) for _, v in axes)
        raise InputError(f"the grid has {cells:,} cells ({sizes}); the limit is {MAX_CELLS:,}")


# --------------------------------------------------------------------------- shared checks
def _check_effect(scale, estimate, ci, target):
    scale = require_choice(scale, "scale", SCALES)
    ratio = scale in RATIO_SCALES
    rules = (POSITIVE,) if ratio else ()
    est = float(require(estimate, "estimate", *rules))
    null = 1.0 if ratio else 0.0
    tgt = float(require(null if target is None else target, "target", *rules))
    pair = None
    if ci is not None:
        rules = (POSITIVE,) if ratio else ()
        lo = float(require(ci[0], "ci", *rules))
        up = float(require(ci[1], "ci", *rules))
        values = {"estimate": np.asarray(est), "lower": np.asarray(lo), "upper": np.asarray(up)}
        require_all(values, (interval_order(), inside_interval()))
        pair = (lo, up)
    return scale, est, pair, tgt


def _reaches(value, target, side):
    """Whether `value` has reached the target coming from `side` (+1 above, -1 below)."""
    return value <= target if side > 0 else value >= target


def _near_limit(est, ci, target):
    if ci is None:
        return None
    return ci[0] if est >= target else ci[1]


def _within(x, lo, hi):
    x = np.asarray(x, float)
    ok = np.isfinite(x) & (x >= lo - 1e-12) & (x <= hi + 1e-12)
    return np.where(ok, x, np.nan)


# --------------------------------------------------------------------------- binary U
def binary_confounder_grid(
    scale: str,
    estimate: ArrayLike,
    ci: tuple[float, float] | None = None,
    *,
    prevalence_treated: ArrayLike | None = None,
    prevalence_control: ArrayLike | None = None,
    outcome_effect: ArrayLike | None = None,
    target: float | None = None,
) -> TippingGrid:
    """Bias-adjusted estimates under a hidden binary confounder, over a grid of its strengths.

    Parameters
    ----------
    scale : {'md', 'rd', 'rr', 'or', 'hr'}
        Effect scale. md/rd use the difference formula, rr/or/hr the ratio formula (for or
        and hr this presumes a rare outcome).
    estimate : float
        The observed (covariate-adjusted) estimate.
    ci : (lower, upper), optional
        Its confidence limits; each is shifted by the same bias.
    prevalence_treated, prevalence_control : float or 1-d array, optional
        P(U = 1) among the treated and among the controls (default: 0 to 1 by 0.05).
    outcome_effect : float or 1-d array, optional
        Effect of U on the outcome: a difference (md, rd) or a ratio (rr, or, hr); default
        from `default_ranges`.
    target : float, optional
        The value the estimate is tested against (default: the null).

    Notes
    -----
    Difference scale: ``adjusted = observed - gamma (p1 - p0)``; ratio scale:
    ``adjusted = observed (1 + (G - 1) p0) / (1 + (G - 1) p1)``, with no U-by-treatment
    interaction.

    References
    ----------
    Lin DY, Psaty BM, Kronmal RA (1998). Assessing the sensitivity of regression results to
    unmeasured confounders in observational studies. Biometrics 54:948-963.
    VanderWeele TJ, Arah OA (2011). Bias formulas for sensitivity analysis of unmeasured
    confounding for general outcomes, treatments, and confounders. Epidemiology 22:42-52.

    Examples
    --------
    >>> g = binary_confounder_grid("rr", 1.8, prevalence_treated=0.5, prevalence_control=0.2,
    ...                            outcome_effect=3.0)
    >>> round(float(g.cells["bias_adjusted_estimate"].item()), 4)  # 1.8 * 1.4 / 2
    1.26
    """
    scale, est, ci, tgt = _check_effect(scale, estimate, ci, target)
    ratio = scale in RATIO_SCALES
    default = default_ranges("binary", estimate=est, target=tgt, scale=scale)
    prevalence_treated = _or(prevalence_treated, default["prevalence_treated"])
    prevalence_control = _or(prevalence_control, default["prevalence_control"])
    outcome_effect = _or(outcome_effect, default["outcome_effect"])
    p1 = _axis(prevalence_treated, "prevalence_treated", PROBABILITY)
    p0 = _axis(prevalence_control, "prevalence_control", PROBABILITY)
    g = _axis(outcome_effect, "outcome_effect", *((POSITIVE,) if ratio else ()))
    axes = (("prevalence_treated", p1), ("prevalence_control", p0), ("outcome_effect", g))
    _check_size(axes)
    P1, P0, G = p1[:, None, None], p0[None, :, None], g[None, None, :]
    if ratio:
        factor = (1 + (G - 1) * P0) / (1 + (G - 1) * P1)

        def shift(v):
            return v * factor
    else:
        delta = G * (P1 - P0)

        def shift(v):
            return v - delta

    side = 1 if est >= tgt else -1
    cells = {"bias_adjusted_estimate": shift(est)}
    reach_ci = None
    if ci is not None:
        cells["bias_adjusted_ci_lower"] = shift(ci[0])
        cells["bias_adjusted_ci_upper"] = shift(ci[1])
        near = "bias_adjusted_ci_lower" if side > 0 else "bias_adjusted_ci_upper"
        reach_ci = _reaches(cells[near], tgt, side)
    reach = _reaches(cells["bias_adjusted_estimate"], tgt, side)
    result = TippingGrid(
        kind="binary",
        scale=scale,
        estimate=est,
        ci=ci,
        target=tgt,
        axes=axes,
        cells=cells,
        reach_estimate=reach,
        reach_ci=reach_ci,
        exact={},
        notes=tuple(_already(est, ci, tgt)) + _binary_notes(scale),
    )
    return _with_exact(result, lambda obs: _binary_exact(result, obs))


def _already(est, ci, target):
    """Notes for a grid whose estimate, or interval, already sits at the target."""
    notes = []
    if est == target:
        notes.append("The estimate already equals the target: no confounding is needed.")
    elif ci is not None and ci[0] <= target <= ci[1]:
        notes.append(
            "The interval already includes the target: the interval columns show "
            "where a confounder would move it back out, not in."
        )
    return notes


def _binary_notes(scale):
    notes = []
    if scale in ("or", "hr"):
        notes.append(
            f"The ratio formula is applied to the {scale.upper()} as to a risk ratio: "
            "it presumes a rare outcome (VanderWeele & Arah 2011)."
        )
    notes.append(
        "U is binary and does not modify the treatment effect (no U-by-treatment "
        "interaction); its prevalences are conditional on the measured covariates."
    )
    return tuple(notes)


def _with_exact(result, solver):
    """Attach the exact crossings of the solved axis for the estimate and the near CI limit."""
    if result.solved is None:
        return result
    exact = {}
    keys = [("estimate", result.estimate)]
    if result.ci is not None:
        keys.append(("ci", _near_limit(result.estimate, result.ci, result.target)))
    for key, obs in keys:
        root, side = solver(obs)
        exact[key], exact[f"{key}_side"] = root, np.broadcast_to(side, np.shape(root))
    return replace(result, exact=exact)


def _reduced(axes, j):
    """Each axis as an array broadcasting over the grid with axis j removed (None for j)."""
    sizes = [len(v) for i, (_, v) in enumerate(axes) if i != j]
    out, k = [], 0
    for i, (_, v) in enumerate(axes):
        if i == j:
            out.append(None)
            continue
        shape = [1] * len(sizes)
        shape[k] = len(v)
        out.append(v.reshape(shape))
        k += 1
    return out


def _shift_binary(scale, obs, p1, p0, g):
    if scale in RATIO_SCALES:
        return obs * (1 + (g - 1) * p0) / (1 + (g - 1) * p1)
    return obs - g * (p1 - p0)


def _binary_exact(result, obs):
    """Closed-form value of the solved parameter at which `obs` shifts onto the target, and
    the side (+1: values at or above it reach the target; -1: at or below)."""
    j = result.solved
    p1, p0, g = _reduced(result.axes, j)
    t = result.target
    ratio = result.scale in RATIO_SCALES
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if ratio:
            r = obs / t
            root = [
                lambda: (r * (1 + (g - 1) * p0) - 1) / (g - 1),
                lambda: ((1 + (g - 1) * p1) / r - 1) / (g - 1),
                lambda: 1 + (1 - r) / (r * p0 - p1),
            ][j]()
        else:
            d = obs - t
            root = [lambda: p0 + d / g, lambda: p1 - d / g, lambda: d / (p1 - p0)][j]()
        lo, hi = (0.0, 1.0) if j < 2 else (0.0 if ratio else -np.inf, np.inf)
        root = _within(np.broadcast_to(root, result.reduced_shape(j)), lo, hi)
        args = [p1, p0, g]
        args[j] = root + 1e-9 * np.maximum(1.0, np.abs(np.nan_to_num(root)))
        probe = _shift_binary(result.scale, obs, *args)
    side = 1 if result.estimate >= t else -1
    return root, np.where(_reaches(probe, t, side), 1, -1)


# --------------------------------------------------------------------------- bounding factor
def bounding_grid(
    scale: str,
    estimate: ArrayLike,
    ci: tuple[float, float] | None = None,
    *,
    rr_treatment: ArrayLike | None = None,
    rr_outcome: ArrayLike | None = None,
    outcome: str | None = None,
    target: float | None = None,
) -> TippingGrid:
    """The most a confounder could move the estimate, over a grid of its two risk ratios.

    The estimate (on the risk-ratio scale; OR and HR need `outcome` 'rare' or 'common' for the
    conversion of `sensitivity.evalues`) is divided by the bounding factor
    ``B = a b / (a + b - 1)`` when above the target, multiplied when below. The exact
    tipping curve is ``b = R (a - 1) / (a - R)`` for ``a > R``, with ``R`` the ratio of the
    estimate (or CI limit) to the target on the risk-ratio scale (inverted below 1); it passes
    through the E-value point (E, E).

    References
    ----------
    Ding & VanderWeele (2016), Epidemiology 27:368; VanderWeele & Ding (2017), Ann Intern Med.
    """
    from ..common.scales import to_risk_ratio
    from ..evalues.core import evalue

    if scale not in RATIO_SCALES:
        raise InputError(f"`scale` must be one of rr, or, hr for the bounding view; got {scale!r}")
    ev = evalue(scale, estimate, ci, outcome=outcome, target=target)
    default = default_ranges("bounding", evalue=float(ev.evalue))
    a = _axis(_or(rr_treatment, default["rr_treatment"]), "rr_treatment", AT_LEAST_ONE)
    b = _axis(_or(rr_outcome, default["rr_outcome"]), "rr_outcome", AT_LEAST_ONE)
    axes = (("rr_treatment", a), ("rr_outcome", b))
    _check_size(axes)
    bound = ev.confounder(a[:, None], b[None, :])
    cells = {
        "bounding_factor": bound.bounding_factor,
        "bias_adjusted_estimate": np.broadcast_to(bound.estimate, (len(a), len(b))),
    }
    reach_ci = None
    if bound.ci_limit is not None and ev.ci is not None:
        # only the limit nearest the target moves toward it; report the interval with it moved
        lower_near = float(ev.rr) >= float(ev.rr_target)
        far = float(ev.ci[1] if lower_near else ev.ci[0])
        lim = np.broadcast_to(bound.ci_limit, (len(a), len(b)))
        far_arr = np.full(lim.shape, far)
        cells["bias_adjusted_ci_lower"] = lim if lower_near else far_arr
        cells["bias_adjusted_ci_upper"] = far_arr if lower_near else lim
        reach_ci = np.broadcast_to(np.asarray(bound.explains_ci), lim.shape)
    reach = np.broadcast_to(bound.explains_estimate, (len(a), len(b)))
    notes = list(ev.notes) + [
        f"Conversion to the risk-ratio scale: {ev.conversion}.",
        "The bound is the most bias a confounder of these strengths could produce (Ding & "
        "VanderWeele 2016); a real confounder of the same strengths may produce less. The "
        "interval's far limit is left where it is.",
    ]
    result = TippingGrid(
        kind="bounding",
        scale=scale,
        estimate=float(ev.estimate),
        ci=None if ev.ci is None else (float(ev.ci[0]), float(ev.ci[1])),
        target=float(ev.target_value),
        axes=axes,
        cells=cells,
        reach_estimate=reach,
        reach_ci=reach_ci,
        exact={},
        notes=tuple(notes),
        extra={
            "evalue": float(ev.evalue),
            "evalue_ci": None if ev.evalue_ci is None else float(ev.evalue_ci),
            "outcome": ev.outcome,
        },
    )

    def solver(value):
        # B grows in both strengths, so the crossing is always the least value reaching it.
        r = float(to_risk_ratio(ev.scale, value, outcome=ev.outcome)) / float(ev.rr_target)
        r = max(r, 1 / r)
        other = a if result.solved == 1 else b
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            root = np.where(other > r, r * (other - 1) / (other - r), np.nan)
        return (root if r > 1 else np.ones_like(other)), 1

    return _with_exact(result, solver)


# --------------------------------------------------------------------------- partial R²
def partial_r2_grid(
    estimate: ArrayLike,
    se: ArrayLike,
    dof: ArrayLike,
    *,
    r2_treatment: ArrayLike | None = None,
    r2_outcome: ArrayLike | None = None,
    alpha: float = 0.05,
    target: float | None = 0.0,
) -> TippingGrid:
    """Bias-adjusted OLS estimates over a grid of the confounder's two partial R².

    The computation is `sensitivity.partial_r2.surface` (Cinelli & Hazlett 2020); the
    interval reaches the target when its limit nearest the target does. Exact crossings:
    for the estimate ``r2_outcome = d² (1 - r2_t) / (se² dof r2_t)`` with ``d = |est - target|``;
    for the interval the solution of ``A sin θ + C cos θ = d`` with ``r2_outcome = sin² θ``
    (and likewise in the angle of ``sqrt(r2_treatment)`` when that is the solved axis),
    ``A = se sqrt(dof r2_t / (1 - r2_t))`` and ``C = t_crit se sqrt(dof / ((dof - 1)(1 - r2_t)))``.
    """
    from ..partial_r2.core import _check_summary, robustness_value, surface, t_critical

    est, se, dof, _, alpha = _check_summary(estimate, se, dof, None, 1.0, alpha)
    tgt = float(require(0.0 if target is None else target, "target"))
    default = default_ranges("partial-r2", robustness_value=float(robustness_value(est / se, dof)))
    r2t = _axis(_or(r2_treatment, default["r2_treatment"]), "r2_treatment", R2_STRENGTH)
    r2y = _axis(_or(r2_outcome, default["r2_outcome"]), "r2_outcome", R2_STRENGTH)
    axes = (("r2_treatment", r2t), ("r2_outcome", r2y))
    _check_size(axes)
    s = surface(est, se, dof, r2t, r2y, alpha)
    side = 1 if est >= tgt else -1
    # the bias shrinks |estimate| toward zero; with a non-zero target it is tested as given
    cells = {
        "bias": s["bias"],
        "bias_adjusted_estimate": s["estimate"],
        "bias_adjusted_se": s["se"],
        "bias_adjusted_t": s["t"],
        "bias_adjusted_ci_lower": s["lower"],
        "bias_adjusted_ci_upper": s["upper"],
    }
    reach = _reaches(s["estimate"], tgt, side)
    near = s["lower"] if side > 0 else s["upper"]
    reach_ci = _reaches(near, tgt, side)
    crit = float(t_critical(alpha, dof - 1))
    result = TippingGrid(
        kind="partial-r2",
        scale="md",
        estimate=est,
        ci=None,
        target=tgt,
        axes=axes,
        cells=cells,
        reach_estimate=reach,
        reach_ci=reach_ci,
        exact={},
        notes=(
            "OLS with classical standard errors; the bias is taken in the direction that "
            "shrinks the estimate toward zero (Cinelli & Hazlett 2020).",
        ),
        extra={"se": se, "dof": dof, "alpha": alpha},
    )
    if result.solved is None:
        return result
    d = abs(est - tgt) if np.sign(est - tgt) == np.sign(est) or est == tgt else np.nan
    other = r2t if result.solved == 1 else r2y

    def exact_estimate():
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if result.solved == 1:
                root = d**2 * (1 - other) / (se**2 * dof * other)
            else:  # r2_treatment for each r2_outcome: k r/(1-r) = d²/(se² dof r2y)
                k = d**2 / (se**2 * dof * other)
                root = k / (1 + k)
        return _within(root, 0, 1 - 1e-15)

    def exact_ci():
        if result.solved == 0:
            # r2_treatment for each r2_outcome: with x = sqrt(r2_t), w = sqrt(1 - r2_t) the
            # limit reaches the target when P x + Q >= d w, increasing in the angle of (x, w).
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                P = se * np.sqrt(dof * other)
                Q = crit * se * np.sqrt(dof / (dof - 1) * (1 - other))
                angle = np.arctan2(d, P) - np.arcsin(np.clip(Q / np.hypot(P, d), -1, 1))
            root = np.where(Q >= d, 0.0, np.sin(np.clip(angle, 0, np.pi / 2)) ** 2)
            return _within(root, 0, 1 - 1e-15)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            A = se * np.sqrt(dof * other / (1 - other))
            C = crit * se * np.sqrt(dof / ((dof - 1) * (1 - other)))
            R = np.hypot(A, C)
            phi = np.arctan2(C, A)
            theta = np.arcsin(np.clip(d / R, -1, 1)) - phi
        root = np.where(
            C >= d, 0.0, np.where(R >= d, np.sin(np.clip(theta, 0, np.pi / 2)) ** 2, np.nan)
        )
        return _within(root, 0, 1 - 1e-15)

    est_root, ci_root = exact_estimate(), exact_ci()
    # bias (and the interval's reach) grow with both strengths: the crossing is a lower bound
    return replace(
        result,
        exact={
            "estimate": est_root,
            "estimate_side": np.ones(est_root.shape),
            "ci": ci_root,
            "ci_side": np.ones(ci_root.shape),
        },
    )


# --------------------------------------------------------------------------- default grids
def _nice(x: float) -> float:
    """The smallest of 1, 2, 2.5, 5 times a power of ten that is at least `x`."""
    if x <= 0 or not np.isfinite(x):
        return 1.0
    power = 10.0 ** np.floor(np.log10(x))
    for m in (1, 2, 2.5, 5, 10):
        if m * power >= x * (1 - 1e-12):
            return float(m * power)
    return float(10 * power)  # pragma: no cover


def default_ranges(
    kind: str,
    *,
    estimate: float | None = None,
    target: float | None = None,
    scale: str | None = None,
    evalue: float | None = None,
    robustness_value: float | None = None,
) -> dict:
    """Grids used when a parameter is not given, scaled to the estimate at hand.

    binary: prevalences 0 to 1 by 0.05; a ratio effect 1 to 6 by 0.25; a difference effect
    0 to about twice the distance of the estimate from the target, in 20 steps.
    bounding: both risk ratios from 1 to about 1.5 times the E-value (at least 3).
    partial-r2: both partial R² from 0 to about twice the robustness value (0.1 to 0.95).
    """
    if kind == "binary":
        if scale in RATIO_SCALES or estimate is None or target is None:
            effect = value_range(1, 6, 0.25)
        else:
            top = _nice(2 * abs(estimate - target)) if estimate != target else 1.0
            effect = value_range(0, top, top / 20)
        prev = value_range(0, 1, 0.05)
        return {"prevalence_treated": prev, "prevalence_control": prev, "outcome_effect": effect}
    if kind == "bounding":
        top = max(3.0, float(np.ceil(1.5 * (evalue or 1.0))))
        step = _nice((top - 1) / 40)
        rr = value_range(1, top, step)
        return {"rr_treatment": rr, "rr_outcome": rr}
    top = min(0.95, max(0.1, _nice(2 * (robustness_value or 0.0))))
    r2 = value_range(0, top, _nice(top / 50))
    return {"r2_treatment": r2[r2 < 1], "r2_outcome": r2[r2 < 1]}
