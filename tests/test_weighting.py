"""Weighted (IPW) estimates under the marginal sensitivity model (issue 22).

Outside references: statsmodels Logit/GLM (the propensity fit and the ordinary weighted
estimate), statsmodels QuantReg (the quantile model), scipy.optimize.linprog (the box
extremum as a linear-fractional program, Charnes-Cooper; the sharp bound as a linear program
with the balancing constraint), brute-force enumeration of every vertex weight vector
(METHODS-MORE 6.4 check 1), and a simulated population whose true Λ is known.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.weighting import box_bounds, weighted_sensitivity, weighting_bounds
from sensitivity.weighting.box import box_weights
from sensitivity.weighting.models import logistic_fit, quantile_fit, split_atom


def _data(n=600, seed=0, binary=False):
    rng = np.random.default_rng(seed)
    x = rng.normal(size=(n, 2))
    a = (rng.uniform(size=n) < 1 / (1 + np.exp(-(0.6 * x[:, 0] - 0.4 * x[:, 1])))).astype(float)
    y = x[:, 0] + 0.5 * a + rng.normal(size=n)
    if binary:
        y = (y > 0.2).astype(float)
    return y, a, np.c_[np.ones(n), x]


# ----------------------------------------------------------------- the box extremum


def _brute(y, b, c, lam):
    """Every vertex w_i in {b + c/Λ, b + cΛ}: the optimum of a linear-fractional objective
    over a box is at a vertex."""
    lo, hi = b + c / lam, b + c * lam
    values = [
        np.dot(w, y) / w.sum()
        for w in (np.where(np.array(bits, bool), hi, lo)
                  for bits in itertools.product((0, 1), repeat=y.size))
    ]  # fmt: skip
    return min(values), max(values)


def _linprog(y, b, c, lam):
    """Charnes-Cooper: max Σ y z s.t. Σ z = 1, lo·t <= z <= hi·t, t >= 0."""
    from scipy.optimize import linprog

    lo, hi = b + c / lam, b + c * lam
    n = y.size
    a_ub = np.zeros((2 * n, n + 1))
    a_ub[:n, :n] = np.eye(n)
    a_ub[:n, n] = -hi
    a_ub[n:, :n] = -np.eye(n)
    a_ub[n:, n] = lo
    a_eq = np.r_[np.ones(n), 0.0][None, :]
    out = []
    for sign in (1, -1):
        res = linprog(sign * np.r_[y, 0.0], A_ub=a_ub, b_ub=np.zeros(2 * n), A_eq=a_eq,
                      b_eq=[1.0], bounds=[(0, None)] * (n + 1), method="highs")  # fmt: skip
        out.append(sign * res.fun)
    return out[0], out[1]


@pytest.mark.parametrize("seed", range(4))
def test_box_extremum_equals_enumeration_and_linprog(seed):
    rng = np.random.default_rng(seed)
    n = 10
    y = rng.normal(size=n).round(1)  # rounded: ties among the outcomes
    e = rng.uniform(0.1, 0.9, n)
    b, c = box_weights(e, np.ones(n, bool), "ate")
    lam = np.array([1.0, 1.3, 2.0, 5.0])
    lo, hi = box_bounds(y, b, c, lam)
    lo_s, hi_s = box_bounds(y, b, c, lam, scan=True)
    for i, lv in enumerate(lam):
        brute = _brute(y, b, c, lv)
        lp = _linprog(y, b, c, lv)
        assert (lo[i], hi[i]) == pytest.approx(brute, abs=1e-12)
        assert (lo_s[i], hi_s[i]) == pytest.approx(brute, abs=1e-12)
        assert (lo[i], hi[i]) == pytest.approx(lp, abs=1e-8)


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.floats(-5, 5, allow_nan=False), min_size=2, max_size=9),
    st.floats(1.0, 8.0),
    st.integers(0, 10_000),
    st.sampled_from(["ate-treated", "ate-control", "att-control"]),
)
def test_box_extremum_property(ys, lam, seed, arm):
    y = np.asarray(ys)
    rng = np.random.default_rng(seed)
    e = rng.uniform(0.05, 0.95, y.size)
    estimand, which = arm.split("-")
    b, c = box_weights(e, np.full(y.size, which == "treated"), estimand)
    counts = rng.integers(0, 3, y.size).astype(float)
    counts[0] = 1.0
    lo, hi = box_bounds(y, b, c, np.array([lam]), weights=counts)
    keep = counts > 0
    rep = np.repeat(np.arange(y.size), counts.astype(int))
    ref = _brute(y[rep], b[rep], c[rep], lam) if rep.size <= 12 else None
    scan = box_bounds(y[keep], b[keep], c[keep], np.array([lam]), weights=counts[keep], scan=True)
    assert lo[0] == pytest.approx(scan[0][0], abs=1e-9)
    assert hi[0] == pytest.approx(scan[1][0], abs=1e-9)
    if ref is not None:
        assert (lo[0], hi[0]) == pytest.approx(ref, abs=1e-9)
    plain = np.dot(counts * (b + c), y) / np.dot(counts, b + c)
    assert lo[0] - 1e-9 <= plain <= hi[0] + 1e-9


# ----------------------------------------------------------------- the small fits


def test_logistic_fit_matches_statsmodels():
    import statsmodels.api as sm

    y, a, x = _data(800, seed=2)
    beta, ok = logistic_fit(x, a)
    ref = sm.Logit(a, x).fit(disp=0)
    assert ok
    np.testing.assert_allclose(beta, ref.params, rtol=1e-8, atol=1e-10)
    counts = np.random.default_rng(1).integers(0, 4, a.size).astype(float)
    beta_w, _ = logistic_fit(x, a, counts)
    glm = sm.GLM(a, x, family=sm.families.Binomial(), freq_weights=counts).fit()
    np.testing.assert_allclose(beta_w, glm.params, rtol=1e-8, atol=1e-10)


def test_quantile_fit_is_close_to_statsmodels_quantreg():
    # The smoothed check loss is not the exact one: coefficients agree to a small share of
    # the outcome's spread, and the fitted quantile leaves the right share below it.
    from statsmodels.regression.quantile_regression import QuantReg

    rng = np.random.default_rng(5)
    n = 4000
    x = np.c_[np.ones(n), rng.normal(size=(n, 2))]
    y = x @ [1.0, 2.0, -1.0] + (1 + 0.5 * np.abs(x[:, 1])) * rng.normal(size=n)
    for tau in (0.5, 2 / 3, 0.8):
        beta = quantile_fit(x, y, tau)
        ref = QuantReg(y, x).fit(q=tau).params
        assert np.max(np.abs(beta - ref)) < 0.05 * y.std()
        assert np.mean(y <= x @ beta) == pytest.approx(tau, abs=0.02)


def test_split_atom_balances_and_equals_a_linear_program():
    from scipy.optimize import linprog

    for p in (0.05, 0.2, 0.5, 0.9):
        for lam in (1.0, 1.5, 3.0):
            fav, other = split_atom(np.array(p), lam)
            assert p * fav + (1 - p) * other == pytest.approx(1.0)
            assert 1 / lam - 1e-12 <= fav <= lam + 1e-12
            assert 1 / lam - 1e-12 <= other <= lam + 1e-12
            res = linprog([-p, 0.0], A_eq=[[p, 1 - p]], b_eq=[1.0],
                          bounds=[(1 / lam, lam)] * 2, method="highs")  # fmt: skip
            assert p * fav == pytest.approx(-res.fun, abs=1e-9)


# ----------------------------------------------------------------- the estimate at Λ = 1


def _hajek(y, a, e, estimand="ate"):
    if estimand == "ate":
        w1, w0 = 1 / e, 1 / (1 - e)
    else:
        w1, w0 = np.ones_like(e), e / (1 - e)
    t = a == 1
    return np.dot(w1[t], y[t]) / w1[t].sum() - np.dot(w0[~t], y[~t]) / w0[~t].sum()


@pytest.mark.parametrize("estimand", ["ate", "att"])
def test_lambda_one_is_the_ordinary_weighted_estimate_and_its_bootstrap(estimand):
    import statsmodels.api as sm

    y, a, x = _data(300, seed=7)
    res = weighting_bounds(y, a, covariates=x, lam=[1.0, 1.5], resamples=60, seed=11,
                           estimand=estimand)  # fmt: skip
    e = sm.Logit(a, x).fit(disp=0).predict(x)
    assert res.estimate == pytest.approx(_hajek(y, a, e, estimand), rel=1e-9)
    for method in ("sharp", "percentile"):
        t = res.table[method]
        assert t["lower"][0] == pytest.approx(res.estimate, abs=1e-12)
        assert t["upper"][0] == pytest.approx(res.estimate, abs=1e-12)
    # the bootstrap again, written out here: resamples within each arm from the seed's
    # children (sorted by outcome first, as the package does), statsmodels refits
    order = np.argsort(-y, kind="stable")
    ys, as_, xs = y[order], a[order], x[order]
    arms = [np.flatnonzero(as_ == 1), np.flatnonzero(as_ == 0)]
    estimates = []
    for child in np.random.SeedSequence(11).spawn(60):
        rng = np.random.default_rng(child)
        idx = np.concatenate([arm[rng.integers(0, arm.size, arm.size)] for arm in arms])
        fit = sm.GLM(as_[idx], xs[idx], family=sm.families.Binomial()).fit()
        estimates.append(_hajek(ys[idx], as_[idx], fit.predict(xs[idx]), estimand))
    est = np.sort(estimates)
    j = max(1, int(np.floor(61 * 0.05 / 2)))
    for method in ("sharp", "percentile"):
        t = res.table[method]
        assert t["ci_lower"][0] == pytest.approx(est[j - 1], rel=1e-6)
        assert t["ci_upper"][0] == pytest.approx(est[60 - j], rel=1e-6)


def test_att_leaves_the_treated_unweighted():
    y, a, x = _data(400, seed=3)
    res = weighting_bounds(y, a, covariates=x, lam=[1, 2, 4], resamples=50, seed=1,
                           estimand="att")  # fmt: skip
    # a larger Λ moves only the controls' mean: lower + upper of the effect is
    # 2·mean(treated) - (μ0⁺ + μ0⁻); the treated mean stays the plain one
    treated_mean = y[a == 1].mean()
    box = res.table["percentile"]
    mu0_hi = treated_mean - box["lower"]
    mu0_lo = treated_mean - box["upper"]
    assert np.all(np.diff(mu0_hi) > 0) and np.all(np.diff(mu0_lo) < 0)
    assert mu0_lo[-1] >= y[a == 0].min() - 1e-12 and mu0_hi[-1] <= y[a == 0].max() + 1e-12


# ----------------------------------------------------------------- the sharp bounds


def _cells(seed, n=240):
    rng = np.random.default_rng(seed)
    z = rng.integers(0, 3, n)
    a = (rng.uniform(size=n) < np.array([0.3, 0.5, 0.7])[z]).astype(float)
    y = (rng.uniform(size=n) < np.array([0.2, 0.4, 0.6])[z] + 0.15 * a).astype(float)
    x = np.c_[np.ones(n), z == 1, z == 2].astype(float)
    return y, a, x, z


def _sharp_lp(y, a, z, lam, arm_treated, upper, estimand="ate"):
    """max (or min) over v in [1/Λ, Λ] of Σ_arm y (b + c v) / n with the balance in every
    cell: Σ_{arm, cell} v = n_{arm, cell} (E[v | X, arm] = 1)."""
    from scipy.optimize import linprog

    rows = np.flatnonzero((a == 1) == arm_treated)
    cells = np.unique(z)
    e = np.array([a[z == k].mean() for k in cells])[z]
    b, c = box_weights(e, a == 1, estimand)
    yy, bb, cc, zz = y[rows], b[rows], c[rows], z[rows]
    a_eq = np.array([(zz == k).astype(float) for k in cells])
    b_eq = a_eq.sum(1)
    sign = -1 if upper else 1
    res = linprog(sign * yy * cc, A_eq=a_eq, b_eq=b_eq, bounds=[(1 / lam, lam)] * rows.size,
                  method="highs")  # fmt: skip
    total = np.dot(bb, yy) + sign * res.fun
    weights = np.dot(bb, np.ones_like(yy)) + np.dot(cc, res.x)
    return total / weights


@pytest.mark.parametrize("seed", range(3))
@pytest.mark.parametrize("estimand", ["ate", "att"])
def test_sharp_bounds_equal_the_balanced_linear_program(seed, estimand):
    y, a, x, z = _cells(seed)
    lam = [1.0, 1.5, 2.5]
    res = weighting_bounds(y, a, covariates=x, lam=lam, resamples=50, seed=1, estimand=estimand)
    sharp = res.table["sharp"]
    for i, lv in enumerate(lam):

        def lp(treated, upper):
            return _sharp_lp(y, a, z, lv, treated, upper, estimand)  # noqa: B023

        upper = lp(True, True) - lp(False, False)
        lower = lp(True, False) - lp(False, True)
        assert sharp["upper"][i] == pytest.approx(upper, abs=1e-7)
        assert sharp["lower"][i] == pytest.approx(lower, abs=1e-7)


@pytest.mark.parametrize("binary", [True, False])
def test_sharp_bounds_lie_inside_the_box_and_widen_with_lambda(binary):
    y, a, x = _data(800, seed=4, binary=binary)
    lam = np.linspace(1, 3, 17)
    res = weighting_bounds(y, a, covariates=x, lam=lam, resamples=50, seed=2)
    sharp, box = res.table["sharp"], res.table["percentile"]
    assert np.all(sharp["lower"] >= box["lower"] - 1e-12)
    assert np.all(sharp["upper"] <= box["upper"] + 1e-12)
    assert np.all(np.diff(sharp["lower"]) <= 1e-12)
    assert np.all(np.diff(sharp["upper"]) >= -1e-12)
    assert np.all(np.diff(box["lower"]) <= 1e-12)
    assert np.all(np.diff(box["upper"]) >= -1e-12)
    if binary:
        assert np.all(res.table["sharp"]["rr_lower"] >= res.table["percentile"]["rr_lower"] - 1e-12)


def test_bounds_cover_the_true_effect_at_the_true_lambda():
    # A hidden binary U moves the treatment's log-odds by ±γ/2 around the measured part;
    # the propensity given the measured x, e(x), marginalises U, so each unit's odds ratio
    # odds(e(x, u))/odds(e(x)) is known and its largest value is the true Λ.
    rng = np.random.default_rng(8)
    n, gamma, effect = 6000, 1.4, 0.5
    x = rng.normal(size=n)
    u = rng.integers(0, 2, n)

    def expit(v):
        return 1 / (1 + np.exp(-v))

    e_xu = expit(0.4 * x + gamma * (u - 0.5))
    e_x = 0.5 * expit(0.4 * x + gamma / 2) + 0.5 * expit(0.4 * x - gamma / 2)
    odds = lambda p: p / (1 - p)  # noqa: E731
    ratio = np.r_[odds(expit(0.4 * x + gamma / 2)) / odds(e_x),
                  odds(e_x) / odds(expit(0.4 * x - gamma / 2))]  # fmt: skip
    lam_true = float(ratio.max())
    a = (rng.uniform(size=n) < e_xu).astype(float)
    y = x + effect * a + 1.0 * u + rng.normal(size=n)
    res = weighting_bounds(y, a, propensity=e_x, lam=[1.0, lam_true], resamples=100, seed=3)
    # without the hidden confounder the interval misses the true effect ...
    assert not res.estimate_ci[0] <= effect <= res.estimate_ci[1]
    # ... at the true Λ both methods' intervals (and here their point bounds) cover it
    for method in ("sharp", "percentile"):
        t = res.table[method]
        assert t["ci_lower"][1] <= effect <= t["ci_upper"][1]
        assert t["lower"][1] <= effect <= t["upper"][1]


# ----------------------------------------------------------------- the Λ at the null


def test_least_lambda_agrees_with_a_fine_grid():
    y, a, x = _data(500, seed=9)
    res = weighting_bounds(y, a, covariates=x, lam=[1, 1.5, 2, 3], resamples=80, seed=5)
    for method in ("sharp", "percentile"):
        star = res.lambda_at_null[method]
        assert star is not None and 1 < star < 3
        near = weighting_bounds(y, a, covariates=x, lam=[star - 1e-4, star + 1e-4],
                                resamples=80, seed=5)  # fmt: skip
        t = near.table[method]
        assert t["ci_lower"][0] > 0 >= t["ci_lower"][1]


def test_least_lambda_none_beyond_the_range_and_one_when_not_significant():
    y, a, x = _data(500, seed=9)
    res = weighting_bounds(y, a, covariates=x, lam=[1, 1.05], resamples=50, seed=5)
    assert res.lambda_at_null == {"sharp": None, "percentile": None}
    res = weighting_bounds(y, a, covariates=x, lam=[1, 2], resamples=50, seed=5, target=0.5)
    assert res.lambda_at_null == {"sharp": 1.0, "percentile": 1.0}


def test_the_same_seed_repeats_the_run():
    y, a, x = _data(300, seed=1)
    one = weighting_bounds(y, a, covariates=x, lam=[1, 2], resamples=50, seed=42)
    two = weighting_bounds(y, a, covariates=x, lam=[1, 2], resamples=50, seed=42)
    assert one.to_dict() == two.to_dict()


def test_trimming_and_clipping_are_stated():
    rng = np.random.default_rng(6)
    z = rng.normal(size=400)
    a = (rng.uniform(size=400) < 1 / (1 + np.exp(-2.5 * z))).astype(float)  # extreme
    y = z + a + rng.normal(size=400)
    x = np.c_[np.ones(400), z]
    trimmed = weighting_bounds(y, a, covariates=x, lam=[1, 2], resamples=50, seed=1,
                               extreme="trim", cut=0.05)  # fmt: skip
    assert any("left out" in n for n in trimmed.notes)
    assert trimmed.n_treated + trimmed.n_control < 400
    clipped = weighting_bounds(y, a, covariates=x, lam=[1, 2], resamples=50, seed=1,
                               extreme="clip", cut=0.05)  # fmt: skip
    assert any("clipped" in n for n in clipped.notes)
    assert "clipped to [0.05, 0.95]" in clipped.summary()
    assert clipped.overlap["poor"]


def test_the_data_route_reads_a_formula_and_a_column(tmp_path):
    import pandas as pd
    import statsmodels.formula.api as smf

    y, a, x = _data(300, seed=2)
    frame = pd.DataFrame({"t": a, "y": y, "x1": x[:, 1], "x2": x[:, 2]})
    frame.loc[3, "x1"] = np.nan
    res = weighted_sensitivity(frame, "t", "y", propensity="t ~ x1 + x2", lam=[1, 2],
                               resamples=50, seed=1)  # fmt: skip
    keep = frame.dropna()
    e = smf.logit("t ~ x1 + x2", keep).fit(disp=0).predict(keep).to_numpy()
    assert res.estimate == pytest.approx(_hajek(keep.y.to_numpy(), keep.t.to_numpy(), e))
    assert any("1 of 300 rows" in n for n in res.notes)
    frame["e"] = 0.5
    path = tmp_path / "d.csv"
    frame.to_csv(path, index=False)
    res = weighted_sensitivity(str(path), "t", "y", propensity_column="e", lam=2,
                               resamples=50, seed=1)  # fmt: skip
    assert res.estimate == pytest.approx(y[a == 1].mean() - y[a == 0].mean())


def test_views_and_dict():
    y, a, x = _data(300, seed=2, binary=True)
    res = weighting_bounds(y, a, covariates=x, lam=[1, 1.5], resamples=50, seed=1)
    d = res.to_dict()
    assert {"estimand", "estimate", "rows", "lambda_at_null"} <= set(d)
    assert {"lambda", "method", "lower", "upper", "ci", "rr_ci"} <= set(d["rows"][0])
    assert [r["method"] for r in d["rows"]] == ["sharp", "percentile"] * 2
    assert set(d["lambda_at_null"]) == {"sharp", "percentile"}
    assert "95%" in res.sentence()
    assert res.risk_ratio == pytest.approx(d["rows"][0]["rr_lower"])
    cols = res.columns()
    assert len({v.size for v in cols.values()}) == 1
    for fmt in ("text", "markdown", "latex", "html"):
        assert res.document().render(fmt)


# ----------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (
            lambda k: k.update(treatment=np.r_[k["treatment"][:-1], 2.0]),
            "`treatment` must be binary",
        ),
        (
            lambda k: k.update(
                propensity=np.r_[0.0, np.full(k["outcome"].size - 1, 0.5)], covariates=None
            ),
            "`propensity` must lie strictly between 0 and 1; got 0",
        ),
        (
            lambda k: k.update(
                propensity=np.r_[1.0, np.full(k["outcome"].size - 1, 0.5)], covariates=None
            ),
            "`propensity` must lie strictly between 0 and 1; got 1",
        ),
        (lambda k: k.update(lam=[0.5, 2]), "`lambda` must be at least 1; got 0.5"),
        (
            lambda k: k.update(outcome=np.array(["a"] * k["outcome"].size)),
            "`outcome` must be numeric",
        ),
        (
            lambda k: k.update(treatment=np.r_[np.ones(5), np.zeros(k["outcome"].size - 5)]),
            "`treatment`: the treated arm has 5 units; need at least 10",
        ),
        (lambda k: k.update(resamples=10), "`resamples` must be at least 50"),
        (lambda k: k.update(estimand="atc"), "`estimand` must be one of ate, att"),
        (lambda k: k.update(alpha=0.7), "`alpha` must be below 0.5"),
        (  # each tail of the percentile interval needs a resample beyond it: 0.005 x 50 < 1
            lambda k: k.update(alpha=0.01),
            "`alpha` 0.01 needs at least 200 `resamples` .each tail of the percentile interval "
            "needs alpha/2 x resamples >= 1 resample beyond it",
        ),
        (lambda k: k.update(extreme="cut"), "`extreme` must be one of none, clip, trim"),
        (lambda k: k.update(outcome=np.ones(k["outcome"].size)), "`outcome` takes one value"),
    ],
)
def test_bad_input_names_the_argument(change, message):
    y, a, x = _data(100, seed=1)
    kwargs = {"outcome": y, "treatment": a, "covariates": x, "lam": [1, 2], "resamples": 50}
    change(kwargs)
    outcome, treatment = kwargs.pop("outcome"), kwargs.pop("treatment")
    with pytest.raises(InputError, match=message.replace("(", r"\(").replace("[", r"\[")):
        weighting_bounds(outcome, treatment, **kwargs)


def test_separation_is_an_input_error():
    y, a, x = _data(100, seed=1)
    x = np.c_[x, a]  # the treatment itself among the covariates
    with pytest.raises(InputError, match="separates the arms"):
        weighting_bounds(y, a, covariates=x, lam=[1, 2], resamples=50)


# ----------------------------------------------------------------- figure and report


def test_the_figure_and_the_report_section(tmp_path):
    import json

    from sensitivity import evalue, report

    y, a, x = _data(300, seed=2, binary=True)
    res = weighting_bounds(y, a, covariates=x, lam=[1, 1.5, 2], resamples=50, seed=1)
    (figure,) = res.document().figures
    drawn = figure.draw([tmp_path / "w.png", tmp_path / "w.svg"])
    assert all(p.exists() and p.stat().st_size > 0 for p in drawn)
    files = report({"Outreach and follow-up": res, "Other": evalue("rr", 1.8)}, tmp_path / "r")
    text = files["md"].read_text()
    assert "marginal sensitivity model" in text and "Least Λ, sharp" in text
    assert "Dorn J, Guo K (2023)" in text
    d = json.loads(files["json"].read_text())
    entry = d["estimates"][0]
    assert entry["label"] == "Outreach and follow-up" and entry["family"] == "weighting"
    assert set(entry["lambda_at_null"]) == {"sharp", "percentile"}
    assert any(p.name.startswith("weighting") for p in (tmp_path / "r").iterdir())


def test_box_bounds_alone_skip_the_quantile_models():
    y, a, x = _data(300, seed=2)
    both = weighting_bounds(y, a, covariates=x, lam=[1, 2], resamples=50, seed=1)
    box = weighting_bounds(y, a, covariates=x, lam=[1, 2], resamples=50, seed=1,
                           methods=("percentile",))  # fmt: skip
    assert box.methods == ("percentile",) and set(box.lambda_at_null) == {"percentile"}
    for key in ("lower", "upper", "ci_lower", "ci_upper"):
        np.testing.assert_array_equal(box.table["percentile"][key], both.table["percentile"][key])
    assert [r["method"] for r in box.to_dict()["rows"]] == ["percentile"] * 2
    assert "wider than the sharp bounds" in box.sentence() or "excludes" in box.sentence()
    with pytest.raises(InputError, match="`methods` must be among sharp, percentile"):
        weighting_bounds(y, a, covariates=x, resamples=50, methods=("box-only",))


def test_the_least_resamples_for_a_level_are_accepted():
    """At alpha/2 x resamples = 1 exactly (0.04 / 2 x 50) the interval is computed."""
    y, a, x = _data(100, seed=1)
    res = weighting_bounds(y, a, covariates=x, lam=[1, 2], resamples=50, seed=1, alpha=0.04)
    assert res.alpha == 0.04
