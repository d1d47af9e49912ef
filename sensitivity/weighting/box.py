"""Box bounds: the extremes of a Hájek mean when every weight may move within its box
b + c·v, v in [1/Λ, Λ] (Zhao, Small & Bhattacharya 2019), by prefix sums on the outcome's
order and Dinkelbach's iteration, vectorised over Λ. See `sensitivity.weighting.core`."""

from __future__ import annotations

import numpy as np

_CHUNK = 1 << 21  # cells of a (units x Λ) table computed at once in the full scan


def box_weights(e: np.ndarray, treated: np.ndarray, estimand: str) -> tuple[np.ndarray, ...]:
    """(b, c) of every unit's weight b + c·v, v in [1/Λ, Λ] (see the module)."""
    e = np.asarray(e, float)
    treated = np.asarray(treated, bool)
    odds = e / (1 - e)
    if estimand == "ate":
        b = np.ones_like(e)
        c = np.where(treated, 1 / odds, odds)
    else:
        b = np.where(treated, 1.0, 0.0)
        c = np.where(treated, 0.0, odds)
    return b, c


def _sums(y: np.ndarray, b: np.ndarray, c: np.ndarray, m: np.ndarray | None) -> tuple:
    """The Λ-free sums of one arm sorted by outcome, descending: Σ b y, Σ b, P_k, Q_k."""
    mb = b if m is None else m * b
    mc = c if m is None else m * c
    p = np.empty(y.size + 1)
    p[0] = 0.0
    np.cumsum(mc * y, out=p[1:])
    q = np.empty(y.size + 1)
    q[0] = 0.0
    np.cumsum(mc, out=q[1:])
    return float((mb * y).sum()), float(mb.sum()), p, q


def _value(sums: tuple, k: np.ndarray, lam: np.ndarray, top: np.ndarray) -> np.ndarray:
    """The Hájek mean when the k largest outcomes take v = top and the rest 1/top·... (see
    `_extreme`): `top` is Λ for the maximum and 1/Λ for the minimum."""
    by, bs, p, q = sums
    pk, qk = p[k], q[k]
    return (by + top * pk + (p[-1] - pk) / top) / (bs + top * qk + (q[-1] - qk) / top)


def _extreme(
    y_desc: np.ndarray, sums: tuple, lam: np.ndarray, upper: bool, start: np.ndarray
) -> np.ndarray:
    """max (or min) of the arm's Hájek mean over the box, for every Λ (Dinkelbach on the
    prefix sums). `y_desc` is the arm's outcomes sorted descending."""
    top = lam if upper else 1 / lam
    neg = -y_desc  # ascending, for searchsorted
    mu = start
    k = np.searchsorted(neg, -mu, side="left")  # k(μ) = #{y > μ}
    for _ in range(200):
        mu = _value(sums, k, lam, top)
        k_new = np.searchsorted(neg, -mu, side="left")
        if np.array_equal(k_new, k):
            return mu
        k = k_new
    return _scan(sums, lam, upper)  # pragma: no cover - Dinkelbach ends in a few steps


def _scan(sums: tuple, lam: np.ndarray, upper: bool) -> np.ndarray:
    """The same extremum by scanning every threshold k = 0..n (the reference route)."""
    n = sums[2].size
    out = np.empty(lam.size)
    step = max(1, _CHUNK // max(n, 1))
    for s in range(0, lam.size, step):
        part = lam[s : s + step]
        top = part if upper else 1 / part
        k = np.arange(n)[:, None]
        values = _value(sums, k, part[None, :], top[None, :])
        out[s : s + step] = values.max(0) if upper else values.min(0)
    return out


def box_bounds(
    y: np.ndarray,
    b: np.ndarray,
    c: np.ndarray,
    lam: np.ndarray,
    *,
    weights: np.ndarray | None = None,
    scan: bool = False,
) -> tuple[np.ndarray, np.ndarray]:
    """Least and greatest Σ w y / Σ w over w_i = b_i + c_i·v_i, v_i in [1/Λ, Λ], for every Λ.

    `weights` are frequencies (a bootstrap's counts). `scan=True` scans every threshold
    instead of Dinkelbach's iteration (the two agree; tests compare them with enumeration).

    Examples
    --------
    >>> lo, hi = box_bounds(np.array([1.0, 0.0]), np.ones(2), np.ones(2), np.array([1.0, 3.0]))
    >>> lo.round(4).tolist(), hi.round(4).tolist()
    ([0.5, 0.25], [0.5, 0.75])
    """
    y = np.asarray(y, float)
    order = np.argsort(-y, kind="stable")
    y_desc = y[order]
    m = None if weights is None else np.asarray(weights, float)[order]
    sums = _sums(y_desc, np.asarray(b, float)[order], np.asarray(c, float)[order], m)
    lam = np.atleast_1d(np.asarray(lam, float))
    if scan:
        return _scan(sums, lam, False), _scan(sums, lam, True)
    start = np.full(lam.shape, (sums[0] + sums[2][-1]) / (sums[1] + sums[3][-1]))
    return _extreme(y_desc, sums, lam, False, start), _extreme(y_desc, sums, lam, True, start)
