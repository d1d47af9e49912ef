"""Probabilistic bias analysis in words and a table."""

from __future__ import annotations

from typing import Any

from ..common.levels import level_text
from ..common.notes import REFERENCES
from ..common.scales import SCALES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table, number
from .result import SimulationResult


def table(r: SimulationResult) -> Table:
    def span(pair: tuple[float, float]) -> str:
        return f"{number(pair[0])} to {number(pair[1])}"

    target = f"{r.target:g}"
    rows = [
        ("Observed", f"{number(r.estimate)} ({level_text(r.ci_level)} CI {span(r.ci)})"),
        ("Bias-adjusted median, systematic error only", number(r.median)),
        ("95% interval, systematic error only", span(r.interval)),
        (f"Share of draws at or beyond {target}, systematic error only",
         f"{r.share_beyond_target:.1%}"),
        ("Bias-adjusted median, systematic and random error", number(r.median_total)),
        ("95% simulation interval, systematic and random error", span(r.interval_total)),
    ]  # fmt: skip
    if r.share_beyond_target_total is not None:
        rows.append((f"Share of draws at or beyond {target}, systematic and random error",
                     f"{r.share_beyond_target_total:.1%}"))  # fmt: skip
    return Table(
        ("Probabilistic bias analysis", "Value"),
        tuple(rows),
        title=f"A hidden binary confounder: {r.draws - r.discarded:,} draws",
        footnotes=tuple(f"Prior on {k.replace('_', ' ')}: {v}." for k, v in r.priors.items()),
    )


def sentence(r: SimulationResult) -> str:
    name = SCALES[r.scale].name
    return (
        f"Under the stated priors for a hidden binary confounder, the bias-adjusted {name} had "
        f"a median of {number(r.median)} (95% interval {number(r.interval[0])} to "
        f"{number(r.interval[1])} for systematic error, {r.share_beyond_target:.1%} of draws "
        f"at {r.target:g} or beyond; {number(r.interval_total[0])} to "
        f"{number(r.interval_total[1])} with random error added"
        + (f", {r.share_beyond_target_total:.1%} of draws at {r.target:g} or beyond"
           if r.share_beyond_target_total is not None else "")
        + ")."
    )  # fmt: skip


def document(r: SimulationResult) -> Document:
    lead = sentence(r)
    blocks: tuple[Block, ...] = (table(r), prose(lead, role="sentence"))
    blocks += standard_tail(r.notes, r.cautions, (
        "A binary confounder that does not modify the treatment effect; prevalences "
        "conditional on the measured covariates; priors independent unless a correlation of "
        "the prevalences is given.",
    ))  # fmt: skip
    return Document(
        "Probabilistic bias analysis", blocks, figures=figures(r), references=references()
    )


def figures(r: Any) -> tuple[Figure, ...]:
    """The figure this result can draw (on demand)."""
    from functools import partial

    from .figures import simulation_figure

    return (
        Figure(
            "simulate", "The distribution of bias-adjusted estimates", partial(simulation_figure, r)
        ),
    )


METHODS = (
    "We carried out a probabilistic bias analysis for a hidden binary confounder (Greenland "
    "2005; Lash, Fox & Fink 2009): bias parameters were drawn from the stated prior "
    "distributions, each draw's bias-adjusted estimate computed, and the distribution "
    "summarised with and without random error."
)


def report_part(items: Any) -> Any:
    """The family's section of a manuscript report, from each result's own Document."""
    from ..output.report import simple_part

    return simple_part("simulate", items, METHODS, references=references())


def references() -> tuple[str, ...]:
    """The method's sources (shown under every view and in a report)."""
    return (
        REFERENCES["greenland-2005"],
        REFERENCES["lash-fox-fink-2009"],
    )
