"""Partial-R² adapters against statsmodels refits on a dataset shipped with statsmodels.

Reference: statsmodels OLS refits (a general-purpose library), on the `fair` extramarital
affairs data (Fair 1978, as shipped in statsmodels.datasets). The identities are exact
in-sample algebra (Cinelli & Hazlett 2020, JRSS-B 82:39, section 3), so they hold to 1e-8.
"""

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf

from sensitivity.adapters.statsmodels import partial_r2_from_data, partial_r2_from_model
from sensitivity.common.errors import SensitivityWarning
from sensitivity.partial_r2 import bias_of_confounder, se_of_confounder

COVARIATES = "age + yrs_married + educ + C(religious)"
FORMULA = f"affairs ~ rate_marriage + {COVARIATES}"


@pytest.fixture(scope="module")
def fair():
    return sm.datasets.fair.load_pandas().data


@pytest.fixture(scope="module")
def fit(fair):
    return smf.ols(FORMULA, data=fair).fit()


def _partial_r2_by_refit(data, formula_full, formula_without):
    full = smf.ols(formula_full, data=data).fit()
    without = smf.ols(formula_without, data=data).fit()
    return (without.ssr - full.ssr) / without.ssr


@pytest.mark.parametrize("omitted", ["occupation", "occupation_husb", "children"])
def test_bias_and_se_equal_the_refit(fair, omitted):
    restricted = smf.ols(FORMULA, data=fair).fit()
    full = smf.ols(f"{FORMULA} + {omitted}", data=fair).fit()
    t_u = full.tvalues[omitted]
    r2_outcome = t_u**2 / (t_u**2 + full.df_resid)
    treat = smf.ols(f"rate_marriage ~ {COVARIATES} + {omitted}", data=fair).fit()
    r2_treatment = treat.tvalues[omitted] ** 2 / (treat.tvalues[omitted] ** 2 + treat.df_resid)
    b, se, dof = (
        restricted.params["rate_marriage"],
        restricted.bse["rate_marriage"],
        restricted.df_resid,
    )
    got_bias = float(bias_of_confounder(r2_treatment, r2_outcome, se=se, dof=dof))
    assert got_bias == pytest.approx(abs(b - full.params["rate_marriage"]), rel=1e-8)
    got_se = float(se_of_confounder(r2_treatment, r2_outcome, se=se, dof=dof))
    assert got_se == pytest.approx(full.bse["rate_marriage"], rel=1e-8)


def test_covariate_table_equals_refits(fair, fit):
    res = partial_r2_from_model(fit, "rate_marriage")
    by_name = {c.name: c for c in res.covariates}
    assert set(by_name) == {"age", "yrs_married", "educ", "C(religious)"}
    terms = ["age", "yrs_married", "educ", "C(religious)"]
    for term in terms:
        others = " + ".join(t for t in terms if t != term)
        r2y = _partial_r2_by_refit(fair, FORMULA, f"affairs ~ rate_marriage + {others}")
        r2t = _partial_r2_by_refit(
            fair, f"rate_marriage ~ {COVARIATES}", f"rate_marriage ~ {others}"
        )
        assert by_name[term].r2_outcome == pytest.approx(r2y, rel=1e-8), term
        assert by_name[term].r2_treatment == pytest.approx(r2t, rel=1e-8), term


def test_summary_numbers_match_the_fit(fit):
    res = partial_r2_from_model(fit, "rate_marriage")
    assert res.estimate == fit.params["rate_marriage"]
    assert res.se == pytest.approx(fit.bse["rate_marriage"], rel=1e-12)
    assert res.dof == fit.df_resid
    t = fit.tvalues["rate_marriage"]
    assert res.partial_r2 == pytest.approx(t**2 / (t**2 + fit.df_resid), rel=1e-12)


def test_evalue_alongside_uses_outcome_sd(fair, fit):
    from sensitivity.evalues import evalue

    res = partial_r2_from_model(fit, "rate_marriage")
    ref = evalue(
        "md",
        fit.params["rate_marriage"],
        se=fit.bse["rate_marriage"],
        sd=fair["affairs"].std(ddof=1),
    )
    assert float(res.evalue.evalue) == pytest.approx(float(ref.evalue), rel=1e-12)


def test_benchmark_formula_for_outcome_side(fit):
    # METHODS.md section 2 (Cinelli & Hazlett 2020, section 6), evaluated by hand for k = 2.
    res = partial_r2_from_model(fit, "rate_marriage", benchmarks=["religious:2"])
    cov = next(c for c in res.covariates if c.name == "C(religious)")
    rt, ry, k = cov.r2_treatment, cov.r2_outcome, 2.0
    rho2 = k * rt**2 / ((1 - k * rt) * (1 - rt))
    expected_y = ((np.sqrt(k) + np.sqrt(rho2)) / np.sqrt(1 - rho2)) ** 2 * ry / (1 - ry)
    (sc,) = res.scenarios
    assert sc.r2_treatment == pytest.approx(k * rt / (1 - rt), rel=1e-12)
    assert sc.r2_outcome == pytest.approx(expected_y, rel=1e-12)
    assert sc.benchmark == "C(religious)" and sc.k_treatment == 2


def test_separate_multipliers(fit):
    res = partial_r2_from_model(fit, "rate_marriage", benchmarks=[("age", 1, 3)])
    (sc,) = res.scenarios
    assert (sc.k_treatment, sc.k_outcome) == (1.0, 3.0)


def test_robust_covariance_warns_and_uses_classical(fair, fit):
    robust = smf.ols(FORMULA, data=fair).fit(cov_type="HC1")
    with pytest.warns(SensitivityWarning, match="HC1; the partial-R² identities assume classical"):
        res = partial_r2_from_model(robust, "rate_marriage")
    assert res.se == pytest.approx(fit.bse["rate_marriage"], rel=1e-12)


@pytest.mark.parametrize(
    "maker",
    [
        lambda d: smf.wls("affairs ~ rate_marriage + age", d, weights=d["age"]).fit(),
        lambda d: smf.glm("affairs ~ rate_marriage + age", d).fit(),
        lambda d: smf.poisson("children ~ rate_marriage + age", d).fit(disp=0),
    ],
)
def test_non_ols_fits_are_refused(fair, maker):
    with pytest.raises(ValueError, match=r"need an ordinary least squares fit; got \w+\. .*evalue"):
        partial_r2_from_model(maker(fair), "rate_marriage")


def test_array_fit_uses_name_rule():
    rng = np.random.default_rng(1)
    X = sm.add_constant(rng.normal(size=(200, 3)))
    y = X @ [1, 0.5, 0.2, -0.3] + rng.normal(size=200)
    res = partial_r2_from_model(sm.OLS(y, X).fit(), "x1")
    assert [c.name for c in res.covariates] == ["x2", "x3"]


@pytest.mark.parametrize(
    "treatment, kwargs, message",
    [
        (
            "nope",
            {},
            r"`treatment` 'nope' is not a coefficient of the model; coefficients: Intercept",
        ),
        ("C(religious)", {}, r"`treatment` 'C\(religious\)' spans 3 columns"),
        (
            "rate_marriage",
            {"benchmarks": ["height"]},
            r"`benchmark` 'height' is not an observed covariate",
        ),
        (
            "rate_marriage",
            {"benchmarks": ["age:0"]},
            r"`benchmark` 'age:0': a multiple must be a positive finite number; got 0",
        ),
    ],
)
def test_model_input_errors(fit, treatment, kwargs, message):
    with pytest.raises(ValueError, match=message):
        partial_r2_from_model(fit, treatment, **kwargs)


def test_treatment_in_interaction_is_refused(fair):
    m = smf.ols("affairs ~ rate_marriage * age", data=fair).fit()
    with pytest.raises(ValueError, match=r"also enters the interaction 'rate_marriage:age'"):
        partial_r2_from_model(m, "rate_marriage")


# ----------------------------------------------------------------------- data files
@pytest.mark.parametrize("suffix", [".csv", ".tsv", ".xlsx", ".parquet"])
def test_every_file_format_gives_the_same_fit(fair, fit, tmp_path, suffix):
    small = fair.head(400)
    path = tmp_path / f"fair{suffix}"
    {
        ".csv": lambda: small.to_csv(path, index=False),
        ".tsv": lambda: small.to_csv(path, sep="\t", index=False),
        ".xlsx": lambda: small.to_excel(path, index=False),
        ".parquet": lambda: small.to_parquet(path),
    }[suffix]()
    ref = smf.ols(FORMULA, data=small).fit()
    res = partial_r2_from_data(path, FORMULA, "rate_marriage")
    assert res.estimate == pytest.approx(ref.params["rate_marriage"], rel=1e-10)


def test_string_categorical_benchmarks_as_group(fair):
    d = fair.assign(faith=fair["religious"].map({1: "none", 2: "some", 3: "fair", 4: "strong"}))
    res = partial_r2_from_data(
        d, "affairs ~ rate_marriage + age + faith", "rate_marriage", benchmarks=["faith"]
    )
    cov = next(c for c in res.covariates if c.name == "faith")
    assert len(cov.columns) == 3
    assert res.scenarios[0].benchmark == "faith"


def test_missing_rows_are_noted(fair):
    d = fair.copy()
    d.loc[:9, "age"] = np.nan
    res = partial_r2_from_data(d, FORMULA, "rate_marriage")
    assert res.n == len(d) - 10
    assert any("10 of 6366 rows had missing values" in n for n in res.notes)


@pytest.mark.parametrize(
    "setup, formula, message",
    [
        (lambda p: None, FORMULA, r"`data`: file not found"),
        (lambda p: p.write_text(""), FORMULA, r"`data`: .* is empty"),
        (lambda p: p.write_text("a,b\n"), FORMULA, r"`data`: .* has no data rows"),
        (
            lambda p: p.write_text("affairs,rate_marriage\n1,2\n3,4\n5,7\n"),
            "affairs ~ rate_marriage +",
            r"`formula` .* could not be read: expected a noun",
        ),
        (
            lambda p: p.write_text("affairs,rate_marriage\n1,2\n3,4\n5,7\n"),
            "affairs rate_marriage",
            r"`formula` must look like 'y ~ t \+ x1 \+ x2'",
        ),
        (
            lambda p: p.write_text("affairs,rate_marriage\n1,2\n3,4\n5,7\n"),
            "affairs ~ rate_marriage + height",
            r"`formula` uses column 'height', which is not in the data; columns: affairs",
        ),
        (
            lambda p: p.write_text("affairs,rate_marriage\na,2\nb,4\nc,7\n"),
            "affairs ~ rate_marriage",
            r"the outcome column 'affairs' must be numeric",
        ),
    ],
)
def test_data_input_errors(tmp_path, setup, formula, message):
    path = tmp_path / "d.csv"
    setup(path)
    with pytest.raises(ValueError, match=message):
        partial_r2_from_data(path, formula, "rate_marriage")


def test_unknown_extension(tmp_path):
    path = tmp_path / "d.json"
    path.write_text("{}")
    with pytest.raises(ValueError, match=r"`data`: cannot tell the format of 'd.json'"):
        partial_r2_from_data(path, FORMULA, "rate_marriage")


def test_dataframe_and_path_agree(fair, tmp_path):
    path = tmp_path / "f.csv"
    fair.to_csv(path, index=False)
    a = partial_r2_from_data(fair, FORMULA, "rate_marriage")
    b = partial_r2_from_data(path, FORMULA, "rate_marriage")
    assert a.robustness_value == pytest.approx(b.robustness_value, rel=1e-10)
    assert isinstance(a.to_frame(), pd.DataFrame)


def test_evalue_alongside_per_contrast(fair, fit):
    from sensitivity.evalues import evalue

    res = partial_r2_from_model(fit, "rate_marriage", contrast=2.0)
    ref = evalue(
        "md",
        fit.params["rate_marriage"],
        se=fit.bse["rate_marriage"],
        sd=fair["affairs"].std(ddof=1),
        contrast=2.0,
    )
    assert float(res.evalue.evalue) == pytest.approx(float(ref.evalue), rel=1e-12)
    assert res.robustness_value == partial_r2_from_model(fit, "rate_marriage").robustness_value
