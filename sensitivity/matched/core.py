"""Rosenbaum bounds for matched pairs: how much hidden bias (Gamma) the test can withstand.

Within each pair, a hidden confounder may make one unit up to Gamma times as likely to be
the treated one; the probability p that a given unit is treated lies in [1/(1+G), G/(1+G)].

- Sign test (binary outcome): of the D discordant pairs, T have the event in the treated unit;
  the one-sided p-value is bounded above by P(Bin(D, G/(1+G)) >= T) = I_p(T, D - T + 1)
  (regularized incomplete beta) and below by the same at 1/(1+G); the Gamma at which the
  upper bound reaches alpha has a closed form, p* = Beta^-1(alpha; T, D - T + 1),
  Gamma* = p*/(1 - p*).
- Wilcoxon signed rank (continuous outcome): T = the sum of the ranks of |d| over pairs with
  d > 0; the bounding statistic sums rank x Bernoulli(p) over the nonzero pairs. Exact: its
  distribution by convolution of the doubled (integer) ranks; large-sample: the normal with
  mean p sum(q) and variance p (1 - p) sum(q²). Zeros: ranked with the others and then
  contributing nothing (Pratt's convention, the default, which reproduces the lead example)
  or dropped before ranking (Wilcoxon's). Ties get average ranks.

References
----------
Rosenbaum PR (2002). Observational Studies, 2nd ed. Springer, chapter 4.
Rosenbaum PR (1987). Sensitivity analysis for certain permutation inferences in matched
observational studies. Biometrika 74:13-26.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import OPEN_UNIT, require
from ..common.errors import InputError
from .result import MatchedResult

#: The largest doubled-rank total the exact convolution takes (about 450 pairs); beyond it the
#: large-sample bound is the one to use. The convolution costs pairs x total per Gamma.
MAX_EXACT_SUM = 200_000


def _gammas(gamma: ArrayLike) -> np.ndarray:
    g = np.atleast_1d(require(gamma, "gamma")).astype(float)
    if np.any(g < 1):
        raise InputError(f"`gamma` must be at least 1; got {float(g[g < 1][0]):g}")
    return g


def sign_test_bounds(discordant: int, treated_events: int, gamma: ArrayLike, *,
                     method: str = "exact", continuity: bool = False
                     ) -> tuple[np.ndarray, np.ndarray]:  # fmt: skip
    """Upper and lower bounds on the one-sided p-value of the sign test at each Gamma
    (`continuity`: the large-sample bound with T - 1/2, as Rosenbaum's tables print it)."""
    from scipy.special import betainc, ndtr

    d, k = discordant, treated_events
    g = _gammas(gamma)
    hi, lo = g / (1 + g), 1 / (1 + g)
    if method == "exact":
        upper = betainc(k, d - k + 1, hi) if k > 0 else np.ones_like(g)
        lower = betainc(k, d - k + 1, lo) if k > 0 else np.ones_like(g)
        return np.asarray(upper), np.asarray(lower)
    kc = k - 0.5 if continuity else k
    upper = 1 - ndtr((kc - d * hi) / np.sqrt(d * hi * lo))
    lower = 1 - ndtr((kc - d * lo) / np.sqrt(d * hi * lo))
    return np.asarray(upper), np.asarray(lower)


def sign_test_gamma(discordant: int, treated_events: int, alpha: float) -> float | None:
    """The Gamma at which the exact upper bound reaches alpha (None if not significant at 1)."""
    from scipy.special import betaincinv

    d, k = discordant, treated_events
    if k == 0 or sign_test_bounds(d, k, 1.0)[0][0] >= alpha:
        return None
    p = float(betaincinv(k, d - k + 1, alpha))
    return p / (1 - p)


def ranks(differences: ArrayLike, zeros: str = "pratt") -> tuple[np.ndarray, np.ndarray]:
    """Average ranks of |d| (by the zero convention) and the signs of the nonzero pairs."""
    from scipy.stats import rankdata

    d = np.asarray(differences, float)
    if zeros == "drop":
        d = d[d != 0]
    q = rankdata(np.abs(d))
    keep = d != 0
    return q[keep], np.sign(d[keep])


def _tail_exact(q: np.ndarray, t: float, p: np.ndarray) -> np.ndarray:
    """P(sum q_s W_s >= t) by convolution over the doubled integer ranks (Pagano & Tritchler
    1983, as Rosenbaum uses it)."""
    qi = np.rint(2 * q).astype(np.int64)
    total = int(qi.sum())
    if total > MAX_EXACT_SUM:
        raise InputError(
            f"the exact signed-rank bound needs a distribution over {total:,} values (too many "
            "pairs); use method normal"
        )
    ti = int(np.ceil(2 * t - 1e-9))
    pj = np.asarray(p, float)[:, None]
    dist = np.zeros((len(pj), total + 1))
    dist[:, 0] = 1.0
    top = 0
    for step in qi:  # one pair at a time: every Gamma at once
        shifted = dist[:, : top + 1].copy()
        dist[:, : top + 1] *= 1 - pj
        dist[:, step : step + top + 1] += pj * shifted
        top += int(step)
    return dist[:, ti:].sum(axis=1)


def signed_rank_bounds(differences: ArrayLike, gamma: ArrayLike, *, method: str = "exact",
                       zeros: str = "pratt") -> tuple[float, np.ndarray, np.ndarray]:  # fmt: skip
    """The signed-rank statistic and the upper and lower bounds on its one-sided p-value."""
    from scipy.special import ndtr

    q, sign = ranks(differences, zeros)
    t = float(q[sign > 0].sum())
    g = _gammas(gamma)
    hi, lo = g / (1 + g), 1 / (1 + g)
    if method == "exact":
        return t, _tail_exact(q, t, hi), _tail_exact(q, t, lo)
    s1, s2 = q.sum(), np.square(q).sum()
    upper = 1 - ndtr((t - hi * s1) / np.sqrt(hi * lo * s2))
    lower = 1 - ndtr((t - lo * s1) / np.sqrt(hi * lo * s2))
    return t, np.asarray(upper), np.asarray(lower)


#: The most pairs whose Walsh averages the Hodges-Lehmann range uses (n (n + 1) / 2 values).
MAX_HL_PAIRS = 4000


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
    i, j = np.triu_indices(n)
    walsh = (d[i] + d[j]) / 2
    total = walsh.size
    g = _gammas(gamma)
    out = []
    for p in (g / (1 + g), 1 / (1 + g)):
        c = p * total
        hi_idx = (total - np.floor(c)).astype(int) - 1  # 0-based w_(N - floor c)
        lo_idx = (total - np.ceil(c)).astype(int)  # 0-based w_(N - ceil c + 1)
        idx = np.unique(np.clip(np.concatenate([hi_idx, lo_idx]), 0, total - 1))
        part = np.partition(walsh, idx)
        out.append((part[np.clip(hi_idx, 0, total - 1)] + part[np.clip(lo_idx, 0, total - 1)]) / 2)
    return out[0], out[1]


def _gamma_at(alpha: float, upper_at: object) -> float | None:
    """The Gamma at which an increasing upper bound reaches alpha (Brent's method in log Gamma,
    to 1e-12 there: a dozen evaluations of the bound where bisection took eighty)."""
    from scipy.optimize import brentq

    f = upper_at  # type: ignore[assignment]
    if f(1.0) >= alpha:  # type: ignore[operator]
        return None
    top = float(np.log(1e6))
    if f(1e6) < alpha:  # type: ignore[operator]
        return float("inf")
    root = brentq(lambda x: f(float(np.exp(x))) - alpha, 0.0, top, xtol=1e-12, rtol=1e-14)  # type: ignore[operator]
    return float(np.exp(root))


def rosenbaum_bounds(
    *,
    differences: ArrayLike | None = None,
    discordant: int | None = None,
    treated_events: int | None = None,
    gamma: ArrayLike = (1, 1.5, 2, 2.5, 3, 4, 5, 6),
    alpha: float = 0.05,
    method: str = "exact",
    zeros: str = "pratt",
    continuity: bool = False,
    missing: int = 0,
) -> MatchedResult:
    """Rosenbaum bounds on the one-sided p-value over a range of Gamma, and the Gamma at which
    the upper bound reaches alpha.

    Give `differences` (treated minus control, one a pair) for the signed-rank test, or
    `discordant` and `treated_events` for the sign test of a binary outcome.

    Examples
    --------
    The sign test with 122 discordant pairs, 110 of them in the smoker's disfavour (recalled
    from Rosenbaum 2002, chapter 4): sensitive between Gamma 5 and 6.

    >>> res = rosenbaum_bounds(discordant=122, treated_events=110, gamma=[5, 6])
    >>> 5 < res.gamma_at_alpha < 6
    True
    """
    alpha = float(require(alpha, "alpha", OPEN_UNIT))
    if method not in ("exact", "normal"):
        raise InputError(f"`method` must be exact or normal; got {method!r}")
    if zeros not in ("pratt", "drop"):
        raise InputError(f"`zeros` must be pratt or drop; got {zeros!r}")
    g = _gammas(gamma)
    if differences is not None:
        if discordant is not None or treated_events is not None:
            raise InputError("give `differences`, or `discordant` and `treated_events`, not both")
        d = np.asarray(require(differences, "differences"), float).ravel()
        if d.size < 2:
            raise InputError(f"`differences` must hold at least two pairs; got {d.size}")
        if not np.any(d != 0):
            raise InputError("`differences` are all zero: the test has nothing to rank")
        t, upper, lower = signed_rank_bounds(d, g, method=method, zeros=zeros)
        q, _ = ranks(d, zeros)

        def at(x: float) -> float:
            return float(signed_rank_bounds(d, x, method=method, zeros=zeros)[1][0])

        hl = hodges_lehmann_range(d, g) if d.size <= MAX_HL_PAIRS else (None, None)
        return MatchedResult(
            test="signed-rank", pairs=int(d.size), statistic=t, alpha=alpha, method=method,
            zeros=zeros, gamma=g, p_upper=upper, p_lower=lower,
            gamma_at_alpha=_gamma_at(alpha, at), zero_pairs=int(np.sum(d == 0)),
            missing=missing, estimate_low=hl[0], estimate_high=hl[1],
        )  # fmt: skip
    if discordant is None or treated_events is None:
        raise InputError("give `differences`, or `discordant` and `treated_events`")
    dd, k = int(discordant), int(treated_events)
    if dd < 2:
        raise InputError(f"`discordant` must be at least 2 pairs; got {dd}")
    if not 0 <= k <= dd:
        raise InputError(f"`treated_events` must lie between 0 and `discordant` ({dd}); got {k}")
    upper, lower = sign_test_bounds(dd, k, g, method=method, continuity=continuity)
    if method == "exact":
        star = sign_test_gamma(dd, k, alpha)
    else:
        star = _gamma_at(
            alpha,
            lambda x: float(sign_test_bounds(dd, k, x, method=method, continuity=continuity)[0][0]),
        )
    return MatchedResult(
        test="sign", pairs=dd, statistic=float(k), alpha=alpha, method=method, zeros=None,
        gamma=g, p_upper=upper, p_lower=lower, gamma_at_alpha=star, zero_pairs=0,
        missing=missing,
    )  # fmt: skip
