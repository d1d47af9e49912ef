"""Confounding in a random-effects meta-analysis: the share of meaningfully strong effects.

The confounded true effects of the studies, on the log risk-ratio scale, are taken as
N(mu, tau^2), estimated by the pooled mu_hat and tau_hat (see `data.pool`). A common bias
factor B (the risk-ratio scale bias of every study, log B on the log scale) is removed from
each, and the share of true effects beyond a meaningful threshold q is

    apparently causative (mu_hat > 0):  p(q, B) = 1 - Phi((q + log B - mu_hat) / tau_hat)
    apparently preventive (mu_hat < 0): p(q, B) = Phi((q - log B - mu_hat) / tau_hat)

with the least common bias factor that brings the share down to r,

    T(r, q) = exp(z_{1-r} tau_hat - q + mu_hat)   (causative)
    T(r, q) = exp(q - mu_hat + z_{1-r} tau_hat)   (preventive),

and the least confounding strength (both risk ratios equal) that could produce it,
G = T + sqrt(T^2 - T). Standard errors by the delta method from Var(mu_hat) and Var(tau_hat).
With bias that varies between studies, log B_i ~ N(log B, sigma_B^2) independent of the true
effects, tau_hat is replaced by sqrt(tau_hat^2 - sigma_B^2).

Reference: Mathur MB, VanderWeele TJ (2020). Sensitivity analysis for unmeasured confounding
in meta-analyses. Journal of the American Statistical Association 115:163-172.

numpy and scipy.special only (scipy.stats is not needed).
"""

from __future__ import annotations

import numpy as np
from scipy.special import ndtr, ndtri

from ..common.checks import AT_LEAST_ONE, OPEN_UNIT, POSITIVE, require
from ..common.errors import InputError

#: Directions of the pooled effect: effects above q (ratio > 1), or below q (ratio < 1).
CAUSATIVE, PREVENTIVE = "above", "below"
DIRECTIONS = (CAUSATIVE, PREVENTIVE)


def _phi(z: np.ndarray) -> np.ndarray:
    """The standard normal density."""
    return np.exp(-0.5 * z * z) / np.sqrt(2 * np.pi)


def direction_of(mu: float) -> str:
    """ "above" for an apparently causative pooled effect (mu >= 0), else "below"."""
    return CAUSATIVE if mu >= 0 else PREVENTIVE


def _sign(direction: str) -> float:
    if direction not in DIRECTIONS:
        raise InputError(
            f"`direction` must be one of {', '.join(DIRECTIONS)}; got {direction!r}", "direction"
        )
    return 1.0 if direction == CAUSATIVE else -1.0


def _spread(tau: object, bias_sd: object) -> np.ndarray:
    """sqrt(tau^2 - sigma_B^2): the spread of the true effects once the bias is removed."""
    tau = np.asarray(tau, float)
    sd = np.asarray(bias_sd, float)
    if np.any(sd < 0) or np.any(~np.isfinite(sd)):
        raise InputError(
            f"`bias_sd` must be a finite number, 0 or more; got {float(np.max(sd)):g}", "bias_sd"
        )
    if np.any((sd > 0) & (sd >= tau)):
        raise InputError(
            f"`bias_sd` must be less than the estimated spread of the effects tau "
            f"({float(np.min(tau)):.4g} on the log scale); got {float(np.max(sd)):g}",
            "bias_sd",
        )
    return np.sqrt(np.maximum(tau * tau - sd * sd, 0.0))


def share_beyond(
    mu: object, tau: object, q: object, bias: object = 1.0, direction: str = CAUSATIVE,
    bias_sd: object = 0.0,
) -> np.ndarray:  # fmt: skip
    """The share of true effects beyond `q` once a common bias factor `bias` is removed.

    Parameters
    ----------
    mu, tau : array_like
        The pooled log estimate and the estimated spread (SD) of the effects, log scale.
    q : array_like
        The meaningful threshold on the log scale (log 1.1, say).
    bias : array_like
        The bias factor B (risk-ratio scale, at least 1); for bias that varies between
        studies, the geometric mean exp(E log B_i).
    direction : {"above", "below"}
        Effects above `q` (an apparently causative pooled effect) or below it.
    bias_sd : float
        The SD of log B_i between studies (0: the same bias in every study).

    Returns
    -------
    ndarray
        The share, in [0, 1]. With no spread left (tau = bias_sd = 0) it is 0 or 1; exactly at
        the threshold, 0 (the share is of effects strictly beyond q).

    Examples
    --------
    >>> round(float(share_beyond(np.log(1.4), 0.2, np.log(1.1), bias=1.0)), 4)
    0.8861
    """
    s = _sign(direction)
    mu, q = np.asarray(mu, float), np.asarray(q, float)
    logb = np.log(require(bias, "bias", AT_LEAST_ONE))
    spread = _spread(tau, bias_sd)
    margin = s * (mu - s * logb - q)  # how far the bias-corrected centre lies beyond q
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(spread > 0, margin / np.where(spread > 0, spread, 1.0), 0.0)
    degenerate = np.where(margin > 0, 1.0, 0.0)
    return np.where(spread > 0, ndtr(z), degenerate)


def share_se(
    mu: object, tau: object, var_mu: object, var_tau: object, q: object, bias: object = 1.0,
    direction: str = CAUSATIVE, bias_sd: object = 0.0,
) -> np.ndarray:  # fmt: skip
    """Delta-method standard error of `share_beyond` from Var(mu_hat) and Var(tau_hat).

    SE = phi(z) sqrt(Var(mu)/s^2 + z^2 tau^2 Var(tau)/s^4), with s = sqrt(tau^2 - sigma_B^2)
    and z the standardised distance of the bias-corrected centre from q (with sigma_B = 0,
    Mathur & VanderWeele 2020: phi(z) sqrt(Var(mu) + z^2 Var(tau)) / tau). NaN where no
    spread is left (the share is then 0 or 1 and the delta method does not apply).

    Examples
    --------
    >>> round(float(share_se(np.log(1.4), 0.2, 0.01, 0.004, np.log(1.1))), 4)
    0.1213
    """
    s = _sign(direction)
    mu, q = np.asarray(mu, float), np.asarray(q, float)
    tau = np.asarray(tau, float)
    logb = np.log(require(bias, "bias", AT_LEAST_ONE))
    spread = _spread(tau, bias_sd)
    ok = spread > 0
    sp = np.where(ok, spread, 1.0)
    z = s * (mu - s * logb - q) / sp
    var = np.asarray(var_mu, float) / sp**2 + z**2 * tau**2 * np.asarray(var_tau, float) / sp**4
    return np.where(ok, _phi(z) * np.sqrt(var), np.nan)


def bias_to_reduce(
    mu: object, tau: object, q: object, r: object, direction: str = CAUSATIVE,
    bias_sd: object = 0.0,
) -> np.ndarray:  # fmt: skip
    """The common bias factor T at which the share beyond `q` equals `r` (not truncated).

    T = exp(s (mu - q) + z_{1-r} sqrt(tau^2 - sigma_B^2)) with s = +1 above, -1 below. A value
    below 1 means the share is already at most `r` with no bias at all (the caller reports 1).

    Examples
    --------
    >>> round(float(bias_to_reduce(np.log(1.4), 0.2, np.log(1.1), 0.1)), 4)
    1.6446
    """
    s = _sign(direction)
    r = require(r, "share", OPEN_UNIT)
    spread = _spread(tau, bias_sd)
    with np.errstate(over="ignore"):
        out = np.exp(s * (np.asarray(mu, float) - np.asarray(q, float)) - ndtri(r) * spread)
    if np.any(~np.isfinite(out) | (out > 1e100)):
        raise InputError(
            "`threshold` is so far from the pooled estimate that the bias needed leaves the "
            "range this analysis can show; give a threshold on the estimates' scale",
            "threshold",
        )
    return out


def bias_to_reduce_se(
    threshold_bias: object, tau: object, var_mu: object, var_tau: object, r: object,
    bias_sd: object = 0.0,
) -> np.ndarray:  # fmt: skip
    """Delta-method SE of T: T sqrt(Var(mu) + z_{1-r}^2 (tau/s)^2 Var(tau)).

    With sigma_B = 0 this is Mathur & VanderWeele's T sqrt(Var(mu) + z_{1-r}^2 Var(tau)).
    """
    t = np.asarray(threshold_bias, float)
    tau = np.asarray(tau, float)
    spread = _spread(tau, bias_sd)
    zr = -ndtri(require(r, "share", OPEN_UNIT))
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(spread > 0, tau / np.where(spread > 0, spread, 1.0), 1.0)
    return t * np.sqrt(np.asarray(var_mu, float) + zr**2 * ratio**2 * np.asarray(var_tau, float))


def strength_of_bias(bias: object) -> np.ndarray:
    """The least equal pair of confounding risk ratios whose bounding factor is `bias`:
    G = B + sqrt(B^2 - B) (the E-value formula applied to B; B at least 1).

    >>> round(float(strength_of_bias(2.0)), 4)
    3.4142
    """
    b = require(bias, "bias", AT_LEAST_ONE)
    return b + np.sqrt(b) * np.sqrt(b - 1)


def strength_se(bias: object, bias_se: object) -> np.ndarray:
    """Delta-method SE of G: SE(T) (1 + (2T - 1) / (2 sqrt(T^2 - T))); NaN at T = 1."""
    t = np.asarray(bias, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = 1 + (2 * t - 1) / (2 * np.sqrt(t * t - t))
    return np.where(t > 1, np.asarray(bias_se, float) * slope, np.nan)


# --------------------------------------------------------------------------- heterogeneity
def tau2_variance(var: object, tau2: float, method: str) -> float:
    """Var(tau_hat^2) for the DerSimonian-Laird or Paule-Mandel estimate at `tau2`.

    - "dl": Var(Q)/c^2 with c = S1 - S2/S1 in the fixed-effect weights w = 1/v and
      Var(Q) = 2(k - 1) + 4 (S1 - S2/S1) tau^2 + 2 (S2 - 2 S3/S1 + S2^2/S1^2) tau^4
      (Biggerstaff & Tweedie 1997).
    - "pm": the estimating equation sum w(tau^2) (y - mu(tau^2))^2 = k - 1, with
      w = 1/(v + tau^2): its left side is chi-square on k - 1 df at the true tau^2 and its
      expected slope in tau^2 is -(S1 - S2/S1) in those weights, so
      Var(tau_hat^2) = 2 (k - 1) / (S1 - S2/S1)^2 (delta method on the estimating equation).

    Both are large-sample values at the estimate; tests/test_pooling.py checks them by
    simulation.
    """
    v = np.asarray(var, float)
    k = v.size
    if method == "dl":
        w = 1 / v
        s1, s2, s3 = w.sum(), (w**2).sum(), (w**3).sum()
        c = s1 - s2 / s1
        var_q = 2 * (k - 1) + 4 * c * tau2 + 2 * (s2 - 2 * s3 / s1 + s2**2 / s1**2) * tau2**2
        return float(var_q / c**2)
    if method == "pm":
        w = 1 / (v + tau2)
        s1, s2 = w.sum(), (w**2).sum()
        return float(2 * (k - 1) / (s1 - s2 / s1) ** 2)
    raise InputError(f"`method` must be one of dl, pm; got {method!r}", "method")


def tau_variance(tau2: float, var_tau2: float) -> float:
    """Var(tau_hat) = Var(tau_hat^2) / (4 tau_hat^2) (delta method); NaN at tau_hat = 0."""
    return float(var_tau2 / (4 * tau2)) if tau2 > 0 else float("nan")


def check_studies(log_estimates: object, se: object) -> tuple[np.ndarray, np.ndarray]:
    """Log estimates and standard errors as 1-d arrays, at least two, se positive."""
    y = np.atleast_1d(require(log_estimates, "log_estimates")).astype(float).ravel()
    s = np.atleast_1d(require(se, "se", POSITIVE)).astype(float).ravel()
    if y.size != s.size:
        raise InputError(
            f"`se` must have one value per study; got {s.size} for {y.size} log estimates", "se"
        )
    if y.size < 2:
        raise InputError(
            f"`log_estimates` must hold at least 2 studies to pool; got {y.size}", "log_estimates"
        )
    return y, s


__all__ = [
    "CAUSATIVE",
    "DIRECTIONS",
    "PREVENTIVE",
    "bias_to_reduce",
    "bias_to_reduce_se",
    "check_studies",
    "direction_of",
    "share_beyond",
    "share_se",
    "strength_of_bias",
    "strength_se",
    "tau2_variance",
    "tau_variance",
]
