"""The impact threshold in words and a table."""

from __future__ import annotations

from typing import Any

from ..common.notes import REFERENCES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table, number, percent
from .result import ImpactResult


def _dof(r: ImpactResult) -> str:
    return "as given" if r.n is None else f"n - covariates - 2 = {r.dof:,.0f}"


def table(r: ImpactResult) -> Table:
    rows = [
        ("Observed partial correlation of treatment and outcome", number(r.correlation, 3)),
        (f"Correlation at which significance changes (alpha {r.alpha:g})",
         number(r.correlation_threshold, 3)),
        ("Impact threshold (product of the confounder's two correlations)", number(r.itcv, 3)),
        ("Each correlation, taken equal", number(r.itcv_component, 3)),
    ]  # fmt: skip
    if r.direction == "invalidate":
        rows.append(("Share of the estimate bias would have to remove",
                     percent(r.share_to_invalidate)))  # fmt: skip
        if r.cases_to_replace is not None:
            rows.append(("Cases to replace with cases of no effect",
                         f"{r.cases_to_replace:,.0f}"))  # fmt: skip
    else:
        if r.estimate_growth is not None:
            rows.append(("Growth the estimate needs to reach significance",
                         percent(r.estimate_growth)))  # fmt: skip
        rows.append(("Share of the threshold the estimate falls short by (1 − |t|/t crit)",
                     percent(r.share_to_invalidate)))  # fmt: skip
        if r.cases_to_replace is not None and r.estimate_threshold is not None:
            effect = _replacement_effect(r)
            rows.append((f"Cases to replace with cases of effect {effect}",
                         f"{r.cases_to_replace:,.0f}"))  # fmt: skip
    return Table(
        ("How strong a confounding variable would have to be", "Value"),
        tuple(rows),
        title=f"Impact threshold (t = {r.t:.2f} on {r.dof:,.0f} df)"
        if abs(r.t) < 1e6
        else f"Impact threshold (t = {r.t:.3g} on {r.dof:,.0f} df)",
        footnotes=(
            f"Degrees of freedom: {_dof(r)}; two-sided critical t {r.t_critical:.3f}. "
            "Correlations are partial on the "
            "model's covariates.",
        ),
    )


def _replacement_effect(r: ImpactResult) -> str:
    """|b| + d#, in the estimate's direction: the effect of the replacement cases that brings
    the estimate to the threshold when the share 1 - |b|/d# of cases is replaced."""
    sign = -1.0 if (r.estimate or 0) < 0 else 1.0
    return number(sign * (abs(r.estimate or 0) + (r.estimate_threshold or 0)), 3)


def sentence(r: ImpactResult) -> str:
    c = number(abs(r.itcv_component), 2)
    level = f"{r.alpha:g}"
    if r.direction == "invalidate":
        text = (
            f"To make the estimate lose significance at the {level} level, an omitted variable "
            f"would need an impact of {number(abs(r.itcv), 3)} (correlated at {c} with both the "
            "treatment and the outcome, beyond the covariates, in the direction that weakens "
            "the estimate); a weaker one could not"
        )
        text += f", and bias would have to remove {percent(r.share_to_invalidate)} of the estimate"
    else:
        text = (
            f"The estimate is not significant at the {level} level; to make it significant, a "
            f"suppressing variable would need correlations of {c} in size with the treatment "
            "and the outcome, of opposite signs"
        )
        if r.estimate_growth is not None:
            text += (
                f", and the estimate would have to grow by {percent(r.estimate_growth)} to "
                "reach significance"
            )
    if r.cases_to_replace is not None and r.direction == "invalidate":
        text += (
            f" (about {r.cases_to_replace:,.0f} of the {r.n:,} cases replaced by cases with "
            "no effect)"
        )
    elif r.cases_to_replace is not None and r.estimate_threshold is not None:
        text += (
            f" (as if about {r.cases_to_replace:,.0f} of the {r.n:,} cases were replaced by "
            f"cases with an effect of {_replacement_effect(r)})"
        )
    return text + "."


def document(r: ImpactResult) -> Document:
    lead = sentence(r)
    blocks: tuple[Block, ...] = (table(r), prose(lead, role="sentence"))
    blocks += standard_tail(r.notes, r.cautions, (
        "A linear model; the confounder's correlations are partial on the covariates; "
        "one omitted variable (or a combination of several).",
    ))  # fmt: skip
    return Document("Impact threshold", blocks, figures=figures(r), references=references())


def figures(r: Any) -> tuple[Figure, ...]:
    """This family draws no figure."""
    return ()


METHODS = (
    "We computed the impact threshold of a confounding variable (Frank 2000): the least "
    "product of its correlations with the treatment and with the outcome, net of the "
    "covariates, at which the coefficient would no longer be statistically significant."
)


def report_part(items: Any) -> Any:
    """The family's section of a manuscript report, from each result's own Document."""
    from ..output.report import simple_part

    return simple_part("impact", items, METHODS, references=references())


def references() -> tuple[str, ...]:
    """The method's sources (shown under every view and in a report)."""
    return (REFERENCES["frank-2000"],)
