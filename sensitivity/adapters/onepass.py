"""The partial-R² data route in one pass over the data, in batches.

Every regression the route needs comes from one upper-triangular factor R of the design
[covariates, treatment, outcome]: each batch of rows is stacked under the R so far and
re-triangularised (the R of QR, so memory does not grow with the number of rows). With the
treatment last among the regressors,

- the outcome model y ~ covariates + treatment: the treatment's coefficient r_ty / r_tt, its
  standard error sqrt(r_yy^2 / dof) / |r_tt| (r_yy^2 is the residual sum of squares);
- the treatment model t ~ covariates: its residual sum of squares is r_tt^2;
- each covariate's (or categorical group's) partial R² in either model: R re-triangularised
  with the group just before the model's outcome, the share of that outcome's remaining sum
  of squares the group takes (the Wald F identity, by orthogonal steps).

QR rather than the cross-product matrix X'X: X'X squares the design's condition number, the
R factor does not, so ill-conditioned designs agree with statsmodels' refits to 1e-8 as well
(tests/test_onepass.py). Any subset or order of the design's columns has its own R factor in
the QR of the same columns of R, so a categorical column's levels can be met in any order:
each new level adds a column (zero on the rows before it), and patsy's coding (the first
level in sorted order left out) is chosen at the end.

The reading is in `batches.py`, the design and its R factor in `rfactor.py`; this module
finishes: the rank, the treatment's coefficient and every covariate's partial R².
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..common.errors import InputError
from ..partial_r2.result import CovariateStrength, PartialR2Result
from .batches import BATCH_ROWS, file_source, frame_source
from .design import check_names, find_treatment, no_interaction, partial_r2_from_parts
from .rfactor import (
    Design,
    TriangularFactor,
    one_blas_thread,
    patsy_design,
    plain_design,
    plain_terms,
    r_of,
)

__all__ = ["BATCH_ROWS", "TriangularFactor", "partial_r2_of_design", "partial_r2_one_pass"]


# --------------------------------------------------------------------------- the regressions
def _kept(r: np.ndarray, rows: int) -> list[int]:
    """Columns of R (regressors in order) whose own information is not rounding error, by
    numpy's matrix_rank rule as statsmodels counts the rank: a column in the span of the
    ones before it (its diagonal entry below the tolerance) is left out, and the columns after
    it are re-triangularised without it."""
    width = r.shape[1]
    if not width:
        return []
    tol = float(np.linalg.svd(r, compute_uv=False).max()) * max(rows, width) * np.finfo(float).eps
    kept = list(range(width))
    part = r
    at = 0
    while at < len(kept):
        if at < part.shape[0] and abs(part[at, at]) > tol:
            at += 1
            continue
        del kept[at]
        part = r_of(r[:, kept]) if kept else part
    return kept


def _share_after(r: np.ndarray, first: list[int], group: list[int], target: int) -> float:
    """Partial R² of the `group` columns with the `target` column given the `first` columns:
    with R re-triangularised in the order [first, group, target], the group lowers the
    target's residual sum of squares by ||R[group rows, target]||² and leaves r_target²,
    so the share is their ratio. (Equal to the Wald F route, Fq / (Fq + dof), in exact
    arithmetic; orthogonal steps keep its digits where inverting the covariance would not.)"""
    part = r_of(r[:, first + group + [target]])
    m = len(first)
    gained = float(np.sum(np.square(part[m : m + len(group), -1])))
    left = float(part[m + len(group), -1] ** 2) if part.shape[0] > m + len(group) else 0.0
    return gained / (gained + left) if gained + left > 0 else 0.0


def partial_r2_one_pass(data: Any, formula: str, treatment: str, **options: Any
                        ) -> PartialR2Result:  # fmt: skip
    """Partial-R² sensitivity of `treatment` from `data` (a file path or a DataFrame) and an
    OLS `formula`, in one pass over the data in batches: equal to fitting the formula with
    statsmodels and calling `partial_r2_from_model` (to 1e-8), in memory that does not grow
    with the number of rows. Options are those of `partial_r2_from_model`, and `progress`, a
    function called with the number of rows read after each batch.
    """
    if not isinstance(formula, str) or "~" not in formula:
        raise InputError(f"`formula` must look like 'y ~ t + x1 + x2'; got {formula!r}", "formula")
    source = frame_source(data) if hasattr(data, "columns") else file_source(data, "data")
    check_names(_Header(source.columns), formula, treatment, options.get("benchmarks", ()))
    progress = options.pop("progress", None) or (lambda rows: None)
    plain = plain_terms(formula)
    with one_blas_thread():
        if plain:
            design = plain_design(source, *plain, progress)
        else:
            design = patsy_design(source, formula, progress)
    return partial_r2_of_design(design, formula, treatment, **options)


def partial_r2_of_design(design: Design, formula: str, treatment: str, **options: Any
                         ) -> PartialR2Result:  # fmt: skip
    """The finish of the one-pass route, from the design a pass (or a combine of partitions'
    factors, `partials.py`) found: the rank, the treatment's coefficient and every covariate's
    partial R². Options are those of `partial_r2_from_model`."""
    if design.used == 0:
        raise InputError("`data`: no row has a value in every column the formula uses", "data")
    names = design.names
    j = find_treatment(treatment, names, design.groups)
    no_interaction(names[j], names)
    rest = [i for i in range(len(names)) if i != j]
    r = design.factor.of([design.slots[i] for i in rest + [j]] + [design.y_slot])
    kept = _kept(r[:, :-1], design.used)
    if design.used - len(kept) < 2:  # too few rows: say so before any rank problem
        raise InputError(f"`data`: the fit has {design.used - len(kept)} residual degrees of "
                         "freedom; need at least 2", "data")  # fmt: skip
    notes: list[str] = []
    if design.read > design.used:
        notes.append(f"{design.read - design.used} of {design.read} rows had missing values in "
                     "the model's columns and were left out of the fit.")  # fmt: skip
    if len(rest) not in kept:
        raise InputError(f"`treatment` {names[j]!r} is a linear combination of the covariates "
                         "in these data: its coefficient is not identified",
                         "treatment")  # fmt: skip
    dropped = [names[rest[i]] for i in range(len(rest)) if i not in kept]
    if dropped:
        notes.append("Left out as linear combinations of the columns before them: "
                     + ", ".join(dropped) + ".")  # fmt: skip
    k = len(kept) - 1
    dof = design.used - (k + 1)  # at least 2: checked above
    r = r_of(r[:, kept + [r.shape[1] - 1]])  # covariates, treatment, outcome
    # the treatment is the last regressor: b = r_ty / r_tt, se = sqrt(rss / dof) / |r_tt|
    estimate = float(r[k, k + 1] / r[k, k])
    se = float(np.sqrt(r[k + 1, k + 1] ** 2 / dof) / abs(r[k, k]))
    position = {rest[c]: pos for pos, c in enumerate(kept[:-1])}  # design column -> factor
    strengths = []
    for name, cols in design.groups.items():
        cols = [c for c in cols if c not in design.intercepts and c in position]
        if not cols:
            continue
        group = [position[c] for c in cols]
        others = [i for i in range(k) if i not in group]
        r2y = _share_after(r, others + [k], group, k + 1)
        r2t = _share_after(r, others, group, k)
        strengths.append(CovariateStrength(name, tuple(names[c] for c in cols), r2t, r2y))
    return partial_r2_from_parts(
        estimate, se, float(dof), tuple(strengths), treatment=names[j],
        outcome=formula.split("~", 1)[0].strip(), n=design.used, sd_outcome=design.outcome.sd,
        notes=tuple(options.pop("notes", ())) + tuple(notes), **options,
    )  # fmt: skip


@dataclass
class _Header:
    """The column names of a source, where check_names looks for them."""

    columns: list[str]
