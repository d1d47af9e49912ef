"""A formula fitted in memory (statsmodels), and the rules an outcome must keep for each
model, in our own words.

statsmodels and patsy word what they refuse for their own readers ("endog must be in the unit
interval", "Error evaluating factor: ..." with a caret line, "tuple index out of range"). The
data routes say instead which column broke which rule, with the value: the same words from the
fit made in memory (`fit`) and from the fit made in passes over pieces (`glm`).
"""

from __future__ import annotations

import warnings
from typing import Any

import numpy as np

from ..common.errors import InputError
from .errors import (
    check_errors,
    cluster_groups,
    default_errors,
    is_binary,
    parse_errors,
    robust_refit,
)

KINDS = ("ols", "logit", "poisson", "negbin", "cox")

#: How each model's outcome is described in a rule.
_WHAT = {"logit": "logit", "poisson": "Poisson", "negbin": "negative binomial", "cox": "Cox"}


def outcome_name(formula: str) -> str:
    """The formula's left side as written (a column, or an expression of one)."""
    return formula.split("~", 1)[0].strip()


def range_problem(model: str, name: str, low: float, high: float) -> str | None:
    """The rule an outcome whose values run from `low` to `high` breaks for `model` (as a
    message naming the column and the value), or None. Cox: the left side is the time."""
    if not (np.isfinite(low) and np.isfinite(high)):
        return None  # (a missing or infinite cell is refused where the data are read)
    if model == "logit" and (low < 0 or high > 1):
        value = low if low < 0 else high
        return (f"`formula`: a logit outcome must be 0/1 (or a share between 0 and 1); "
                f"{name!r} has {value:g}")  # fmt: skip
    if model in ("poisson", "negbin") and low < 0:
        return (f"`formula`: a {_WHAT[model]} outcome is a count (or a rate) and must not be "
                f"negative; {name!r} has {low:g}")  # fmt: skip
    if model == "cox" and low < 0:
        return (f"`formula`: a Cox fit's time (the left side) must not be negative; {name!r} "
                f"has {low:g}")  # fmt: skip
    return None


def constant_problem(model: str, name: str, low: float, high: float) -> str | None:
    """The rule an outcome that takes one value in every row used breaks, or None."""
    if low != high or model not in ("logit", "poisson", "negbin", "ols"):
        return None
    if model == "ols":
        return (f"`formula`: the outcome {name!r} is {low:g} in every row the fit uses; a "
                "regression needs an outcome that varies")  # fmt: skip
    if model == "logit":
        return (f"`formula`: the outcome {name!r} is {low:g} in every row the fit uses; a "
                "logit fit needs rows with and without the outcome")  # fmt: skip
    if low == 0:
        return (f"`formula`: the outcome {name!r} is 0 in every row the fit uses; a "
                f"{_WHAT[model]} fit needs some events")  # fmt: skip
    return None


def event_problem(event: str, values: Any) -> str | None:
    """The rule a Cox fit's event column breaks (0/1, at least one event), or None."""
    v = np.asarray(values, float)
    v = v[np.isfinite(v)]
    odd = v[(v != 0) & (v != 1)]
    if odd.size:
        return (f"`event`: the column {event!r} must be 1 for an event and 0 for none; got "
                f"{odd[0]:g}")  # fmt: skip
    if v.size and not (v == 1).any():
        return f"`event`: the column {event!r} has no event (no 1) in the rows the fit uses"
    return None


def _check_rank(data: Any, formula: str) -> None:
    """After a failed fit: refuse a design whose columns are linearly dependent (a constant
    treatment, a column twice), which the failure's own words would not say."""
    import patsy

    try:
        _, x = patsy.dmatrices(formula, data, NA_action="drop", eval_env=1)
    except Exception:  # noqa: BLE001 - the fit's own failure is reported instead
        return
    x = np.asarray(x, float)
    if x.size and (rank := int(np.linalg.matrix_rank(x))) < x.shape[1]:
        raise InputError(
            f"`formula` {formula!r}: its columns are linearly dependent in these data (rank "
            f"{rank} of {x.shape[1]}), so its coefficients are not identified; drop a column "
            "that the others reproduce (or a treatment or covariate that does not vary)",
            "formula",
        )


def check_fitted(model: str, formula: str, endog: Any, status: Any = None,
                 event: str | None = None) -> None:  # fmt: skip
    """Refuse a fit made (statsmodels' or ours) whose outcome breaks its model's rule in the
    rows it used: some fits run on such data and give an answer that means nothing."""
    y = np.asarray(endog, float).ravel()
    if y.size == 0:
        return
    name = outcome_name(formula)
    low, high = float(np.min(y)), float(np.max(y))
    problem = range_problem(model, name, low, high) or constant_problem(model, name, low, high)
    if problem is None and status is not None and event is not None:
        problem = event_problem(event, status)
    if problem is not None:
        raise InputError(problem, "event" if problem.startswith("`event`") else "formula")


def check_outcome_column(data: Any, formula: str, model: str, event: str | None) -> None:
    """The rules, on the rows whose formula columns all have a value: for a fit that failed,
    to say why in our words rather than the fitting library's."""
    from .design import formula_columns

    left, right = formula_columns(formula)
    name = outcome_name(formula)
    columns = [c for c in dict.fromkeys(left + right + ([event] if event else []))
               if c in data.columns]  # fmt: skip
    if name not in data.columns:
        return  # an expression of a column: its values are not at hand
    rows = data[columns].dropna()
    try:
        y = np.asarray(rows[name], float)
    except (TypeError, ValueError):
        return  # a text outcome is refused by its own check
    status = rows[event] if event and event in rows.columns else None
    check_fitted(model, formula, y, status, event)


def formula_failure(err: BaseException, formula: str, model: str | None = None,
                    argument: str = "formula") -> InputError:  # fmt: skip
    """A formula a fit could not use, in one line: the term patsy could not evaluate, and why,
    without patsy's caret display; else the library's own words, cut short. `argument`: the
    argument that holds the formula."""
    shown = f" ({model})" if model else ""
    said = f"`{argument}` {formula!r}"
    origin = getattr(err, "origin", None)
    message = getattr(err, "message", None)
    if origin is not None and isinstance(message, str):
        term = str(origin.code)[origin.start : origin.end]
        cause = err.__cause__ or err.__context__
        why = " ".join(str(cause).split()) if cause is not None else ""
        why = why or message.removeprefix("Error evaluating factor: ")
        if message.startswith("Error evaluating factor"):
            return InputError(f"{said}: the term {term!r} could not be evaluated: {why[:200]}",
                              argument)  # fmt: skip
        return InputError(f"{said} could not be read: {message[:200]} (at {term!r})", argument)
    text = " ".join(str(err).split()) or type(err).__name__
    return InputError(f"{said} could not be fitted{shown}: {text[:240]}", argument)


def _converged(results: Any) -> None:
    retvals = getattr(results, "mle_retvals", None)
    converged = getattr(results, "converged", None)
    if retvals is not None and retvals.get("converged") is False or converged is False:
        raise InputError(
            "`results`: the model did not converge; its estimate cannot be used", "results"
        )


def _binary_column(data: Any, formula: str) -> bool:
    """Whether the formula's outcome is a column of 0s and 1s (both present)."""
    name = outcome_name(formula)
    if name not in data.columns:
        return False
    try:
        return is_binary(np.asarray(data[name].dropna(), float))
    except (TypeError, ValueError):
        return False


def fit(
    data: Any, formula: str, model: str, event: str | None = None, errors: str | None = None
) -> Any:
    """Fit `formula` on a DataFrame with the statsmodels model `model` names; InputError for a
    formula, outcome or event the fit cannot use, no convergence, and perfect separation.
    `errors` (classical, hc0-hc3, cluster:COL; see `adapters.errors`) chooses the standard
    errors: by default hc0 for a Poisson fit of a 0/1 outcome, and classical otherwise."""
    import statsmodels.formula.api as smf

    from .textcells import refuse_numbers_in_frame

    if errors is not None:
        kind, column = parse_errors(errors)
        check_errors(model, kind)
    if model not in KINDS:
        raise InputError(f"`model` must be one of {', '.join(KINDS)}; got {model!r}", "model")
    if model == "cox" and event is None:
        raise InputError(
            "`event` is needed with model cox: the column that is 1 for an event", "event"
        )
    if model != "cox" and event is not None:
        raise InputError(f"`event` applies to model cox only; got model {model}", "event")
    if event is not None and event not in data.columns:
        columns = [str(c) for c in data.columns]
        shown = ", ".join(columns[:30]) + (", ..." if len(columns) > 30 else "")
        raise InputError(
            f"`event` {event!r} is not a column of the data; columns: {shown}", "event"
        )
    if event is not None:
        from pandas.api.types import is_bool_dtype, is_numeric_dtype

        if not (is_numeric_dtype(data[event]) or is_bool_dtype(data[event])):
            raise InputError(f"`event`: the column {event!r} must be 1 for an event and 0 for "
                             "none; it holds text", "event")  # fmt: skip
    refuse_numbers_in_frame(data, formula)  # a stray word would make each number a category
    fitters = {
        "ols": lambda: smf.ols(formula, data).fit(),
        "logit": lambda: smf.logit(formula, data).fit(disp=0),
        "poisson": lambda: smf.poisson(formula, data).fit(disp=0),
        "negbin": lambda: smf.negativebinomial(formula, data).fit(disp=0, maxiter=200),
        "cox": lambda: smf.phreg(formula, data, status=data[event].to_numpy()).fit(),
    }
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # separation and non-convergence are the user's data
        try:
            results = fitters[model]()
        except Exception as err:  # noqa: BLE001 - a fit failure is the data's or formula's
            if getattr(err, "origin", None) is not None:  # patsy's: a term of the formula
                raise formula_failure(err, formula, model) from None
            # then the rule the outcome breaks, in our words (not the library's)
            check_outcome_column(data, formula, model, event)
            _check_rank(data, formula)
            if model == "negbin" and _binary_column(data, formula):
                raise InputError(
                    f"`model` negbin: the outcome {outcome_name(formula)!r} is 0/1, and a "
                    "negative binomial fit (for over-dispersed counts) failed on it; use logit, "
                    "or poisson (robust errors) for a risk ratio",
                    "model",
                ) from None
            text = " ".join(str(err).split()) or type(err).__name__
            if "separation" in text.lower():
                raise InputError(
                    f"`data`: perfect separation in the {model} fit: a covariate or the "
                    "treatment predicts the outcome exactly, so the estimate is not defined",
                    "data",
                ) from None
            if "converge" in text.lower():
                raise InputError(
                    f"`data`: the {model} fit did not converge ({text[:120]})", "data"
                ) from None
            raise formula_failure(err, formula, model) from None
    _converged(results)
    status = getattr(results.model, "status", None) if model == "cox" else None
    check_fitted(model, formula, results.model.endog, status, event)
    if model == "cox":  # no intercept: a column that does not vary is the baseline's, and
        exog = np.asarray(results.model.exog, float)  # PHReg still gives it a coefficient
        flat = [n for n, v in zip(results.model.exog_names, np.ptp(exog, axis=0), strict=True)
                if v == 0]  # fmt: skip
        if flat and exog.shape[0]:
            raise InputError(
                f"`formula` {formula!r}: {flat[0]!r} takes one value in every row the fit "
                "uses; a Cox fit cannot estimate its effect (the baseline hazard absorbs it)",
                "formula",
            )
    if errors is None:
        kind, column = default_errors(model, results.model.endog), None
    if kind == "classical":
        return results
    if model == "cox" and kind not in ("hc0", "cluster"):
        raise InputError(
            f"`errors` {kind}: a Cox fit takes classical, hc0 or cluster:COLUMN", "errors"
        )
    groups = cluster_groups(data, results, column) if column else None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the refit starts at the first fit's estimate
        return robust_refit(results, model, kind, groups)
