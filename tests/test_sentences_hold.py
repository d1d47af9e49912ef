"""Issue 19, second re-check: sentences that were not exactly true at some inputs.

- The E-value sentence sent the reader to "the accompanying table and figure" of unequal
  pairs where a view has none (a risk difference; an estimate at the null, E = 1).
- The line showing what was read from a published text rounded a 97.5% CI to "98% CI".
- A risk of 0 or 1 in a group gives a Wald interval of zero width (0/100 against 0/100 was
  "95% CI 0.0000 to 0.0000") with no word that it understates the uncertainty.
Invented numbers throughout (a scenario of our own).
"""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity import evalue, evalue_from_text
from sensitivity.evalues.risk_difference import evalue_rd

PAIRS = "Pairs of confounder strengths"
POINTER = "accompanying table"


def _views(result) -> list[str]:
    doc = result.document()
    return [" ".join(doc.render(f).split()) for f in ("text", "markdown", "html")]


@settings(max_examples=60, deadline=None)
@given(
    estimate=st.one_of(st.just(1.0), st.floats(0.2, 5)),
    width=st.floats(1.01, 3),
)
def test_the_pointer_to_unequal_pairs_only_where_they_are_shown(estimate, width):
    res = evalue("rr", estimate, (estimate / width, estimate * width))
    for text in _views(res):
        assert (POINTER in text) <= (PAIRS in text), text[:200]


@settings(max_examples=60, deadline=None)
@given(st.integers(1, 60), st.integers(1, 60), st.data())
def test_a_risk_difference_never_points_to_a_table_it_lacks(n1, n0, data):
    a = data.draw(st.integers(0, n1))
    c = data.draw(st.integers(0, n0))
    r = evalue_rd((a, n1, c, n0))
    edge = a in (0, n1) or c in (0, n0)
    for text in _views(r):
        assert POINTER not in text and PAIRS not in text
        assert ("Wald variance is 0" in text) == edge
        assert "is inf" not in text


@settings(max_examples=40, deadline=None)
@given(level=st.sampled_from(["90", "95", "97.5", "99", "99.9", "80"]))
def test_the_level_read_from_a_text_is_shown_as_written(level):
    res = evalue_from_text(f"RR 1.8 ({level}% CI 1.2-2.7)")
    said = " ".join(res.summary().split())
    assert f"{level}% CI 1.2 to 2.7." in said


def test_a_level_that_is_not_a_whole_percent_is_printed_as_it_is():
    """97.5% was printed "98%" wherever a level went through a whole-percent format: the
    weighting views and a published text whose level is filled in."""
    import numpy as np

    from sensitivity import weighting_bounds

    rng = np.random.default_rng(3)
    x = rng.normal(size=(200, 1))
    a = (rng.uniform(size=200) < 0.5).astype(float)
    y = x[:, 0] + 0.5 * a + rng.normal(size=200)
    w = weighting_bounds(y, a, covariates=np.c_[np.ones(200), x], lam=[1, 1.5], resamples=80,
                         seed=1, alpha=0.025)  # fmt: skip
    text = " ".join(w.summary().split())
    assert "97.5%" in text and "98%" not in text
    read = evalue_from_text("RR 2 (1.5-2.7)", ci_level=0.975)
    said = " ".join(read.summary().split())
    assert "read as 97.5%" in said and "98%" not in said


def test_from_model_says_what_it_got_instead_of_a_fit():
    """It said "got NoneType" for a data frame, a string and an unfitted model alike."""
    import numpy as np
    import pandas as pd
    import pytest
    import statsmodels.api as sm

    from sensitivity import InputError, from_model

    cases = [
        (pd.DataFrame({"a": [1.0, 2.0]}), "got pandas DataFrame (data, not a fitted model)"),
        ("y ~ a", "got a string ('y ~ a')"),
        (sm.OLS(np.arange(3.0), np.ones(3)), "got an unfitted OLS model (call .fit()"),
        (None, "got None"),
        (3.0, "got a float (3.0)"),
    ]
    for value, said in cases:
        with pytest.raises(InputError, match=r"must be a fitted OLS.*") as err:
            from_model(value, "a")
        assert said in str(err.value), str(err.value)


@settings(max_examples=30, deadline=None)
@given(draws=st.one_of(st.integers(1, 120), st.floats(40.1, 99.9)))
def test_a_simulation_interval_always_has_draws_beyond_both_tails(draws):
    """`--draws 1` printed a "95% interval 0.81 to 0.81" from one draw; 40.5 was cut to 40."""
    import pytest

    from sensitivity import InputError, simulate

    priors = {"prevalence_treated": "uniform:0.2:0.4", "prevalence_control": "fixed:0.3",
              "outcome_effect": "fixed:2"}  # fmt: skip
    if draws < 40 or draws != int(draws):
        rule = r"at least 40" if draws < 40 else r"a whole number"
        with pytest.raises(InputError, match=rf"`draws` must be {rule}"):
            simulate("rr", 0.81, (0.69, 0.95), draws=draws, seed=1, **priors)
        return
    r = simulate("rr", 0.81, (0.69, 0.95), draws=draws, seed=1, **priors)
    kept = r.draws - r.discarded
    assert kept >= 40 and 0.025 * kept >= 1


@given(st.text(alphabet=st.sampled_from(list("ab $~\\*_`[]|<&")), max_size=40))
def test_a_markdown_cell_leaves_no_mathematics_or_strikeout_live(text):
    """A label "a $\\frac{1}{ b$" rendered as TeX in report.md (pandoc, GitHub): every "$"
    and "~" is escaped, i.e. preceded by an odd number of backslashes."""
    import re

    from sensitivity.output.tables import markdown_cell

    out = markdown_cell(text)
    for m in re.finditer(r"(\\*)[$~]", out):
        assert len(m.group(1)) % 2 == 1, out
