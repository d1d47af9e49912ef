"""Bounds on a weighted estimate in words and tables."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from ..common.levels import level_text
from ..common.notes import REFERENCES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table, number, toward
from .result import WeightingResult

METHOD_NAMES = {
    "sharp": "sharp bounds (quantile balancing)",
    "percentile": "box bounds (percentile bootstrap)",
}
KEYS = ("tan-2006", "zhao-small-bhattacharya-2019", "dorn-guo-2023")


def effect_name(r: WeightingResult) -> str:
    who = "average treatment effect" if r.estimand == "ate" else "average effect on the treated"
    scale = "risk difference" if r.outcome_type == "binary" else "difference in means"
    return f"{who} ({scale})"


def _level(r: WeightingResult) -> str:
    return level_text(r.ci_level)


def _span(a: float | None, b: float | None) -> str:
    return f"{number(a)} to {number(b)}"


def bounds_table(r: WeightingResult) -> Table:
    rows = []
    for row in r.rows():
        cells: tuple[str, ...] = (
            f"{row['lambda']:g}",
            "sharp" if row["method"] == "sharp" else "box",
            _span(row["lower"], row["upper"]),
            _span(*row["ci"]),
        )
        if r.outcome_type == "binary":
            cells += (_span(row["rr_lower"], row["rr_upper"]), _span(*row["rr_ci"]))
        rows.append(cells)
    columns: tuple[str, ...] = ("Λ", "Bounds", "Effect bounds", f"{_level(r)} interval")
    if r.outcome_type == "binary":
        columns += ("Risk-ratio bounds", f"{_level(r)} interval (risk ratio)")
    return Table(
        columns,
        tuple(rows),
        title=f"Weighted {effect_name(r)} under hidden confounding up to Λ",
        footnotes=(
            "Λ: the most a hidden confounder may multiply any unit's odds of treatment beyond "
            "what the measured covariates explain (the marginal sensitivity model).",
            "Sharp: quantile-balancing bounds (Dorn & Guo 2023). Box: bounds over every weight "
            "in the model's range (Zhao, Small & Bhattacharya 2019).",
            f"Intervals: percentile bootstrap, {r.resamples:,} resamples within each arm, seed "
            f"{r.seed}, the propensity model"
            + (" refitted in each" if r.propensity_source == "model" else " given (fixed)")
            + ".",
        ),
    )


def crossing_table(r: WeightingResult) -> Table:
    rows = []
    for method in r.methods:
        value = r.lambda_at_null[method]
        shown = f"beyond {r.lam.max():g}" if value is None else f"{value:.3f}"
        rows.append((METHOD_NAMES[method], shown))
    return Table(
        ("Bounds", f"Least Λ at which the {_level(r)} interval includes {r.target:g}"),
        tuple(rows),
        title="Where the conclusion changes",
        footnotes=(
            f"Solved (Brent's method on each resample's bounds), searched over Λ from 1 to "
            f"{r.lam.max():g}.",
        ),
    )


def overlap_table(r: WeightingResult) -> Table:
    ov = r.overlap

    def span(pair: list) -> str:
        return f"{pair[0]:.3f} to {pair[1]:.3f}"

    verdict = "poor: read the bounds with care" if ov["poor"] else "no sign of poor overlap"
    return Table(
        ("Group", "Propensities"),
        (
            ("Treated", span(ov["treated"])),
            ("Controls", span(ov["control"])),
            ("Common support", span(ov["common_support"])),
            ("Units outside it", f"{ov['share_outside']:.1%}"),
        ),
        title="Overlap of the treated and the controls (positivity)",
        footnotes=(
            f"Overlap: {verdict}. Poor overlap (over 10% of units outside, or propensities "
            "beyond 0.01 to 0.99, common practice) makes weights extreme. Extreme "
            f"propensities: {_extreme_text(r)}.",
        ),
    )


def _extreme_text(r: WeightingResult) -> str:
    if r.extreme == "clip":
        return f"clipped to [{r.cut:g}, {1 - r.cut:g}]"
    if r.extreme == "trim":
        return f"units outside [{r.cut:g}, {1 - r.cut:g}] left out"
    return "used as fitted (neither clipped nor trimmed)"


def sentence(r: WeightingResult) -> str:
    level = _level(r)
    head = (
        f"The weighted {effect_name(r)} was {number(r.estimate)} ({level} CI "
        f"{_span(*r.estimate_ci)}, percentile bootstrap)"
    )
    if r.risk_ratio is not None:
        head += f"; risk ratio {number(r.risk_ratio)}"
    sharp, box = r.lambda_at_null.get("sharp"), r.lambda_at_null.get("percentile")
    if r.methods == ("percentile",):
        return head + _box_only(r, box, level)
    tgt = f"{r.target:g}"
    if sharp == 1.0 and box == 1.0:
        return head + f". Its {level} interval includes {tgt} without any hidden confounding."
    if sharp is None and box is None:
        return head + (
            f". Under the marginal sensitivity model its {level} interval excludes {tgt} for "
            f"every Λ up to {r.lam.max():g} by both the sharp and the box bounds: a hidden "
            f"confounder that multiplies or divides each unit's odds of treatment by at most "
            f"{r.lam.max():g}, beyond what the measured covariates explain, could not move it "
            f"to include {tgt}."
        )
    could = (
        "a hidden confounder that multiplies or divides each unit's odds of treatment by up to "
        "{lam}, beyond what the measured covariates explain, could move the interval to include "
        f"{tgt}"
    )
    if sharp is None:
        return head + (
            f". Under the marginal sensitivity model its {level} interval excludes {tgt} for "
            f"every Λ up to {r.lam.max():g} by the sharp bounds; by the box bounds, which are "
            f"wider, it first includes {tgt} at Λ = {box:.3f}."
        )
    if box is None:  # pragma: no cover - the sharp bounds lie inside the box bounds
        box_text = f"beyond {r.lam.max():g}"
    else:
        box_text = f"{box:.3f}"
    # "could ... by up to Λ" holds only at or above the crossing: the printed Λ is rounded
    # up (1.0947 printed 1.09 said a factor of 1.09 could, which falls short)
    up = toward(f"{sharp:.3f}", sharp, up=True)
    return head + (
        f". Under the marginal sensitivity model its {level} interval first includes {tgt} at "
        f"Λ = {up} by the sharp bounds (at Λ = {box_text} by the box bounds, which are "
        f"wider): by the sharp bounds, " + could.format(lam=up) + "."
    )


def _box_only(r: WeightingResult, box: float | None, level: str) -> str:
    tgt = f"{r.target:g}"
    if box == 1.0:
        return f". Its {level} interval includes {tgt} without any hidden confounding."
    if box is None:
        return (
            f". Under the marginal sensitivity model its {level} interval excludes {tgt} for "
            f"every Λ up to {r.lam.max():g} by the box bounds (valid for every weight in the "
            f"model's range): no hidden confounder that multiplies or divides each unit's odds "
            f"of treatment by at most {r.lam.max():g}, beyond what the measured covariates "
            f"explain, could move it to include {tgt}."
        )
    return (
        f". Under the marginal sensitivity model its {level} interval first includes {tgt} at "
        f"Λ = {box:.3f} by the box bounds; these are wider than the sharp bounds (not computed "
        f"here), so a hidden confounder would need at least that factor on each unit's odds "
        f"of treatment to move the interval to include {tgt}."
    )


def assumptions(r: WeightingResult) -> tuple[str, ...]:
    return (
        "The propensity model is correct apart from the hidden confounder; the hidden "
        "confounder moves each unit's odds of treatment by at most Λ (the marginal "
        "sensitivity model).",
        "Sharp bounds: the outcome's conditional quantiles are linear in the covariates "
        + (
            "(binary outcome: a logistic model in each arm)."
            if r.outcome_type == "binary"
            else "(a linear quantile regression in each arm)."
        ),
    )


def document(r: WeightingResult) -> Document:
    lead = sentence(r)
    notes = list(r.notes)
    if r.seed_drawn:
        notes.append(f"Seed {r.seed} was drawn; give it to repeat this run.")
    blocks: tuple[Block, ...] = (
        bounds_table(r),
        crossing_table(r),
        overlap_table(r),
        prose(lead, role="sentence"),
    )
    blocks += standard_tail(notes, r.cautions, assumptions(r))
    return Document(
        "Weighted estimate under the marginal sensitivity model",
        blocks,
        figures=figures(r),
        references=tuple(REFERENCES[k] for k in KEYS),
    )


def figures(r: WeightingResult) -> tuple[Figure, ...]:
    """The figure this result can draw (on demand): bounds and intervals against Λ."""
    from functools import partial

    from .figures import draw

    caption = f"Weighted {r.estimand.upper()}: bounds and {_level(r)} intervals against Λ"
    return (Figure("weighting", caption, partial(draw, r)),)


METHODS = (
    "We estimated the effect by inverse probability weighting (stabilised weights, logistic "
    "propensity model) and assessed its sensitivity to unmeasured confounding under the "
    "marginal sensitivity model (Tan 2006), in which a hidden confounder may multiply each "
    "unit's odds of treatment by at most a factor Λ beyond the measured covariates. At each Λ "
    "we report box bounds (Zhao, Small & Bhattacharya 2019) and sharp quantile-balancing "
    "bounds (Dorn & Guo 2023), each with a percentile-bootstrap interval in which the "
    "propensity model was refitted in every resample, and the least Λ at which each interval "
    "includes the null."
)


def summary_table(items: Sequence[Any]) -> Table:
    """One row an estimate: the weighted effect, its interval, the least Λ by each method."""
    rows = []
    level = ""
    for item in items:
        label, r = item
        level = _level(r)

        def star(value: float | None, r: WeightingResult = r) -> str:
            return f"beyond {r.lam.max():g}" if value is None else f"{value:.2f}"

        rows.append(
            (
                str(label),
                r.estimand.upper(),
                f"{number(r.estimate)} ({_span(*r.estimate_ci)})",
                star(r.lambda_at_null["sharp"]) if "sharp" in r.methods else "not computed",
                star(r.lambda_at_null["percentile"])
                if "percentile" in r.methods
                else "not computed",
            )
        )
    return Table(
        (
            "Estimate",
            "Estimand",
            f"Weighted effect ({level} CI)",
            "Least Λ, sharp",
            "Least Λ, box",
        ),  # fmt: skip
        tuple(rows),
        title="Weighted estimates under the marginal sensitivity model",
        footnotes=(
            "Least Λ: the smallest odds multiplier at which the interval includes the null "
            "(or the stated target), solved.",
        ),
    )


def report_part(items: Sequence[Any]) -> Any:
    """The family's section of a manuscript report: each estimate's sentence and Document,
    a table across estimates, one figure an estimate."""
    from dataclasses import replace

    from ..output.report import simple_part

    part = simple_part(
        "weighting",
        items,
        METHODS,
        assumptions=tuple(dict.fromkeys(a for _, r in items for a in assumptions(r))),
        references=tuple(REFERENCES[k] for k in KEYS),
    )
    return replace(part, tables=(summary_table(items),))
