"""Tipping-point grids in words and tables: the Document every view renders."""

from __future__ import annotations

import numpy as np

from ..common.scales import SCALES
from ..output.document import Document, prose, standard_tail
from ..output.tables import Table, number
from .result import TippingGrid

NAMES = {
    "prevalence_treated": "Prevalence of U among the treated",
    "prevalence_control": "Prevalence of U among the controls",
    "outcome_effect": "Effect of U on the outcome",
    "rr_treatment": "Risk ratio of U with the treatment",
    "rr_outcome": "Risk ratio of U with the outcome",
    "r2_treatment": "Partial R² of U with the treatment",
    "r2_outcome": "Partial R² of U with the outcome",
}


def _lower_first(text: str) -> str:
    return text[:1].lower() + text[1:]


def _goal(g: TippingGrid) -> str:
    return "the null" if g.target_is_null else f"{g.target:g}"


def _first_row(g: TippingGrid) -> dict:
    from ..common.results import rows_of_layout

    cols = {k: v[:1] for k, v in g.columns().items()}
    return rows_of_layout(cols, g.row_layout())[0]


def _fmt(g: TippingGrid, name: str, value: float | None) -> str:
    if value is None or (isinstance(value, float) and np.isnan(value)):
        return "not reached"
    if name.startswith(("prevalence", "r2_")):
        return f"{value:.3g}" if value >= 0.001 or value == 0 else f"{value:.2e}"
    return f"{value:.4g}"


def _exact(g: TippingGrid, name: str, tp: dict, key: str) -> str:
    """The exact set in a few characters: "≥ 2.1", "≤ 0.3", "0.1 to 0.6", "all", "never"."""
    exact = tp[f"{key}_exact"]
    kind, low, high = exact["reached"], exact["low"], exact["high"]
    if kind == "never":
        return "never"
    if kind == "always":
        return "all values"
    if kind == "from":
        return "≥ " + _fmt(g, name, low)
    if kind == "up_to":
        return "≤ " + _fmt(g, name, high)
    return f"{_fmt(g, name, low)} to {_fmt(g, name, high)}"


def table(g: TippingGrid) -> Table:
    j = g.solved
    if j is None:
        r = _first_row(g)
        adj = r["bias_adjusted"]
        ci = "" if adj["ci"] is None else f"{adj['ci'][0]:.4g} to {adj['ci'][1]:.4g}"
        single = [(NAMES[n], _fmt(g, n, float(v[0]))) for n, v in g.axes]
        single.append(("Bias-adjusted estimate", f"{adj['estimate']:.4g}"))
        if ci:
            single.append(("Bias-adjusted CI", ci))
        single.append((f"Reaches {_goal(g)}", "yes" if r["reaches_target"] else "no"))
        return Table(("Quantity", "Value"), tuple(single), title="Bias-adjusted result")
    solved = g.axes[j][0]
    others = [g.axes[i][0] for i in g.varying if i != j]
    head = tuple(NAMES[o] for o in others)
    cols = head + (f"Estimate reaches {_goal(g)} at", "(exact)")
    if g.reach_ci is not None:
        cols += ("CI reaches it at", "(exact)")
    exact_note = (
        "'(exact)': from the closed-form formula, every value that reaches the target (which "
        "may lie outside the grid): at least (≥) or at most (≤) the crossing, between two "
        "values, all values, or never."
    )
    rows: list[tuple[str, ...]] = []
    for tp in g.tipping_points():
        row = tuple(_fmt(g, o, tp[o]) for o in others)
        row += (_fmt(g, solved, tp["estimate"]), _exact(g, solved, tp, "estimate"))
        if g.reach_ci is not None:
            row += (_fmt(g, solved, tp["ci"]), _exact(g, solved, tp, "ci"))
        rows.append(row)
    if not others:
        cols = ("",) + cols
        rows = [("Least value",) + r for r in rows]
    fixed = [f"{n} = {_fmt(g, n, float(v[0]))}" for n, v in g.axes if len(v) == 1]
    title = f"Tipping points: least {_lower_first(NAMES[solved])}"
    if fixed:
        title += f" (with {', '.join(fixed)})"
    return Table(
        cols,
        tuple(rows),
        title=title,
        footnotes=("'not reached': the conclusion does not tip within the grid.", exact_note),
    )


def tables(g: TippingGrid) -> list[Table]:
    return [table(g)]


def sentence(g: TippingGrid) -> str:
    j = g.solved
    what = {
        "binary": "a hidden binary confounder",
        "bounding": "a hidden confounder",
        "partial-r2": "a hidden confounder",
    }[g.kind]
    if j is None:
        r = _first_row(g)
        verdict = "would" if r["reaches_target"] else "would not"
        return (
            f"Under {what} with the stated strengths the estimate {verdict} reach "
            f"{_goal(g)} (bias-adjusted estimate "
            f"{r['bias_adjusted']['estimate']:.4g})."
        )
    tps = g.tipping_points()
    hit = [t for t in tps if t["estimate"] is not None]
    name = _lower_first(NAMES[g.axes[j][0]])
    if not hit:
        return (
            f"Within this grid, no {what} moves the estimate to {_goal(g)}; the "
            "conclusion does not tip over the strengths considered."
        )
    lo = min(t["estimate"] for t in hit)
    text = (
        f"The estimate reaches {_goal(g)} in {len(hit)} of {len(tps)} settings of "
        f"the other parameters; the smallest {name} that does so anywhere in the grid "
        f"is {_fmt(g, g.axes[j][0], lo)}"
    )
    if g.reach_ci is not None:
        ci_hit = [t["ci"] for t in tps if t["ci"] is not None]
        if ci_hit:
            text += f", and the interval reaches it from {_fmt(g, g.axes[j][0], min(ci_hit))}"
    return text + "."


def document(g: TippingGrid) -> Document:
    ci = "" if g.ci is None else f" (CI {g.ci[0]:g} to {g.ci[1]:g})"
    label = "OLS coefficient" if g.kind == "partial-r2" else SCALES[g.scale].name
    head = (
        f"Tipping-point analysis ({g.kind} view): {label} "
        f"{g.estimate:g}{ci}, target {g.target:g}; grid "
        + " x ".join(str(n) for n in g.shape)
        + f" = {int(np.prod(g.shape)):,} cells"
    )
    lead = sentence(g)
    blocks: list = [prose(head), table(g), prose(lead, role="sentence")]
    if g.extra.get("evalue") is not None:
        blocks.append(
            prose(
                f"E-value (both risk ratios equal): {number(g.extra['evalue'])}"
                + (
                    f"; for the CI: {number(g.extra['evalue_ci'])}"
                    if g.extra.get("evalue_ci") is not None
                    else ""
                )
            )
        )
    blocks += standard_tail(g.notes, g.cautions)
    return Document("Tipping points", tuple(blocks), sentence=lead)
