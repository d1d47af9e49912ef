"""Probabilistic bias analysis (issue 13): point masses give the formula, a constructed
population gives the adjusted ratio, the samplers' moments, intervals, errors, the command."""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.simulate import parse_prior, simulate


def test_point_masses_reproduce_the_deterministic_formula():
    res = simulate(
        "rr",
        1.8,
        (1.2, 2.7),
        prevalence_treated="fixed:0.5",
        prevalence_control="fixed:0.2",
        outcome_effect="fixed:3",
        draws=2000,
        seed=1,
    )
    assert res.median == pytest.approx(1.8 * 1.4 / 2.0, rel=1e-12)
    assert res.interval == pytest.approx((1.26, 1.26), rel=1e-12)
    diff = simulate(
        "md",
        2.0,
        (1.0, 3.0),
        prevalence_treated="fixed:0.6",
        prevalence_control="fixed:0.2",
        outcome_effect="fixed:1.5",
        draws=500,
        seed=1,
    )
    assert diff.median == pytest.approx(2.0 - 1.5 * 0.4)


def test_a_constructed_population_gives_the_adjusted_ratio():
    # METHODS-MORE 8.3: p1 = .5, p0 = .2, RR_CD = 4, true RR 1.5, baseline risk 0.02, no
    # effect modification: the crude RR is 2.34375 and dividing by the bias factor gives 1.5.
    p1, p0, rr_cd, rr, base = 0.5, 0.2, 4.0, 1.5, 0.02
    risk_treated = rr * base * (p1 * rr_cd + (1 - p1))
    risk_control = base * (p0 * rr_cd + (1 - p0))
    crude = risk_treated / risk_control
    assert crude == pytest.approx(2.34375)
    res = simulate(
        "rr",
        crude,
        (crude / 1.3, crude * 1.3),
        prevalence_treated="fixed:0.5",
        prevalence_control="fixed:0.2",
        outcome_effect="fixed:4",
        draws=100,
        seed=2,
    )
    assert res.median == pytest.approx(1.5, rel=1e-12)


def test_the_total_interval_contains_the_systematic_one():
    res = simulate(
        "rr",
        1.8,
        (1.2, 2.7),
        prevalence_treated="uniform:0.3:0.6",
        prevalence_control="beta:2:8",
        outcome_effect="lognormal:0.7:0.2",
        draws=200_000,
        seed=3,
    )
    assert res.interval_total[0] < res.interval[0] < res.interval[1] < res.interval_total[1]


@pytest.mark.parametrize(
    "text, mean",
    [
        ("uniform:0.2:0.6", 0.4),
        ("triangular:0.1:0.2:0.6", (0.1 + 0.2 + 0.6) / 3),
        ("trapezoidal:0:0.2:0.4:1", None),
        ("beta:2:8", 0.2),
        ("lognormal:0.5:0.2", float(np.exp(0.5 + 0.02))),
    ],
)
def test_the_samplers_match_their_distributions(text, mean):
    prior = parse_prior(text, "x")
    u = (np.arange(400_000) + 0.5) / 400_000
    quantile_mean = float(prior.quantile(u).mean())
    if mean is None:  # trapezoid: the mean by integrating its density
        a, b, c, d = prior.values
        mean = ((d**2 + c * d + c**2) - (a**2 + a * b + b**2)) / (3 * (d + c - a - b))
    assert quantile_mean == pytest.approx(mean, rel=2e-3)
    from sensitivity.simulate.core import draw

    drawn = draw(prior, np.random.default_rng(0), 400_000).mean()
    assert drawn == pytest.approx(mean, rel=1e-2)


def test_a_run_repeats_with_its_seed(run):
    args = (
        "simulate",
        "--scale",
        "rr",
        "--estimate",
        0.81,
        "--ci",
        0.69,
        0.95,
        "--prevalence-treated",
        "uniform:0.2:0.4",
        "--prevalence-control",
        "uniform:0.3:0.5",
        "--outcome-effect",
        "lognormal:0.5:0.2",
        "--format",
        "json",
    )
    first = run(*args)
    seed = json.loads(first.stdout)["seed"]
    assert f"Seed {seed}" in first.stderr
    again = json.loads(run(*args, "--seed", seed).stdout)
    assert again["median"] == json.loads(first.stdout)["median"]
    for key in (
        "draws",
        "seed",
        "discarded",
        "median",
        "interval",
        "interval_total",
        "share_beyond_target",
        "priors",
    ):
        assert key in again


def test_impossible_draws_are_counted():
    res = simulate(
        "rr",
        1.8,
        (1.2, 2.7),
        prevalence_treated="uniform:0.5:1.5",
        prevalence_control="fixed:0.2",
        outcome_effect="fixed:2",
        draws=10_000,
        seed=4,
    )
    assert 4000 < res.discarded < 6000
    assert any("impossible and discarded" in n for n in res.notes)


@pytest.mark.parametrize(
    "kwargs, message",
    [
        (
            {"prevalence_treated": "uniform:1.2:1.5"},
            r"^`prevalence_treated`: the prior uniform:1.2:1.5 must put some weight on \[0, 1\]; "
            r"it has none$",
        ),
        (  # it said "lies outside [1e-300, inf]"
            {"outcome_effect": "uniform:-3:-1"},
            r"^`outcome_effect`: the prior uniform:-3:-1 must put some weight on positive "
            r"values; it has none$",
        ),
        ({"draws": 0}, r"`draws` must be positive; got 0"),
        ({"prevalence_control": "normal:0:1"}, r"`prevalence_control` must be KIND:PARAMETERS"),
        ({"prevalence_control": "uniform:0.5"}, r"uniform takes 2 numbers; got 1"),
        # each refusal of a prior's parameters says the rule (it said only "is not valid")
        (
            {"prevalence_control": "uniform:0.6:0.2"},
            r"^`prevalence_control`: 'uniform:0.6:0.2' is not a valid uniform distribution: "
            r"uniform:LOW:HIGH needs LOW at most HIGH$",
        ),
        (
            {"prevalence_control": "triangular:0.2:0.1:0.4"},
            r"triangular:LOW:MODE:HIGH needs LOW <= MODE <= HIGH and LOW below HIGH$",
        ),
        (
            {"prevalence_control": "trapezoidal:0.1:0.3:0.2:0.4"},
            r"needs MIN <= MODE_LOW <= MODE_HIGH <= MAX and MIN below MAX$",
        ),
        ({"prevalence_control": "beta:0:3"}, r"beta:A:B needs A and B positive$"),
        ({"outcome_effect": "lognormal:0.5:-0.2"}, r"needs SDLOG at least 0$"),
        ({"correlation": 1.0}, r"`correlation` must lie strictly between -1 and 1"),
    ],
)
def test_bad_input(kwargs, message):
    base = {
        "prevalence_treated": "uniform:0.3:0.6",
        "prevalence_control": "uniform:0.1:0.3",
        "outcome_effect": "fixed:2",
        "draws": 1000,
        "seed": 1,
    }
    with pytest.raises(InputError, match=message):
        simulate("rr", 1.8, (1.2, 2.7), **(base | kwargs))


@pytest.mark.parametrize("fmt", ["text", "json", "csv", "markdown", "latex"])
def test_the_command_in_every_format(run, fmt, tmp_path):
    res = run(
        "simulate",
        "--scale",
        "hr",
        "--estimate",
        1.38,
        "--ci",
        1.12,
        1.70,
        "--outcome-frequency",
        "rare",
        "--prevalence-treated",
        "uniform:0.3:0.5",
        "--prevalence-control",
        "uniform:0.2:0.3",
        "--outcome-effect",
        "triangular:1:2:3",
        "--correlation",
        0.5,
        "--seed",
        7,
        "--draws",
        20_000,
        "--format",
        fmt,
        "--plot",
        tmp_path / "s.png",
    )
    assert res.exit_code == 0, res.stderr
    assert (tmp_path / "s.png").read_bytes().startswith(b"\x89PNG")


@pytest.mark.parametrize("scale", ["md", "smd", "rd", "rr", "or", "hr"])
def test_every_scale(scale):
    ratio = scale in ("rr", "or", "hr")
    est, ci = (1.6, (1.2, 2.1)) if ratio else (0.3, (0.1, 0.5))
    res = simulate(scale, est, ci, prevalence_treated="fixed:0.5", prevalence_control="fixed:0.2",
                   outcome_effect="fixed:2" if ratio else "fixed:0.2", draws=100, seed=1,
                   outcome="common" if scale in ("or", "hr") else None)  # fmt: skip
    assert np.isfinite(res.median)


@settings(max_examples=20, deadline=None)
@given(st.floats(0.3, 3), st.floats(0.05, 0.6), st.integers(0, 2**31))
def test_each_interval_has_its_own_share_beyond_the_null(estimate, width, seed):
    """Issue 19: the share printed beside the total-error interval was the systematic one.
    Each share is the mean of its own draws (all kept: fewer than 200,000)."""
    lo, hi = estimate * np.exp(-width), estimate * np.exp(width)
    res = simulate("rr", estimate, (lo, hi), prevalence_treated="uniform:0.2:0.4",
                   prevalence_control="uniform:0.1:0.3", outcome_effect="lognormal:0.5:0.2",
                   draws=5000, seed=seed)  # fmt: skip
    side = 1 if estimate >= 1 else -1
    assert res.share_beyond_target == np.mean(side * (res.sample - 1) <= 0)
    assert res.share_beyond_target_total == np.mean(side * (res.sample_total - 1) <= 0)
    text = " ".join(res.sentence().split())
    assert f"with random error added, {res.share_beyond_target_total:.1%} of draws" in text


def test_a_level_is_printed_as_given_and_refused_at_the_limit():
    res = simulate("rr", 1.8, (1.2, 2.7), prevalence_treated="fixed:0.5",
                   prevalence_control="fixed:0.2", outcome_effect="fixed:3", draws=100, seed=1,
                   ci_level=0.975)  # fmt: skip
    assert "97.5% CI" in str(res)
    with pytest.raises(InputError, match=r"`ci_level` must be at least 1e-15"):
        simulate("rr", 1.8, (1.2, 2.7), prevalence_treated="fixed:0.5",
                 prevalence_control="fixed:0.2", outcome_effect="fixed:3",
                 ci_level=5e-324)  # fmt: skip
