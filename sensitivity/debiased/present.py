"""Debiased-ML bounds in words and tables: the Document every view renders.

The layout leads with the answer (how strong a hidden confounder would have to be), gives
the estimate and how it was fitted in one header line, then the named confounders (chosen
strengths and benchmarks) with their bounds, and the benchmarks' measured strengths.
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import partial
from typing import Any

import numpy as np

from ..common.levels import level_text
from ..common.notes import REFERENCES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.report import ReportPart
from ..output.tables import Table, number, percent
from .figures import contours
from .result import DebiasedResult, Scenario

CITED = (REFERENCES["chernozhukov-cinelli-2022"], REFERENCES["cinelli-hazlett-2020"])

EFFECT = {
    "partial-linear": ("effect", " (the coefficient of the partially linear model)"),
    "average": ("average effect", ""),
}


def _num(r: DebiasedResult, x: float | None) -> str:
    """Estimate-scale numbers with decimals set by the se (two significant digits of it)."""
    digits = int(min(8, max(2, 1 - np.floor(np.log10(r.se))))) if r.se > 0 else 2
    return number(x, digits)


def level(r: DebiasedResult) -> str:
    return level_text(alpha=r.alpha)


def _goal(r: DebiasedResult) -> str:
    return "zero" if r.target == 0 else _num(r, r.target)


def _of(r: DebiasedResult) -> str:
    what, model = EFFECT[r.target_effect]
    who = f" of {r.treatment}" if r.treatment else ""
    on = f" on {r.outcome}" if r.outcome else ""
    return f"{what}{who}{on}{model}"


def fitted_by(r: DebiasedResult) -> str:
    """How the nuisances were fitted, as a phrase."""
    folds = "no cross-fitting" if r.folds == 1 else f"{r.folds}-fold cross-fitting"
    seed = "" if r.seed is None else f", seed {r.seed}"
    return f"{r.learner} learners, {folds}{seed}"


def header(r: DebiasedResult) -> str:
    return (
        f"Debiased ML estimate of the {_of(r)}: {_num(r, r.estimate)} (se {_num(r, r.se)}, "
        f"{level(r)} CI {_num(r, r.ci[0])} to {_num(r, r.ci[1])}; {fitted_by(r)}; "
        f"n = {r.n:,}). Scale of the bias S = {number(r.s, 4)}."
    )


def table(r: DebiasedResult) -> Table:
    goal = _goal(r)
    rho = "" if r.rho == 1 else f", |rho| = {r.rho:g}"
    return Table(
        ("How strong a hidden confounder would have to be", "Equal share (cy2 = cd2)"),
        (
            (f"To bring the bound on the effect to {goal} (robustness value{rho})",
             percent(r.robustness_value)),
            (
                f"To bring its one-sided {level(r)} confidence bound to {goal} "
                f"(robustness value, alpha {r.alpha:g}{rho})",
                percent(r.robustness_value_alpha),
            ),
        ),
        title="Debiased-ML sensitivity: the strength needed on both sides",
        footnotes=(
            "cy2: the confounder's share of the outcome's residual variation; cd2: its share "
            "of the Riesz representer's variation (in the partially linear model, its partial "
            "R² with the treatment given the covariates).",
        ),
    )  # fmt: skip


def label(s: Scenario) -> str:
    if s.kind == "benchmark":
        times = (
            f"×{s.k_outcome:g}"
            if s.k_outcome == s.k_treatment
            else f"×{s.k_outcome:g}/×{s.k_treatment:g}"
        )
        return f"{s.benchmark} {times}"
    return f"chosen {percent(s.cy2, 2)} / {percent(s.cd2, 2)}"


def verdict(r: DebiasedResult, s: Scenario) -> str:
    goal = _goal(r)
    if s.bound_lower <= r.target <= s.bound_upper:
        return f"bounds include {goal}"
    if s.ci_lower <= r.target <= s.ci_upper:
        return f"confidence bounds include {goal}"
    return f"excludes {goal}"


def scenario_table(r: DebiasedResult) -> Table | None:
    if not r.scenarios:
        return None
    rows = tuple(
        (
            str(i),
            label(s),
            verdict(r, s),
            percent(s.cy2, 2) + (" (capped)" if s.capped else ""),
            percent(s.cd2, 2),
            f"{s.rho:g}",
            _num(r, s.bias),
            f"{_num(r, s.bound_lower)} to {_num(r, s.bound_upper)}",
            f"{_num(r, s.ci_lower)} to {_num(r, s.ci_upper)}",
        )
        for i, s in enumerate(r.scenarios, 1)
    )
    return Table(
        (
            "#",
            "Confounder",
            "Conclusion",
            "cy2",
            "cd2",
            "|rho|",
            "Bias bound",
            "Bounds",
            f"One-sided {level(r)} confidence bounds",
        ),
        rows,
        title="Named confounders: the bounds on the effect under each",
        align="rllrrrrrr",
        footnotes=(
            "'chosen cy2 / cd2': strengths given directly; 'x ×k': k times the strengths "
            "measured for the covariate x (×a/×b: outcome side a, treatment side b). The "
            f"confidence bounds are each one-sided at {level(r)}: below the lower bound and "
            "above the upper.",
        ),
    )


def benchmark_table(r: DebiasedResult) -> Table | None:
    if not r.benchmarks:
        return None
    rows = tuple(
        (
            b.name,
            percent(b.cy2, 2),
            percent(b.cd2, 2),
            number(b.rho, 2),
            _num(r, b.estimate_without),
        )
        for b in r.benchmarks
    )
    return Table(
        ("Measured covariate", "cy2", "cd2", "Implied rho", "Estimate without it"),
        rows,
        title="Benchmarks: what each measured covariate adds (learners refitted without it)",
        footnotes=(
            "cy2: the share of the outcome's residual variation the covariate explains beyond "
            "the others; cd2: the share of the Riesz representer's variation; implied rho: "
            "the correlation that reproduces the change in the estimate when it is left out "
            "(a value beyond ±1 signals noisy fits).",
        ),
    )


def sentence(r: DebiasedResult) -> str:
    goal = _goal(r)
    rv, rva = percent(r.robustness_value), percent(r.robustness_value_alpha)
    rho = "" if r.rho == 1 else f" and a correlation of at most {r.rho:g} between its two effects"
    text = (
        f"The debiased machine-learning estimate of the {_of(r)} was {_num(r, r.estimate)} "
        f"({level(r)} CI {_num(r, r.ci[0])} to {_num(r, r.ci[1])}; {fitted_by(r)}). "
        f"A hidden confounder{rho} explaining less than {rv} of both the outcome's residual "
        f"variation and the Riesz representer's variation could not bring the bound on the "
        f"effect to {goal}"
    )
    if r.robustness_value_alpha == 0:
        text += f"; the one-sided {level(r)} confidence bound already reaches {goal}."
    else:
        text += (
            f", and one explaining less than {rva} of each could not bring its one-sided "
            f"{level(r)} confidence bound to {goal}."
        )
    bench = [s for s in r.scenarios if s.kind == "benchmark"]
    if bench:
        k_min = min(max(s.k_outcome or 0, s.k_treatment or 0) for s in bench)
        at = [s for s in bench if max(s.k_outcome or 0, s.k_treatment or 0) == k_min]
        s = max(at, key=lambda s: s.bias)
        times = "matching" if k_min == 1 else f"with {k_min:g} times the strength of"
        text += (
            f" A confounder {times} {s.benchmark} (the strongest benchmark at that multiple) "
            f"would bound the effect between {_num(r, s.bound_lower)} and "
            f"{_num(r, s.bound_upper)} (one-sided {level(r)} confidence bounds "
            f"{_num(r, s.ci_lower)} and {_num(r, s.ci_upper)})."
        )
    return text


def tables(r: DebiasedResult) -> list[Table]:
    return [t for t in (table(r), scenario_table(r), benchmark_table(r)) if t]


CAPTION = "The bound on the effect over the two strengths of a hidden confounder"


def figures(r: DebiasedResult) -> tuple[Figure, ...]:
    return (Figure("debiased", CAPTION, partial(contours, r)),)


def document(r: DebiasedResult) -> Document:
    lead = sentence(r)
    blocks: tuple[Block, ...] = (prose(header(r)), *tables(r), prose(lead, role="sentence"))
    blocks += standard_tail(r.notes, r.cautions, r.assumptions)
    return Document("Debiased-ML sensitivity", blocks, figures=figures(r), references=CITED)


METHODS = (
    "For effects estimated by debiased (double) machine learning we bounded the bias a hidden "
    "confounder could cause with the omitted-variable bounds of Chernozhukov, Cinelli, Newey, "
    "Sharma and Syrgkanis (2022): the bias is at most |rho| S C_Y C_D, where S is estimated "
    "from the data and C_Y, C_D grow with the shares of the outcome's residual variation "
    "(cy2) and of the Riesz representer's variation (cd2) the confounder would explain. The "
    "nuisance functions were cross-fitted; standard errors and the one-sided confidence "
    "bounds come from the influence functions. We report the robustness value (the least "
    "equal share that brings the bound to the null) with and without sampling error, and "
    "benchmarks from measured covariates, whose strengths were measured by refitting the "
    "learners without them."
)


def supplement_table(items: Sequence[tuple[str, DebiasedResult]]) -> Table:
    rows = tuple(
        (
            label,
            f"{_num(r, r.estimate)} ({level(r)} CI {_num(r, r.ci[0])} to {_num(r, r.ci[1])})",
            fitted_by(r),
            f"{r.n:,}",
            percent(r.robustness_value),
            percent(r.robustness_value_alpha),
        )
        for label, r in items
    )
    return Table(
        (
            "Estimate",
            "Effect (CI)",
            "Learners",
            "n",
            "Robustness value",
            "Robustness value, confidence bound",
        ),
        rows,
        title="Debiased machine-learning estimates: omitted-variable robustness values",
        footnotes=(
            "Robustness value: the least equal share of the outcome's residual variation and "
            "of the Riesz representer's variation a confounder would need to explain to bring "
            "the bound on the effect (or, in the last column, its one-sided confidence bound "
            "at the row's level) to the target.",
        ),
    )


def report_part(items: Sequence[Any]) -> ReportPart:
    """The family's section of a manuscript report: a row an estimate, its contour figure."""
    pairs = [(label, r) for label, r in items]
    numbers = [getattr(item, "number", k) for k, item in enumerate(items, 1)]
    figs = tuple(
        Figure(f"debiased_{k}", f"{label}: {CAPTION.lower()}", partial(contours, r))
        for k, (label, r) in zip(numbers, pairs, strict=True)
    )
    return ReportPart(
        family="debiased",
        methods=METHODS,
        results=tuple(f"{label}: {sentence(r)}" for label, r in pairs),
        tables=(supplement_table(pairs),),
        figures=figs,
        details=tuple((f"{label} (debiased ML)", document(r)) for label, r in pairs),
        entries=tuple({"label": label, "family": "debiased", **r.to_dict()} for label, r in pairs),
        assumptions=tuple(dict.fromkeys(a for _, r in pairs for a in r.assumptions)),
        cautions=tuple(dict.fromkeys(c for _, r in pairs for c in r.cautions)),
        references=CITED,
    )
