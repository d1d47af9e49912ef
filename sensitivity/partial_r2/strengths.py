"""Strengths of a confounder k times as strong as an observed covariate (Cinelli & Hazlett
2020, section 4.4), and the largest k that exists.

References
----------
Cinelli C, Hazlett C (2020). Making sense of sensitivity: extending omitted variable bias.
Journal of the Royal Statistical Society, Series B 82:39-67.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import POSITIVE, R2_STRENGTH, require
from ..common.errors import InputError


def benchmark_strengths(
    r2_treatment_cov: ArrayLike,
    r2_outcome_cov: ArrayLike,
    k_treatment: ArrayLike = 1.0,
    k_outcome: ArrayLike | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Strengths of a confounder k times as strong as an observed covariate (or group).

    Parameters
    ----------
    r2_treatment_cov : array_like
        Partial R² of the covariate with the treatment, given the other covariates.
    r2_outcome_cov : array_like
        Partial R² of the covariate with the outcome, given treatment and other covariates.
    k_treatment, k_outcome : array_like
        Multipliers on the treatment and outcome sides (`k_outcome` defaults to
        `k_treatment`).

    Returns
    -------
    (r2_treatment, r2_outcome, capped) : tuple of ndarray
        `capped` flags an outcome-side bound that reached 1 and was capped there.

    Notes
    -----
    ``R2_t = k_t r_t / (1 - r_t)``; ``rho² = k_t r_t² / ((1 - k_t r_t)(1 - r_t))``;
    ``R2_y = ((sqrt(k_y) + sqrt(rho²)) / sqrt(1 - rho²))² r_y / (1 - r_y)``, capped at 1.
    Assumes the confounder is orthogonal to the covariate given the other covariates.

    References
    ----------
    Cinelli & Hazlett (2020), JRSS-B 82:39, section 6 (bounds from observed covariates).
    """
    rt = require(r2_treatment_cov, "r2_treatment_cov", R2_STRENGTH)
    ry = require(r2_outcome_cov, "r2_outcome_cov", R2_STRENGTH)
    kt = require(k_treatment, "k_treatment", POSITIVE)
    ky = kt if k_outcome is None else require(k_outcome, "k_outcome", POSITIVE)
    r2t = kt * rt / (1 - rt)
    with np.errstate(divide="ignore", invalid="ignore"):
        rho2 = kt * rt**2 / ((1 - kt * rt) * (1 - rt))
    bad = (r2t >= 1) | (rho2 >= 1) | (rho2 < 0)
    if np.any(bad):
        kk, rr = np.broadcast_arrays(kt, rt)
        i = np.flatnonzero(np.broadcast_to(bad, kk.shape))[0]
        raise InputError(
            f"`k_treatment` {kk.flat[i]:g} is impossible for a covariate with partial R² "
            f"{rr.flat[i]:.4g} with the treatment: the confounder would explain all of the "
            f"treatment's residual variance (k must be below {_k_max(rr.flat[i]):.4g})",
            "k_treatment",
        )
    r2y = (np.sqrt(ky) + np.sqrt(rho2)) ** 2 / (1 - rho2) * ry / (1 - ry)
    capped = r2y > 1
    return r2t, np.minimum(r2y, 1.0), capped


def _k_max(r):
    """Largest k_t for which both R2_t < 1 and rho² < 1 (Cinelli & Hazlett 2020)."""
    if r <= 0:
        return float("inf")
    # R2_t < 1 needs k < (1 - r) / r; rho² < 1 needs k r² < (1 - k r)(1 - r),
    # i.e. k < (1 - r) / (r² + r (1 - r)) = (1 - r) / r as well: one bound.
    return (1 - r) / r
