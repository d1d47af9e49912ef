"""The Hodges-Lehmann range of effects under hidden bias (Rosenbaum 1993): order statistics
of the Walsh averages, held in memory for few pairs, counted for many."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import require
from ..common.errors import InputError


def gamma_values(gamma: ArrayLike) -> np.ndarray:
    """Gamma values, each at least 1."""
    g = np.atleast_1d(require(gamma, "gamma")).astype(float)
    if np.any(g < 1):
        raise InputError(f"`gamma` must be at least 1; got {float(g[g < 1][0]):g}", "gamma")
    return g


#: Up to this many pairs the Walsh averages (n (n + 1) / 2 values) are held in memory; above
#: it their order statistics are found by counting, in memory proportional to n.
WALSH_IN_MEMORY = 4000
#: Above WALSH_IN_MEMORY pairs, differences with at most this many distinct values (tied, as
#: rounded measurements are) have their averages listed once per pair of distinct values.
WALSH_DISTINCT = 2000
#: The most pairs the Hodges-Lehmann range takes (about 3 s for 11 Gammas at the most).
MAX_HL_PAIRS = 20_000


def _walsh_cut(d: np.ndarray, x: np.ndarray) -> np.ndarray:
    """For sorted d, per x and i, the first j with (d_i + d_j)/2 > x, judged on the computed
    sums d_i + d_j <= 2x (as the averages in memory compare)."""
    bound = 2 * x[:, None]
    j = np.searchsorted(d, bound - d[None, :], side="right")
    for _ in range(8):  # 2x - d_i is rounded: move j over whole runs of ties until exact
        up = (j < d.size) & (d[None, :] + d[np.minimum(j, d.size - 1)] <= bound)
        down = (j > 0) & (d[None, :] + d[np.maximum(j - 1, 0)] > bound)
        if not (up.any() or down.any()):
            break
        j = np.where(up, np.searchsorted(d, d[np.minimum(j, d.size - 1)], side="right"), j)
        j = np.where(down, np.searchsorted(d, d[np.maximum(j - 1, 0)], side="left"), j)
    return j


def _walsh_count(d: np.ndarray, x: np.ndarray) -> np.ndarray:
    """For sorted d, how many Walsh averages (d_i + d_j)/2, i <= j, are at most each x."""
    return np.maximum(_walsh_cut(d, x) - np.arange(d.size), 0).sum(axis=1)


def _ordered(x: np.ndarray) -> np.ndarray:
    """Doubles as int64 in the same order (adjacent doubles are adjacent integers)."""
    bits = np.asarray(x, np.float64).view(np.int64)
    return np.where(bits < 0, np.int64(-(2**63)) - bits, bits)


def _unordered(k: np.ndarray) -> np.ndarray:
    return np.where(k < 0, np.int64(-(2**63)) - k, k).view(np.float64)


def _walsh_order_statistics(d: np.ndarray, index: np.ndarray) -> np.ndarray:
    """The Walsh averages of rank `index` (0-based, ascending), without forming all of them
    when there are many: bisect on the value (through the doubles' order, so at most 64
    steps), every rank at once, until at most 4n averages lie between the bounds or the
    bounds are adjacent doubles; then list those averages and pick. Equal to sorting them."""
    d = np.sort(np.asarray(d, float))
    n = d.size
    index = np.asarray(index, np.int64)
    if n <= WALSH_IN_MEMORY:
        i, j = np.triu_indices(n)
        return np.partition((d[i] + d[j]) / 2, np.unique(index))[index]
    values, counts = np.unique(d, return_counts=True)
    if values.size <= WALSH_DISTINCT:
        # Tied differences (values rounded as recorded): the averages of distinct values, each
        # as many times as pairs give it (c (c + 1) / 2 within a value, c_a c_b across two)
        i, j = np.triu_indices(values.size)
        averages = (values[i] + values[j]) / 2  # the very doubles the pairs give
        times = np.where(i == j, counts[i] * (counts[i] + 1) // 2, counts[i] * counts[j])
        order = np.argsort(averages, kind="stable")
        reached = np.cumsum(times[order])  # how many averages up to each, in order
        return averages[order][np.searchsorted(reached, index, side="right")]
    k = index + 1  # the k-th smallest is the least x with count(x) >= k
    lo = np.full(k.shape, _ordered(np.nextafter(d[0], -np.inf)))
    hi = np.full(k.shape, _ordered(d[-1]))
    c_lo, c_hi = np.zeros_like(k), np.full_like(k, n * (n + 1) // 2)
    while True:
        busy = (c_hi - c_lo > 4 * n) & (hi - 1 > lo)  # no subtraction of the two: it can overflow
        if not busy.any():
            break
        mid = (lo[busy] >> 1) + (hi[busy] >> 1) + (lo[busy] & hi[busy] & 1)
        c_mid = _walsh_count(d, _unordered(mid))
        up = c_mid >= k[busy]
        sel = np.flatnonzero(busy)
        hi[sel[up]], c_hi[sel[up]] = mid[up], c_mid[up]
        lo[sel[~up]], c_lo[sel[~up]] = mid[~up], c_mid[~up]
    out = _unordered(hi)  # where the bounds are adjacent, every average between is hi
    for m in np.flatnonzero(c_hi - c_lo <= 4 * n):
        cut = _walsh_cut(d, _unordered(np.array([lo[m], hi[m]])))
        first = np.maximum(cut[0], np.arange(n))
        count = np.maximum(cut[1] - first, 0)
        rows = np.repeat(np.arange(n), count)
        cols = np.repeat(first - np.cumsum(count) + count, count) + np.arange(count.sum())
        inside = np.sort((d[rows] + d[cols]) / 2)
        out[m] = inside[k[m] - c_lo[m] - 1]
    return out


def hodges_lehmann_range(differences: ArrayLike, gamma: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """The range of Hodges-Lehmann point estimates of the effect at each Gamma.

    T(tau), the signed-rank statistic of d - tau, counts the Walsh averages (d_i + d_j)/2,
    i <= j, above tau. The estimates solve T(tau) = c with c = p N for p = Gamma/(1 + Gamma)
    (the low end) and 1/(1 + Gamma) (the high end), N = n (n + 1)/2, by Rosenbaum's (1993)
    midpoint convention: (sup{tau: T > c} + inf{tau: T < c}) / 2, which are the Walsh order
    statistics w_(N - floor c) and w_(N - ceil c + 1). At Gamma = 1 both are the usual
    Hodges-Lehmann estimate, the median of the Walsh averages.
    """
    d = np.asarray(differences, float)
    n = d.size
    if n > MAX_HL_PAIRS:
        raise InputError(
            f"the Hodges-Lehmann range takes at most {MAX_HL_PAIRS:,} pairs; got {n:,}"
        )
    total = n * (n + 1) // 2
    g = gamma_values(gamma)
    out = []
    for p in (g / (1 + g), 1 / (1 + g)):
        c = p * total
        hi_idx = np.clip((total - np.floor(c)).astype(int) - 1, 0, total - 1)  # w_(N - floor c)
        lo_idx = np.clip((total - np.ceil(c)).astype(int), 0, total - 1)  # w_(N - ceil c + 1)
        values = _walsh_order_statistics(d, np.concatenate([hi_idx, lo_idx]))
        out.append((values[: g.size] + values[g.size :]) / 2)
    return out[0], out[1]
