"""Partial-R² results in words and tables: the Document every view renders.

The layout leads with the answers (how strong a hidden confounder would have to be), puts the
coefficient's own numbers in one header line, and lists named confounders verdict first.
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
from ..output.tables import Table, count, number, percent, toward
from .core import t_critical
from .figures import partial_r2_contours
from .result import CovariateStrength, PartialR2Result, Scenario, covariate_name


def _per(contrast: float | np.ndarray) -> str:
    return "" if contrast == 1 else f" per {float(contrast):g} units of treatment"


def _k(s: Scenario) -> float:
    """A benchmark scenario's larger multiple (its strength, for ranking)."""
    return max(s.k_treatment or 0.0, s.k_outcome or 0.0)


def _level(r: PartialR2Result) -> str:
    return level_text(alpha=r.alpha)


def _num(r: PartialR2Result, x: float | None) -> str:
    """Estimate-scale numbers with decimals set by the se (two significant digits of it)."""
    digits = int(min(8, max(2, 1 - np.floor(np.log10(r.se))))) if r.se > 0 else 2
    return number(x, digits)


def scenario_label(s: Scenario) -> str:
    """A scenario's one name (`Scenario.label`): "smoker ×2", "shift ×1/×3", "chosen 2.00% /
    5.00%", with "(published)" or "(treatment side assumed)" for a published benchmark."""
    return s.label


def _target(r: PartialR2Result) -> float:
    return (1 - r.reduce_by) * r.estimate


def _goal(r: PartialR2Result) -> str:
    return "zero" if r.reduce_by == 1 else _num(r, _target(r))


def outcome_of(r: PartialR2Result, s: Scenario) -> str:
    """Where the scenario leaves the conclusion, as a code: "reverses", "passes",
    "reaches", "ci" (the interval includes the target) or "holds"."""
    target = _target(r)
    side = np.sign(r.estimate - target)
    if side * (s.estimate - target) < 0:
        return "reverses" if r.reduce_by == 1 else "passes"
    if s.estimate == target:
        return "reaches"
    if s.ci[0] <= target <= s.ci[1]:
        return "ci"
    return "holds"


def verdict(r: PartialR2Result, s: Scenario) -> str:
    """Where the scenario leaves the conclusion, in a few words."""
    goal = _goal(r)
    return {
        "reverses": "sign reverses",
        "passes": f"estimate passes {goal}",
        "reaches": f"estimate reaches {goal}",
        "ci": f"CI includes {goal}",
        "holds": "conclusion holds",
    }[outcome_of(r, s)]


def header(r: PartialR2Result) -> str:
    who = f"Coefficient of {r.treatment}" if r.treatment else "Coefficient"
    on = f" on {r.outcome}" if r.outcome else ""
    n = f"; n = {r.n:,}" if r.n is not None else ""
    return (
        f"{who}{on}: {_num(r, r.estimate)} (se {_num(r, r.se)}), t = {number(r.t, 2)} on "
        f"{count(r.dof)} residual degrees of freedom{n}."
    )


def table(r: PartialR2Result) -> Table:
    goal = _goal(r)
    rows = [
        (
            f"To bring the estimate to {goal} (robustness value)",
            percent(r.robustness_value),
        ),
        (
            f"To make the {_level(r)} CI include {goal} (robustness value, alpha {r.alpha:g})",
            percent(r.robustness_value_alpha),
        ),
        ("The treatment's own share of the outcome's, for comparison", percent(r.partial_r2)),
    ]
    if r.evalue is not None:
        e = r.evalue
        per = _per(e.contrast).strip() or "per unit"
        if e.evalue_ci is None:  # no interval (a level that rounds to 1): no level to name
            rows.append((f"E-value alongside ({per}; estimate)", number(e.evalue)))
        else:
            rows.append(
                (
                    f"E-value alongside ({per}; estimate / {level_text(e.ci_level)} CI)",
                    f"{number(e.evalue)} / {number(e.evalue_ci)}",
                )
            )
    return Table(
        ("How strong a hidden confounder would have to be", "Share of residual variance"),
        tuple(rows),
        title="Partial-R² sensitivity: the strength needed on both sides",
        footnotes=(
            "Shares are partial R²: of the treatment's variance not explained by the "
            "covariates, and of the outcome's not explained by treatment and covariates.",
        ),
    )


def scenario_table(r: PartialR2Result) -> Table | None:
    if not r.scenarios:
        return None
    rows = []
    for i, s in enumerate(r.scenarios, 1):
        cap = " (capped)" if s.capped else ""
        if s.impossible:
            rows.append((str(i), scenario_label(s),
                         f"impossible: ×{s.k_treatment:g} of this covariate would explain all "
                         f"of the treatment's residual variance (k must be below "
                         f"{s.k_max:.4g})", *(["-"] * 7)))  # fmt: skip
            continue
        rows.append(
            (
                str(i),
                scenario_label(s),
                verdict(r, s),
                _num(r, s.estimate),
                f"{_num(r, s.ci[0])} to {_num(r, s.ci[1])}",
                percent(s.r2_treatment, 2),
                percent(s.r2_outcome, 2) + cap,
                _num(r, s.bias),
                _num(r, s.se),
                number(s.t),
            )
        )
    return Table(
        (
            "#",
            "Confounder",
            "Conclusion",
            "Estimate",
            f"{_level(r)} CI",
            "Share: treatment",
            "Share: outcome",
            "Bias",
            "SE",
            "t",
        ),
        tuple(rows),
        title="Named confounders: where each would move the estimate",
        align="rllrrrrrrr",
        footnotes=(_scenario_footnote(r),),
    )


def _scenario_footnote(r: PartialR2Result) -> str:
    """How to read the scenario names, shown on this result's own first benchmark."""
    tail = "'chosen': strengths given directly. The bias is taken toward zero."
    first = next((s for s in r.scenarios if s.kind == "benchmark" and not s.impossible), None)
    if first is None:
        return tail
    name, k = covariate_name(first.benchmark or ""), first.k_treatment
    strength = "matching" if k == 1 else f"with {k:g} times the strength of"
    return (
        f"'{name} ×{k:g}': a hidden confounder {strength} the measured covariate {name}, with "
        f"the treatment and with the outcome (×a/×b: the treatment's multiple, then the "
        f"outcome's); {tail}"
    )


def covariate_table(r: PartialR2Result) -> Table | None:
    if not r.covariates:
        return None
    ranked: list[CovariateStrength] = sorted(r.covariates, key=lambda c: -c.r2_outcome)
    rows = tuple(
        (covariate_name(c.name), percent(c.r2_outcome, 2), percent(c.r2_treatment, 2))
        for c in ranked
    )
    return Table(
        ("Measured covariate", "Share: outcome", "Share: treatment"),
        rows,
        title="Measured covariates for comparison, strongest on the outcome first",
    )


def tables(r: PartialR2Result) -> list[Table]:
    return [t for t in (table(r), scenario_table(r), covariate_table(r)) if t]


def sentence(r: PartialR2Result) -> str:
    goal = _goal(r)
    rv, rva = percent(r.robustness_value), percent(r.robustness_value_alpha)
    # the needed share printed rounded down, the share that would do it rounded up: each
    # claim holds exactly (a robustness value of 11.731% is needed at 11.7%, enough at 11.8%)
    need, enough = (toward(rv, r.robustness_value, up=up, scale=100) for up in (False, True))
    text = (
        f"Bringing the estimate to {goal} would take a hidden confounder that explains at "
        f"least {need} of the treatment's variation left after the measured covariates, or at "
        f"least {need} of the outcome's left after the treatment and covariates: one below "
        f"{need} on both could not, and one at {enough} on both would (the robustness value)"
    )
    if r.robustness_value_alpha == 0:
        text += (
            f". The {_level(r)} confidence interval already includes {goal}, with no "
            "confounding at all"
        )
    else:
        text += (
            f". For the {_level(r)} confidence interval to include {goal}, a confounder below "
            f"{toward(rva, r.robustness_value_alpha, up=False, scale=100)} on both could not"
        )
    bench = [s for s in r.scenarios if s.kind == "benchmark" and not s.impossible]
    if bench:
        k_min = min(_k(s) for s in bench)
        s = max((s for s in bench if _k(s) == k_min), key=lambda s: s.bias)
        ci = f"{_level(r)} CI {_num(r, s.ci[0])} to {_num(r, s.ci[1])}"
        name = covariate_name(s.benchmark or "")
        times = f"{name}'s strength" if k_min == 1 else f"{k_min:g} times {name}'s strength"
        lead = (
            f". A hidden confounder of {times} on both sides ({s.label}, the strongest "
            "benchmark at that multiple) would"
        )
        state = outcome_of(r, s)
        if state == "reverses":
            text += f"{lead} reverse the sign of the estimate, to {_num(r, s.estimate)} ({ci})"
        elif state in ("passes", "reaches"):
            text += f"{lead} move the estimate to {_num(r, s.estimate)} ({ci}), past {goal}"
        elif state == "ci":
            text += (
                f"{lead} move the estimate to {_num(r, s.estimate)}, with a {ci} that "
                f"includes {goal}"
            )
        else:
            text += (
                f"{lead} move the estimate to {_num(r, s.estimate)} ({ci}), not far enough "
                "to change the conclusion"
            )
    return text + "."


def figures(r: PartialR2Result) -> tuple[Figure, ...]:
    caption = "Where a hidden confounder of each strength would move the coefficient"
    return (Figure("partial_r2", caption, partial(partial_r2_contours, r)),)


def document(r: PartialR2Result) -> Document:
    lead = sentence(r)
    blocks: tuple[Block, ...] = (prose(header(r)), *tables(r), prose(lead, role="sentence"))
    blocks += standard_tail(r.notes, r.cautions, r.assumptions)
    refs = (REFERENCES["cinelli-hazlett-2020"],)
    return Document("Partial-R² sensitivity", blocks, figures=figures(r), references=refs)


METHODS = (
    "For linear-regression coefficients we also report robustness values, from the partial-R² "
    "form of omitted-variable bias (Cinelli & Hazlett 2020). A hidden confounder is described "
    "by two shares: of the treatment's variation that the measured covariates leave "
    "unexplained, the part it would explain, and the same for the outcome's variation left by "
    "the treatment and covariates. The robustness value is the share, equal on both sides, at "
    "which a confounder brings the estimate to zero; one below it on both sides could not. "
    "A second value marks the same limit for the confidence interval to include zero."
)


def supplement_table(items: Sequence[tuple[str, PartialR2Result]]) -> Table:
    rows = []
    for label, r in items:
        half = float(t_critical(r.alpha, r.dof)) * r.se
        lo, up = r.estimate - half, r.estimate + half
        rows.append((label, f"{_num(r, r.estimate)} ({_level(r)} CI {_num(r, lo)} to "
                     f"{_num(r, up)})", number(r.t, 2), count(r.dof), percent(r.partial_r2),
                     percent(r.robustness_value), percent(r.robustness_value_alpha)))  # fmt: skip
    return Table(
        (
            "Estimate",
            "Coefficient (CI)",
            "t",
            "dof",
            "Partial R² with outcome",
            "Robustness value",
            "Robustness value, CI",
        ),  # fmt: skip
        tuple(rows),
        title="Regression coefficients: partial-R² robustness values",
        footnotes=(
            "Robustness value: to bring the estimate (CI column: its interval) to zero, a "
            "hidden confounder must explain at least this share, on at least one side, of "
            "what the covariates leave unexplained of the treatment or of the outcome.",
        ),
    )


def report_part(items: Sequence[Any]) -> ReportPart:
    """The family's section of a manuscript report: a row a coefficient, its contours."""
    pairs = [(label, r) for label, r in items]
    numbers = [getattr(item, "number", k) for k, item in enumerate(items, 1)]
    figs = tuple(
        Figure(
            f"partial_r2_{k}", f"{label}: partial-R² sensitivity", partial(partial_r2_contours, r)
        )  # fmt: skip
        for k, (label, r) in zip(numbers, pairs, strict=True)
    )
    return ReportPart(
        family="partial_r2",
        methods=METHODS,
        results=tuple(f"{label}: {sentence(r)}" for label, r in pairs),
        tables=(supplement_table(pairs),),
        figures=figs,
        details=tuple((f"{label} (partial R²)", document(r)) for label, r in pairs),
        entries=tuple({"label": label, **r.to_dict()} for label, r in pairs),
        assumptions=tuple(dict.fromkeys(a for _, r in pairs for a in r.assumptions)),
        cautions=tuple(dict.fromkeys(c for _, r in pairs for c in r.cautions)),
        references=(REFERENCES["cinelli-hazlett-2020"],),
    )
