"""Coefficient stability (issue 12): a population where the true coefficient and delta are
known, the approximation, the delta = 1 root, properties, errors and the command."""

from __future__ import annotations

import json

import numpy as np
import pytest
import statsmodels.api as sm
from hypothesis import given
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.stability import coefficient_stability, delta_for_target


@pytest.fixture(scope="module")
def population():
    """Y = b X + psi w + W2 + e with W2 independent of the observed control w (METHODS-MORE
    2.7): the true b is 0.5 and delta = a2 psi / a1 = 2/3."""
    rng = np.random.default_rng(5)
    n = 400_000
    w, w2 = rng.normal(size=(2, n))
    psi, a1, a2, beta = 0.8, 0.6, 0.5, 0.5
    x = a1 * w + a2 * w2 + rng.normal(size=n)
    y = beta * x + psi * w + w2 + rng.normal(size=n)

    def fit(*cols):
        r = sm.OLS(y, sm.add_constant(np.column_stack(cols))).fit()
        return float(r.params[1]), float(r.rsquared)

    b0, r0 = fit(x)
    b1, r1 = fit(x, w)
    _, r_max = fit(x, w, w2)
    tau = float(np.var(sm.OLS(x, sm.add_constant(w)).fit().resid))
    return dict(b0=b0, r0=r0, b1=b1, r1=r1, r_max=r_max, s_y2=float(np.var(y)),
                s_x2=float(np.var(x)), tau=tau, beta=beta, delta=a2 * psi / a1)  # fmt: skip


def test_the_exact_root_recovers_the_true_coefficient(population):
    p = population
    res = coefficient_stability(p["b0"], p["r0"], p["b1"], p["r1"], var_outcome=p["s_y2"],
                                var_treatment=p["s_x2"], var_treatment_residual=p["tau"],
                                r2_max=p["r_max"], delta=p["delta"])  # fmt: skip
    assert res.bias_adjusted == pytest.approx(p["beta"], abs=0.01)  # sampling error only
    assert res.bias_adjusted in res.bias_adjusted_roots


def test_the_delta_for_the_true_coefficient_is_the_true_delta(population):
    p = population
    d = delta_for_target(p["b0"], p["b1"], p["r0"], p["r1"], p["r_max"], p["s_y2"], p["s_x2"],
                         p["tau"], target=p["beta"])  # fmt: skip
    assert d == pytest.approx(p["delta"], abs=0.02)


def test_the_approximation_formula():
    # Oster (2019) approximation: b1 - delta (b0 - b1)(R_max - R1)/(R1 - R0).
    res = coefficient_stability(0.5, 0.1, 0.4, 0.3, r2_max=0.39, delta=2)
    assert res.bias_adjusted_approx == pytest.approx(0.4 - 2 * 0.1 * 0.09 / 0.2)
    assert res.delta_for_target_approx == pytest.approx(0.4 * 0.2 / (0.1 * 0.09))
    assert res.bias_adjusted is None and res.bias_adjusted_roots is None


def test_r_max_defaults_to_the_rule_of_thumb():
    res = coefficient_stability(0.5, 0.1, 0.4, 0.3)
    assert res.r2_max == pytest.approx(0.39)  # 1.3 x 0.3, common practice
    assert coefficient_stability(0.5, 0.1, 0.4, 0.8).r2_max == 1.0


def test_with_delta_one_the_root_has_the_sign_of_the_movement(population):
    p = population
    res = coefficient_stability(p["b0"], p["r0"], p["b1"], p["r1"], var_outcome=p["s_y2"],
                                var_treatment=p["s_x2"], var_treatment_residual=p["tau"],
                                r2_max=p["r_max"], delta=1.0)  # fmt: skip
    nu = p["b1"] - res.bias_adjusted
    assert np.sign(nu) == np.sign(p["b0"] - p["b1"])


@given(st.floats(0.1, 0.9), st.floats(0.1, 0.9))
def test_the_approximation_moves_monotonically_with_delta(d1, d2):
    lo, hi = sorted((d1, d2))
    a = coefficient_stability(0.5, 0.1, 0.4, 0.3, delta=lo).bias_adjusted_approx
    b = coefficient_stability(0.5, 0.1, 0.4, 0.3, delta=hi).bias_adjusted_approx
    assert b <= a + 1e-12  # the coefficient falls as selection on unobservables grows


@pytest.mark.parametrize(
    "kwargs, message",
    [
        ({"r2_max": 0.2}, r"`r2_max` must lie between the long R² \(0.3\) and 1; got 0.2"),
        ({"r2_max": 1.2}, r"`r2_max` must lie between"),
        ({"var_outcome": 1.0}, r"the exact solution needs all three"),
        ({"var_outcome": -1, "var_treatment": 1, "var_treatment_residual": 0.5},
         r"`var_outcome` must be positive; got -1"),
        ({"var_outcome": 1, "var_treatment": 1, "var_treatment_residual": 2},
         r"`var_treatment_residual` \(2\) cannot exceed"),
    ],
)  # fmt: skip
def test_bad_input(kwargs, message):
    with pytest.raises(InputError, match=message):
        coefficient_stability(0.5, 0.1, 0.4, 0.3, **kwargs)


def test_r2_long_must_exceed_r2_short():
    with pytest.raises(InputError, match=r"`r2_long` must exceed `r2_short`"):
        coefficient_stability(0.5, 0.3, 0.4, 0.3)


@pytest.mark.parametrize("fmt", ["text", "json", "csv", "markdown", "latex"])
def test_the_command(run, fmt, tmp_path):
    res = run("stability", "--estimate-short", 0.5, "--r2-short", 0.1, "--estimate-long", 0.4,
              "--r2-long", 0.3, "--format", fmt, "--plot", tmp_path / "s.png")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    if fmt == "json":
        data = json.loads(res.stdout)
        keys = ["delta", "r2_max", "target", "bias_adjusted", "bias_adjusted_roots"]
        keys += ["bias_adjusted_approx", "delta_for_target", "delta_for_target_approx"]
        assert set(keys) <= set(data)


def test_the_command_from_data(run):
    from pathlib import Path

    demo = Path(__file__).resolve().parent.parent / "demo" / "harbourside_bp.csv"
    res = run("stability", "--data", demo, "--formula-short", "sbp ~ commute_min",
              "--formula-long", "sbp ~ commute_min + age + female + smoker + bmi",
              "--treatment", "commute_min", "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    data = json.loads(res.stdout)
    assert data["bias_adjusted"] is not None and data["delta_for_target"] > 1


def test_from_data_in_python_equals_the_command_and_a_statsmodels_refit(run):
    # Reference: statsmodels' own OLS fits of the two formulas on the demo data.
    from pathlib import Path

    import pandas as pd
    import statsmodels.formula.api as smf

    from sensitivity import coefficient_stability_from_data

    demo = Path(__file__).resolve().parent.parent / "demo" / "harbourside_bp.csv"
    short, long = "sbp ~ commute_min", "sbp ~ commute_min + age + female + smoker + bmi"
    res = coefficient_stability_from_data(demo, short, long, "commute_min")
    frame = pd.read_csv(demo)
    fit_long = smf.ols(long, frame).fit()
    assert res.estimate_long == pytest.approx(fit_long.params["commute_min"], rel=1e-12)
    assert res.r2_short == pytest.approx(smf.ols(short, frame).fit().rsquared, rel=1e-12)
    cli = run("stability", "--data", demo, "--formula-short", short, "--formula-long", long,
              "--treatment", "commute_min", "--format", "json")  # fmt: skip
    printed, own = json.loads(cli.stdout), json.loads(json.dumps(res.to_dict()))
    assert {k: printed[k] for k in own} == own  # the command adds its sentence


def test_the_grid_agrees_with_the_result_at_its_own_cell(population):
    # Each grid cell is a fresh coefficient_stability at that (delta, R-max): the same root
    # rule, the same approximation (Oster 2019's formula, checked above on the population).
    from sensitivity.stability.core import adjusted_grid

    p = population
    res = coefficient_stability(p["b0"], p["r0"], p["b1"], p["r1"], var_outcome=p["s_y2"],
                                var_treatment=p["s_x2"], var_treatment_residual=p["tau"],
                                r2_max=p["r_max"], delta=p["delta"])  # fmt: skip
    deltas, maxes = np.array([0.5, p["delta"], 2.0]), np.array([p["r1"] * 1.1, p["r_max"]])
    grid = adjusted_grid(res, deltas, maxes)
    assert grid["exact"][1, 1] == res.bias_adjusted
    assert grid["approx"][1, 1] == pytest.approx(res.bias_adjusted_approx, rel=1e-12)
    for i, d in enumerate(deltas):
        for j, m in enumerate(maxes):
            one = coefficient_stability(
                p["b0"],
                p["r0"],
                p["b1"],
                p["r1"],
                var_outcome=p["s_y2"],
                var_treatment=p["s_x2"],
                var_treatment_residual=p["tau"],
                r2_max=m,
                delta=d,
            )
            assert grid["exact"][i, j] == one.bias_adjusted
            assert grid["approx"][i, j] == pytest.approx(one.bias_adjusted_approx, rel=1e-12)


def test_the_layout_puts_inputs_in_a_caption_and_roots_in_a_note():
    res = coefficient_stability(0.5, 0.1, 0.4, 0.3, r2_max=0.39)
    out = res.document().render("text")
    assert out.startswith("Inputs: treatment coefficient 0.5000 without the controls")
    assert "delta \\ R-max" in out and "[0.3550]" in out  # b1 - (b0 - b1)(0.09)/(0.2)
    assert "Coefficient: short regression (R²)" not in out and "Value" not in out
    roots = coefficient_stability(0.5, 0.1, 0.4, 0.3, r2_max=0.39, var_outcome=1.0,
                                  var_treatment=1.0, var_treatment_residual=0.9)  # fmt: skip
    text = roots.document().render("text")
    if len(roots.bias_adjusted_roots) > 1:
        assert "Other real roots at delta 1" in text
