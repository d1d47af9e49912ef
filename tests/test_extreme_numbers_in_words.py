"""Issue 19, second re-check: a number at the edge of the double range prints as a number a
reader can take in, in every view, never as hundreds of digits (`impact --t 1e-300 --dof 3`
printed a 303-digit percentage; `--dof 1e300` a 301-digit count of degrees of freedom)."""

from __future__ import annotations

import re

from hypothesis import given, settings
from hypothesis import strategies as st

import sensitivity as s
from sensitivity.output.tables import count, percent

LONG_NUMBER = re.compile(r"\d[\d,.]{24,}")
FORMATS = ("text", "markdown", "latex", "html")

MAGNITUDE = st.floats(min_value=-300, max_value=300).map(lambda e: 10.0**e)


def _views(result) -> str:
    doc = result.document()
    return "\n".join(doc.render(f) for f in FORMATS) + "\n".join(result.to_dict().get(
        "sentences", []))  # fmt: skip


@settings(max_examples=60, deadline=None)
@given(t=MAGNITUDE, dof=st.floats(min_value=0, max_value=300).map(lambda e: 3 * 10.0**e))
def test_the_impact_threshold_prints_no_endless_number(t, dof):
    text = _views(s.impact_threshold(t=t, dof=dof))
    assert not LONG_NUMBER.search(text), LONG_NUMBER.search(text).group()[:60]


@settings(max_examples=60, deadline=None)
@given(se=MAGNITUDE, dof=st.floats(min_value=0, max_value=300).map(lambda e: 3 * 10.0**e))
def test_the_partial_r2_summary_prints_no_endless_number(se, dof):
    try:
        result = s.partial_r2_summary(0.5, se, dof)
    except s.InputError:
        return  # t beyond double precision is refused, naming the inputs
    text = _views(result)
    assert not LONG_NUMBER.search(text), LONG_NUMBER.search(text).group()[:60]


@given(st.floats(allow_nan=False, allow_infinity=False))
def test_a_share_and_a_count_have_few_digits(value):
    assert len(percent(value)) <= 12 and "inf" not in percent(value)
    assert len(count(abs(value))) <= 24


def test_a_count_keeps_whole_numbers_and_fractions():
    assert count(1192) == "1,192"
    assert count(1192.5) == "1,192.5"
    assert count(1e300) == "1e+300"
    assert percent(3.18e300) == "3.18e+302%"


@settings(max_examples=80, deadline=None)
@given(
    b0=st.sampled_from([0.5, 0.4, -0.3]),
    target=st.one_of(st.just(0.0), MAGNITUDE, MAGNITUDE.map(lambda x: -x)),
    delta=st.one_of(st.sampled_from([1.0, 1.000001, 0.999999, 2.0]), st.floats(0.01, 5)),
    exact=st.booleans(),
)
def test_the_stability_sentence_never_says_inf_and_shows_delta_as_given(b0, target, delta, exact):
    """`--estimate-short 0.4 --estimate-long 0.4` said "would have to be inf times as strongly
    related"; `--target 1e308` printed "-inf approximate"; delta 1.000001 printed as 1."""
    variances = {"var_outcome": 1.0, "var_treatment": 1.0, "var_treatment_residual": 0.5}
    try:
        r = s.coefficient_stability(
            b0, 0.1, 0.4, 0.3, target=target, delta=delta, **(variances if exact else {})
        )
    except s.InputError:
        return
    text = _views(r)
    assert not re.search(r"\b-?inf\b|\bnan\b", text), text
    shown = re.search(r"At delta (\S+) the bias", r.document().render("text").replace(
        "\n", " "))  # fmt: skip
    assert shown and float(shown.group(1)) == float(f"{delta:.12g}")


@settings(max_examples=40, deadline=None)
@given(t=MAGNITUDE, dof=st.floats(1, 1e6), alpha=st.floats(1e-300, 0.5))
def test_the_impact_critical_t_prints_as_a_number_a_reader_can_take_in(t, dof, alpha):
    """`impact --dof 1e-12` printed a critical t of forty digits; a dof below 1 is now
    refused, and a huge critical t (tiny alpha on 1 df) is shown in scientific form."""
    try:
        r = s.impact_threshold(t=t, dof=dof, alpha=alpha)
    except s.InputError:
        return  # no finite critical t at this alpha and dof: refused, naming alpha
    text = _views(r)
    assert not LONG_NUMBER.search(text), LONG_NUMBER.search(text).group()[:60]


def test_a_regression_has_at_least_one_residual_degree_of_freedom():
    import pytest

    with pytest.raises(s.InputError, match=r"`dof` must be at least 1; got 1e-12"):
        s.impact_threshold(t=3.0, dof=1e-12)
