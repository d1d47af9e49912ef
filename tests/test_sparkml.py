"""Spark ML fitted models through `from_model` (issue 25) against statsmodels refits.

Reference: statsmodels Logit, Poisson GLM and OLS fits of the same model on the same rows
(a general-purpose library's fits), through the project's statsmodels routes
(`evalue_from_model`, `partial_r2_from_model`). Spark's IRLS is run to a tolerance of 1e-12,
so the coefficients agree to about 1e-8 and the E-values with them. Data generated here.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf

from sensitivity import from_model
from sensitivity.adapters.models import evalue_from_model
from sensitivity.adapters.statsmodels import partial_r2_from_model
from sensitivity.common.errors import InputError

REL = 1e-6


def rows(share: float, n: int = 3000, seed: int = 2) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    x1, x2 = rng.normal(size=n), rng.normal(size=n)
    t = (rng.random(n) < 1 / (1 + np.exp(-0.5 * x1))).astype(float)
    base = np.log(share / (1 - share))
    y = (rng.random(n) < 1 / (1 + np.exp(-(base + 0.6 * t + 0.4 * x1 - 0.3 * x2)))).astype(float)
    count = rng.poisson(np.exp(0.2 + 0.3 * t + 0.2 * x2)).astype(float)
    sbp = 120 + 2.0 * t + 3 * x1 + rng.normal(0, 8, n)
    return pd.DataFrame({"y": y, "count": count, "sbp": sbp, "t": t, "x1": x1, "x2": x2})


@pytest.fixture(scope="module")
def assembled(spark):
    from pyspark.ml.feature import VectorAssembler

    def make(frame):
        data = spark.createDataFrame(frame)
        return VectorAssembler(inputCols=["t", "x1", "x2"], outputCol="features").transform(data)

    return make


def glm(data, label, family, link=None, **extra):
    from pyspark.ml.regression import GeneralizedLinearRegression

    options = {"family": family, "labelCol": label, "tol": 1e-12, "maxIter": 100, **extra}
    if link:
        options["link"] = link
    return GeneralizedLinearRegression(**options).fit(data)


def agree(reference, got):
    a, b = reference.to_dict(), got.to_dict()
    for key in ("estimate", "rr", "evalue", "evalue_ci"):
        assert b[key] == pytest.approx(a[key], rel=REL), key
    for key in ("ci", "rr_ci"):
        assert b[key] == pytest.approx(a[key], rel=REL), key
    assert b["scale"] == a["scale"] and b["outcome"] == a["outcome"]
    assert b["model"]["outcome_share"] == pytest.approx(a["model"]["outcome_share"], rel=1e-12)
    assert b["model"]["n"] == a["model"]["n"]


@pytest.mark.parametrize("share, expected", [(0.05, "rare"), (0.4, "common")])
def test_logistic_glm_equals_a_statsmodels_logit_refit(assembled, share, expected):
    frame = rows(share)
    model = glm(assembled(frame), "y", "binomial", "logit")
    got = from_model(model, "t")
    reference = evalue_from_model(smf.logit("y ~ t + x1 + x2", frame).fit(disp=0), "t")
    agree(reference, got)
    assert got.outcome == expected  # the 15% rule (common practice) on the data's share
    per_ten = from_model(model, "x1", contrast=10, alpha=0.1)
    ref_ten = evalue_from_model(smf.logit("y ~ t + x1 + x2", frame).fit(disp=0), "x1",
                                contrast=10, alpha=0.1)  # fmt: skip
    agree(ref_ten, per_ten)


def test_poisson_glm_equals_a_statsmodels_poisson_refit(assembled):
    frame = rows(0.2)
    model = glm(assembled(frame), "count", "poisson")  # Spark's default link: log
    fit = smf.glm("count ~ t + x1 + x2", frame, family=sm.families.Poisson()).fit()
    agree(evalue_from_model(fit, "t"), from_model(model, "t"))


def test_linear_models_equal_a_statsmodels_ols_refit(assembled):
    from pyspark.ml.regression import LinearRegression

    frame = rows(0.2)
    reference = partial_r2_from_model(smf.ols("sbp ~ t + x1 + x2", frame).fit(), "t")
    data = assembled(frame)
    for model in (
        LinearRegression(labelCol="sbp", solver="normal").fit(data),
        glm(data, "sbp", "gaussian"),
    ):
        got = from_model(model, "t")
        a, b = reference.to_dict(), got.to_dict()
        for key in ("estimate", "se", "dof", "t", "partial_r2", "robustness_value",
                    "robustness_value_alpha"):  # fmt: skip
            assert b[key] == pytest.approx(a[key], rel=REL), key
        assert got.evalue.evalue == pytest.approx(reference.evalue.evalue, rel=REL)


def test_what_spark_cannot_route_is_refused(assembled):
    from pyspark.ml.regression import LinearRegression

    data = assembled(rows(0.2))
    with pytest.raises(InputError, match="`treatment` 'dose' is not a coefficient"):
        from_model(glm(data, "y", "binomial"), "dose")
    with pytest.raises(InputError, match="family gamma and link inverse has no E-value route"):
        from_model(glm(data, "sbp", "gamma"), "t")
    with pytest.raises(InputError, match="regParam > 0"):
        from_model(LinearRegression(labelCol="sbp", regParam=0.1).fit(data), "t")
