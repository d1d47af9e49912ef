"""Fitted models of Spark's own ML library into the right method, as the statsmodels fits go.

`GeneralizedLinearRegressionModel` (binomial with a logit link: odds ratio; Poisson with a
log link: rate ratio; Gaussian with the identity link: a coefficient) and
`LinearRegressionModel` (a coefficient). Their training summaries carry the coefficients'
standard errors (the intercept's last); the coefficient's name comes from the features
column's metadata (as VectorAssembler or RFormula wrote it). A ratio's interval is the Wald
interval exp((b -/+ z se) x contrast), as statsmodels' conf_int gives for the same fit; the
outcome's share in the training data (one aggregate over the summary's predictions) decides
rare or common for an odds ratio by the 15% rule (common practice). A coefficient gives the
partial-R² result of its summary numbers (estimate, se, residual degrees of freedom) with the
outcome's SD from the data, so the E-value comes alongside; the covariates' own strengths need
the treatment model, which a summary does not carry (use `partial_r2_from_data` on the same
DataFrame for those and for benchmarks).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..common.errors import InputError

SPARK_MODELS = ("GeneralizedLinearRegressionModel", "LinearRegressionModel")
#: Spark's default link of each family (when the model does not set one).
DEFAULT_LINK = {"gaussian": "identity", "binomial": "logit", "poisson": "log",
                "gamma": "inverse", "tweedie": "identity"}  # fmt: skip


def is_spark_model(results: Any) -> bool:
    return type(results).__module__.startswith("pyspark.ml") and \
        type(results).__name__ in SPARK_MODELS  # fmt: skip


def spark_kind(model: Any) -> tuple[str, str]:
    """(model kind, effect scale) of a fitted Spark model; InputError for one not routed."""
    name = type(model).__name__
    if name == "LinearRegressionModel":
        return "ols", "md"
    if name != "GeneralizedLinearRegressionModel":
        raise InputError(f"`results` must be a fitted Spark GeneralizedLinearRegression or "
                         f"LinearRegression model; got {name}", "results")  # fmt: skip
    family = model.getFamily().lower()
    link = (model.getLink() if model.isSet("link") else "") or DEFAULT_LINK.get(family, "")
    if family == "binomial" and link == "logit":
        return "logit", "or"
    if family == "poisson" and link == "log":
        return "poisson", "rr"
    if family == "gaussian" and link == "identity":
        return "ols", "md"
    raise InputError(
        f"`results`: a Spark GLM with family {family} and link {link} has no E-value route; "
        "use binomial with the logit link, Poisson with the log link, or Gaussian with the "
        "identity link",
        "results",
    )


def feature_names(model: Any, summary: Any) -> list[str]:
    """The features' names, from the features column's metadata."""
    column = model.getFeaturesCol()
    meta = summary.predictions.schema[column].metadata.get("ml_attr", {})
    found: dict[int, str] = {}
    for group in meta.get("attrs", {}).values():
        for attr in group:
            found[int(attr["idx"])] = str(attr.get("name", f"{column}[{attr['idx']}]"))
    width = len(model.coefficients)
    if len(found) != width:
        raise InputError(
            f"`results`: the features column {column!r} carries no names for its {width} "
            "columns; assemble it with VectorAssembler or RFormula so the treatment can be named",
            "results",
        )
    return [found[i] for i in range(width)]


def _parts(model: Any, treatment: str) -> dict[str, Any]:
    """The treatment's coefficient and standard error, and the fit's sizes."""
    if model.getOrDefault("regParam") > 0:
        raise InputError("`results`: the model was fitted with regParam > 0; a penalised "
                         "fit's standard errors are not those of the estimate",
                         "results")  # fmt: skip
    if not model.hasSummary:
        raise InputError("`results`: the model has no training summary (a loaded model "
                         "keeps none); refit it, or use the estimate and interval",
                         "results")  # fmt: skip
    summary = model.summary
    names = feature_names(model, summary)
    if treatment not in names:
        raise InputError(f"`treatment` {treatment!r} is not a coefficient of the model; "
                         "coefficients: " + ", ".join(names), "treatment")  # fmt: skip
    j = names.index(treatment)
    try:
        errors = list(summary.coefficientStandardErrors)
    except Exception as err:  # noqa: BLE001 - Spark's own refusal (solver l-bfgs)
        text = " ".join(str(err).split())[:160]
        raise InputError(f"`results`: the summary has no standard errors ({text}); fit "
                         "with solver='normal'", "results") from None  # fmt: skip
    label = model.getLabelCol()
    frame = summary.predictions
    from pyspark.sql import functions as F

    row = frame.agg(F.count(F.col(label)).alias("n"),
                    F.avg((F.col(label) > 0).cast("double")).alias("share"),
                    F.stddev_samp(F.col(label)).alias("sd")).first()  # fmt: skip
    if type(model).__name__ == "GeneralizedLinearRegressionModel":
        dof = summary.residualDegreeOfFreedom
    else:
        dof = summary.degreesOfFreedom
    return {
        "b": float(model.coefficients[j]), "se": float(errors[j]), "n": int(summary.numInstances),
        "dof": float(dof), "share": float(row["share"]), "sd": float(row["sd"]), "label": label,
    }  # fmt: skip


def from_spark_model(model: Any, treatment: str, *, contrast: float = 1.0, alpha: float = 0.05,
                     outcome: str | None = None, **options: Any) -> Any:  # fmt: skip
    """The E-value (odds ratio, rate ratio) or the partial-R² result (a coefficient) of
    `treatment` in a fitted Spark GeneralizedLinearRegression or LinearRegression model."""
    from dataclasses import replace

    from ..common.checks import OPEN_UNIT, require
    from .design import evalue_of_coefficient
    from .models import SHOWN, coefficient

    kind, scale = spark_kind(model)
    alpha = float(require(alpha, "alpha", OPEN_UNIT))
    p = _parts(model, treatment)
    info = {"kind": kind, "n": p["n"], "outcome_share": None, "treatment": treatment}
    if kind == "ols":
        from .design import partial_r2_from_parts

        note = (f"From a fitted Spark {type(model).__name__} (n = {p['n']:,}): coefficient "
                f"{p['b']:.4g} (se {p['se']:.3g}); the outcome's SD in the data is "
                f"{p['sd']:.4g}. Spark's summary does not carry the treatment model, so the "
                "covariates' own strengths are not shown (partial_r2_from_data on the same "
                "DataFrame gives them).")  # fmt: skip
        return partial_r2_from_parts(
            p["b"], p["se"], p["dof"], (), treatment=treatment, outcome=p["label"], n=p["n"],
            sd_outcome=p["sd"], alpha=alpha, contrast=contrast, notes=(note,), **options,
        )  # fmt: skip
    if options:
        raise InputError(
            f"`{next(iter(options))}` applies to a linear model only", next(iter(options))
        )
    from scipy.special import ndtri

    z = float(ndtri(1 - alpha / 2))
    est = float(np.exp(p["b"] * contrast))
    lo, up = sorted(float(np.exp((p["b"] + s * z * p["se"]) * contrast)) for s in (-1, 1))
    prevalence = p["share"] if outcome is None and scale == "or" else None
    res = evalue_of_coefficient(p["b"], contrast, scale, est, (lo, up), outcome=outcome,
                                prevalence=prevalence, ci_level=1 - alpha)  # fmt: skip
    what = {"or": "odds ratio", "rr": "risk or rate ratio"}[scale]
    per = f" per {contrast:g} units" if contrast != 1 else ""
    note = (f"From a fitted Spark {SHOWN[kind]} model (n = {p['n']:,}): {what} exp(b){per} = "
            f"{est:.4g}; the outcome occurs in {p['share']:.1%} of the model's data. The "
            "interval is the Wald interval from the summary's standard error.")  # fmt: skip
    info["outcome_share"] = p["share"]
    info.update(coefficient(p["b"], p["se"]))
    return replace(res, notes=(note, *res.notes), model=info)
