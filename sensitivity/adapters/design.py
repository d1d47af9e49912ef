"""What every modelling library's adapter shares, with no library imported.

The formula's columns and the name checks made before any fit, the treatment found among a
design's columns, a group of columns' partial R² from its Wald F, the partial-R² result
assembled from a fit's parts (its treatment coefficient, standard error, residual degrees of
freedom and covariate strengths), and the E-value of a coefficient times a contrast. The
statsmodels, linearmodels and pyfixest adapters and the one-pass data route (`onepass.py`)
all call these, so none of them imports another library's adapter for them.
"""

from __future__ import annotations

import re
import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ..common.errors import InputError, SensitivityWarning
from ..partial_r2.benchmarks import benchmark_specs
from ..partial_r2.core import assemble, benchmark_scenarios, check_summary, partial_r2_of_f
from ..partial_r2.result import CovariateStrength, PartialR2Result


# --------------------------------------------------------------------------- names
def formula_columns(formula: str) -> tuple[list[str], list[str]]:
    """The data columns a formula reads, left side and right side, from its terms' code.

    Names that are called (``C(x)``, ``np.log(x)``) or reached through an attribute are
    functions, not columns; ``Q("a b")`` names a column by its string.
    """
    import ast

    if not isinstance(formula, str) or "~" not in formula:
        raise InputError(f"`formula` must look like 'y ~ t + x1 + x2'; got {formula!r}", "formula")
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
                f"`formula` uses column {name!r}, which is not in the data; columns: {shown}",
                "formula",
            )
    if treatment not in columns and not re.search(r"[\[\](]", treatment):
        raise InputError(
            f"`treatment` {treatment!r} is not a column of the data; columns: {shown}", "treatment"
        )
    if treatment in columns and treatment not in right:
        raise InputError(
            f"`treatment` {treatment!r} is a column of the data but not a term of the "
            f"formula's right side: {formula.split('~', 1)[1].strip()}",
            "treatment",
        )
    for given_name, _, _ in benchmark_specs(benchmarks):
        # C(region) as the covariate table names it, or region as the data does: both
        name = _column_of_term(given_name)
        if name not in columns and not any(name == c or name in c for c in right):
            raise InputError(
                f"`benchmark` {name!r} is not a column of the data; columns: {shown}", "benchmark"
            )
        if name in columns and name not in right:
            raise InputError(
                f"`benchmark` {name!r} is not in the formula: a benchmark must be a measured "
                "covariate of the model",
                "benchmark",
            )


def _column_of_term(name: str) -> str:
    """`region` for a categorical term written C(region) (or C(region, Treatment(...)))."""
    m = re.fullmatch(r"\s*C\(\s*([^,()]+?)\s*(,.*)?\)\s*", str(name))
    return m.group(1) if m else str(name)


def find_treatment(treatment: str, names: Sequence[str], groups: dict[str, list[int]]) -> int:
    """The index of the treatment's column among `names`: by its name, or a formula term
    (`groups`, term -> column indices) with one column."""
    if treatment in names:
        return names.index(treatment)
    cols = groups.get(treatment)
    if cols is not None and len(cols) == 1:
        return cols[0]
    if cols is not None:
        shown = ", ".join(names[i] for i in cols[:8]) + (", ..." if len(cols) > 8 else "")
        raise InputError(
            f"`treatment` {treatment!r} spans {len(cols)} columns "
            f"({shown}); name one of them, or code the "
            "treatment as a single 0/1 or numeric column",
            "treatment",
        )
    raise InputError(
        f"`treatment` {treatment!r} is not a coefficient of the model; coefficients: "
        + ", ".join(names),
        "treatment",
    )


def no_interaction(treatment: str, names: Sequence[str]) -> None:
    """Refuse a treatment that also enters an interaction term (no single coefficient)."""
    for name in names:
        parts = name.split(":")
        if len(parts) > 1 and treatment in parts:
            raise InputError(
                f"`treatment` {treatment!r} also enters the interaction {name!r}; partial-R² "
                "bounds need a single treatment coefficient (fit the model without the "
                "interaction, or analyse an effect at a fixed covariate value)",
                "treatment",
            )


def term_groups(model: Any, names: Sequence[str]) -> dict[str, list[int]]:
    """Covariate name -> column indices: patsy terms when known, else a name rule."""
    spec = getattr(getattr(model, "data", None), "model_spec", None)
    slices = getattr(spec, "term_name_slices", None)
    if slices:
        return {term: list(range(len(names)))[sl] for term, sl in slices.items()}
    groups: dict[str, list[int]] = {}
    for i, name in enumerate(names):
        groups.setdefault(re.sub(r"\[[^\]]*\]", "", name), []).append(i)  # x[T.b] -> x
    return groups


# --------------------------------------------------------------------------- numbers
def classical_errors_used(cov_type: str) -> list[str]:
    """Warn that a fit's robust or clustered errors give way to its classical ones; the note."""
    message = (
        f"the model's standard errors are {cov_type}; the partial-R² identities assume "
        "classical standard errors, so the classical ones of the same fit are used here"
    )
    warnings.warn(message, SensitivityWarning, stacklevel=4)
    return [message[0].upper() + message[1:] + "."]


def group_r2(params: np.ndarray, cov: np.ndarray, dof: float, cols: list[int]) -> float:
    """Partial R² of a group of columns from their joint Wald F (t² for one column)."""
    b = params[cols]
    v = cov[np.ix_(cols, cols)]
    f_stat = float(b @ np.linalg.solve(v, b)) / len(cols)
    return float(partial_r2_of_f(f_stat, len(cols), dof))


def _resolve_benchmark(name, covariates):
    by_name = {c.name: c for c in covariates}
    if name in by_name:
        return by_name[name]
    name = _column_of_term(name)  # C(region) as written by us, when the term is spelled otherwise
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
        + ", ".join(by_name),
        "benchmark",
    )


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
    reduce_by: float = 1.0,
    alpha: float = 0.05,
    benchmarks: Sequence[Any] = (),
    r2_treatment: ArrayLike | None = None,
    r2_outcome: ArrayLike | None = None,
    contrast: float = 1.0,
    notes: Sequence[str] = (),
) -> PartialR2Result:
    """The result from a fit's treatment coefficient and covariate strengths (any library)."""
    if se == 0:  # a fit, not a summary: say why, not that `se` must be positive
        raise InputError(
            f"`data`: the fit leaves no residual variation in {outcome!r} (it is constant, or "
            "the covariates reproduce it exactly), so the treatment's coefficient has no "
            "standard error",
            "data",
        )
    est, se, dof, reduce_by, alpha = check_summary(estimate, se, dof, None, reduce_by, alpha)
    scenarios = []
    for name, kt, ky in benchmark_specs(benchmarks):
        cov_strength = _resolve_benchmark(name, covariates)
        scenarios += benchmark_scenarios(est, se, dof, cov_strength, [(kt, ky)], alpha)
    return assemble(
        est, se, dof, reduce_by=reduce_by, alpha=alpha, r2_treatment=r2_treatment,
        r2_outcome=r2_outcome, sd_outcome=sd_outcome, contrast=contrast,
        scenarios=scenarios, treatment=treatment, outcome=outcome, n=n,
        covariates=covariates, notes=tuple(notes),
    )  # fmt: skip


def evalue_of_coefficient(b: float, times: float, scale: str, *args: Any, **kwargs: Any) -> Any:
    """`evalue(scale, *args, **kwargs)` of a fitted coefficient `b` times `times` (the
    `contrast`): an effect beyond double precision names `contrast` (or the coefficient when
    the contrast is 1), which the user gave, not the estimate or interval made of it."""
    from ..evalues.core import evalue

    try:
        return evalue(scale, *args, **kwargs)
    except InputError as err:
        if not set(err.arguments) & {"estimate", "ci", "se"}:  # (`sd` alone: the data's SD)
            raise
        effect = f"the treatment's coefficient {b:.4g}"
        if times == 1:
            raise InputError(
                f"{effect} gives an effect beyond double precision on the risk-ratio scale, "
                "so its E-value cannot be computed; rescale the treatment"
            ) from None
        raise InputError(
            f"`contrast` {times:g} times {effect} gives an effect beyond double precision "
            "on the risk-ratio scale, so its E-value cannot be computed; give a `contrast` "
            "nearer 0",
            "contrast",
        ) from None
