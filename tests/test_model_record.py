"""What the data route records of its fit (the `model` block of `evalue --data`), and the
words it uses for a fit it cannot make.

References: statsmodels fits of the same formula on data shipped with statsmodels (a
general-purpose library): the Spector & Mazzeo (1980) grade data (32 students, binary GRADE,
binary PSI) for logit and Poisson, and the RAND Health Insurance Experiment extract for a
count outcome.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf

from sensitivity.adapters.models import evalue_from_data, evalue_from_model, fit
from sensitivity.common.errors import SensitivityWarning

FORMULA = "GRADE ~ PSI + GPA + TUCE"


@pytest.fixture(scope="module")
def spector():
    # Spector & Mazzeo (1980), shipped with statsmodels.
    return sm.datasets.spector.load_pandas().data


@pytest.fixture(scope="module")
def spector_file(spector, tmp_path_factory):
    path = tmp_path_factory.mktemp("spector") / "spector.csv"
    spector.to_csv(path, index=False)
    return path


def _reference(frame, model, cov_type="nonrobust"):
    options = {} if cov_type == "nonrobust" else {"cov_type": cov_type}
    return getattr(smf, model)(FORMULA, frame).fit(disp=0, **options)


# statsmodels' own covariance for each: logit classical, Poisson of a 0/1 outcome HC0 (our
# default there, Zou 2004), negative binomial classical.
CASES = [("logit", "nonrobust"), ("poisson", "HC0")]


@pytest.mark.parametrize(("model", "cov_type"), CASES)
def test_the_cli_json_model_block_has_the_coefficient_and_its_se(run, spector, spector_file,
                                                                 model, cov_type):  # fmt: skip
    res = run("evalue", "--data", spector_file, "--formula", FORMULA, "--treatment", "PSI",
              "--model", model, "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    got = json.loads(res.stdout)["model"]
    ref = _reference(spector, model, cov_type)
    assert got["coefficient"] == pytest.approx(ref.params["PSI"], rel=1e-8)
    assert got["se"] == pytest.approx(ref.bse["PSI"], rel=1e-8)


@pytest.mark.parametrize(("model", "cov_type"), CASES)
def test_the_python_result_records_the_coefficient_and_its_se(spector, model, cov_type):
    ref = _reference(spector, model, cov_type)
    for res in (evalue_from_data(spector, FORMULA, "PSI", model), evalue_from_model(ref, "PSI")):
        assert res.model["coefficient"] == pytest.approx(ref.params["PSI"], rel=1e-8)
        assert res.model["se"] == pytest.approx(ref.bse["PSI"], rel=1e-8)
        assert res.to_dict()["model"]["se"] == res.model["se"]


def test_the_coefficient_is_per_unit_whatever_the_contrast(spector):
    ref = _reference(spector, "logit")
    res = evalue_from_model(ref, "GPA", contrast=0.5)
    assert res.model["coefficient"] == pytest.approx(ref.params["GPA"], rel=1e-12)
    assert res.estimate == pytest.approx(np.exp(0.5 * ref.params["GPA"]), rel=1e-12)


def test_negative_binomial_and_ols_record_theirs_too(spector):
    randhie = sm.datasets.randhie.load_pandas().data.iloc[:3000]
    formula = "mdvis ~ idp + lncoins + physlm"
    ref = smf.negativebinomial(formula, randhie).fit(disp=0, maxiter=200)
    with pytest.warns(SensitivityWarning, match="poor overlap"):  # the extract's own
        res = evalue_from_data(randhie, formula, "idp", "negbin")
    assert res.model["coefficient"] == pytest.approx(ref.params["idp"], rel=1e-6)
    assert res.model["se"] == pytest.approx(ref.bse["idp"], rel=1e-6)
    ols = smf.ols(FORMULA, spector).fit()
    res = evalue_from_data(spector, FORMULA, "PSI", "ols")
    assert res.model["coefficient"] == pytest.approx(ols.params["PSI"], rel=1e-10)
    assert res.model["se"] == pytest.approx(ols.bse["PSI"], rel=1e-10)


def test_the_fit_helper_still_gives_statsmodels_results(spector):
    assert fit(spector, FORMULA, "logit").params["PSI"] == pytest.approx(
        _reference(spector, "logit").params["PSI"], rel=1e-12
    )


# --- cluster-robust errors name their column ---------------------------------------------


@pytest.fixture(scope="module")
def fair_file(tmp_path_factory):
    # Fair (1978) extramarital affairs data, shipped with statsmodels; 6 occupations.
    data = sm.datasets.fair.load_pandas().data
    data["any"] = (data["affairs"] > 0).astype(int)
    path = tmp_path_factory.mktemp("fair") / "fair.csv"
    data.to_csv(path, index=False)
    return path


@pytest.mark.parametrize("model", ["logit", "poisson", "ols"])
def test_clustered_errors_name_the_column_in_json_and_text(run, fair_file, model):
    args = ("evalue", "--data", fair_file, "--formula", "any ~ rate_marriage + age",
            "--treatment", "rate_marriage", "--model", model,
            "--errors", "cluster:occupation")  # fmt: skip
    res = run(*args, "--format", "json")
    assert res.exit_code == 0, res.stderr
    out = json.loads(res.stdout)
    assert out["model"]["errors"] == "cluster:occupation"
    said = " ".join(out["notes"])
    assert "cluster-robust standard errors by 'occupation' (6 clusters)" in said
    text = run(*args).stdout
    assert "by 'occupation'" in " ".join(text.split())


def test_a_users_own_clustered_fit_says_cluster_without_a_name():
    # statsmodels keeps the groups, not their column's name: nothing is made up
    data = sm.datasets.fair.load_pandas().data
    ref = smf.ols("affairs ~ rate_marriage + age", data).fit(
        cov_type="cluster", cov_kwds={"groups": data["occupation"].astype(int)}
    )
    from sensitivity.adapters.errors import used_by

    assert used_by(ref) == ("cluster", "cluster-robust standard errors (6 clusters)")


# --- an outcome that breaks its model's rule: our words, one line, exit 2 ----------------


@pytest.fixture(scope="module")
def visits(tmp_path_factory):
    # The RAND Health Insurance Experiment extract shipped with statsmodels: doctor visits
    # (a count), a binary deductible plan (idp); a few columns made here from it.
    data = sm.datasets.randhie.load_pandas().data.iloc[:2000].copy()
    data["shifted"] = data["mdvis"] - 3  # negative "counts"
    data["none"] = 0
    data["event2"] = np.minimum(data["mdvis"], 2)  # 0, 1 and 2
    data["time"] = 1.0 + data["lncoins"]
    data["back"] = -data["time"]
    path = tmp_path_factory.mktemp("randhie") / "randhie.csv"
    data.to_csv(path, index=False)
    return data, path


BAD_OUTCOMES = [
    # (model, formula, extra options, the one line's start)
    ("logit", "mdvis ~ idp + lncoins", (),
     "`--formula`: a logit outcome must be 0/1 (or a share between 0 and 1); 'mdvis' has "),
    ("logit", "mdvis ~ idp + np.square(lncoins)", (),  # fitted in memory, not in passes
     "`--formula`: a logit outcome must be 0/1 (or a share between 0 and 1); 'mdvis' has "),
    ("poisson", "shifted ~ idp + lncoins", (),
     "`--formula`: a Poisson outcome is a count (or a rate) and must not be negative; "
     "'shifted' has -3"),
    ("negbin", "shifted ~ idp + lncoins", (),
     "`--formula`: a negative binomial outcome is a count (or a rate) and must not be "
     "negative; 'shifted' has -3"),
    ("logit", "none ~ idp + lncoins", (),
     "`--formula`: the outcome 'none' is 0 in every row the fit uses; a logit fit needs rows "
     "with and without the outcome"),
    ("poisson", "none ~ idp + np.square(lncoins)", (),
     "`--formula`: the outcome 'none' is 0 in every row the fit uses; a Poisson fit needs "
     "some events"),
    ("cox", "back ~ idp + lncoins", ("--event", "idp"),
     "`--formula`: a Cox fit's time (the left side) must not be negative; 'back' has "),
    ("cox", "time ~ idp + lncoins", ("--event", "event2"),
     "`--event`: the column 'event2' must be 1 for an event and 0 for none; got 2"),
    ("cox", "time ~ idp + lncoins", ("--event", "none"),
     "`--event`: the column 'none' has no event (no 1) in the rows the fit uses"),
    ("logit", "idp ~ idp + log(lncoins)", (),
     "`--formula` 'idp ~ idp + log(lncoins)': the term 'log(lncoins)' could not be "
     "evaluated: name 'log' is not defined"),
    ("ols", "mdvis ~ idp + (", (),
     "`--formula` 'mdvis ~ idp + (' could not be read: expected a noun, but instead the "
     "expression ended (at '(')"),
]  # fmt: skip


@pytest.mark.parametrize(("model", "formula", "extra", "message"), BAD_OUTCOMES)
def test_a_bad_outcome_is_one_line_in_our_words(run, visits, model, formula, extra, message):
    res = run("evalue", "--data", visits[1], "--formula", formula, "--treatment", "idp",
              "--model", model, *extra)  # fmt: skip
    assert res.exit_code == 2, res.output
    assert res.stderr.startswith(f"Error: {message}"), res.stderr
    assert res.stderr.count("\n") == 1 and "endog" not in res.stderr
    assert "^" not in res.stderr  # no caret line of patsy's


@pytest.mark.parametrize(("model", "formula", "extra", "message"), BAD_OUTCOMES[:6])
def test_the_python_route_says_the_same(visits, model, formula, extra, message):
    from sensitivity.common.errors import InputError

    python = message.replace("`--formula`", "`formula`")
    with pytest.raises(InputError, match="^" + re.escape(python)):
        evalue_from_data(visits[0], formula, "idp", model)


def test_a_negative_binomial_fit_of_a_0_1_outcome_that_fails_says_why(run, tmp_path):
    # Fair (1978), shipped with statsmodels: the fit of a 0/1 outcome fails (dispersion at 0)
    data = sm.datasets.fair.load_pandas().data
    data["any"] = (data["affairs"] > 0).astype(int)
    path = tmp_path / "fair.csv"
    data.to_csv(path, index=False)
    res = run("evalue", "--data", path, "--formula", "any ~ rate_marriage + age + yrs_married",
              "--treatment", "rate_marriage", "--model", "negbin")  # fmt: skip
    assert res.exit_code == 2 and res.stderr.count("\n") == 1
    assert res.stderr.startswith("Error: `--model` negbin: the outcome 'any' is 0/1")


def test_a_propensity_formula_patsy_cannot_evaluate_is_our_one_line(run, visits):
    res = run("weighting", "--data", visits[1], "--treatment", "idp", "--outcome", "mdvis",
              "--propensity", "idp ~ log(lncoins)", "--lambda", "1.5", "--seed", "1")  # fmt: skip
    assert res.exit_code == 2 and res.stderr.count("\n") == 1
    assert res.stderr.startswith(
        "Error: `--propensity` 'idp ~ log(lncoins)': the term 'log(lncoins)' could not be "
        "evaluated: name 'log' is not defined"
    )


def test_a_text_event_column_is_one_line_not_an_internal_error(run, visits, tmp_path):
    data = visits[0].assign(said=np.where(visits[0]["idp"] == 1, "yes", "no"))
    path = tmp_path / "said.csv"
    data.to_csv(path, index=False)
    res = run("evalue", "--data", path, "--formula", "time ~ idp + lncoins", "--treatment",
              "idp", "--model", "cox", "--event", "said")  # fmt: skip
    assert res.exit_code == 2 and res.stderr.count("\n") == 1
    assert res.stderr.startswith(
        "Error: `--event`: the column 'said' must be 1 for an event and 0 for none; it holds text"
    )


def test_a_constant_outcome_on_the_partial_r2_route_says_so(run, visits):
    res = run("partial-r2", "--data", visits[1], "--formula", "none ~ idp + lncoins",
              "--treatment", "idp")  # fmt: skip
    assert res.exit_code == 2 and res.stderr.count("\n") == 1
    assert res.stderr.startswith("Error: `--data`: the fit leaves no residual variation in 'none'")
    assert "`--se`" not in res.stderr


@pytest.mark.parametrize("command", ["stability", "impact"])
def test_linearly_dependent_columns_are_refused_without_statsmodels_warning(run, visits,
                                                                             command):  # fmt: skip
    # statsmodels' pinv would split the coefficient between idp and its double, and warn
    # with its own file and line; the data routes refuse the design in one line instead.
    data, path = visits
    doubled = path.with_name("doubled.csv")
    data.assign(idp2=2 * data["idp"]).to_csv(doubled, index=False)
    args = {
        "stability": ("stability", "--data", doubled, "--formula-short", "mdvis ~ idp",
                      "--formula-long", "mdvis ~ idp + idp2 + lncoins", "--treatment", "idp"),
        "impact": ("impact", "--data", doubled, "--formula", "mdvis ~ idp + idp2 + lncoins",
                   "--treatment", "idp"),
    }[command]  # fmt: skip
    res = run(*args)
    assert res.exit_code == 2 and res.stderr.count("\n") == 1, res.stderr
    assert "its columns are linearly dependent in these data (rank 3 of 4)" in res.stderr
    assert "Warning" not in res.stderr and ".py:" not in res.stderr


@pytest.mark.parametrize(
    ("model", "formula", "treatment", "extra", "message"),
    [
        ("ols", "none ~ idp + lncoins", "idp", (),
         "`--formula`: the outcome 'none' is 0 in every row the fit uses; a regression needs "
         "an outcome that varies"),
        ("negbin", "mdvis ~ flat + lncoins", "flat", (),
         "`--formula` 'mdvis ~ flat + lncoins': its columns are linearly dependent in these "
         "data (rank 2 of 3)"),
        ("cox", "time ~ flat + lncoins", "flat", ("--event", "idp"),
         "`--formula` 'time ~ flat + lncoins': "),  # its columns' rank, or the column named
        ("logit", "idp ~ lncoins + physlm", "lncoins", ("--contrast", "0"),
         "`--contrast` must not be 0; got 0"),
    ],
)  # fmt: skip
def test_a_design_that_cannot_be_estimated_says_why(run, visits, tmp_path, model, formula,
                                                    treatment, extra, message):  # fmt: skip
    # (before: "`--sd` must be positive", an odd negative binomial failure, a Cox estimate
    # for a treatment that never varies, an odds ratio of exactly 1 for a contrast of 0)
    path = tmp_path / "flat.csv"
    visits[0].assign(flat=1.0).to_csv(path, index=False)
    res = run("evalue", "--data", path, "--formula", formula, "--treatment", treatment,
              "--model", model, *extra)  # fmt: skip
    assert res.exit_code == 2 and res.stderr.count("\n") == 1, res.stderr
    assert res.stderr.startswith(f"Error: {message}"), res.stderr


def test_a_cox_fit_that_runs_with_a_flat_treatment_is_still_refused():
    # data generated here: PHReg fits a column that never varies (no intercept to clash
    # with) and gives it a coefficient, which means nothing
    import pandas as pd

    from sensitivity.common.errors import InputError

    rng = np.random.default_rng(3)
    frame = pd.DataFrame({"x": rng.normal(size=200), "flat": 1.0,
                          "time": rng.exponential(1.0, 200),
                          "died": rng.binomial(1, 0.4, 200)})  # fmt: skip
    with pytest.raises(InputError, match=r"'flat' takes one value in every row the fit uses"):
        evalue_from_data(frame, "time ~ flat + x", "flat", "cox", event="died")
