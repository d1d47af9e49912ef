"""E-values on every common scale: the entry point `evalue`.

Vectorised over rows: the estimate, its interval, the scale, the outcome's frequency (or
prevalence), the SD, the contrast and the target may each be one value or one per row, so
one call handles a mixed table. Only numpy is imported, so a one-number command starts fast.

The family's modules: `formulas.py` (the E-value and the bounding factor on the risk-ratio
scale), `rows.py` (the rules and the vectorised computation, and `evalue_rows` for
batches), `bounds.py` (a confounder of given strength; the joint E-value of several
biases), `risk_difference.py` (the risk difference from 2 x 2 counts).

References
----------
Ding P, VanderWeele TJ (2016). Sensitivity analysis without assumptions. Epidemiology
27:368-377 (erratum Epidemiology 29:e19, 2018).
VanderWeele TJ, Ding P (2017). Sensitivity analysis in observational research: introducing
the E-value. Annals of Internal Medicine 167:268-274.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ..common.checks import given, require_all
from ..common.errors import InputError
from ..common.levels import check_level
from ..common.scales import RARE_OUTCOME_CUTOFF
from .bounds import BIASES, SELECTION_FACTORS, combined_evalue
from .formulas import bounding_factor, evalue_of_interval, evalue_of_rr
from .result import ConfounderBound, EValueResult
from .risk_difference import evalue_of_risk_difference, evalue_rd
from .rows import (
    CHECKS,
    EVALUE_SCALES,
    FIELD_OF,
    OVERFLOW_ARGUMENTS,
    beyond_double,
    compute,
    evalue_rows,
    outcome_frequency,
    overflow_message,
    ratio_scale,
    scale_in,
    single_inputs,
)

__all__ = [
    "BIASES",
    "CHECKS",
    "EVALUE_SCALES",
    "bounding_factor",
    "compute",
    "confounder_bound",
    "evalue",
    "evalue_of_interval",
    "evalue_of_risk_difference",
    "evalue_of_rr",
    "evalue_rd",
    "evalue_rows",
    "combined_evalue",
    "SELECTION_FACTORS",
    "with_biases",
    "with_confounders",
]


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
    level = check_level(ci_level)
    if se is not None and level != 0.95:
        raise InputError(
            "`ci_level` applies to a `ci` you give; the interval from `se` is the 95% one "
            "(exp(0.91 d -/+ 1.78 se))",
            ("ci_level", "ci", "se"),
        )
    values = single_inputs(scale, estimate, ci, se, sd, contrast, outcome, prevalence, target)
    require_all(values, CHECKS, called={"lower": "ci", "upper": "ci"})
    freq = outcome_frequency(values)
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
    beyond = np.broadcast_to(beyond_double(values, out), np.shape(out["evalue"]))
    if np.any(beyond != ""):
        i = np.flatnonzero(beyond != "")[0]
        name = str(beyond.flat[i])
        field_of = FIELD_OF[name]
        value = np.broadcast_to(values[field_of], beyond.shape).flat[i]
        code = np.broadcast_to(values["scale"], beyond.shape).flat[i]
        raise InputError(
            overflow_message(name, value, str(code)), OVERFLOW_ARGUMENTS.get(name, name)
        )
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
    ignored = given(values["outcome"]) & ~scale_in(scale, "or", "hr")
    if np.any(ignored) and scale.ndim == 0:
        notes.append(f"The outcome's frequency does not enter the {scale} scale; ignored.")
    no_ci = ~given(values["se"]) & ~given(values["lower"])
    if np.any(no_ci & ~ratio_scale(scale)):
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


def confounder_bound(
    result: EValueResult, rr_treatment: object, rr_outcome: object
) -> ConfounderBound:
    """The most a confounder with these two risk ratios could move the estimate (the same
    as ``result.confounder(rr_treatment, rr_outcome)``; see `EValueResult.confounder`)."""
    return result.confounder(rr_treatment, rr_outcome)


def with_confounders(
    result: EValueResult, rr_treatment: object, rr_outcome: object
) -> EValueResult:
    """`result` with `confounder_bound` attached (``result.with_confounders(...)``)."""
    return result.with_confounders(rr_treatment, rr_outcome)


def with_biases(
    result: EValueResult, *, selection: str | None = None, misclassification: bool = False
) -> EValueResult:
    """`result` with the joint E-value attached (``result.with_biases(...)``)."""
    return result.with_biases(selection=selection, misclassification=misclassification)
