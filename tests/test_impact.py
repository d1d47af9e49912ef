"""The impact threshold (issue 12): the partial-correlation identity, a brute-force search,
a recalled worked example, properties, errors and the command."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.impact import impact_threshold, partial_correlation


def test_equal_components_bring_the_correlation_to_the_threshold():
    # METHODS-MORE 3.4, check 1: r_x = r_y = sqrt(ITCV) returns r# exactly.
    res = impact_threshold(estimate=0.114, se=0.027, n=1200, covariates=6)
    c = math.sqrt(res.itcv)
    assert partial_correlation(res.correlation, c, c) == pytest.approx(
        res.correlation_threshold, abs=1e-12
    )


def test_equal_components_need_the_least_impact():
    # METHODS-MORE 3.4, check 2: over a grid of (r_x, r_y) that bring the partial
    # correlation to r# or below, the least product is the formula's ITCV.
    res = impact_threshold(estimate=3.5, se=1.0, dof=200)
    rx = np.linspace(0.001, 0.999, 1500)[:, None]
    ry = np.linspace(0.001, 0.999, 1500)[None, :]
    reach = partial_correlation(res.correlation, rx, ry) <= res.correlation_threshold
    least = float(np.min(np.where(reach, rx * ry, np.inf)))
    assert least == pytest.approx(res.itcv, rel=2e-3)
    assert least >= res.itcv * (1 - 1e-9)


def test_the_recalled_kindergarten_example():
    # Frank et al. (2013), kindergarten retention [RECALLED, METHODS-MORE 3.3]: estimate
    # -9.01, se 0.68, threshold about 1.96 x 0.68 = 1.33, bias must remove about 85%.
    res = impact_threshold(estimate=-9.01, se=0.68, dof=100_000)
    assert res.estimate_threshold == pytest.approx(1.33, abs=0.005)
    assert res.bias_share == pytest.approx(0.852, abs=0.001)
    assert res.itcv < 0 and res.correlation < 0  # a negative effect keeps its sign


def test_a_non_significant_result_needs_a_suppressor():
    res = impact_threshold(estimate=0.3, se=0.27, n=1200, covariates=6)
    assert res.significant is False and res.itcv < 0
    # r_x = -r_y = c: the partial correlation reaches r# from below
    c = res.itcv_component
    assert partial_correlation(res.correlation, c, -c) == pytest.approx(
        res.correlation_threshold, abs=1e-12
    )
    assert "could make it significant only by suppressing it" in res.sentence()


@given(st.floats(2.5, 40), st.floats(2.5, 40), st.integers(50, 5000))
def test_the_threshold_rises_with_abs_t(t1, t2, dof):
    lo, hi = sorted((t1, t2))
    assert impact_threshold(t=hi, dof=dof).itcv >= impact_threshold(t=lo, dof=dof).itcv - 1e-12
    assert impact_threshold(t=-hi, dof=dof).itcv == pytest.approx(
        -impact_threshold(t=hi, dof=dof).itcv
    )


def test_swapped_observations_are_n_times_the_share():
    res = impact_threshold(estimate=0.114, se=0.027, n=1200, covariates=6)
    assert res.swapped_observations == pytest.approx(1200 * res.bias_share)


@pytest.mark.parametrize(
    "kwargs, message",
    [
        ({"estimate": 1, "se": 0, "dof": 10}, r"`se` must be positive; got 0"),
        ({"estimate": 1, "se": 0.1, "dof": 10, "alpha": 1.5}, r"`alpha` must lie strictly"),
        ({"estimate": 1, "se": 0.1, "n": 5, "covariates": 3}, r"`covariates` must leave"),
        ({"estimate": 1, "se": 0.1, "n": 50, "covariates": -1}, r"`covariates` must be 0 or"),
        ({"estimate": 1, "se": 0.1}, r"give `n` and `covariates` \(or `dof`\)"),
        ({"estimate": 1, "se": 0.1, "t": 3, "dof": 9}, r"give `se` or `t`, not both"),
        ({"estimate": 1, "se": 0.1, "dof": 9, "n": 20, "covariates": 2}, r"give `dof`, or"),
    ],
)
def test_bad_input(kwargs, message):
    with pytest.raises(InputError, match=message):
        impact_threshold(**kwargs)


@pytest.mark.parametrize("fmt", ["text", "json", "csv", "markdown", "latex"])
def test_the_command_in_every_format(run, fmt):
    res = run("impact", "--estimate", 0.114, "--se", 0.027, "--n", 1200, "--covariates", 6,
              "--format", fmt)  # fmt: skip
    assert res.exit_code == 0, res.stderr
    if fmt == "json":
        data = json.loads(res.stdout)
        for key in ("dof", "t_critical", "correlation", "correlation_threshold", "itcv",
                    "itcv_component", "bias_share", "swapped_observations",
                    "significant"):  # fmt: skip
            assert key in data


def test_the_command_from_data(run, tmp_path):
    import statsmodels.api as sm

    fair = sm.datasets.fair.load_pandas().data
    path = tmp_path / "fair.csv"
    fair.to_csv(path, index=False)
    res = run("impact", "--data", path, "--formula", "affairs ~ rate_marriage + age + educ",
              "--treatment", "rate_marriage", "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    fit = sm.formula.ols("affairs ~ rate_marriage + age + educ", fair).fit()
    data = json.loads(res.stdout)
    assert data["t"] == pytest.approx(fit.tvalues["rate_marriage"], rel=1e-10)
    assert data["dof"] == fit.df_resid


def test_the_words_are_the_projects_own():
    res = impact_threshold(estimate=0.114, se=0.027, n=1200, covariates=6)
    text = " ".join(res.sentence().split())
    assert text.startswith(
        "In this regression (t = 4.22 on 1,192 residual degrees of freedom), the treatment's "
        "coefficient could stop being significant at the 0.05 level only if an omitted "
        "variable's partial correlations with the treatment and with the outcome, beyond the "
        "covariates, multiplied to at least 0.069"
    )
    assert f"as if about {res.swapped_observations:,.0f} of the 1,200 observations" in text
    shown = res.document().render("text")
    assert "What it would take to lose significance (t = 4.22, 1,192 df)" in shown
    assert "Observations to swap for ones with no treatment effect" in shown
    data = res.to_dict()
    assert data["significant"] is True
    assert data["swapped_observations"] == pytest.approx(1200 * data["bias_share"])
    for old in ("share_to_", "cases_to_", "direction"):
        assert not any(k.startswith(old) for k in data)


def test_the_options_lead_with_the_test():
    from click.testing import CliRunner

    from cli import cli

    out = CliRunner().invoke(cli, ["impact", "--help"], terminal_width=200).stdout
    names = [line.split()[0] for line in out.split("Options:")[1].splitlines() if line.strip()]
    assert names[:6] == ["--t", "--dof", "--estimate", "--se", "--n", "--covariates"]
    with pytest.raises(TypeError):
        impact_threshold(0.114, 0.027, dof=100)  # keyword arguments only


# ---------------------------------------------------------------- issue 19: true sentences
finite_t = st.floats(0.01, 60) | st.floats(-60, -0.01)


@given(finite_t, st.floats(0.01, 10), st.integers(3, 10_000))
def test_the_share_needs_t_alone(t, se, dof):
    """1 - t#/|t| (or 1 - |t|/t#) from t and dof equals the share from estimate and se."""
    from_t = impact_threshold(t=t, dof=dof)
    from_b = impact_threshold(estimate=t * se, se=se, dof=dof)
    assert from_t.bias_share == pytest.approx(from_b.bias_share, rel=1e-9)


@given(finite_t, st.floats(0.01, 10), st.integers(3, 10_000), st.integers(0, 50))
def test_the_counts_and_the_growth_do_what_the_sentence_says(t, se, dof, covariates):
    """Significant: swapping n x share observations (average effect b) for no-effect ones
    brings b to d#. Not significant: b grown by `estimate_growth` is d#, and no swap count
    is claimed (swapping in no-effect observations would lower it)."""
    n = dof + covariates + 2
    res = impact_threshold(estimate=t * se, se=se, n=n, covariates=covariates)
    b, d = abs(res.estimate), res.estimate_threshold
    if res.significant:
        pi = res.swapped_observations / n
        assert (1 - pi) * b == pytest.approx(d, rel=1e-9)
    else:
        assert b * (1 + res.estimate_growth) == pytest.approx(d, rel=1e-9)
        text = " ".join(res.sentence().split())
        assert "would have to grow by" in text and "no effect" not in text


def test_the_issue_example_says_how_much_the_estimate_must_grow():
    res = impact_threshold(estimate=0.05, se=0.04, n=300, covariates=4)
    assert res.estimate_growth == pytest.approx(0.574, abs=5e-4)
    assert "grow by 57.4%" in " ".join(res.sentence().split())


@given(st.floats(1e-300, 0.5), st.integers(1, 100_000), finite_t)
def test_tiny_alpha_keeps_a_finite_critical_t(alpha, dof, t):
    """The critical t from the lower tail: finite to alpha 1e-300, no warning, no null."""
    res = impact_threshold(t=t, dof=dof, alpha=alpha)
    assert np.isfinite(res.t_critical) and res.t_critical > 0
    assert np.isfinite(res.itcv) and np.isfinite(res.bias_share)
    str(res)


@pytest.mark.parametrize("alpha", [1e-301, 5e-324])
def test_alpha_below_the_stated_limit_is_refused(alpha):
    with pytest.raises(InputError, match=r"`alpha` must be at least 1e-300"):
        impact_threshold(t=3, dof=100, alpha=alpha)


@pytest.mark.parametrize("t", [1e155, -1e300])
def test_a_huge_t_is_no_overflow(t):
    res = impact_threshold(t=t, dof=196)
    assert res.correlation == pytest.approx(np.sign(t))
    assert res.bias_share == pytest.approx(1.0)
    str(res)


def test_an_infinite_t_from_estimate_and_se_is_refused():
    with pytest.raises(InputError, match=r"`estimate` / `se` must be a finite t statistic"):
        impact_threshold(estimate=1e300, se=1e-300, dof=100)


@pytest.mark.parametrize(("t", "dof"), [(1e155, 995), (200.0, 30), (-1e300, 196)])
def test_a_threshold_near_1_says_the_variable_would_nearly_duplicate_both(t, dof, run):
    # Printed to two decimals the components read 1.00 each, true in double precision but
    # no two partial correlations below 1 multiply to 1: the sentence says what it takes.
    res = impact_threshold(t=t, dof=dof)
    assert abs(res.itcv_component) >= 0.995 and abs(res.itcv) > 0.99  # the bound stated
    said = res.document().sentences[0]
    assert "nearly duplicated both the treatment and the outcome" in said
    assert "at least 0.99 in the direction that weakens it (so each at least 0.99" in said
    assert "1.00" not in said
    out = run("impact", "--t", t, "--dof", dof, "--format", "json")
    assert out.exit_code == 0 and json.loads(out.stdout)["sentence"] == said


def test_a_threshold_below_it_keeps_the_equal_pair_wording():
    said = impact_threshold(t=3.0, dof=995).document().sentences[0]
    assert "(0.19 with each, if the two are equal)" in said and "duplicated" not in said
