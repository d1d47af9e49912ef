"""The small models the weighting family refits in every resample: a logistic regression
(Newton's method), a linear quantile regression (smoothed check loss), and the atom split
that balances a binary outcome's weights. numpy and scipy.special only."""

from __future__ import annotations

import numpy as np


def logistic_fit(
    x: np.ndarray,
    a: np.ndarray,
    weights: np.ndarray | None = None,
    start: np.ndarray | None = None,
    iterations: int = 50,
    tol: float = 1e-10,
    information: np.ndarray | None = None,
) -> tuple[np.ndarray, bool]:
    """Maximum-likelihood logistic regression by Newton's method (IRLS): (coefficients,
    converged). `weights` are frequencies; the design `x` carries its own intercept.

    With `information` (the full sample's X'WX, for a bootstrap resample started at the full
    sample's fit), the steps use that fixed matrix: a resample's own differs from it by
    sampling error only, so the steps shrink fast without forming X'WX again (the costly
    part), to the same maximum (where the score is zero); full Newton steps take over if
    they do not."""
    from scipy.special import expit

    n, p = x.shape
    w = np.ones(n) if weights is None else np.asarray(weights, float)
    beta = np.zeros(p) if start is None else np.array(start, float)
    if information is not None:
        xt = np.ascontiguousarray(x.T)  # rows of covariates: both products run along memory
        for _ in range(30):
            step = np.linalg.solve(information, xt @ (w * (a - expit(beta @ xt))))
            beta = beta + step
            if not np.all(np.isfinite(beta)):
                beta = np.array(start, float)
                break
            if np.max(np.abs(step)) < 1e-3 * tol * (1 + np.max(np.abs(beta))):
                return beta, True  # the same fixed point as Newton's (the score is zero)
    for _ in range(iterations):
        pr = expit(x @ beta)
        grad = x.T @ (w * (a - pr))
        info = (x * (w * pr * (1 - pr))[:, None]).T @ x
        try:
            step = np.linalg.solve(info + 1e-12 * np.eye(p), grad)
        except np.linalg.LinAlgError:
            return beta, False
        beta = beta + step
        if not np.all(np.isfinite(beta)):
            return beta, False
        if np.max(np.abs(step)) < tol * (1 + np.max(np.abs(beta))):
            return beta, True
    return beta, False


def _ncdf(z: np.ndarray) -> np.ndarray:
    from scipy.special import ndtr

    return ndtr(z)


def quantile_fit(
    x: np.ndarray,
    y: np.ndarray,
    tau: float,
    *,
    weights: np.ndarray | None = None,
    bandwidth: float | None = None,
    start: np.ndarray | None = None,
) -> np.ndarray:
    """Linear τ-quantile regression of y on x: the check loss smoothed by a Gaussian kernel
    of width h, minimised by Newton steps with backtracking (He, Pan, Tan & Zhou 2023).

    h defaults to s·max(0.05, ((p + log n)/n)^(1/4)), s = 1.4826·MAD of the least-squares
    residuals (this project's choice of scale). The loss per unit is
    h·φ(r/h) + r·(τ - Φ(-r/h)); its gradient τ - Φ(-r/h), its curvature φ(r/h)/h.
    """
    n, p = x.shape
    w = np.ones(n) if weights is None else np.asarray(weights, float)
    sw = np.sqrt(w)
    if start is None or bandwidth is None:
        ls = np.linalg.lstsq(x * sw[:, None], y * sw, rcond=None)[0]
        resid = y - x @ ls
    if bandwidth is None:
        mad = _weighted_quantile(np.abs(resid - _weighted_quantile(resid, w, 0.5)), w, 0.5)
        scale = 1.4826 * mad if mad > 0 else (np.std(resid) or 1.0)
        bandwidth = scale * max(0.05, ((p + np.log(max(n, 2))) / max(n, 2)) ** 0.25)
    h = float(bandwidth)
    if start is None:
        beta = ls.copy()
        beta[0] += _weighted_quantile(resid, w, tau)  # the design's first column is 1
    else:
        beta = np.array(start, float)

    root = np.sqrt(2 * np.pi)
    ridge = 1e-10 * max(1.0, float(w.sum())) * np.eye(p)

    def state(b: np.ndarray) -> tuple:
        """Residuals, Φ(-r/h), φ(r/h) and the smoothed loss at b (each computed once)."""
        r = y - x @ b
        z = r / h
        cdf = _ncdf(-z)
        pdf = np.exp(-0.5 * z * z) / root
        return r, cdf, pdf, float((w * (h * pdf + r * (tau - cdf))).sum())

    r, cdf, pdf, current = state(beta)
    for _ in range(100):
        grad = -(x.T @ (w * (tau - cdf)))
        hess = (x * (w * pdf / h)[:, None]).T @ x + ridge
        step = np.linalg.solve(hess, grad)
        t = 1.0
        while True:
            trial = beta - t * step
            new = state(trial)
            if new[3] <= current + 1e-12 * abs(current) or t < 1e-8:
                break
            t /= 2
        done = np.max(np.abs(t * step)) < 1e-8 * (1 + np.max(np.abs(beta)))
        beta = trial
        r, cdf, pdf, current = new
        if done:
            break
    return beta


def _weighted_quantile(v: np.ndarray, w: np.ndarray, q: float) -> float:
    """The lower q-quantile of v with frequency weights w."""
    order = np.argsort(v)
    cw = np.cumsum(w[order])
    i = int(np.searchsorted(cw, q * cw[-1], side="left"))
    return float(v[order][min(i, v.size - 1)])


def split_atom(p: np.ndarray, lam: float) -> tuple[np.ndarray, np.ndarray]:
    """Quantile balancing for a binary outcome: (v at the favoured value, v at the other)
    maximising E[v·1{favoured}] subject to E[v] = 1 and v in [1/Λ, Λ], where p is the
    favoured value's probability. The atom at the quantile is split so that E[v] = 1."""
    p = np.asarray(p, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        low = p <= 1 / (1 + lam)
        fav = np.where(low, lam, (1 - (1 - p) / lam) / np.where(p > 0, p, 1))
        other = np.where(low, (1 - p * lam) / np.where(p < 1, 1 - p, 1), 1 / lam)
    return fav, other


def _expit(z: np.ndarray) -> np.ndarray:
    from scipy.special import expit

    return expit(z)


def _bandwidth(x: np.ndarray, y: np.ndarray) -> float:
    n, p = x.shape
    ls = np.linalg.lstsq(x, y, rcond=None)[0]
    resid = y - x @ ls
    mad = float(np.median(np.abs(resid - np.median(resid))))
    scale = 1.4826 * mad if mad > 0 else (float(np.std(resid)) or 1.0)
    return scale * max(0.05, ((p + np.log(max(n, 2))) / max(n, 2)) ** 0.25)
