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
