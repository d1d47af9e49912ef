"""The impact threshold in words and a table."""

from __future__ import annotations

from typing import Any

from ..common.notes import REFERENCES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table, count, number, percent
from .result import ImpactResult


def _dof(r: ImpactResult) -> str:
    return "as given" if r.n is None else f"n - covariates - 2 = {count(r.dof)}"


def _regression(r: ImpactResult) -> str:
    return f"t = {_t(r.t)} on {count(r.dof)} residual degrees of freedom"


def table(r: ImpactResult) -> Table:
    change = "lose" if r.significant else "gain"
    rows = [
        ("Partial correlation of treatment and outcome, observed", number(r.correlation, 3)),
        (f"Partial correlation at the edge of significance (alpha {r.alpha:g})",
         number(r.correlation_threshold, 3)),
        ("Impact needed: product of the omitted variable's two partial correlations",
         number(r.itcv, 3)),
        ("Each of the two, if equal in size", number(r.itcv_component, 3)),
    ]  # fmt: skip
    if r.bias_share is not None:
        what = (
            "Share of the coefficient bias would have to account for"
            if r.significant
            else "Share of the size significance needs that bias would have to be hiding"
        )
        rows.append((what, percent(r.bias_share)))  # fmt: skip
    if r.estimate_growth is not None:
        rows.append(("Growth the coefficient needs to reach significance",
                     percent(r.estimate_growth)))  # fmt: skip
    if r.swapped_observations is not None and r.significant:
        rows.append(("Observations to swap for ones with no treatment effect",
                     f"{r.swapped_observations:,.0f}"))  # fmt: skip
    return Table(
        ("From the regression", "Value"),
        tuple(rows),
        title=f"What it would take to {change} significance (t = {_t(r.t)}, {count(r.dof)} df)",
        footnotes=(
            f"Degrees of freedom: {_dof(r)}; two-sided critical t {number(r.t_critical, 3)}. "
            "Correlations are partial on the model's covariates.",
        ),
    )


def _t(t: float) -> str:
    """A t statistic as printed: two decimals, or three significant digits when huge."""
    return f"{t:.2f}" if abs(t) < 1e6 else f"{t:.3g}"


def sentence(r: ImpactResult) -> str:
    c = number(abs(r.itcv_component), 2)
    level = f"{r.alpha:g}"
    if r.significant:
        if abs(r.itcv_component) >= 0.995:  # printed as 1.00: say what that takes
            # the product is then at least 0.995² > 0.99, and below 1 for any finite t (1.0
            # in double precision past t ~ 1e8): 0.99 is a bound that holds exactly
            p = "0.99"
            needed = (
                f"only if an omitted variable nearly duplicated both the treatment and the "
                "outcome: its partial correlations with the two, beyond the covariates, would "
                f"have to multiply to at least {p} in the direction that weakens it (so each "
                f"at least {p}, as neither can exceed 1)"
            )
        else:
            needed = (
                "only if an omitted variable's partial correlations with the treatment and "
                "with the outcome, beyond the covariates, multiplied to at least "
                f"{number(abs(r.itcv), 3)} in the direction that weakens it ({c} with each, "
                "if the two are equal)"
            )
        text = (
            f"In this regression ({_regression(r)}), the treatment's coefficient could stop "
            f"being significant at the {level} level {needed}; a smaller product leaves it "
            "significant"
        )
        if r.bias_share is not None:
            text += (
                f". Put another way, bias would have to account for {percent(r.bias_share)} "
                "of the coefficient"
            )
            if r.swapped_observations is not None:
                text += (
                    f", as if about {r.swapped_observations:,.0f} of the {r.n:,} observations "
                    "were swapped for ones in which the treatment has no effect"
                )
    else:
        text = (
            f"In this regression ({_regression(r)}), the treatment's coefficient is not "
            f"significant at the {level} level. An omitted variable could make it significant "
            f"only by suppressing it: partial correlations of about {c} in size with the "
            "treatment and with the outcome, of opposite signs"
        )
        if r.bias_share is not None and r.estimate_threshold is not None:
            text += (
                f". Put another way, bias would have to be hiding {percent(r.bias_share)} of "
                f"the size significance needs ({number(r.estimate_threshold, 3)})"
            )
        if r.estimate_growth is not None:
            text += (
                f"; the coefficient itself would have to grow by {percent(r.estimate_growth)} "
                "to reach it"
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
    "For each regression coefficient we asked how strongly an omitted variable would have to "
    "correlate with the treatment and with the outcome, net of the covariates, for the "
    "coefficient's statistical significance to change: the impact threshold of Frank (2000), "
    "the least product of those two partial correlations that could do it, with the share "
    "of the coefficient bias would have to account for (Frank et al. 2013)."
)


def report_part(items: Any) -> Any:
    """The family's section of a manuscript report, from each result's own Document."""
    from ..output.report import simple_part

    return simple_part("impact", items, METHODS, references=references())


def references() -> tuple[str, ...]:
    """The method's sources (shown under every view and in a report)."""
    return (REFERENCES["frank-2000"],)
