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
    res = impact_threshold(0.114, 0.027, n=1200, covariates=6)
    c = math.sqrt(res.itcv)
    assert partial_correlation(res.correlation, c, c) == pytest.approx(
        res.correlation_threshold, abs=1e-12
    )


def test_equal_components_need_the_least_impact():
    # METHODS-MORE 3.4, check 2: over a grid of (r_x, r_y) that bring the partial
    # correlation to r# or below, the least product is the formula's ITCV.
    res = impact_threshold(3.5, 1.0, dof=200)
    rx = np.linspace(0.001, 0.999, 1500)[:, None]
    ry = np.linspace(0.001, 0.999, 1500)[None, :]
    reach = partial_correlation(res.correlation, rx, ry) <= res.correlation_threshold
    least = float(np.min(np.where(reach, rx * ry, np.inf)))
    assert least == pytest.approx(res.itcv, rel=2e-3)
    assert least >= res.itcv * (1 - 1e-9)


def test_the_recalled_kindergarten_example():
    # Frank et al. (2013), kindergarten retention [RECALLED, METHODS-MORE 3.3]: estimate
    # -9.01, se 0.68, threshold about 1.96 x 0.68 = 1.33, bias must remove about 85%.
    res = impact_threshold(-9.01, 0.68, dof=100_000)
    assert res.estimate_threshold == pytest.approx(1.33, abs=0.005)
    assert res.share_to_invalidate == pytest.approx(0.852, abs=0.001)
    assert res.itcv < 0 and res.correlation < 0  # a negative effect keeps its sign


def test_a_non_significant_result_needs_a_suppressor():
    res = impact_threshold(0.3, 0.27, n=1200, covariates=6)
    assert res.direction == "sustain" and res.itcv < 0
    # r_x = -r_y = c: the partial correlation reaches r# from below
    c = res.itcv_component
    assert partial_correlation(res.correlation, c, -c) == pytest.approx(
        res.correlation_threshold, abs=1e-12
    )
    assert "suppressing variable" in res.sentence()


@given(st.floats(2.5, 40), st.floats(2.5, 40), st.integers(50, 5000))
def test_the_threshold_rises_with_abs_t(t1, t2, dof):
    lo, hi = sorted((t1, t2))
    assert impact_threshold(t=hi, dof=dof).itcv >= impact_threshold(t=lo, dof=dof).itcv - 1e-12
    assert impact_threshold(t=-hi, dof=dof).itcv == pytest.approx(
        -impact_threshold(t=hi, dof=dof).itcv
    )


def test_cases_to_replace_are_n_times_the_share():
    res = impact_threshold(0.114, 0.027, n=1200, covariates=6)
    assert res.cases_to_replace == pytest.approx(1200 * res.share_to_invalidate)


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
                    "itcv_component", "share_to_invalidate", "cases_to_replace"):  # fmt: skip
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
