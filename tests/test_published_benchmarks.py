"""Benchmarks from a paper's published numbers agree with benchmarks computed from the data.

Source of the published numbers: a statsmodels OLS fit of the Fair (1978) affairs data shipped
with statsmodels (`sm.datasets.fair`): the benchmark's t statistic in the outcome model, and in
a statsmodels OLS of the treatment on the covariates, with each fit's residual dof. The
data route (`partial_r2_from_model`) computes the same covariate's strengths itself.
"""

import json

import numpy as np
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from hypothesis import given
from hypothesis import strategies as st

from sensitivity.adapters.statsmodels import partial_r2_from_model
from sensitivity.common.errors import InputError
from sensitivity.partial_r2 import benchmark_strengths, bias_of_confounder, partial_r2_summary
from sensitivity.partial_r2.published import (
    benchmark_from_text,
    published_benchmark,
    with_published_benchmarks,
)

OUTCOME = "affairs ~ rate_marriage + age + yrs_married + educ"
TREATMENT = "rate_marriage ~ age + yrs_married + educ"


@pytest.fixture(scope="module")
def fits():
    data = sm.datasets.fair.load_pandas().data
    return data, smf.ols(OUTCOME, data).fit(), smf.ols(TREATMENT, data).fit()


def _published(outcome_fit, treatment_fit, name):
    return published_benchmark(
        name,
        t_treatment=treatment_fit.tvalues[name],
        dof_treatment=treatment_fit.df_resid,
        t_outcome=outcome_fit.tvalues[name],
        dof_outcome=outcome_fit.df_resid,
    )


def _same(a, b, tol=1e-10):
    assert len(a.scenarios) == len(b.scenarios)
    for x, y in zip(a.scenarios, b.scenarios, strict=True):
        for field in ("r2_treatment", "r2_outcome", "bias", "estimate", "se", "t"):
            assert getattr(x, field) == pytest.approx(getattr(y, field), rel=tol, abs=tol)
        assert np.allclose(x.ci, y.ci, rtol=tol, atol=tol)
        assert (x.benchmark, x.k_treatment, x.k_outcome) == (
            y.benchmark,
            y.k_treatment,
            y.k_outcome,
        )


@pytest.mark.parametrize("name", ["age", "yrs_married", "educ"])
def test_published_t_statistics_give_the_data_routes_bounds(fits, name):
    _, out, treat = fits
    from_data = partial_r2_from_model(out, "rate_marriage", benchmarks=[name, f"{name}:2"])
    est, se, dof = out.params["rate_marriage"], out.bse["rate_marriage"], out.df_resid
    published = partial_r2_summary(
        est,
        se,
        dof,
        benchmark_r2=[(_published(out, treat, name), 1), (_published(out, treat, name), 2)],
    )
    _same(from_data, published)
    assert published.scenarios[0].benchmark_source == "published"
    assert from_data.scenarios[0].to_dict()["benchmark_source"] == "data"


def test_published_partial_r2_pairs_and_unequal_multiples_agree(fits):
    _, out, treat = fits
    from_data = partial_r2_from_model(out, "rate_marriage", benchmarks=["age:1:3"])
    cov = {c.name: c for c in from_data.covariates}["age"]
    published = partial_r2_summary(
        out.params["rate_marriage"],
        out.bse["rate_marriage"],
        out.df_resid,
        benchmark_r2=[("age:1:3", cov.r2_treatment, cov.r2_outcome)],
    )
    _same(from_data, published)


def test_published_benchmarks_added_to_a_data_result(fits):
    _, out, treat = fits
    bare = partial_r2_from_model(out, "rate_marriage")
    added = with_published_benchmarks(bare, [(_published(out, treat, "educ"), 2)])
    _same(partial_r2_from_model(out, "rate_marriage", benchmarks=["educ:2"]), added)
    assert any("published numbers" in n for n in added.notes)


def test_the_command_line_form_agrees_with_the_data_route(run, fits, tmp_path):
    data, out, treat = fits
    path = tmp_path / "fair.csv"
    data.to_csv(path, index=False)
    common = ("--format", "json")
    res = run("partial-r2", "--data", path, "--formula", OUTCOME, "--treatment",
              "rate_marriage", "--benchmark", "age", "--benchmark", "age:2", *common)  # fmt: skip
    assert res.exit_code == 0, res.stderr
    from_data = json.loads(res.stdout)["scenarios"]
    t_side = f"t:{float(treat.tvalues['age'])!r}:{treat.df_resid:g}"
    y_side = f"t:{float(out.tvalues['age'])!r}"  # the outcome model's dof is --dof
    res = run("partial-r2", "--estimate", repr(float(out.params["rate_marriage"])), "--se",
              repr(float(out.bse["rate_marriage"])), "--dof", out.df_resid,
              "--benchmark-r2", "age", t_side, y_side, "--benchmark-r2", "age:2", t_side,
              y_side, *common)  # fmt: skip
    assert res.exit_code == 0, res.stderr
    published = json.loads(res.stdout)["scenarios"]
    for a, b in zip(from_data, published, strict=True):
        assert b["benchmark"] == "age" and b["benchmark_source"] == "published"
        assert b["bias_adjusted"]["estimate"] == pytest.approx(
            a["bias_adjusted"]["estimate"], rel=1e-10
        )
        assert b["bias_adjusted"]["ci"] == pytest.approx(a["bias_adjusted"]["ci"], rel=1e-10)
    # With data input, --benchmark-r2 adds to the data's own benchmarks.
    res = run("partial-r2", "--data", path, "--formula", OUTCOME, "--treatment",
              "rate_marriage", "--benchmark", "age", "--benchmark", "age:2", "--benchmark-r2",
              "age_paper", t_side, y_side, "--benchmark-r2", "age_paper:2", t_side, y_side,
              *common)  # fmt: skip
    both = json.loads(res.stdout)["scenarios"]
    assert [s["benchmark"] for s in both] == ["age", "age", "age_paper", "age_paper"]
    assert both[2]["bias_adjusted"]["ci"] == pytest.approx(both[0]["bias_adjusted"]["ci"], 1e-10)


def test_r2_is_t_squared_over_t_squared_plus_dof():
    # The identity R² = t²/(t² + dof) (Cinelli & Hazlett 2020, their eq. for the partial R²
    # of a regressor from its t statistic).
    b = published_benchmark("x", t_treatment=-3.0, dof_treatment=91, t_outcome=2.0, dof_outcome=96)
    assert b.r2_treatment == pytest.approx(9 / 100)
    assert b.r2_outcome == pytest.approx(4 / 100)


@given(st.floats(0.001, 0.2), st.floats(0.001, 0.05), st.floats(0.5, 3), st.floats(10, 1e5))
def test_text_and_keyword_forms_agree(rt, ry, k, dof):
    text = benchmark_from_text("z", repr(rt), repr(ry))
    assert (text.r2_treatment, text.r2_outcome) == (rt, ry)
    res = partial_r2_summary(1.0, 0.1, dof, benchmark_r2=[(text, k)])
    (s,) = res.scenarios
    r2t, r2y, _ = benchmark_strengths(rt, ry, k)
    assert (s.r2_treatment, s.r2_outcome) == (float(r2t), float(r2y))
    assert s.bias == pytest.approx(float(bias_of_confounder(r2t, r2y, se=0.1, dof=dof)))


def test_assumed_treatment_side_is_stated():
    b = benchmark_from_text("age", "assumed:0.04", "0.02")
    assert b.source.startswith("published outcome side; assumed")
    res = partial_r2_summary(1.0, 0.2, 500, benchmark_r2=[b])
    assert res.scenarios[0].benchmark_source == b.source
    assert any("an assumption" in a for a in res.assumptions)
    assert any("its treatment side (4.00%) is an assumption" in n for n in res.notes)
    assert "age ×1 (treatment side assumed)" in res.document().render("text")


def test_missing_treatment_side_says_what_is_missing_and_how_to_go_on(run):
    res = run("partial-r2", "--estimate", 1, "--se", 0.2, "--dof", 500,
              "--benchmark-r2", "age", "?", "0.02")  # fmt: skip
    assert res.exit_code == 2
    assert res.stderr.count("\n") == 1
    assert "treatment side is not given" in res.stderr
    assert "--benchmark-r2 age assumed:0.05 0.02" in res.stderr
    with pytest.raises(InputError, match="assumed_r2_treatment"):
        published_benchmark("age", r2_outcome=0.02)


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (("age", "0.1", "?"), "outcome side is required"),
        (("age", "0.1", "assumed:0.2"), "only the treatment side may be assumed"),
        (("age", "t:2.0", "0.1"), r"write t:T:DOF"),
        (("age", "0.1", "abc"), "'abc' is not a number"),
        (("age", "1.5", "0.1"), r"`r2_treatment` must lie in \[0, 1\)"),
        (("age", "t:2:1", "0.1"), "`dof_treatment` must be at least 2"),
    ],
)
def test_bad_published_numbers_name_the_rule(args, message):
    with pytest.raises(InputError, match=message):
        benchmark_from_text(*args)


def test_bad_python_inputs():
    with pytest.raises(InputError, match="not both"):
        published_benchmark("a", r2_outcome=0.1, t_outcome=2.0, dof_outcome=10, r2_treatment=0.1)
    with pytest.raises(InputError, match="`t_outcome` needs `dof_outcome`"):
        published_benchmark("a", r2_treatment=0.1, t_outcome=2.0)
    with pytest.raises(InputError, match="not several"):
        published_benchmark("a", 0.1, 0.1, assumed_r2_treatment=0.2)
    with pytest.raises(InputError, match="items must be"):
        partial_r2_summary(1.0, 0.1, 100, benchmark_r2=["age"])


def test_summary_benchmark_by_name_points_to_published_numbers(run):
    res = run("partial-r2", "--estimate", 1, "--se", 0.1, "--dof", 50, "--benchmark", "age")
    assert res.exit_code == 2
    assert "--benchmark-r2 NAME R2_TREATMENT R2_OUTCOME" in res.stderr
    # from Python, a multiple goes with its benchmark
    two = partial_r2_summary(1.0, 0.1, 100, benchmark_r2=[("age:2", 0.01, 0.02)])
    assert (two.scenarios[0].k_treatment, two.scenarios[0].k_outcome) == (2.0, 2.0)


def test_multiples_written_after_the_name(run):
    base = ("partial-r2", "--estimate", 0.21, "--se", 0.06, "--dof", 2480, "--format", "json")
    sides = ("t:2.7:2481", "t:5.2")
    res = run(*base, "--benchmark-r2", "smoking:3", *sides, "--benchmark-r2", "smoking:1:2",
              *sides)  # fmt: skip
    assert res.exit_code == 0, res.stderr
    scenarios = json.loads(res.stdout)["scenarios"]
    got = [(s["multiple_treatment"], s["multiple_outcome"]) for s in scenarios]
    assert got == [(3.0, 3.0), (1.0, 2.0)]
    assert scenarios[0]["label"] == "smoking ×3 (published)"
    bad = run(*base, "--benchmark-r2", "smoking:0", *sides)
    assert bad.exit_code == 2 and "a multiple must be a positive finite number" in bad.stderr
