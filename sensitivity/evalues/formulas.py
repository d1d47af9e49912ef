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
    rr = require_numbers(rr, "rr")
    bad = rr <= 0  # NaN (a missing value in a batch) passes through as NaN
    if np.any(bad):
        raise InputError(f"`rr` must be positive; got {show(rr[bad].flat[0])}", "rr")
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
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
