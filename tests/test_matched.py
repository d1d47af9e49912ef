"""Rosenbaum bounds (issue 12): the lead example, the smoking pairs, exact enumeration,
the vertex argument, the Gamma = 1 identity, properties, errors and the command."""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.matched import rosenbaum_bounds, sign_test_bounds, signed_rank_bounds

# Morton et al. (1982) lead in children, 33 pairs (exposed, control) [OPENED, METHODS-MORE 1.5b]
LEAD = (
    "38,16 23,18 41,18 18,24 37,19 36,11 23,10 62,15 31,16 34,18 24,18 14,13 21,19 17,10 16,16 "
    "20,16 15,24 10,13 45,9 39,14 22,21 35,19 49,7 48,18 44,19 35,12 43,11 39,22 34,25 13,16 "
    "73,13 25,11 27,13"
)
PAIRS = np.array([[float(v) for v in p.split(",")] for p in LEAD.split()])
D = PAIRS[:, 0] - PAIRS[:, 1]


def test_the_lead_example_exact_at_gamma_one():
    # Printed exact two-sided p = 8.037e-07 with zeros dropped [OPENED, lecture notes]: V = 499.
    t, upper, _ = signed_rank_bounds(D, 1.0, method="exact", zeros="drop")
    assert t == 499
    assert 2 * upper[0] == pytest.approx(8.037e-07, abs=5e-11)


@pytest.mark.parametrize("gamma, printed", [(2, 0.0018), (3, 0.0136), (4, 0.0388)])
def test_the_lead_example_bounds(gamma, printed):
    # Rosenbaum (2002, ch. 4) [RECALLED; reproduced by the normal bound with Pratt zeros]: T = 527.
    res = rosenbaum_bounds(differences=D, gamma=[gamma], method="normal", zeros="pratt")
    assert res.statistic == 527
    assert float(res.p_upper[0]) == pytest.approx(printed, abs=0.00005)


@pytest.mark.parametrize("gamma, printed", [(4, 0.004), (5, 0.03), (6, 0.10)])
def test_the_smoking_pairs(gamma, printed):
    # Hammond (1964) in Rosenbaum (2002, 4.3) [RECALLED]: 122 discordant pairs, 110 against the
    # smoker; the printed bounds match the large-sample bound with a continuity correction.
    upper, _ = sign_test_bounds(122, 110, gamma, method="normal", continuity=True)
    assert float(upper[0]) == pytest.approx(printed, abs=0.0025 if printed < 0.01 else 0.005)


def test_the_sign_test_gamma_solves_the_bound():
    res = rosenbaum_bounds(discordant=122, treated_events=110, gamma=[1], alpha=0.05)
    upper, _ = sign_test_bounds(122, 110, res.gamma_at_alpha)
    assert float(upper[0]) == pytest.approx(0.05, rel=1e-9)


def test_the_exact_bound_equals_enumeration():
    # Every assignment of the signs under Bernoulli(p) weights, summed by brute force.
    d = np.array([1.5, -0.4, 2.2, 0.9, -1.1, 3.0, 0.9, 2.5])
    q = np.argsort(np.argsort(np.abs(d))) + 1.0
    q[[3, 6]] = (q[3] + q[6]) / 2  # the tie at |0.9|
    t = q[d > 0].sum()
    for gamma in (1.0, 2.0, 3.5):
        p = gamma / (1 + gamma)
        total = 0.0
        for w in itertools.product((0, 1), repeat=len(d)):
            w = np.array(w)
            if (q * w).sum() >= t - 1e-9:
                total += np.prod(np.where(w == 1, p, 1 - p))
        _, upper, _ = signed_rank_bounds(d, gamma, method="exact")
        assert float(upper[0]) == pytest.approx(total, rel=1e-12)


def test_the_binomial_vertex_is_the_worst_case():
    # METHODS-MORE 1.6.1: over all 2^8 choices of theta in {p-, p+}, the largest tail is the
    # Binomial(n, p+) one.
    from math import comb

    n, k, gamma = 8, 6, 2.0
    hi, lo = gamma / (1 + gamma), 1 / (1 + gamma)
    best = 0.0
    for thetas in itertools.product((lo, hi), repeat=n):
        dist = np.array([1.0])
        for th in thetas:
            dist = np.convolve(dist, [1 - th, th])
        best = max(best, dist[k:].sum())
    binom = sum(comb(n, a) * hi**a * lo ** (n - a) for a in range(k, n + 1))
    assert best == pytest.approx(binom, rel=1e-12)
    assert float(sign_test_bounds(n, k, gamma)[0][0]) == pytest.approx(binom, rel=1e-12)


def test_gamma_one_is_the_usual_normal_signed_rank_test():
    # METHODS-MORE 1.6.3: at Gamma = 1 the normal bound is scipy's signed-rank normal
    # approximation without continuity correction, one-sided.
    from scipy.stats import wilcoxon

    ref = wilcoxon(D, zero_method="pratt", correction=False, method="approx",
                   alternative="greater")  # fmt: skip
    _, upper, _ = signed_rank_bounds(D, 1.0, method="normal", zeros="pratt")
    assert float(upper[0]) == pytest.approx(ref.pvalue, rel=1e-6)


@settings(max_examples=30, deadline=None)
@given(st.lists(st.floats(-5, 5).filter(lambda v: abs(v) > 1e-3), min_size=3, max_size=25),
       st.floats(1, 5), st.floats(1, 5))  # fmt: skip
def test_the_upper_bound_rises_with_gamma(d, g1, g2):
    lo, hi = sorted((g1, g2))
    _, upper, lower = signed_rank_bounds(d, [lo, hi], method="exact")
    assert upper[1] >= upper[0] - 1e-12
    assert lower[1] <= lower[0] + 1e-12


@pytest.mark.parametrize(
    "kwargs, message",
    [
        ({"discordant": 10, "treated_events": 8, "gamma": [0.5]}, r"`gamma` must be at least 1"),
        ({"discordant": 10, "treated_events": 8, "alpha": 0}, r"`alpha` must lie strictly"),
        ({"discordant": 1, "treated_events": 1}, r"`discordant` must be at least 2 pairs"),
        ({"discordant": 10, "treated_events": 11}, r"`treated_events` must lie between 0 and"),
        ({"differences": [1.0]}, r"`differences` must hold at least two pairs"),
        ({"differences": [0.0, 0.0]}, r"`differences` are all zero"),
        ({}, r"give `differences`, or `discordant` and `treated_events`"),
    ],
)
def test_bad_input(kwargs, message):
    with pytest.raises(InputError, match=message):
        rosenbaum_bounds(**kwargs)


@pytest.mark.parametrize("fmt", ["text", "json", "csv", "markdown", "latex"])
def test_the_command(run, fmt, tmp_path):
    res = run("matched", "--discordant", 80, "--treated-events", 58, "--gamma", "1:3:0.25",
              "--format", fmt, "--plot", tmp_path / "m.png")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    if fmt == "json":
        data = json.loads(res.stdout)
        assert data["test"] == "sign" and data["pairs"] == 80 and len(data["rows"]) == 9
        assert set(data["rows"][0]) == {"gamma", "p_upper", "p_lower"}
        assert data["gamma_at_alpha"] > 1


def test_the_command_reads_pairs_and_reports_missing_ones(run, tmp_path):
    path = tmp_path / "pairs.csv"
    lines = ["exposed,control"] + [f"{a:g},{b:g}" for a, b in PAIRS] + ["12,", "x,3"]
    path.write_text("\n".join(lines) + "\n")
    res = run("matched", "--data", path, "--treated", "exposed", "--control", "control",
              "--method", "normal", "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert "2 pairs with a missing or non-numeric value left out (file lines 35, 36)" in res.stderr
    data = json.loads(res.stdout)
    assert data["statistic"] == 527 and data["missing_pairs"] == 2


def _walsh_count_above(d, tau):
    """T(tau) by brute force: pairs i <= j whose Walsh average (d_i + d_j)/2 exceeds tau."""
    n = len(d)
    return sum((d[i] + d[j]) / 2 > tau for i in range(n) for j in range(i, n))


def test_the_hodges_lehmann_estimate_at_gamma_one_is_the_walsh_median():
    # Hodges and Lehmann (1963): the median of all Walsh averages, by explicit loops.
    from sensitivity.matched.core import hodges_lehmann_range

    walsh = [(D[i] + D[j]) / 2 for i in range(len(D)) for j in range(i, len(D))]
    low, high = hodges_lehmann_range(D, [1.0])
    assert low[0] == high[0] == pytest.approx(float(np.median(walsh)))


@pytest.mark.parametrize("gamma", [1.5, 2.0, 3.0])
def test_the_hodges_lehmann_range_solves_the_bounding_equation_on_a_fine_grid(gamma):
    # Rosenbaum (1993): the ends solve T(tau) = p n(n+1)/2, p = Gamma/(1+Gamma) or 1/(1+Gamma);
    # each end lies between the last grid tau with T > c and the first with T < c.
    from sensitivity.matched.core import hodges_lehmann_range

    d = D[:12]
    total = len(d) * (len(d) + 1) / 2
    grid = np.arange(-10, 60, 0.25)
    counts = np.array([_walsh_count_above(d, t) for t in grid])
    low, high = hodges_lehmann_range(d, [gamma])
    for end, p in ((low[0], gamma / (1 + gamma)), (high[0], 1 / (1 + gamma))):
        c = p * total
        assert grid[counts > c].max() - 0.25 <= end <= grid[counts < c].min() + 0.25
    assert low[0] <= high[0]


def test_the_hodges_lehmann_range_is_in_the_output():
    res = rosenbaum_bounds(differences=D, gamma=[1, 2])
    assert res.estimate_low[1] < res.estimate_low[0] == res.estimate_high[0] < res.estimate_high[1]
    assert "estimate_low" in res.to_dict()["rows"][0]


def test_the_signed_rank_gamma_solves_the_exact_bound():
    # The reported crossing must satisfy upper(Gamma*) = alpha, and a fine grid must agree.
    res = rosenbaum_bounds(differences=D, gamma=[1], alpha=0.05)
    _, upper, _ = signed_rank_bounds(D, res.gamma_at_alpha)
    assert float(upper[0]) == pytest.approx(0.05, rel=1e-9)
    grid = np.arange(4.0, 5.5, 0.01)
    _, bounds, _ = signed_rank_bounds(D, grid)
    assert grid[bounds < 0.05].max() < res.gamma_at_alpha <= grid[bounds >= 0.05].min()


@pytest.mark.parametrize("method", ["exact", "normal"])
@pytest.mark.parametrize("seed", range(4))
def test_the_gamma_at_alpha_does_not_depend_on_the_grid(method, seed):
    # The grid's bounds narrow Brent's starting bracket: the crossing must be the one found
    # from Gamma 1 and 10^6 alone, to 1e-13 (it is solved to 1e-14 in log Gamma), with the
    # crossing inside the grid, beyond it, or on a grid point.
    rng = np.random.default_rng(seed)
    d = rng.integers(-3, 7, 300) * 1.0 if seed % 2 else rng.normal(0.3, 1, 500).round(1)
    alone = rosenbaum_bounds(differences=d, gamma=[1], method=method).gamma_at_alpha
    for grid in (np.arange(1, 6.01, 0.5), [1.5, 1.2], [alone], [1, alone * (1 + 1e-9), 30]):
        star = rosenbaum_bounds(differences=d, gamma=grid, method=method).gamma_at_alpha
        assert star == pytest.approx(alone, rel=1e-13)


# The exact bound for many pairs (issue 12): the Fourier route against the direct convolution.


def _doubled(d):
    from sensitivity.matched.core import ranks

    q, sign = ranks(d)
    return np.rint(2 * q).astype(np.int64), int(np.rint(2 * q[sign > 0].sum()))


@settings(max_examples=60, deadline=None)
@given(st.integers(2, 160), st.sampled_from([None, 2, 1, 0]), st.floats(-0.3, 1.0),
       st.sampled_from([1.0, 1.3, 2.0, 5.0, 30.0]), st.integers(0, 2**32 - 1))  # fmt: skip
def test_the_fourier_tail_equals_the_direct_convolution(n, digits, shift, gamma, seed):
    # Two independent routes to the same exact distribution: the pair-by-pair convolution and
    # the tilted inverse DFT, on untied and heavily tied data, upper and lower bounds.
    from sensitivity.matched.core import _tail_direct, _tail_fourier

    d = np.random.default_rng(seed).normal(shift, 1, n)
    d = d if digits is None else d.round(digits)
    if not np.any(d):
        return
    qi, t = _doubled(d)
    for p in (gamma / (1 + gamma), 1 / (1 + gamma)):
        direct = float(_tail_direct(qi, t, np.array([p]))[0])
        fourier = _tail_fourier(qi, t, p)
        assert fourier == pytest.approx(direct, rel=1e-11, abs=1e-300)


def test_the_fourier_tail_equals_enumeration():
    # Every one of the 2^12 sign patterns, weighted by p, against the Fourier route.
    from sensitivity.matched.core import _tail_fourier

    d = np.array([1.5, -0.4, 2.2, 0.9, -1.1, 3.0, 0.9, 2.5, -0.4, 1.7, 4.1, 0.2])
    qi, t = _doubled(d)
    for p in (0.5, 0.7, 0.2):
        brute = sum(
            np.prod(np.where(np.array(w) == 1, p, 1 - p))
            for w in itertools.product((0, 1), repeat=d.size)
            if int(qi @ np.array(w)) >= t
        )
        assert _tail_fourier(qi, t, p) == pytest.approx(brute, rel=1e-12)


def _enumerated_tail(qi, t, p):
    """P(sum qi_s W_s >= t) over all 2^n patterns of W, each weighted by p^k (1 - p)^(n - k)."""
    patterns = (np.arange(2**qi.size)[:, None] >> np.arange(qi.size)) & 1
    weight = p ** patterns.sum(axis=1) * (1 - p) ** (qi.size - patterns.sum(axis=1))
    return float(weight[patterns @ qi >= t].sum())


@pytest.mark.parametrize("seed", range(6))
def test_the_fourier_tail_on_heavy_ties_equals_enumeration(seed, monkeypatch):
    # Differences in whole units (three or four sizes, zeros among them) have the roughest
    # distributions, where the first pass leaves out the most: all 2^16 sign patterns, upper
    # and lower bounds, the first pass and the pass at DROP (forced by LEFT_OUT = 0).
    import sensitivity.matched.core as core

    d = np.random.default_rng(seed).integers(-2, 4, 16).astype(float)
    qi, t = _doubled(d)
    for p in (0.5, 0.75, 0.9, 0.25):
        brute = _enumerated_tail(qi, t, p)
        first = core._tail_fourier(qi, t, p)
        assert first == pytest.approx(brute, rel=1e-12, abs=1e-300)
        monkeypatch.setattr(core, "LEFT_OUT", 0.0)
        assert core._tail_fourier(qi, t, p) == pytest.approx(first, rel=1e-13, abs=1e-300)
        monkeypatch.undo()


@settings(max_examples=40, deadline=None)
@given(st.integers(20, 700), st.sampled_from([0, 1]), st.floats(-0.3, 1.0),
       st.sampled_from([1.0, 2.0, 3.0, 6.0, 30.0]), st.integers(0, 2**32 - 1))  # fmt: skip
def test_the_first_fourier_pass_equals_the_full_one(n, digits, shift, gamma, seed):
    # The first pass leaves out frequencies with |phi| below exp(-45) and keeps its result only
    # where the bound on them is below 1e-16 of it: against the pass at exp(-75) on tied data.
    from sensitivity.matched.core import DROP, _tail_fourier

    d = np.random.default_rng(seed).normal(shift, 1, n).round(digits)
    if not np.any(d):
        return
    qi, t = _doubled(d)
    for p in (gamma / (1 + gamma), 1 / (1 + gamma)):
        full = _tail_fourier(qi, t, p, drop=DROP)
        assert _tail_fourier(qi, t, p) == pytest.approx(full, rel=1e-13, abs=1e-300)


@pytest.mark.parametrize("pairs", [40, 440])
def test_a_gamma_so_large_that_p_rounds_to_one(pairs):
    # Above Gamma 1e16, Gamma / (1 + Gamma) is 1.0 in double precision: every pair carries
    # its rank, so the upper bound is 1 (it raised an internal error on pairs in whole units,
    # with warnings, on the Fourier route); the lower bound is below 1e-200, then 0.
    d = np.random.default_rng(12).integers(-3, 7, pairs) * 1.0
    res = rosenbaum_bounds(differences=d, gamma=[1e16, 1e20, 1.7e308])
    assert list(res.p_upper) == [1.0, 1.0, 1.0] and list(res.p_lower[1:]) == [0.0, 0.0]
    assert res.p_lower[0] < 1e-200
    alone = rosenbaum_bounds(differences=d, gamma=[1]).gamma_at_alpha
    assert res.gamma_at_alpha == pytest.approx(alone, rel=1e-13)
    normal = rosenbaum_bounds(differences=d, gamma=[1e20], method="normal")  # no warning
    assert (normal.p_upper[0], normal.p_lower[0]) == (1.0, 0.0)


def test_the_fourier_tail_edges():
    from sensitivity.matched.core import _tail_fourier

    qi = np.array([2, 4, 6, 8])
    assert _tail_fourier(qi, 20, 0.3) == pytest.approx(0.3**4, rel=1e-14)  # all four needed
    assert _tail_fourier(qi, 21, 0.3) == 0.0
    assert _tail_fourier(qi, 0, 0.3) == 1.0


@pytest.mark.parametrize("digits", [None, 1])
def test_ten_thousand_pairs_exact(digits):
    # Issue 12: the exact bound at 10,000 pairs. No source prints one, so: the large-sample
    # bound must agree where the normal approximation is good (near the centre, to 1e-3), the
    # exact bound must rise with Gamma, and its Gamma at alpha must solve the exact bound.
    d = np.random.default_rng(5).normal(0.05, 1, 10_000)
    d = d if digits is None else d.round(digits)
    gamma = [1.0, 1.1, 1.13, 1.2]
    exact = rosenbaum_bounds(differences=d, gamma=gamma, method="exact")
    normal = rosenbaum_bounds(differences=d, gamma=gamma, method="normal")
    assert np.all(np.diff(exact.p_upper) > 0)
    assert exact.p_upper[2] == pytest.approx(normal.p_upper[2], abs=1e-3)
    assert exact.gamma_at_alpha == pytest.approx(normal.gamma_at_alpha, rel=1e-3)
    _, upper, _ = signed_rank_bounds(d, exact.gamma_at_alpha)
    assert float(upper[0]) == pytest.approx(0.05, rel=1e-9)
    assert exact.estimate_low is not None  # the Hodges-Lehmann range by counting


@pytest.mark.parametrize("distinct", [0, 2000])
@pytest.mark.parametrize("seed", range(12))
def test_walsh_order_statistics_by_counting_equal_sorting(seed, distinct, monkeypatch):
    # The routes used above 4,000 pairs, counting (untied data) and listing the averages of
    # distinct values with their multiplicities (tied data), against all Walsh averages
    # sorted, on data with heavy ties, zeros and negative values.
    import sensitivity.matched.walsh as walsh_module

    monkeypatch.setattr(walsh_module, "WALSH_DISTINCT", distinct)

    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 600))
    d = rng.normal(0.3, 1, n).round(seed % 3) if seed % 4 else rng.integers(-3, 5, n) * 1.0
    i, j = np.triu_indices(n)
    walsh = np.sort((np.sort(d)[i] + np.sort(d)[j]) / 2)
    index = np.unique(rng.integers(0, walsh.size, 20))
    monkeypatch.setattr(walsh_module, "WALSH_IN_MEMORY", 1)
    assert np.array_equal(walsh_module._walsh_order_statistics(d, index), walsh[index])


def test_a_protective_effect_is_tested_in_its_own_direction():
    # Rosenbaum reports the bound for the alternative in the direction of the observed effect:
    # flipping every difference (or swapping treated and control events) must give the same
    # bounds, with the direction named.
    up = rosenbaum_bounds(differences=D, gamma=[1, 2, 3])
    down = rosenbaum_bounds(differences=-D, gamma=[1, 2, 3])
    assert (up.alternative, down.alternative) == ("greater", "less")
    assert np.array_equal(up.p_upper, down.p_upper) and up.statistic == down.statistic
    assert down.gamma_at_alpha == up.gamma_at_alpha
    assert np.allclose(down.estimate_low, -up.estimate_high)
    forced = rosenbaum_bounds(differences=-D, gamma=[1], alternative="greater")
    assert forced.p_upper[0] > 0.999 and forced.gamma_at_alpha is None
    sign = rosenbaum_bounds(discordant=122, treated_events=12, gamma=[4])
    assert sign.alternative == "less" and sign.statistic == 110
    assert "lower than control outcomes" in down.summary()
    assert down.to_dict()["alternative"] == "less"


def test_bad_alternative():
    with pytest.raises(InputError, match=r"`alternative` must be auto, greater or less"):
        rosenbaum_bounds(differences=D, alternative="two-sided")


def test_the_command_names_and_takes_the_direction(run):
    res = run("matched", "--discordant", 122, "--treated-events", 12, "--gamma", "1:2:1",
              "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    data = json.loads(res.stdout)
    assert data["alternative"] == "less" and data["statistic"] == 110
    res = run("matched", "--discordant", 122, "--treated-events", 12, "--alternative", "greater")
    assert res.exit_code == 0 and "for more events among the treated" in res.stdout
    assert "not significant at the 0.05 level" in res.stdout
    res = run("matched", "--discordant", 122, "--treated-events", 12, "--alternative", "both")
    assert res.exit_code == 2 and "'both' is not one of" in res.stderr


def test_too_many_pairs_for_the_exact_bound(monkeypatch):
    import sensitivity.matched.core as core

    monkeypatch.setattr(core, "MAX_EXACT_PAIRS", 20)
    d = np.arange(1.0, 31.0)
    with pytest.raises(InputError, match=r"takes at most 20 pairs with a nonzero difference; "
                       r"got 30: use method normal"):  # fmt: skip
        rosenbaum_bounds(differences=d)
    assert rosenbaum_bounds(differences=d, method="normal").pairs == 30


# ---------------------------------------------------------------- issue 19
@given(st.integers(2, 5000), st.data(), st.floats(1, 50))
def test_normal_bounds_are_upper_tails_without_cancellation(d, data, gamma):
    """The normal bounds equal scipy.stats.norm.sf of the standardised statistic (the reference
    survival function), so a bound of 1e-19 is 1e-19, not 1 - 1 = 0."""
    from scipy.stats import norm

    k = data.draw(st.integers(1, d))
    upper, lower = sign_test_bounds(d, k, gamma, method="normal")
    hi, lo = gamma / (1 + gamma), 1 / (1 + gamma)
    sd = np.sqrt(d * hi * lo)
    # below the smallest normal double (2.2e-308) a bound is 0 (scipy: a subnormal, or 0)
    np.testing.assert_allclose(upper, norm.sf((k - d * hi) / sd), rtol=1e-9, atol=2.3e-308)
    np.testing.assert_allclose(lower, norm.sf((k - d * lo) / sd), rtol=1e-9, atol=2.3e-308)


def test_the_issue_example_has_a_nonzero_bound():
    res = rosenbaum_bounds(discordant=122, treated_events=110, gamma=[1, 2], method="normal")
    assert res.p_upper[0] == pytest.approx(3.576e-19, rel=1e-3)
    assert np.all(res.p_lower > 0)


@pytest.mark.parametrize(
    "kwargs, message",
    [
        ({"discordant": 2.5, "treated_events": 1}, r"`discordant` must be a whole number"),
        ({"discordant": 10**20, "treated_events": 5}, r"`discordant` must be at most 2\^53"),
        ({"discordant": 10, "treated_events": 5, "missing": -np.inf},
         r"`missing` must be a finite number; got -inf"),
        ({"discordant": 10, "treated_events": 5, "alpha": 1e-320}, r"`alpha` must be at least"),
    ],
)  # fmt: skip
def test_counts_are_whole_and_finite(kwargs, message):
    with pytest.raises(InputError, match=message):
        rosenbaum_bounds(**kwargs)


def test_a_gamma_near_the_top_of_the_beta_is_no_division_by_zero():
    res = rosenbaum_bounds(discordant=2**52, treated_events=5, gamma=[1])
    assert res.gamma_at_alpha is None or res.gamma_at_alpha > 0


def test_above_the_hodges_lehmann_limit_a_note_says_why_it_is_missing():
    from sensitivity.matched.core import MAX_HL_PAIRS

    d = np.random.default_rng(3).normal(0.3, 1, MAX_HL_PAIRS + 1)
    res = rosenbaum_bounds(differences=d, gamma=[1, 2], method="normal")
    assert res.estimate_low is None
    assert any("Hodges-Lehmann range is not given above 20,000 pairs" in n for n in res.notes)


@pytest.mark.parametrize(
    "rows, expected",
    [
        (["1,1", "2.5,2.5", "3,3"], "the differences 'after' minus 'before' are all zero: the "
         "test has nothing to rank"),
        (["x,1", "2,", ",3"], "the differences 'after' minus 'before' must hold at least two "
         "pairs; got 0 (3 pairs left out for a missing or non-numeric value)"),
        (["1,2", "2,"], "the differences 'after' minus 'before' must hold at least two pairs; "
         "got 1 (1 pair left out for a missing or non-numeric value)"),
    ],
)  # fmt: skip
def test_treated_and_control_columns_are_named_not_differences(run, tmp_path, rows, expected):
    # Given --treated and --control, the checks on the differences name those two columns, in
    # one line, exit 2 (the command line and Python); given --differences, that option.
    from sensitivity import rosenbaum_bounds_from_data

    path = tmp_path / "pairs.csv"
    path.write_text("\n".join(["after,before", *rows]) + "\n")
    res = run("matched", "--data", path, "--treated", "after", "--control", "before")
    assert res.exit_code == 2 and res.stdout == ""
    assert res.stderr.strip() == f"Error: {expected}"
    with pytest.raises(InputError) as caught:
        rosenbaum_bounds_from_data(path, treated="after", control="before")
    assert str(caught.value) == expected and caught.value.arguments == ()
    path.write_text("d\n0\n0\n")
    res = run("matched", "--data", path, "--differences", "d")
    assert res.exit_code == 2 and res.stderr.strip() == (
        "Error: `--differences` are all zero: the test has nothing to rank"
    )


def test_pairs_from_data_in_python_equal_the_differences_and_the_command(run, tmp_path):
    import pandas as pd

    from sensitivity import rosenbaum_bounds_from_data

    path = tmp_path / "pairs.csv"
    lines = ["exposed,control"] + [f"{a:g},{b:g}" for a, b in PAIRS] + ["12,", "x,3"]
    path.write_text("\n".join(lines) + "\n")
    res = rosenbaum_bounds_from_data(path, treated="exposed", control="control",
                                     method="normal")  # fmt: skip
    ref = rosenbaum_bounds(differences=D, method="normal", missing=2)
    assert res.to_dict() == ref.to_dict()
    frame = pd.read_csv(path)
    assert rosenbaum_bounds_from_data(frame, treated="exposed", control="control",
                                      method="normal").to_dict() == ref.to_dict()  # fmt: skip
    cli = run("matched", "--data", path, "--treated", "exposed", "--control", "control",
              "--method", "normal", "--gamma", "1:6:0.5", "--format", "json")  # fmt: skip
    import numpy as np

    grid = rosenbaum_bounds_from_data(path, treated="exposed", control="control",
                                      method="normal", gamma=np.arange(1, 6.5, 0.5))  # fmt: skip
    printed, own = json.loads(cli.stdout), json.loads(json.dumps(grid.to_dict()))
    assert {k: printed[k] for k in own} == own  # the command adds its sentence


def test_the_layout_leads_with_the_worst_case_and_where_it_stops(run):
    # Invented counts (a scenario of our own): 30 discordant pairs, 22 with the treated event.
    res = run("matched", "--discordant", 30, "--treated-events", 22, "--gamma", "1:2:0.5")
    assert res.exit_code == 0, res.stderr
    out = res.stdout
    assert out.startswith("Gamma is how many times more likely a hidden confounder could make")
    first = out.index("Gamma  Worst-case p  Below 0.05?")
    assert first < out.index("The other side of the bounds") < out.index("Best-case p")
    assert "1            0.0081          yes" in out and "1.5          0.0940           no" in out
    flat = " ".join(out.split())
    assert "It stops being below 0.05 at Gamma = 1.326 (solved exactly" in flat
    # the Gamma found is 1.3258: both claims hold below it, so the sentence's Gamma is 1.32
    assert (
        "stays below 0.05 for every Gamma under 1.32 and reaches 0.05 at a Gamma of 1.326: "
        "the result could lose significance at that level only if a hidden confounder made "
        "one unit of a pair at least 1.32 times"
    ) in flat
    assert "Upper bound on p" not in out and "Hodges-Lehmann estimates" not in out
    # the grid agrees with the solved Gamma: below alpha before it, at or above after
    res = rosenbaum_bounds(discordant=30, treated_events=22, gamma=np.linspace(1, 2, 2001))
    g = res.gamma_at_alpha
    below = res.p_upper < 0.05
    assert below[res.gamma < g - 1e-9].all() and not below[res.gamma > g + 1e-9].any()


def test_json_keys_stay_as_the_contract_fixes(run):
    data = json.loads(run("matched", "--discordant", 30, "--treated-events", 22, "--format",
                          "json").stdout)  # fmt: skip
    for key in ("test", "pairs", "statistic", "alpha", "rows", "gamma_at_alpha"):
        assert key in data
    assert {"gamma", "p_upper", "p_lower"} <= set(data["rows"][0])


MESSY_PAIRS = """pair,t,c
1,5.5,4
2,,3
3,NA,2
4,n/a,1
5,abc,2
6, 1.5 ,1
7,"2.5",1
8,1e-1,0
9,+3,1
10,NaN,1
11,null,2
12,-,1
13,0x10,1
14,1_000,2
15,.5,0
16,5.,1
17,TRUE,0
18,  ,1
19,None,1
"""


def test_a_pairs_file_is_read_as_pandas_reads_it(tmp_path):
    """Issue 26: files are read by polars (pandas' import cost the command half a second).
    Reference: pandas' read_csv and to_numeric(errors="coerce"), the earlier route, on cells
    that are missing, words, padded, quoted, signed or in other notations."""
    import pandas as pd

    from sensitivity.adapters.matched import matched_differences

    path = tmp_path / "pairs.csv"
    path.write_text(MESSY_PAIRS)
    got = matched_differences(path, treated="t", control="c")
    want = matched_differences(pd.read_csv(path), treated="t", control="c")
    for a, b in zip(got, want, strict=True):
        np.testing.assert_array_equal(a, b)
    assert got[1].tolist() == [1, 2, 3, 4, 9, 10, 11, 12, 13, 16, 17, 18]
    semi = tmp_path / "pairs_semicolons.csv"
    semi.write_text("pair;t;c\n1;116,5;106\n2;NA;101\n3;1,5e1;11\n4; -0,5 ;1\n5;abc;1\n")
    d, left_out = matched_differences(semi, treated="t", control="c")
    assert d.tolist() == [10.5, 4.0, -1.5] and left_out.tolist() == [1, 4]


def test_a_number_beyond_double_precision_in_a_file_is_refused(run, tmp_path):
    path = tmp_path / "pairs.csv"
    path.write_text("d\n1.5\n-0.5\n1.5e400\n2\n")
    res = run("matched", "--data", path, "--differences", "d")
    assert res.exit_code == 2
    assert res.stderr == (
        "Error: column 'd' holds inf on file line 4 (an infinity, or a number beyond double "
        "precision, about 1.8e308): each value must be a finite number\n"
    )


def test_the_fourier_routes_helpers_are_scipys():
    """Issue 26: the exact bound no longer imports scipy (0.2-0.4 s of the command): its FFT
    length and logistic function against scipy's own."""
    from scipy.fft import next_fast_len
    from scipy.special import expit

    from sensitivity.common.numeric import expit as _expit
    from sensitivity.matched.core import _fast_length

    assert [_fast_length(n) for n in range(1, 5000)] == [next_fast_len(n) for n in range(1, 5000)]
    x = np.concatenate([np.linspace(-800, 800, 20001), [-np.inf, np.inf]])
    np.testing.assert_allclose(_expit(x), expit(x), rtol=4e-16, atol=0)


@pytest.mark.parametrize(
    "extra, says",
    [
        (["--data", "demo/matched_pairs.csv", "--treated", "night_shift_sbp", "--control",
          "day_shift_sbp", "--discordant", "80", "--treated-events", "58"], "not both"),
        (["--discordant", "80", "--treated-events", "58", "--treated", "night_shift_sbp"],
         "give --data too"),
    ],
)  # fmt: skip
def test_options_of_the_other_input_are_refused_not_ignored(run, extra, says):
    # found by a new user's trial: the counts given beside --data were silently ignored
    res = run("matched", *extra)
    assert res.exit_code == 2 and says in res.stderr, res.stderr
    assert len(res.stderr.strip().splitlines()) <= 3 and "Traceback" not in res.stderr
