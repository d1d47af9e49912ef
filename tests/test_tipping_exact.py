"""Issue 19: the exact tipping column is the closed form, checked by brute force.

Each closed form is written out here again, from its source, and evaluated on a very fine
grid of the solved parameter (linear near the crossing, log-spaced over a wide range) with
no tolerance: the brute force is the independent check of the exact sets.

- binary U, difference scale: adjusted = observed - gamma (p1 - p0); ratio scale: observed
  (1 + (G - 1) p0) / (1 + (G - 1) p1) (Lin, Psaty & Kronmal 1998; VanderWeele & Arah 2011;
  /work/shared/METHODS.md section 3, docs/METHODS.md "Tipping points").
- normal U: observed - gamma Delta, observed / G^Delta (Lin, Psaty & Kronmal 1998).
- bounding: observed / B with B = a b / (a + b - 1) (Ding & VanderWeele 2016).
- partial R²: |bias| = se sqrt(dof) sqrt(R2_y R2_t / (1 - R2_t)), adjusted se = se
  sqrt((1 - R2_y) / (1 - R2_t)) sqrt(dof / (dof - 1)), limits with the t quantile on dof - 1
  (Cinelli & Hazlett 2020; docs/METHODS.md "Partial R²").
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy import stats

from sensitivity.tipping import (
    binary_confounder_grid,
    bounding_grid,
    continuous_confounder_grid,
    partial_r2_grid,
    value_range,
)
from sensitivity.tipping.core import set_contains
from sensitivity.tipping.present import shown_ends

# ------------------------------------------------------------------ the closed forms, again


def binary_moved(obs, p1, p0, g, ratio):
    if ratio:
        return obs * (1 + (g - 1) * p0) / (1 + (g - 1) * p1)
    return obs - g * (p1 - p0)


def partial_r2_moved(est, se, dof, r2t, r2y, alpha, which):
    bias = se * np.sqrt(dof) * np.sqrt(r2y * r2t / (1 - r2t))
    adj = est - np.sign(est) * bias
    s = se * np.sqrt((1 - r2y) / (1 - r2t)) * np.sqrt(dof / (dof - 1))
    crit = stats.t.ppf(1 - alpha / 2, dof - 1)
    return {"estimate": adj, "lower": adj - crit * s, "upper": adj + crit * s}[which]


def probe_points(lo, hi, near=()):
    """A very fine brute-force grid over (lo, hi): 20,001 linear points over a finite range
    (or near the crossings of an infinite one) and 4,001 log-spaced ones out to 1e12."""
    parts = []
    if math.isfinite(lo) and math.isfinite(hi):
        parts.append(np.linspace(lo, hi, 20_001))
    else:
        wide = np.logspace(-12, 12, 4_001)
        parts += [wide, -wide] if not math.isfinite(lo) else [lo + wide]
        for c in near:
            if np.isfinite(c) and abs(c) <= 1e307:  # c +- |c| stays a double (a crossing at
                # 4.5e307, from a prevalence of 2.2e-308, overflowed the grid itself)
                span = max(1.0, abs(c))
                parts.append(np.linspace(c - span, c + span, 20_001))
    x = np.concatenate(parts + [np.array([lo, hi])])
    x = x[np.isfinite(x) & (x >= lo) & (x <= hi)]
    return np.unique(x)


def check_against_brute_force(exact, x, margin, scale, open_ends=()):
    """Every brute-force point agrees with the exact set (reached where the margin, the
    signed distance of the moved value past the target, is at most 0), away from its ends
    (relative 1e-6), from open ends of the range, and from points where the margin is a
    rounding error of the brute force itself (1e-12 of `scale`)."""
    reached = margin <= 0
    kind, low, high = (float(np.ravel(exact[k])[0]) for k in ("kind", "low", "high"))
    one = {k: np.ravel(v)[:1] for k, v in exact.items()}
    inside = set_contains({k: v[..., None] for k, v in one.items()}, x)[0]
    near = np.zeros(x.shape, bool)
    for e in (low, high, *open_ends):
        if np.isfinite(e):
            near |= np.abs(x - e) <= 1e-6 * max(1.0, abs(e))
    with np.errstate(invalid="ignore"):
        near |= np.abs(margin) <= 1e-12 * scale
    bad = (inside != reached) & ~near
    assert not bad.any(), (kind, low, high, x[bad][:5])
    return kind, low, high


# ------------------------------------------------------------------ binary U
@settings(max_examples=60, deadline=None)
@given(
    st.booleans(),
    st.floats(0.2, 5),
    st.floats(0, 1),
    st.floats(0, 1),
    st.floats(0.05, 10),
    st.sampled_from([0, 1, 2]),
    st.floats(0.5, 2),
)
def test_binary_exact_sets_against_brute_force(ratio, est, p1, p0, g, solved, target):
    scale = "rr" if ratio else "md"
    obs = est if ratio else est - 2.5
    tgt = target if ratio else target - 1.25
    params = {"prevalence_treated": [p1], "prevalence_control": [p0], "outcome_effect": [g]}
    name = list(params)[solved]
    params[name] = [0.5, 0.6] if solved < 2 else [1.5, 2.5]
    grid = binary_confounder_grid(scale, obs, target=tgt, **params)
    assume(grid.solved == solved)
    lo, hi = (0.0, 1.0) if solved < 2 else ((0.0, np.inf) if ratio else (-np.inf, np.inf))
    exact = grid.exact["estimate"]
    x = probe_points(
        lo, hi, near=np.ravel(exact["low"]).tolist() + np.ravel(exact["high"]).tolist()
    )
    if solved == 2 and ratio:
        x = x[x > 0]  # the ratio effect must be positive
    args = [p1, p0, g]
    args[solved] = x
    with np.errstate(all="ignore"):
        moved = binary_moved(obs, *args, ratio)
    side = 1 if obs >= tgt else -1
    scale = max(abs(obs - tgt), abs(tgt))
    kind, low, high = check_against_brute_force(
        exact, x, side * (moved - tgt), scale, open_ends=(0.0,)
    )
    for end in (low, high):
        if np.isfinite(end) and not (solved == 2 and ratio and end == 0):
            args[solved] = end
            if (solved < 2 and end in (0.0, 1.0)) and kind != 2 and kind != 3:
                continue  # the range's own end, not a crossing
            value = binary_moved(obs, *args, ratio)
            if end in (lo, hi):
                continue
            assert value == pytest.approx(tgt, rel=1e-9, abs=1e-12)


# ------------------------------------------------------------------ asymptotes: never
@settings(deadline=None)  # brute force over many points: no per-example deadline
@given(
    st.integers(1, 60).map(lambda i: i / 128),  # p0, exact in binary
    st.sampled_from([2.0, 4.0, 0.5, 0.25]),  # obs / target, exact
    st.sampled_from([0.5, 1.0, 2.0]),  # a target that is a power of two
)
def test_a_ratio_curve_that_tends_to_the_target_never_reaches_it(p0, k, target):
    # As G grows, obs (1 + (G-1) p0) / (1 + (G-1) p1) tends to obs p0 / p1; with p1 = k p0
    # and obs = k target the limit is the target itself, approached and never met.
    p1 = k * p0
    assume(p1 <= 1)
    obs = k * target
    assert obs * p0 / p1 == target  # the limit of the closed form, exactly
    grid = binary_confounder_grid(
        "rr", obs, target=target, prevalence_treated=p1, prevalence_control=p0,
        outcome_effect=value_range(1, 10, 0.5),
    )  # fmt: skip
    (tp,) = grid.tipping_points()
    assert tp["estimate_exact"] == {"reached": "never", "low": None, "high": None}
    g = np.logspace(-12, 12, 24_001)
    side = 1 if obs >= target else -1
    assert not (side * (binary_moved(obs, p1, p0, g, True) - target) < 0).any()
    assert "never" in grid.summary()


@settings(deadline=None)  # brute force over many points: no per-example deadline
@given(st.floats(1.05, 50), st.sampled_from([1.0, 0.5, 2.0]))
def test_a_bounding_curve_that_tends_to_the_target_never_reaches_it(a, target):
    # B(a, b) = a b / (a + b - 1) tends to a as b grows: with a = RR / target never reached.
    obs = a * target
    assume(obs / target == a)
    grid = bounding_grid("rr", obs, target=target, rr_treatment=a, rr_outcome=value_range(1, 9, 1))
    (tp,) = grid.tipping_points()
    assert tp["estimate_exact"]["reached"] == "never"
    b = np.logspace(0, 12, 12_001)
    assert not (obs / (a * b / (a + b - 1)) < target).any()


@settings(deadline=None)  # brute force over many points: no per-example deadline
@given(st.integers(1, 40), st.sampled_from([0.25, 0.5, 0.75]))
def test_a_partial_r2_curve_that_tends_to_the_target_only_at_one_never_reaches_it(k, r2t):
    # With r2_treatment fixed, the bias tends to se sqrt(dof r2t / (1 - r2t)) as r2_outcome
    # tends to 1 (excluded); choose se and dof so that this limit is the estimate itself.
    se, dof = 0.5, 4.0 * k * k * (1 - r2t) / r2t
    est = se * math.sqrt(dof * r2t / (1 - r2t))
    assume(dof > 2)
    grid = partial_r2_grid(est, se, dof, r2_treatment=r2t, r2_outcome=value_range(0, 0.99, 0.01))
    (tp,) = grid.tipping_points()
    limit = est - se * math.sqrt(dof) * math.sqrt(r2t / (1 - r2t))
    assert abs(limit) <= 1e-12 * est  # the limit of the closed form at r2_outcome = 1
    assert tp["estimate_exact"]["reached"] == "never"
    r2y = 1 - np.logspace(-12, 0, 12_001)[:-1]
    moved = partial_r2_moved(est, se, dof, r2t, r2y, 0.05, "estimate")
    assert not (moved < -1e-12 * est).any()  # brute force: never strictly beyond the target


def test_the_issue_asymptotes_say_never_in_every_view(tmp_path, run):
    # 'from 2.5e9' (RR 2, p1 = 0.4, p0 = 0.2) and 'up to 1e-9' (RR 0.5, p1 = 0.5, p0 = 0)
    # used to be printed where the truth is never.
    for est, p1, p0, effect in (("2", "0.4", "0.2", "1:10:1"), ("0.5", "0.5", "0", "0.1:1:0.1")):
        args = ["tipping", "--scale", "rr", "--estimate", est, "--prevalence-treated", p1,
                "--prevalence-control", p0, "--outcome-effect", effect]  # fmt: skip
        import json

        res = run(*args, "--format", "json")
        (tp,) = json.loads(res.stdout)["tipping_points"]
        assert tp["estimate_exact"] == {"reached": "never", "low": None, "high": None}
        for fmt in ("text", "markdown", "latex"):
            out = run(*args, "--format", fmt).stdout
            assert "never" in out and "e+09" not in out and "e-09" not in out, fmt


# ------------------------------------------------------------------ bounding, continuous
@settings(max_examples=40, deadline=None)
@given(st.floats(0.2, 12), st.floats(1.0, 40), st.booleans(), st.floats(0.5, 2))
def test_bounding_exact_sets_against_brute_force(est, other, solve_outcome, target):
    kw = {"rr_treatment": other, "rr_outcome": [2.0, 3.0]}
    if not solve_outcome:
        kw = {"rr_treatment": [2.0, 3.0], "rr_outcome": other}
    grid = bounding_grid("rr", est, target=target, **kw)
    exact = grid.exact["estimate"]
    x = probe_points(1.0, np.inf, near=np.ravel(exact["low"]).tolist())
    side = 1 if est >= target else -1
    B = other * x / (other + x - 1)
    moved = est / B if side > 0 else est * B
    scale = max(abs(est - target), target)
    kind, low, _ = check_against_brute_force(exact, x, side * (moved - target), scale)
    if kind == 2 and low > 1:  # from: the end solves the closed form
        B = other * low / (other + low - 1)
        assert (est / B if side > 0 else est * B) == pytest.approx(target, rel=1e-10)


@settings(max_examples=40, deadline=None)
@given(st.booleans(), st.floats(0.3, 3), st.floats(-3, 3), st.booleans())
def test_continuous_exact_sets_against_brute_force(ratio, est, other, solve_difference):
    assume(abs(other) > 1e-3)
    scale = "rr" if ratio else "md"
    obs = est if ratio else est - 1.5
    tgt = 1.0 if ratio else 0.0
    o = math.exp(other) if ratio else other  # a ratio effect is positive
    if solve_difference:
        kw = {"difference": [0.5, 1.0], "outcome_effect": o}
    else:
        kw = {"difference": other, "outcome_effect": [1.5, 2.5]}
    grid = continuous_confounder_grid(scale, obs, **kw)
    exact = grid.exact["estimate"]
    lo = 0.0 if (ratio and not solve_difference) else -np.inf
    x = probe_points(
        lo, np.inf, near=np.ravel(exact["low"]).tolist() + np.ravel(exact["high"]).tolist()
    )
    if lo == 0.0:
        x = x[x > 0]
    delta, g = (x, o) if solve_difference else (other, x)
    with np.errstate(all="ignore"):
        moved = obs / np.power(g, delta) if ratio else obs - g * delta
    side = 1 if obs >= tgt else -1
    scale = max(abs(obs - tgt), abs(tgt))
    check_against_brute_force(exact, x, side * (moved - tgt), scale, open_ends=(0.0,))


# ------------------------------------------------------------------ partial R²
@settings(max_examples=60, deadline=None)
@given(
    st.floats(0.3, 6),
    st.integers(20, 2000),
    st.booleans(),
    st.floats(-1.5, 1.5),
    st.floats(0, 0.9),
    st.sampled_from(["estimate", "ci"]),
)
def test_partial_r2_exact_sets_against_brute_force(t, dof, solve_outcome, shift, other, key):
    est, se = t * 0.1, 0.1
    tgt = shift * est
    kw = {"r2_treatment": other, "r2_outcome": [0.1, 0.2]}
    if not solve_outcome:
        kw = {"r2_treatment": [0.1, 0.2], "r2_outcome": other}
    grid = partial_r2_grid(est, se, dof, target=tgt, **kw)
    exact = grid.exact[key]
    x = np.unique(np.concatenate([np.linspace(0, 1, 200_001)[:-1], 1 - np.logspace(-12, -5, 2001)]))
    side = 1 if est >= tgt else -1
    which = "estimate" if key == "estimate" else ("lower" if side > 0 else "upper")
    pair = (other, x) if solve_outcome else (x, other)
    with np.errstate(all="ignore"):
        moved = partial_r2_moved(est, se, dof, *pair, 0.05, which)
    scale = max(abs(est - tgt), abs(tgt), se)
    check_against_brute_force(exact, x, side * (moved - tgt), scale, open_ends=(1.0,))


def test_a_target_beyond_the_estimate_is_reached_on_two_pieces():
    # t = 2.5 on 100 dof, target 1.6 (beyond the estimate 1, away from zero): the upper
    # limit (1.79) covers 1.6 at r2_treatment = 0; a confounder on the treatment side moves
    # the estimate away from 1.6 faster than it widens the interval, then slower, so the
    # interval covers 1.6 again as r2_treatment nears 1.
    grid = partial_r2_grid(1.0, 0.4, 100, target=1.6, r2_treatment=value_range(0, 0.99, 0.01),
                           r2_outcome=0.0225)  # fmt: skip
    (tp,) = grid.tipping_points()
    exact = tp["ci_exact"]
    assert exact["reached"] == "outside" and 0 < exact["low"] < exact["high"] < 1
    x = np.linspace(0, 1, 100_001)[:-1]
    upper = partial_r2_moved(1.0, 0.4, 100, x, 0.0225, 0.05, "upper")
    hit = x[upper >= 1.6]
    assert hit[hit < 0.5].max() == pytest.approx(exact["low"], abs=2e-5)
    assert hit[hit > 0.5].min() == pytest.approx(exact["high"], abs=2e-5)
    assert " or ≥ " in grid.summary()


# ------------------------------------------------------------------ the grid's relation
@settings(max_examples=40, deadline=None)
@given(st.floats(0.3, 5), st.floats(0, 0.6), st.floats(0.4, 1), st.sampled_from([0.5, 0.25, 0.1]))
def test_the_grid_tips_at_the_first_grid_value_past_the_crossing(est, p0, p1, step):
    # The true relation of the two columns: the grid's least value is the first grid value
    # at or past the exact crossing (within the grid's tolerance), never a step earlier.
    grid = binary_confounder_grid("rr", 1 + est, prevalence_treated=p1, prevalence_control=p0,
                                  outcome_effect=value_range(1, 40, step))  # fmt: skip
    (tp,) = grid.tipping_points()
    exact = tp["estimate_exact"]
    if exact["reached"] != "from" or exact["low"] > 40:
        assert tp["estimate"] is None or exact["reached"] == "always"
        return
    least, low = tp["estimate"], exact["low"]
    assert least is not None
    assert least - step < low * (1 + 1e-12)  # not more than one step late
    # not early: at the grid's least value the closed form is at the target or within the
    # grid's tolerance of it
    moved = binary_moved(1 + est, p1, p0, least, True)
    assert moved - 1 <= 1e-9 * est


# ------------------------------------------------------------------ printed ends
@settings(max_examples=60, deadline=None)
@given(st.floats(0.01, 5), st.floats(0, 1), st.floats(0, 1), st.sampled_from([0, 2]))
def test_printed_ends_never_overstate(d, p1, p0, solved):
    # A printed start "≥ x" either lies in the exact set or tips on the grid at x (a grid
    # holding x tips there); it is at most one printed unit past the crossing.
    params = {"prevalence_treated": [p1], "prevalence_control": p0, "outcome_effect": [2.0]}
    name = "prevalence_treated" if solved == 0 else "outcome_effect"
    params[name] = [0.5, 0.75] if solved == 0 else [1.0, 3.0]
    grid = binary_confounder_grid("md", d, **params)
    (tp,) = grid.tipping_points()
    (ends,) = shown_ends(grid, "estimate")
    kind = tp["estimate_exact"]["reached"]
    digits = 3 if solved == 0 else 4
    for key, direction in (("low", 1), ("high", -1)):
        printed = (kind == "from" and key == "low") or (kind == "up_to" and key == "high")
        if not printed or key not in ends:
            continue
        true, shown = tp["estimate_exact"][key], ends[key]
        one = dict(params, **{name: shown})
        tips = binary_confounder_grid("md", d, **one).reach_estimate.item()
        assert direction * (shown - true) >= 0 or tips
        unit = 10.0 ** (math.floor(math.log10(abs(true))) - digits + 1) if true else 0
        assert abs(shown - true) <= unit * (1 + 1e-9)


def test_a_crossing_at_3_0003_prints_as_at_least_3_001():
    # 3.0003 - g (1 - 0) reaches 0 at g = 3.0003; the grid value 3 does not tip.
    grid = binary_confounder_grid("md", 3.0003, prevalence_treated=1, prevalence_control=0,
                                  outcome_effect=value_range(0, 4, 1))  # fmt: skip
    assert not grid.reach_estimate.ravel()[3]
    assert "≥ 3.001" in grid.summary() and "≥ 3 " not in grid.summary()


def test_a_closed_form_crossing_prints_as_itself():
    # 0.275 - 1 (p1 - 0.1) reaches 0 at p1 = 0.375 (the closed form p0 + d / g).
    grid = binary_confounder_grid("md", 0.275, prevalence_treated=value_range(0, 1, 0.05),
                                  prevalence_control=0.1, outcome_effect=1)  # fmt: skip
    (tp,) = grid.tipping_points()
    assert tp["estimate_exact"]["low"] == pytest.approx(0.375, rel=1e-15)
    assert "≥ 0.375" in grid.summary()
