"""Omitted-variable bounds for debiased (double) machine-learning estimates: the arithmetic.

Pure numpy (``scipy.special`` and ``scipy.optimize`` inside functions). The cross-fitting
that produces the per-row scores lives in `sensitivity.debiased.fit`; everything here works on
arrays of numbers, so it is cheap to call many times on one fit.

Notation (Chernozhukov, Cinelli, Newey, Sharma & Syrgkanis 2022, "Long story short"):
``g_s`` is the short regression E[Y | D, X], ``alpha_s`` its Riesz representer, ``sigma2 =
E(Y - g_s)^2``, ``nu2 = E alpha_s^2`` (estimated through the Riesz moment
``E[2 m(W, alpha_s) - alpha_s^2]``), ``S^2 = sigma2 nu2``. A hidden confounder A of strength
``cy2`` (the share of the outcome's residual variation it explains, ``R^2`` of ``Y - g_s`` on
``g - g_s``) and ``cd2`` (the share of the Riesz representer's variation it explains, ``1 -
R^2`` of ``alpha`` on ``alpha_s``; in the partially linear model the partial R^2 of A with the
treatment given X) moves the estimate by at most

    |theta_s - theta| <= |rho| S sqrt(cy2 cd2 / (1 - cd2)).

The confidence bounds use the influence functions of the estimate and of S (delta method):
everything needed is seven numbers (`Moments`), so a bound costs O(1) whatever the data size.

References
----------
Chernozhukov V, Cinelli C, Newey W, Sharma A, Syrgkanis V (2022). Long story short: omitted
variable bias in causal machine learning. NBER Working Paper 30302; arXiv:2112.13398.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import OPEN_UNIT, Rule, require
from ..common.errors import InputError
from ..common.levels import z_one_sided

STRENGTH = Rule("must lie in [0, 1)", lambda x: ~((x >= 0) & (x < 1)))
RHO = Rule("must lie in (0, 1]", lambda x: ~((x > 0) & (x <= 1)))


# --------------------------------------------------------------------------- scores
@dataclass(frozen=True)
class Scores:
    """Per-row pieces of an orthogonal score, and the estimate they give.

    `psi` is the influence function of the estimate (mean zero), `residual` is ``Y - g_s``,
    `riesz` the representer ``alpha_s`` and `riesz_moment` ``2 m(W, alpha_s) - alpha_s^2``.
    """

    estimate: float
    psi: np.ndarray
    residual: np.ndarray
    riesz: np.ndarray
    riesz_moment: np.ndarray


def partial_linear_scores(y: ArrayLike, d: ArrayLike, y_hat: ArrayLike, d_hat: ArrayLike) -> Scores:
    """Scores of the partially linear model ``Y = theta D + g(X) + e`` from the nuisances.

    `y_hat` estimates E[Y | X] and `d_hat` estimates E[D | X] (cross-fitted or not).
    ``theta = sum(ry rd) / sum(rd^2)`` with ``ry = y - y_hat``, ``rd = d - d_hat``; the Riesz
    representer is ``rd / J`` with ``J = mean(rd^2)``, and ``m(W, alpha) = 1 / J``.

    Examples
    --------
    >>> s = partial_linear_scores([1.0, 3.0, 2.0, 6.0], [0.0, 1.0, 0.0, 1.0], [3.0] * 4, [0.5] * 4)
    >>> float(s.estimate)
    3.0
    """
    y, d = np.asarray(y, float), np.asarray(d, float)
    ry = y - np.asarray(y_hat, float)
    rd = d - np.asarray(d_hat, float)
    j = float(np.mean(rd * rd))
    if not j > 0:
        raise InputError(
            "`treatment` has no variation left once the covariates predict it (the learner "
            "reproduces it exactly); the effect is not identified",
            "treatment",
        )
    theta = float(np.mean(ry * rd)) / j
    residual = ry - theta * rd
    riesz = rd / j
    return Scores(theta, residual * riesz, residual, riesz, 2.0 / j - riesz * riesz)


def average_effect_scores(
    y: ArrayLike, d: ArrayLike, mu0: ArrayLike, mu1: ArrayLike, propensity: ArrayLike
) -> Scores:
    """Scores of the average effect of a binary treatment (the interactive model, AIPW).

    ``alpha_s = D / pi(X) - (1 - D) / (1 - pi(X))``; ``m(W, alpha) = alpha(1, X) - alpha(0, X)
    = 1 / pi + 1 / (1 - pi)``; the score is ``mu1 - mu0 + alpha_s (Y - g(D, X)) - theta``.
    """
    y, d = np.asarray(y, float), np.asarray(d, float)
    mu0, mu1 = np.asarray(mu0, float), np.asarray(mu1, float)
    pi = np.asarray(propensity, float)
    if np.any(~((pi > 0) & (pi < 1))):
        raise InputError(
            "`propensity` must lie strictly between 0 and 1 in every row", "propensity"
        )
    g = np.where(d == 1, mu1, mu0)
    riesz = d / pi - (1 - d) / (1 - pi)
    residual = y - g
    each = mu1 - mu0 + riesz * residual
    theta = float(np.mean(each))
    moment = 2.0 * (1.0 / pi + 1.0 / (1.0 - pi)) - riesz * riesz
    return Scores(theta, each - theta, residual, riesz, moment)


# --------------------------------------------------------------------------- moments
@dataclass(frozen=True)
class Moments:
    """The seven numbers every bound needs.

    `v_theta`, `v_cross`, `v_s`: the second moments of the influence functions of the estimate
    (psi) and of S (phi): mean(psi^2), mean(psi phi), mean(phi^2).
    """

    estimate: float
    n: int
    sigma2: float
    nu2: float
    v_theta: float
    v_cross: float
    v_s: float

    @property
    def s(self) -> float:
        """S = sqrt(sigma2 nu2): the scale of the bias a confounder can cause."""
        return float(np.sqrt(self.sigma2 * self.nu2))

    @property
    def se(self) -> float:
        """Standard error of the estimate from its influence function (denominator n)."""
        return float(np.sqrt(self.v_theta / self.n))

    @property
    def se_s(self) -> float:
        """Standard error of S from its influence function."""
        return float(np.sqrt(self.v_s / self.n))


def moments(scores: Scores) -> Moments:
    """The estimate, sigma2, nu2 and the influence-function covariances from per-row scores.

    ``phi = (nu2 (e^2 - sigma2) + sigma2 (r - nu2)) / (2 S)`` is the influence function of S,
    with e the residual and r the Riesz moment (both orthogonal to the nuisances: sigma2 is
    the minimum of E(Y - g)^2 over g, nu2 the maximum of E[2 m(W, a) - a^2] over a).
    """
    e2 = scores.residual * scores.residual
    sigma2 = float(np.mean(e2))
    nu2 = float(np.mean(scores.riesz_moment))
    if not sigma2 > 0:
        raise InputError(
            "`outcome` is predicted exactly (no residual variation); nothing to bound", "outcome"
        )
    if not nu2 > 0:
        raise InputError(
            f"the Riesz representer's variance estimate is not positive (nu2 = {nu2:.4g}): "
            "propensities too near 0 or 1; trim more, or choose another `learner`",
            "learner",
        )
    s = np.sqrt(sigma2 * nu2)
    phi = (nu2 * (e2 - sigma2) + sigma2 * (scores.riesz_moment - nu2)) / (2 * s)
    psi = scores.psi
    return Moments(
        estimate=float(scores.estimate),
        n=int(psi.size),
        sigma2=sigma2,
        nu2=nu2,
        v_theta=float(np.mean(psi * psi)),
        v_cross=float(np.mean(psi * phi)),
        v_s=float(np.mean(phi * phi)),
    )


# --------------------------------------------------------------------------- bounds
def check_strengths(
    cy2: ArrayLike, cd2: ArrayLike, rho: ArrayLike = 1.0
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """cy2 and cd2 in [0, 1), rho in (0, 1], as float arrays."""
    return (
        require(cy2, "cy2", STRENGTH),
        require(cd2, "cd2", STRENGTH),
        require(rho, "rho", RHO),
    )


def multiplier(cy2: ArrayLike, cd2: ArrayLike, rho: ArrayLike = 1.0) -> np.ndarray:
    """``|rho| C_Y C_D = |rho| sqrt(cy2 cd2 / (1 - cd2))``: the bias in units of S."""
    cy2, cd2, rho = (np.asarray(v, float) for v in (cy2, cd2, rho))
    return np.abs(rho) * np.sqrt(cy2 * cd2 / (1 - cd2))


def z_value(alpha: float) -> float:
    """z_{1 - alpha}: the one-sided normal quantile, from the lower tail (finite to 1e-300)."""
    return float(z_one_sided(alpha))


def bounds(
    m: Moments, cy2: ArrayLike, cd2: ArrayLike, rho: ArrayLike = 1.0, alpha: float = 0.05
) -> dict[str, np.ndarray]:
    """Bias bound, bounds on the effect and their one-sided confidence bounds (broadcasting).

    Returns
    -------
    dict of ndarray
        ``bias`` (``|rho| S C_Y C_D``), ``bound_lower``/``bound_upper`` (the estimate minus and
        plus the bias), ``se_lower``/``se_upper`` (their standard errors) and
        ``ci_lower``/``ci_upper``: ``bound_lower - z_{1-alpha} se_lower`` and ``bound_upper +
        z_{1-alpha} se_upper``, each a one-sided (1 - alpha) confidence bound.

    Notes
    -----
    The influence function of ``theta_s -/+ B S`` (B the multiplier) is ``psi -/+ B phi``, so
    its variance is ``v_theta -/+ 2 B v_cross + B^2 v_s`` over n.

    Examples
    --------
    >>> m = Moments(estimate=1.0, n=100, sigma2=4.0, nu2=0.25, v_theta=1.0, v_cross=0.0, v_s=0.0)
    >>> out = bounds(m, 0.5, 0.5)
    >>> float(out["bias"]), float(out["bound_lower"])
    (0.7071067811865476, 0.2928932188134524)
    """
    b = multiplier(cy2, cd2, rho)
    bias = b * m.s
    z = z_value(alpha)
    var_lower = np.maximum(m.v_theta - 2 * b * m.v_cross + b * b * m.v_s, 0.0)
    var_upper = np.maximum(m.v_theta + 2 * b * m.v_cross + b * b * m.v_s, 0.0)
    se_lower = np.sqrt(var_lower / m.n)
    se_upper = np.sqrt(var_upper / m.n)
    lower = m.estimate - bias
    upper = m.estimate + bias
    return {
        "bias": bias,
        "bound_lower": lower,
        "bound_upper": upper,
        "se_lower": se_lower,
        "se_upper": se_upper,
        "ci_lower": lower - z * se_lower,
        "ci_upper": upper + z * se_upper,
    }


def surface(
    m: Moments, cy2: ArrayLike, cd2: ArrayLike, rho: float = 1.0, alpha: float = 0.05
) -> dict[str, np.ndarray]:
    """`bounds` over the grid of two 1-d strength vectors (rows: cd2, columns: cy2)."""
    cy2 = np.atleast_1d(require(cy2, "cy2", STRENGTH))
    cd2 = np.atleast_1d(require(cd2, "cd2", STRENGTH))
    return bounds(m, cy2[None, :], cd2[:, None], rho, alpha)


# --------------------------------------------------------------------------- robustness
def _rv_curve(f: np.ndarray) -> np.ndarray:
    """The s with ``s^2 / (1 - s) = f^2``: ``(sqrt(f^4 + 4 f^2) - f^2) / 2 = 2 f / (f +
    sqrt(f^2 + 4))`` (the second form neither overflows nor cancels)."""
    f = np.abs(np.asarray(f, float))
    with np.errstate(invalid="ignore", over="ignore"):
        out = 2 * f / (f + np.hypot(f, 2.0))
    return np.where(np.isinf(f), 1.0, out)


def robustness_value(m: Moments, target: float = 0.0, rho: float = 1.0) -> float:
    """The equal strength ``cy2 = cd2`` whose bias bound just reaches `target`.

    With ``f = |estimate - target| / (|rho| S)``: ``RV = (sqrt(f^4 + 4 f^2) - f^2) / 2``,
    the root of ``|rho| S s / sqrt(1 - s) = |estimate - target|``.

    Examples
    --------
    With S equal to the OLS se times sqrt(dof) this is the partial-R² robustness value
    (Cinelli & Hazlett 2020; t = 4.18 on 783 dof gives 13.9%):

    >>> m = Moments(4.18, 784, 783.0, 1.0, 1.0, 0.0, 0.0)
    >>> round(robustness_value(m), 3)
    0.139
    """
    rho = float(require(rho, "rho", RHO))
    f = abs(m.estimate - float(target)) / (rho * m.s)
    return float(_rv_curve(np.asarray(f)))


def _ci_gap(m: Moments, s: np.ndarray, target: float, rho: float, z: float) -> np.ndarray:
    """How far the confidence bound on the target's side still is from it, at cy2 = cd2 = s
    (positive: not reached yet)."""
    b = rho * s / np.sqrt(1 - s)
    side = 1.0 if m.estimate >= target else -1.0
    var = np.maximum(m.v_theta - 2 * side * b * m.v_cross + b * b * m.v_s, 0.0)
    bound = m.estimate - side * (b * m.s + z * np.sqrt(var / m.n))
    return side * (bound - target)


#: Grid on which the first crossing of the confidence bound is searched before refining.
RV_GRID = 4001


def robustness_value_alpha(
    m: Moments, target: float = 0.0, rho: float = 1.0, alpha: float = 0.05
) -> tuple[float, bool]:
    """The least equal strength ``cy2 = cd2`` whose one-sided (1 - alpha) confidence bound
    reaches `target`, and whether it is reached at all below 1.

    0 when the confidence bound at no confounding already reaches the target. The bound is
    searched on a grid of strengths (the first crossing), then refined by Brent's method, so
    the value is the first strength at which the bound reaches the target even where the
    bound is not monotone. When it is never reached below 1, returns (1.0, False).
    """
    from scipy.optimize import brentq

    rho = float(require(rho, "rho", RHO))
    alpha = float(require(alpha, "alpha", OPEN_UNIT))
    z = z_value(alpha)
    target = float(target)
    if _ci_gap(m, np.asarray(0.0), target, rho, z) <= 0:
        return 0.0, True
    grid = np.linspace(0.0, 1.0, RV_GRID)[:-1]
    grid = np.append(grid, 1 - 1e-12)
    gap = _ci_gap(m, grid, target, rho, z)
    hit = np.flatnonzero(gap <= 0)
    if hit.size == 0:
        return 1.0, False
    i = int(hit[0])
    if gap[i] == 0:
        return float(grid[i]), True
    root = brentq(
        lambda s: float(_ci_gap(m, np.asarray(s), target, rho, z)),
        float(grid[i - 1]),
        float(grid[i]),
        xtol=1e-14,
        rtol=1e-14,
    )
    return float(root), True


# --------------------------------------------------------------------------- benchmarks
@dataclass(frozen=True)
class Gain:
    """What an observed covariate (or group) adds: its strengths, measured by refitting the
    nuisances without it. `rho` is the implied correlation (see `benchmark_gain`)."""

    cy2: float
    cd2: float
    rho: float
    estimate_without: float


def benchmark_gain(full: Moments, without: Moments) -> Gain:
    """The strengths of a covariate group from the fits with and without it.

    Taking the group as the omitted variable and the fit without it as the short model:
    ``cy2 = (sigma2_without - sigma2) / sigma2_without`` (its nonparametric partial R² with
    the outcome), ``cd2 = (nu2 - nu2_without) / nu2`` (``1 - R^2`` of alpha on alpha_s), and
    ``rho = (estimate - estimate_without) / sqrt((sigma2_without - sigma2) (nu2 -
    nu2_without))``, the correlation that makes the identity ``theta_s - theta = -rho S C_Y
    C_D`` hold. Negative gains (a learner that fits worse with more covariates) count as 0.
    """
    dy = max(without.sigma2 - full.sigma2, 0.0)
    dd = max(full.nu2 - without.nu2, 0.0)
    cy2 = dy / without.sigma2
    cd2 = dd / full.nu2
    scale = np.sqrt(dy * dd)
    diff = full.estimate - without.estimate
    rho = float(diff / scale) if scale > 0 else float("nan")
    return Gain(float(cy2), float(cd2), rho, float(without.estimate))


def scaled_strengths(
    gain_cy2: ArrayLike, gain_cd2: ArrayLike, k_outcome: ArrayLike, k_treatment: ArrayLike
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """A confounder with k times a benchmark's strength: ``cy2 = k_outcome gain_cy2`` (capped at
    1, flagged) and ``cd2 = k_treatment gain_cd2`` (which must stay below 1)."""
    gy = np.asarray(gain_cy2, float)
    gd = np.asarray(gain_cd2, float)
    ky = require(k_outcome, "k_outcome", Rule("must be positive", lambda x: ~(x > 0)))
    kd = require(k_treatment, "k_treatment", Rule("must be positive", lambda x: ~(x > 0)))
    cd2 = kd * gd
    if np.any(cd2 >= 1):
        kk, gg = np.broadcast_arrays(kd, gd)
        i = np.flatnonzero(np.broadcast_to(cd2 >= 1, kk.shape))[0]
        raise InputError(
            f"`k_treatment` {kk.flat[i]:g} is impossible for a benchmark with cd2 "
            f"{gg.flat[i]:.4g}: the confounder would explain all of the Riesz representer's "
            f"variation (k must be below {1 / gg.flat[i]:.4g})",
            "k_treatment",
        )
    cy2 = ky * gy
    capped = cy2 > 1
    return np.minimum(cy2, 1.0), cd2, capped
