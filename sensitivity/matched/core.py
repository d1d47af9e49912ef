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

from collections.abc import Callable, Iterable

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import require, require_scalar
from ..common.errors import InputError
from ..common.levels import check_alpha
from .result import MatchedResult
from .walsh import MAX_HL_PAIRS, gamma_values, hodges_lehmann_range

#: Up to this many operations (pairs x doubled-rank total, about 400 pairs) the exact
#: distribution comes from the direct convolution; above it, from its Fourier transform, which
#: is then the faster (measured: 45 ms against 3 ms a Gamma at 500 pairs).
DIRECT_WORK = 60_000_000

#: The most pairs the exact signed-rank bound takes: the Fourier route's coarse grid grows as
#: pairs^1.5 (measured, 11 Gammas and the crossing: 10,000 pairs 2 s, 30,000 pairs 9 s,
#: 150,000 pairs a minute); beyond it the large-sample bound is the one to use.
MAX_EXACT_PAIRS = 30_000


def sign_test_bounds(discordant: int, treated_events: int, gamma: ArrayLike, *,
                     method: str = "exact", continuity: bool = False
                     ) -> tuple[np.ndarray, np.ndarray]:  # fmt: skip
    """Upper and lower bounds on the one-sided p-value of the sign test at each Gamma
    (`continuity`: the large-sample bound with T - 1/2, as Rosenbaum's tables print it)."""
    from ..common.numeric import normal_cdf

    d, k = discordant, treated_events
    g = gamma_values(gamma)
    hi, lo = g / (1 + g), 1 / (1 + g)
    if method == "exact":
        from scipy.special import betainc

        upper = betainc(k, d - k + 1, hi) if k > 0 else np.ones_like(g)
        lower = betainc(k, d - k + 1, lo) if k > 0 else np.ones_like(g)
        return np.asarray(upper), np.asarray(lower)
    kc = k - 0.5 if continuity else k
    # the upper tail as Phi(-z), not 1 - Phi(z): a bound of 3.6e-19 does not underflow to 0
    upper = normal_cdf(-(kc - d * hi) / np.sqrt(d * hi * lo))
    lower = normal_cdf(-(kc - d * lo) / np.sqrt(d * hi * lo))
    return np.asarray(upper), np.asarray(lower)


def sign_test_gamma(discordant: int, treated_events: int, alpha: float) -> float | None:
    """The Gamma at which the exact upper bound reaches alpha (None if not significant at 1)."""
    from scipy.special import betaincinv

    d, k = discordant, treated_events
    if k == 0 or sign_test_bounds(d, k, 1.0)[0][0] >= alpha:
        return None
    p = float(betaincinv(k, d - k + 1, alpha))
    if p <= 0.5:
        return p / (1 - p)
    # near p = 1 take 1 - p from the mirrored inverse, I_p(a, b) = 1 - I_(1-p)(b, a): no
    # division by a 1 - p that rounded to 0
    q = float(betaincinv(d - k + 1, k, 1 - alpha))
    return (1 - q) / q if q > 0 else float("inf")


def ranks(differences: ArrayLike, zeros: str = "pratt") -> tuple[np.ndarray, np.ndarray]:
    """Average ranks of |d| (by the zero convention) and the signs of the nonzero pairs."""
    d = np.asarray(differences, float)
    if zeros == "drop":
        d = d[d != 0]
    size = np.abs(d)
    order = np.argsort(size, kind="stable")
    ordered = size[order]
    new = np.concatenate([[True], ordered[1:] != ordered[:-1]])
    starts = np.flatnonzero(new)
    ends = np.append(starts[1:], d.size)  # a tie group holds ranks starts+1 .. ends
    q = np.empty(d.size)
    q[order] = ((starts + 1 + ends) / 2)[np.cumsum(new) - 1]
    keep = d != 0
    return q[keep], np.sign(d[keep])


def _tail_direct(qi: np.ndarray, ti: int, p: np.ndarray) -> np.ndarray:
    """P(sum qi_s W_s >= ti) by direct convolution over the integer ranks, one pair at a time,
    every p at once (Pagano & Tritchler 1983, as Rosenbaum uses it)."""
    total = int(qi.sum())
    pj = np.asarray(p, float)[:, None]
    dist = np.zeros((len(pj), total + 1))
    dist[:, 0] = 1.0
    top = 0
    for step in qi:
        shifted = dist[:, : top + 1].copy()
        dist[:, : top + 1] *= 1 - pj
        dist[:, step : step + top + 1] += pj * shifted
        top += int(step)
    return dist[:, max(ti, 0) :].sum(axis=1)


#: Frequencies whose |characteristic function| is certified below exp(-DROP) are left out.
DROP = 75.0
#: A first pass leaves out those below exp(-DROP_FIRST): with tied ranks |phi| decays slowly
#: and most of the work lies between the two levels. What it leaves out is bounded (see
#: `_left_out`); where the bound is not below LEFT_OUT of the result, the pass at DROP runs.
DROP_FIRST = 45.0
LEFT_OUT = 1e-16
#: The window's half-width leaves out tilted mass below this (Bernstein's inequality).
ALIAS = 1e-24


def _tail_fourier(
    qi: np.ndarray, ti: int, p: float, negligible: float = -746.0, drop: float = DROP_FIRST
) -> float:
    """P(sum qi_s W_s >= ti), W_s independent Bernoulli(p), qi positive integers: the exact
    distribution through its discrete Fourier transform, exponentially tilted to the tail.

    Tilting by theta (chosen so the tilted mean is ti) gives P = M(theta) exp(-theta ti)
    B, where B = sum over s >= ti of f_theta(s) exp(-theta (s - ti)) and f_theta is the
    tilted distribution, so B is a number of order one and the tail keeps its relative
    accuracy however small it is. B is a linear functional of f_theta on a window of L
    lattice points around ti; by the inverse DFT, B = (1/L) sum_k phi(w_k) exp(-i w_k ti) G_k
    with w_k = 2 pi k / L, phi the tilted characteristic function (a product over pairs, so
    each frequency costs one pass over the distinct ranks) and G_k a geometric sum. Only a
    few dozen frequencies matter: |phi(w)| <= exp(-A(w)) with A(w) = sum w_s (1 - cos w q_s),
    w_s = p_s (1 - p_s), and A is evaluated by one FFT on a coarse grid fine enough that
    A'' <= var bounds it between grid points, so every frequency left out is certified below
    exp(-drop). With tied ranks |phi| stays large at many frequencies, so a first pass leaves
    out those below exp(-DROP_FIRST) and keeps its result only if the bound on what they add
    (`_left_out`) is below LEFT_OUT of B; otherwise the pass at DROP runs. Mass outside the
    window (which the DFT would fold back in) is below ALIAS by Bernstein's inequality. The
    result agrees with the direct convolution to about 1e-13 relative, and with enumeration
    of every sign pattern on heavily tied pairs (tests/test_matched.py).
    """
    from ..common.numeric import brent, expit

    g = int(np.gcd.reduce(qi))
    vals, mult = np.unique(qi // g, return_counts=True)
    t = -(-ti // g)  # the statistic lives on the lattice g Z
    total = int(vals @ mult)
    if t <= 0:
        return 1.0
    if t > total:
        return 0.0
    if p >= 1.0:  # Gamma above about 1e16 rounds p to 1: every pair carries its rank
        return 1.0
    if t == total:  # every pair must carry its rank
        return float(np.exp(mult.sum() * np.log(p)))
    v = vals.astype(float)
    if float(mult @ v) * p >= t:
        # At or below the mean: one minus the lower tail, which is the upper tail of the
        # mirrored sum (total - S, with 1 - p) and so keeps its relative accuracy as well.
        # Below 2**-54 the lower tail cannot change the double nearest 1.
        return 1.0 - _tail_fourier(qi, g * (total - t + 1), 1.0 - p, -38.0, drop)
    lp = float(np.log(p) - np.log1p(-p))

    def tilted_mean(theta: float) -> float:
        return float(mult @ (v * expit(lp + theta * v)))

    top = 1.0 / v[-1]
    while tilted_mean(top) < t:
        top *= 2
    theta = brent(lambda x: tilted_mean(x) - t, 0.0, top, xtol=1e-300, rtol=1e-15)
    log_mgf = float(mult @ np.logaddexp(np.log1p(-p), np.log(p) + theta * v))
    chernoff = log_mgf - theta * t  # P <= exp(chernoff)
    if chernoff < negligible:  # by default below the smallest double: 0.0 to the last digit
        return 0.0
    ps = expit(lp + theta * v)
    weight = mult * ps * (1 - ps)
    var = float(weight @ (v * v))
    # Window: Bernstein, P(|S - ES| >= u) <= 2 exp(-u^2 / (2 (var + b u / 3))), b = max rank.
    c, b = float(np.log(2 / ALIAS)), float(v[-1])
    u = c * b / 3 + np.sqrt((c * b / 3) ** 2 + 2 * c * var)
    lo, hi = max(t - int(np.ceil(u)) - 1, 0), min(t + int(np.ceil(u)) + 1, total)
    n_fine = (hi - lo + 1) | 1  # odd, so the frequencies pair up as k and -k
    # Certify: A on a coarse grid of m points (m even, so the grid reaches pi) with spacing h,
    # h^2 var / 8 <= 1; between grid points A >= min(ends) - h^2 var / 8.
    m = _fast_length(int(np.ceil(2 * np.pi * np.sqrt(var / 8))) + 16)
    m += m % 2
    hist = np.bincount(vals % m, weights=weight, minlength=m)
    a = weight.sum() - np.fft.rfft(hist).real
    slack = (2 * np.pi / m) ** 2 * var / 8
    cells = np.flatnonzero(np.minimum(a[:-1], a[1:]) - slack < drop)
    half = (n_fine - 1) // 2
    first = np.ceil(cells * n_fine / m).astype(np.int64)
    count = np.maximum(np.minimum(np.floor((cells + 1) * n_fine / m).astype(np.int64), half)
                       - first + 1, 0)  # fmt: skip
    starts = np.repeat(first - np.cumsum(count) + count, count)
    wanted = np.zeros(half + 1, bool)  # the frequencies 0..half kept, in order, once each
    wanted[0] = True
    wanted[starts + np.arange(count.sum())] = True
    ks = np.flatnonzero(wanted)
    # B = (1/L) [T_0 + 2 Re sum_{k > 0} T_k], T_k = phi_k exp(-i w_k t) G_k.
    span = hi - t + 1
    centre = np.expm1(-theta * span) / np.expm1(-theta) if theta > 0 else span  # G_0
    out = 0.0
    shrink = -4 * ps * (1 - ps)  # |1 + p (e^{ix} - 1)|^2 = 1 + shrink sin^2(x / 2)
    heavy = np.argsort(mult * shrink)  # the ranks by their weight in log |phi|, heaviest first

    def sine_of(phase: np.ndarray) -> np.ndarray:  # sin(w v / 2) from the exact integer phase
        return np.sin(np.pi * phase / n_fine)

    for chunk in np.array_split(ks, max(1, ks.size * vals.size // 2**21)):
        # |phi| itself, not only its bound exp(-A), is below exp(-drop) at most frequencies
        # kept so far when ranks are tied: the parts of log |phi| (each <= 0), heaviest ranks
        # first, rule them out a few ranks at a time; then the whole sum, on what is left
        part = np.zeros(chunk.size)
        for block in (heavy[:4], heavy[4:8], heavy[8:16], heavy[16:]):
            with np.errstate(divide="ignore"):  # a factor of zero: log |phi| is -inf
                logs = np.log1p(
                    shrink[block] * sine_of((chunk[:, None] * vals[block]) % n_fine) ** 2
                )
            part += 0.5 * logs @ mult[block]
            alive = part >= -drop
            chunk, part = chunk[alive], part[alive]
        turn = (chunk[:, None] * vals[None, :]) % n_fine  # exact integer phase
        # log(1 + p (e^{i w v} - 1)) in real arithmetic: |.|^2 = 1 - 4 p (1 - p) sin^2(w v / 2)
        # and its argument
        sine = sine_of(turn)
        sine2 = sine * sine
        with np.errstate(divide="ignore"):  # a factor of zero: log |phi| is -inf
            modulus = 0.5 * np.log1p(-4 * ps * (1 - ps) * sine2) @ mult
        kept = modulus >= -drop
        chunk, modulus, sine, sine2 = chunk[kept], modulus[kept], sine[kept], sine2[kept]
        cosine = np.cos(np.pi * turn[kept] / n_fine)
        angle = np.arctan2(2 * ps * sine * cosine, 1 - 2 * ps * sine2) @ mult
        log_phi = modulus + 1j * angle
        z = np.exp(-theta - 2j * np.pi * chunk / n_fine)
        with np.errstate(divide="ignore", invalid="ignore"):
            geo = np.where(chunk == 0, centre, -np.expm1(span * np.log(z)) / (1 - z))
        terms = np.exp(log_phi - 2j * np.pi * ((chunk * t) % n_fine) / n_fine) * geo
        out += float(np.where(chunk == 0, 1.0, 2.0) @ terms.real)
    if drop < DROP and _left_out(drop, theta, half, span) > LEFT_OUT * abs(out / n_fine):
        return _tail_fourier(qi, ti, p, negligible, DROP)
    return float(np.clip(np.exp(chernoff) * out / n_fine, 0.0, 1.0))


def _left_out(drop: float, theta: float, half: int, span: int) -> float:
    """A bound on what the frequencies left out (each |phi_k| < exp(-drop)) add to B:
    (2/L) sum_k |phi_k| |G_k|, k = 1..half, with |G_k| <= 2 / |1 - z_k| <= L / (2 k sqrt(r)),
    r = exp(-theta) (as |1 - z|^2 >= 4 r sin^2(pi k / L) and sin(pi k / L) >= 2 k / L for
    k <= L / 2), so the sum is at most exp(-drop) exp(theta / 2) (1 + log half); and at most
    exp(-drop) span, as |G_k| <= span."""
    import math

    harmonic = math.exp(min(theta / 2, 700.0)) * (1 + math.log(max(half, 1)))
    return math.exp(-drop) * min(float(span), harmonic)


def _fast_length(n: int) -> int:
    """The smallest length of at least `n` whose prime factors are all 2, 3, 5, 7 or 11, the
    lengths the FFT is fastest on (scipy.fft.next_fast_len's, checked in tests)."""
    length = max(int(n), 1)
    while True:
        rest = length
        for prime in (2, 3, 5, 7, 11):
            while rest % prime == 0:
                rest //= prime
        if rest == 1:
            return length
        length += 1


def _tail_exact(q: np.ndarray, t: float, p: np.ndarray) -> np.ndarray:
    """P(sum q_s W_s >= t) exactly, over the doubled (integer) ranks: by direct convolution
    for small problems, through the Fourier transform for large ones."""
    if q.size > MAX_EXACT_PAIRS:
        raise InputError(f"the exact signed-rank bound takes at most {MAX_EXACT_PAIRS:,} pairs "
                         f"with a nonzero difference; got {q.size:,}: use method normal, the "
                         "large-sample bound")  # fmt: skip
    qi = np.rint(2 * q).astype(np.int64)
    ti = int(np.ceil(2 * t - 1e-9))
    # each p once (Gamma 1 is p = 1/2 for both bounds)
    distinct, back = np.unique(np.atleast_1d(p), return_inverse=True)
    if qi.size * int(qi.sum()) <= DIRECT_WORK:
        return _tail_direct(qi, ti, distinct)[back]
    ps = [float(pj) for pj in distinct]
    if len(ps) < 4:
        return np.array([_tail_fourier(qi, ti, pj) for pj in ps])[back]
    # each Gamma on its own (numpy's work leaves Python's lock free): both cores at once
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=2) as pool:
        return np.array(list(pool.map(lambda pj: _tail_fourier(qi, ti, pj), ps)))[back]


def _signed_rank_tail(q: np.ndarray, t: float, p: np.ndarray, method: str) -> np.ndarray:
    """P(sum q_s W_s >= t), W_s Bernoulli(p) over the nonzero pairs: exact or large-sample
    (the normal with mean p sum(q) and variance p (1 - p) sum(q^2))."""
    from ..common.numeric import normal_cdf

    p = np.atleast_1d(np.asarray(p, float))
    if method == "exact":
        return _tail_exact(q, t, p)
    s1, s2 = q.sum(), np.square(q).sum()
    var = p * (1 - p) * s2  # 0 where a Gamma above about 1e16 rounds p to 1: S = sum(q)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = -(t - p * s1) / np.sqrt(var)
    return normal_cdf(np.where(var > 0, z, np.where(t <= p * s1, np.inf, -np.inf)))  # no 1 -


def signed_rank_bounds(differences: ArrayLike, gamma: ArrayLike, *, method: str = "exact",
                       zeros: str = "pratt") -> tuple[float, np.ndarray, np.ndarray]:  # fmt: skip
    """The signed-rank statistic and the upper and lower bounds on its one-sided p-value."""
    q, sign = ranks(differences, zeros)
    t = float(q[sign > 0].sum())
    g = gamma_values(gamma)
    both = _signed_rank_tail(q, t, np.concatenate([g / (1 + g), 1 / (1 + g)]), method)
    return t, both[: g.size], both[g.size :]


def _gamma_at(alpha: float, upper_at: Callable[[float], float],
              known: Iterable[tuple[float, float]] = ()) -> float | None:  # fmt: skip
    """The Gamma at which an increasing upper bound reaches alpha (Brent's method in log Gamma,
    to 1e-14 there: about eight evaluations of the bound where bisection took eighty). `known`:
    (Gamma, bound) pairs already computed (the grid's), which narrow the starting bracket to
    the two Gammas on either side of alpha and are not computed again."""
    import functools
    import math

    from ..common.numeric import brent

    seen = {float(x): float(v) for x, v in known if math.isfinite(x) and not math.isnan(v)}

    @functools.cache  # each value once: Brent's method starts from the bracket's two ends
    def f(x: float) -> float:
        return seen[x] if x in seen else upper_at(x)

    if f(1.0) >= alpha:
        return None
    below = [x for x, v in seen.items() if v < alpha] + [1.0]
    above = [x for x, v in seen.items() if v >= alpha]
    if not above:
        if f(1e6) < alpha:
            return float("inf")
        above = [1e6]
    a, b = max(below), min(above)
    ends = {math.log(a): f(a), math.log(b): f(b)}

    def shifted(y: float) -> float:
        return (ends[y] if y in ends else f(math.exp(y))) - alpha

    root = brent(shifted, math.log(a), math.log(b), xtol=1e-14, rtol=1e-14)
    return math.exp(root)


def _whole(value: object, name: str) -> int:
    """A count: a finite whole number, 0 or more (a Decimal or numpy integer too)."""
    v = float(require_scalar(value, name))
    if v < 0 or v != int(v):
        raise InputError(f"`{name}` must be a whole number, 0 or more; got {value!r}", name)
    if v > 2**53:  # beyond it a count is no longer held exactly
        raise InputError(f"`{name}` must be at most 2^53 (9.0e15); got {v:g}", name)
    return int(v)


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
    alternative: str = "auto",
) -> MatchedResult:
    """Rosenbaum bounds on the one-sided p-value over a range of Gamma, and the Gamma at which
    the upper bound reaches alpha.

    Give `differences` (treated minus control, one a pair) for the signed-rank test, or
    `discordant` and `treated_events` for the sign test of a binary outcome. `alternative`:
    "greater" (treatment raises the outcome), "less", or "auto", the direction of the observed
    effect (the statistic above or below its mean at Gamma 1), as Rosenbaum reports it.

    Examples
    --------
    The sign test with 122 discordant pairs, 110 of them in the smoker's disfavour (recalled
    from Rosenbaum 2002, chapter 4): sensitive between Gamma 5 and 6.

    >>> res = rosenbaum_bounds(discordant=122, treated_events=110, gamma=[5, 6])
    >>> 5 < res.gamma_at_alpha < 6
    True
    """
    alpha = check_alpha(alpha)
    missing = _whole(missing, "missing")
    if method not in ("exact", "normal"):
        raise InputError(f"`method` must be exact or normal; got {method!r}", "method")
    if zeros not in ("pratt", "drop"):
        raise InputError(f"`zeros` must be pratt or drop; got {zeros!r}", "zeros")
    if alternative not in ("auto", "greater", "less"):
        raise InputError(
            f"`alternative` must be auto, greater or less; got {alternative!r}", "alternative"
        )
    g = gamma_values(gamma)
    if differences is not None:
        if discordant is not None or treated_events is not None:
            raise InputError(
                "give `differences`, or `discordant` and `treated_events`, not both",
                ("differences", "discordant", "treated_events"),
            )
        d = np.asarray(require(differences, "differences"), float).ravel()
        if d.size < 2:
            raise InputError(
                f"`differences` must hold at least two pairs; got {d.size}", "differences"
            )
        if not np.any(d != 0):
            raise InputError(
                "`differences` are all zero: the test has nothing to rank", "differences"
            )
        q, sign = ranks(d, zeros)
        if alternative == "auto":
            alternative = "less" if q[sign > 0].sum() < q.sum() / 2 else "greater"
        # the statistic of the side tested: ranks of the positive (or negative) differences
        t = float(q[sign > 0 if alternative == "greater" else sign < 0].sum())
        # both bounds in one call: the exact bound's Gammas shared between two cores
        both = _signed_rank_tail(q, t, np.concatenate([g / (1 + g), 1 / (1 + g)]), method)
        upper, lower = both[: g.size], both[g.size :]

        def at(x: float) -> float:
            return float(_signed_rank_tail(q, t, np.array([x / (1 + x)]), method)[0])

        hl = hodges_lehmann_range(d, g) if d.size <= MAX_HL_PAIRS else (None, None)
        hl_note = () if d.size <= MAX_HL_PAIRS else (
            f"The Hodges-Lehmann range is not given above {MAX_HL_PAIRS:,} pairs (its pairwise "
            f"averages grow as the square of the pairs); this test has {d.size:,}.",
        )  # fmt: skip
        return MatchedResult(
            test="signed-rank", pairs=int(d.size), statistic=t, alpha=alpha, method=method,
            zeros=zeros, gamma=g, p_upper=upper, p_lower=lower,
            gamma_at_alpha=_gamma_at(alpha, at, zip(g, upper, strict=True)),
            zero_pairs=int(np.sum(d == 0)),
            missing=missing, estimate_low=hl[0], estimate_high=hl[1], alternative=alternative,
            notes=hl_note,
        )  # fmt: skip
    if discordant is None or treated_events is None:
        raise InputError(
            "give `differences`, or `discordant` and `treated_events`",
            ("differences", "discordant", "treated_events"),
        )
    dd, k = (_whole(v, name) for v, name in ((discordant, "discordant"),
                                               (treated_events, "treated_events")))  # fmt: skip
    if dd < 2:
        raise InputError(f"`discordant` must be at least 2 pairs; got {dd}", "discordant")
    if not 0 <= k <= dd:
        raise InputError(
            f"`treated_events` must lie between 0 and `discordant` ({dd}); got {k}",
            ("treated_events", "discordant"),
        )
    if alternative == "auto":
        alternative = "less" if k < dd / 2 else "greater"
    if alternative == "less":  # the control unit's events are then the statistic
        k = dd - k
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
        missing=missing, alternative=alternative,
    )  # fmt: skip
