"""Fitted models routed to the right method (issue 11): values equal the library's own
(exp(params), conf_int) on data generated here and on data shipped with statsmodels."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf

from sensitivity import from_model
from sensitivity.common.errors import InputError, SensitivityWarning


@pytest.fixture(scope="module")
def cohort():
    rng = np.random.default_rng(11)
    n = 4000
    x = rng.normal(size=n)
    t = rng.binomial(1, 1 / (1 + np.exp(-0.5 * x)))
    return pd.DataFrame(
        {
            "x": x,
            "t": t,
            "y": rng.binomial(1, 1 / (1 + np.exp(-(-1 + 0.6 * t + 0.4 * x)))),
            "rare": rng.binomial(1, 0.02 * np.exp(0.5 * t)),
            "count": rng.poisson(np.exp(0.1 + 0.3 * t + 0.2 * x)),
            "time": rng.exponential(1 / np.exp(0.3 * t + 0.2 * x)),
            "event": rng.binomial(1, 0.7, n),
            "dose": rng.uniform(0, 10, n),
            # over-dispersed counts (negative binomial, size 2) for the negbin fit
            "visits": rng.negative_binomial(2, 2 / (2 + np.exp(0.5 + 0.3 * t + 0.2 * x))),
        }
    )


FITS = {
    "logit": (lambda d: smf.logit("y ~ t + x", d).fit(disp=0), "or"),
    "glm-logit": (lambda d: smf.glm("y ~ t + x", d, family=sm.families.Binomial()).fit(), "or"),
    "glm-log": (
        lambda d: smf.glm(
            "rare ~ t + x", d, family=sm.families.Binomial(link=sm.families.links.Log())
        ).fit(),
        "rr",
    ),
    "poisson": (lambda d: smf.poisson("count ~ t + x", d).fit(disp=0), "rr"),
    "glm-poisson-robust": (
        lambda d: smf.glm("count ~ t + x", d, family=sm.families.Poisson()).fit(cov_type="HC0"),
        "rr",
    ),
    "negbin": (lambda d: smf.negativebinomial("visits ~ t + x", d).fit(disp=0), "rr"),
    "cox": (lambda d: smf.phreg("time ~ t + x", d, status=d["event"].to_numpy()).fit(), "hr"),
}


@pytest.mark.parametrize("name", list(FITS))
def test_the_estimate_and_interval_are_the_fits_own(cohort, name):
    import warnings

    make, scale = FITS[name]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # statsmodels' note that a log link may leave (0, 1)
        fit = make(cohort)
    res = from_model(fit, "t")
    names = list(fit.model.exog_names)
    j = names.index("t")
    assert res.scale == scale
    # Source: statsmodels' own params and conf_int of the same fit.
    assert float(res.estimate) == pytest.approx(float(np.exp(np.asarray(fit.params)[j])), rel=1e-12)
    lo, up = np.exp(np.asarray(fit.conf_int())[j])
    assert (float(res.ci[0]), float(res.ci[1])) == pytest.approx((lo, up), rel=1e-12)
    assert res.model["kind"] in name or name.startswith("glm")


def test_the_outcome_share_decides_rare_or_common(cohort):
    common = from_model(smf.logit("y ~ t + x", cohort).fit(disp=0), "t")
    rare = from_model(smf.logit("rare ~ t + x", cohort).fit(disp=0), "t")
    assert common.outcome == "common" and common.model["outcome_share"] > 0.15
    assert rare.outcome == "rare" and rare.model["outcome_share"] < 0.15
    assert any("occurs in" in n for n in common.notes)


def test_a_continuous_treatment_is_reported_per_contrast(cohort):
    fit = smf.poisson("count ~ dose + x", cohort).fit(disp=0)
    res = from_model(fit, "dose", contrast=5)
    assert float(res.estimate) == pytest.approx(float(np.exp(5 * fit.params["dose"])), rel=1e-12)
    assert res.overlap is None  # not a binary treatment


def test_robust_covariance_is_said(cohort):
    res = from_model(FITS["glm-poisson-robust"][0](cohort), "t")
    assert any("HC0" in n for n in res.notes)


def test_ols_goes_to_the_partial_r2_route(cohort):
    fit = smf.ols("count ~ t + x", cohort).fit()
    res = from_model(fit, "t")
    assert type(res).__name__ == "PartialR2Result"


def test_a_fit_without_finite_standard_errors_reports_the_estimate_and_says_why(cohort):
    # Poisson counts fit as negative binomial: the dispersion sits at its boundary (0) and
    # statsmodels 0.15 cannot invert the Hessian, so its conf_int is NaN. The estimate's
    # E-value stands; the interval is left out with a warning, never shown as a null.
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = smf.negativebinomial("count ~ t + x", cohort).fit(disp=0)
    if np.isfinite(np.asarray(fit.bse)).all():
        pytest.skip("this statsmodels inverts the Hessian here")
    with pytest.warns(SensitivityWarning, match="no finite standard error for 't'"):
        res = from_model(fit, "t")
    assert float(res.estimate) == pytest.approx(float(np.exp(fit.params["t"])), rel=1e-12)
    assert res.ci is None
    assert any("only the estimate's E-value" in n for n in res.notes)


def test_a_shipped_dataset_spector():
    # statsmodels' spector data: grade improvement by the PSI teaching method (binary).
    data = sm.datasets.spector.load_pandas().data
    fit = smf.logit("GRADE ~ PSI + TUCE + GPA", data).fit(disp=0)
    res = from_model(fit, "PSI")
    assert float(res.estimate) == pytest.approx(float(np.exp(fit.params["PSI"])), rel=1e-12)
    assert res.outcome == "common"  # 11 of 32 improved
    assert res.overlap is not None and set(res.overlap) >= {"treated", "control", "share_outside"}


def test_poor_overlap_warns(cohort):
    rng = np.random.default_rng(3)
    n = 2000
    x = rng.normal(size=n)
    t = (x + rng.normal(scale=0.05, size=n) > 0).astype(int)
    y = rng.binomial(1, 0.3, n)
    fit = smf.logit("y ~ t + x", pd.DataFrame({"x": x, "t": t, "y": y})).fit(disp=0)
    with pytest.warns(SensitivityWarning, match="poor overlap"):
        res = from_model(fit, "t")
    assert res.overlap["poor"]


@pytest.mark.parametrize(
    "call, message",
    [
        (lambda d: from_model(smf.logit("y ~ t + x", d).fit(disp=0), "nope"),
         r"`treatment` 'nope' is not a coefficient of the model"),
        (lambda d: from_model(smf.glm("count ~ t", d, family=sm.families.Gamma()).fit(), "t"),
         r"a GLM with family Gamma"),
        (lambda d: from_model(pd.DataFrame({"a": [1]}), "a"),
         r"`results` must be a fitted OLS, logistic"),
    ],
)  # fmt: skip
def test_bad_models_are_input_errors(cohort, call, message):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with pytest.raises(InputError, match=message):
            call(cohort)


# --------------------------------------------------------------------------- the command
@pytest.fixture(scope="module")
def cohort_csv(cohort, tmp_path_factory):
    path = tmp_path_factory.mktemp("data") / "cohort.csv"
    cohort.to_csv(path, index=False)
    return path


@pytest.mark.parametrize(
    "model, formula, extra, scale",
    [
        ("logit", "y ~ t + x", [], "or"),
        ("poisson", "count ~ t + x", [], "rr"),
        ("negbin", "visits ~ t + x", [], "rr"),
        ("cox", "time ~ t + x", ["--event", "event"], "hr"),
        ("ols", "count ~ t + x", [], "md"),
    ],
)
def test_evalue_from_data(run, cohort, cohort_csv, model, formula, extra, scale):
    res = run("evalue", "--data", cohort_csv, "--formula", formula, "--treatment", "t",
              "--model", model, *extra, "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    data = json.loads(res.stdout)
    assert data["scale"] == scale and data["model"]["kind"] == model
    assert data["model"]["n"] == len(cohort)
    if model != "ols":
        assert "overlap" in data


@pytest.mark.parametrize(
    "args, message",
    [
        (["--formula", "y ~ t + x", "--treatment", "t", "--model", "cox"],
         "`--event` is needed with model cox"),
        (["--formula", "y ~ t + x", "--treatment", "t", "--model", "logit", "--event", "event"],
         "`--event` applies to model cox only"),
        (["--formula", "y ~ t + nope", "--treatment", "t", "--model", "logit"],
         "`--formula` uses column 'nope'"),
        (["--formula", "y ~ t + x", "--treatment", "z", "--model", "logit"],
         "`--treatment` 'z' is not a column of the data"),
        (["--formula", "count ~ t + x", "--treatment", "t", "--model", "logit"],
         "`--formula`: a logit outcome must be 0/1 (or a share between 0 and 1); 'count' has "),
        (["--formula", "y ~ t + x", "--treatment", "t"], "data input needs --model as well"),
        (["--formula", "y ~ t + x", "--treatment", "t", "--model", "probit"],
         "Invalid value for '--model'"),
    ],
)  # fmt: skip
def test_evalue_data_errors(run, cohort_csv, args, message):
    res = run("evalue", "--data", cohort_csv, *args)
    assert res.exit_code == 2
    assert res.stderr.startswith(f"Error: {message}"), res.stderr


def test_perfect_separation_is_an_input_error(run, tmp_path):
    d = pd.DataFrame(
        {"t": [0, 0, 0, 1, 1, 1] * 5, "x": np.arange(30.0), "y": [0, 0, 0, 1, 1, 1] * 5}
    )
    path = tmp_path / "sep.csv"
    d.to_csv(path, index=False)
    res = run("evalue", "--data", path, "--formula", "y ~ t + x", "--treatment", "t",
              "--model", "logit")  # fmt: skip
    assert res.exit_code == 2
    assert "perfect separation" in res.stderr or "did not converge" in res.stderr


def test_a_lifelines_cox_fit_on_its_shipped_rossi_data_matches_statsmodels():
    # Rossi et al. (1980) recidivism data, shipped with lifelines; the reference is a
    # statsmodels PHReg refit with Efron's ties (lifelines' own convention).
    lifelines = pytest.importorskip("lifelines")
    from lifelines.datasets import load_rossi

    d = load_rossi()
    res = from_model(lifelines.CoxPHFitter().fit(d, "week", "arrest"), "fin")
    ref = smf.phreg(
        "week ~ fin + age + race + wexp + mar + paro + prio", d,
        status=d["arrest"].to_numpy(), ties="efron",
    ).fit()  # fmt: skip
    assert float(res.estimate) == pytest.approx(float(np.exp(ref.params[0])), rel=1e-6)
    lo, up = np.exp(np.asarray(ref.conf_int())[0])
    assert (float(res.ci[0]), float(res.ci[1])) == pytest.approx((lo, up), rel=1e-6)
    same = from_model(ref, "fin")
    assert float(res.evalue) == pytest.approx(float(same.evalue), rel=1e-6)
    assert float(res.evalue_ci) == pytest.approx(float(same.evalue_ci), rel=1e-6)
    assert res.model["kind"] == "cox" and res.outcome == "common"  # 26% arrested
    assert "lifelines, n = 432" in res.notes[0]


def test_a_lifelines_fit_names_a_missing_coefficient():
    lifelines = pytest.importorskip("lifelines")
    from lifelines.datasets import load_rossi

    fit = lifelines.CoxPHFitter().fit(load_rossi(), "week", "arrest")
    with pytest.raises(InputError, match="`treatment` 'smoking' is not a coefficient"):
        from_model(fit, "smoking")


def test_partial_r2_takes_model_ols_and_sends_the_others_to_evalue(run, cohort_csv):
    base = ["partial-r2", "--data", cohort_csv, "--formula", "count ~ t + x", "--treatment", "t"]
    plain, named = run(*base, "--format", "json"), run(*base, "--model", "ols", "--format", "json")
    assert plain.exit_code == named.exit_code == 0
    assert json.loads(plain.stdout)["estimate"] == json.loads(named.stdout)["estimate"]
    res = run(*base, "--model", "poisson")
    assert res.exit_code == 2 and "sensitivity evalue --data ... --model poisson" in res.stderr
