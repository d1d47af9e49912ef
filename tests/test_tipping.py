"""Tipping-point grids against exact identities, a constructed population and theory."""

import numpy as np
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.evalues import bounding_factor, evalue_of_rr
from sensitivity.partial_r2 import adjusted_for_confounder
from sensitivity.tipping import (
    MAX_CELLS,
    binary_confounder_grid,
    bounding_grid,
    parse_range,
    partial_r2_grid,
    value_range,
)


def _adjusted(g):
    return g.cells["bias_adjusted_estimate"]


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_difference_formula_is_the_ols_identity(seed):
    # METHODS.md section 3 (Lin, Psaty & Kronmal 1998): with a binary U, the coefficient of T
    # from Y ~ T equals that from Y ~ T + U plus gamma_hat (p1_hat - p0_hat), exactly in-sample.
    # Reference: statsmodels OLS refits on simulated data.
    rng = np.random.default_rng(seed)
    n = 2000
    t = rng.binomial(1, 0.4, n)
    u = rng.binomial(1, np.where(t == 1, 0.6, 0.25))
    y = 1.0 + 0.5 * t + 1.7 * u + rng.normal(size=n)
    short = sm.OLS(y, sm.add_constant(t)).fit()
    full = sm.OLS(y, sm.add_constant(np.column_stack([t, u]))).fit()
    p1, p0 = u[t == 1].mean(), u[t == 0].mean()
    ci = tuple(short.conf_int()[1])
    g = binary_confounder_grid(
        "md",
        short.params[1],
        ci,
        prevalence_treated=p1,
        prevalence_control=p0,
        outcome_effect=full.params[2],
    )
    assert float(_adjusted(g).item()) == pytest.approx(full.params[1], rel=1e-10)
    shift = short.params[1] - full.params[1]
    assert float(g.cells["bias_adjusted_ci_lower"].item()) == pytest.approx(
        ci[0] - shift, rel=1e-10
    )


@pytest.mark.parametrize(
    "rr_t, g_u, p1, p0, base",
    [(1.5, 3.0, 0.6, 0.2, 0.02), (0.7, 2.0, 0.1, 0.4, 0.05), (2.0, 0.5, 0.8, 0.3, 0.01)],
)
def test_ratio_formula_against_a_constructed_population(rr_t, g_u, p1, p0, base):
    # A population table with a binary U and no U-by-treatment interaction:
    # risk(T, U) = base * rr_t^T * g_u^U. Marginal risks come from the table directly.
    counts = {
        (1, 1): 10_000 * p1,
        (1, 0): 10_000 * (1 - p1),
        (0, 1): 20_000 * p0,
        (0, 0): 20_000 * (1 - p0),
    }
    risk = {(t, u): base * rr_t**t * g_u**u for t, u in counts}

    def marginal(t):
        cases = sum(counts[(t, u)] * risk[(t, u)] for u in (0, 1))
        return cases / sum(counts[(t, u)] for u in (0, 1))

    observed = marginal(1) / marginal(0)
    g = binary_confounder_grid(
        "rr", observed, prevalence_treated=p1, prevalence_control=p0, outcome_effect=g_u
    )
    assert float(_adjusted(g).item()) == pytest.approx(rr_t, rel=1e-12)


@pytest.mark.parametrize("a, gu", [(2.0, 3.0), (4.0, 1.5), (1.3, 8.0)])
def test_largest_binary_bias_equals_bounding_factor(a, gu):
    # Ding & VanderWeele (2016): over all binary U with RR_TU <= a and RR_UY = gu the
    # largest bias factor equals B(a, gu). Search the grid of prevalences.
    p = np.linspace(0, 1, 2001)
    p1, p0 = p[:, None], p[None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        rr_tu = np.maximum(p1 / p0, (1 - p1) / (1 - p0))
    factor = (1 + (gu - 1) * p1) / (1 + (gu - 1) * p0)
    best = np.nanmax(np.where(rr_tu <= a * (1 + 1e-12), factor, np.nan))
    b = float(bounding_factor(a, gu))
    assert best <= b * (1 + 1e-12)
    assert best == pytest.approx(b, rel=1e-3)


def _first_past(least, crossing, step):
    """The grid's least tipping value is the first grid value at or past the exact crossing:
    not more than one step late, and not early (beyond the grid's tolerance, which moves a
    crossing by far less than 1e-6 of a step here)."""
    assert least - step < crossing
    assert crossing <= least + 1e-6 * step


def test_tipping_points_match_the_grid_and_solve_the_formula():
    p1 = value_range(0, 1, 0.05)
    g = value_range(1, 6, 0.01)
    grid = binary_confounder_grid(
        "rr", 1.8, (1.2, 2.7), prevalence_treated=p1, prevalence_control=0.2, outcome_effect=g
    )
    for tp in grid.tipping_points():
        if tp["estimate"] is None:
            continue
        assert tp["estimate_exact"]["reached"] == "from"
        exact = tp["estimate_exact"]["low"]
        _first_past(tp["estimate"], exact, 0.01)
        q = tp["prevalence_treated"]  # the exact crossing solves the closed form
        assert 1.8 * (1 + (exact - 1) * 0.2) / (1 + (exact - 1) * q) == pytest.approx(1, rel=1e-14)


@pytest.mark.parametrize("axis", ["prevalence_treated", "prevalence_control", "outcome_effect"])
def test_exact_crossing_of_each_parameter_on_the_difference_scale(axis):
    base = {"prevalence_treated": 0.6, "prevalence_control": 0.2, "outcome_effect": 2.0}
    fine = {
        "prevalence_treated": value_range(0, 1, 0.001),
        "prevalence_control": value_range(0, 1, 0.001),
        "outcome_effect": value_range(0, 20, 0.001),
    }
    params = dict(base, **{axis: fine[axis]})
    if axis != "prevalence_treated":  # a second varying axis, so there are several rows
        params["prevalence_treated"] = value_range(0.5, 1, 0.25)
    # for the controls' prevalence, a negative estimate tips as p0 rises
    g = binary_confounder_grid("md", -0.4 if axis == "prevalence_control" else 0.4, **params)
    compared = 0
    for tp in g.tipping_points():
        if tp["estimate"] is not None and tp["estimate_exact"]["reached"] == "from":
            _first_past(tp["estimate"], tp["estimate_exact"]["low"], 0.001)
            compared += 1
    assert compared > 0


def test_bounding_grid_curve_passes_through_the_evalue():
    # VanderWeele & Ding (2017): RR 3.9 -> E = 7.26; the curve b = R (a - 1) / (a - R).
    e = float(evalue_of_rr(3.9))
    g = bounding_grid(
        "rr", 3.9, (1.8, 8.7), rr_treatment=[2.0, e, 10.0], rr_outcome=value_range(1, 30, 0.01)
    )
    tps = {round(t["rr_treatment"], 6): t for t in g.tipping_points()}
    assert tps[round(e, 6)]["estimate_exact"]["low"] == pytest.approx(e, rel=1e-12)
    # B(2, b) < 2 < 3.9: never explained away
    assert tps[2.0]["estimate_exact"]["reached"] == "never"
    assert tps[10.0]["estimate_exact"]["low"] == pytest.approx(3.9 * 9 / 6.1)


def test_partial_r2_view_reuses_the_partial_r2_computation():
    r2t, r2y = value_range(0, 0.3, 0.05), value_range(0, 0.3, 0.05)
    g = partial_r2_grid(0.097, 0.0232, 783, r2_treatment=r2t, r2_outcome=r2y)
    ref = adjusted_for_confounder(r2t[:, None], r2y[None, :], estimate=0.097, se=0.0232, dof=783)
    np.testing.assert_array_equal(g.cells["bias_adjusted_estimate"], ref["estimate"])
    np.testing.assert_array_equal(g.cells["bias_adjusted_ci_lower"], ref["lower"])


def test_partial_r2_exact_crossings_against_a_fine_grid():
    r2y = value_range(0, 0.9, 0.0005)
    g = partial_r2_grid(0.097, 0.0232, 783, r2_treatment=[0.05, 0.1, 0.2], r2_outcome=r2y)
    for tp in g.tipping_points():
        for key in ("estimate", "ci"):
            if tp[key] is not None:
                _first_past(tp[key], tp[f"{key}_exact"]["low"], 0.0005)


# ----------------------------------------------------------------------- properties
probs = st.floats(0, 1)


@given(probs, probs, st.floats(1.0, 20), st.floats(1.0, 20))
def test_ratio_bias_monotone_in_outcome_effect(p1, p0, g1, g2):
    lo, hi = sorted((g1, g2))
    a = binary_confounder_grid(
        "rr", 2.0, prevalence_treated=p1, prevalence_control=p0, outcome_effect=[lo, hi]
    )
    est = _adjusted(a).ravel()
    if p1 >= p0:
        assert est[1] <= est[0] * (1 + 1e-12)
    else:
        assert est[1] >= est[0] * (1 - 1e-12)


@given(probs, probs, probs, st.floats(-5, 5))
def test_difference_bias_monotone_in_prevalence_treated(a, b, p0, gamma):
    lo, hi = sorted((a, b))
    g = binary_confounder_grid(
        "md", 1.0, prevalence_treated=[lo, hi], prevalence_control=p0, outcome_effect=gamma
    )
    est = _adjusted(g).ravel()
    assert (est[1] - est[0]) * np.sign(gamma) <= 1e-12


@given(probs, st.floats(0.01, 20), st.sampled_from(["md", "rd", "rr", "or", "hr"]))
def test_no_bias_when_prevalences_are_equal(p, effect, scale):
    g = binary_confounder_grid(
        scale,
        1.5,
        (1.1, 2.0),
        prevalence_treated=p,
        prevalence_control=p,
        outcome_effect=effect,
        outcome="rare" if scale in ("or", "hr") else None,
    )
    assert float(_adjusted(g).item()) == pytest.approx(1.5, rel=1e-12)


# ----------------------------------------------------------------------- ranges and errors
def test_range_includes_stop_when_reached():
    assert value_range(0, 1, 0.1).tolist()[-1] == 1.0
    assert parse_range("0:0.5:0.25", "x").tolist() == [0.0, 0.25, 0.5]
    assert parse_range("0.3", "x").tolist() == [0.3]


@pytest.mark.parametrize(
    "call, message",
    [
        (
            lambda: parse_range("1:0:0.1", "outcome_effect"),
            r"`outcome_effect` is backwards or empty: stop 0 is below start 1",
        ),
        (
            lambda: parse_range("0:1:0", "prevalence_treated"),
            r"`prevalence_treated` step must be positive; got 0",
        ),
        (
            lambda: parse_range("0:1:-0.1", "prevalence_treated"),
            r"`prevalence_treated` step must be positive; got -0.1",
        ),
        (
            lambda: parse_range("0:1", "prevalence_control"),
            r"`prevalence_control` must be a number or START:STOP:STEP; got '0:1'",
        ),
        (
            lambda: parse_range("a:b:c", "outcome_effect"),
            r"must be a number or START:STOP:STEP; got 'a:b:c'",
        ),
        (
            lambda: parse_range("0:1:1e-9", "outcome_effect"),
            r"has more than 5,000,000 values \(0 to 1 by 1e-09\); the grid limit is 5,000,000",
        ),
        (
            lambda: binary_confounder_grid(
                "rr", 2, prevalence_treated=1.2, prevalence_control=0.1, outcome_effect=2
            ),
            r"`prevalence_treated` must lie in \[0, 1\]; got 1.2",
        ),
        (
            lambda: binary_confounder_grid(
                "rr", 2, prevalence_treated=0.5, prevalence_control=-0.1, outcome_effect=2
            ),
            r"`prevalence_control` must lie in \[0, 1\]; got -0.1",
        ),
        (
            lambda: binary_confounder_grid(
                "rr", 2, prevalence_treated=0.5, prevalence_control=0.1, outcome_effect=0
            ),
            r"`outcome_effect` must be positive; got 0",
        ),
        (
            lambda: binary_confounder_grid(
                "hr",
                2,
                prevalence_treated=0.5,
                prevalence_control=0.1,
                outcome_effect=-2,
                outcome="common",
            ),
            r"`outcome_effect` must be positive; got -2",
        ),
        (
            lambda: binary_confounder_grid(
                "rr", -2, prevalence_treated=0.5, prevalence_control=0.1, outcome_effect=2
            ),
            r"`estimate` must be positive; got -2",
        ),
        (
            lambda: binary_confounder_grid(
                "rr", 2, (2.5, 3), prevalence_treated=0.5, prevalence_control=0.1, outcome_effect=2
            ),
            r"`estimate` must lie within `ci`",
        ),
        (
            lambda: binary_confounder_grid(
                "rr",
                2,
                prevalence_treated=np.linspace(0, 1, 3000),
                prevalence_control=np.linspace(0, 1, 3000),
                outcome_effect=2,
            ),
            rf"the grid has 9,000,000 cells \(3000 x 3000 x 1\); the limit is {MAX_CELLS:,}",
        ),
        (
            lambda: bounding_grid("md", 2, rr_treatment=2, rr_outcome=2),
            r"`scale` must be one of rr, or, hr for the bounding view; got 'md'",
        ),
        (
            lambda: bounding_grid("rr", 2, rr_treatment=0.5, rr_outcome=2),
            r"`rr_treatment` must be at least 1; got 0.5",
        ),
        (
            lambda: partial_r2_grid(1, 0.1, 100, r2_treatment=1.0, r2_outcome=0.1),
            r"`r2_treatment` must lie in \[0, 1\); got 1",
        ),
    ],
)
def test_bad_input(call, message):
    with pytest.raises(ValueError, match=message):
        call()


def test_default_grids_from_the_api():
    # The defaults documented in `default_ranges`; no value here comes from a source.
    g = binary_confounder_grid("rr", 1.8, (1.2, 2.7), prevalence_control=0.2)
    assert g.shape == (21, 1, 21)
    assert bounding_grid("rr", 3.9).axes[0][1][-1] == 11.0  # ceil(1.5 * E), E = 7.26
    p = partial_r2_grid(0.097, 0.0232, 783)
    assert p.axes[0][1][0] == 0.0 and p.axes[0][1][-1] < 1


def test_exact_crossing_below_for_a_negative_effect():
    # -2 - gamma (0.5 - p0) reaches 0 for gamma <= -2 / (0.5 - p0): at p0 = 0, gamma <= -4.
    g = binary_confounder_grid(
        "md",
        -2.0,
        (-3.5, -0.5),
        prevalence_treated=0.5,
        prevalence_control=[0.0, 0.1],
        outcome_effect=value_range(-6, -1, 1),
    )
    first = g.tipping_points()[0]
    assert first["estimate_exact"]["reached"] == "up_to"
    assert first["estimate_exact"]["high"] == pytest.approx(-4.0)
    assert first["estimate"] == -6.0  # the least grid value that reaches it


@settings(deadline=None)  # up to 64 one-cell grids, each converting a common HR back
@given(
    st.sampled_from(["md", "rd", "rr", "or", "hr"]),
    st.lists(probs, min_size=1, max_size=4),
    st.lists(probs, min_size=1, max_size=4),
    st.lists(st.floats(0.05, 8), min_size=1, max_size=4),
)
def test_vectorised_grid_equals_a_scalar_loop(scale, p1s, p0s, effects):
    frequency = "common" if scale in ("or", "hr") else None
    grid = binary_confounder_grid(
        scale,
        1.5,
        (1.1, 2.0),
        prevalence_treated=p1s,
        prevalence_control=p0s,
        outcome_effect=effects,
        outcome=frequency,
    )
    for i, a in enumerate(p1s):
        for j, b in enumerate(p0s):
            for k, g in enumerate(effects):
                one = binary_confounder_grid(
                    scale,
                    1.5,
                    (1.1, 2.0),
                    prevalence_treated=a,
                    prevalence_control=b,
                    outcome_effect=g,
                    outcome=frequency,
                )
                for key, cell in grid.cells.items():
                    assert cell[i, j, k] == one.cells[key].item()


@given(
    st.lists(st.floats(0, 0.95), min_size=1, max_size=5),
    st.lists(st.floats(0, 0.95), min_size=1, max_size=5),
)
def test_partial_r2_grid_equals_a_scalar_loop(r2ts, r2ys):
    grid = partial_r2_grid(0.097, 0.0232, 783, r2_treatment=r2ts, r2_outcome=r2ys)
    for i, a in enumerate(r2ts):
        for j, b in enumerate(r2ys):
            one = adjusted_for_confounder(a, b, estimate=0.097, se=0.0232, dof=783)
            assert grid.cells["bias_adjusted_estimate"][i, j] == float(one["estimate"])
            assert grid.cells["bias_adjusted_ci_upper"][i, j] == float(one["upper"])


def test_three_varying_parameters_key_tipping_points_by_the_first_two():
    p1s, p0s = [0.4, 0.8], [0.0, 0.2, 0.3]
    g = binary_confounder_grid(
        "rr",
        1.8,
        prevalence_treated=p1s,
        prevalence_control=p0s,
        outcome_effect=value_range(1, 20, 0.001),
    )
    tps = g.tipping_points()
    assert [(t["prevalence_treated"], t["prevalence_control"]) for t in tps] == [
        (a, b) for a in p1s for b in p0s
    ]
    for t in tps:
        a, b = t["prevalence_treated"], t["prevalence_control"]
        exact = 1 + (1 - 1.8) / (1.8 * b - a)  # G at which 1.8 (1 + (G-1) b) / (1 + (G-1) a) = 1
        if 1 <= exact <= 20:
            assert t["estimate_exact"]["low"] == pytest.approx(exact, rel=1e-14)
            _first_past(t["estimate"], t["estimate_exact"]["low"], 0.001)
        else:
            assert t["estimate"] is None


def test_partial_r2_exact_crossings_when_solving_the_treatment_side():
    r2t = value_range(0, 0.95, 0.0005)
    g = partial_r2_grid(0.097, 0.0232, 783, r2_treatment=r2t, r2_outcome=0.2)
    (tp,) = g.tipping_points()
    assert tp["parameter"] == "r2_treatment"
    for key in ("estimate", "ci"):
        assert tp[key] is not None
        _first_past(tp[key], tp[f"{key}_exact"]["low"], 0.0005)
