"""Coefficient stability in words, a table and a figure."""

from __future__ import annotations

from typing import Any

import numpy as np

from ..common.notes import REFERENCES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table, number
from .result import StabilityResult

#: The grid's selection ratios and R-max multiples of the long R² (with the result's own).
GRID_DELTAS = (0.5, 1.0, 2.0)
GRID_R2_MAX = (1.1, 1.3, 1.5, 2.0)


def caption(r: StabilityResult) -> str:
    """The inputs in one line."""
    variances = (
        "given (exact roots)" if r.variances is not None else "not given (approximation only)"
    )
    return (
        f"Inputs: treatment coefficient {number(r.estimate_short, 4)} without the controls "
        f"(R² {number(r.r2_short, 3)}), {number(r.estimate_long, 4)} with them (R² "
        f"{number(r.r2_long, 3)}); R-max {number(r.r2_max, 3)}; delta {_given(r.delta)}; target "
        f"{_given(r.target)}; variances {variances}."
    )


def _axes(r: StabilityResult) -> tuple[list[float], list[float]]:
    deltas = sorted({*GRID_DELTAS, float(r.delta)})
    maxes = [min(1.0, k * r.r2_long) for k in GRID_R2_MAX]
    maxes = [m for m in maxes if m > r.r2_long and abs(m - r.r2_max) > 5e-4]
    return deltas, sorted({*maxes, float(r.r2_max)})


def table(r: StabilityResult) -> Table:
    """The bias-adjusted coefficient over delta x R-max; the result's own cell marked."""
    from .core import adjusted_grid

    deltas, maxes = _axes(r)
    grid = adjusted_grid(r, np.array(deltas), np.array(maxes))
    exact = r.variances is not None
    rows = []
    for i, d in enumerate(deltas):
        cells = []
        for j, m in enumerate(maxes):
            value = grid["exact"][i, j] if exact else grid["approx"][i, j]
            text = "no real root" if not np.isfinite(value) else number(float(value), 4)
            if d == r.delta and m == r.r2_max:
                text = f"[{text}]"
            cells.append(text)
        rows.append((_given(d), *cells))
    kind = "exact root nearest the estimate with the controls" if exact else "approximation"
    foot = [
        f"Cells: the bias-adjusted coefficient ({kind}); [ ]: delta {_given(r.delta)} at R-max "
        f"{number(r.r2_max, 3)}, the values asked for.",
    ]
    d_approx = r.delta_for_target_approx
    if not np.isfinite(d_approx):
        approx = "none" if r.estimate_short == r.estimate_long else "beyond double precision"
    else:
        approx = number(d_approx, 3)
    if r.variances is None:
        found = f"{approx} approximate (the exact value needs the three variances)"
    else:
        exact_d = "none" if r.delta_for_target is None else number(r.delta_for_target, 3)
        found = f"{exact_d} exact, {approx} approximate"
    foot.append(
        f"Delta that brings the coefficient to {_given(r.target)} at R-max "
        f"{number(r.r2_max, 3)}: {found}. At delta {_given(r.delta)} and that R-max the "
        f"approximation gives {number(r.bias_adjusted_approx, 4)}."
    )
    return Table(
        ("delta \\ R-max", *(number(m, 3) for m in maxes)),
        tuple(rows),
        title="Bias-adjusted coefficient under proportional selection (Oster 2019)",
        footnotes=tuple(foot),
    )


def root_note(r: StabilityResult) -> str | None:
    """Extra real roots of the cubic at the result's delta and R-max, for a note."""
    roots = r.bias_adjusted_roots or ()
    if len(roots) < 2:
        return None
    return (
        f"Other real roots at delta {_given(r.delta)} (bias-adjusted coefficients): "
        + ", ".join(number(x, 4) for x in roots[1:])
        + "."
    )


def _given(x: float) -> str:
    """A value the user chose (delta, target) as given: 1.000001 is not shown as 1."""
    return f"{float(x):.12g}"


def _delta_words(r: StabilityResult) -> str:
    """The delta that brings the coefficient to the target, in words; where none does (the
    coefficient does not move with the controls, or the cubic has no such root) or the
    value is beyond double precision, say so instead of printing inf (issue 19)."""
    exact = r.variances is not None
    d = r.delta_for_target if exact else r.delta_for_target_approx
    lead = f"With R-max {number(r.r2_max, 3)}, "
    if d is None or not np.isfinite(d):
        target = _given(r.target)
        if exact:
            why = "the exact solution has none under these inputs"
        elif r.estimate_short == r.estimate_long:
            why = "the coefficient does not move when the controls are added"
        else:
            return (
                f"{lead}the approximate delta that would bring the coefficient to {target} "
                "lies beyond double precision"
            )
        return f"{lead}no delta brings the coefficient to {target} ({why})"
    kind = "" if exact else " (approximate; give the three variances for the exact value)"
    text = (
        f"{lead}the unobserved controls would have to be {number(abs(d), 2)} times as strongly "
        f"related to the treatment as the observed ones (delta) to bring the coefficient to "
        f"{_given(r.target)}{kind}"
    )
    if d < 0:
        text += "; a negative delta means selection in the opposite direction"
    return text


def sentence(r: StabilityResult) -> str:
    text = _delta_words(r)
    value = r.bias_adjusted if r.bias_adjusted is not None else r.bias_adjusted_approx
    text += f". At delta {_given(r.delta)} the bias-adjusted coefficient is {number(value, 4)}"
    if r.complex_nearer is not None:
        text += (
            " (a root far from the long estimate: the two roots nearest it are complex at "
            "this delta)"
        )
    text += "."
    return text


def document(r: StabilityResult) -> Document:
    lead = sentence(r)
    notes = (*r.notes, note) if (note := root_note(r)) else r.notes
    blocks: tuple[Block, ...] = (prose(caption(r)), table(r), prose(lead, role="sentence"))
    blocks += standard_tail(notes, r.cautions, (
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
