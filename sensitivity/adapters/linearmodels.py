"""linearmodels adapter: PanelOLS (entity, time or both effects absorbed) and PooledOLS fits
into partial-R² results.

With classical standard errors the within (demeaned) regression gives the treatment's t and
residual degrees of freedom that the same fit with one dummy per absorbed unit would give, so
the partial-R² identities hold unchanged. The covariate table costs one more fit: the treatment
on the other covariates with the same absorbed effects.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from ..common.errors import InputError
from ..partial_r2.result import CovariateStrength, PartialR2Result
from .design import (
    classical_errors_used,
    group_r2,
    no_interaction,
    partial_r2_from_parts,
    term_groups,
)

#: The linearmodels estimators whose fits are least squares with absorbed effects.
SUPPORTED = ("PanelOLS", "PooledOLS")


def _model(results: Any) -> tuple[Any, list[str]]:
    model = results.model
    kind = type(model).__name__
    if kind not in SUPPORTED:
        raise InputError(
            f"partial-R² bounds need a least-squares fit; got linearmodels {kind}. Supported: "
            + ", ".join(SUPPORTED)
            + "; for IV, random-effects and other fits use the E-value route on their scale"
        )
    weights = getattr(model, "weights", None)
    if weights is not None and not np.allclose(np.asarray(weights.values2d, float), 1.0):
        raise InputError(
            "`results` is a weighted fit; partial-R² bounds need unweighted OLS", "results"
        )
    if getattr(model, "other_effects", False):
        raise InputError(
            "`results` absorbs other effects; only entity and time effects are read", "results"
        )
    notes = []
    if str(results._cov_type) != "Unadjusted":
        notes += classical_errors_used(str(results._cov_type))
    if kind == "PanelOLS":
        effects = [n for n, on in (("entity", model.entity_effects), ("time", model.time_effects))
                   if on]  # fmt: skip
        if effects:
            notes.append(f"{' and '.join(effects).capitalize()} effects absorbed (PanelOLS).")
    return model, notes


def _refit(model: Any, dependent: Any, exog: Any) -> Any:
    """The same estimator, effects and data, on another outcome (classical errors)."""
    cls = type(model)
    if type(model).__name__ == "PanelOLS":
        return cls(dependent, exog, entity_effects=model.entity_effects,
                   time_effects=model.time_effects).fit()  # fmt: skip
    return cls(dependent, exog).fit()


def partial_r2_from_linearmodels(
    results: Any, treatment: str, *, notes: Sequence[str] = (), **options: Any
) -> PartialR2Result:
    """Partial-R² sensitivity of the `treatment` coefficient of a linearmodels PanelOLS or
    PooledOLS fit; options as in `partial_r2_from_model`."""
    model, fit_notes = _model(results)
    if str(results._cov_type) != "Unadjusted":
        results = _refit(model, model.dependent.dataframe, model.exog.dataframe)
    names = [str(c) for c in results.params.index]
    if treatment not in names:
        raise InputError(
            f"`treatment` {treatment!r} is not a coefficient of the model; coefficients: "
            + ", ".join(names),
            "treatment",
        )
    no_interaction(treatment, names)
    j = names.index(treatment)
    params = np.asarray(results.params, float)
    cov = np.asarray(results.cov, float)
    dof = float(results.df_resid)
    exog = model.exog.dataframe
    others = [c for c in exog.columns if str(c) != treatment]
    covariates: list[CovariateStrength] = []
    if others:
        treat_fit = _refit(model, exog[[exog.columns[j]]], exog[others])
        t_params = np.asarray(treat_fit.params, float)
        t_cov = np.asarray(treat_fit.cov, float)
        position = {str(c): k for k, c in enumerate(others)}
        for name, cols in term_groups(None, names).items():
            cols = [c for c in cols if c != j and names[c] not in ("Intercept", "const")]
            if not cols:
                continue
            r2y = group_r2(params, cov, dof, cols)
            r2t = group_r2(t_params, t_cov, float(treat_fit.df_resid),
                            [position[names[c]] for c in cols])  # fmt: skip
            covariates.append(CovariateStrength(name, tuple(names[c] for c in cols), r2t, r2y))
    y = np.asarray(model.dependent.values2d, float).ravel()
    return partial_r2_from_parts(
        float(params[j]), float(np.sqrt(cov[j, j])), dof, tuple(covariates),
        treatment=treatment, outcome=str(model.dependent.vars[0]), n=int(results.nobs),
        sd_outcome=float(np.std(y, ddof=1)), notes=tuple(notes) + tuple(fit_notes), **options,
    )  # fmt: skip
