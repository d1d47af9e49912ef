"""Numbers that hold at every edge (issue 8): moved limits, grid crossings, exact sets that
agree with a fine grid, extremes from 1e-300 to 1e300, contradictory options, and a common
outcome in the binary-confounder view."""

from __future__ import annotations

import json
import math
from decimal import Decimal

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from sensitivity import evalue
from sensitivity.common.errors import InputError
from sensitivity.common.scales import to_risk_ratio
from sensitivity.evalues import bounding_factor
from sensitivity.tipping import (
    binary_confounder_grid,
    bounding_grid,
    parse_range,
    partial_r2_grid,
    value_range,
)
from sensitivity.tipping.core import set_contains


# --------------------------------------------------------------------------- 1. moved limits
def test_the_issue_example_moves_the_limit_with_the_estimate(run):
    # Ding & VanderWeele (2016): under the bounding factor B = 4/3 (both RRs 2) the estimate
    # and the interval move by the same factor: 1.3 / B = 0.975 and 0.9 / B = 0.675.
    res = run(
        "evalue",
        "--scale",
        "rr",
        "--estimate",
        1.3,
        "--ci",
        0.9,
        1.9,
        "--confounder",
        2,
        2,
        "--format",
        "json",
    )
    (c,) = json.loads(res.stdout)["confounders"]
    assert c["bias_adjusted"]["estimate"] == pytest.approx(0.975)
    assert c["bias_adjusted"]["ci_limit"] == pytest.approx(0.675)
    assert c["explains_ci"] is True


ratio_scales = st.sampled_from([("rr", None), ("or", "rare"), ("or", "common"), ("hr", "common")])


@given(
    ratio_scales,
    st.floats(0.05, 20),
    st.floats(1.01, 3),
    st.floats(1.01, 3),
    st.floats(1, 30),
    st.floats(1, 30),
    st.one_of(st.none(), st.floats(0.3, 3)),
)
def test_a_confounder_moves_estimate_and_limits_by_one_factor(scale, est, w1, w2, a, b, target):
    code, freq = scale
    res = evalue(code, est, (est / w1, est * w2), outcome=freq, target=target)
    bound = res.confounder(a, b)
    factor = float(bound.rr) / float(res.rr)
    near = 0 if float(res.rr) >= float(res.rr_target) else 1
    assert float(bound.rr_ci_limit) / float(res.rr_ci[near]) == pytest.approx(factor, rel=1e-9)
    assert factor == pytest.approx(float(bounding_factor(a, b)) ** (-1 if near == 0 else 1))
    # the moved limit stays on its own side of the moved estimate, on the reported scale
    side = -1 if near == 0 else 1
    assert side * (float(bound.ci_limit) - float(bound.estimate)) >= -1e-9 * abs(float(est))


def test_the_bounding_grid_moves_both_limits():
    g = bounding_grid("rr", 1.3, (0.9, 1.9), rr_treatment=value_range(1, 5, 0.5), rr_outcome=2)
    lo, up = g.cells["bias_adjusted_ci_lower"], g.cells["bias_adjusted_ci_upper"]
    est = g.cells["bias_adjusted_estimate"]
    assert np.all(lo <= est) and np.all(est <= up)
    np.testing.assert_allclose(lo / est, 0.9 / 1.3)
    np.testing.assert_allclose(up / est, 1.9 / 1.3)


# --------------------------------------------------------------------------- 2. grid steps
def test_the_issue_example_tips_on_the_step_it_reaches(run):
    # 1 - g (0.7 - 0.2) reaches 0 at g = 2, the lower limit 0.5 - g 0.5 at g = 1; 0.7 - 0.2
    # falls 5e-17 short of 0.5 in binary, which used to put both one step late.
    res = run(
        "tipping", "--scale", "md", "--estimate", 1, "--ci", 0.5, 1.5,
        "--prevalence-treated", 0.7, "--prevalence-control", 0.2,
        "--outcome-effect", "0:4:0.5", "--format", "json",
    )  # fmt: skip
    (tp,) = json.loads(res.stdout)["tipping_points"]
    assert tp["estimate"] == 2.0 and tp["ci"] == 1.0
    assert tp["estimate_exact"]["low"] == pytest.approx(2.0)
    assert tp["ci_exact"]["low"] == pytest.approx(1.0)


decimals = st.integers(-5000, 5000).map(lambda i: Decimal(i) / 100)


@given(decimals, st.integers(1, 500).map(lambda i: Decimal(i) / 100), st.integers(1, 60))
def test_grid_values_come_from_integer_steps(start, step, n):
    stop = start + step * (n - 1)
    values = value_range(float(start), float(stop), float(step))
    assert len(values) == n
    assert values.tolist() == [float(start + step * i) for i in range(n)]


# --------------------------------------------------------------------------- 3. exact sets
def _agree(grid, key="estimate"):
    """The grid and the exact set state the same thing, in the relation they are built to
    have: every cell inside the exact set tips on the grid; a cell that tips outside it has
    its moved value within the grid's tolerance of the target (the grid counts 1e-9,
    relative, as reaching it; the closed form does not). Cells a rounding error from the
    set's ends are not compared."""
    j = grid.solved
    name, values = grid.axes[j]
    exact = grid.exact[key]
    reach = grid.reach_estimate if key == "estimate" else grid.reach_ci
    moved = np.moveaxis(reach, j, -1)
    inside = set_contains({k: v[..., None] for k, v in exact.items()}, values)
    near_end = np.zeros(inside.shape, bool)
    for e in (exact["low"], exact["high"]):
        e = np.asarray(e, float)[..., None]
        with np.errstate(invalid="ignore"):
            near_end |= np.abs(values - e) <= 1e-7 * np.maximum(1.0, np.abs(e))
    above = grid.estimate >= grid.target
    cell = "bias_adjusted_estimate"
    if key == "ci":
        cell = "bias_adjusted_ci_lower" if above else "bias_adjusted_ci_upper"
    value = np.moveaxis(np.broadcast_to(grid.cells[cell], reach.shape), j, -1)
    scale = max(abs(grid.estimate - grid.target), abs(grid.target), 1e-300)
    if grid.ci is not None and key == "ci":
        limit = grid.ci[0] if above else grid.ci[1]
        scale = max(abs(limit - grid.target), abs(grid.target), 1e-300)
    within = np.abs(value - grid.target) <= 1e-8 * scale
    missed = inside & ~moved & ~near_end
    assert not missed.any(), f"{name}: in the exact set, not on the grid: {np.argwhere(missed)[:3]}"
    extra = moved & ~inside & ~near_end & ~within
    assert not extra.any(), f"{name}: tips on the grid outside the set: {np.argwhere(extra)[:3]}"


probs = st.floats(0, 1)


@settings(max_examples=40, deadline=None)
@given(
    st.sampled_from([("rr", None), ("or", "common"), ("hr", "common"), ("md", None)]),
    st.floats(0.3, 3),
    st.lists(probs, min_size=1, max_size=3),
    st.lists(probs, min_size=1, max_size=3),
    st.sampled_from([0, 1, 2]),
    st.booleans(),
)
def test_binary_exact_sets_agree_with_a_fine_grid(scale, est, p1s, p0s, solved, with_ci):
    code, freq = scale
    ratio = code != "md"
    e = est if ratio else est - 1.5  # difference scale: estimates on both sides of 0
    ci = (e / 1.5, e * 1.5) if ratio else (e - 0.8, e + 0.8)
    fine = {
        0: value_range(0, 1, 0.001),
        1: value_range(0, 1, 0.001),
        2: value_range(0.01, 12, 0.01) if ratio else value_range(-8, 8, 0.01),
    }
    params = {"prevalence_treated": p1s, "prevalence_control": p0s, "outcome_effect": [2.0, 4.0]}
    name = ("prevalence_treated", "prevalence_control", "outcome_effect")[solved]
    params[name] = fine[solved]
    grid = binary_confounder_grid(code, e, ci if with_ci else None, outcome=freq, **params)
    assume(grid.solved == solved)
    _agree(grid, "estimate")
    if with_ci:
        _agree(grid, "ci")


@settings(max_examples=30, deadline=None)
@given(
    st.floats(0.2, 12), st.floats(1.01, 3), st.booleans(), st.one_of(st.none(), st.floats(0.5, 2))
)
def test_bounding_exact_sets_agree_with_a_fine_grid(est, width, solve_treatment, target):
    fine = value_range(1, 40, 0.01)
    other = [1.0, 2.5, 6.0, 30.0]
    kw = {"rr_treatment": fine, "rr_outcome": other}
    if not solve_treatment:
        kw = {"rr_treatment": other, "rr_outcome": fine}
    grid = bounding_grid("rr", est, (est / width, est * width), target=target, **kw)
    _agree(grid, "estimate")
    _agree(grid, "ci")


@settings(max_examples=30, deadline=None)
@given(st.floats(0.3, 6), st.integers(20, 2000), st.booleans(), st.floats(-0.5, 0.5))
def test_partial_r2_exact_sets_agree_with_a_fine_grid(t, dof, solve_outcome, shift):
    fine = value_range(0, 0.999, 0.001)
    other = [0.0, 0.02, 0.1, 0.4, 0.8]
    kw = {"r2_treatment": other, "r2_outcome": fine}
    if not solve_outcome:
        kw = {"r2_treatment": fine, "r2_outcome": other}
    grid = partial_r2_grid(t * 0.1, 0.1, dof, target=shift * t * 0.1, **kw)
    _agree(grid, "estimate")
    _agree(grid, "ci")


def test_an_interval_that_covers_the_target_is_reached_at_every_value():
    # (a): it used to say "never". The interval includes 1 for every G on the grid; only a
    # protective U (G well below 1) would move it back out: 0.9 / factor(G) > 1.
    g = binary_confounder_grid(
        "rr", 1.3, (0.9, 1.9), prevalence_treated=0.6, prevalence_control=0.2,
        outcome_effect=value_range(1, 4, 0.5),
    )  # fmt: skip
    (tp,) = g.tipping_points()
    assert g.reach_ci.all() and tp["ci"] == 1.0
    exact = tp["ci_exact"]
    assert exact["reached"] == "from" and exact["low"] < 1
    # 0.9 (1 + (G - 1) 0.2) / (1 + (G - 1) 0.6) = 1 at G = 1 - 0.1 / (0.6 - 0.9 * 0.2)
    assert exact["low"] == pytest.approx(1 - 0.1 / (0.6 - 0.18))


def test_no_admissible_value_is_never():
    # (b): 1.8 (1 + (G - 1) 0.2) / (1 + (G - 1) 0.3) tends to 1.2 > 1: never, not "<= 0".
    g = binary_confounder_grid(
        "rr", 1.8, prevalence_treated=0.3, prevalence_control=0.2,
        outcome_effect=value_range(1, 10, 0.5),
    )  # fmt: skip
    (tp,) = g.tipping_points()
    assert tp["estimate_exact"] == {"reached": "never", "low": None, "high": None}


def test_a_bounding_limit_that_covers_the_null_is_always_reached():
    # (c): RR 1.3 (0.9 to 1.9): the lower limit already covers 1, for every confounder.
    g = bounding_grid(
        "rr", 1.3, (0.9, 1.9), rr_treatment=[2.0, 3.0], rr_outcome=value_range(1, 5, 1)
    )
    assert all(tp["ci_exact"]["reached"] == "always" for tp in g.tipping_points())


def test_the_partial_r2_interval_is_reached_only_between_two_values():
    # (d): t = 2.5 on 100 dof, r2_treatment 0.05: bias alone (A = 0.92) and the interval's
    # half-width alone (C = 0.82) fall short of the estimate 1, together they reach it.
    g = partial_r2_grid(1.0, 0.4, 100, r2_treatment=0.05, r2_outcome=value_range(0, 0.999, 0.001))
    (tp,) = g.tipping_points()
    exact = tp["ci_exact"]
    assert exact["reached"] == "between"
    assert 0 < exact["low"] < exact["high"] < 1
    r2y = g.axes[1][1]
    hit = r2y[g.reach_ci.ravel()]
    assert hit.min() == pytest.approx(exact["low"], abs=0.0011)
    assert hit.max() == pytest.approx(exact["high"], abs=0.0011)
    text = g.summary()
    # printed outward (issue 19): the low end rounded up, the high end down, never overstating
    from sensitivity.tipping.present import round_outward

    low, high = round_outward(exact["low"], 3, 1), round_outward(exact["high"], 3, -1)
    assert f"{low:.3g} to {high:.3g}" in text
    assert exact["low"] <= low and high <= exact["high"]


# --------------------------------------------------------------------------- 4. extremes
EXTREMES = [1e-300, 1e-150, 1e-10, 1e10, 1e150, 1e300]


@pytest.mark.parametrize("value", EXTREMES + [-v for v in EXTREMES])
@pytest.mark.parametrize(
    "scale, extra",
    [("rr", {}), ("or", {"outcome": "rare"}), ("or", {"outcome": "common"}),
     ("hr", {"outcome": "rare"}), ("hr", {"outcome": "common"}), ("smd", {}), ("md", {"sd": 2.0})],
)  # fmt: skip
def test_every_finite_input_gives_a_finite_evalue_or_an_input_error(scale, extra, value):
    try:
        res = evalue(scale, value, **extra)
    except InputError:
        return
    assert np.isfinite(res.evalue) and res.evalue >= 1
    assert np.isfinite(res.rr) and res.rr > 0


@pytest.mark.parametrize("value", ["1e-300", "1e300", "1e-150", "1e150"])
@pytest.mark.parametrize("scale", ["rr", "or", "hr", "smd", "md"])
def test_the_cli_never_exits_1_on_extremes(run, scale, value):
    extra = {"or": ["--outcome-frequency", "common"], "hr": ["--outcome-frequency", "common"],
             "md": ["--sd", "3"]}.get(scale, [])  # fmt: skip
    res = run("evalue", "--scale", scale, "--estimate", value, *extra, "--format", "json")
    assert res.exit_code in (0, 2), res.stderr
    if res.exit_code == 0:
        data = json.loads(res.stdout)
        assert data["evalue"] is not None and data["rr"] is not None
    else:
        assert res.stderr.startswith("Error: `--estimate`") and res.stderr.count("\n") == 1


def test_the_common_outcome_hazard_ratio_keeps_its_digits_at_extremes():
    # VanderWeele (2020) map: for HR -> inf, RR ~ sqrt(HR) / ln 2; for HR -> 0, ln 2 sqrt(HR).
    big = float(to_risk_ratio("hr", 1e300, outcome="common"))
    small = float(to_risk_ratio("hr", 1e-300, outcome="common"))
    assert big == pytest.approx(1e150 / math.log(2), rel=1e-12)
    assert small == pytest.approx(math.log(2) * 1e-150, rel=1e-12)


def test_the_bounding_factor_does_not_overflow():
    # B = a b / (a + b - 1): for a = b = 1e300 it is about 5e299, not inf / inf.
    assert float(bounding_factor(1e300, 1e300)) == pytest.approx(5e299, rel=1e-12)
    res = evalue("rr", 3.0).confounder(1e300, 1e300)
    assert float(res.estimate) == pytest.approx(3.0 / 5e299, rel=1e-12)


@pytest.mark.parametrize("se", [1e-300, 1e-100, 1e100])
def test_partial_r2_and_robustness_values_stay_defined_for_extreme_t(se):
    from sensitivity import partial_r2_summary

    res = partial_r2_summary(1.0, se, 500)
    for name in ("partial_r2", "robustness_value", "robustness_value_alpha"):
        value = getattr(res, name)
        assert value is not None and np.isfinite(value) and 0 <= value <= 1
    if se < 1:
        assert res.robustness_value == pytest.approx(1.0)
    d = res.to_dict()
    assert d["robustness_value"] is not None and d["partial_r2"] is not None


@pytest.mark.parametrize(
    "text, n", [("0:1e300:1e299", 11), ("1e-300:1e-299:1e-300", 10), ("1e300", 1)]
)
def test_ranges_with_huge_and_tiny_values(text, n):
    values = parse_range(text, "x")
    assert len(values) == n and np.all(np.isfinite(values))


@pytest.mark.parametrize("text", ["0:1:1e-300", "0:1e300:1e-300", "-1e300:1e300:1"])
def test_a_step_too_small_is_the_stated_grid_limit(run, text):
    with pytest.raises(InputError, match=r"has more than 5,000,000 values"):
        parse_range(text, "outcome_effect")
    res = run("tipping", "--scale", "md", "--estimate", 1, "--outcome-effect", text)
    assert res.exit_code == 2 and "the grid limit is 5,000,000 cells" in res.stderr


# --------------------------------------------------------------------------- 5. options
@pytest.mark.parametrize(
    "args, message",
    [
        (("evalue", "OR 2", "--outcome-frequency", "rare", "--prevalence", 0.3),
         "Error: --outcome-frequency and --prevalence cannot be used together"),
        (("evalue", "--scale", "smd", "--estimate", 0.4, "--se", 0.1, "--ci", 0.2, 0.6),
         "Error: --se and --ci cannot be used together"),
        (("partial-r2", "--estimate", 1, "--se", 0.1, "--t", 10, "--dof", 50),
         "Error: --se and --t cannot be used together"),
        (("evalue", "--scale", "or", "--estimate", 2, "--rare"),
         "Error: No such option '--rare'; use --outcome-frequency rare"),
        (("evalue", "--scale", "or", "--estimate", 2, "--outcome-frequency", "often"),
         "Error: Invalid value for '--outcome-frequency'"),
        (("tipping", "--kind", "partial-r2", "--estimate", 1, "--se", 0.1, "--dof", 50,
          "--outcome-frequency", "rare"),
         "Error: --outcome-frequency does not apply to the partial-r2 view"),
    ],
)  # fmt: skip
def test_options_that_cannot_go_together_are_named(run, args, message):
    res = run(*args)
    assert res.exit_code == 2
    assert res.stderr.startswith(message), res.stderr


def test_the_two_frequencies_give_their_own_evalues(run):
    # VanderWeele (2017): OR 2 of a common outcome -> RR sqrt(2); rare -> RR 2.
    rare = json.loads(
        run(
            "evalue",
            "--scale",
            "or",
            "--estimate",
            2,
            "--outcome-frequency",
            "rare",
            "--format",
            "json",
        ).stdout
    )
    common = json.loads(
        run(
            "evalue",
            "--scale",
            "or",
            "--estimate",
            2,
            "--outcome-frequency",
            "common",
            "--format",
            "json",
        ).stdout
    )
    assert rare["evalue"] == pytest.approx(2 + math.sqrt(2))
    r = math.sqrt(2)
    assert common["evalue"] == pytest.approx(r + math.sqrt(r * (r - 1)))


# --------------------------------------------------------------------------- 6. common outcome
@pytest.mark.parametrize("scale", ["or", "hr"])
def test_a_common_outcome_is_converted_adjusted_and_converted_back(scale):
    # The bias formula applies on the risk-ratio scale (VanderWeele & Arah 2011); the OR or
    # HR of a common outcome is converted there first (VanderWeele 2017; 2020) and back.
    from sensitivity.common.scales import from_risk_ratio

    g = binary_confounder_grid(
        scale, 2.2, (1.5, 3.1), prevalence_treated=0.6, prevalence_control=0.2,
        outcome_effect=3.0, outcome="common",
    )  # fmt: skip
    factor = (1 + 2 * 0.6) / (1 + 2 * 0.2)
    for key, value in (("estimate", 2.2), ("ci_lower", 1.5), ("ci_upper", 3.1)):
        rr = to_risk_ratio(scale, value, outcome="common") / factor
        expected = float(from_risk_ratio(scale, rr, outcome="common"))
        assert float(g.cells[f"bias_adjusted_{key}"].item()) == pytest.approx(expected, rel=1e-12)
    assert any("converted to the risk-ratio scale" in n for n in g.notes)


def test_the_binary_view_takes_the_outcome_frequency_from_the_command_line(run):
    res = run(
        "tipping", "--scale", "or", "--estimate", 2.2, "--ci", 1.5, 3.1,
        "--prevalence-treated", 0.6, "--prevalence-control", 0.2, "--outcome-effect", 3,
        "--outcome-frequency", "common",
    )  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert "converted to the risk-ratio scale" in " ".join(res.stdout.split())
    missing = run("tipping", "--scale", "or", "--estimate", 2.2)
    assert (
        missing.exit_code == 2 and "frequency (`--outcome-frequency`) is needed" in missing.stderr
    )


def test_the_exact_set_keeps_no_tolerance_at_a_tiny_prevalence_difference():
    # Found by hypothesis: an estimate at the null and a difference of 1e-308 in prevalence.
    # 0 + g 1.1e-308 reaches 0 for g <= 0 exactly; the grid, allowing 1e-309, also tips up to
    # g = 0.08, where the moved value is within its tolerance of the target.
    grid = binary_confounder_grid("md", 0.0, prevalence_treated=[0.0],
                                  prevalence_control=[1.1125369292536007e-308],
                                  outcome_effect=value_range(-8, 8, 0.01))  # fmt: skip
    _agree(grid, "estimate")
    (tp,) = grid.tipping_points()
    assert tp["estimate_exact"] == {"reached": "up_to", "low": None, "high": 0.0}


@pytest.mark.parametrize("value", [True, False, np.bool_(True), np.array([True, False])])
def test_true_or_false_is_not_a_number(value):
    # numpy reads True as 1.0, so evalue_of_rr(True) answered 1.0 (a risk ratio of 1)
    from sensitivity import evalue_of_rr

    with pytest.raises(InputError, match="`rr` must be numeric"):
        evalue_of_rr(value)
