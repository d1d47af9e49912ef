"""The E-value of a risk difference from the 2 x 2 counts, for the whole population.

References
----------
Ding & VanderWeele (2016), Epidemiology 27:368, the risk-difference section; VanderWeele &
Ding (2017), Ann Intern Med 167:268, eAppendix.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import require_scalar
from ..common.errors import InputError
from ..common.levels import check_level
from .formulas import evalue_of_rr
from .result import RiskDifferenceResult


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
        z = float(-ndtri(alpha / 2))

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


def evalue_rd(counts: tuple[int, int, int, int], *, ci_level: float = 0.95) -> RiskDifferenceResult:
    """The E-value of a risk difference from (cases treated, total treated, cases control,
    total control), with its Wald interval, as one result."""
    from scipy.special import ndtri

    if len(counts) != 4:
        raise InputError(f"`counts` must be four numbers; got {len(counts)}", "counts")
    a, n1, c, n0 = (float(require_scalar(v, "counts")) for v in counts)
    for value in (a, n1, c, n0):
        if value < 0 or value != round(value):
            raise InputError(f"`counts` must be whole numbers, 0 or more; got {value:g}", "counts")
    if n1 <= 0 or n0 <= 0 or a > n1 or c > n0:
        raise InputError(
            "`counts`: cases must not exceed totals, and totals must be positive; got "
            f"{a:g} of {n1:g} and {c:g} of {n0:g}",
            "counts",
        )
    level = check_level(ci_level)
    out = evalue_of_risk_difference(a, n1, c, n0, alpha=1 - level)
    p1, p0 = a / n1, c / n0
    half = float(-ndtri((1 - level) / 2)) * np.sqrt(p1 * (1 - p1) / n1 + p0 * (1 - p0) / n0)
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
