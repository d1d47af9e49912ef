"""A normally distributed hidden confounder (issue 13): the formulas against a simulated
population, the exact sets against a fine grid, and the conversions."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.scales import from_risk_ratio, to_risk_ratio
from sensitivity.tipping import continuous_confounder_grid, value_range
from sensitivity.tipping.core import set_contains


def test_the_difference_formula_in_a_simulated_population():
    # METHODS-MORE 5: with U | X normal and a common SD, beta_obs = beta_true + gamma Delta.
    rng = np.random.default_rng(9)
    n = 400_000
    x = rng.binomial(1, 0.4, n)
    u = rng.normal(0.5 * x, 1.0)
    y = 0.3 * x + 0.8 * u + rng.normal(size=n)
    observed = y[x == 1].mean() - y[x == 0].mean()
    g = continuous_confounder_grid("md", observed, difference=0.5, outcome_effect=0.8)
    assert float(g.cells["bias_adjusted_estimate"].item()) == pytest.approx(0.3, abs=0.01)


def test_the_ratio_formula_in_a_simulated_population():
    # log RR_obs = log RR_true + gamma Delta for a log-linear mean (Poisson outcome).
    rng = np.random.default_rng(10)
    n = 2_000_000
    x = rng.binomial(1, 0.4, n)
    u = rng.normal(0.5 * x, 1.0)
    y = rng.poisson(np.exp(-3 + 0.3 * x + 0.4 * u))
    rr = y[x == 1].mean() / y[x == 0].mean()
    g = continuous_confounder_grid("rr", rr, difference=0.5, outcome_effect=float(np.exp(0.4)))
    assert float(g.cells["bias_adjusted_estimate"].item()) == pytest.approx(np.exp(0.3), rel=0.02)


def test_a_common_outcome_is_converted_and_back():
    g = continuous_confounder_grid("or", 2.2, (1.5, 3.1), difference=0.6, outcome_effect=1.8,
                                   outcome="common")  # fmt: skip
    rr = to_risk_ratio("or", 2.2, outcome="common") / 1.8**0.6
    expected = float(from_risk_ratio("or", rr, outcome="common"))
    assert float(g.cells["bias_adjusted_estimate"].item()) == pytest.approx(expected, rel=1e-12)


@settings(max_examples=30, deadline=None)
@given(st.sampled_from(["md", "rr"]), st.floats(0.4, 3), st.booleans())
def test_exact_sets_agree_with_a_fine_grid(scale, est, solve_difference):
    e = est if scale == "rr" else est - 1.5
    ci = (e / 1.4, e * 1.4) if scale == "rr" else (e - 0.7, e + 0.7)
    if solve_difference:
        kw = {"difference": value_range(-3, 3, 0.001), "outcome_effect": 2.0 if scale == "rr"
              else 1.2}  # fmt: skip
    else:
        kw = {"difference": 0.7, "outcome_effect": value_range(0.05, 8, 0.001) if scale == "rr"
              else value_range(-6, 6, 0.001)}  # fmt: skip
    g = continuous_confounder_grid(scale, e, ci, **kw)
    name, values = g.axes[g.solved]
    for key, reach in (("estimate", g.reach_estimate), ("ci", g.reach_ci)):
        exact = g.exact[key]
        inside = set_contains({k: v[..., None] for k, v in exact.items()}, values)
        grid = np.moveaxis(reach, g.solved, -1)
        ends = [np.asarray(x, float)[..., None] for x in (exact["low"], exact["high"])]
        near = np.zeros(inside.shape, bool)
        for end in ends:
            with np.errstate(invalid="ignore"):
                near |= np.abs(values - end) <= 1e-7 * np.maximum(1, np.abs(end))
        assert not ((grid != inside) & ~near).any(), (key, name)
