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
    import statsmodels.formula.api as smf

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
    terms = [t.strip() for t in formula_long.split("~", 1)[1].split("+")]
    controls = " + ".join(t for t in terms if t != treatment) or "1"
    rows = fit_long.model.data.row_labels
    aux = smf.ols(f"{treatment} ~ {controls}", frame.loc[rows]).fit()
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


def _fitted(frame: Any, formula: str, argument: str) -> Any:
    """`fit_formula`, its errors naming the formula as `argument`."""
    from ..common.errors import InputError
    from .statsmodels import fit_formula

    try:
        return fit_formula(frame, formula)
    except InputError as err:
        raise err.renamed({"formula": argument}) from None
