"""pyfixest adapter: `feols` fits (fixed effects absorbed) into partial-R² results.

The fit's demeaned outcome and regressors are refitted here by plain least squares (the
Frisch-Waugh-Lovell theorem: the same coefficients as the fit), with classical errors on the
residual degrees of freedom (n minus the coefficients and the rank of the absorbed effects),
so the partial-R² identities hold whatever standard errors the fit reported. The covariate table
regresses the demeaned treatment on the other demeaned covariates.
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


def _least_squares(X: np.ndarray, y: np.ndarray, dof: float) -> tuple[np.ndarray, np.ndarray]:
    """Coefficients and classical covariance of y on X with `dof` residual degrees of freedom."""
    gram = X.T @ X
    params = np.linalg.solve(gram, X.T @ y)
    resid = y - X @ params
    return params, float(resid @ resid) / dof * np.linalg.inv(gram)


def absorbed_levels(codes: Any) -> int:
    """The dimension the fixed effects absorb: the rank of their dummy columns. One effect:
    its levels; two: the levels of both less one per connected component of the graph that
    links the levels seen together (exact); more are refused."""
    if codes is None:
        return 0
    frame = np.asarray(codes)
    if frame.ndim == 1:
        frame = frame[:, None]
    if frame.shape[1] > 2:
        raise InputError(
            "`results` absorbs more than two fixed effects; their rank is not read here. "
            "Refit with at most two absorbed effects and the rest as dummy covariates",
            "results",
        )
    levels = [np.unique(frame[:, c], return_inverse=True)[1] for c in range(frame.shape[1])]
    sizes = [int(lv.max()) + 1 for lv in levels]
    if len(levels) == 1:
        return sizes[0]
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    a, b = levels
    graph = coo_matrix((np.ones(a.size), (a, b + sizes[0])), shape=(sum(sizes),) * 2)
    components, _ = connected_components(graph, directed=False)
    return sum(sizes) - components


def partial_r2_from_pyfixest(
    results: Any, treatment: str, *, notes: Sequence[str] = (), **options: Any
) -> PartialR2Result:
    """Partial-R² sensitivity of the `treatment` coefficient of a pyfixest `feols` fit;
    options as in `partial_r2_from_model`."""
    if type(results).__name__ != "Feols" or getattr(results, "_is_iv", False):
        raise InputError(
            f"partial-R² bounds need a least-squares fit; got pyfixest {type(results).__name__}"
            " (for IV, Poisson and other fits use the E-value route on their scale)"
        )
    if getattr(results, "_has_weights", False):
        raise InputError(
            "`results` is a weighted fit; partial-R² bounds need unweighted OLS", "results"
        )
    names = [str(c) for c in results._coefnames]
    if treatment not in names:
        raise InputError(
            f"`treatment` {treatment!r} is not a coefficient of the model; coefficients: "
            + ", ".join(names),
            "treatment",
        )
    no_interaction(treatment, names)
    fit_notes = []
    if str(results._vcov_type) != "iid":
        fit_notes += classical_errors_used(str(results._vcov_type))
    if getattr(results, "_has_fixef", False):
        fit_notes.append(f"Fixed effects absorbed: {results._fixef} (pyfixest).")
    X = np.asarray(results._X, float)
    y = np.asarray(results._Y, float).ravel()
    fe = getattr(results, "_fe", None) if getattr(results, "_has_fixef", False) else None
    n = int(results._N)
    dof = float(n - X.shape[1] - absorbed_levels(fe))
    params, cov = _least_squares(X, y, dof)
    j = names.index(treatment)
    others = [i for i in range(len(names)) if i != j]
    covariates: list[CovariateStrength] = []
    if others:
        t_params, t_cov = _least_squares(X[:, others], X[:, j], dof + 1)
        position = {c: k for k, c in enumerate(others)}
        for name, cols in term_groups(None, names).items():
            cols = [c for c in cols if c != j and names[c] != "Intercept"]
            if cols:
                covariates.append(CovariateStrength(
                    name, tuple(names[c] for c in cols),
                    group_r2(t_params, t_cov, dof + 1, [position[c] for c in cols]),
                    group_r2(params, cov, dof, cols),
                ))  # fmt: skip
    y_raw = np.asarray(getattr(results, "_Y_untransformed", y), float).ravel()
    return partial_r2_from_parts(
        float(params[j]), float(np.sqrt(cov[j, j])), dof, tuple(covariates),
        treatment=treatment, outcome=str(results._depvar), n=n,
        sd_outcome=float(np.std(y_raw, ddof=1)), notes=tuple(notes) + tuple(fit_notes),
        **options,
    )  # fmt: skip
