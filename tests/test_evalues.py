"""E-values and the bounding factor against published worked examples and theory."""

import math

import numpy as np
import pytest
from conftest import load_cases
from hypothesis import given
from hypothesis import strategies as st

from sensitivity.evalues import (
    bounding_factor,
    evalue,
    evalue_of_interval,
    evalue_of_rr,
    from_risk_ratio,
    to_risk_ratio,
)

CASES = load_cases("evalue_published.csv", "evalue_computed.csv")


def _result(case):
    ci = None if case["lower"] is None else (case["lower"], case["upper"])
    return evalue(
        case["scale"],
        case["estimate"],
        ci,
        se=case["se"],
        sd=case["sd"],
        contrast=case["contrast"] or 1.0,
        outcome=case["outcome"],
        target=case["target"],
    )


@pytest.mark.parametrize("case", CASES, ids=[c["id"] for c in CASES])
def test_evalue_of_estimate(case):
    # Source: the case's `source` column (published or computed from the published formula).
    assert float(_result(case).evalue) == pytest.approx(case["evalue"], abs=case["tolerance"])


@pytest.mark.parametrize("case", CASES, ids=[c["id"] for c in CASES])
def test_evalue_of_interval(case):
    res = _result(case)
    assert float(res.evalue_ci) == pytest.approx(case["evalue_ci"], abs=case["tolerance"])


def test_bounding_factor_of_published_evalue_recovers_rr():
    # VanderWeele & Ding (2017): E = 7.26 for RR 3.9, so B(E, E) = 3.9 to the printed digits.
    assert float(bounding_factor(7.26, 7.26)) == pytest.approx(3.9, abs=0.005)


def test_rare_or_hr_equals_rr():
    # VanderWeele & Ding (2017): for a rare outcome OR and HR are read as risk ratios.
    rr = evalue("rr", 2.0, (1.5, 2.7))
    for scale in ("or", "hr"):
        res = evalue(scale, 2.0, (1.5, 2.7), outcome="rare")
        assert float(res.evalue) == float(rr.evalue)


def test_prevalence_rule_decides_rare_and_common():
    # The 15% line is common practice (VanderWeele 2017 uses it; no single rule is published).
    assert evalue("or", 2.0, prevalence=0.149).outcome == "rare"
    assert evalue("or", 2.0, prevalence=0.15).outcome == "common"


def test_hr_inverse_conversion_round_trips():
    hr = np.array([0.2, 0.72, 1.0, 1.4, 9.0])
    back = from_risk_ratio("hr", to_risk_ratio("hr", hr, outcome="common"), outcome="common")
    np.testing.assert_allclose(back, hr, rtol=1e-12)


def test_confounder_at_evalue_exactly_explains_estimate():
    # Ding & VanderWeele (2016): a confounder with both RRs equal to E moves RR to the null.
    res = evalue("rr", 3.9, (1.8, 8.7))
    bound = res.confounder(res.evalue, res.evalue)
    assert float(bound.rr) == pytest.approx(1.0, rel=1e-12)
    lim = res.confounder(res.evalue_ci, res.evalue_ci)
    assert float(lim.rr_ci_limit) == pytest.approx(1.0, rel=1e-12)


def test_confounder_on_common_or_is_reported_back_on_or_scale():
    res = evalue("or", 2.1, (1.4, 3.15), outcome="common")
    b = res.confounder(2.0, 2.0)
    # B(2, 2) = 4/3; RR = sqrt(2.1) / (4/3), back on the OR scale by squaring.
    assert float(b.estimate) == pytest.approx((math.sqrt(2.1) * 3 / 4) ** 2, rel=1e-12)


def test_vectorised_estimates():
    est = np.array([0.5, 1.3, 3.9])
    res = evalue("rr", est, (est * 0.8, est * 1.2))
    assert res.evalue.shape == (3,)
    assert len(res.records()) == 3


# ----------------------------------------------------------------------- properties
ratios = st.floats(min_value=1e-4, max_value=1e4, allow_nan=False, allow_infinity=False)


@given(ratios)
def test_evalue_symmetric_under_inversion(rr):
    # Theory: E(RR) = E(1/RR) (VanderWeele & Ding 2017 invert protective ratios).
    assert evalue_of_rr(rr) == pytest.approx(evalue_of_rr(1 / rr), rel=1e-9)


@given(ratios, ratios)
def test_evalue_grows_with_log_distance_from_null(a, b):
    if abs(math.log(a)) < abs(math.log(b)):
        a, b = b, a
    assert evalue_of_rr(a) >= evalue_of_rr(b) * (1 - 1e-12)


@given(ratios)
def test_bounding_factor_at_evalue_is_rr(rr):
    # E solves B(E, E) = RR (Ding & VanderWeele 2016; VanderWeele & Ding 2017).
    e = evalue_of_rr(rr)
    assert bounding_factor(e, e) == pytest.approx(max(rr, 1 / rr), rel=1e-9)


@given(ratios, st.floats(0.05, 1.0), st.floats(1.0, 20.0))
def test_ci_evalue_never_exceeds_estimate(rr, shrink, stretch):
    lower, upper = rr * shrink, rr * stretch
    assert evalue_of_interval(lower, upper) <= evalue_of_rr(rr) * (1 + 1e-12)


@given(
    st.lists(st.tuples(ratios, st.floats(0.1, 1.0), st.floats(1.0, 10.0)), min_size=1, max_size=20)
)
def test_vectorised_equals_scalar_loop(rows):
    est = np.array([r[0] for r in rows])
    lo = est * np.array([r[1] for r in rows])
    up = est * np.array([r[2] for r in rows])
    vec = evalue("rr", est, (lo, up))
    for i in range(len(rows)):
        one = evalue("rr", est[i], (lo[i], up[i]))
        assert vec.evalue[i] == float(one.evalue)
        assert vec.evalue_ci[i] == float(one.evalue_ci)


# ----------------------------------------------------------------------- bad input
@pytest.mark.parametrize(
    "args, kwargs, message",
    [
        (("rr", 0.0), {}, r"`estimate` must be positive; got 0"),
        (("rr", -2.0), {}, r"`estimate` must be positive; got -2"),
        (("rr", float("inf")), {}, r"`estimate` must be a finite number; got inf"),
        (("rr", float("nan")), {}, r"`estimate` must be a finite number; got nan"),
        (("rr", "abc"), {}, r"`estimate` must be numeric; got 'abc'"),
        (
            ("rr", 3.9, (4.0, 8.7)),
            {},
            r"`estimate` must lie within `ci`; got 3.9 outside \[4, 8.7\]",
        ),
        (("rr", 3.9, (8.7, 1.8)), {}, r"`ci` lower limit must not exceed the upper; got 8.7 > 1.8"),
        (("rr", 3.9, (0.0, 8.7)), {}, r"`ci` must be positive; got 0"),
        (("or", 2.0), {}, r"the outcome's frequency \(`outcome`\) is needed on the or scale"),
        (("hr", 2.0), {}, r"the outcome's frequency \(`outcome`\) is needed on the hr scale"),
        (("or", 2.0), {"prevalence": 1.5}, r"`prevalence` must lie in \[0, 1\]; got 1.5"),
        (
            ("or", 2.0),
            {"prevalence": 0.1, "outcome": "rare"},
            r"give `outcome` or `prevalence`, not both",
        ),
        (("or", 2.0), {"outcome": "often"}, r"`outcome` must be one of rare, common; got 'often'"),
        (("md", 2.0), {}, r"`sd` is required for scale md"),
        (("md", 2.0), {"sd": 0.0}, r"`sd` must be positive; got 0"),
        (("smd", 0.4), {"se": -0.1}, r"`se` must be positive; got -0.1"),
        (("smd", 0.4, (0.2, 0.6)), {"se": 0.1}, r"give `se` or `ci` for scale smd, not both"),
        (("rr", 2.0), {"se": 0.1}, r"`se` applies to scales smd and md only; got rr"),
        (("rr", 2.0), {"target": 0.0}, r"`target` must be positive; got 0"),
        (("rr", 2.0), {"target": -1.0}, r"`target` must be positive; got -1"),
        (("smd", 0.4), {"sd": 2.0}, r"`sd` applies to scale md only; got smd"),
        (("md", 0.4), {"sd": 2.0, "contrast": 0.0}, r"`contrast` must be positive; got 0"),
        (("xx", 2.0), {}, r"`scale` must be one of rr, or, hr, smd, md; got 'xx'"),
    ],
)
def test_bad_input_names_argument_and_rule(args, kwargs, message):
    with pytest.raises((ValueError, TypeError), match=message):
        evalue(*args, **kwargs)


def test_confounder_strength_below_one_is_refused():
    with pytest.raises(ValueError, match=r"`rr_treatment` must be at least 1; got 0.5"):
        evalue("rr", 2.0).confounder(0.5, 2.0)


def test_interval_covering_null_is_one_with_a_note():
    res = evalue("rr", 1.3, (0.9, 1.9))
    assert float(res.evalue_ci) == 1.0
    assert any("includes the null" in n for n in res.notes)


def test_one_result_keeps_its_interval_as_plain_numbers():
    # Printed in a notebook, a single result's interval reads as numbers, not arrays.
    from sensitivity import evalue

    res = evalue("rr", 3.9, (1.8, 8.7))
    assert repr(res.ci) == "(1.8, 8.7)" and repr(res.rr_ci) == "(1.8, 8.7)"
    many = evalue("rr", np.array([3.9, 2.0]), (np.array([1.8, 1.2]), np.array([8.7, 3.1])))
    assert many.ci[0].shape == (2,)
