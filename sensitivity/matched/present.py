"""Rosenbaum bounds in words and a table."""

from __future__ import annotations

from typing import Any

from ..common.notes import REFERENCES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table, toward
from .result import MatchedResult


def _p(x: float) -> str:
    return "<0.0001" if x < 1e-4 else f"{x:.4f}"


def _name(r: MatchedResult) -> str:
    return "sign test" if r.test == "sign" else "Wilcoxon signed-rank test"


def heading(r: MatchedResult) -> str:
    """The definition first: what Gamma is, and what was tested."""
    return (
        f"Gamma is how many times more likely a hidden confounder could make one unit of a "
        f"matched pair, rather than the other, the treated one (Gamma 1: no hidden bias). "
        f"Tested: {_direction(r)}, one-sided {_name(r)} ({r.method}), {r.pairs:,} pairs, alpha "
        f"{r.alpha:g}."
    )


def _stops(r: MatchedResult) -> str:
    g = r.gamma_at_alpha
    if g is None:
        return f"Not below {r.alpha:g} even at Gamma 1 (no hidden bias)."
    if g == float("inf"):
        return f"Below {r.alpha:g} at every Gamma up to 1,000,000."
    return (
        f"It stops being below {r.alpha:g} at Gamma = {g:.3f} (solved exactly, not read off "
        "the grid)."
    )


def table(r: MatchedResult) -> Table:
    """The reader's question first: the worst-case p at each Gamma, and whether it holds."""
    rows = tuple(
        (f"{g:g}", _p(u), "yes" if u < r.alpha else "no")
        for g, u in zip(r.gamma.tolist(), r.p_upper.tolist(), strict=True)
    )
    return Table(
        ("Gamma", "Worst-case p", f"Below {r.alpha:g}?"),
        rows,
        title="Does the result survive hidden bias? The worst-case one-sided p at each Gamma",
        footnotes=(_stops(r),),
    )


def other_table(r: MatchedResult) -> Table:
    """The rest of the bounds: the best-case p and, for the signed-rank test, the range of
    Hodges-Lehmann estimates that hidden bias up to Gamma allows."""
    low, high = r.estimate_low, r.estimate_high
    rows: list[tuple[str, ...]] = []
    for k, (g, lo) in enumerate(zip(r.gamma.tolist(), r.p_lower.tolist(), strict=True)):
        row: tuple[str, ...] = (f"{g:g}", _p(lo))
        if low is not None and high is not None:
            row += (f"{low[k]:.4g} to {high[k]:.4g}",)
        rows.append(row)
    columns: tuple[str, ...] = ("Gamma", "Best-case p")
    columns += ("Effect estimates allowed",) if low is not None else ()
    foot = () if low is None else (
        "Effect estimates allowed: the range of Hodges-Lehmann estimates of the treated-minus-"
        "control effect under hidden bias up to Gamma (from the Walsh averages of all "
        "differences, zeros included).",
    )  # fmt: skip
    return Table(columns, tuple(rows), title="The other side of the bounds", footnotes=foot)


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
        return (
            f"The worst-case one-sided p-value stays below {r.alpha:g} for every Gamma up to "
            "1,000,000."
        )
    # both claims hold below the Gamma found, so it is printed rounded down (1.92916 as 1.92:
    # "under 1.93" would take in Gammas where the p-value has reached alpha)
    g = toward(f"{r.gamma_at_alpha:.2f}", r.gamma_at_alpha, up=False)
    return (
        f"The worst-case one-sided p-value stays below {r.alpha:g} for every Gamma under {g} "
        f"and reaches {r.alpha:g} at a Gamma of {r.gamma_at_alpha:.3f}: the result could lose "
        f"significance at that level only if a hidden confounder made one unit of a pair at "
        f"least {g} times as likely as the other to be the treated one; a weaker hidden bias "
        "could not do it."
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
    blocks: tuple[Block, ...] = (
        prose(heading(r), role="key"),  # in Markdown and LaTeX tables: their first footnote
        table(r),
        prose(lead, role="sentence"),
        other_table(r),
    )
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
