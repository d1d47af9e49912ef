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
Every real root is reported; the one nearest b1 is chosen, at every delta (our convention,
stated with the result). Near delta = 1 the cubic's leading coefficient vanishes and one root
runs off to infinity, so the nearest root moves continuously through delta = 1. Where the two
roots nearest b1 are a complex pair (as the near pair can turn complex when delta grows) the
real root reported is a far one, and the result says so.

References
----------
Oster E (2019). Unobservable selection and coefficient stability: theory and evidence.
Journal of Business & Economic Statistics 37:187-204.
"""

from __future__ import annotations

import numpy as np

from ..common.checks import POSITIVE, require_scalar
from ..common.errors import InputError
from .result import StabilityResult


def _cubic(
    delta: float, b0: float, b1: float, r0: float, r1: float, r_max: float, s_y2: float,
    s_x2: float, tau: float,
) -> tuple[float, float, float, float]:  # fmt: skip
    delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau = (
        np.float64(v) for v in (delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau)
    )
    a = (delta - 1) * (tau * s_x2 - tau**2)
    b = (delta - 2) * tau * (b0 - b1) * s_x2
    c = (
        delta * (r_max - r1) * s_y2 * (s_x2 - tau)
        - (r1 - r0) * s_y2 * tau
        - s_x2 * tau * (b0 - b1) ** 2
    )
    d = delta * (r_max - r1) * s_y2 * (b0 - b1) * s_x2
    return a, b, c, d


def _scale(b0: float, b1: float) -> float:
    """The coefficients' own size, so that root tests do not depend on the units."""
    s = max(abs(b0), abs(b1), abs(b0 - b1))
    return s if s > 0 and np.isfinite(s) else 1.0


def _all_roots(
    delta: float, b0: float, b1: float, r0: float, r1: float, r_max: float, s_y2: float,
    s_x2: float, tau: float,
) -> tuple[np.ndarray, np.ndarray, float]:  # fmt: skip
    """The real roots u and the complex roots of the cubic in u = nu / s (s the scale)."""
    s = np.float64(_scale(b0, b1))
    # nu = s u: the cubic in u has coefficients of comparable size whatever the units
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):
        a, b, c, d = _cubic(delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau)
        coeffs = np.array([a * s**3, b * s**2, c * s, d], float)
        top = np.max(np.abs(coeffs))
        coeffs = coeffs / top if top > 0 and np.isfinite(top) else coeffs
    if not np.all(np.isfinite(coeffs)):
        raise InputError(
            "the estimates and variances are too extreme for the cubic (a coefficient leaves "
            "double precision); rescale the outcome or the treatment"
        )
    first = np.flatnonzero(np.abs(coeffs) > 1e-14)
    coeffs = coeffs[first[0] :] if first.size else coeffs[:0]
    if coeffs.size <= 1:
        return np.array([]), np.array([], complex), s
    u = np.roots(coeffs)
    # A root is real when its imaginary part is negligible beside its own size (scale-free:
    # a root near 1e-7 is judged as one near 1)
    is_real = np.abs(u.imag) <= 1e-7 * np.abs(u)
    real = u[is_real].real
    for _ in range(3):  # Newton polish of the real roots on the scaled cubic
        value = np.polyval(coeffs, real)
        slope = np.polyval(np.polyder(coeffs), real)
        step = np.divide(value, slope, out=np.zeros_like(real), where=slope != 0)
        real = real - step
    real = np.sort(real)
    if real.size > 1:  # a double root once, not twice
        keep = np.concatenate([[True], np.diff(real) > 1e-9 * np.maximum(np.abs(real[1:]), 1e-300)])
        real = real[keep]
    return real, u[~is_real], s


def real_roots(
    delta: float, b0: float, b1: float, r0: float, r1: float, r_max: float, s_y2: float,
    s_x2: float, tau: float,
) -> np.ndarray:  # fmt: skip
    """The bias-adjusted coefficients b1 - nu for every real root nu, nearest b1 first.

    One rule at every delta: the root nearest the long estimate comes first.
    """
    real, _, s = _all_roots(delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau)
    real = real[np.argsort(np.abs(real), kind="stable")]
    return b1 - s * real


def complex_nearer(
    delta: float, b0: float, b1: float, r0: float, r1: float, r_max: float, s_y2: float,
    s_x2: float, tau: float,
) -> complex | None:  # fmt: skip
    """The bias-adjusted value b1 - nu of a complex root nearer b1 than every real root.

    None when the nearest root is real. A complex pair nearer than the reported real root
    means the branch that the long estimate sits on has no real solution at this delta.
    """
    real, cplx, s = _all_roots(delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau)
    if not cplx.size:
        return None
    nearest = cplx[np.argmin(np.abs(cplx))]
    if real.size and np.min(np.abs(real)) <= abs(nearest):
        return None
    return complex(b1 - s * nearest)


def delta_for_target(
    b0: float, b1: float, r0: float, r1: float, r_max: float, s_y2: float, s_x2: float,
    tau: float, target: float = 0.0,
) -> float:  # fmt: skip
    """The delta that brings the coefficient to `target` (Oster's closed form).

    The cubic is linear in delta, so delta = num(nu)/den(nu) at nu = b1 - target. Both are
    cubics in nu with the same leading coefficient; for |nu| > 1 they are evaluated divided
    by nu³, so a far target (1e308) gives its limit instead of overflowing.
    Raises InputError when no delta brings the coefficient to `target` (den(nu) = 0).
    """
    b0, b1, r0, r1, r_max, s_y2, s_x2, tau, target = (
        np.float64(v) for v in (b0, b1, r0, r1, r_max, s_y2, s_x2, tau, target)
    )
    g = b0 - b1
    # coefficients of nu^0..nu^3
    num = (0.0, (r1 - r0) * s_y2 * tau + s_x2 * tau * g * g, 2 * tau * g * s_x2,
           tau * s_x2 - tau * tau)  # fmt: skip
    den = ((r_max - r1) * s_y2 * g * s_x2, (r_max - r1) * s_y2 * (s_x2 - tau),
           tau * g * s_x2, tau * s_x2 - tau * tau)  # fmt: skip
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):
        nu = b1 - target
        if not np.isfinite(nu):
            raise InputError(
                f"`target` is too far from the long estimate; got {float(target):g}", "target"
            )
        if abs(nu) <= 1:
            top = sum(c * nu**k for k, c in enumerate(num))
            bottom = sum(c * nu**k for k, c in enumerate(den))
        else:
            w = 1 / nu
            top = sum(c * w ** (3 - k) for k, c in enumerate(num))
            bottom = sum(c * w ** (3 - k) for k, c in enumerate(den))
    if bottom == 0 or not np.isfinite(bottom) or not np.isfinite(top):
        raise InputError(
            f"no delta brings the coefficient to `target` {float(target):g} under these inputs",
            "target",
        )
    return float(top / bottom)


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
    b0 = float(require_scalar(estimate_short, "estimate_short"))
    b1 = float(require_scalar(estimate_long, "estimate_long"))
    r0 = float(require_scalar(r2_short, "r2_short"))
    r1 = float(require_scalar(r2_long, "r2_long"))
    for name, value in (("r2_short", r0), ("r2_long", r1)):
        if not 0 <= value < 1:
            raise InputError(f"`{name}` must lie in [0, 1); got {value:g}", name)
    if r1 <= r0:
        raise InputError(
            f"`r2_long` must exceed `r2_short` (the controls explain something); got {r1:g} "
            f"and {r0:g}",
            ("r2_long", "r2_short"),
        )
    notes = []
    if r2_max is None:
        r_max = min(1.3 * r1, 1.0)
        notes.append(
            f"R-max = min(1.3 x {r1:g}, 1) = {r_max:.4g} (Oster's rule of thumb; common practice)."
        )
    else:
        r_max = float(require_scalar(r2_max, "r2_max"))
        if r_max > 1 or r_max < r1:
            raise InputError(
                f"`r2_max` must lie between the long R² ({r1:g}) and 1; got {r_max:g}", "r2_max"
            )
    delta = float(require_scalar(delta, "delta"))
    target = float(require_scalar(target, "target"))
    approx = b1 - delta * (b0 - b1) * (r_max - r1) / (r1 - r0)
    if not np.isfinite(approx):
        raise InputError(
            "`estimate_short`, `estimate_long` and `delta` give a bias-adjusted coefficient "
            "beyond double precision; rescale the outcome or the treatment",
            ("estimate_short", "estimate_long", "delta"),
        )
    denominator = (b0 - b1) * (r_max - r1)
    delta_approx = (b1 - target) * (r1 - r0) / denominator if denominator else float("inf")
    variances = (var_outcome, var_treatment, var_treatment_residual)
    exact = roots = delta_exact = near = None
    if any(v is not None for v in variances):
        if any(v is None for v in variances):
            raise InputError(
                "the exact solution needs all three of `var_outcome`, `var_treatment` and "
                "`var_treatment_residual`",
                ("var_outcome", "var_treatment", "var_treatment_residual"),
            )
        s_y2 = float(require_scalar(var_outcome, "var_outcome", POSITIVE))
        s_x2 = float(require_scalar(var_treatment, "var_treatment", POSITIVE))
        tau = float(require_scalar(var_treatment_residual, "var_treatment_residual", POSITIVE))
        if tau > s_x2:
            raise InputError(
                f"`var_treatment_residual` ({tau:g}) cannot exceed `var_treatment` ({s_x2:g})",
                ("var_treatment_residual", "var_treatment"),
            )
        args = (delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau)
        roots = real_roots(*args)
        exact = float(roots[0]) if roots.size else None
        if roots.size > 1:
            notes.append(
                f"The cubic has {roots.size} real roots; the one nearest the long estimate is "
                "reported at every delta (our convention; Oster 2019 discusses the choice); all "
                "are listed."
            )
        near = complex_nearer(*args)
        if near is not None:
            where = "the only real root is" if roots.size == 1 else "every real root is"
            notes.append(
                f"At delta {delta:g} the two roots nearest the long estimate are a complex pair "
                f"({near.real:.4g} ± {abs(near.imag):.4g}i): no real bias-adjusted coefficient "
                f"lies near the long estimate, and {where} a far one."
            )
        try:
            delta_exact = delta_for_target(b0, b1, r0, r1, r_max, s_y2, s_x2, tau, target)
        except InputError:
            delta_exact = None
            notes.append(f"No delta brings the coefficient to {target:g} under these inputs.")
    else:
        notes.append("Without the three variances only the approximation is computed.")
    return StabilityResult(
        estimate_short=b0, r2_short=r0, estimate_long=b1, r2_long=r1, r2_max=r_max,
        delta=delta, target=target, bias_adjusted=exact,
        bias_adjusted_roots=None if roots is None else tuple(float(r) for r in roots),
        bias_adjusted_approx=float(approx), delta_for_target=delta_exact,
        delta_for_target_approx=float(delta_approx), notes=tuple(notes),
        complex_nearer=near,
        variances=None if roots is None else (s_y2, s_x2, tau),
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
    with np.errstate(over="ignore", invalid="ignore"):
        approx = b1 - d * (b0 - b1) * (m - r1) / (r1 - r0)
    approx = np.where(np.isfinite(approx), approx, np.nan)  # beyond a double: not shown
    exact = np.full(approx.shape, np.nan)
    if result.variances is not None:
        s_y2, s_x2, tau = result.variances
        for i, dv in enumerate(np.ravel(d)):
            for j, mv in enumerate(np.ravel(m)):
                roots = real_roots(float(dv), b0, b1, r0, r1, float(mv), s_y2, s_x2, tau)
                exact[i, j] = roots[0] if roots.size else np.nan
    return {"delta": np.ravel(d), "r2_max": np.ravel(m), "approx": approx, "exact": exact}
