"""Coefficient stability under proportional selection (Oster 2019).

With the short regression (treatment only: coefficient b0, R² R0) and the long one (with
the observed controls: b1, R1), the bias-adjusted coefficient for a selection ratio delta and
a maximum R² R_max is b1 - nu, nu a root of the cubic (the project's methods notes, 2.3)

    A nu³ + B nu² + C nu + D = 0,
    A = (delta - 1)(tau s_x² - tau²),  B = (delta - 2) tau (b0 - b1) s_x²,
    C = delta (R_max - R1) s_y² (s_x² - tau) - (R1 - R0) s_y² tau - s_x² tau (b0 - b1)²,
    D = delta (R_max - R1) s_y² (b0 - b1) s_x²,

with s_y² the outcome's variance, s_x² the treatment's and tau the variance of the treatment's
residual on the controls. The approximation is b1 - delta (b0 - b1)(R_max - R1)/(R1 - R0).
Every real root is reported; the one nearest b1 is chosen (a convention, stated; with delta
= 1 the cubic is a quadratic and the root with the sign of b0 - b1 is the right one).

References
----------
Oster E (2019). Unobservable selection and coefficient stability: theory and evidence.
Journal of Business & Economic Statistics 37:187-204.
"""

from __future__ import annotations

import numpy as np

from ..common.checks import POSITIVE, require
from ..common.errors import InputError
from .result import StabilityResult


def _cubic(
    delta: float, b0: float, b1: float, r0: float, r1: float, r_max: float, s_y2: float,
    s_x2: float, tau: float,
) -> tuple[float, float, float, float]:  # fmt: skip
    a = (delta - 1) * (tau * s_x2 - tau**2)
    b = (delta - 2) * tau * (b0 - b1) * s_x2
    c = (
        delta * (r_max - r1) * s_y2 * (s_x2 - tau)
        - (r1 - r0) * s_y2 * tau
        - s_x2 * tau * (b0 - b1) ** 2
    )
    d = delta * (r_max - r1) * s_y2 * (b0 - b1) * s_x2
    return a, b, c, d


def real_roots(
    delta: float, b0: float, b1: float, r0: float, r1: float, r_max: float, s_y2: float,
    s_x2: float, tau: float,
) -> np.ndarray:  # fmt: skip
    """The bias-adjusted coefficients b1 - nu for every real root nu, nearest b1 first."""
    coeffs = np.array(_cubic(delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau), float)
    scale = np.max(np.abs(coeffs)) or 1.0
    coeffs = coeffs / scale
    while coeffs.size and abs(coeffs[0]) < 1e-14:
        coeffs = coeffs[1:]
    if coeffs.size <= 1:
        return np.array([])
    nu = np.roots(coeffs)
    real = nu[np.abs(nu.imag) <= 1e-9 * np.maximum(1.0, np.abs(nu.real))].real
    real = np.unique(np.round(real, 12))
    if delta == 1 and real.size:
        # Oster's delta = 1 case: the root whose sign matches b0 - b1 (methods notes, 2.3)
        preferred = real[np.sign(real) == np.sign(b0 - b1)]
        rest = real[np.sign(real) != np.sign(b0 - b1)]
        real = np.concatenate([preferred[np.argsort(np.abs(preferred))], rest])
    else:
        real = real[np.argsort(np.abs(real))]
    return b1 - real


def delta_for_target(
    b0: float, b1: float, r0: float, r1: float, r_max: float, s_y2: float, s_x2: float,
    tau: float, target: float = 0.0,
) -> float:  # fmt: skip
    """The delta that brings the coefficient to `target` (Oster's closed form)."""
    nu = b1 - target
    num = (
        nu * (r1 - r0) * s_y2 * tau
        + nu * s_x2 * tau * (b0 - b1) ** 2
        + 2 * nu**2 * tau * (b0 - b1) * s_x2
        + nu**3 * (tau * s_x2 - tau**2)
    )
    den = (
        (r_max - r1) * s_y2 * (b0 - b1) * s_x2
        + nu * (r_max - r1) * s_y2 * (s_x2 - tau)
        + nu**2 * tau * (b0 - b1) * s_x2
        + nu**3 * (tau * s_x2 - tau**2)
    )
    return float(num / den) if den != 0 else float("nan")


def coefficient_stability(
    estimate_short: float,
    r2_short: float,
    estimate_long: float,
    r2_long: float,
    *,
    var_outcome: float | None = None,
    var_treatment: float | None = None,
    var_treatment_residual: float | None = None,
    r2_max: float | None = None,
    delta: float = 1.0,
    target: float = 0.0,
) -> StabilityResult:
    """Oster's bias-adjusted coefficient and the delta that explains the estimate away.

    Parameters
    ----------
    estimate_short, r2_short : float
        Coefficient and R² of the regression of the outcome on the treatment alone (or with
        controls judged unrelated to it).
    estimate_long, r2_long : float
        The same with the observed controls.
    var_outcome, var_treatment, var_treatment_residual : float, optional
        Variances of the outcome, the treatment, and the treatment's residual on the
        controls; needed for the exact solution (the same n or n - 1 convention for all).
    r2_max : float, optional
        The R² of a regression that also held the unobserved controls; default 1.3 times
        the long R², capped at 1 (Oster's rule of thumb: common practice).
    delta : float, default 1
        Selection on unobservables relative to observables.
    target : float, default 0
        The coefficient the delta for target brings the estimate to.

    Examples
    --------
    The approximation: b1 - delta (b0 - b1)(R_max - R1)/(R1 - R0).

    >>> res = coefficient_stability(0.5, 0.1, 0.4, 0.3, r2_max=0.39)
    >>> round(float(res.bias_adjusted_approx), 4)
    0.355
    """
    b0 = float(require(estimate_short, "estimate_short"))
    b1 = float(require(estimate_long, "estimate_long"))
    r0 = float(require(r2_short, "r2_short"))
    r1 = float(require(r2_long, "r2_long"))
    for name, value in (("r2_short", r0), ("r2_long", r1)):
        if not 0 <= value < 1:
            raise InputError(f"`{name}` must lie in [0, 1); got {value:g}")
    if r1 <= r0:
        raise InputError(
            f"`r2_long` must exceed `r2_short` (the controls explain something); got {r1:g} "
            f"and {r0:g}"
        )
    notes = []
    if r2_max is None:
        r_max = min(1.3 * r1, 1.0)
        notes.append(
            f"R-max = min(1.3 x {r1:g}, 1) = {r_max:.4g} (Oster's rule of thumb; common practice)."
        )
    else:
        r_max = float(require(r2_max, "r2_max"))
        if r_max > 1 or r_max < r1:
            raise InputError(f"`r2_max` must lie between the long R² ({r1:g}) and 1; got {r_max:g}")
    delta = float(require(delta, "delta"))
    target = float(require(target, "target"))
    approx = b1 - delta * (b0 - b1) * (r_max - r1) / (r1 - r0)
    denominator = (b0 - b1) * (r_max - r1)
    delta_approx = (b1 - target) * (r1 - r0) / denominator if denominator else float("inf")
    variances = (var_outcome, var_treatment, var_treatment_residual)
    exact = roots = delta_exact = None
    if any(v is not None for v in variances):
        if any(v is None for v in variances):
            raise InputError(
                "the exact solution needs all three of `var_outcome`, `var_treatment` and "
                "`var_treatment_residual`"
            )
        s_y2 = float(require(var_outcome, "var_outcome", POSITIVE))
        s_x2 = float(require(var_treatment, "var_treatment", POSITIVE))
        tau = float(require(var_treatment_residual, "var_treatment_residual", POSITIVE))
        if tau > s_x2:
            raise InputError(
                f"`var_treatment_residual` ({tau:g}) cannot exceed `var_treatment` ({s_x2:g})"
            )
        roots = real_roots(delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau)
        exact = float(roots[0]) if roots.size else None
        if roots.size > 1:
            notes.append(
                f"The cubic has {roots.size} real roots; the one nearest the long estimate is "
                "reported (our convention; Oster 2019 discusses the choice); all are listed."
            )
        delta_exact = delta_for_target(b0, b1, r0, r1, r_max, s_y2, s_x2, tau, target)
    else:
        notes.append("Without the three variances only the approximation is computed.")
    return StabilityResult(
        estimate_short=b0, r2_short=r0, estimate_long=b1, r2_long=r1, r2_max=r_max,
        delta=delta, target=target, bias_adjusted=exact,
        bias_adjusted_roots=None if roots is None else tuple(float(r) for r in roots),
        bias_adjusted_approx=float(approx), delta_for_target=delta_exact,
        delta_for_target_approx=float(delta_approx), notes=tuple(notes),
        variances=None if exact is None and roots is None else tuple(float(v) for v in variances),  # type: ignore[arg-type]
    )  # fmt: skip


def adjusted_grid(
    result: StabilityResult, deltas: np.ndarray, r2_maxes: np.ndarray
) -> dict[str, np.ndarray]:
    """The bias-adjusted coefficient over a grid of delta (rows) x R-max (columns): the
    approximation everywhere, and the exact root nearest the long estimate (as in
    `coefficient_stability`) where the result holds the three variances (NaN without a real
    root; NaN everywhere without the variances)."""
    b0, b1, r0, r1 = result.estimate_short, result.estimate_long, result.r2_short, result.r2_long
    d = np.asarray(deltas, float)[:, None]
    m = np.asarray(r2_maxes, float)[None, :]
    approx = b1 - d * (b0 - b1) * (m - r1) / (r1 - r0)
    exact = np.full(approx.shape, np.nan)
    if result.variances is not None:
        s_y2, s_x2, tau = result.variances
        for i, dv in enumerate(np.ravel(d)):
            for j, mv in enumerate(np.ravel(m)):
                roots = real_roots(float(dv), b0, b1, r0, r1, float(mv), s_y2, s_x2, tau)
                exact[i, j] = roots[0] if roots.size else np.nan
    return {"delta": np.ravel(d), "r2_max": np.ravel(m), "approx": approx, "exact": exact}
