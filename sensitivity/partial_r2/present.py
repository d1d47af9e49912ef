"""Partial-R² results in words and tables: the Document every view renders."""

from __future__ import annotations

import numpy as np

from ..output.document import Block, Document, prose, standard_tail
from ..output.tables import Table, number, percent
from .result import PartialR2Result, Scenario


def _per(contrast: float | np.ndarray) -> str:
    return "" if contrast == 1 else f" per {float(contrast):g} units of treatment"


def _k(s: Scenario) -> float:
    """A benchmark scenario's larger multiple (its strength, for ranking)."""
    return max(s.k_treatment or 0.0, s.k_outcome or 0.0)


def _level(r: PartialR2Result) -> str:
    return f"{1 - r.alpha:.0%}"


def _num(r: PartialR2Result, x: float | None) -> str:
    """Estimate-scale numbers with decimals set by the se (two significant digits of it)."""
    digits = int(min(8, max(2, 1 - np.floor(np.log10(r.se))))) if r.se > 0 else 2
    return number(x, digits)


def table(r: PartialR2Result) -> Table:
    q = r.fraction
    goal = "zero" if q == 1 else f"{1 - q:g} × its value"
    rows = [
        ("Estimate (se)", f"{_num(r, r.estimate)} ({_num(r, r.se)})"),
        ("t on dof", f"{number(r.t, 3)} on {r.dof:g}"),
        ("Partial R² of treatment with outcome", percent(r.partial_r2)),
        (f"Robustness value: bring the estimate to {goal}", percent(r.robustness_value)),
        (
            f"Robustness value: lose significance (alpha {r.alpha:g})",
            percent(r.robustness_value_alpha),
        ),
    ]
    if r.evalue is not None:
        e = r.evalue
        rows.append(
            (
                f"E-value via standardized difference{_per(e.contrast)} (estimate, CI)",
                f"{number(e.evalue)}, {number(e.evalue_ci)}",
            )
        )
    who = f" of `{r.treatment}`" if r.treatment else ""
    return Table(
        ("Quantity", "Value"),
        tuple(rows),
        title=f"Partial-R² sensitivity of the coefficient{who}",
    )


def scenario_table(r: PartialR2Result) -> Table | None:
    if not r.scenarios:
        return None
    rows = []
    for s in r.scenarios:
        cap = " (capped)" if s.capped else ""
        rows.append(
            (
                s.label,
                percent(s.r2_treatment, 2),
                percent(s.r2_outcome, 2) + cap,
                _num(r, s.bias),
                _num(r, s.estimate),
                _num(r, s.se),
                number(s.t),
                f"{_num(r, s.ci[0])} to {_num(r, s.ci[1])}",
            )
        )
    return Table(
        (
            "Confounder",
            "R² treatment",
            "R² outcome",
            "Bias",
            "Estimate",
            "SE",
            "t",
            f"{_level(r)} CI",
        ),
        tuple(rows),
        title="Bias-adjusted results under each confounder",
    )


def covariate_table(r: PartialR2Result) -> Table | None:
    if not r.covariates:
        return None
    ranked = sorted(r.covariates, key=lambda c: -c.r2_outcome)
    rows = tuple((c.name, percent(c.r2_treatment, 2), percent(c.r2_outcome, 2)) for c in ranked)
    return Table(
        ("Observed covariate", "Partial R² with treatment", "Partial R² with outcome"),
        rows,
        title="Strength of each observed covariate (ranked by outcome side)",
    )


def tables(r: PartialR2Result) -> list[Table]:
    return [t for t in (table(r), scenario_table(r), covariate_table(r)) if t]


def sentence(r: PartialR2Result) -> str:
    q = r.fraction
    goal = "to zero" if q == 1 else f"by {q:.0%} (to {1 - q:g} times its value)"
    text = (
        f"An unmeasured confounder would have to explain {percent(r.robustness_value)} "
        f"of the residual variance of both the treatment and the outcome to move the "
        f"estimate {goal}"
    )
    if r.robustness_value_alpha == 0:
        text += (
            f"; the estimate is already not significant at alpha {r.alpha:g}, so "
            "no confounding is needed to make its interval include that value"
        )
    else:
        text += (
            f", and {percent(r.robustness_value_alpha)} of each to make the "
            f"{_level(r)} confidence interval include that value"
        )
    bench = [s for s in r.scenarios if s.kind == "benchmark"]
    if bench:
        k_min = min(_k(s) for s in bench)
        s = max((s for s in bench if _k(s) == k_min), key=lambda s: s.bias)
        target = (1 - q) * r.estimate
        flips = s.estimate == 0 or (s.estimate - target) * (r.estimate - target) < 0
        covers = s.ci[0] <= target <= s.ci[1]
        k = s.label_multiple
        text += (
            f". A confounder {k} as strong as `{s.benchmark}` (the strongest "
            f"benchmark at that multiple) would move it to {_num(r, s.estimate)} "
            f"({_level(r)} CI {_num(r, s.ci[0])} to {_num(r, s.ci[1])})"
        )
        if flips:
            text += ", past that value"
        elif covers:
            text += ", with an interval that includes that value"
        else:
            text += ", not far enough to change the conclusion"
    return text + "."


def document(r: PartialR2Result) -> Document:
    lead = sentence(r)
    blocks: tuple[Block, ...] = (*tables(r), prose(lead, role="sentence"))
    blocks += standard_tail(r.notes, r.cautions, r.assumptions)
    return Document("Partial-R² sensitivity", blocks, sentence=lead)
