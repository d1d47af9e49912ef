"""Rosenbaum bounds in words and a table."""

from __future__ import annotations

from typing import Any

from ..common.notes import REFERENCES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table
from .result import MatchedResult


def _p(x: float) -> str:
    return "<0.0001" if x < 1e-4 else f"{x:.4f}"


def table(r: MatchedResult) -> Table:
    low, high = r.estimate_low, r.estimate_high
    rows: list[tuple[str, ...]] = []
    for k, (g, u, lo) in enumerate(zip(r.gamma.tolist(), r.p_upper.tolist(),
                                       r.p_lower.tolist(), strict=True)):  # fmt: skip
        row: tuple[str, ...] = (f"{g:g}", _p(u), _p(lo))
        if low is not None and high is not None:
            row += (f"{low[k]:.4g} to {high[k]:.4g}",)
        rows.append(row)
    name = "sign test" if r.test == "sign" else "Wilcoxon signed-rank test"
    columns: tuple[str, ...] = ("Gamma", "Upper bound on p", "Lower bound on p")
    columns += ("Hodges-Lehmann estimates",) if low is not None else ()
    return Table(
        columns,
        tuple(rows),
        title=f"Rosenbaum bounds: {name} ({r.method}), {r.pairs:,} pairs",
        footnotes=(
            "Gamma: how many times more likely a hidden confounder could make one unit of a pair "
            f"the treated one; one-sided p-values for {_direction(r)}.",
        )
        + (
            (
                "Hodges-Lehmann estimates: the range of point estimates of the treated-minus-"
                "control effect that hidden bias up to Gamma allows (from the Walsh averages of "
                "all differences, zeros included).",
            )
            if low is not None
            else ()
        ),
    )


def _direction(r: MatchedResult) -> str:
    if r.test == "sign":
        more = "more" if r.alternative == "greater" else "fewer"
        return f"{more} events among the treated than among their controls"
    side = "higher" if r.alternative == "greater" else "lower"
    return f"treated outcomes {side} than control outcomes"


def sentence(r: MatchedResult) -> str:
    if r.gamma_at_alpha is None:
        return (
            f"The result is not significant at the {r.alpha:g} level even with no hidden bias "
            "(Gamma 1), so there is no Gamma to report."
        )
    if r.gamma_at_alpha == float("inf"):
        return f"The upper bound stays below {r.alpha:g} for every Gamma up to 1,000,000."
    g = f"{r.gamma_at_alpha:.2f}"
    return (
        f"The upper bound on the one-sided p-value reaches {r.alpha:g} at Gamma = {g}: only a "
        f"hidden confounder that could make one unit of a pair at least {g} times as likely as "
        "the other to be the treated one could make the result lose significance; a weaker "
        "hidden bias could not."
    )


def document(r: MatchedResult) -> Document:
    lead = sentence(r)
    notes = list(r.notes)
    if r.zero_pairs:
        rule = "ranked and counted as zero (Pratt)" if r.zeros == "pratt" else "dropped"
        pairs = "1 pair" if r.zero_pairs == 1 else f"{r.zero_pairs} pairs"
        verb = "was" if r.zero_pairs == 1 else "were"
        notes.append(f"{pairs} with a zero difference {verb} {rule}.")
    if r.missing:
        pairs = "1 pair" if r.missing == 1 else f"{r.missing} pairs"
        notes.append(f"{pairs} with a missing value left out (listed on stderr by the command).")
    blocks: tuple[Block, ...] = (table(r), prose(lead, role="sentence"))
    blocks += standard_tail(notes, r.cautions, (
        "Pairs matched on the measured covariates; a hidden confounder with bounded effect "
        f"(Gamma) on which unit is treated; a one-sided test for {_direction(r)}.",
    ))  # fmt: skip
    return Document("Rosenbaum bounds", blocks, figures=figures(r), references=references())


def figures(r: Any) -> tuple[Figure, ...]:
    """The figure this result can draw (on demand)."""
    from functools import partial

    from .figures import matched_figure

    return (Figure("matched", "The p-value bounds against Gamma", partial(matched_figure, r)),)


METHODS = (
    "For matched pairs we computed Rosenbaum's sensitivity bounds (Rosenbaum 2002): for each "
    "Gamma, the most that hidden bias which makes one unit of a pair up to Gamma times more "
    "likely to be the treated one could raise the one-sided p-value, and the least Gamma at "
    "which that worst case reaches the significance level."
)


def report_part(items: Any) -> Any:
    """The family's section of a manuscript report, from each result's own Document."""
    from ..output.report import simple_part

    return simple_part("matched", items, METHODS, references=references())


def references() -> tuple[str, ...]:
    """The method's sources (shown under every view and in a report)."""
    return (REFERENCES["rosenbaum-2002"],)
