"""E-value results in words and tables: the Document every view renders."""

from __future__ import annotations

from typing import Any

import numpy as np

from ..common.levels import level_text
from ..common.results import plain
from ..common.scales import SCALES
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table, number, toward
from .result import ConfounderBound, EValueResult

#: How an odds or hazard ratio's outcome frequency is judged (common practice).
RARE_CUTOFF = "the usual 15% cut-off for a rare outcome (common practice)"


def _records(columns: dict) -> list[dict]:
    cols = {k: plain(np.asarray(v)) for k, v in columns.items()}
    n = max(len(v) for v in cols.values())
    return [{k: v[i] for k, v in cols.items()} for i in range(n)]


def observed_value(x: float | None) -> str:
    """An observed value: two decimals, or two significant digits when it is below 0.1."""
    if x is None or abs(x) >= 0.1 or x == 0:
        return number(x)
    return f"{x:#.2g}"


def _goal(result: EValueResult) -> str:
    return (
        "the null"
        if result.target_is_null
        else f"{float(np.asarray(result.target_value).flat[0]):g}"
    )


def estimate_table(result: EValueResult) -> Table:
    mixed = not isinstance(result.scale, str)
    code = "mixed" if mixed else str(result.scale)
    name = "Mixed scales" if mixed else SCALES[code].name.capitalize()
    records = _records(result.own_columns())
    scales = [str(rec["scale"]) for rec in records]
    mixed = mixed or len(set(scales)) > 1
    show_rr = code != "rr" or mixed
    near = "null" if result.target_is_null else "target"
    columns: tuple[str, ...] = ("",) + (("Scale",) if mixed else ())
    columns += ("Observed" if mixed else f"Observed ({code.upper()})",)
    columns += ("Risk-ratio scale",) if show_rr else ()
    columns += ("E-value",)
    rows: list[tuple[str, ...]] = []
    for i, rec in enumerate(records):
        label = "Estimate" if result.is_scalar else f"Estimate {i + 1}"
        est: tuple[str, ...] = (label,) + ((SCALES[scales[i]].short,) if mixed else ())
        est += (observed_value(rec["estimate"]),)
        est += (number(rec["rr"]),) if show_rr else ()
        rows.append((*est, number(rec["evalue"])))
        if rec["evalue_ci"] is None:
            continue
        lo_rr, up_rr = rec["rr_ci_lower"], rec["rr_ci_upper"]
        lower_nearer = rec["rr"] >= rec["rr_target"]
        observed = rec["ci_lower"] if lower_nearer else rec["ci_upper"]
        if observed is None:  # interval from `se`: show its limit on the observed scale
            from ..common.scales import convert_from_rr

            observed = float(
                convert_from_rr(
                    rec["scale"],
                    lo_rr if lower_nearer else up_rr,
                    outcome=rec["outcome"],
                    sd=rec["sd"],
                    contrast=1.0 if rec["contrast"] is None else rec["contrast"],
                )
            )
        limit: tuple[str, ...] = (f"  {level_name(result)} limit nearest the {near}",)
        limit += ("",) if mixed else ()
        limit += (observed_value(observed),)
        limit += (number(lo_rr if lower_nearer else up_rr),) if show_rr else ()
        rows.append((*limit, number(rec["evalue_ci"])))
    conversion = result.conversion
    if isinstance(conversion, str):
        foot: tuple[str, ...] = (f"Conversion to the risk-ratio scale: {conversion}.",)
    else:  # one footnote a conversion, naming the estimates it applies to
        which: dict[str, list[str]] = {}
        for i, text in enumerate(conversion, 1):
            which.setdefault(text, []).append(str(i))
        foot = tuple(
            f"Conversion to the risk-ratio scale (estimate{'s' * (len(k) > 1)} "
            f"{', '.join(k)}): {text}."
            for text, k in which.items()
        )
    return Table(columns=columns, rows=tuple(rows), title=f"E-values: {name}", footnotes=foot)


#: How many times the E-value the treatment's risk ratio is in the table of unequal pairs.
PAIR_STEPS = (1.0, 1.25, 1.5, 2.0, 3.0, 5.0)


def pairs_table(result: EValueResult) -> Table | None:
    """Unequal pairs of risk ratios that could explain the estimate away (scalar results):
    for a risk ratio with the treatment, the least one with the outcome at which the bounding
    factor reaches the observed risk ratio (its inverse below 1), B(a, b) = ab / (a + b - 1)
    (Ding & VanderWeele 2016); the roles of the two may be swapped."""
    if not result.is_scalar:
        return None
    ratio = float(result.rr) / float(result.rr_target)
    ratio = 1 / ratio if ratio < 1 else ratio
    e = float(result.evalue)
    if not np.isfinite(e) or ratio <= 1:
        return None
    rows = []
    for k in PAIR_STEPS:
        a = e * k
        b = ratio * (a - 1) / (a - ratio)
        rows.append((number(a), number(b), "equal (the E-value)" if k == 1 else ""))
    aim = "explain the estimate away" if result.target_is_null else f"reach {_goal(result)}"
    return Table(
        ("Risk ratio with the treatment", "Least risk ratio with the outcome", ""),
        tuple(rows),
        title=f"Pairs of confounder strengths that could {aim}",
        footnotes=(
            "Each pair could, not would: it is the least the bounding factor needs. The two "
            "columns may be swapped.",
        ),
    )


def level_name(result: EValueResult) -> str:
    return f"{level_text(result.ci_level)} CI"


def sentence(result: EValueResult) -> str | None:
    """One paste-ready sentence for a manuscript (scalar results only).

    Exact in what it claims: the E-value is necessary, not sufficient, so the interval
    clause says a confounder of that strength could move it.
    """
    if not result.is_scalar:
        return None
    r = _records(result.own_columns())[0]
    name = SCALES[str(result.scale)].name
    level = level_name(result)
    inner = []
    if r["ci_lower"] is not None:
        inner.append(f"{level} {observed_value(r['ci_lower'])} to {observed_value(r['ci_upper'])}")
    elif r["se"] is not None:
        inner.append(f"standard error {observed_value(r['se'])}")
    # an md per unit of a continuous treatment maps to a risk ratio per `contrast` units: the
    # sentence names both, or 0.035 would read as "about a risk ratio of 1.02" itself
    contrast = r.get("contrast")
    per = result.scale == "md" and contrast is not None and contrast != 1
    if result.scale != "rr" and not (result.scale in ("or", "hr") and result.outcome == "rare"):
        kind = f" for a {result.outcome} outcome" if result.scale in ("or", "hr") else ""
        if per:
            kind = f" per {contrast:g} units of treatment"
        inner.append(f"about a risk ratio of {number(r['rr'])}{kind}")
    said = (" per unit of treatment" if per else "") + (f" ({'; '.join(inner)})" if inner else "")
    goal = _goal(result)
    aim = "explain the estimate away" if result.target_is_null else f"move the estimate to {goal}"
    e, e_ci = number(r["evalue"]), r["evalue_ci"]
    text = f"For the observed {name} of {observed_value(r['estimate'])}{said}, the E-value is "
    if pairs_table(result) is None:  # the estimate is at the goal: nothing to explain away
        text += f"1: the estimate already equals {goal}, so no confounding is needed to reach it."
    else:
        text += f"{e}: {strength_clause(toward(e, r['evalue'], up=False), aim)}"
    if e_ci is None:
        return text
    if e_ci <= 1:
        return text + f" The {level} already includes {goal}."
    return text + " " + interval_clause(e_ci, level, goal)


def strength_clause(e: str, aim: str, pairs: bool = True) -> str:
    """What an E-value says, in the project's words: the least equal strength of the two
    risk ratios, a necessary condition ("could"), and where the unequal pairs are (`pairs`:
    only where the view has a table of them; a risk difference's has none). `e` is printed
    rounded down (`toward`): the condition holds at it."""
    where = " (unequal pairs that could are in the accompanying table and figure)" if pairs else ""
    return (
        f"a hidden confounder with equal risk ratios with the treatment and with the outcome "
        f"(once the measured covariates are accounted for) could {aim} only if both were {e} "
        f"or more, and none with both below {e} could{where}."
    )


def interval_clause(e_ci: float, level: str, goal: str) -> str:
    """The interval's E-value in the same words: needed (printed rounded down), and enough,
    not certain, to reach the goal (rounded up)."""
    needed, enough = (toward(number(e_ci), e_ci, up=up) for up in (False, True))
    return (
        f"For the {level} to take in {goal}, equal risk ratios of {needed} or more would be "
        f"needed, and {enough} could be enough."
    )


def several_biases_table(result: EValueResult) -> Table:
    mb = result.several_biases or {}
    rows = [("Confounding alone", number(result.evalue),
             "-" if result.evalue_ci is None else number(result.evalue_ci))]  # fmt: skip
    rows.append((" + ".join(b.capitalize() if i == 0 else b for i, b in enumerate(mb["included"])),
                 number(mb["evalue"]), "-" if mb["evalue_ci"] is None
                 else number(mb["evalue_ci"])))  # fmt: skip
    return Table(
        ("Biases included", "E-value", f"E-value, {level_name(result)}"),
        tuple(rows),
        title="Several biases at once: the common strength of every bias parameter",
        footnotes=tuple(f"{b.capitalize()}: {a}." for b, a in zip(mb["included"],
                        mb["assumptions"], strict=True)),
    )  # fmt: skip


def several_biases_sentence(result: EValueResult) -> str:
    mb = result.several_biases or {}
    names = ", ".join(mb["included"][:-1]) + f" and {mb['included'][-1]}"
    how = "all" if len(mb["included"]) > 2 else "both"
    text = (
        f"With {names} {how} at work, and every one of their bias parameters set to the same "
        f"risk ratio, together they could explain the estimate away only if that common risk "
        f"ratio were {_down(mb['evalue'])} or more (the joint E-value); below it, they could not"
    )
    if mb["evalue_ci"] is not None and mb["evalue_ci"] > 1:
        text += (
            f". A common risk ratio of {_up(mb['evalue_ci'])} could be enough for the "
            f"{level_name(result)} to take in the null"
        )
    return text + "."


def overlap_table(ov: dict) -> Table:
    """The positivity diagnostic of a binary treatment fitted from data."""

    def span(pair: list) -> str:
        return f"{pair[0]:.3f} to {pair[1]:.3f}"

    rows = (
        ("Treated", span(ov["treated"])),
        ("Controls", span(ov["control"])),
        ("Common support", span(ov["common_support"])),
        ("Units outside it", f"{ov['share_outside']:.1%}"),
    )
    verdict = "poor: read the E-value with care" if ov["poor"] else "no sign of poor overlap"
    return Table(
        ("Group", "Fitted treatment probabilities"),
        rows,
        title="Overlap of the treated and the controls (positivity)",
        footnotes=(
            f"Overlap: {verdict}. A sensitivity analysis assumes the adjusted estimate itself "
            "is sound; poor overlap (over 10% of units outside, or probabilities beyond 0.01 "
            "to 0.99, common practice) undermines that.",
        ),
    )


def confounder_table(bound: ConfounderBound) -> Table:
    src = bound.source
    rows = []
    for rec in _records(bound.columns()):
        verdict = "estimate" if rec["explains_estimate"] else ""
        if rec["explains_ci"]:
            verdict = "estimate and CI" if verdict else "CI"
        rows.append(
            (
                number(rec["rr_treatment"]),
                number(rec["rr_outcome"]),
                number(rec["bounding_factor"], 3),
                number(rec["bias_adjusted_estimate"]),
                number(rec["bias_adjusted_ci_limit"]),
                verdict or "neither",
            )
        )
    target = _goal(src)
    return Table(
        columns=(
            "RR with treatment",
            "RR with outcome",
            "Bounding factor",
            f"Estimate moved to ({str(src.scale).upper()})",
            f"{level_name(src)} limit moved to",
            f"Reaches {target}",
        ),
        rows=tuple(rows),
        title="Hypothetical confounder: the most it could move the result",
    )


def confounder_sentences(bound: ConfounderBound) -> list[str]:
    """One sentence a hypothetical confounder: the reviewer's question answered."""
    goal = _goal(bound.source)
    out = []
    for r in _records(bound.columns()):
        text = (
            f"A confounder with risk ratio {number(r['rr_treatment'])} with the treatment and "
            f"{number(r['rr_outcome'])} with the outcome (bounding factor "
            f"{number(r['bounding_factor'], 3)}) could move the estimate at most to "
            f"{number(r['bias_adjusted_estimate'])}"
        )
        if r["bias_adjusted_ci_limit"] is not None:
            text += (
                f" and the nearest {level_name(bound.source)} limit to "
                f"{number(r['bias_adjusted_ci_limit'])}"
            )
        if r["explains_estimate"]:
            text += f"; it could explain the estimate away (reach {goal})."
        elif r["explains_ci"]:
            text += f"; it could not explain the estimate away, but the CI could include {goal}."
        else:
            text += f"; it could not move the estimate or its CI to {goal}."
        out.append(text)
    return out


def rd_document(r: Any) -> Document:
    """A risk difference's E-values."""
    level = f"{level_text(r.ci_level)} CI"
    rows = (
        ("Estimate", f"{r.estimate:.4f} ({level} {r.ci[0]:.4f} to {r.ci[1]:.4f})",
         number(r.bounding_factor, 3), number(r.evalue)),
        (f"  Lower {level} limit of the bound", "", number(r.bounding_factor_ci, 3),
         number(r.evalue_ci)),
    )  # fmt: skip
    a, n1, c, n0 = r.counts
    table = Table(
        ("", "Observed", "Bounding factor", "E-value"),
        rows,
        title=f"E-values: Risk difference ({a}/{n1} treated, {c}/{n0} controls)",
    )
    e = number(r.evalue)
    observed = (
        f"For the observed risk difference of {r.estimate:.4f} ({level} {r.ci[0]:.4f} to "
        f"{r.ci[1]:.4f}), "
    )
    if r.evalue == 1:  # no difference to explain away
        lead = observed + "the E-value is 1: the risks are equal, so no confounding is needed."
    elif np.isfinite(r.evalue):
        lead = (
            observed
            + f"the E-value for the whole population is {e}: "
            + strength_clause(_down(r.evalue), "explain it away", pairs=False)
        )
    else:
        # no cases in the group with the lower risk: the bound stays above 0 for every finite
        # strength (issue 19: not "a risk ratio of at least inf each")
        lead = observed + (
            "no unmeasured confounder of any finite strength could explain it away in the "
            "whole population under this bound, because there are no cases in the group with "
            "the lower risk."
        )
    if r.evalue_ci <= 1:
        lead += " The bound's interval already includes 0."
    elif np.isfinite(r.evalue_ci):
        lead += (f" For the {level} limit of the bound nearest 0 to reach 0, equal risk ratios "
                 f"of {_down(r.evalue_ci)} or more would be needed, and "
                 f"{_up(r.evalue_ci)} could be enough.")  # fmt: skip
    else:
        lead += " No finite strength brings the bound's confidence limit to 0."
    blocks: tuple[Block, ...] = (
        table,
        prose(lead, role="sentence"),
        *standard_tail(r.notes, r.cautions),
    )
    return Document("E-values", blocks, references=_sources_rd())


def reading(read: dict, scale: str, level: float) -> str:
    """The line that shows what was read from a published text (and what was filled in)."""
    name = SCALES[scale].name
    named = name if read["scale"] else f"{name} (not named in the text: from --scale)"
    interval = "no interval"
    if read["lower"] is not None:
        said = f"{level_text(read['level'])} CI" if read["level"] is not None else (
            f"interval, level not named (taken as {level_text(level)})"
        )  # fmt: skip
        interval = f"{said} {read['lower']:g} to {read['upper']:g}"
    return f"Read from {read['text']!r}: {named}; estimate {read['estimate']:g}; {interval}."


def figures(result: Any) -> tuple[Figure, ...]:
    """The figure a single estimate can draw (none for a table of estimates)."""
    if not isinstance(result, EValueResult) or not result.is_scalar:
        return ()
    from functools import partial

    from .figures import evalue_figure

    caption = "Pairs of confounder strengths that could explain the result away"
    return (Figure("evalue", caption, partial(evalue_figure, result)),)


def _sources_rd() -> tuple[str, ...]:
    from ..common.notes import REFERENCES

    return (REFERENCES["ding-vanderweele-2016"],)


def document(result: Any) -> Document:
    from .result import RiskDifferenceResult

    if isinstance(result, RiskDifferenceResult):
        return rd_document(result)
    if isinstance(result, ConfounderBound):
        return Document(
            "Hypothetical confounders",
            (confounder_table(result), prose(*confounder_sentences(result), role="sentence")),
        )
    lead = sentence(result)
    blocks: list = []
    if result.as_read is not None:
        blocks.append(prose(reading(result.as_read, str(result.scale), result.ci_level)))
    blocks.append(estimate_table(result))
    pairs = pairs_table(result)
    if pairs is not None:
        blocks.append(pairs)
    if lead:
        blocks.append(prose(lead, role="sentence"))
    if result.overlap is not None:
        blocks.append(overlap_table(result.overlap))
    if result.several_biases is not None:
        blocks.append(several_biases_table(result))
        blocks.append(prose(several_biases_sentence(result), role="sentence"))
    if result.confounders is not None:
        blocks.append(confounder_table(result.confounders))
        blocks.append(prose(*confounder_sentences(result.confounders), role="sentence"))
    blocks += standard_tail(result.notes, result.cautions)
    return Document("E-values", tuple(blocks), figures=figures(result), references=_sources(result))


def _sources(result: EValueResult) -> tuple[str, ...]:
    """The E-value's sources, and the conversion's where one was used."""
    from ..common.notes import REFERENCES

    keys = ["vanderweele-ding-2017", "ding-vanderweele-2016"]
    scales = set(np.ravel(np.asarray(result.scale, dtype=object)).tolist())
    outcomes = set(np.ravel(np.asarray(result.outcome, dtype=object)).tolist())
    if "or" in scales and "common" in outcomes:
        keys.append("vanderweele-2017")
    if "hr" in scales and "common" in outcomes:
        keys.append("vanderweele-2020")
    return tuple(REFERENCES[k] for k in keys)


def report_part(items: Any) -> Any:
    """The family's section of a manuscript report (see `evalues.report`)."""
    from .report import report_part as build

    return build(items)


def _down(value: float) -> str:
    """A needed strength as a sentence prints it: rounded down (`toward`)."""
    return toward(number(value), value, up=False)


def _up(value: float) -> str:
    """A strength that could be enough as a sentence prints it: rounded up (`toward`)."""
    return toward(number(value), value, up=True)
