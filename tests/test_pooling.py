"""Confounding in a random-effects meta-analysis (`sensitivity.pooling`).

Outside sources: the formulas of Mathur & VanderWeele (2020), checked as METHODS-MORE.md 4.4
asks (a Monte Carlo of the random-effects model, the delta-method SE against a finite-
difference gradient, the share at the threshold bias equal to r, tau = 0 giving the E-value of
the pooled ratio over q); the pooling against the values statsmodels' own tests record from
R's metafor (statsmodels/stats/tests/results/results_meta.py, Kacker 2004 data); Var(tau^2)
of the DerSimonian-Laird estimate against metafor's se.tau2 recorded there, and both
estimators' Var(tau^2) by simulation.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.evalues.core import evalue_of_rr
from sensitivity.pooling import (
    core,
    fit_random_effects,
    pool_estimates,
    pool_table,
    read_studies,
)

# An invented set of studies (log risk ratios and standard errors) for the checks below.
Y = np.array([0.30, 0.10, 0.45, 0.22, 0.05, 0.38, 0.18, 0.60, -0.05, 0.27, 0.33, 0.12])
SE = np.array([0.10, 0.12, 0.15, 0.09, 0.11, 0.20, 0.08, 0.25, 0.14, 0.10, 0.13, 0.09])


# --------------------------------------------------------------------------- the formulas
@pytest.mark.parametrize("direction", ["above", "below"])
@pytest.mark.parametrize("bias_sd", [0.0, 0.12])
def test_share_matches_a_monte_carlo_of_the_random_effects_model(direction, bias_sd):
    """Confounded true effects N(mu, tau^2) = true effects + log bias factors, the bias
    independent of the true effects; the share of true effects beyond q by simulation."""
    rng = np.random.default_rng(20200101)
    mu, tau, bias = (0.25, 0.2, 1.15) if direction == "above" else (-0.25, 0.2, 1.15)
    q = np.log(1.1) if direction == "above" else np.log(0.9)
    n = 2_000_000
    sign = 1 if direction == "above" else -1
    log_b = rng.normal(np.log(bias), bias_sd, n) if bias_sd else np.full(n, np.log(bias))
    true = rng.normal(mu - sign * np.log(bias), np.sqrt(tau**2 - bias_sd**2), n)
    confounded = true + sign * log_b
    assert confounded.mean() == pytest.approx(mu, abs=1e-3)
    assert confounded.std() == pytest.approx(tau, abs=1e-3)
    share_mc = np.mean(true > q) if direction == "above" else np.mean(true < q)
    formula = float(core.share_beyond(mu, tau, q, bias, direction, bias_sd))
    assert share_mc == pytest.approx(formula, abs=4 * np.sqrt(formula * (1 - formula) / n))


def _gradient(f, x, h=1e-6):
    return np.array([(f(*(x + h * e)) - f(*(x - h * e))) / (2 * h) for e in np.eye(len(x))])


@pytest.mark.parametrize("direction", ["above", "below"])
@pytest.mark.parametrize("bias_sd", [0.0, 0.1])
def test_delta_method_ses_match_a_finite_difference_gradient(direction, bias_sd):
    mu = 0.28 if direction == "above" else -0.28
    tau, var_mu, var_tau = 0.22, 0.004, 0.003
    q = np.log(1.1) if direction == "above" else np.log(1 / 1.1)
    x = np.array([mu, tau])
    for bias in (1.0, 1.1, 1.3):
        g = _gradient(
            lambda m, t, b=bias: float(core.share_beyond(m, t, q, b, direction, bias_sd)), x
        )
        expected = np.sqrt(g[0] ** 2 * var_mu + g[1] ** 2 * var_tau)
        got = float(core.share_se(mu, tau, var_mu, var_tau, q, bias, direction, bias_sd))
        assert got == pytest.approx(expected, rel=1e-6)
    for r in (0.1, 0.3, 0.5):
        g = _gradient(
            lambda m, t, r=r: float(core.bias_to_reduce(m, t, q, r, direction, bias_sd)), x
        )
        t_hat = float(core.bias_to_reduce(mu, tau, q, r, direction, bias_sd))
        expected = np.sqrt(g[0] ** 2 * var_mu + g[1] ** 2 * var_tau)
        assert float(core.bias_to_reduce_se(t_hat, tau, var_mu, var_tau, r, bias_sd)) == (
            pytest.approx(expected, rel=1e-6)
        )
        # G(T) and its SE: the chain rule through G = T + sqrt(T^2 - T)
        h = 1e-7
        slope = (core.strength_of_bias(t_hat + h) - core.strength_of_bias(t_hat - h)) / (2 * h)
        assert float(core.strength_se(t_hat, expected)) == pytest.approx(
            float(slope) * expected, rel=1e-5
        )


@settings(max_examples=200, deadline=None)
@given(
    mu=st.floats(-1.5, 1.5),
    tau=st.floats(0.01, 1.0),
    q_ratio=st.floats(0.5, 2.0),
    r=st.floats(0.01, 0.99),
    frac=st.floats(0.0, 0.9),
)
def test_share_at_the_threshold_bias_is_r(mu, tau, q_ratio, r, frac):
    direction = core.direction_of(mu)
    q = np.log(q_ratio)
    sd = frac * tau
    t = float(core.bias_to_reduce(mu, tau, q, r, direction, sd))
    if t < 1 or not np.isfinite(t) or t > 1e12:
        return
    assert float(core.share_beyond(mu, tau, q, t, direction, sd)) == pytest.approx(r, abs=1e-9)


@settings(max_examples=100, deadline=None)
@given(mu=st.floats(-1, 1), tau=st.floats(0.0, 0.8), q_ratio=st.floats(0.6, 1.6),
       r=st.floats(0.02, 0.98))  # fmt: skip
def test_the_share_never_rises_with_the_bias_and_crosses_r_at_t(mu, tau, q_ratio, r):
    """On a fine grid the share is non-increasing in B, above r below T and at most r from T
    on: the 'a smaller bias factor could not' of the sentence."""
    direction = core.direction_of(mu)
    q = np.log(q_ratio)
    grid = np.linspace(1, 6, 2001)
    p = core.share_beyond(mu, tau, q, grid, direction)
    assert np.all(np.diff(p) <= 1e-15) and np.all((p >= 0) & (p <= 1))
    if tau == 0:
        return
    t = float(core.bias_to_reduce(mu, tau, q, r, direction))
    assert np.all(p[grid < t * (1 - 1e-9)] > r - 1e-12)
    assert np.all(p[grid > t * (1 + 1e-9)] <= r + 1e-12)


def test_no_heterogeneity_gives_the_evalue_of_the_pooled_ratio_over_q():
    """tau^2 = 0 (identical studies): T = RR/Q and G is the ordinary E-value of RR/Q."""
    y = np.full(5, np.log(1.6))
    r = pool_estimates(y, [0.1, 0.2, 0.15, 0.12, 0.3], threshold=1.1, share=0.2, method="dl")
    assert r.tau2 == 0
    assert r.bias_to_reduce == pytest.approx(1.6 / 1.1, rel=1e-12)
    assert r.strength_to_reduce == pytest.approx(float(evalue_of_rr(1.6 / 1.1)), rel=1e-12)
    assert r.share_observed == 1.0
    shares = dict(zip(r.bias.tolist(), r.share_beyond.tolist(), strict=True))
    assert shares[1.0] == 1.0 and all(np.isnan(r.share_beyond_se))
    assert any("heterogeneity is 0" in n for n in r.notes)
    # preventive: the E-value of Q / RR
    r = pool_estimates(np.full(4, np.log(0.6)), [0.1, 0.2, 0.15, 0.12], threshold=0.9,
                       method="pm")  # fmt: skip
    assert r.direction == "below"
    assert r.strength_to_reduce == pytest.approx(float(evalue_of_rr(0.9 / 0.6)), rel=1e-9)


def test_a_share_already_below_r_needs_no_bias():
    r = pool_estimates(Y, SE, threshold=1.6, share=0.1)
    assert r.bias_to_reduce_raw < 1 and r.bias_to_reduce == 1 and r.strength_to_reduce == 1
    assert np.isnan(r.bias_to_reduce_se)
    assert "already at most 10%" in r.sentence()


# --------------------------------------------------------------------------- pooling
def test_pooling_matches_the_metafor_values_in_statsmodels_tests():
    """statsmodels' test data (Kacker 2004) with the R metafor results its tests record."""
    results_meta = pytest.importorskip("statsmodels.stats.tests.results.results_meta")
    eff = np.array([61.00, 61.40, 62.21, 62.30, 62.34, 62.60, 62.70, 62.84, 65.90])
    var = np.array([0.2025, 1.2100, 0.0900, 0.2025, 0.3844, 0.5625, 0.0676, 0.0225, 1.8225])
    dl = fit_random_effects(eff, np.sqrt(var), "dl")
    ref = results_meta.exk1_dl
    assert dl.tau2 == pytest.approx(ref.tau2, abs=1e-10)
    assert dl.mu == pytest.approx(ref.b, abs=1e-10)
    assert dl.se_mu == pytest.approx(ref.se, abs=1e-10)
    assert dl.q == pytest.approx(ref.QE, abs=1e-9)
    assert dl.i2 == pytest.approx(ref.I2 / 100, abs=1e-10)
    # Var(tau^2) of the DerSimonian-Laird estimate: metafor's se.tau2
    assert np.sqrt(dl.var_tau2) == pytest.approx(ref.se_tau2, abs=1e-10)
    pm = fit_random_effects(eff, np.sqrt(var), "pm")
    ref = results_meta.exk1_metafor
    assert pm.tau2 == pytest.approx(ref.tau2, abs=1e-8)
    assert pm.mu == pytest.approx(ref.b, abs=1e-8)
    assert pm.se_mu == pytest.approx(ref.se, abs=1e-8)
    assert pm.converged


@pytest.mark.parametrize("method", ["dl", "pm"])
def test_pooling_equals_statsmodels_on_a_generated_set(method):
    from statsmodels.stats.meta_analysis import combine_effects

    res = combine_effects(Y, SE**2, method_re=method, atol=1e-7, maxiter=1000)
    fit = fit_random_effects(Y, SE, method)
    assert fit.tau2 == pytest.approx(max(res.tau2, 0), abs=1e-9)
    assert fit.mu == pytest.approx(res.mean_effect_re, abs=1e-9)
    assert fit.se_mu == pytest.approx(res.sd_eff_w_re, abs=1e-9)
    assert fit.weights.sum() == pytest.approx(1)


def test_a_negative_dl_moment_estimate_is_truncated_to_the_fixed_effect_fit():
    from statsmodels.stats.meta_analysis import combine_effects

    y = np.array([0.20, 0.21, 0.19, 0.20])
    s = np.array([0.1, 0.2, 0.15, 0.3])
    with np.errstate(all="ignore"):
        res = combine_effects(y, s**2, method_re="dl")
    assert res.tau2 < 0  # statsmodels leaves it untruncated
    fit = fit_random_effects(y, s, "dl")
    assert fit.tau2 == 0
    assert fit.mu == pytest.approx(res.mean_effect_fe) and fit.se_mu == pytest.approx(
        res.sd_eff_w_fe
    )


def test_var_tau2_of_dl_is_the_variance_of_the_moment_estimate_by_simulation():
    """Biggerstaff & Tweedie's Var(Q) is exact under normality: the untruncated moment
    estimate's variance over 40,000 simulated meta-analyses agrees within Monte Carlo error."""
    rng = np.random.default_rng(7)
    v = SE**2
    tau2 = 0.03
    reps = 40_000
    y = rng.normal(0.2, np.sqrt(v + tau2), size=(reps, v.size))
    w = 1 / v
    m = (y * w).sum(1) / w.sum()
    q = ((y - m[:, None]) ** 2 * w).sum(1)
    c = w.sum() - (w**2).sum() / w.sum()
    est = (q - (v.size - 1)) / c
    formula = core.tau2_variance(v, tau2, "dl")
    assert est.var() == pytest.approx(formula, rel=0.04)  # MC SE of a variance ~ 1.5-2%


def test_var_tau2_of_pm_is_close_to_the_simulated_spread_of_the_estimate():
    """The large-sample Var(tau^2) of the Paule-Mandel estimate (delta method on its estimating
    equation) against the spread of the estimate over simulated meta-analyses of 60 studies."""

    rng = np.random.default_rng(11)
    se = np.tile(SE, 5)
    v = se**2
    tau2 = 0.05
    est = []
    for _ in range(2000):
        y = rng.normal(0.2, np.sqrt(v + tau2))
        est.append(fit_random_effects(y, np.sqrt(v), "pm").tau2)
    est = np.asarray(est)
    assert (est == 0).mean() < 0.01
    assert np.sqrt(core.tau2_variance(v, tau2, "pm")) == pytest.approx(est.std(), rel=0.08)


def test_the_pm_estimate_is_the_root_of_its_estimating_equation():
    """Against a bracketing root-finder: no zero from rounding (statsmodels' iteration zeroes
    tau^2 whenever the equation comes out negative, which rounding alone can do)."""
    from scipy.optimize import brentq

    rng = np.random.default_rng(11)
    v = np.tile(SE, 5) ** 2
    for _ in range(60):
        y = rng.normal(0.2, np.sqrt(v + 0.05))

        def equation(t2, y=y):
            w = 1 / (v + t2)
            return w @ (y - w @ y / w.sum()) ** 2 - (y.size - 1)

        root = brentq(equation, 0, 10, xtol=1e-14) if equation(0) > 0 else 0.0
        assert fit_random_effects(y, np.sqrt(v), "pm").tau2 == pytest.approx(root, abs=1e-8)


# --------------------------------------------------------------------------- results
def test_the_result_holds_every_contract_key():
    r = pool_estimates(Y, SE, threshold=1.1, share=0.2, bias=[1.0, 1.2, 1.4])
    d = r.to_dict()
    assert set(d["pooled"]) >= {"estimate", "ci", "tau2", "method"}
    assert [row["bias"] for row in d["share_beyond"]] == [1.0, 1.2, 1.4]
    assert set(d["share_beyond"][0]) == {"bias", "share", "se"}
    assert set(d["bias_to_reduce"]) == {"value", "se"}
    assert set(d["strength_to_reduce"]) == {"value", "se"}
    assert d["evalue"]["estimate"] == pytest.approx(float(evalue_of_rr(r.pooled_estimate)))
    assert len(d["studies"]) == Y.size and d["pooled"]["method"] == "pm"
    assert list(r.columns()) == ["bias", "share", "se"]
    assert "could reduce that share to 20%" in r.sentence()
    assert "95% CI" in r.sentence()
    assert repr(r).startswith("<PoolResult k=12")


def test_varying_bias_is_said_as_a_geometric_mean():
    r = pool_estimates(Y, SE, threshold=1.1, share=0.1, bias_sd=0.05)
    assert r.bias_sd == 0.05
    text = " ".join(r.sentence().split())
    assert "varying between studies around a geometric mean of" in text
    common = pool_estimates(Y, SE, threshold=1.1, share=0.1)
    assert r.bias_to_reduce < common.bias_to_reduce  # less spread left: T moves toward mu/q


def test_the_share_at_the_reported_bias_is_r_through_the_public_api():
    r = pool_estimates(Y, SE, threshold=1.1, share=0.25, method="dl")
    at_t = pool_estimates(Y, SE, threshold=1.1, share=0.25, method="dl", bias=r.bias_to_reduce)
    assert float(at_t.share_beyond[0]) == pytest.approx(0.25, abs=1e-12)
    assert r.strength_to_reduce == pytest.approx(float(evalue_of_rr(r.bias_to_reduce)))


# --------------------------------------------------------------------------- tables
def test_a_table_keeps_every_row_and_flags_the_ones_it_cannot_pool():
    table = pd.DataFrame({
        "study": ["A", "B", "C", "D", "E", "F"],
        "result": ["RR 1.35 (1.10-1.66)", "HR 1.10 (0.85-1.42)", "RR 1.60 (1.21-2.12)", "NR",
                   "RR 1.2 (1.2-1.2)", "RR 1.4 (90% CI 1.1-1.78)"],
        "outcome": ["", "rare", "", "", "", ""],
    })  # fmt: skip
    s = read_studies(table, from_text="result")
    assert list(s["label"]) == ["A", "B", "C", "D", "E", "F"]
    assert list(s["used"]) == [True, True, True, False, False, True]
    assert s["error"][3] == "no result in the text (blank or not reported)"
    assert s["error"][4].startswith("`se` must be positive; got 0")
    # se from the interval at the row's own level
    assert s["se"][0] == pytest.approx((np.log(1.66) - np.log(1.10)) / (2 * 1.959963985), 1e-9)
    assert s["level"][5] == 0.90
    assert s["se"][5] == pytest.approx((np.log(1.78) - np.log(1.1)) / (2 * 1.644853627), 1e-9)
    r = pool_table(table, from_text="result", threshold=1.1)
    assert r.k == 4 and len(r.to_dict()["studies"]) == 6
    assert np.isnan(r.studies["weight"][3])


def test_a_table_of_log_estimates_pools_as_the_arrays_do():
    table = pd.DataFrame({"name": [f"S{i}" for i in range(Y.size)], "logrr": Y, "sterr": SE})
    r = pool_table(table, columns={"log_estimate": "logrr", "se": "sterr"}, threshold=1.1)
    direct = pool_estimates(Y, SE, threshold=1.1)
    assert r.pooled_estimate == direct.pooled_estimate and r.tau2 == direct.tau2
    assert list(r.studies["label"])[:2] == ["S0", "S1"]


def test_a_table_in_the_screens_columns():
    table = pd.DataFrame({"scale": ["rr", "or", "rr"], "estimate": [1.3, 1.5, 1.1],
                          "lower": [1.1, 1.2, 0.9], "upper": [1.54, 1.88, 1.34],
                          "outcome": ["", "common", ""]})  # fmt: skip
    s = read_studies(table)
    # a common-outcome odds ratio is pooled on the risk-ratio scale as the screen converts it
    assert s["rr"][1] == pytest.approx(np.sqrt(1.5))
    assert s["se"][1] == pytest.approx((np.log(1.88) - np.log(1.2)) / 4 / 1.959963985)
    assert "common-outcome OR" in s["notes"][1]


# --------------------------------------------------------------------------- bad input
@pytest.mark.parametrize(
    "kwargs, message",
    [
        ({"log_estimates": [0.2], "se": [0.1]}, "at least 2 studies to pool; got 1"),
        ({"se": [0.1, 0.0, 0.2]}, r"`se` must be positive; got 0"),
        ({"se": [0.1, -0.2, 0.2]}, r"`se` must be positive; got -0.2"),
        ({"se": [0.1, 0.2]}, "`se` must have one value per study; got 2 for 3"),
        ({"share": 1.0}, r"`share` must lie strictly between 0 and 1; got 1"),
        ({"share": 0.0}, r"`share` must lie strictly between 0 and 1; got 0"),
        ({"threshold": 0.0}, r"`threshold` must be positive; got 0"),
        ({"bias": [0.9, 1.2]}, r"`bias` must be at least 1; got 0.9"),
        ({"method": "reml"}, "`method` must be one of pm, dl; got 'reml'"),
        ({"bias_sd": 5.0}, "`bias_sd` must be less than the estimated spread"),
        ({"bias_sd": -1.0}, "`bias_sd` must be 0 or more"),
        ({"labels": ["a"]}, "`labels` must name each study; got 1 for 3"),
        ({"alpha": 2.0}, "`alpha` must lie strictly between 0 and 1"),
    ],
)
def test_bad_input_names_the_argument(kwargs, message):
    args = {"log_estimates": [0.2, 0.4, 0.1], "se": [0.1, 0.1, 0.2], "threshold": 1.1} | kwargs
    with pytest.raises(InputError, match=message):
        pool_estimates(**args)


def test_a_table_with_fewer_than_two_usable_studies_names_the_flagged_rows():
    table = pd.DataFrame({"result": ["RR 1.3 (1.1-1.5)", "RR 1.2 (1.2-1.2)", "NR"]})
    with pytest.raises(InputError, match=r"at least 2 usable studies; got 1 \(flagged: row 2: "
                       r"`se` must be positive"):  # fmt: skip
        pool_table(table, from_text="result", threshold=1.1)
    with pytest.raises(InputError, match="no standard error column 'se'"):
        pool_table(pd.DataFrame({"log_estimate": [0.1, 0.2]}), threshold=1.1)


# --------------------------------------------------------------------------- report, figures
def test_the_manuscript_report_takes_a_pooled_result(tmp_path):
    import json

    from sensitivity import evalue, report

    r = pool_estimates(Y, SE, threshold=1.1, labels=[f"Cohort {i}" for i in range(Y.size)])
    files = report({"Solvent, kidney": r, "One cohort": evalue("rr", 1.4, ci=(1.1, 1.8))},
                   tmp_path)  # fmt: skip
    data = json.loads(files["json"].read_text())
    entry = data["estimates"][0]
    assert entry["label"] == "Solvent, kidney" and entry["family"] == "pooling"
    assert entry["pooled"]["estimate"] == pytest.approx(r.pooled_estimate)
    assert "Mathur and VanderWeele (2020)" in data["methods_text"]
    assert any("Mathur MB, VanderWeele TJ (2020)" in ref for ref in data["references"])
    assert "Solvent, kidney: A random-effects meta-analysis of 12 studies" in data["results_text"]
    for name in ("pool-forest_1.png", "pool-share_1.svg"):
        assert (tmp_path / name).stat().st_size > 1000
    text = files["md"].read_text()
    assert "Least common bias factor bringing it to 10%" in text


def test_the_document_draws_both_figures_on_demand(tmp_path):
    r = pool_estimates(Y, SE, threshold=1.1, bias_sd=0.05)
    figs = {f.key: f for f in r.document().figures}
    assert set(figs) == {"pool-forest", "pool-share"}
    for key, fig in figs.items():
        fig.draw([tmp_path / f"{key}.png", tmp_path / f"{key}.pdf"])
        assert (tmp_path / f"{key}.pdf").read_bytes().startswith(b"%PDF")
    assert r.document().sentences == [r.sentence()]


def test_the_figures_name_the_interval_level_and_call_the_share_a_choice(monkeypatch, tmp_path):
    """The forest's right axis said "E-value (of the interval)", naming no level, and the
    share curve's legend said "R = 10%", a symbol the output defines nowhere."""
    from sensitivity.pooling import figures

    kept = []
    monkeypatch.setattr(figures, "save_figure", lambda fig, paths: kept.append(fig))
    r = pool_estimates(Y, SE, threshold=1.1)
    figures.forest(r, tmp_path / "f.png")
    figures.share_curve(r, tmp_path / "s.png")
    forest, share = kept
    right = forest.axes[0].child_axes[0]
    assert right.get_ylabel() == "E-value (of the 95% CI)"
    labels = [t.get_text() for t in share.axes[0].get_legend().get_texts()]
    assert "Share 10% (your choice, not a pass mark)" in labels
    assert not any(label.startswith("R =") for label in labels)
