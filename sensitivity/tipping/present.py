"""Tipping-point grids in words and tables: the Document every view renders."""

from __future__ import annotations

from decimal import ROUND_CEILING, ROUND_FLOOR, ROUND_HALF_EVEN, Decimal
from typing import Any

import numpy as np

from ..common.levels import level_text
from ..common.notes import REFERENCES
from ..common.scales import SCALES
from ..output.document import Document, Figure, prose, standard_tail
from ..output.tables import Table, number
from .exact import TOLERANCE
from .result import KIND_NAMES, TippingGrid

NAMES = {
    "prevalence_treated": "Prevalence of U among the treated",
    "prevalence_control": "Prevalence of U among the controls",
    "outcome_effect": "Effect of U on the outcome",
    "rr_treatment": "Risk ratio of U with the treatment",
    "rr_outcome": "Risk ratio of U with the outcome",
    "r2_treatment": "Partial R² of U with the treatment",
    "r2_outcome": "Partial R² of U with the outcome",
    "difference": "Difference in the mean of U (treated minus controls, in SDs)",
}


def _lower_first(text: str) -> str:
    return text[:1].lower() + text[1:]


def _goal(g: TippingGrid) -> str:
    return "the null" if g.target_is_null else f"{g.target:g}"


def _first_row(g: TippingGrid) -> dict:
    from ..common.results import rows_of_layout

    cols = {k: v[:1] for k, v in g.columns().items()}
    return rows_of_layout(cols, g.row_layout())[0]


def _digits(name: str) -> int:
    """Significant digits a parameter prints with: 3 for shares, 4 otherwise."""
    return 3 if name.startswith(("prevalence", "r2_")) else 4


def _fmt(g: TippingGrid, name: str, value: float | None) -> str:
    """A parameter value as printed (3 significant digits for shares, 4 otherwise)."""
    if value is None or (isinstance(value, float) and np.isnan(value)):
        return "not reached"
    value = float(value)
    digits = _digits(name)
    if name.startswith(("prevalence", "r2_")) and 0 < abs(value) < 0.001:
        return f"{value:.{digits - 1}e}"
    return f"{value:.{digits}g}"


def round_outward(value: float, digits: int, direction: int) -> float:
    """`value` rounded to `digits` significant digits up (+1), down (-1) or to the nearest
    (0), in exact decimal arithmetic on the double: a value that prints exactly stays.

    >>> round_outward(3.0003, 4, 1), round_outward(0.375, 3, 1), round_outward(2.9996, 4, -1)
    (3.001, 0.375, 2.999)
    """
    if value == 0 or not np.isfinite(value):
        return value
    exact = Decimal(value)
    mode = {1: ROUND_CEILING, -1: ROUND_FLOOR, 0: ROUND_HALF_EVEN}[direction]
    return float(exact.quantize(Decimal(1).scaleb(exact.adjusted() - digits + 1), mode))


TOLERANCE_TEXT = f"1e{round(np.log10(TOLERANCE))}"  # 1e-9, as the methods write it

#: Per kind, the ends that start a reached piece (printed rounded up unless the printed
#: value itself tips on the grid) and the ends that stop one (rounded down likewise).
_STARTS = {"from": "low", "between": "low", "outside": "high"}
_STOPS = {"up_to": "high", "between": "high", "outside": "low"}


def shown_ends(g: TippingGrid, key: str) -> list[dict[str, float]]:
    """The printed ends of each row's exact set, so that the table never overstates it.

    An end is printed at the parameter's digits: to the nearest printed number when that
    number lies inside the set, or tips by the grid's own rule (the grid's tolerance), and
    otherwise outward (a start rounded up, a stop down): a crossing at 3.0003 prints as
    "≥ 3.001", not "≥ 3", when the grid value 3 does not tip; a crossing of 0.375 prints
    as 0.375.
    """
    j = g.solved
    assert j is not None
    name = g.axes[j][0]
    digits = _digits(name)
    exact = g.exact[key]
    kinds = [KIND_NAMES[int(k)] for k in np.ravel(exact["kind"])]
    ends = {"low": np.ravel(exact["low"]), "high": np.ravel(exact["high"])}
    shape = np.shape(exact["kind"])
    tips = g.tips.get(key)
    out: list[dict[str, float]] = [{} for _ in kinds]
    for table, direction in ((_STARTS, 1), (_STOPS, -1)):
        which = [table.get(k) for k in kinds]
        value = np.array([ends[w][i] if w else np.nan for i, w in enumerate(which)])
        near = np.array([round_outward(v, digits, 0) if w else np.nan
                         for v, w in zip(value, which, strict=True)])  # fmt: skip
        with np.errstate(invalid="ignore"):
            inside = direction * (near - value) >= 0
        if tips is not None:
            with np.errstate(all="ignore"):
                inside |= np.ravel(np.broadcast_to(tips(near.reshape(shape)), shape))
        for i, w in enumerate(which):
            if w:
                v = near[i] if inside[i] else round_outward(value[i], digits, direction)
                out[i][w] = float(v)
    return out


def _exact(g: TippingGrid, name: str, kind: str, ends: dict[str, float]) -> str:
    """The exact set in a few characters: "≥ 2.1", "≤ 0.3", "0.1 to 0.6", "≤ 0.1 or ≥ 0.7",
    "all values", "never"."""
    if kind == "never":
        return "never"
    if kind == "always":
        return "all values"
    low, high = (_fmt(g, name, ends.get(k)) for k in ("low", "high"))
    if kind == "from":
        return "≥ " + low
    if kind == "up_to":
        return "≤ " + high
    if kind == "outside":
        return f"≤ {low} or ≥ {high}"
    return f"{low} to {high}"


def table(g: TippingGrid) -> Table:
    j = g.solved
    if j is None:
        r = _first_row(g)
        adj = r["bias_adjusted"]
        ci = "" if adj["ci"] is None else f"{adj['ci'][0]:.4g} to {adj['ci'][1]:.4g}"
        single = [(NAMES[n], _fmt(g, n, float(v[0]))) for n, v in g.axes]
        single.append(("Bias-adjusted estimate", f"{adj['estimate']:.4g}"))
        level = f"{level_text(g.ci_level)} CI"
        if ci:
            single.append((f"Bias-adjusted {level}", ci))
        single.append((f"Estimate reaches {_goal(g)}", "yes" if r["reaches_target"] else "no"))
        if r.get("ci_reaches_target") is not None:
            single.append(
                (f"{level} includes {_goal(g)}", "yes" if r["ci_reaches_target"] else "no")
            )
        return Table(("Quantity", "Value"), tuple(single), title="Bias-adjusted result")
    solved = g.axes[j][0]
    others = [g.axes[i][0] for i in g.varying if i != j]
    head = tuple(NAMES[o] for o in others)
    cols = head + (f"Estimate reaches {_goal(g)} at", "(exact)")
    if g.reach_ci is not None:
        cols += (f"{level_text(g.ci_level)} CI reaches it at", "(exact)")
    # between two values, and either side of a gap, arise in the partial-R² view only
    shapes = ""
    if g.kind == "partial-r2":
        shapes = "between two values, on either side of a gap (≤ a or ≥ b), "
    exact_note = (
        "'(exact)': from the closed-form formula, every value that reaches the target, in or "
        f"beyond the grid: at least (≥) or at most (≤) the crossing, {shapes}all values, or "
        "never. A curve that only tends to the target (as the parameter grows without bound, "
        "or nears an excluded 0 or 1) never reaches it. Each printed end lies in the exact "
        "set or tips by the grid's own rule, which counts a value within "
        f"{TOLERANCE_TEXT} (relative) of the target as reaching it."
    )
    rows: list[tuple[str, ...]] = []
    keys = ("estimate", "ci") if g.reach_ci is not None else ("estimate",)
    shown = {key: shown_ends(g, key) for key in keys}
    for i, tp in enumerate(g.tipping_points()):
        row = tuple(_fmt(g, o, tp[o]) for o in others)
        for key in keys:
            kind = tp[f"{key}_exact"]["reached"]
            row += (_fmt(g, solved, tp[key]), _exact(g, solved, kind, shown[key][i]))
        rows.append(row)
    if not others:
        cols = ("",) + cols
        rows = [("Least value",) + r for r in rows]
    fixed = [
        f"{_lower_first(NAMES[n])} {_fmt(g, n, float(v[0]))}" for n, v in g.axes if len(v) == 1
    ]
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


def _settings(k: int, n: int) -> str:
    """Where a grid tips, counted over the settings of the parameters not solved for: 'in 4
    of 7 settings of the other parameters', 'within the grid' (one setting), 'in none of
    the 3 settings of the other parameters'."""
    if n == 1:
        return "within the grid" if k else "nowhere in the grid"
    if k == 0:
        return f"in none of the {n} settings of the other parameters"
    return f"in {k} of {n} settings of the other parameters"


def searched(g: TippingGrid) -> str:
    """The grid in words: each parameter's range, or its one value."""
    parts = []
    for name, values in g.axes:
        label = _lower_first(NAMES[name])
        if len(values) == 1:
            parts.append(f"{label} {_fmt(g, name, float(values[0]))}")
        else:
            parts.append(
                f"{label} {_fmt(g, name, float(values.min()))} to "
                f"{_fmt(g, name, float(values.max()))}"
            )
    return "; ".join(parts)


def sentence(g: TippingGrid) -> str:
    what = {
        "binary": "a hidden binary confounder",
        "bounding": "a hidden confounder (at its worst-case bias)",
        "partial-r2": "a hidden confounder",
        "continuous": "a hidden normal confounder",
    }[g.kind]
    goal = _goal(g)
    level = f"{level_text(g.ci_level)} CI"
    j = g.solved
    if j is None:
        r = _first_row(g)
        verdict = "would" if r["reaches_target"] else "would not"
        text = (
            f"With the stated strengths ({searched(g)}), {what} {verdict} move the estimate "
            f"to {goal} (bias-adjusted estimate {number(r['bias_adjusted']['estimate'], 3)})"
        )
        if r.get("ci_reaches_target") is not None:
            ci_verdict = "would" if r["ci_reaches_target"] else "would not"
            text += f", and the {level} {ci_verdict} include it"
        return text + "."
    tps = g.tipping_points()
    name = g.axes[j][0]
    label = _lower_first(NAMES[name])
    hit = [t["estimate"] for t in tps if t["estimate"] is not None]
    text = f"Over the grid searched ({searched(g)}), {what} moves the estimate to {goal} "
    text += _settings(len(hit), len(tps))
    if hit:
        text += f" (least {label} that does so: {_fmt(g, name, min(hit))})"
    if g.reach_ci is not None:
        ci_hit = [t["ci"] for t in tps if t["ci"] is not None]
        text += f". The {level} includes {goal} {_settings(len(ci_hit), len(tps))}"
        if ci_hit:
            text += f" (least {label}: {_fmt(g, name, min(ci_hit))})"
    return text + "."


def document(g: TippingGrid) -> Document:
    ci = "" if g.ci is None else f" ({level_text(g.ci_level)} CI {g.ci[0]:g} to {g.ci[1]:g})"
    label = "OLS coefficient" if g.kind == "partial-r2" else SCALES[g.scale].name
    cells = int(np.prod(g.shape))
    head = (
        f"Tipping-point analysis ({g.kind} view): {label} "
        f"{g.estimate:g}{ci}, target {g.target:g}; grid "
        + " x ".join(str(n) for n in g.shape)
        + f" = {cells:,} {'cell' if cells == 1 else 'cells'}"
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
    return Document(
        "Tipping points", tuple(blocks), figures=figures(g), references=references(g.kind)
    )


def figures(g: Any) -> tuple[Figure, ...]:
    """The figure this result can draw (on demand)."""
    if len(g.varying) not in (1, 2):
        return ()
    from functools import partial

    from .figures import tipping_figure

    return (Figure("tipping", "Where the conclusion tips", partial(tipping_figure, g)),)


METHODS = (
    "We computed how the estimate would change under a hidden confounder of chosen "
    "prevalence (or mean difference) and strength (Lin, Psaty & Kronmal 1998; VanderWeele & "
    "Arah 2011), and the least strengths at which the estimate or its confidence interval "
    "would reach the null or the stated target (tipping points). The strengths are "
    "assumptions to be judged against known confounders, not estimates."
)


def report_part(items: Any) -> Any:
    """The family's section of a manuscript report, from each result's own Document."""
    from ..output.report import simple_part

    kinds = sorted({getattr(result, "kind", "binary") for _, result in items})
    sources = dict.fromkeys(r for kind in kinds for r in references(kind))
    return simple_part("tipping", items, METHODS, references=tuple(sources))


def references(kind: str = "binary") -> tuple[str, ...]:
    """The method's sources (shown under every view and in a report): the view's own formula
    (the bounding factor, the partial-R² bias) after the hidden-confounder bias formulas."""
    own = {"bounding": ("ding-vanderweele-2016",), "partial-r2": ("cinelli-hazlett-2020",)}
    keys = ("lin-psaty-kronmal-1998", "vanderweele-arah-2011") + own.get(kind, ())
    return tuple(REFERENCES[k] for k in keys)
