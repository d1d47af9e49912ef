"""The outside world into plain numbers: fitted models (one file a library) and data files."""

from __future__ import annotations

from typing import Any


def from_model(results: Any, treatment: str, **options: Any) -> Any:
    """The right result for a fitted model: partial R² (with the E-value alongside) for OLS,
    the E-value on the fit's own scale for logistic, log-binomial, Poisson, negative binomial
    and Cox fits (statsmodels, or lifelines' CoxPHFitter); partial R² for linearmodels
    PanelOLS and PooledOLS fits (absorbed entity and time effects) and pyfixest
    `feols` fits (absorbed fixed effects); Spark ML GeneralizedLinearRegression (binomial
    logit, Poisson log, Gaussian) and LinearRegression models (`sparkml.py`)."""
    from .models import evalue_from_model, model_kind

    if type(results).__module__.startswith("pyspark.ml"):
        from .sparkml import from_spark_model

        return from_spark_model(results, treatment, **options)
    if type(results).__module__.startswith("linearmodels."):
        from .linearmodels import partial_r2_from_linearmodels

        return partial_r2_from_linearmodels(results, treatment, **options)
    if type(results).__module__.startswith("pyfixest."):
        from .pyfixest import partial_r2_from_pyfixest

        return partial_r2_from_pyfixest(results, treatment, **options)
    kind, _ = model_kind(results)
    if kind == "ols":
        from .statsmodels import partial_r2_from_model

        return partial_r2_from_model(results, treatment, **options)
    return evalue_from_model(results, treatment, **options)
