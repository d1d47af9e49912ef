"""Issue 19: tail quantiles from the lower tail (finite to alpha 1e-300, refused below), and
levels printed as given (scipy.stats as the reference for the quantiles)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.common.levels import (
    ALPHA_FLOOR,
    check_alpha,
    check_level,
    level_text,
    t_critical,
    z_critical,
)


@settings(deadline=None)
@given(st.floats(ALPHA_FLOOR, 0.999))
def test_z_critical_is_the_normal_isf(alpha):
    from scipy.stats import norm

    z = float(z_critical(alpha))
    assert np.isfinite(z)
    assert z == pytest.approx(float(norm.isf(alpha / 2)), rel=1e-9, abs=1e-12)


@settings(deadline=None)
@given(st.floats(ALPHA_FLOOR, 0.999), st.floats(1, 1e6))
def test_t_critical_is_the_student_isf_and_finite(alpha, dof):
    """Reference: the forward two-sided tail, P(|T| > t) = I_x(dof/2, 1/2), x = dof/(dof + t²)
    (scipy.special.betainc; scipy.stats.t.isf itself gives -inf at dof 3, alpha 1e-300)."""
    from scipy.special import betainc

    crit = float(t_critical(alpha, dof))
    assert np.isfinite(crit) and crit > 0
    w = np.sqrt(dof) / crit  # x = w² / (1 + w²), no overflow at t = 3e299
    x = w * w / (1 + w * w)
    assert float(betainc(dof / 2, 0.5, x)) == pytest.approx(alpha, rel=1e-6)


@given(st.floats(1e-12, 0.5))
def test_a_level_prints_as_given(alpha):
    """The printed percentage, read back, is within its own rounding of the level."""
    text = level_text(alpha=alpha)
    if text.startswith("(100 − "):
        shown = float(text.removeprefix("(100 − ").removesuffix(")%")) / 100
        assert shown == pytest.approx(alpha, rel=5e-3)
    else:
        assert float(text.removesuffix("%")) == pytest.approx(100 * (1 - alpha), rel=1e-5)
    assert text != "100%"


@pytest.mark.parametrize("level, text", [(0.95, "95%"), (0.975, "97.5%"), (0.9, "90%"),
                                         (0.999, "99.9%"), (5e-10, "5e-08%")])  # fmt: skip
def test_common_levels(level, text):
    assert level_text(level) == text


@pytest.mark.parametrize("bad", [0, 1, 1e-301, 5e-324, -0.1, float("nan")])
def test_alpha_outside_the_stated_range_is_refused(bad):
    with pytest.raises(InputError, match="`alpha` must"):
        check_alpha(bad)


@pytest.mark.parametrize("bad", [0, 1, 5e-324, 1.5])
def test_a_level_outside_the_stated_range_is_refused(bad):
    with pytest.raises(InputError, match="`ci_level` must"):
        check_level(bad)


def test_evalue_prints_a_97_5_percent_interval_as_such(run):
    res = run("evalue", "--scale", "rr", "--estimate", 2, "--ci", 1.5, 3, "--ci-level", 0.975)
    assert res.exit_code == 0 and "97.5% CI" in res.stdout and "98% CI" not in res.stdout


def test_a_risk_difference_with_no_control_cases_says_no_finite_strength(run):
    res = run("evalue", "--scale", "rd", "--counts", 10, 100, 0, 100)
    assert res.exit_code == 0
    text = " ".join(res.stdout.split())
    assert "no unmeasured confounder of any finite strength could explain it away" in text
    assert "inf each" not in text


@given(st.floats(1e-15, 1 - 1e-15))
def test_a_level_given_prints_back_to_itself(level):
    """Issue 19: the printed percentage, read back, is 100 level within 1e-12 relative; a level
    within 1e-4 of 1 prints as (100 − x)% with x = 100 (1 - level) exactly as the level was
    written (its shortest repr), so 1 - x/100 reads back as the same float."""
    from decimal import Decimal

    text = level_text(level)
    assert text.endswith("%") and "− 0)" not in text
    if text.startswith("(100 − "):
        x = text.removeprefix("(100 − ").removesuffix(")%")
        assert 1 - level < 1e-4
        assert float(1 - Decimal(x) / 100) == level
    else:
        assert 1 - level >= 1e-4 * (1 - 1e-12)
        assert float(text.removesuffix("%")) == pytest.approx(100 * level, rel=1e-12)


@given(st.floats(ALPHA_FLOOR, 0.999))
def test_a_level_from_alpha_prints_back_to_it(alpha):
    text = level_text(alpha=alpha)
    if text.startswith("(100 − "):
        x = float(text.removeprefix("(100 − ").removesuffix(")%"))
        assert x == pytest.approx(100 * alpha, rel=1e-12)
    else:
        assert float(text.removesuffix("%")) == pytest.approx(100 * (1 - alpha), rel=1e-12)


@pytest.mark.parametrize(
    "level, alpha, text",
    [(1e-15, None, "1e-13%"), (0.99999, None, "(100 − 0.001)%"), (None, 0.07, "93%"),
     (None, 1e-17, "(100 − 1e-15)%"), (0.93, None, "93%"), (0.123, None, "12.3%")],
)  # fmt: skip
def test_levels_the_review_found_garbled(level, alpha, text):
    """Issue 19: 1e-15 printed as 9.99201e-14%; alpha 1e-17 as (100 − 0)%."""
    assert level_text(level, alpha=alpha) == text
