"""Coefficient stability in words, a table and a figure."""

from __future__ import annotations

from typing import Any

from ..common.notes import REFERENCES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table, number
from .result import StabilityResult


def table(r: StabilityResult) -> Table:
    short = f"{number(r.estimate_short, 4)} ({number(r.r2_short, 3)})"
    long = f"{number(r.estimate_long, 4)} ({number(r.r2_long, 3)})"
    rows = [
        ("Coefficient: short regression (R²)", short),
        ("Coefficient: with the controls (R²)", long),
        ("R-max", number(r.r2_max, 3)),
        (f"Bias-adjusted coefficient at delta {r.delta:g}, exact",
         "-" if r.bias_adjusted is None else number(r.bias_adjusted, 4)),
        (f"Bias-adjusted coefficient at delta {r.delta:g}, approximate",
         number(r.bias_adjusted_approx, 4)),
        (f"Delta that brings it to {r.target:g}, exact",
         "-" if r.delta_for_target is None else number(r.delta_for_target, 3)),
        (f"Delta that brings it to {r.target:g}, approximate",
         number(r.delta_for_target_approx, 3)),
    ]  # fmt: skip
    if r.bias_adjusted_roots and len(r.bias_adjusted_roots) > 1:
        rows.append(("Every real root (bias-adjusted)",
                     ", ".join(number(x, 4) for x in r.bias_adjusted_roots)))  # fmt: skip
    return Table(("Coefficient stability (Oster 2019)", "Value"), tuple(rows),
                 title="Selection on unobservables proportional to observables")  # fmt: skip


def sentence(r: StabilityResult) -> str:
    exact = r.delta_for_target is not None
    d = float(r.delta_for_target if r.delta_for_target is not None else r.delta_for_target_approx)
    kind = "" if exact else " (approximate; give the three variances for the exact value)"
    text = (
        f"With R-max {number(r.r2_max, 3)}, the unobserved controls would have to be "
        f"{number(abs(d), 2)} times as strongly related to the treatment as the observed ones "
        f"(delta) to bring the coefficient to {r.target:g}{kind}"
    )
    if d is not None and d < 0:
        text += "; a negative delta means selection in the opposite direction"
    value = r.bias_adjusted if r.bias_adjusted is not None else r.bias_adjusted_approx
    text += f". At delta {r.delta:g} the bias-adjusted coefficient is {number(value, 4)}"
    if r.complex_nearer is not None:
        text += (
            " (a root far from the long estimate: the two roots nearest it are complex at "
            "this delta)"
        )
    text += "."
    return text


def document(r: StabilityResult) -> Document:
    lead = sentence(r)
    blocks: tuple[Block, ...] = (table(r), prose(lead, role="sentence"))
    blocks += standard_tail(r.notes, r.cautions, (
        "Proportional selection: the unobserved controls relate to the treatment in the "
        "same proportion (delta) as the observed ones, and they are orthogonal to them.",
        "Unadjusted R² throughout; the variances share one n or n - 1 convention.",
    ))  # fmt: skip
    return Document("Coefficient stability", blocks, figures=figures(r), references=references())


def figures(r: Any) -> tuple[Figure, ...]:
    """The figure this result can draw (on demand)."""
    from functools import partial

    from .figures import stability_figure

    return (
        Figure(
            "stability", "The bias-adjusted coefficient against delta", partial(stability_figure, r)
        ),
    )


METHODS = (
    "We assessed coefficient stability under proportional selection (Oster 2019): the "
    "coefficient adjusted for unobserved confounders whose selection is delta times that on "
    "the observed controls, up to an R-squared of R-max, and the delta at which the adjusted "
    "coefficient would reach the stated target."
)


def report_part(items: Any) -> Any:
    """The family's section of a manuscript report, from each result's own Document."""
    from ..output.report import simple_part

    return simple_part("stability", items, METHODS, references=references())


def references() -> tuple[str, ...]:
    """The method's sources (shown under every view and in a report)."""
    return (REFERENCES["oster-2019"],)
