"""statsmodels adapter: fitted OLS models and data-plus-formula into partial-R² results.

The covariate strength table costs two fits in all, whatever the number of covariates: the
outcome model's own t (or group F) statistics give every covariate's partial R² with the
outcome, and one regression of the treatment on the covariates gives them with the treatment.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ..common.errors import InputError, InputTypeError
from ..partial_r2.result import CovariateStrength, PartialR2Result
from .design import (
    check_names,
    classical_errors_used,
    find_treatment,
    formula_columns,
    group_r2,
    no_interaction,
    partial_r2_from_parts,
    term_groups,
)

# The library-neutral helpers moved to `design.py`; importable from here as before.
__all__ = [
    "NOT_OLS",
    "check_names",
    "check_ols",
    "classical_errors_used",
    "covariate_strengths",
    "fit_formula",
    "formula_columns",
    "no_interaction",
    "partial_r2_from_data",
    "partial_r2_from_model",
    "partial_r2_from_parts",
]

NOT_OLS = (
    "partial-R² bounds need an ordinary least squares fit; got {kind}. For logistic, Poisson, "
    "Cox, weighted, IV and other fits use the E-value route (`sensitivity evalue`) on the "
    "effect's own scale"
)


# --------------------------------------------------------------------------- model parts
def check_ols(results: Any) -> tuple[Any, list[str]]:
    """The model of a fitted statsmodels OLS result and the notes on its errors; refuses any
    other fit (naming the route to take) and a regularized one."""
    from statsmodels.regression.linear_model import OLS

    model = getattr(results, "model", None)
    if model is None or not hasattr(results, "params"):
        raise InputTypeError(
            f"`results` must be a fitted statsmodels model; got {type(results).__name__}", "results"
        )
    if not isinstance(model, OLS) or not hasattr(results, "normalized_cov_params"):
        raise InputError(NOT_OLS.format(kind=type(model).__name__))
    if getattr(results, "normalized_cov_params", None) is None:
        raise InputError(NOT_OLS.format(kind="a regularized OLS fit"))
    cov_type = getattr(results, "cov_type", "nonrobust")
    return model, classical_errors_used(cov_type) if cov_type != "nonrobust" else []


def _intercepts(model, names):
    idx = getattr(getattr(model, "data", None), "const_idx", None)
    found = {idx} if idx is not None else set()
    return found | {i for i, n in enumerate(names) if n in ("Intercept", "const")}


def covariate_strengths(
    results: Any, treatment_index: int, groups: dict[str, list[int]], intercepts: set[int]
) -> tuple[CovariateStrength, ...]:
    """Every observed covariate's (or group's) partial R² with the treatment and the outcome.

    Two fits: the outcome model given, and one OLS of the treatment on the other columns.
    """
    import statsmodels.api as sm

    model = results.model
    X = np.asarray(model.exog, float)
    params = np.asarray(results.params, float)
    cov = np.asarray(results.normalized_cov_params, float) * float(results.scale)
    dof = float(results.df_resid)
    keep = [i for i in range(X.shape[1]) if i != treatment_index]
    treat_fit = sm.OLS(X[:, treatment_index], X[:, keep]).fit()
    t_params = np.asarray(treat_fit.params, float)
    t_cov = np.asarray(treat_fit.normalized_cov_params, float) * float(treat_fit.scale)
    position = {col: pos for pos, col in enumerate(keep)}
    names = list(model.exog_names)
    out = []
    for name, cols in groups.items():
        cols = [c for c in cols if c not in intercepts and c != treatment_index]
        if not cols:
            continue
        r2y = group_r2(params, cov, dof, cols)
        r2t = group_r2(t_params, t_cov, float(treat_fit.df_resid), [position[c] for c in cols])
        out.append(CovariateStrength(name, tuple(names[c] for c in cols), r2t, r2y))
    return tuple(out)


# --------------------------------------------------------------------------- entry points
def partial_r2_from_model(
    results: Any,
    treatment: str,
    *,
    reduce_by: float = 1.0,
    alpha: float = 0.05,
    benchmarks: Sequence[Any] = (),
    r2_treatment: ArrayLike | None = None,
    r2_outcome: ArrayLike | None = None,
    contrast: float = 1.0,
    notes: Sequence[str] = (),
) -> PartialR2Result:
    """Partial-R² sensitivity of the `treatment` coefficient of a fitted statsmodels OLS model.

    Parameters
    ----------
    results : statsmodels RegressionResults
        A fitted OLS model (formula or arrays). Robust, clustered or HAC covariance gives a
        `SensitivityWarning` and the classical standard errors of the same fit are used;
        WLS, GLS, GLM, IV and other fits are refused (use `evalue` on their scale).
    treatment : str
        The treatment's coefficient name (or a formula term with one column).
    reduce_by, alpha, r2_treatment, r2_outcome
        As in `partial_r2_summary`.
    benchmarks : sequence of str or tuple
        Observed covariates (or categorical terms, taken as one group) to benchmark against,
        each with its multiples in one value: ``"age"`` (age's strength), ``"age:2"`` (twice
        it on both sides), ``"age:1:3"`` (age's strength with the treatment, three times it
        with the outcome), or the tuples ``("age", 2)``, ``("age", 1, 3)``. Give one
        name several times for several multiples.
    contrast : float, default 1
        Treatment difference the E-value alongside refers to (per `contrast` units).

    Returns
    -------
    PartialR2Result
        With `covariates` (every covariate's partial R² on both sides), benchmark scenarios,
        and the E-value through the standardized-difference conversion (outcome SD from the
        fit's data).
    """
    model, fit_notes = check_ols(results)
    names = list(model.exog_names)
    groups = term_groups(model, names)
    j = find_treatment(treatment, names, groups)
    treat_name = names[j]
    no_interaction(treat_name, names)
    cov = np.asarray(results.normalized_cov_params, float) * float(results.scale)
    covariates = covariate_strengths(results, j, groups, _intercepts(model, names))
    return partial_r2_from_parts(
        float(np.asarray(results.params)[j]), float(np.sqrt(cov[j, j])),
        float(results.df_resid), covariates, treatment=treat_name,
        outcome=str(model.endog_names), n=int(results.nobs),
        sd_outcome=float(np.std(np.asarray(model.endog, float), ddof=1)),
        notes=tuple(notes) + tuple(fit_notes), reduce_by=reduce_by, alpha=alpha,
        benchmarks=benchmarks,
        r2_treatment=r2_treatment, r2_outcome=r2_outcome, contrast=contrast,
    )  # fmt: skip


def fit_formula(data: Any, formula: str) -> tuple[Any, list[str]]:
    """Fit OLS of `formula` on a DataFrame; ValueError names `formula` for any problem."""
    import statsmodels.formula.api as smf
    from pandas.api.types import is_numeric_dtype

    if not isinstance(formula, str) or "~" not in formula:
        raise InputError(f"`formula` must look like 'y ~ t + x1 + x2'; got {formula!r}", "formula")
    outcome = formula.split("~", 1)[0].strip()
    if outcome in data.columns and not is_numeric_dtype(data[outcome]):
        raise InputError(f"`formula`: the outcome column {outcome!r} must be numeric", "formula")
    from .textcells import refuse_numbers_in_frame

    refuse_numbers_in_frame(data, formula)  # "12.5%" or a stray word: not categories unasked
    import warnings

    try:
        with warnings.catch_warnings():  # rank deficiency is refused below, in our words
            warnings.filterwarnings("ignore", message=".*rank-deficient")
            results = smf.ols(formula, data=data).fit()
    except Exception as err:  # noqa: BLE001 - patsy/formulaic errors are the user's formula
        from .fitting import formula_failure

        raise formula_failure(err, formula) from None
    rows, width = (int(v) for v in results.model.exog.shape)
    # the rank as numpy's matrix_rank takes it, from the singular values the fit computed
    # (statsmodels' own `rank` uses pinv's far smaller cut-off, and misses near-exact copies)
    values = np.asarray(getattr(results.model, "wexog_singular_values", ()), float)
    rank = int((values > values.max() * max(rows, width) * np.finfo(float).eps).sum()) \
        if values.size else width  # fmt: skip
    if rank < width:  # statsmodels' pinv would split a coefficient between the copies
        raise InputError(
            f"`formula` {formula!r}: its columns are linearly dependent in these data (rank "
            f"{rank} of {width}), so its coefficients are not identified; drop a column that "
            "the others reproduce",
            "formula",
        )
    if results.model.endog.ndim > 1 and results.model.endog.shape[1] > 1:
        raise InputError(
            f"`formula`: the outcome {outcome!r} must be a single numeric column", "formula"
        )
    dropped = len(data) - int(results.nobs)
    notes = []
    if dropped:
        notes.append(
            f"{dropped} of {len(data)} rows had missing values in the model's "
            "columns and were left out of the fit."
        )
    if results.df_resid < 2:
        raise InputError(
            f"`data`: the fit has {results.df_resid:g} residual degrees of freedom; "
            "need at least 2",
            "data",
        )
    return results, notes


def partial_r2_from_data(
    data: Any, formula: str, treatment: str, **options: Any
) -> PartialR2Result:
    """Fit `formula` by OLS on `data` and analyse `treatment`.

    `data`: a DataFrame, a file path, a Parquet dataset folder, or a Spark or Dask DataFrame
    (run on its own engine; `engine="dask"` or `"spark"` opens a Parquet path with that
    engine). Categorical covariates (strings or ``C(x)``) work and benchmark as one group.
    Options are those of `partial_r2_from_model`, with `progress` (called with the rows read,
    or on Spark and Dask with the partitions done and their number). The data are read once,
    in batches (on an engine, a partition at a time), into the R factor of the design's QR
    decomposition (`sensitivity.adapters.onepass`, `engines`): the numbers equal a
    statsmodels fit's, in memory that does not grow with the number of rows.
    """
    from .engines import partial_r2_engine

    return partial_r2_engine(data, formula, treatment, **options)
