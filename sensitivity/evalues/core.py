"""E-values and the bounding factor, on the risk-ratio scale and on every common scale.

Vectorised over rows: the estimate, its interval, the scale, the outcome's frequency (or
prevalence), the SD, the contrast and the target may each be one value or one per row, so
one call handles a mixed table. Only numpy is imported, so a one-number command starts fast.

References
----------
Ding P, VanderWeele TJ (2016). Sensitivity analysis without assumptions. Epidemiology
27:368-377 (erratum Epidemiology 29:e19, 2018).
VanderWeele TJ, Ding P (2017). Sensitivity analysis in observational research: introducing
the E-value. Annals of Internal Medicine 167:268-274.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import (
    AT_LEAST_ONE,
    FINITE,
    OPEN_UNIT,
    POSITIVE,
    PROBABILITY,
    Check,
    as_array,
    field,
    flags,
    given,
    inside_interval,
    interval_order,
    require,
    require_all,
    show,
)
from ..common.errors import InputError
from ..common.scales import (
    OUTCOME_FREQUENCIES,
    RARE_OUTCOME_CUTOFF,
    SMD_INTERVAL,
    SMD_SLOPE,
    as_text,
    frequency_of_prevalence,
    from_risk_ratio,
    is_ratio,
    null_of,
    to_risk_ratio,
)
from .result import ConfounderBound, EValueResult

#: Scales `evalue` takes (rd needs the 2 x 2 counts and has its own route).
EVALUE_SCALES = ("rr", "or", "hr", "smd", "md")


# --------------------------------------------------------------------------- formulas
def evalue_of_rr(rr: object) -> np.ndarray:
    """E-value of a risk ratio: the strength both confounder associations need to explain it.

    Parameters
    ----------
    rr : array_like
        Risk ratio(s), positive. A ratio below 1 is inverted first.

    Returns
    -------
    ndarray
        ``E = RR + sqrt(RR (RR - 1))`` with ``RR = max(rr, 1/rr)``.

    Notes
    -----
    E solves ``B(E, E) = RR`` for the bounding factor ``B`` (see `bounding_factor`).

    References
    ----------
    VanderWeele & Ding (2017), Ann Intern Med 167:268, formula in the section "The E-value".

    Examples
    --------
    The published worked example, RR 3.9 (VanderWeele & Ding 2017):

    >>> round(float(evalue_of_rr(3.9)), 2)
    7.26
    """
    rr = np.asarray(rr, dtype=float)
    with np.errstate(divide="ignore", over="ignore"):
        r = np.where(rr < 1, 1 / rr, rr)
    return r + np.sqrt(r) * np.sqrt(r - 1)  # not sqrt(r (r - 1)): no overflow below 1e308


def evalue_of_interval(lower: object, upper: object, target: object = 1.0) -> np.ndarray:
    """E-value of a confidence interval: of the limit nearest `target`, 1 if it covers it.

    Examples
    --------
    >>> float(evalue_of_interval(1.8, 8.7))  # VanderWeele & Ding (2017)
    3.0
    >>> float(evalue_of_interval(0.8, 1.3))
    1.0
    """
    lower, upper, target = np.broadcast_arrays(
        *(np.asarray(a, float) for a in (lower, upper, target))
    )
    nearest = np.where(lower > target, lower, np.where(upper < target, upper, target))
    return evalue_of_rr(nearest / target)


def bounding_factor(rr_treatment: object, rr_outcome: object) -> np.ndarray:
    """Joint bounding factor of a confounder with the given two risk ratios.

    Parameters
    ----------
    rr_treatment : array_like
        Largest risk ratio relating the treatment to the confounder (>= 1).
    rr_outcome : array_like
        Largest risk ratio relating the confounder to the outcome, within treatment arms (>= 1).

    Returns
    -------
    ndarray
        ``B = RR_TU RR_UY / (RR_TU + RR_UY - 1)``; the true risk ratio is at least
        ``RR_obs / B`` when ``RR_obs > 1``.

    Notes
    -----
    Written as ``a / (1 + (a - 1) / b)`` so that very strong confounders (1e300) do not
    overflow the product.

    References
    ----------
    Ding & VanderWeele (2016), Epidemiology 27:368, the bounding factor (their BF_U).

    Examples
    --------
    >>> round(float(bounding_factor(7.26, 7.26)), 2)  # B(E, E) = RR
    3.9
    """
    a = np.asarray(rr_treatment, dtype=float)
    b = np.asarray(rr_outcome, dtype=float)
    return a / (1 + (a - 1) / b)


# --------------------------------------------------------------------------- the rules
def _ratio(scale: np.ndarray) -> np.ndarray:
    return is_ratio(scale)


def _scale_flags(scale: np.ndarray) -> Check:
    return Check(
        ("scale",),
        lambda s: ~np.isin(as_text(s), EVALUE_SCALES),
        lambda s: f"`scale` must be one of {', '.join(EVALUE_SCALES)}; got {str(s)!r}",
    )


def _needs(s: np.ndarray, *codes: str) -> np.ndarray:
    return np.isin(as_text(s), codes)


#: The rules of one E-value input, in the order a user meets them. Every row is checked
#: against all of them (a batch flags the first one a row breaks; one result raises it).
CHECKS: tuple[Check, ...] = (
    _scale_flags(np.empty(0)),
    field("estimate", FINITE),
    field("estimate", POSITIVE, _ratio, ("scale",)),
    Check(
        ("prevalence", "outcome"),
        lambda p, o: given(p) & given(o),
        lambda p, o: "give `outcome` or `prevalence`, not both",
    ),
    field("prevalence", PROBABILITY, given, ("prevalence",)),
    Check(
        ("outcome",),
        lambda o: given(o) & ~np.isin(as_text(o), OUTCOME_FREQUENCIES),
        lambda o: f"`outcome` must be one of {', '.join(OUTCOME_FREQUENCIES)}; got {str(o)!r}",
    ),
    Check(
        ("scale", "outcome", "prevalence"),
        lambda s, o, p: _needs(s, "or", "hr") & ~given(o) & ~given(p),
        lambda s, o, p: (
            f"`outcome` frequency is needed on the {s} scale: say rare or common, or give "
            "the outcome's `prevalence`"
        ),
    ),
    Check(
        ("scale", "se"),
        lambda s, se: _ratio(s) & given(se),
        lambda s, se: f"`se` applies to scales smd and md only; got {s}",
    ),
    Check(
        ("scale", "sd"),
        lambda s, sd: ~_needs(s, "md") & given(sd),
        lambda s, sd: f"`sd` applies to scale md only; got {s}",
    ),
    Check(
        ("scale", "contrast"),
        lambda s, c: ~_needs(s, "md") & (c != 1),
        lambda s, c: f"`contrast` applies to scale md only; got {s}",
    ),
    Check(
        ("scale", "sd"),
        lambda s, sd: _needs(s, "md") & ~given(sd),
        lambda s, sd: "`sd` is required for scale md: the outcome's standard deviation",
    ),
    field("sd", POSITIVE, given, ("sd",)),
    field("contrast", FINITE),
    field("contrast", POSITIVE),
    Check(
        ("scale", "se", "lower"),
        lambda s, se, lo: given(se) & given(lo),
        lambda s, se, lo: f"give `se` or `ci` for scale {s}, not both",
    ),
    field("se", POSITIVE, given, ("se",)),
    Check(
        ("lower", "upper"),
        lambda lo, up: given(lo) != given(up),
        lambda lo, up: "`ci` needs both limits, lower and upper",
    ),
    field("lower", POSITIVE, lambda s, lo: _ratio(s) & given(lo), ("scale", "lower")),
    field("upper", POSITIVE, lambda s, up: _ratio(s) & given(up), ("scale", "upper")),
    interval_order(),
    inside_interval(),
    field("target", FINITE),
    field("target", POSITIVE, _ratio, ("scale",)),
)


def _rename_ci(message: str) -> str:
    """Single results speak of the interval as `ci`, whichever limit broke the rule."""
    return message.replace("`lower`", "`ci`").replace("`upper`", "`ci`")


# --------------------------------------------------------------------------- computation
def compute(
    scale: np.ndarray,
    estimate: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    se: np.ndarray,
    sd: np.ndarray,
    contrast: np.ndarray,
    outcome: np.ndarray,
    target: np.ndarray,
) -> dict[str, np.ndarray]:
    """E-values from checked per-row arrays (NaN where a row has no interval or se).

    Returns the risk-ratio-scale estimate, interval and target, and both E-values
    (NaN for the interval when a row has neither `ci` nor `se`).
    """
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        # one pass over the routes for all four (each row's map decided once)
        stacked = np.stack(np.broadcast_arrays(estimate, target, lower, upper))
        rr, rr_target, rr_lower, rr_upper = to_risk_ratio(
            scale, stacked, outcome=outcome, sd=sd, contrast=contrast
        )
        # An interval from `se` (smd, md): exp(0.91 d -/+ 1.78 se_d) (VanderWeele & Ding 2017).
        from_se = given(se) & ~given(lower)
        if np.any(from_se):
            per = np.where(_needs(scale, "md"), contrast / sd, 1.0)
            se_d = se * per
            d = np.log(rr) / SMD_SLOPE
            rr_lower = np.where(from_se, np.exp(SMD_SLOPE * d - SMD_INTERVAL * se_d), rr_lower)
            rr_upper = np.where(from_se, np.exp(SMD_SLOPE * d + SMD_INTERVAL * se_d), rr_upper)
        e = evalue_of_rr(rr / rr_target)
        e_ci = np.where(given(rr_lower), evalue_of_interval(rr_lower, rr_upper, rr_target), np.nan)
    return {
        "rr": rr,
        "rr_lower": rr_lower,
        "rr_upper": rr_upper,
        "rr_target": rr_target,
        "evalue": e,
        "evalue_ci": e_ci,
    }


def _beyond_double(values: dict[str, np.ndarray], out: dict[str, np.ndarray]) -> np.ndarray:
    """Per row, which input leaves double precision on the risk-ratio scale ("" if none).

    An SMD of 800 maps to exp(0.91 * 800), beyond 1e308; a risk ratio of 1e-320 is below the
    smallest double. Such rows are refused rather than given an infinite E-value.
    """
    est_bad = ~np.isfinite(out["evalue"]) | ~np.isfinite(out["rr"]) | ~(out["rr"] > 0)
    ci_bad = given(values["lower"]) & ~np.isfinite(out["evalue_ci"])
    target_bad = ~np.isfinite(out["rr_target"]) | ~(out["rr_target"] > 0)
    return np.select([est_bad, ci_bad, target_bad], ["estimate", "ci", "target"], "").astype(object)


def _overflow_message(name: str, value: float, scale: str) -> str:
    return (
        f"`{name}` {show(value)} on the {scale} scale maps to a risk ratio beyond double "
        "precision (about 1e-308 to 1e308), so its E-value cannot be computed"
    )


def _numeric(value: object, name: str, shape: tuple[int, ...] | None = None) -> np.ndarray:
    """A float array for an optional numeric input (NaN where not given)."""
    if value is None:
        return np.asarray(np.nan)
    return as_array(value, name)


def _text(value: object) -> np.ndarray:
    return as_text(value)


def _inputs(
    scale: object,
    estimate: object,
    ci: tuple[object, object] | None,
    se: object,
    sd: object,
    contrast: object,
    outcome: object,
    prevalence: object,
    target: object,
) -> dict[str, np.ndarray]:
    if ci is not None:
        if len(ci) != 2:
            raise InputError(f"`ci` must be a pair (lower, upper); got {len(ci)} values")
        lower, upper = as_array(ci[0], "ci"), as_array(ci[1], "ci")
    else:
        lower = upper = np.asarray(np.nan)
    scale_arr = _text(scale)
    values = {
        "scale": scale_arr,
        "estimate": as_array(estimate, "estimate"),
        "lower": lower,
        "upper": upper,
        "se": _numeric(se, "se"),
        "sd": _numeric(sd, "sd"),
        "contrast": as_array(1.0 if contrast is None else contrast, "contrast"),
        "outcome": _text(outcome),
        "prevalence": _numeric(prevalence, "prevalence"),
    }
    values["target"] = (
        null_of(scale_arr) * np.ones(np.shape(values["estimate"]))
        if target is None
        else as_array(target, "target")
    )
    return values


def _frequency(values: dict[str, np.ndarray]) -> np.ndarray:
    """Per row: the outcome frequency given, or decided from the prevalence (15% rule)."""
    o, p = as_text(values["outcome"]), values["prevalence"]
    from_p = given(p)
    decided = o
    if from_p.any():
        chosen = frequency_of_prevalence(np.where(from_p, p, 0.0)).astype(str)
        decided = np.where(from_p, chosen, o)
    # The frequency matters only for or and hr; elsewhere it is dropped (with a note).
    return np.where(_needs(values["scale"], "or", "hr"), decided, "")


# --------------------------------------------------------------------------- entry points
def evalue(
    scale: str | Sequence[str] | np.ndarray,
    estimate: object,
    ci: tuple[object, object] | None = None,
    *,
    se: object = None,
    sd: object = None,
    contrast: object = 1.0,
    outcome: object = None,
    prevalence: object = None,
    target: object = None,
    ci_level: float = 0.95,
) -> EValueResult:
    """E-values of an adjusted estimate and its confidence interval, on any common scale.

    Parameters
    ----------
    scale : {'rr', 'or', 'hr', 'smd', 'md'} or array of them
        Risk ratio, odds ratio, hazard ratio, standardized mean difference, or mean
        difference / linear-regression coefficient (needs `sd`); one per row for a mixed table.
    estimate : array_like
        The adjusted estimate(s) on `scale`.
    ci : (lower, upper), optional
        Confidence limits on `scale`. For ``smd``/``md`` give `ci` or `se`, not both.
    se : array_like, optional
        Standard error on `scale` (``smd``/``md``); the interval is then
        ``exp(0.91 d -/+ 1.78 se_d)`` on the risk-ratio scale.
    sd : array_like, optional
        The outcome's standard deviation (``md`` only).
    contrast : array_like, default 1
        For ``md`` with a continuous treatment: the treatment difference of interest, in the
        treatment's units (the coefficient is per one unit; 10 means "per 10 units").
    outcome : {'rare', 'common'} or array of them, optional
        The outcome's frequency at the end of follow-up; required for ``or`` and ``hr``.
    prevalence : array_like, optional
        The outcome's prevalence, instead of `outcome`: below 0.15 counts as rare.
    target : array_like, optional
        True value to test against, on `scale` (default: the null, 1 or 0).
    ci_level : float, default 0.95
        The confidence level of `ci` (or of the interval made from `se`), as the sentences
        name it. With `se` the interval is the 95% one of VanderWeele & Ding (2017) whatever
        this says; give `ci` for another level.

    Returns
    -------
    EValueResult

    Raises
    ------
    InputError
        For the first input that breaks a rule, naming the argument and the rule.

    Notes
    -----
    The estimate is mapped to the risk-ratio scale (see `to_risk_ratio`), divided by the
    mapped target, and ``E = RR + sqrt(RR (RR - 1))`` is applied (inverting ratios below 1).
    The interval's E-value uses the limit nearest the target and is 1 when the interval
    includes it.

    References
    ----------
    VanderWeele & Ding (2017), Ann Intern Med 167:268-274; VanderWeele (2017), Epidemiology
    28:e58; VanderWeele (2020), Biometrics 76:746.

    Examples
    --------
    The worked example of VanderWeele & Ding (2017): RR 3.9, 95% CI 1.8 to 8.7.

    >>> res = evalue("rr", 3.9, ci=(1.8, 8.7))
    >>> round(float(res.evalue), 2), round(float(res.evalue_ci), 2)
    (7.26, 3.0)
    """
    level = float(require(ci_level, "ci_level", OPEN_UNIT))
    if se is not None and level != 0.95:
        raise InputError(
            "`ci_level` applies to a `ci` you give; the interval from `se` is the 95% one "
            "(exp(0.91 d -/+ 1.78 se))"
        )
    values = _inputs(scale, estimate, ci, se, sd, contrast, outcome, prevalence, target)
    try:
        require_all(values, CHECKS)
    except InputError as err:
        raise InputError(_rename_ci(str(err))) from None
    freq = _frequency(values)
    out = compute(
        values["scale"],
        values["estimate"],
        values["lower"],
        values["upper"],
        values["se"],
        values["sd"],
        values["contrast"],
        freq,
        values["target"],
    )
    beyond = np.broadcast_to(_beyond_double(values, out), np.shape(out["evalue"]))
    if np.any(beyond != ""):
        i = np.flatnonzero(beyond != "")[0]
        name = str(beyond.flat[i])
        field_of = {"estimate": "estimate", "ci": "lower", "target": "target"}[name]
        value = np.broadcast_to(values[field_of], beyond.shape).flat[i]
        code = np.broadcast_to(values["scale"], beyond.shape).flat[i]
        raise InputError(_overflow_message(name, value, str(code)))
    notes = _notes(values, freq, out, target is None)
    scalar_scale = values["scale"].ndim == 0
    return EValueResult(
        scale=str(values["scale"]) if scalar_scale else values["scale"],
        estimate=values["estimate"],
        ci=None if ci is None else _limits(values["lower"], values["upper"]),
        se=None if se is None else values["se"],
        sd=None if sd is None else values["sd"],
        contrast=values["contrast"],
        outcome=_outcome_value(freq),
        target_value=values["target"],
        rr=out["rr"],
        rr_ci=None
        if np.all(np.isnan(out["rr_lower"]))
        else _limits(out["rr_lower"], out["rr_upper"]),
        rr_target=out["rr_target"],
        evalue=out["evalue"],
        evalue_ci=None if np.all(np.isnan(out["evalue_ci"])) else out["evalue_ci"],
        notes=tuple(notes),
        ci_level=level,
    )


def _limits(lower: np.ndarray, upper: np.ndarray) -> tuple:
    """An interval's limits: plain floats for one result (so `result.ci` reads (1.8, 8.7) in a
    notebook), arrays for many."""
    if np.ndim(lower) == 0 and np.ndim(upper) == 0:
        return float(lower), float(upper)
    return lower, upper


def _outcome_value(freq: np.ndarray) -> str | np.ndarray | None:
    if freq.ndim == 0:
        return str(freq) or None
    if np.all(freq == freq.flat[0]):
        return str(freq.flat[0]) or None
    return freq


def _notes(
    values: dict[str, np.ndarray], freq: np.ndarray, out: dict[str, np.ndarray], null_target: bool
) -> list[str]:
    """Conversions applied and degenerate input, in words (single results)."""
    notes: list[str] = []
    p = values["prevalence"]
    scale = values["scale"]
    if np.any(given(p)) and p.ndim == 0:
        f = str(freq) if freq.ndim == 0 else str(freq.flat[0])
        if f:
            side = "below" if f == "rare" else "at or above"
            notes.append(
                f"Outcome prevalence {float(p):.3g} is {side} {RARE_OUTCOME_CUTOFF:.0%}: "
                f"treated as {f} (common practice)."
            )
    elif np.any(given(p)):
        notes.append(
            f"Outcome prevalences decide rare (below {RARE_OUTCOME_CUTOFF:.0%}) or common per "
            "row (common practice)."
        )
    ignored = given(values["outcome"]) & ~_needs(scale, "or", "hr")
    if np.any(ignored) and scale.ndim == 0:
        notes.append(f"The outcome's frequency does not enter the {scale} scale; ignored.")
    no_ci = ~given(values["se"]) & ~given(values["lower"])
    if np.any(no_ci & ~_ratio(scale)):
        notes.append(
            "No standard error or interval given: only the estimate's E-value is computed."
        )
    covers = (out["rr_lower"] <= out["rr_target"]) & (out["rr_upper"] >= out["rr_target"])
    if np.any(covers):
        where = "The" if values["estimate"].ndim == 0 else "For some rows the"
        goal = "null" if null_target else "target"
        notes.append(
            f"{where} confidence interval includes the {goal}: its E-value is 1 "
            "(no confounding is needed to reach it)."
        )
    if np.any(values["estimate"] == values["target"]):
        notes.append("The estimate equals the target: its E-value is 1.")
    return notes


def evalue_rows(columns: Mapping[str, object], n: int) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """E-values for a batch of `n` rows: computed columns and a reason per bad row.

    `columns` holds per-row arrays under the names of `evalue`'s arguments (``lower`` and
    ``upper`` for the interval); absent numbers are NaN, absent text is "". Bad rows get a
    reason (the first rule they break) and NaN results; the rest are computed in one pass.
    """
    values = {
        "scale": _text(columns.get("scale")),
        "estimate": np.asarray(columns.get("estimate", np.nan), float),
        "lower": np.asarray(columns.get("lower", np.nan), float),
        "upper": np.asarray(columns.get("upper", np.nan), float),
        "se": np.asarray(columns.get("se", np.nan), float),
        "sd": np.asarray(columns.get("sd", np.nan), float),
        "contrast": np.asarray(columns.get("contrast", 1.0), float),
        "outcome": _text(columns.get("outcome")),
        "prevalence": np.asarray(columns.get("prevalence", np.nan), float),
    }
    target = columns.get("target")
    values["target"] = null_of(values["scale"]) if target is None else np.asarray(target, float)
    values = {k: np.broadcast_to(v, (n,)) for k, v in values.items()}
    reasons = flags(values, CHECKS, n)
    good = reasons == ""
    freq = _frequency(values)
    safe = {k: np.where(good, v, np.asarray(_SAFE.get(k, v))) for k, v in values.items()}
    out = compute(
        safe["scale"],
        safe["estimate"],
        safe["lower"],
        safe["upper"],
        safe["se"],
        safe["sd"],
        safe["contrast"],
        np.where(good, freq, "rare"),
        safe["target"],
    )
    beyond = np.where(good, _beyond_double(safe, out), "")
    for i in np.flatnonzero(beyond != ""):
        field_of = {"estimate": "estimate", "ci": "lower", "target": "target"}[beyond[i]]
        reasons[i] = _overflow_message(beyond[i], values[field_of][i], values["scale"][i])
    good = reasons == ""
    out = {k: np.where(good, v, np.nan) for k, v in out.items()}
    out["outcome"] = np.where(good, freq, "")
    return out, reasons


# Placeholders computed (and then blanked) for bad rows, so no numpy warning is raised.
_SAFE: dict[str, object] = {
    "scale": "rr",
    "estimate": 1.0,
    "lower": np.nan,
    "upper": np.nan,
    "se": np.nan,
    "sd": 1.0,
    "contrast": 1.0,
    "target": 1.0,
}


# --------------------------------------------------------------------------- confounders
def confounder_bound(
    result: EValueResult, rr_treatment: object, rr_outcome: object
) -> ConfounderBound:
    """The most a confounder with these two risk ratios could move the estimate.

    Under the bounding factor B (Ding & VanderWeele 2016) the whole result, estimate and
    both interval limits, moves by the same factor toward the target on the risk-ratio
    scale: divided by B when the estimate lies above the target, multiplied when below. The
    interval includes the target once the moved limit nearest it reaches it.
    """
    rr_t = require(rr_treatment, "rr_treatment", AT_LEAST_ONE)
    rr_y = require(rr_outcome, "rr_outcome", AT_LEAST_ONE)
    b = bounding_factor(rr_t, rr_y)
    t = result.rr_target
    above = result.rr >= t

    def toward_target(value: np.ndarray) -> np.ndarray:
        return np.where(above, value / b, value * b)

    back = {"outcome": result.outcome, "sd": result.sd, "contrast": result.contrast}
    rr = toward_target(result.rr)
    reach_est = np.where(above, rr <= t, rr >= t) | (result.rr == t)
    rr_lim = lim = reach_ci = None
    if result.rr_ci is not None:
        lo, up = result.rr_ci
        nearest = np.where(above, lo, up)
        rr_lim = toward_target(nearest)
        reach_ci = np.where(above, rr_lim <= t, rr_lim >= t)
        lim = from_risk_ratio(result.scale, rr_lim, **back)
    return ConfounderBound(
        source=result,
        rr_treatment=rr_t,
        rr_outcome=rr_y,
        bounding_factor=b,
        rr=rr,
        rr_ci_limit=rr_lim,
        estimate=from_risk_ratio(result.scale, rr, **back),
        ci_limit=lim,
        explains_estimate=reach_est,
        explains_ci=reach_ci,
    )


def with_confounders(
    result: EValueResult, rr_treatment: object, rr_outcome: object
) -> EValueResult:
    """`result` with `confounder_bound` attached (exported and summarised with it)."""
    if not result.is_scalar:
        raise InputError("attach confounders to a single result; use `confounder` for arrays")
    rr_t = np.atleast_1d(as_array(rr_treatment, "rr_treatment"))
    rr_y = np.atleast_1d(as_array(rr_outcome, "rr_outcome"))
    return replace(result, confounders=confounder_bound(result, rr_t, rr_y))


# --------------------------------------------------------------------------- risk differences
def _rd_bound(b: np.ndarray, p1: np.ndarray, p0: np.ndarray, f: np.ndarray) -> np.ndarray:
    """The least causal risk difference a confounder with bounding factor b allows."""
    return (p1 - p0 * b) * f + (p1 / b - p0) * (1 - f)


def evalue_of_risk_difference(
    cases_treated: ArrayLike,
    total_treated: ArrayLike,
    cases_control: ArrayLike,
    total_control: ArrayLike,
    *,
    alpha: float = 0.05,
) -> dict[str, np.ndarray]:
    """E-values of a risk difference from the 2 x 2 counts, for the whole population.

    Parameters
    ----------
    cases_treated, total_treated, cases_control, total_control : array_like
        Events and totals among the treated and the controls (per row).
    alpha : float, default 0.05
        The interval's E-value uses the lower (1 - alpha/2) confidence limit of the bound.

    Returns
    -------
    dict of ndarray
        ``rd`` (p1 - p0), ``bounding_factor`` (B*, the least bounding factor that brings the
        bound to 0), ``evalue``, ``bounding_factor_ci`` and ``evalue_ci``.

    Notes
    -----
    With p1, p0 the observed risks and f the share treated, a confounder with bounding factor
    B leaves RD_true >= (p1 - p0 B) f + (p1 / B - p0)(1 - f). Setting it to 0 gives
    f p0 B² - (f p1 - (1 - f) p0) B - (1 - f) p1 = 0, so B* = (b + sqrt(b² + 4 f (1 - f) p0 p1))
    / (2 f p0) with b = f p1 - (1 - f) p0, and E = B* + sqrt(B* (B* - 1)). For the interval,
    B_CI in [1, B*] solves LCL(B) = 0, where LCL is the bound minus z_(1 - alpha/2) times its
    delta-method standard error sqrt((f + (1 - f)/B)² p1 (1 - p1)/N1 + (f B + 1 - f)² p0
    (1 - p0)/N0), treating f as fixed; E_CI = 1 when LCL(1) <= 0 (the construction of the
    project's methods notes, section 4.1; a risk difference at or below 0 is mirrored by
    swapping the groups).

    References
    ----------
    Ding & VanderWeele (2016), Epidemiology 27:368, the risk-difference section; VanderWeele
    & Ding (2017), Ann Intern Med 167:268, eAppendix.

    Examples
    --------
    60/1000 treated cases against 40/1000 controls: the bound reaches 0 at B* = 1.5
    (0.02 B² - 0.01 B - 0.03 = 0).

    >>> out = evalue_of_risk_difference(60, 1000, 40, 1000)
    >>> round(float(out["rd"]), 3), round(float(out["bounding_factor"]), 6)
    (0.02, 1.5)
    """
    from scipy.special import ndtri

    a, n1, c, n0 = (np.asarray(v, float) for v in (cases_treated, total_treated, cases_control,
                                                  total_control))  # fmt: skip
    p1, p0 = a / n1, c / n0
    flip = p1 < p0  # a protective difference: the same construction with the groups swapped
    p1, p0 = np.where(flip, p0, p1), np.where(flip, p1, p0)
    n1, n0 = np.where(flip, n0, n1), np.where(flip, n1, n0)
    f = n1 / (n1 + n0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        b = f * p1 - (1 - f) * p0
        root = (b + np.sqrt(b**2 + 4 * f * (1 - f) * p0 * p1)) / (2 * f * p0)
        root = np.where(p0 > 0, root, np.inf)
        root = np.where(p1 == p0, 1.0, np.maximum(root, 1.0))
        z = float(ndtri(1 - alpha / 2))

        def lower(bf: np.ndarray) -> np.ndarray:
            var = (f + (1 - f) / bf) ** 2 * p1 * (1 - p1) / n1 + (f * bf + 1 - f) ** 2 * p0 * (
                1 - p0
            ) / n0
            return _rd_bound(bf, p1, p0, f) - z * np.sqrt(var)

        covered = lower(np.ones_like(p1)) <= 0
        lo, hi = np.ones_like(p1), np.where(np.isfinite(root), root, 1e300)
        for _ in range(200):  # LCL(B) falls as B grows: bisect for its zero
            mid = np.where(hi / lo > 1e6, np.sqrt(lo * hi), (lo + hi) / 2)
            above = lower(mid) > 0
            lo, hi = np.where(above, mid, lo), np.where(above, hi, mid)
        b_ci = np.where(covered, 1.0, (lo + hi) / 2)
    rd = np.where(flip, p0 - p1, p1 - p0)
    return {
        "rd": rd,
        "bounding_factor": root,
        "evalue": evalue_of_rr(root),
        "bounding_factor_ci": b_ci,
        "evalue_ci": evalue_of_rr(b_ci),
    }


# --------------------------------------------------------------------------- several biases
#: The biases a joint E-value can include, with the assumption each one brings.
BIASES = {
    "confounding": (
        "unmeasured confounding: the confounder's risk ratios with the treatment and the "
        "outcome, within the selected population (Ding & VanderWeele 2016)"
    ),
    "selection": (
        "selection bias: the risk ratios relating a selection factor to the outcome and to "
        "selection, in each treatment group (Smith & VanderWeele 2019); 'general' targets the "
        "whole population (two factors), 'one-factor' the case of increased risk in the "
        "selected (one)"
    ),
    "misclassification": (
        "differential outcome misclassification: the largest ratio of sensitivities or "
        "false-positive probabilities across treatment groups (VanderWeele & Li 2019)"
    ),
}


def multi_bias_evalue(
    rr: ArrayLike,
    *,
    confounding: bool = True,
    selection: str | None = None,
    misclassification: bool = False,
) -> np.ndarray:
    """The joint E-value: the common strength x of every bias parameter that could explain
    the risk ratio away, the root of (x² / (2x - 1))^(k_c + k_s) x^(k_m) = RR.

    k_c = 1 with confounding, k_s = 2 for general selection bias (1 for one factor), k_m = 1
    with differential outcome misclassification (Smith, Mathur & VanderWeele 2021). With
    confounding alone it is the ordinary E-value; with general selection alone it is
    sqrt(RR) + sqrt(RR - sqrt(RR)).

    Examples
    --------
    >>> round(float(multi_bias_evalue(3.9, confounding=False, selection="general")), 6)
    3.362342
    """
    r = np.asarray(rr, float)
    r = np.where(r < 1, 1 / r, r)
    k_s = {None: 0, "general": 2, "one-factor": 1}.get(selection)
    if k_s is None:
        raise InputError(f"`selection` must be general or one-factor; got {selection!r}")
    k = (1 if confounding else 0) + k_s
    m = 1 if misclassification else 0
    if k + m == 0:
        raise InputError("include at least one bias (confounding, selection, misclassification)")

    def log_bound(x: np.ndarray) -> np.ndarray:
        return k * (2 * np.log(x) - np.log(2 * x - 1)) + m * np.log(x)

    target = np.log(r)
    lo = np.ones_like(r)
    hi = np.maximum(2 * r + 2, 2.0)
    for _ in range(200):  # the bound rises with x from 1 at x = 1: bisect
        mid = (lo + hi) / 2
        below = log_bound(mid) < target
        lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
    return (lo + hi) / 2


def with_biases(
    result: EValueResult, *, selection: str | None = None, misclassification: bool = False
) -> EValueResult:
    """`result` with the joint E-value of confounding and the other biases named attached:
    for the estimate and for the interval limit nearest the target."""
    if not result.is_scalar:
        raise InputError("the joint E-value describes one result; index the inputs first")
    ratio = float(result.rr / result.rr_target)
    joint = float(multi_bias_evalue(ratio, selection=selection,
                                    misclassification=misclassification))  # fmt: skip
    joint_ci = None
    if result.rr_ci is not None:
        lo, up = (float(v) / float(result.rr_target) for v in result.rr_ci)
        near = lo if ratio >= 1 else up
        covers = lo <= 1 <= up
        joint_ci = (
            1.0
            if covers
            else float(
                multi_bias_evalue(near, selection=selection, misclassification=misclassification)
            )
        )
    included = ["confounding"] + (["selection"] if selection else [])
    included += ["misclassification"] if misclassification else []
    info = {
        "biases": included,
        "selection": selection,
        "evalue": joint,
        "evalue_ci": joint_ci,
        "assumptions": [BIASES[b] for b in included],
    }
    return replace(result, multi_bias=info)


def evalue_rd(counts: tuple[int, int, int, int], *, ci_level: float = 0.95) -> Any:
    """The E-value of a risk difference from (cases treated, total treated, cases control,
    total control), with its Wald interval, as one result."""
    from scipy.special import ndtri

    from .result import RiskDifferenceResult

    if len(counts) != 4:
        raise InputError(f"`counts` must be four numbers; got {len(counts)}")
    a, n1, c, n0 = (float(require(v, "counts")) for v in counts)
    for value in (a, n1, c, n0):
        if value < 0 or value != round(value):
            raise InputError(f"`counts` must be whole numbers, 0 or more; got {value:g}")
    if n1 <= 0 or n0 <= 0 or a > n1 or c > n0:
        raise InputError(
            "`counts`: cases must not exceed totals, and totals must be positive; got "
            f"{a:g} of {n1:g} and {c:g} of {n0:g}"
        )
    level = float(require(ci_level, "ci_level", OPEN_UNIT))
    out = evalue_of_risk_difference(a, n1, c, n0, alpha=1 - level)
    p1, p0 = a / n1, c / n0
    half = float(ndtri(1 - (1 - level) / 2)) * np.sqrt(p1 * (1 - p1) / n1 + p0 * (1 - p0) / n0)
    notes = (
        "E-value of the risk difference in the whole population from the 2 x 2 counts: B* "
        "brings the bound (p1 - p0 B) f + (p1/B - p0)(1 - f) to 0, E = B* + sqrt(B* (B* - 1)) "
        "(Ding & VanderWeele 2016); the interval's from the bound's lower confidence limit "
        "(delta method, the share treated fixed).",
    )
    return RiskDifferenceResult(
        counts=(int(a), int(n1), int(c), int(n0)), estimate=p1 - p0,
        ci=(p1 - p0 - half, p1 - p0 + half), ci_level=level,
        bounding_factor=float(out["bounding_factor"]),
        bounding_factor_ci=float(out["bounding_factor_ci"]), evalue=float(out["evalue"]),
        evalue_ci=float(out["evalue_ci"]), notes=notes,
    )  # fmt: skip
