"""Coefficient stability from data: the short and long OLS fits (statsmodels) and the
auxiliary regression of the treatment on the controls, into `stability.coefficient_stability`.
"""

from __future__ import annotations

from typing import Any

from ..stability.result import StabilityResult


def stability_inputs_from_data(
    data: Any, formula_short: str, formula_long: str, treatment: str
) -> dict[str, float]:
    """The numbers `coefficient_stability` takes, from two OLS fits on `data` (a DataFrame or
    a file path): each model's treatment coefficient and R², the outcome's and the
    treatment's variances, and the variance of the treatment's residual on the long model's
    controls (all on the long model's rows)."""
    import numpy as np
    import statsmodels.api as sm

    from ..common.errors import InputError
    from .design import check_names

    if hasattr(data, "columns"):
        frame = data
    else:
        from .files import read_table

        frame = read_table(data, "data")
    for argument, formula in (("formula_short", formula_short), ("formula_long", formula_long)):
        try:
            check_names(frame, formula, treatment)
        except InputError as err:  # the shared check knows one `formula`
            raise err.renamed({"formula": argument}) from None
    fit_short, _ = _fitted(frame, formula_short, "formula_short")
    fit_long, _ = _fitted(frame, formula_long, "formula_long")
    if int(fit_short.nobs) != int(fit_long.nobs):
        raise InputError(
            "`formula_short` and `formula_long` must be fitted on the same rows",
            ("formula_short", "formula_long"),
        )
    if treatment not in fit_long.params.index:
        raise InputError(
            f"`treatment` {treatment!r} is not a coefficient of the long model", "treatment"
        )
    _check_nested(fit_short, fit_long, treatment)
    rows = fit_long.model.data.row_labels
    # the treatment on the long model's controls: its design without the treatment's column
    names = list(fit_long.model.exog_names)
    controls = np.delete(np.asarray(fit_long.model.exog, float), names.index(treatment), axis=1)
    aux = sm.OLS(np.asarray(frame.loc[rows, treatment], float), controls).fit()
    y = np.asarray(fit_long.model.endog, float)
    x = np.asarray(frame.loc[rows, treatment], float)
    return {
        "estimate_short": float(fit_short.params[treatment]),
        "r2_short": float(fit_short.rsquared),
        "estimate_long": float(fit_long.params[treatment]),
        "r2_long": float(fit_long.rsquared),
        "var_outcome": float(np.var(y)),
        "var_treatment": float(np.var(x)),
        "var_treatment_residual": float(np.var(aux.resid)),
    }


def coefficient_stability_from_data(
    data: Any,
    formula_short: str,
    formula_long: str,
    treatment: str,
    *,
    r2_max: float | None = None,
    delta: float = 1.0,
    target: float = 0.0,
) -> StabilityResult:
    """Coefficient stability (Oster 2019) of `treatment` from `data` (a DataFrame or a file
    path): fits `formula_short` and `formula_long` by OLS and solves the cubic exactly with
    the variances from the data (`stability_inputs_from_data`).

    Examples
    --------
    Invented numbers: an outcome that moves with the treatment and with one control.

    >>> import pandas as pd
    >>> frame = pd.DataFrame({"y": [3.1, 4.0, 5.2, 5.9, 7.1, 8.2, 8.8, 10.1],
    ...                       "t": [0, 1, 0, 1, 0, 1, 0, 1],
    ...                       "x": [1.0, 1.4, 2.1, 2.4, 3.2, 3.5, 3.9, 4.6]})
    >>> res = coefficient_stability_from_data(frame, "y ~ t", "y ~ t + x", "t")
    >>> res.estimate_long == stability_inputs_from_data(frame, "y ~ t", "y ~ t + x", "t")[
    ...     "estimate_long"]
    True
    """
    from ..stability.core import coefficient_stability

    numbers = stability_inputs_from_data(data, formula_short, formula_long, treatment)
    return coefficient_stability(**numbers, r2_max=r2_max, delta=delta, target=target)


def _check_nested(fit_short: Any, fit_long: Any, treatment: str) -> None:
    """The method compares one outcome's model with and without the controls: the long
    model has the short one's outcome and every one of its terms, adds at least one, and
    holds the treatment alone (no interaction of it), so that its coefficient is one number.
    Anything else used to give a result that answered no question."""
    from ..common.errors import InputError

    short_y, long_y = fit_short.model.endog_names, fit_long.model.endog_names
    if short_y != long_y:
        raise InputError(
            f"`formula_short` and `formula_long` must model the same outcome; got {short_y!r} "
            f"and {long_y!r}",
            ("formula_short", "formula_long"),
        )
    short_x, long_x = list(fit_short.model.exog_names), list(fit_long.model.exog_names)
    for argument, names in (("formula_short", short_x), ("formula_long", long_x)):
        mixed = [n for n in names if n != treatment and treatment in n.split(":")]
        if mixed:
            raise InputError(
                f"`{argument}` holds an interaction of the treatment ({mixed[0]!r}): coefficient "
                f"stability takes the treatment's one coefficient beside additive controls",
                argument,
            )
    missing = [n for n in short_x if n not in long_x]
    if missing:
        raise InputError(
            f"`formula_long` must hold every term of `formula_short` (the short model's "
            f"controls, if any, plus more); {missing[0]!r} is not in it",
            ("formula_long", "formula_short"),
        )
    if len(long_x) == len(short_x):
        raise InputError(
            "`formula_long` must add at least one control to `formula_short`; it adds none",
            ("formula_long", "formula_short"),
        )


def _fitted(frame: Any, formula: str, argument: str) -> Any:
    """`fit_formula`, its errors naming the formula as `argument`."""
    from ..common.errors import InputError
    from .statsmodels import fit_formula

    try:
        return fit_formula(frame, formula)
    except InputError as err:
        raise err.renamed({"formula": argument}) from None
