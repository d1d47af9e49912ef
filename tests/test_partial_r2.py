"""Partial-R² formulas: the published summary example, brute force, and properties."""

import numpy as np
import pytest
from conftest import load_cases
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.partial_r2 import (
    adjusted_for_confounder,
    benchmark_strengths,
    bias_of_confounder,
    partial_r2_of_t,
    partial_r2_summary,
    robustness_value_of_t,
    t_critical,
)

PUBLISHED = load_cases("partial_r2_published.csv")


@pytest.mark.parametrize("case", PUBLISHED, ids=[c["id"] for c in PUBLISHED])
@pytest.mark.parametrize("stat", ["partial_r2", "robustness_value", "robustness_value_alpha"])
def test_published_summary(case, stat):
    # Cinelli & Hazlett (2020), JRSS-B: t = 4.18, dof = 783 -> 2.2%, 13.9%, 7.6%.
    res = partial_r2_summary(case["t"], se=1.0, dof=case["dof"], alpha=case["alpha"])
    assert getattr(res, stat) == pytest.approx(case[stat], abs=case["tolerance"])


def _brute_rv(t, dof, alpha=None, reduce_by=1.0, n=2001):
    """Least max(R2_t, R2_y) over a fine grid at which the conclusion tips."""
    g = np.linspace(0, 1, n)[:-1]
    adj = adjusted_for_confounder(
        g[:, None], g[None, :], estimate=t, se=1.0, dof=dof, alpha=alpha or 0.05
    )
    target = (1 - reduce_by) * t
    if alpha is None:
        hit = adj["estimate"] <= target
    else:
        hit = adj["lower"] <= target
    m = np.maximum(g[:, None], g[None, :])
    return float(np.where(hit, m, np.inf).min())


@pytest.mark.parametrize(
    "t, dof, alpha, reduce_by",
    [
        (4.18, 783, None, 1.0),
        (4.18, 783, 0.05, 1.0),
        (2.5, 50, 0.05, 1.0),
        (6.0, 200, 0.10, 0.5),
        (30.0, 40, 0.05, 1.0),  # extreme branch: f_q >= 1/f*
        (60.0, 20, 0.05, 1.0),  # extreme branch, deep
    ],
)
def test_robustness_values_match_brute_force(t, dof, alpha, reduce_by):
    rv = float(robustness_value_of_t(t, dof=dof, reduce_by=reduce_by, alpha=alpha))
    assert rv == pytest.approx(_brute_rv(t, dof, alpha, reduce_by), abs=1.5e-3)


def test_extreme_branch_is_taken():
    fq = 30 / np.sqrt(40)
    fstar = float(t_critical(0.05, 39)) / np.sqrt(39)
    assert fq >= 1 / fstar
    expected = (fq**2 - fstar**2) / (1 + fq**2)
    assert float(robustness_value_of_t(30, dof=40, alpha=0.05)) == pytest.approx(
        expected, rel=1e-12
    )


def test_not_significant_gives_zero():
    assert float(robustness_value_of_t(1.5, dof=100, alpha=0.05)) == 0.0
    res = partial_r2_summary(1.5, se=1.0, dof=100)
    assert "confidence interval already includes zero" in res.sentence()


def test_benchmark_at_k1_on_the_treatment_side():
    # METHODS.md section 2: R2_t = k r_t / (1 - r_t).
    r2t, _, _ = benchmark_strengths(0.1, 0.2, 1.0)
    assert float(r2t) == pytest.approx(0.1 / 0.9)


def test_impossible_multiplier_is_an_error():
    with pytest.raises(ValueError, match=r"`k_treatment` 10 is impossible .*\(k must be below 9\)"):
        benchmark_strengths(0.1, 0.2, 10.0)


def test_capped_outcome_side_warns():
    from sensitivity.common.errors import SensitivityWarning
    from sensitivity.partial_r2 import CovariateStrength, benchmark_scenarios

    strong = CovariateStrength("x", ("x",), 0.3, 0.6)
    with pytest.warns(SensitivityWarning, match="capped at 1"):
        (sc,) = benchmark_scenarios(1.0, 0.1, 100, strong, [(2.0, 2.0)], 0.05)
    assert sc.capped and sc.r2_outcome == 1.0


# ----------------------------------------------------------------------- properties
@given(st.floats(0.1, 50), st.floats(0.1, 50), st.integers(3, 10_000))
def test_robustness_values_rise_with_abs_t(t1, t2, dof):
    lo, hi = sorted((t1, t2))
    assert robustness_value_of_t(hi, dof=dof) >= robustness_value_of_t(lo, dof=dof) - 1e-15
    assert (
        robustness_value_of_t(hi, dof=dof, alpha=0.05)
        >= robustness_value_of_t(lo, dof=dof, alpha=0.05) - 1e-15
    )
    assert robustness_value_of_t(-hi, dof=dof) == robustness_value_of_t(hi, dof=dof)


@given(st.floats(0, 0.98), st.floats(0, 0.98), st.floats(0, 0.98), st.floats(0, 0.98))
def test_bias_grows_with_both_strengths(a, b, c, d):
    t_lo, t_hi = sorted((a, b))
    y_lo, y_hi = sorted((c, d))
    assert bias_of_confounder(t_hi, y_hi, se=1.0, dof=100) >= bias_of_confounder(
        t_lo, y_lo, se=1.0, dof=100
    )
    assert bias_of_confounder(t_hi, y_lo, se=1.0, dof=100) >= bias_of_confounder(
        t_lo, y_lo, se=1.0, dof=100
    )


@given(st.floats(-20, 20).filter(lambda t: abs(t) > 1e-3), st.integers(3, 5000))
def test_partial_r2_in_unit_interval_and_rv_below_one(t, dof):
    assert 0 < partial_r2_of_t(t, dof) < 1
    assert 0 <= robustness_value_of_t(t, dof=dof) < 1


# ----------------------------------------------------------------------- bad input
@pytest.mark.parametrize(
    "kwargs, message",
    [
        ({"estimate": 1.0, "se": 0.0, "dof": 10}, r"`se` must be positive; got 0"),
        ({"estimate": 1.0, "se": -0.2, "dof": 10}, r"`se` must be positive; got -0.2"),
        ({"estimate": 1.0, "se": 0.2, "dof": 1}, r"`dof` must be at least 2; got 1"),
        (
            {"estimate": 1.0, "se": 0.2, "dof": 10, "alpha": 1.0},
            r"`alpha` must lie strictly between 0 and 1; got 1",
        ),
        (
            {"estimate": 1.0, "se": 0.2, "dof": 10, "alpha": 0.0},
            r"`alpha` must lie strictly between 0 and 1; got 0",
        ),
        (
            {"estimate": 1.0, "se": 0.2, "dof": 10, "reduce_by": 0.0},
            r"`reduce_by` must be positive; got 0",
        ),
        (
            {"estimate": 1.0, "se": 0.2, "dof": 10, "r2_treatment": 1.0, "r2_outcome": 0.1},
            r"`r2_treatment` must lie in \[0, 1\); got 1",
        ),
        (
            {"estimate": 1.0, "se": 0.2, "dof": 10, "r2_treatment": 0.1, "r2_outcome": -0.1},
            r"`r2_outcome` must lie in \[0, 1\); got -0.1",
        ),
        (
            {"estimate": 1.0, "se": 0.2, "dof": 10, "r2_treatment": 0.1},
            r"`r2_treatment` needs `r2_outcome`",
        ),
        (
            {"estimate": 1.0, "se": 0.2, "dof": 10, "r2_outcome": 0.1},
            r"`r2_outcome` needs `r2_treatment`",
        ),
        (
            {
                "estimate": 1.0,
                "se": 0.2,
                "dof": 10,
                "r2_treatment": [0.1, 0.2],
                "r2_outcome": [0.1],
            },
            r"must come in pairs; got 2 and 1",
        ),
        ({"estimate": 1.0, "dof": 10}, r"`se` \(or the t statistic `t`\) is required"),
        ({"estimate": 1.0, "se": 0.2, "t": 5.0, "dof": 10}, r"give `se` or `t`, not both"),
        ({"estimate": 1.0, "t": -5.0, "dof": 10}, r"`t` must have the sign of `estimate`"),
    ],
)
def test_bad_summary_input(kwargs, message):
    with pytest.raises(ValueError, match=message):
        partial_r2_summary(**kwargs)


# ---------------------------------------------------------------- issue 19: tiny alpha
@settings(max_examples=200, deadline=None)
@given(st.floats(1e-300, 0.5), st.integers(3, 100_000), st.floats(0.01, 100))
def test_tiny_alpha_keeps_every_number_finite(alpha, dof, t):
    """The critical t comes from the lower tail: finite to alpha 1e-300 (the forward tail by
    scipy's incomplete beta as the reference: scipy's t.isf is -inf at dof 3, alpha 1e-300),
    no warning, and the level printed from alpha, never "100% CI"."""
    from scipy.special import betainc

    res = partial_r2_summary(t, 1.0, dof, alpha=alpha)
    crit = float(t_critical(alpha, dof - 1))
    w = np.sqrt(dof - 1) / crit  # P(|T| > crit) = I_x((dof-1)/2, 1/2), x = w² / (1 + w²)
    assert float(betainc((dof - 1) / 2, 0.5, w * w / (1 + w * w))) == pytest.approx(alpha, rel=1e-6)
    assert np.isfinite(res.robustness_value_alpha)
    text = str(res)
    assert "100% CI" not in text and "nan" not in text


@pytest.mark.parametrize("alpha", [1e-301, 5e-324])
def test_alpha_below_the_limit_is_refused(alpha):
    with pytest.raises(InputError, match=r"`alpha` must be at least 1e-300"):
        partial_r2_summary(3.0, 1.0, 100, alpha=alpha)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.05, 0.95), st.floats(0.01, 0.5), st.lists(st.floats(0.1, 20), min_size=1,
                                                             max_size=4))  # fmt: skip
def test_an_impossible_benchmark_is_a_row_and_the_rest_are_computed(r2t, r2y, ks):
    """Issue 19: k at or above (1 - R²)/R² cannot exist (Cinelli & Hazlett 2020); that row says
    so with the bound, and every other row equals the row computed alone."""
    import warnings

    from sensitivity.common.errors import SensitivityWarning
    from sensitivity.partial_r2.core import benchmark_scenarios
    from sensitivity.partial_r2.result import CovariateStrength

    warnings.simplefilter("ignore", SensitivityWarning)  # a capped outcome side is said apart
    cov = CovariateStrength("C(region)", ("region",), r2t, r2y)
    rows = benchmark_scenarios(0.5, 0.1, 500, cov, [(k, k) for k in ks], 0.05)
    bound = (1 - r2t) / r2t
    for k, row in zip(ks, rows, strict=True):
        assert row.impossible == (k >= bound)
        if row.impossible:
            assert row.k_max == pytest.approx(bound) and np.isnan(row.estimate)
        else:
            alone = benchmark_scenarios(0.5, 0.1, 500, cov, [(k, k)], 0.05)[0]
            assert row.estimate == alone.estimate and not np.isnan(row.estimate)
