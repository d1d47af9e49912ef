"""Coefficient stability (issue 12): a population where the true coefficient and delta are
known, the approximation, the delta = 1 root, properties, errors and the command."""

from __future__ import annotations

import json

import numpy as np
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
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


def _brute_nearest(args):
    """The real root nu nearest 0 by a sign-change search on a fine two-sided log grid
    (independent of np.roots): bisection in the first bracketing cell on either side."""
    from sensitivity.stability.core import _cubic

    coeffs = np.array(_cubic(*args), float)
    b0, b1 = args[1], args[2]
    s = max(abs(b0), abs(b1), abs(b0 - b1))
    grid = s * np.logspace(-9, 9, 60_001)
    best = None
    for sign in (1.0, -1.0):
        x = np.concatenate([[0.0], sign * grid])
        v = np.polyval(coeffs, x)
        if v[0] == 0:
            return 0.0
        cells = np.flatnonzero(np.sign(v[:-1]) * np.sign(v[1:]) <= 0)
        if not cells.size:
            continue
        lo, hi = x[cells[0]], x[cells[0] + 1]
        for _ in range(200):
            mid = (lo + hi) / 2
            if np.sign(np.polyval(coeffs, mid)) == np.sign(np.polyval(coeffs, lo)):
                lo = mid
            else:
                hi = mid
        root = (lo + hi) / 2
        if best is None or abs(root) < abs(best):
            best = root
    return best


cases = st.tuples(
    st.floats(-2, 2),
    st.floats(-2, 2),  # b0, b1
    st.floats(0, 0.8),
    st.floats(0.01, 0.15),
    st.floats(0, 1),  # r0, r1 - r0, share to 1
    st.floats(0.1, 5),
    st.floats(0.1, 3),
    st.floats(0.02, 0.98),  # s_y2, s_x2, tau / s_x2
    st.one_of(st.just(1.0), st.floats(0, 4)),  # delta, 1 (the default) often
).filter(lambda c: abs(c[0] - c[1]) > 1e-3)


def _args(c):
    b0, b1, r0, dr, share, s_y2, s_x2, frac, delta = c
    r1 = r0 + dr
    return (delta, b0, b1, r0, r1, r1 + share * (1 - r1), s_y2, s_x2, frac * s_x2)


def _stability(args):
    delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau = args
    return coefficient_stability(b0, r0, b1, r1, var_outcome=s_y2, var_treatment=s_x2,
                                 var_treatment_residual=tau, r2_max=r_max, delta=delta)  # fmt: skip


@settings(max_examples=300, deadline=None)
@given(cases)
def test_the_reported_root_is_the_real_root_nearest_the_long_estimate(c):
    """Issue 19: at delta = 1 the sign rule picked a far root in ~40% of two-root cases.
    Independent check: a sign-change search for the real root nearest nu = 0."""
    args = _args(c)
    res = _stability(args)
    brute = _brute_nearest(args)
    b1 = args[2]
    if brute is None:
        assert res.bias_adjusted is None
        return
    assert res.bias_adjusted is not None
    scale = max(abs(args[1]), abs(b1), abs(args[1] - b1))
    assert b1 - res.bias_adjusted == pytest.approx(brute, rel=1e-6, abs=1e-9 * scale)


@settings(max_examples=100, deadline=None)
@given(cases)
def test_the_root_moves_continuously_through_delta_one(c):
    """One rule at every delta: delta 1 -+ 1e-7 give (nearly) the root at delta 1, unless the
    near pair is complex or touching (then the result says so)."""
    base = _args(c)[1:]
    at = [_stability((d, *base)) for d in (1 - 1e-7, 1.0, 1 + 1e-7)]
    if any(r.bias_adjusted is None or any("complex" in n for n in r.notes) for r in at):
        return
    roots = np.array(at[1].bias_adjusted_roots)
    if roots.size > 1 and abs(abs(roots[1] - base[1]) - abs(roots[0] - base[1])) < 1e-3:
        return  # two roots nearly equidistant from the long estimate: either may lead
    for r in (at[0], at[2]):
        assert r.bias_adjusted == pytest.approx(at[1].bias_adjusted, rel=1e-4, abs=1e-6)


@settings(max_examples=100, deadline=None)
@given(cases, st.sampled_from([1e-7, 1e-3, 1e4]))
def test_the_roots_do_not_depend_on_the_units(c, k):
    """Outcome measured in other units (b x k, var_outcome x k²): the same roots x k, the
    same count of real roots (the root test is scale-free)."""
    delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau = _args(c)
    one = _stability((delta, b0, b1, r0, r1, r_max, s_y2, s_x2, tau))
    other = _stability((delta, k * b0, k * b1, r0, r1, r_max, k * k * s_y2, s_x2, tau))
    assert len(other.bias_adjusted_roots) == len(one.bias_adjusted_roots)
    np.testing.assert_allclose(np.array(other.bias_adjusted_roots) / k,
                               one.bias_adjusted_roots, rtol=1e-6, atol=1e-9)  # fmt: skip


def test_the_issue_examples():
    # issue 19: reported 35.01 while the root nearest the long estimate is 0.458
    res = coefficient_stability(0.499, 0.394, 0.597, 0.497, var_outcome=2.801,
                                var_treatment=1.004, var_treatment_residual=0.235,
                                r2_max=0.8975)  # fmt: skip
    assert res.bias_adjusted == pytest.approx(0.4583, abs=1e-4)
    assert "nearest the long estimate is reported at every delta" in " ".join(res.notes)
    # delta 1 jumped to -46.56 where delta 1 -+ 1e-6 give 0.5127
    for delta in (0.999999, 1.0, 1.000001):
        res = coefficient_stability(
            0.5, 0.30, 0.45, 0.31, var_outcome=1, var_treatment=1,
            var_treatment_residual=0.2, r2_max=0.9, delta=delta,
        )  # fmt: skip
        assert res.bias_adjusted == pytest.approx(0.5127, abs=1e-4)


def test_r_max_at_the_long_r2_leaves_the_long_estimate():
    res = coefficient_stability(0.5, 0.1, 0.4, 0.3, var_outcome=1, var_treatment=1,
                                var_treatment_residual=0.5, r2_max=0.3)  # fmt: skip
    assert res.bias_adjusted == 0.4


def test_a_complex_near_pair_is_said():
    res = coefficient_stability(-0.4222, 0.7759, 0.2136, 0.8706, var_outcome=3.1037,
                                var_treatment=1.9081, var_treatment_residual=1.4863,
                                r2_max=0.8856, delta=3.669)  # fmt: skip
    assert res.bias_adjusted_roots == pytest.approx((-2.015,), abs=1e-3)
    assert "are a complex pair" in " ".join(res.notes)
    assert "the only real root is a far one" in " ".join(str(res).split())
    assert "far from the long estimate" in res.document().sentences[0]


def test_a_far_target_gives_the_limit_not_an_overflow():
    res = coefficient_stability(0.5, 0.1, 0.4, 0.3, var_outcome=1, var_treatment=1,
                                var_treatment_residual=0.5, r2_max=0.39, target=1e308)  # fmt: skip
    assert res.delta_for_target == pytest.approx(1.0)


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


@pytest.mark.parametrize(
    "short, long, message",
    [
        ("bmi ~ commute_min", "sbp ~ commute_min + age",
         "Error: `--formula-short` and `--formula-long` must model the same outcome; got 'bmi' "
         "and 'sbp'"),
        ("sbp ~ commute_min + female", "sbp ~ commute_min + age",
         "Error: `--formula-long` must hold every term of `--formula-short`"),
        ("sbp ~ commute_min + age", "sbp ~ age + commute_min",
         "Error: `--formula-long` must add at least one control to `--formula-short`"),
        ("sbp ~ commute_min", "sbp ~ commute_min * age",
         "Error: `--formula-long` holds an interaction of the treatment ('commute_min:age')"),
    ],
)  # fmt: skip
def test_two_formulas_that_are_not_short_and_long_are_refused(run, short, long, message):
    """Each of these printed a result: another outcome's model as the short one, a short model
    with a control the long one lacks, and the treatment's interaction (whose auxiliary
    regression held the treatment itself among the controls)."""
    from pathlib import Path

    demo = Path(__file__).resolve().parent.parent / "demo" / "harbourside_bp.csv"
    res = run("stability", "--data", demo, "--formula-short", short, "--formula-long", long,
              "--treatment", "commute_min")  # fmt: skip
    assert res.exit_code == 2 and res.stdout == ""
    assert res.stderr.startswith(message) and res.stderr.count("\n") == 1, res.stderr


def test_the_treatment_residual_variance_is_a_statsmodels_refit_on_the_controls():
    # Reference: statsmodels' OLS of the treatment on the long model's controls, by formula.
    from pathlib import Path

    import pandas as pd
    import statsmodels.formula.api as smf

    from sensitivity.adapters.stability import stability_inputs_from_data

    demo = Path(__file__).resolve().parent.parent / "demo" / "harbourside_bp.csv"
    got = stability_inputs_from_data(
        demo, "sbp ~ commute_min + C(shift)", "sbp ~ commute_min + age + bmi + C(shift)",
        "commute_min",
    )  # fmt: skip
    aux = smf.ols("commute_min ~ age + bmi + C(shift)", pd.read_csv(demo)).fit()
    assert got["var_treatment_residual"] == pytest.approx(np.var(aux.resid), rel=1e-12)


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
