"""Bounds on a weighted estimate in words and tables."""

from __future__ import annotations

from ..common.notes import REFERENCES
from ..output.document import Block, Document, prose, standard_tail
from ..output.tables import Table, number
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
    return f"{r.ci_level:.0%}"


def _span(a: float | None, b: float | None) -> str:
    return f"{number(a)} to {number(b)}"


def bounds_table(r: WeightingResult) -> Table:
    rows = []
    for row in r.rows():
        cells = (
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
    for method in ("sharp", "percentile"):
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
    sharp, box = r.lambda_at_null["sharp"], r.lambda_at_null["percentile"]
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
    if sharp is None:
        first = f"{box:.2f} by the box bounds and beyond {r.lam.max():g} by the sharp bounds"
        least = box
    elif box is None:  # pragma: no cover - the sharp bounds lie inside the box bounds
        first = f"{sharp:.2f} by the sharp bounds and beyond {r.lam.max():g} by the box bounds"
        least = sharp
    else:
        first = f"{sharp:.2f} by the sharp bounds ({box:.2f} by the box bounds)"
        least = min(sharp, box)
    return head + (
        f". Under the marginal sensitivity model its {level} interval first includes {tgt} at "
        f"Λ = {first}: a hidden confounder that multiplies or divides each unit's odds of "
        f"treatment by up to {least:.2f}, beyond what the measured covariates explain, could "
        f"move the interval to include {tgt}."
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
        sentence=lead,
        references=tuple(REFERENCES[k] for k in KEYS),
    )
