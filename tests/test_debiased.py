"""Omitted-variable bounds for debiased ML (issue 23).

Outside references: a statsmodels OLS refit (estimate; HC0 standard error) and the
partial-R² family's own published check (Cinelli & Hazlett 2020: t = 4.18 on 783 dof gives a
robustness value of 13.9%) on the `fair` data shipped with statsmodels; exact enumeration of
a discrete population (METHODS-MORE section 7.4); the exact in-sample OLS omitted-variable
identity; a simulation with a known hidden confounder.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.debiased import core
from sensitivity.debiased.fit import debiased_fit
from sensitivity.partial_r2.core import partial_r2_summary

pytest.importorskip("sklearn")

FAIR_COVARIATES = ["age", "yrs_married", "children", "religious", "educ"]


@pytest.fixture(scope="module")
def fair():
    return sm.datasets.fair.load_pandas().data


@pytest.fixture(scope="module")
def fair_fit(fair):
    return debiased_fit(
        fair,
        "rate_marriage",
        "affairs",
        FAIR_COVARIATES,
        learner="linear",
        folds=1,
        benchmarks=["age", "children+religious"],
    )


@pytest.fixture(scope="module")
def fair_ols(fair):
    x = sm.add_constant(fair[["rate_marriage", *FAIR_COVARIATES]])
    return sm.OLS(fair["affairs"], x).fit(), sm.OLS(fair["affairs"], x).fit(cov_type="HC0")


# --------------------------------------------------------------------------- special case
def test_linear_no_crossfit_estimate_is_the_ols_coefficient(fair_fit, fair_ols):
    # statsmodels refit: by Frisch-Waugh-Lovell the residual-on-residual slope is the
    # coefficient of the full regression.
    assert fair_fit.estimate == pytest.approx(fair_ols[0].params["rate_marriage"], rel=1e-10)


def test_linear_no_crossfit_se_is_the_hc0_se(fair_fit, fair_ols):
    # The influence-function variance with denominator n is White's HC0 sandwich.
    assert fair_fit.se == pytest.approx(fair_ols[1].bse["rate_marriage"], rel=1e-8)


def test_s_is_the_classical_se_times_root_dof(fair_fit, fair_ols):
    # S^2 = mean(e^2) / mean(rd^2): the n's cancel, so S = se_classical sqrt(dof) exactly.
    ols = fair_ols[0]
    assert fair_fit.moments.s == pytest.approx(
        ols.bse["rate_marriage"] * np.sqrt(ols.df_resid), rel=1e-10
    )


STRENGTHS = [(0.01, 0.02), (0.05, 0.05), (0.2, 0.1), (0.4, 0.6), (0.0, 0.3)]


@pytest.mark.parametrize(("cy2", "cd2"), STRENGTHS)
def test_bounds_reproduce_the_partial_r2_family(fair_fit, fair_ols, cy2, cd2):
    ols = fair_ols[0]
    pr = partial_r2_summary(
        ols.params["rate_marriage"],
        ols.bse["rate_marriage"],
        ols.df_resid,
        r2_treatment=[cd2],
        r2_outcome=[cy2],
    )
    res = fair_fit.bounds([(cy2, cd2)])
    s = res.scenarios[0]
    ch = pr.scenarios[0]
    assert s.bias == pytest.approx(ch.bias, rel=1e-8, abs=1e-12)
    # the estimate is negative: the partial-R² family moves it toward zero, i.e. up
    assert res.estimate < 0
    assert s.bound_upper == pytest.approx(ch.estimate, rel=1e-8)
    assert s.bound_lower == pytest.approx(ch.estimate - 2 * (ch.estimate - res.estimate), rel=1e-8)


@pytest.mark.parametrize("target", [0.0, -0.2])
def test_robustness_value_reproduces_the_partial_r2_family(fair_fit, fair_ols, target):
    ols = fair_ols[0]
    est = ols.params["rate_marriage"]
    share = 1 - target / est
    pr = partial_r2_summary(est, ols.bse["rate_marriage"], ols.df_resid, reduce_by=share)
    res = fair_fit.bounds(target=target)
    assert res.robustness_value == pytest.approx(pr.robustness_value, rel=1e-8)


def test_benchmark_gains_are_the_covariates_partial_r2(fair, fair_fit):
    # The partial-R² family's covariate strengths (t^2 / (t^2 + dof) from the full fit and
    # from the treatment's regression) are the same in-sample shares.
    from sensitivity import partial_r2_from_data

    pr = partial_r2_from_data(
        fair,
        "affairs ~ rate_marriage + " + " + ".join(FAIR_COVARIATES),
        "rate_marriage",
    )
    strengths = {c.name: c for c in pr.covariates}
    age = fair_fit.benchmarks[0]
    assert age.name == "age"
    assert age.cy2 == pytest.approx(strengths["age"].r2_outcome, rel=1e-8)
    assert age.cd2 == pytest.approx(strengths["age"].r2_treatment, rel=1e-8)


def test_darfur_robustness_value_through_the_moments():
    # Cinelli & Hazlett (2020) [published, also in the partial-R² doctest]: t = 4.18 on 783
    # dof -> RV 13.9%. With S = se sqrt(dof) the debiased RV is the same number.
    m = core.Moments(4.18, 784, 783.0, 1.0, 1.0, 0.0, 0.0)
    assert round(core.robustness_value(m), 3) == 0.139


# --------------------------------------------------------------------------- exact identities
def _population(seed: int):
    """A discrete population as an equally weighted multiset of rows (METHODS-MORE 7.4):
    X in {0, 1, 2}, latent A in {0, 1}, D binary, Y = g(D, X, A) +/- e."""
    rng = np.random.default_rng(seed)
    counts = rng.integers(3, 30, size=(3, 2, 2))  # x, a, d
    g = rng.normal(0, 2, size=(2, 3, 2))  # d, x, a
    e = 0.7
    rows = []
    for x in range(3):
        for a in range(2):
            for d in range(2):
                for sign in (-1, 1):
                    rows += [(x, a, d, g[d, x, a] + sign * e)] * int(counts[x, a, d])
    arr = np.array(rows, float)
    return arr[:, 0].astype(int), arr[:, 1].astype(int), arr[:, 2], arr[:, 3], g, counts


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_enumerated_population_identity(seed):
    x, a, d, y, g, counts = _population(seed)
    # long quantities
    pi_long = (counts[:, :, 1] / counts.sum(axis=2))[x, a]
    g_long = g[d.astype(int), x, a]
    alpha = d / pi_long - (1 - d) / (1 - pi_long)
    theta = np.mean(g[1, x, a] - g[0, x, a])
    # short (oracle) nuisances: cell means over the multiset
    pi_s = np.array([d[x == v].mean() for v in range(3)])[x]
    mu = {k: np.array([y[(x == v) & (d == k)].mean() for v in range(3)])[x] for k in (0, 1)}
    g_s = np.where(d == 1, mu[1], mu[0])
    alpha_s = d / pi_s - (1 - d) / (1 - pi_s)
    scores = core.average_effect_scores(y, d, mu[0], mu[1], pi_s)
    m = core.moments(scores)
    # E(alpha - alpha_s)^2 = E alpha^2 - E alpha_s^2, and nu2 from the Riesz moment
    assert np.mean((alpha - alpha_s) ** 2) == pytest.approx(
        np.mean(alpha**2) - np.mean(alpha_s**2), rel=1e-12
    )
    assert m.nu2 == pytest.approx(np.mean(alpha_s**2), rel=1e-12)
    # the strengths of A, from their definitions
    cy2 = np.mean((g_long - g_s) ** 2) / np.mean((y - g_s) ** 2)
    cd2 = 1 - np.mean(alpha_s**2) / np.mean(alpha**2)
    cor = np.corrcoef(g_long - g_s, alpha - alpha_s)[0, 1]
    # theta_s - theta = -E[(g - g_s)(alpha - alpha_s)] = -cor S C_Y C_D
    assert m.estimate - theta == pytest.approx(-np.mean((g_long - g_s) * (alpha - alpha_s)))
    out = core.bounds(m, cy2, cd2, rho=abs(cor))
    assert abs(m.estimate - theta) == pytest.approx(float(out["bias"]), rel=1e-9)
    assert float(out["bound_lower"]) <= theta + 1e-12 <= float(out["bound_upper"]) + 2e-12
    # |rho| = 1 bounds it
    assert float(core.bounds(m, cy2, cd2)["bias"]) >= abs(m.estimate - theta)


def test_ols_identity_a_benchmark_of_the_hidden_variable_lands_on_the_long_estimate():
    # In-sample OLS with one omitted regressor: the bound at that regressor's own strengths
    # (|rho| = 1) ends exactly at the estimate with it (Cinelli & Hazlett 2020, exact identity).
    rng = np.random.default_rng(5)
    n = 400
    xs = rng.normal(size=(n, 2))
    u = rng.normal(size=n)
    d = xs @ [0.4, -0.3] + 0.7 * u + rng.normal(size=n)
    y = 0.5 * d + xs @ [1.0, 0.2] + 0.9 * u + rng.normal(size=n)
    frame = pd.DataFrame({"y": y, "d": d, "x1": xs[:, 0], "x2": xs[:, 1], "u": u})
    long = debiased_fit(frame, "d", "y", ["x1", "x2", "u"], learner="linear", folds=1,
                        benchmarks=["u"])  # fmt: skip
    short = debiased_fit(frame, "d", "y", ["x1", "x2"], learner="linear", folds=1)
    gain = long.benchmarks[0]
    assert gain.estimate_without == pytest.approx(short.estimate, rel=1e-10)
    assert abs(gain.rho) == pytest.approx(1.0, rel=1e-9)
    res = short.bounds([(gain.cy2, gain.cd2)])
    ends = (res.scenarios[0].bound_lower, res.scenarios[0].bound_upper)
    assert min(abs(e - long.estimate) for e in ends) < 1e-10


class _LinearProbability:
    """A least-squares classifier (not a scikit-learn estimator: it is deep-copied per fold):
    on saturated indicators its fitted values are the cells' proportions exactly."""

    classes_ = np.array([0, 1])

    def fit(self, x, y):
        from sklearn.linear_model import LinearRegression

        self.model = LinearRegression().fit(x, y)
        return self

    def predict_proba(self, x):
        p = self.model.predict(x)
        return np.column_stack([1 - p, p])


def test_average_effect_with_saturated_learners_is_the_standardised_difference():
    # With one categorical covariate, linear learners on its indicators are saturated: the
    # AIPW estimate is the difference of cell means weighted by the cells' sizes
    # (regression standardisation), computed here independently with pandas.
    rng = np.random.default_rng(4)
    n = 600
    cell = rng.choice(["a", "b", "c", "d"], n, p=[0.1, 0.3, 0.4, 0.2])
    shift = pd.Series(cell).map({"a": -1.0, "b": 0.0, "c": 0.5, "d": 1.5}).to_numpy()
    d = (rng.uniform(size=n) < 0.2 + 0.15 * (shift + 1)).astype(int)
    y = 1.0 * d + 2 * shift + 0.5 * d * shift + rng.normal(size=n)
    frame = pd.DataFrame({"y": y, "d": d, "cell": cell})
    means = frame.groupby(["cell", "d"])["y"].mean().unstack()
    weights = frame["cell"].value_counts(normalize=True)
    standardised = float(((means[1] - means[0]) * weights).sum())
    fit = debiased_fit(frame, "d", "y", ["cell"], target_effect="average", learner="linear",
                       treatment_learner=_LinearProbability(), folds=1, trim=1e-6)  # fmt: skip
    assert fit.estimate == pytest.approx(standardised, rel=1e-10)


# --------------------------------------------------------------------------- simulation
def test_simulation_bound_at_true_strengths_covers_and_a_copy_recovers_them():
    # Y = theta D + X c + a_y A + e, D = X b + a_d A + e_d, all N(0, 1) and independent:
    # cd2 = a_d^2 / (1 + a_d^2); cy2 = v / (1 + v) with v = a_y^2 / (1 + a_d^2).
    rng = np.random.default_rng(11)
    n, theta, a_d, a_y = 3000, 0.5, 0.8, 0.9
    xs = rng.normal(size=(n, 3))
    u = rng.normal(size=n)
    d = xs @ [0.5, -0.4, 0.2] + a_d * u + rng.normal(size=n)
    y = theta * d + xs @ [1.0, 0.5, -0.5] + a_y * u + rng.normal(size=n)
    frame = pd.DataFrame({"y": y, "d": d, "u_copy": u, **{f"x{i}": xs[:, i] for i in range(3)}})
    cd2 = a_d**2 / (1 + a_d**2)
    v = a_y**2 / (1 + a_d**2)
    cy2 = v / (1 + v)
    covs = ["x0", "x1", "x2"]
    short = debiased_fit(frame, "d", "y", covs, learner="lasso", folds=3, seed=1)
    s = short.bounds([(cy2, cd2)]).scenarios[0]
    assert s.ci_lower <= theta <= s.ci_upper
    assert not (short.bounds().ci[0] <= theta <= short.bounds().ci[1])  # confounded
    long = debiased_fit(
        frame, "d", "y", [*covs, "u_copy"], learner="lasso", folds=3, seed=1, benchmarks=["u_copy"]
    )
    gain = long.benchmarks[0]
    assert gain.cy2 == pytest.approx(cy2, abs=0.03)
    assert gain.cd2 == pytest.approx(cd2, abs=0.03)


# --------------------------------------------------------------------------- reproducible
def _small(seed=0, n=240):  # small: the suite's time budget
    rng = np.random.default_rng(seed)
    xs = rng.normal(size=(n, 3))
    d = (0.5 * xs[:, 0] + rng.normal(size=n) > 0).astype(int)  # good overlap
    y = d + xs @ [1.0, 0.5, 0.0] + rng.normal(size=n)
    return pd.DataFrame({"y": y, "d": d, "x0": xs[:, 0], "x1": xs[:, 1], "x2": xs[:, 2]})


@pytest.mark.parametrize("learner", ["forest", "boosting"])
def test_seeds_reproduce_bit_for_bit(learner):
    frame = _small()
    bench = ["x0"] if learner == "boosting" else []  # forests cost more: no refit
    kw = dict(target_effect="average", learner=learner, folds=2, benchmarks=bench)
    a = debiased_fit(frame, "d", "y", ["x0", "x1", "x2"], seed=7, **kw)
    b = debiased_fit(frame, "d", "y", ["x0", "x1", "x2"], seed=7, **kw)
    c = debiased_fit(frame, "d", "y", ["x0", "x1", "x2"], seed=8, **kw)
    assert a.moments == b.moments
    assert [x.to_dict() for x in a.benchmarks] == [x.to_dict() for x in b.benchmarks]
    for key in a.predictions:
        assert a.predictions[key].tobytes() == b.predictions[key].tobytes()
    assert a.moments != c.moments


def test_folds_are_stratified_for_a_binary_treatment():
    from sensitivity.debiased.fit import fold_ids

    d = np.r_[np.ones(10), np.zeros(40)]
    ids = fold_ids(50, 5, 0, d)
    assert all(np.sum((ids == k) & (d == 1)) == 2 for k in range(5))


def test_a_fit_answers_many_strengths_without_refitting():
    fit = debiased_fit(_small(), "d", "y", ["x0", "x1", "x2"], learner="linear", folds=2)
    one = fit.bounds([(0.1, 0.1)])
    two = fit.bounds([(0.1, 0.1), (0.2, 0.3)], alpha=0.1)
    assert one.scenarios[0].bias == two.scenarios[0].bias
    grid = fit.grid(np.linspace(0, 0.5, 50), np.linspace(0, 0.5, 50))
    assert grid["bound_lower"].shape == (50, 50)
    assert grid["bias"][10, 20] == pytest.approx(
        fit.bounds([(20 * 0.5 / 49, 10 * 0.5 / 49)]).scenarios[0].bias, rel=1e-12
    )


def test_own_scikit_learn_learners():
    from sklearn.linear_model import LinearRegression, LogisticRegression

    fit = debiased_fit(
        _small(),
        "d",
        "y",
        "x0,x1,x2",
        target_effect="average",
        outcome_learner=LinearRegression(),
        treatment_learner=LogisticRegression(),
        folds=2,
    )
    assert fit.learner == "LinearRegression / LogisticRegression"
    assert np.isfinite(fit.estimate)


def test_formula_input_equals_a_column_list():
    frame = _small()
    a = debiased_fit(frame, "d", "y", ["x0", "x1"], learner="linear", folds=2)
    b = debiased_fit(frame, "d", formula="y ~ d + x0 + x1", learner="linear", folds=2)
    assert a.moments == b.moments


def test_text_covariates_become_one_benchmark_group():
    frame = _small()
    frame["site"] = np.where(
        frame["x2"] > 0.5, "north", np.where(frame["x2"] < -0.5, "south", "mid")
    )
    fit = debiased_fit(frame, "d", "y", ["x0", "site"], learner="linear", folds=1,
                       benchmarks=["site"])  # fmt: skip
    assert fit.benchmarks[0].columns == ("site",)


def test_missing_rows_are_left_out_with_a_note():
    frame = _small()
    frame.loc[3, "x1"] = np.nan
    fit = debiased_fit(frame, "d", "y", ["x0", "x1"], learner="linear", folds=2)
    assert fit.moments.n == len(frame) - 1
    assert "1 of 240 rows had missing values" in fit.notes[0]


# --------------------------------------------------------------------------- properties
MOMENTS = st.builds(
    lambda est, n, s2, nu2, vt, c, vs: core.Moments(est, n, s2, nu2, vt, c * np.sqrt(vt * vs), vs),
    st.floats(-5, 5).filter(lambda v: abs(v) > 1e-3),
    st.integers(50, 10**6),
    st.floats(0.01, 10),
    st.floats(0.01, 10),
    st.floats(0.01, 10),
    st.floats(-0.99, 0.99),
    st.floats(0.0, 5),
)


@settings(max_examples=60, deadline=None)
@given(MOMENTS, st.floats(0, 0.98), st.floats(0, 0.98), st.floats(0.01, 1))
def test_bias_grows_with_each_strength(m, cy2, cd2, rho):
    b = core.bounds(m, [cy2, min(cy2 + 0.01, 0.99)], [cd2, cd2], rho)["bias"]
    assert b[1] >= b[0]
    b = core.bounds(m, [cy2, cy2], [cd2, min(cd2 + 0.01, 0.99)], rho)["bias"]
    assert b[1] >= b[0]


@settings(max_examples=60, deadline=None)
@given(MOMENTS, st.floats(0.05, 1))
def test_robustness_value_brings_the_bound_exactly_to_the_target(m, rho):
    rv = core.robustness_value(m, 0.0, rho)
    out = core.bounds(m, rv, rv, rho)
    near = out["bound_lower"] if m.estimate > 0 else out["bound_upper"]
    if rv < 0.999:
        assert float(near) == pytest.approx(0.0, abs=1e-9 * max(1, abs(m.estimate)))


@settings(max_examples=60, deadline=None)
@given(MOMENTS, st.floats(0.05, 1), st.floats(0.01, 0.2))
def test_robustness_value_alpha_is_the_first_crossing_on_a_fine_grid(m, rho, alpha):
    rva, reached = core.robustness_value_alpha(m, 0.0, rho, alpha)
    s = np.linspace(0, 0.999999, 20001)
    out = core.bounds(m, s, s, rho, alpha)
    side = 1 if m.estimate >= 0 else -1
    conf = out["ci_lower"] if side > 0 else out["ci_upper"]
    crossed = side * conf <= 0
    if not reached:
        assert not crossed.any()
        return
    if rva == 0:
        assert crossed[0]
        return
    assert rva <= core.robustness_value(m, 0.0, rho) + 1e-12  # the confidence bound is outside
    first = s[np.argmax(crossed)] if crossed.any() else 1.0
    assert abs(first - rva) <= s[1] - s[0] + 1e-12
    assert not crossed[s < rva - 1e-9].any()


@settings(max_examples=40, deadline=None)
@given(MOMENTS, st.lists(st.tuples(st.floats(0, 0.95), st.floats(0, 0.95)), min_size=1, max_size=5))
def test_vectorised_bounds_equal_a_scalar_loop(m, pairs):
    cy2 = np.array([p[0] for p in pairs])
    cd2 = np.array([p[1] for p in pairs])
    out = core.bounds(m, cy2, cd2)
    for i, (a, b) in enumerate(pairs):
        one = core.bounds(m, a, b)
        for key in out:
            assert out[key][i] == float(one[key])


def test_confidence_bounds_with_no_confounding_are_the_one_sided_limits():
    m = core.Moments(1.0, 100, 1.0, 1.0, 4.0, 0.0, 1.0)
    out = core.bounds(m, 0.0, 0.0, alpha=0.05)
    assert float(out["ci_lower"]) == pytest.approx(1 - 1.6448536269514722 * 0.2, rel=1e-12)


# --------------------------------------------------------------------------- errors
@pytest.mark.parametrize(
    ("change", "match"),
    [
        (dict(treatment="const"), r"`treatment` 'const' is constant"),
        (
            dict(folds=30),
            r"`folds` 30 leaves 8 rows per fold \(240 rows\); each fold needs at least 10",
        ),
        (dict(folds=0), r"`folds` must be a whole number of at least 1"),
        (
            dict(outcome_learner=object()),
            r"`outcome_learner` must be a scikit-learn style regressor",
        ),
        (
            dict(treatment="x0", covariates=["x1"], target_effect="average"),
            r"must be coded 0/1 for the average effect",
        ),
        (dict(benchmarks=["nope"]), r"`benchmark` 'nope' is not one of the covariates"),
        (dict(covariates=["x0", "zz"]), r"`covariates` 'zz' is not a column of the data"),
        (dict(covariates=[]), r"`covariates` must name at least one column"),
        (dict(learner="svm"), r"`learner` must be one of linear, lasso, forest, boosting"),
        (dict(target_effect="ratio"), r"`target_effect` must be one of partial-linear, average"),
        (dict(benchmarks=["x0+x1+x2"]), r"takes away every covariate"),
        (dict(trim=0.7), r"`trim` must be below 0.5"),
    ],
)
def test_bad_input_names_the_argument(change, match):
    frame = _small()
    frame["const"] = 1.0
    kw = dict(treatment="d", outcome="y", covariates=["x0", "x1", "x2"], learner="linear")
    kw |= change
    with pytest.raises(InputError, match=match):
        debiased_fit(frame, **kw)


def test_a_learner_without_predict_proba_is_refused_for_the_propensity():
    from sklearn.linear_model import LinearRegression

    with pytest.raises(InputError, match="`treatment_learner` must be a scikit-learn style "
                       "classifier with fit and predict_proba methods; LinearRegression lacks "
                       "predict_proba"):  # fmt: skip
        debiased_fit(_small(), "d", "y", ["x0"], target_effect="average",
                     treatment_learner=LinearRegression())  # fmt: skip


def test_too_few_treated_rows_per_fold():
    frame = _small()
    frame["d"] = 0
    frame.loc[:4, "d"] = 1
    with pytest.raises(InputError, match=r"has 5 treated rows; with `folds` 5 each fold needs"):
        debiased_fit(frame, "d", "y", ["x0"], target_effect="average", learner="linear")


@pytest.mark.parametrize(
    ("kw", "match"),
    [
        (dict(strengths=[(1.0, 0.1)]), r"`cy2` must lie in \[0, 1\); got 1"),
        (dict(strengths=[(0.1, -0.1)]), r"`cd2` must lie in \[0, 1\); got -0.1"),
        (dict(rho=0), r"`rho` must lie in \(0, 1\]; got 0"),
        (dict(alpha=1.5), r"`alpha` must lie strictly between 0 and 1; got 1.5"),
        (dict(multiples=[50]), r"`k_treatment` 50 is impossible for a benchmark"),
        (dict(strengths=[(0.1,)]), r"`strengths` must be \(cy2, cd2\) pairs"),
    ],
)
def test_bad_strengths_name_the_argument(kw, match):
    fit = debiased_fit(_small(), "d", "y", ["x0", "x1"], learner="linear", folds=1,
                       benchmarks=["x0"])  # fmt: skip
    with pytest.raises(InputError, match=match):
        fit.bounds(**kw)


def test_extreme_propensities_are_refused_naming_trim():
    # A single deep tree predicts 0 or 1: every propensity is clipped to the trim limits and
    # the Riesz moment 2 (1/pi + 1/(1 - pi)) - alpha^2 averages below zero.
    from sklearn.tree import DecisionTreeClassifier

    with pytest.raises(InputError, match=r"not positive \(nu2 = .*reached the trim .*`trim`"):
        debiased_fit(
            _small(0, 240),
            "d",
            "y",
            ["x0", "x1", "x2"],
            target_effect="average",
            learner="linear",
            treatment_learner=DecisionTreeClassifier(),
            folds=2,
        )


def test_without_scikit_learn_the_message_says_what_to_install(monkeypatch):
    import sys

    monkeypatch.setitem(sys.modules, "sklearn", None)
    with pytest.raises(InputError, match=r"pip install 'sensitivity\[ml\]'"):
        debiased_fit(_small(), "d", "y", ["x0"])


# --------------------------------------------------------------------------- views
@pytest.fixture(scope="module")
def shown():
    fit = debiased_fit(_small(), "d", "y", ["x0", "x1", "x2"], learner="linear", folds=2,
                       benchmarks=["x0"])  # fmt: skip
    return fit.bounds([(0.05, 0.05)], multiples=[1, (2, 1)])


def test_every_view_renders_the_one_document(shown):
    doc = shown.document()
    text = shown.summary()
    for piece in ("robustness value", "x0 ×1", "x0 ×2/×1", "Cautions:", "Assumptions:"):
        assert piece in text
    assert " ".join(doc.sentences[0].split()[:12]) in " ".join(text.split())
    assert "Long story short" in " ".join(doc.references)
    for fmt in ("markdown", "latex", "html"):
        assert "robustness value" in doc.render(fmt)
    assert shown.to_dict()["scenarios"][2]["k_outcome"] == 2.0


def test_the_sentence_names_every_level_and_is_true_on_the_grid(shown):
    said = shown.sentence()
    assert "95% CI" in said and "one-sided 95% confidence bound" in said
    # "explaining less than RV of both ... could not bring the bound to zero": check it
    rv = shown.robustness_value
    s = np.linspace(0, rv, 200)[:-1]
    grid = core.bounds(shown.moments, s[:, None], s[None, :])
    assert (grid["bound_lower"] > 0).all()


def test_the_figure_is_drawn_on_demand(shown, tmp_path):
    paths = shown.document().figures[0].draw([tmp_path / "c.png", tmp_path / "c.svg"])
    assert all(p.stat().st_size > 1000 for p in paths)


def test_the_report_takes_a_debiased_result(shown, tmp_path):
    import json

    from sensitivity import report

    files = report({"Tutoring": shown}, tmp_path / "rep")
    entry = json.loads(files["json"].read_text())["estimates"][0]
    assert entry["family"] == "debiased" and entry["label"] == "Tutoring"
    assert "Chernozhukov" in files["md"].read_text()


def test_progress_goes_to_stderr_a_fit_at_a_time(capsys):
    debiased_fit(_small(), "d", "y", ["x0", "x1"], learner="linear", folds=2, progress=True)
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err.splitlines()[-1].startswith("fitting learners: 4 of 4 fits")


@pytest.mark.parametrize("alpha", [0.05, 1e-16, 1e-300])
def test_critical_values_are_finite_to_the_least_alpha(fair_fit, alpha):
    """Issue 19: alpha 1e-16 gave a CI of -inf to inf (z from 1 - alpha, which rounds to 1).
    Reference: scipy.stats.norm.isf, the upper-tail quantile computed from the upper tail."""
    from scipy.stats import norm

    from sensitivity.debiased.core import Moments, bounds

    res = fair_fit.bounds([(0.02, 0.05)], alpha=alpha)
    lo, hi = res.ci
    assert (hi - lo) / 2 / res.se == pytest.approx(norm.isf(alpha / 2), rel=1e-12)
    m = Moments(estimate=1.0, n=100, sigma2=4.0, nu2=0.25, v_theta=1.0, v_cross=0.0, v_s=0.0)
    out = bounds(m, 0.5, 0.5, alpha=alpha)  # each side's se is sqrt(1 / 100) = 0.1
    assert (out["ci_upper"] - out["bound_upper"]) / 0.1 == pytest.approx(norm.isf(alpha), rel=1e-12)
