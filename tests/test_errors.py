"""Standard errors as users fit them: `--errors` on the data route, and every adapter's note.

Reference: statsmodels fits with `cov_type` HC0-HC3 and cluster (and PHReg with `groups`) on
datasets shipped with statsmodels (Fair 1978 affairs) and lifelines (Rossi et al. 1980
recidivism). The E-value of each interval is checked against `evalue` on the reference fit's
own limits. Modified Poisson: Zou (2004), robust errors for a Poisson fit of a 0/1 outcome.
"""

import json

import numpy as np
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf

from sensitivity.adapters.errors import parse_errors
from sensitivity.adapters.models import evalue_from_data, evalue_from_model
from sensitivity.common.errors import InputError, SensitivityWarning
from sensitivity.evalues import evalue

LINEAR = "affairs ~ rate_marriage + age + yrs_married + religious"
BINARY = "had ~ rate_marriage + age + yrs_married + religious"
T = "rate_marriage"


@pytest.fixture(scope="module")
def fair():
    data = sm.datasets.fair.load_pandas().data
    data["had"] = (data["affairs"] > 0).astype(float)
    return data


@pytest.fixture(scope="module")
def rossi():
    lifelines = pytest.importorskip("lifelines")
    return lifelines.datasets.load_rossi()


@pytest.mark.parametrize("cov", ["HC0", "HC1", "HC2", "HC3"])
def test_ols_errors_are_statsmodels_cov_type(fair, cov):
    ref = smf.ols(LINEAR, fair).fit(cov_type=cov)
    res = evalue_from_data(fair, LINEAR, T, "ols", errors=cov.lower())
    sd = float(np.std(fair["affairs"], ddof=1))
    want = evalue("md", ref.params[T], se=ref.bse[T], sd=sd)
    assert res.evalue_ci == pytest.approx(want.evalue_ci, rel=1e-12)
    assert res.model["errors"] == cov.lower()
    assert any(f"({cov}" in n for n in res.notes)


def test_poisson_of_a_binary_outcome_is_robust_by_default(fair):
    ref = smf.poisson(BINARY, fair).fit(disp=0, cov_type="HC0")
    res = evalue_from_data(fair, BINARY, T, "poisson")
    lo, up = np.exp(ref.conf_int().loc[T])
    assert res.ci == pytest.approx(sorted((lo, up)), rel=1e-6)
    assert res.model["errors"] == "hc0"
    assert any("HC0 sandwich" in n for n in res.notes)
    # classical on request: the model-based interval, with the caution about it
    with pytest.warns(SensitivityWarning, match="modified Poisson"):
        plain = evalue_from_data(fair, BINARY, T, "poisson", errors="classical")
    classical = smf.poisson(BINARY, fair).fit(disp=0)
    assert plain.ci == pytest.approx(sorted(np.exp(classical.conf_int().loc[T])), rel=1e-6)
    assert plain.model["errors"] == "classical"


def test_a_count_outcome_keeps_model_based_errors(fair):
    res = evalue_from_data(fair.assign(n=np.round(fair.affairs)), "n ~ rate_marriage + age", T,
                           "poisson")  # fmt: skip
    assert res.model["errors"] == "classical"


@pytest.mark.parametrize("model", ["poisson", "logit"])
def test_cluster_errors_are_statsmodels_cluster(fair, model):
    fitter = smf.poisson if model == "poisson" else smf.logit
    ref = fitter(BINARY, fair).fit(
        disp=0, cov_type="cluster", cov_kwds={"groups": fair["occupation"].astype(int)}
    )
    res = evalue_from_data(fair, BINARY, T, model, errors="cluster:occupation")
    assert res.ci == pytest.approx(sorted(np.exp(ref.conf_int().loc[T])), rel=1e-6)
    assert res.model["errors"] == "cluster:occupation"  # the column, as --errors takes it
    assert any("cluster-robust standard errors by 'occupation' (6 clusters)" in n
               for n in res.notes)  # fmt: skip


def test_cox_robust_and_cluster_are_phreg_groups(rossi):
    formula = "week ~ fin + age + prio"
    status = rossi["arrest"].to_numpy()
    for errors, groups in (("hc0", np.arange(len(rossi))), ("cluster:race", rossi["race"])):
        ref = smf.phreg(formula, rossi, status=status).fit(groups=np.asarray(groups))
        res = evalue_from_data(rossi, formula, "fin", "cox", event="arrest", errors=errors)
        want = np.exp(ref.conf_int()[0])
        assert res.ci == pytest.approx(sorted(want), rel=1e-6)
        assert res.model["errors"] == errors


def test_lifelines_robust_and_cluster_fits_say_so(rossi):
    from lifelines import CoxPHFitter

    cols = ["week", "arrest", "fin", "age", "prio"]
    plain = CoxPHFitter().fit(rossi[cols], "week", "arrest")
    robust = CoxPHFitter().fit(rossi[cols], "week", "arrest", robust=True)
    cluster = CoxPHFitter().fit(rossi[[*cols, "race"]], "week", "arrest", cluster_col="race")
    notes = {
        name: " ".join(evalue_from_model(f, "fin").notes)
        for name, f in (("plain", plain), ("robust", robust), ("cluster", cluster))
    }
    assert "model-based (classical) standard errors (lifelines)" in notes["plain"]
    assert "robust (sandwich) standard errors (lifelines, robust=True)" in notes["robust"]
    assert "cluster-robust standard errors by 'race' (lifelines)" in notes["cluster"]
    # the interval is the fitter's own: its robust se
    res = evalue_from_model(robust, "fin")
    b, se = robust.summary.loc["fin", "coef"], robust.summary.loc["fin", "se(coef)"]
    assert res.ci == pytest.approx(sorted(np.exp([b - 1.959964 * se, b + 1.959964 * se])), 1e-6)


def test_every_statsmodels_fit_names_its_errors(fair):
    fits = {
        "nonrobust": smf.logit(BINARY, fair).fit(disp=0),
        "HC0": smf.glm(BINARY, fair, family=sm.families.Poisson()).fit(cov_type="HC0"),
    }
    assert "model-based (classical)" in " ".join(evalue_from_model(fits["nonrobust"], T).notes)
    res = evalue_from_model(fits["HC0"], T)
    assert "HC0 sandwich" in " ".join(res.notes) and res.model["errors"] == "hc0"


def test_a_users_poisson_fit_of_a_binary_outcome_with_model_errors_is_flagged(fair):
    fit = smf.glm(BINARY, fair, family=sm.families.Poisson()).fit()
    with pytest.warns(SensitivityWarning, match="Zou 2004"):
        evalue_from_model(fit, T)


@pytest.mark.parametrize(
    ("errors", "model", "message"),
    [
        ("hc5", "ols", "must be classical, hc0, hc1, hc2, hc3 or cluster:COLUMN"),
        ("cluster:", "ols", "must be classical"),
        ("hc3", "logit", "computed for OLS fits only"),
        ("hc1", "poisson", "computed for OLS fits only"),
        ("cluster:nope", "ols", "'nope' is not a column"),
    ],
)
def test_bad_errors_name_the_rule(fair, errors, model, message):
    formula = LINEAR if model == "ols" else BINARY
    with pytest.raises(InputError, match=message):
        evalue_from_data(fair, formula, T, model, errors=errors)


def test_parse_errors():
    assert parse_errors("HC1") == ("hc1", None)
    assert parse_errors("cluster:site id") == ("cluster", "site id")


def test_cli_errors_option(run, fair, tmp_path):
    path = tmp_path / "fair.csv"
    fair.to_csv(path, index=False)
    base = ("evalue", "--data", path, "--formula", BINARY, "--treatment", T)
    res = run(*base, "--model", "poisson", "--format", "json")
    assert res.exit_code == 0, res.stderr
    out = json.loads(res.stdout)
    assert out["model"]["errors"] == "hc0"
    assert any("HC0 sandwich" in n for n in out["notes"])
    res = run(*base, "--model", "logit", "--errors", "cluster:occupation")
    said = " ".join(res.stdout.split())  # the text wraps
    assert res.exit_code == 0 and "standard errors by 'occupation' (6 clusters)" in said
    res = run(*base, "--model", "logit", "--errors", "hc2")
    assert res.exit_code == 2 and res.stderr.count("\n") == 1
    assert "`--errors` hc2 is computed for OLS fits only" in res.stderr
    res = run("evalue", "--scale", "rr", "--estimate", 1.5, "--errors", "hc1")
    assert res.exit_code == 2 and "--errors applies to data input" in res.stderr


def test_partial_r2_says_which_quantities_depend_on_the_errors():
    from sensitivity.partial_r2 import partial_r2_summary

    text = " ".join(partial_r2_summary(1.0, 0.2, 100).assumptions)
    assert "do not depend on the standard errors" in text
    assert "classical" in text
