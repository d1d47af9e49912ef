"""Issue 19: the E-value sentence says what the E-value is. Its claim, checked: a confounder
pair (a, b) explains RR away (bounding factor ab/(a+b-1) >= RR, Ding & VanderWeele 2016) only
if max(a, b) >= E, and pairs below E on one side do so (so "each" would be untrue)."""

from __future__ import annotations

from hypothesis import given
from hypothesis import strategies as st

from sensitivity import evalue
from sensitivity.evalues.core import bounding_factor, evalue_of_rr


@given(st.floats(1.01, 50), st.floats(1, 200), st.floats(1, 200))
def test_explaining_away_needs_at_least_e_on_one_side(rr, a, b):
    e = float(evalue_of_rr(rr))
    if float(bounding_factor(a, b)) >= rr:
        assert max(a, b) >= e * (1 - 1e-12)


@given(st.floats(1.1, 20))
def test_a_pair_weaker_than_e_on_one_side_can_explain_it_away(rr):
    e = float(evalue_of_rr(rr))
    a = (1 + e) / 2  # below E, above 1
    # the b that makes B(a, b) = rr: ab/(a + b - 1) = rr  =>  b = rr (a - 1)/(a - rr) if a > rr
    if a > rr:
        b = rr * (a - 1) / (a - rr)
        assert float(bounding_factor(a, b * 1.001)) >= rr
    sentence = " ".join(str(evalue("rr", rr)).split())
    # the sentence speaks of equal strengths only, and names the unequal pairs' table
    assert "equal risk ratios" in sentence and "unequal pairs that could" in sentence
    assert "each, beyond" not in sentence
