"""statsmodels adapter: fitted OLS models and data-plus-formula into partial-R² results.

The covariate strength table costs two fits in all, whatever the number of covariates: the
outcome model's own t (or group F) statistics give every covariate's partial R² with the
outcome, and one regression of the treatment on the covariates gives them with the treatment.
"""

from __future__ import annotations

import re
import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import POSITIVE, require
from ..common.errors import InputError, InputTypeError, SensitivityWarning
from ..partial_r2.core import (
    assemble,
    benchmark_scenarios,
    check_summary,
    partial_r2_of_f,
)
from ..partial_r2.result import CovariateStrength, PartialR2Result

NOT_OLS = (
    "partial-R² bounds need an ordinary least squares fit; got {kind}. For logistic, Poisson, "
    "Cox, weighted, IV and other fits use the E-value route (`sensitivity evalue`) on the "
    "effect's own scale"
)


# --------------------------------------------------------------------------- model parts
def _check_ols(results):
    from statsmodels.regression.linear_model import OLS

    model = getattr(results, "model", None)
    if model is None or not hasattr(results, "params"):
        raise InputTypeError(
            f"`results` must be a fitted statsmodels model; got {type(results).__name__}"
        )
    if not isinstance(model, OLS) or not hasattr(results, "normalized_cov_params"):
        raise InputError(NOT_OLS.format(kind=type(model).__name__))
    if getattr(results, "normalized_cov_params", None) is None:
        raise InputError(NOT_OLS.format(kind="a regularized OLS fit"))
    cov_type = getattr(results, "cov_type", "nonrobust")
    return model, classical_errors_used(cov_type) if cov_type != "nonrobust" else []


def classical_errors_used(cov_type: str) -> list[str]:
    """Warn that a fit's robust or clustered errors give way to its classical ones; the note."""
    message = (
        f"the model's standard errors are {cov_type}; the partial-R² identities assume "
        "classical standard errors, so the classical ones of the same fit are used here"
    )
    warnings.warn(message, SensitivityWarning, stacklevel=4)
    return [message[0].upper() + message[1:] + "."]


def _term_groups(model, names):
    """Covariate name -> column indices: patsy terms when known, else a name rule."""
    spec = getattr(getattr(model, "data", None), "model_spec", None)
    slices = getattr(spec, "term_name_slices", None)
    if slices:
        return {term: list(range(len(names)))[sl] for term, sl in slices.items()}
    groups: dict[str, list[int]] = {}
    for i, name in enumerate(names):
        groups.setdefault(re.sub(r"\[[^\]]*\]", "", name), []).append(i)  # x[T.b] -> x
    return groups


def _intercepts(model, names):
    idx = getattr(getattr(model, "data", None), "const_idx", None)
    found = {idx} if idx is not None else set()
    return found | {i for i, n in enumerate(names) if n in ("Intercept", "const")}


def _find_treatment(treatment, names, groups):
    if treatment in names:
        return names.index(treatment)
    cols = groups.get(treatment)
    if cols is not None and len(cols) == 1:
        return cols[0]
    if cols is not None:
        raise InputError(
            f"`treatment` {treatment!r} spans {len(cols)} columns "
            f"({', '.join(names[i] for i in cols)}); name one of them, or code the "
            "treatment as a single 0/1 or numeric column"
        )
    raise InputError(
        f"`treatment` {treatment!r} is not a coefficient of the model; coefficients: "
        + ", ".join(names)
    )


def no_interaction(treatment: str, names: Sequence[str]) -> None:
    """Refuse a treatment that also enters an interaction term (no single coefficient)."""
    for name in names:
        parts = name.split(":")
        if len(parts) > 1 and treatment in parts:
            raise InputError(
                f"`treatment` {treatment!r} also enters the interaction {name!r}; partial-R² "
                "bounds need a single treatment coefficient (fit the model without the "
                "interaction, or analyse an effect at a fixed covariate value)"
            )


def _group_r2(params, cov, dof, cols):
    """Partial R² of a group of columns from their joint Wald F (t² for one column)."""
    b = params[cols]
    v = cov[np.ix_(cols, cols)]
    f_stat = float(b @ np.linalg.solve(v, b)) / len(cols)
    return float(partial_r2_of_f(f_stat, len(cols), dof))


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
        r2y = _group_r2(params, cov, dof, cols)
        r2t = _group_r2(t_params, t_cov, float(treat_fit.df_resid), [position[c] for c in cols])
        out.append(CovariateStrength(name, tuple(names[c] for c in cols), r2t, r2y))
    return tuple(out)


def _resolve_benchmark(name, covariates):
    by_name = {c.name: c for c in covariates}
    if name in by_name:
        return by_name[name]
    # A data column used inside a term: `region` for C(region), or a single dummy column.
    hits = [
        c
        for c in covariates
        if re.match(rf"C\(\s*{re.escape(name)}\s*[,)]", c.name) or name in c.columns
    ]
    if len(hits) == 1:
        return hits[0]
    raise InputError(
        f"`benchmark` {name!r} is not an observed covariate of the model; covariates: "
        + ", ".join(by_name)
    )


def _k_pairs(times, times_pairs):
    if times is None:
        times = () if times_pairs else (1.0,)
    pairs = [(float(require(k, "times", POSITIVE)),) * 2 for k in times]
    for kt, ky in times_pairs:
        pairs.append(
            (float(require(kt, "times_pair", POSITIVE)), float(require(ky, "times_pair", POSITIVE)))
        )
    return pairs


# --------------------------------------------------------------------------- entry points
def partial_r2_from_model(
    results: Any,
    treatment: str,
    *,
    fraction: float = 1.0,
    alpha: float = 0.05,
    benchmarks: Sequence[str] = (),
    times: Sequence[float] | None = None,
    times_pairs: Sequence[tuple[float, float]] = (),
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
    fraction, alpha, r2_treatment, r2_outcome
        As in `partial_r2_summary`.
    benchmarks : sequence of str
        Observed covariates (or categorical terms, taken as one group) to benchmark against.
    times : sequence of float, optional
        Multiples k: a confounder k times as strong as the benchmark on both sides (default
        1, unless `times_pairs` is given).
    times_pairs : sequence of (k_treatment, k_outcome)
        Separate multiples for the treatment and the outcome sides.
    contrast : float, default 1
        Treatment difference the E-value alongside refers to (per `contrast` units).

    Returns
    -------
    PartialR2Result
        With `covariates` (every covariate's partial R² on both sides), benchmark scenarios,
        and the E-value through the standardized-difference conversion (outcome SD from the
        fit's data).
    """
    model, fit_notes = _check_ols(results)
    names = list(model.exog_names)
    groups = _term_groups(model, names)
    j = _find_treatment(treatment, names, groups)
    treat_name = names[j]
    no_interaction(treat_name, names)
    cov = np.asarray(results.normalized_cov_params, float) * float(results.scale)
    covariates = covariate_strengths(results, j, groups, _intercepts(model, names))
    return partial_r2_from_parts(
        float(np.asarray(results.params)[j]), float(np.sqrt(cov[j, j])),
        float(results.df_resid), covariates, treatment=treat_name,
        outcome=str(model.endog_names), n=int(results.nobs),
        sd_outcome=float(np.std(np.asarray(model.endog, float), ddof=1)),
        notes=tuple(notes) + tuple(fit_notes), fraction=fraction, alpha=alpha,
        benchmarks=benchmarks, times=times, times_pairs=times_pairs,
        r2_treatment=r2_treatment, r2_outcome=r2_outcome, contrast=contrast,
    )  # fmt: skip


def partial_r2_from_parts(
    estimate: float,
    se: float,
    dof: float,
    covariates: tuple[CovariateStrength, ...],
    *,
    treatment: str,
    outcome: str,
    n: int,
    sd_outcome: float,
    fraction: float = 1.0,
    alpha: float = 0.05,
    benchmarks: Sequence[str] = (),
    times: Sequence[float] | None = None,
    times_pairs: Sequence[tuple[float, float]] = (),
    r2_treatment: ArrayLike | None = None,
    r2_outcome: ArrayLike | None = None,
    contrast: float = 1.0,
    notes: Sequence[str] = (),
) -> PartialR2Result:
    """The result from a fit's treatment coefficient and covariate strengths (any library)."""
    est, se, dof, fraction, alpha = check_summary(estimate, se, dof, None, fraction, alpha)
    scenarios = []
    k_pairs = _k_pairs(times, times_pairs)
    for name in benchmarks:
        cov_strength = _resolve_benchmark(name, covariates)
        scenarios += benchmark_scenarios(est, se, dof, cov_strength, k_pairs, alpha)
    return assemble(
        est, se, dof, fraction=fraction, alpha=alpha, r2_treatment=r2_treatment,
        r2_outcome=r2_outcome, sd_outcome=sd_outcome, contrast=contrast,
        scenarios=scenarios, treatment=treatment, outcome=outcome, n=n,
        covariates=covariates, notes=tuple(notes),
    )  # fmt: skip


def formula_columns(formula: str) -> tuple[list[str], list[str]]:
    """The data columns a formula reads, left side and right side, from its terms' code.

    Names that are called (``C(x)``, ``np.log(x)``) or reached through an attribute are
    functions, not columns; ``Q("a b")`` names a column by its string.
    """
    import ast

    if not isinstance(formula, str) or "~" not in formula:
        raise InputError(f"`formula` must look like 'y ~ t + x1 + x2'; got {formula!r}")
    sides = formula.split("~", 1)
    found: list[list[str]] = [[], []]
    for side, text in enumerate(sides):
        for piece in re.split(r"[+*:|/]|\*\*|-(?![^()]*\))", text):
            piece = piece.strip()
            if not piece or piece in ("0", "1", "-1"):
                continue
            try:
                tree = ast.parse(piece, mode="eval")
            except SyntaxError:
                continue  # left to the formula engine, which names the problem
            calls = {id(n.func) for n in ast.walk(tree) if isinstance(n, ast.Call)}
            attrs = {id(n.value) for n in ast.walk(tree) if isinstance(n, ast.Attribute)}
            for node in ast.walk(tree):
                if isinstance(node, ast.Call) and getattr(node.func, "id", "") == "Q":
                    if node.args and isinstance(node.args[0], ast.Constant):
                        found[side].append(str(node.args[0].value))
                elif (
                    isinstance(node, ast.Name)
                    and id(node) not in calls
                    and id(node) not in attrs
                    and node.id not in ("True", "False", "None")
                ):
                    found[side].append(node.id)
    return found[0], found[1]


def check_names(data: Any, formula: str, treatment: str, benchmarks: Any = ()) -> None:
    """Refuse, before any fit, a formula, treatment or benchmark naming a missing column."""
    left, right = formula_columns(formula)
    columns = [str(c) for c in data.columns]
    shown = ", ".join(columns[:30]) + (", ..." if len(columns) > 30 else "")
    for name in left + right:
        if name not in columns:
            raise InputError(
                f"`formula` uses column {name!r}, which is not in the data; columns: {shown}"
            )
    if treatment not in columns and not re.search(r"[\[\](]", treatment):
        raise InputError(f"`treatment` {treatment!r} is not a column of the data; columns: {shown}")
    if treatment in columns and treatment not in right:
        raise InputError(
            f"`treatment` {treatment!r} is a column of the data but not a term of the "
            f"formula's right side: {formula.split('~', 1)[1].strip()}"
        )
    for name in benchmarks:
        if name not in columns and not any(name == c or name in c for c in right):
            raise InputError(f"`benchmark` {name!r} is not a column of the data; columns: {shown}")
        if name in columns and name not in right:
            raise InputError(
                f"`benchmark` {name!r} is not in the formula: a benchmark must be a measured "
                "covariate of the model"
            )


def fit_formula(data: Any, formula: str) -> tuple[Any, list[str]]:
    """Fit OLS of `formula` on a DataFrame; ValueError names `formula` for any problem."""
    import statsmodels.formula.api as smf
    from pandas.api.types import is_numeric_dtype

    if not isinstance(formula, str) or "~" not in formula:
        raise InputError(f"`formula` must look like 'y ~ t + x1 + x2'; got {formula!r}")
    outcome = formula.split("~", 1)[0].strip()
    if outcome in data.columns and not is_numeric_dtype(data[outcome]):
        raise InputError(f"`formula`: the outcome column {outcome!r} must be numeric")
    try:
        results = smf.ols(formula, data=data).fit()
    except Exception as err:  # noqa: BLE001 - patsy/formulaic errors are the user's formula
        text = " ".join(str(err).split()) or type(err).__name__
        raise InputError(f"`formula` {formula!r} could not be fitted: {text[:300]}") from None
    if results.model.endog.ndim > 1 and results.model.endog.shape[1] > 1:
        raise InputError(f"`formula`: the outcome {outcome!r} must be a single numeric column")
    dropped = len(data) - int(results.nobs)
    notes = []
    if dropped:
        notes.append(
            f"{dropped} of {len(data)} rows had missing values in the model's "
            "columns and were left out of the fit."
        )
    if results.df_resid < 2:
        raise InputError(
            f"`data`: the fit has {results.df_resid:g} residual degrees of freedom; need at least 2"
        )
    return results, notes


def partial_r2_from_data(
    data: Any, formula: str, treatment: str, **options: Any
) -> PartialR2Result:
    """Fit `formula` by OLS on `data` (a DataFrame or a file path) and analyse `treatment`.

    Categorical covariates (strings or ``C(x)``) work and benchmark as one group. Options are
    those of `partial_r2_from_model`. The data are read once, in batches, into the R factor
    of the design's QR decomposition (`sensitivity.adapters.onepass`): the numbers equal a
    statsmodels fit's, in memory that does not grow with the number of rows.
    """
    from .onepass import partial_r2_one_pass

    return partial_r2_one_pass(data, formula, treatment, **options)
