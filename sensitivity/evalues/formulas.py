"""The E-value formulas on the risk-ratio scale: the E-value of a ratio, of an interval, and
the bounding factor of two risk ratios (numpy only).

References
----------
Ding P, VanderWeele TJ (2016). Sensitivity analysis without assumptions. Epidemiology
27:368-377 (erratum Epidemiology 29:e19, 2018).
VanderWeele TJ, Ding P (2017). Sensitivity analysis in observational research: introducing
the E-value. Annals of Internal Medicine 167:268-274.
"""

from __future__ import annotations

import numpy as np

from ..common.checks import require_numbers, show
from ..common.errors import InputError


def evalue_of_rr(rr: object) -> np.ndarray:
    """E-value of a risk ratio: the strength both confounder associations need to explain it.

    Parameters
    ----------
    rr : array_like
        Risk ratio(s), positive. A ratio below 1 is inverted first. NaN marks a missing entry
        (a batch's row) and gives NaN; anything else not positive raises InputError.

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
    rr = require_numbers(rr, "rr")
    bad = rr <= 0  # NaN (a missing value in a batch) passes through as NaN
    if np.any(bad):
        raise InputError(f"`rr` must be positive; got {show(rr[bad].flat[0])}", "rr")
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        # r + sqrt(r) sqrt(r - 1), not sqrt(r (r - 1)): no overflow below 1e308; computed in
        # place, the same operations in the same order (a million rows in half the time)
        r = rr.copy()
        np.divide(1.0, rr, out=r, where=rr < 1)
        e = np.subtract(r, 1.0, out=np.empty_like(r))
        np.sqrt(e, out=e)
        np.multiply(np.sqrt(r), e, out=e)
        np.add(r, e, out=e)
        return e if e.ndim else e[()]


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
        *(
            require_numbers(a, n)
            for a, n in ((lower, "lower"), (upper, "upper"), (target, "target"))
        )
    )
    for name, values in (("lower", lower), ("upper", upper), ("target", target)):
        bad = ~(values > 0) & ~np.isnan(values)  # NaN marks a missing entry: NaN out
        if name == "target":  # a limit may be infinite (beyond double on the RR scale)
            bad |= np.isinf(values)
        if np.any(bad):
            raise InputError(
                f"`{name}` must be a positive{' finite' if name == 'target' else ''} risk ratio; "
                f"got {show(values[bad].flat[0])}",
                name,
            )
    disorder = lower > upper
    if np.any(disorder):
        i = np.flatnonzero(disorder)[0]
        raise InputError(
            f"`lower` must not exceed `upper`; got {show(lower.flat[i])} > {show(upper.flat[i])}",
            ("lower", "upper"),
        )
    nearest = np.where(lower > target, lower, np.where(upper < target, upper, target))
    nearest = np.where(np.isnan(lower) | np.isnan(upper), np.nan, nearest)  # a limit missing
    with np.errstate(over="ignore", under="ignore"):
        ratio = nearest / target
    beyond = np.isinf(ratio) & np.isfinite(nearest)
    if np.any(beyond):
        raise InputError(
            "`target` is so far from the interval that their ratio is beyond double precision; "
            f"got {show(np.broadcast_to(target, ratio.shape)[beyond].flat[0])}",
            "target",
        )
    return evalue_of_rr(ratio)


def evalue_of_limits(lower: np.ndarray, upper: np.ndarray, target: object = 1.0) -> np.ndarray:
    """`evalue_of_interval` without its checks, for rows already checked (the screen and
    `evalue_rows`, where the checks cost a third of the call on a million rows): positive
    limits in order; a row with no interval is masked by the caller."""
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
    a = require_numbers(rr_treatment, "rr_treatment")
    b = require_numbers(rr_outcome, "rr_outcome")
    for name, values in (("rr_treatment", a), ("rr_outcome", b)):
        bad = ~(values >= 1) & ~np.isnan(values)  # NaN marks a missing entry: NaN out
        if np.any(bad):
            raise InputError(
                f"`{name}` must be at least 1 (the larger of a risk ratio and its inverse); "
                f"got {show(values[bad].flat[0])}",
                name,
            )
    if np.isinf(a).any():  # the limit as rr_treatment grows: B -> rr_outcome (no inf/inf)
        with np.errstate(invalid="ignore"):
            return np.where(np.isinf(a), b, a / (1 + (a - 1) / b))
    return a / (1 + (a - 1) / b)
