"""The data route of the weighting family: a table (a DataFrame or a file), a propensity
formula or a column of fitted propensities, into `weighting_bounds` on arrays.

pandas and patsy are used here only; the bounds themselves (core.py) see numpy arrays.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from ..common.errors import InputError
from .result import WeightingResult


def _columns_shown(frame: Any) -> str:
    columns = [str(c) for c in frame.columns]
    return ", ".join(columns[:30]) + (", ..." if len(columns) > 30 else "")


def _column(frame: Any, name: str, argument: str) -> None:
    if name not in frame.columns:
        raise InputError(
            f"`{argument}` {name!r} is not a column of the data; columns: {_columns_shown(frame)}",
            argument,
        )


def weighted_sensitivity(
    data: Any,
    treatment: str,
    outcome: str,
    *,
    propensity: str | None = None,
    propensity_column: str | None = None,
    **options: Any,
) -> WeightingResult:
    """Bounds on the weighted effect of `treatment` on `outcome` under the marginal
    sensitivity model, from a table.

    Parameters
    ----------
    data : pandas DataFrame, or a path to a CSV, TSV, Excel or Parquet file
    treatment, outcome : str
        Column names: a 0/1 treatment; a numeric outcome (binary 0/1 or continuous).
    propensity : str
        A logistic propensity model as a formula, "T ~ x1 + x2 + C(region)" (its left side
        is the treatment); fitted here and refitted in every resample.
    propensity_column : str
        Or a column of fitted propensities (kept fixed in the resamples).
    **options
        Those of `sensitivity.weighting.weighting_bounds` (estimand, lam, resamples, seed,
        alpha, target, extreme, cut, progress).

    Rows with a missing value in any column used are left out, and a note says how many.
    """
    import pandas as pd
    from pandas.api.types import is_bool_dtype, is_numeric_dtype

    from .core import weighting_bounds

    if (propensity is None) == (propensity_column is None):
        raise InputError(
            "give `propensity` (a formula) or `propensity_column`, one of them",
            ("propensity", "propensity_column"),
        )
    if isinstance(data, (str, Path)):
        from ..adapters.files import read_table

        frame = read_table(data, "data")
    elif isinstance(data, pd.DataFrame):
        frame = data
    else:
        raise InputError(
            f"`data` must be a pandas DataFrame or a file path; got {type(data).__name__}", "data"
        )
    if treatment == outcome:
        raise InputError(
            f"`outcome` must be another column than `treatment`; got {outcome!r} twice",
            ("outcome", "treatment"),
        )
    _column(frame, treatment, "treatment")
    _column(frame, outcome, "outcome")
    for name, argument in ((outcome, "outcome"), (treatment, "treatment")):
        col = frame[name]
        if not (is_numeric_dtype(col) or is_bool_dtype(col)):
            raise InputError(
                f"`{argument}` column {name!r} must be numeric; got values like "
                f"{col.dropna().astype(str).iloc[0]!r}"
                if col.notna().any()
                else f"`{argument}` column {name!r} must be numeric",
                argument,
            )
    used = [treatment, outcome]
    notes: list[str] = []
    if propensity_column is not None:
        _column(frame, propensity_column, "propensity_column")
        if not is_numeric_dtype(frame[propensity_column]):
            raise InputError(
                f"`propensity_column` {propensity_column!r} must be numeric", "propensity_column"
            )
        used.append(propensity_column)
        sub = frame[used].dropna()
        _dropped(len(frame), len(sub), notes)
        return weighting_bounds(
            sub[outcome].to_numpy(float), sub[treatment].to_numpy(float),
            propensity=sub[propensity_column].to_numpy(float), names=(treatment, outcome),
            notes=tuple(notes), **options,
        )  # fmt: skip
    design, names, rows = _design(frame, str(propensity), treatment, outcome)
    sub = frame.loc[rows, [treatment, outcome]]
    bad = sub.isna().any(axis=1).to_numpy()
    _dropped(len(frame), int((~bad).sum()), notes)
    return weighting_bounds(
        sub[outcome].to_numpy(float)[~bad], sub[treatment].to_numpy(float)[~bad],
        covariates=design[~bad], names=(treatment, outcome), covariate_names=tuple(names),
        notes=tuple(notes), **options,
    )  # fmt: skip


def _dropped(before: int, after: int, notes: list[str]) -> None:
    if after < before:
        notes.append(
            f"{before - after} of {before} rows had missing values in the columns used and "
            "were left out."
        )


def _design(frame: Any, formula: str, treatment: str, outcome: str) -> tuple:
    """The propensity formula's right-hand design (patsy), its column names and the rows
    kept (rows with a missing covariate are dropped)."""
    import patsy

    from ..adapters.design import formula_columns

    if "~" not in formula:
        raise InputError(
            f"`propensity` must look like 'T ~ x1 + x2'; got {formula!r}", "propensity"
        )
    left, right = formula_columns(formula)
    for name in left + right:
        if name not in frame.columns:
            raise InputError(
                f"`propensity` uses column {name!r}, which is not in the data; columns: "
                f"{_columns_shown(frame)}",
                "propensity",
            )
    if left and left != [treatment]:
        raise InputError(
            f"`propensity`: the formula's left side must be the treatment {treatment!r}; "
            f"got {formula.split('~', 1)[0].strip()!r}",
            "propensity",
        )
    if outcome in right:
        raise InputError(
            f"`propensity` must not use the outcome {outcome!r} as a covariate", "propensity"
        )
    from ..adapters.textcells import refuse_numbers_in_frame

    refuse_numbers_in_frame(frame, formula)  # "12.5%" or a stray word: not categories unasked
    rhs = formula.split("~", 1)[1]
    try:
        matrix = patsy.dmatrix(rhs, frame, NA_action="drop", return_type="dataframe")
    except Exception as err:  # noqa: BLE001 - patsy's errors are the user's formula
        from ..adapters.fitting import formula_failure

        raise formula_failure(err, formula, argument="propensity") from None
    names = [str(c) for c in matrix.columns]
    if "Intercept" not in names:
        raise InputError(
            "`propensity` must keep its intercept (drop the '- 1' or '+ 0')", "propensity"
        )
    return matrix.to_numpy(float), names, matrix.index
