"""The E-value family's section of a manuscript report: the supplement table across the
estimates, the forest figure, Methods and Results paragraphs, and each estimate's Document."""

from __future__ import annotations

from collections.abc import Sequence
from functools import partial
from typing import Any

from ..common.notes import REFERENCES
from ..common.scales import SCALES, from_risk_ratio
from ..output.document import Figure
from ..output.report import ReportPart
from ..output.tables import Table, number
from .figures import evalue_figure, forest_figure
from .present import RARE_CUTOFF, document, level_name, observed_value

ASSUMPTION = (
    "E-values: the bounding-factor argument (Ding & VanderWeele 2016) for one confounder or "
    "several, on the risk-ratio scale; approximate conversions for other scales."
)


def _interval(result: Any) -> tuple[float, float] | None:
    """The observed interval, on the estimate's own scale: as given, or mapped back from the
    risk-ratio interval the E-value used (an interval from a standard error)."""
    if result.ci is not None:
        return float(result.ci[0]), float(result.ci[1])
    if result.rr_ci is None:
        return None
    contrast = float(result.contrast)
    back = [
        float(
            from_risk_ratio(
                str(result.scale), float(v), outcome=result.outcome, sd=result.sd, contrast=contrast
            )
        )  # fmt: skip
        for v in result.rr_ci
    ]
    return min(back), max(back)


def supplement_table(items: Sequence[tuple[str, Any]]) -> Table:
    """One row an estimate: its scale, the observed value with its interval (at the level
    each row was given; the heading names it when all rows share one), the value on the
    risk-ratio scale, and both E-values."""
    levels = {level_name(r) for _, r in items if r.rr_ci is not None}
    shared = levels.pop() if len(levels) == 1 else None
    rows = []
    for label, r in items:
        shown = observed_value(float(r.estimate))
        span = _interval(r)
        if span is not None:
            inside = f"{observed_value(span[0])} to {observed_value(span[1])}"
            shown += f" ({inside})" if shared else f" ({level_name(r)} {inside})"
        rows.append((label, SCALES[str(r.scale)].short, shown, number(r.rr), number(r.evalue),
                     "-" if r.evalue_ci is None else number(r.evalue_ci)))  # fmt: skip
    observed = f"Observed ({shared})" if shared else "Observed (CI at the level given)"
    limit = f"E-value, {shared} limit" if shared else "E-value, CI limit"
    return Table(
        ("Estimate", "Scale", observed, "Risk-ratio scale", "E-value", limit),
        tuple(rows),
        title="Sensitivity of each estimate to unmeasured confounding (E-values)",
        footnotes=(
            "E-value: when a hidden confounder's two risk ratios (with the treatment, and with "
            "the outcome once the measured covariates are accounted for) are equal, the least "
            "common value at which it could move the estimate (or the interval limit nearest "
            "the null) to the null; one with both risk ratios below it could not. Each "
            "estimate's figure gives the unequal pairs that could.",
        ),
    )


def _frequency(label: str, r: Any) -> str | None:
    """How rare or common was decided for an odds or hazard ratio, in words."""
    if str(r.scale) not in ("or", "hr"):
        return None
    said = f"{label}: {r.outcome}"
    model = r.model or {}
    share = model.get("outcome_share")
    prevalence = getattr(r, "prevalence", None)
    if share is not None:
        return f"{said} (the outcome's share in the data, {share:.1%}, against {RARE_CUTOFF})"
    if prevalence is not None:
        return f"{said} (the stated prevalence, {float(prevalence):.3g}, against {RARE_CUTOFF})"
    return f"{said} (as stated by the analyst)"


def methods_text(items: Sequence[tuple[str, Any]]) -> str:
    results = [r for _, r in items]
    conversions = sorted({str(r.conversion) for r in results if r.scale != "rr"})
    text = (
        "For each adjusted estimate we computed E-values (VanderWeele & Ding 2017). A hidden "
        "confounder is described by two risk ratios, one with the treatment and one with the "
        "outcome once the measured covariates are accounted for; the E-value is the least "
        "value that both would have to reach, taken equal, before the confounder could move "
        "the estimate to the null, and a second E-value does the same for the confidence limit "
        "nearest the null. They rest on the bounding factor of Ding & VanderWeele (2016), "
        "bound one kind of bias only, and are necessary, not sufficient: a confounder of that "
        "strength could move the estimate, not would."
    )
    if conversions:
        text += " Estimates on other scales were mapped to the risk-ratio scale first: " + (
            "; ".join(conversions) + "."
        )
    decided = [f for label, r in items if (f := _frequency(label, r))]
    if decided:
        text += (
            " The conversion of an odds or hazard ratio depends on whether the outcome is rare; "
            "it was taken as follows: " + "; ".join(decided) + "."
        )
    return text


def results_text(items: Sequence[tuple[str, Any]]) -> tuple[str, ...]:
    out = []
    if len(items) > 1:
        ranked = sorted(items, key=lambda i: float(i[1].evalue))
        (low_label, low), (high_label, high) = ranked[0], ranked[-1]
        out.append(
            f"Across the {len(items)} estimates, E-values ranged from {number(low.evalue)} "
            f"({low_label}) to {number(high.evalue)} ({high_label})."
        )
    out += [f"{label}: {r.sentence()}" for label, r in items]
    return tuple(out)


def references(items: Sequence[tuple[str, Any]]) -> tuple[str, ...]:
    keys = ["vanderweele-ding-2017", "ding-vanderweele-2016"]
    scales = {str(r.scale) for _, r in items}
    outcomes = {str(r.outcome) for _, r in items}
    if "or" in scales and "common" in outcomes:
        keys.append("vanderweele-2017")
    if "hr" in scales and "common" in outcomes:
        keys.append("vanderweele-2020")
    return tuple(REFERENCES[k] for k in keys)


def report_part(items: Sequence[Any]) -> ReportPart:
    """The family's report section for labelled E-value results (one estimate each)."""
    pairs = [(label, r) for label, r in items]
    numbers = [getattr(item, "number", k) for k, item in enumerate(items, 1)]
    for label, r in pairs:
        if not r.is_scalar:
            from ..common.errors import InputError

            raise InputError(
                f"`results` {label!r}: a report takes one estimate a result", "results"
            )
    figures = [Figure("forest", "All estimates and their E-values", partial(forest_figure, pairs))]
    figures += [
        Figure(
            f"evalue_{k}",
            f"{label}: confounders that could explain it away",
            partial(evalue_figure, r),
        )  # fmt: skip
        for k, (label, r) in zip(numbers, pairs, strict=True)
    ]
    cautions = tuple(dict.fromkeys(c for _, r in pairs for c in r.cautions))
    return ReportPart(
        family="evalues",
        methods=methods_text(pairs),
        results=results_text(pairs),
        tables=(supplement_table(pairs),),
        figures=tuple(figures),
        details=tuple((label, document(r)) for label, r in pairs),
        entries=tuple({"label": label, **r.to_dict()} for label, r in pairs),
        assumptions=(ASSUMPTION,),
        cautions=cautions,
        references=references(pairs),
    )
