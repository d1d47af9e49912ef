"""A pooled sensitivity analysis in words, tables and figures."""

from __future__ import annotations

from typing import Any

import numpy as np

from ..common.levels import level_text
from ..output.document import Block, Document, Figure, prose, standard_tail
from ..output.tables import Table, number, percent
from .result import PoolResult

ASSUMPTIONS = (
    "The true effects of the studies are normal on the log risk-ratio scale (random-effects "
    "model); the pooled estimate and the heterogeneity are estimated well enough for the "
    "delta method.",
    "The bias factor is the confounding bias of each study's estimate on the risk-ratio scale, "
    "common to every study unless a spread between studies is given.",
    "Ratio scales other than the risk ratio were converted as the screen converts them.",
)


def _beyond(r: PoolResult) -> str:
    """'above 1.1' or 'below 0.9'."""
    return f"{r.direction} {r.threshold:g}"


def _ci(r: PoolResult) -> str:
    return f"{level_text(r.level)} CI {number(r.ci[0])} to {number(r.ci[1])}"


def pooled_table(r: PoolResult) -> Table:
    rows = (
        ("Studies pooled", f"{r.k}"),
        ("Pooled risk ratio", f"{number(r.pooled_estimate)} ({_ci(r)})"),
        ("Heterogeneity tau² (log scale)", f"{number(r.tau2, 4)} (SE {number(r.tau2_se, 4)})"),
        ("tau", number(r.tau, 3)),
        ("I²", percent(r.i2)),
        ("Cochran's Q", f"{number(r.q_statistic)} on {r.k - 1} df"),
        ("E-value of the pooled estimate", number(r.evalue)),
        (f"E-value of its {level_text(r.level)} CI", number(r.evalue_ci)),
    )
    return Table(
        ("Random-effects model", "Value"),
        rows,
        title=f"Pooled estimate ({r.method_name} heterogeneity)",
        footnotes=(f"The {level_text(r.level)} CI is a Wald interval on the log scale (normal, "
                   "without "
                   "a Hartung-Knapp adjustment). The E-values are those of the pooled estimate "
                   "alone (VanderWeele & Ding 2017), shown beside the share below.",),
    )  # fmt: skip


def answer_table(r: PoolResult) -> Table:
    se_t = f" (SE {number(r.bias_to_reduce_se)})" if np.isfinite(r.bias_to_reduce_se) else ""
    se_g = (
        f" (SE {number(r.strength_to_reduce_se)})" if np.isfinite(r.strength_to_reduce_se) else ""
    )
    rows = (
        (f"Share of true effects {_beyond(r)}, no bias", percent(r.share_observed)),
        (f"Least common bias factor bringing it to {percent(r.share, 0)}",
         number(r.bias_to_reduce) + se_t),
        ("Least confounding strength (both risk ratios equal)",
         number(r.strength_to_reduce) + se_g),
    )  # fmt: skip
    return Table(
        ("Meaningfully strong effects", "Value"),
        rows,
        title=f"Confounding and the share of effects {_beyond(r)}",
        footnotes=("Standard errors by the delta method (Mathur & VanderWeele 2020).",),
    )


def share_table(r: PoolResult) -> Table:
    rows = tuple(
        (number(b), percent(p), percent(s))
        for b, p, s in zip(r.bias, r.share_beyond, r.share_beyond_se, strict=True)
    )
    spread = f"; log bias SD {r.bias_sd:g} between studies" if r.bias_sd > 0 else ""
    return Table(
        ("Common bias factor", f"Share {_beyond(r)}", "SE"),
        rows,
        title=f"Share of true effects {_beyond(r)} after removing the bias{spread}",
    )


def study_table(r: PoolResult) -> Table:
    """Each study as read; the interval's level in the headers when every row shares one,
    else in a column of its own (a study's E-value of the CI is at its own level)."""
    s = r.studies
    n = len(s["label"])
    has_ci = np.isfinite(np.asarray(s["rr_lower"], float))
    levels = np.asarray(s.get("level", np.full(n, 0.95)), float)
    shared = sorted({float(v) for v in levels[has_ci]})
    one = len(shared) <= 1
    rows = []
    for i in range(n):
        interval = f"{number(s['rr_lower'][i])} to {number(s['rr_upper'][i])}" if has_ci[i] else "-"
        weight = percent(s["weight"][i]) if np.isfinite(s["weight"][i]) else "-"
        level = [] if one else [level_text(levels[i]) if has_ci[i] else "-"]
        rows.append((
            str(s["label"][i]), number(s["rr"][i]), interval, *level, number(s["evalue"][i]),
            number(s["evalue_ci"][i]), weight, str(s["error"][i]) or "",
        ))  # fmt: skip
    if one:
        ci = f"{level_text(shared[0])} CI" if shared else "CI"
        head: tuple[str, ...] = ("Interval" if not shared else ci, f"E-value ({ci})")
        said = ""
    else:
        head = ("Interval", "Level", "E-value (its row's CI)")
        said = "Each interval, and the E-value of its limit nearest the null, at its row's level; "
    rule = "a row with a reason under 'Not pooled' is kept but left out of the pool."
    return Table(
        ("Study", "Risk ratio", head[0], *head[1:-1], "E-value", head[-1], "Weight",
         "Not pooled"),
        tuple(rows),
        title="Studies",
        footnotes=(said + rule if said else rule[0].upper() + rule[1:],),
    )  # fmt: skip


def sentence(r: PoolResult) -> str:
    """One paste-ready paragraph; every statement exactly true of the estimates shown."""
    lead = (
        f"A random-effects meta-analysis of {r.k} studies ({r.method_name} heterogeneity) gave "
        f"a pooled risk ratio of {number(r.pooled_estimate)} ({_ci(r)}), tau² = "
        f"{number(r.tau2, 4)}. With no confounding bias, an estimated "
        f"{percent(r.share_observed, 0)} of the true effects would lie {_beyond(r)} on the "
        f"risk-ratio scale."
    )
    if r.bias_to_reduce_raw <= 1:
        return lead + (
            f" That share is already at most {percent(r.share, 0)} without any confounding bias."
        )
    se = f" (SE {number(r.bias_to_reduce_se)})" if np.isfinite(r.bias_to_reduce_se) else ""
    if r.bias_sd > 0:
        return lead + (
            f" Confounding bias factors varying between studies around a geometric mean of "
            f"{number(r.bias_to_reduce)}{se} (SD {r.bias_sd:g} on the log scale) could reduce "
            f"that share to {percent(r.share, 0)}, and a smaller geometric mean could not; a "
            f"bias factor of that size is what an unmeasured confounder associated with both "
            f"the treatment and the outcome by risk ratios of {number(r.strength_to_reduce)} "
            f"each could produce."
        )
    return lead + (
        f" A common confounding bias factor of {number(r.bias_to_reduce)}{se} in every study "
        f"could reduce that share to {percent(r.share, 0)}, and a smaller one could not; an "
        f"unmeasured confounder associated with both the treatment and the outcome by risk "
        f"ratios of {number(r.strength_to_reduce)} each could produce that bias, and one "
        f"weaker on both could not."
    )


def blocks(r: PoolResult) -> tuple[Block, ...]:
    lead = sentence(r)
    return (
        pooled_table(r),
        answer_table(r),
        share_table(r),
        study_table(r),
        prose(lead, role="sentence"),
        *standard_tail(r.notes, r.cautions, ASSUMPTIONS),
    )


def document(r: PoolResult) -> Document:
    return Document(
        "Confounding in a random-effects meta-analysis",
        blocks(r),
        figures=figures(r),
        references=references(r),
    )


def figures(r: PoolResult) -> tuple[Figure, ...]:
    """The forest plot and the share against the bias factor (drawn on demand)."""
    from functools import partial

    from .figures import CAPTIONS, DRAW

    return tuple(Figure(f"pool-{key}", CAPTIONS[key], partial(draw, r)) for key, draw in
                 DRAW.items())  # fmt: skip


# --------------------------------------------------------------------------- the report
REFERENCE_KEYS = (
    "mathur-vanderweele-2020",
    "vanderweele-ding-2017",
    "biggerstaff-tweedie-1997",
)
ESTIMATOR_KEYS = {"pm": "paule-mandel-1982", "dl": "dersimonian-laird-1986"}


def references(r: PoolResult) -> tuple[str, ...]:
    from ..common.notes import REFERENCES

    keys = (*REFERENCE_KEYS[:1], ESTIMATOR_KEYS[r.method], *REFERENCE_KEYS[1:])
    return tuple(REFERENCES[k] for k in keys)


def methods_paragraph(results: list[PoolResult]) -> str:
    estimators = sorted({r.method_name for r in results})
    return (
        "Studies were pooled by a random-effects model on the log risk-ratio scale "
        "(statsmodels' combine_effects; heterogeneity by the "
        f"{' and '.join(estimators)} estimator{'s' if len(estimators) > 1 else ''}), with "
        "each study's standard error taken from its confidence interval at the interval's "
        "own level. Following Mathur and VanderWeele (2020), we estimated the share of true "
        "effects beyond a meaningful risk ratio after removing a confounding bias factor "
        "common to every study, the least such bias factor that would bring that share down "
        "to a chosen level, and the least strength of an unmeasured confounder (equal risk "
        "ratios with the treatment and the outcome) that could produce it, with delta-method "
        "standard errors; the E-value of the pooled estimate is given beside them "
        "(VanderWeele and Ding 2017)."
    )


def _slug(label: str) -> str:
    import re

    return re.sub(r"[^a-z0-9]+", "-", label.lower()).strip("-") or "pool"


def report_part(items: Any) -> Any:
    """This family's section of the manuscript report: a Methods paragraph, each pooled
    analysis's sentences, its tables and both figures, its own Document under its label."""
    from dataclasses import replace

    from ..output.report import ReportPart

    tables, figs, details, entries, cautions, refs, said = [], [], [], [], [], [], []
    results = []
    for k, item in enumerate(items, 1):
        label, r = item
        number = getattr(item, "number", k)
        results.append(r)
        said.append(f"{label}: {sentence(r)}")
        for table in (pooled_table(r), answer_table(r), share_table(r)):
            tables.append(replace(table, title=f"{label}: {table.title}"))
        for drawn in figures(r):
            figs.append(Figure(f"{drawn.key}_{number}", f"{label}: {drawn.caption}",
                               drawn.draw))  # fmt: skip
        details.append((label, document(r)))
        entries.append({"label": label, "family": "pooling", **r.to_dict()})
        cautions += [c for c in r.cautions if c not in cautions]
        refs += [x for x in references(r) if x not in refs]
    return ReportPart(
        family="pooling",
        methods=methods_paragraph(results),
        results=tuple(said),
        tables=tuple(tables),
        figures=tuple(figs),
        details=tuple(details),
        entries=tuple(entries),
        assumptions=ASSUMPTIONS,
        cautions=tuple(cautions),
        references=tuple(refs),
    )
