"""The robustness section of a manuscript: many results into one folder.

`write_report` takes labelled results (E-values, with partial-R² results where a regression
coefficient has them) and writes `report.md`, a self-contained `report.html` (figures
embedded, nothing fetched), `tables.tex`, the figures as PNG and SVG, and `report.json` with
every number. The text is built from each result's own Document, so the report says exactly
what the command line says.
"""

from __future__ import annotations

import base64
import html
import json
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..common.notes import REFERENCES
from ..common.results import plain
from ..common.scales import SCALES
from .document import PAGE_STYLE, Document, Prose
from .tables import Table, number, percent, render


@dataclass(frozen=True)
class Item:
    """One estimate in the report: its label, its E-value result, and optionally its
    partial-R² result (a regression coefficient)."""

    label: str
    evalue: Any
    partial_r2: Any = None


def supplement_table(items: Sequence[Item]) -> Table:
    rows = []
    any_rv = any(i.partial_r2 is not None for i in items)
    for item in items:
        e = item.evalue
        lo, up = (None, None) if e.ci is None else (float(e.ci[0]), float(e.ci[1]))

        def value(x: float) -> str:
            return number(x) if abs(x) >= 0.1 or x == 0 else f"{x:#.2g}"

        shown = value(float(e.estimate))
        if lo is not None and up is not None:
            shown += f" ({value(lo)} to {value(up)})"
        row = [
            item.label,
            SCALES[str(e.scale)].short,
            shown,
            number(e.rr),
            number(e.evalue),
            number(e.evalue_ci) if e.evalue_ci is not None else "-",
        ]
        if any_rv:
            p = item.partial_r2
            row += ["-", "-"] if p is None else [percent(p.robustness_value),
                                                percent(p.robustness_value_alpha)]  # fmt: skip
        rows.append(tuple(row))
    columns = ["Estimate", "Scale", "Observed (95% CI)", "Risk-ratio scale", "E-value",
               "E-value, CI"]  # fmt: skip
    if any_rv:
        columns += ["Robustness value", "Robustness value, CI"]
    return Table(
        tuple(columns),
        tuple(rows),
        title="Sensitivity of each estimate to unmeasured confounding",
        footnotes=(
            "E-value: the least risk ratio an unmeasured confounder would need with both the "
            "treatment and the outcome, beyond the measured covariates, to move the estimate "
            "(or the interval limit nearest the null) to the null. Robustness value: the least "
            "share of residual variance of both the treatment and the outcome it would need.",
        ),
    )


def methods_text(items: Sequence[Item]) -> str:
    conversions = sorted({str(i.evalue.conversion) for i in items if i.evalue.scale != "rr"})
    text = (
        "We assessed how sensitive each adjusted estimate is to unmeasured confounding with "
        "E-values (VanderWeele & Ding 2017): the least strength of association, on the risk-"
        "ratio scale, that an unmeasured confounder would need with both the treatment and the "
        "outcome, beyond the measured covariates, to move the estimate to the null, and the "
        "same for the limit of its confidence interval nearest the null. E-values bound one "
        "kind of bias under the bounding-factor argument of Ding & VanderWeele (2016); they "
        "are necessary, not sufficient, strengths."
    )
    if conversions:
        text += " Estimates on other scales were mapped to the risk-ratio scale first: " + (
            "; ".join(conversions) + "."
        )
    if any(i.partial_r2 is not None for i in items):
        text += (
            " For linear-regression coefficients we also report robustness values in the "
            "partial-R² parameterisation of omitted-variable bias (Cinelli & Hazlett 2020): "
            "the least share of the residual variance of both the treatment and the outcome "
            "a confounder would need to explain to bring the estimate to zero, or to make its "
            "confidence interval include zero."
        )
    return text


def results_text(items: Sequence[Item]) -> str:
    ranked = sorted(items, key=lambda i: float(i.evalue.evalue))
    low, high = ranked[0], ranked[-1]
    if len(items) == 1:
        lead = ""
    else:
        lead = (
            f"Across the {len(items)} estimates, E-values ranged from {number(low.evalue.evalue)} "
            f"({low.label}) to {number(high.evalue.evalue)} ({high.label}). "
        )
    sentences = []
    for item in items:
        sentence = item.evalue.sentence()
        sentences.append(f"{item.label}: {sentence}")
        if item.partial_r2 is not None:
            sentences.append(item.partial_r2.sentence())
    return "\n\n".join(([lead.strip()] if lead else []) + sentences)


def references(items: Sequence[Item]) -> list[str]:
    keys = ["vanderweele-ding-2017", "ding-vanderweele-2016"]
    scales = {str(i.evalue.scale) for i in items}
    outcomes = {str(i.evalue.outcome) for i in items}
    if "or" in scales and "common" in outcomes:
        keys.append("vanderweele-2017")
    if "hr" in scales and "common" in outcomes:
        keys.append("vanderweele-2020")
    if any(i.partial_r2 is not None for i in items):
        keys.append("cinelli-hazlett-2020")
    return [REFERENCES[k] for k in keys]


# --------------------------------------------------------------------------- figures
def forest_figure(items: Sequence[Item], paths: Sequence[Path]) -> None:
    """Every estimate on the risk-ratio scale with its interval, and its E-values beside."""
    from .figures import STYLE, _pyplot, _save, log_ticks

    plt = _pyplot()
    plt.rcParams.update(STYLE)
    n = len(items)
    fig, ax = plt.subplots(figsize=(8.6, 1.3 + 0.42 * n), layout="constrained")
    y = np.arange(n)[::-1]
    for yi, item in zip(y, items, strict=True):
        e = item.evalue
        rr = float(e.rr)
        if e.rr_ci is not None:
            ax.plot([float(e.rr_ci[0]), float(e.rr_ci[1])], [yi, yi], color="black", lw=1.4)
        ax.plot([rr], [yi], "s", color="black", ms=6)
        ci = "-" if e.evalue_ci is None else number(e.evalue_ci)
        ax.annotate(f"{number(e.evalue)}   {ci}", (1.02, yi), xycoords=("axes fraction", "data"),
                    va="center", fontsize=8.5)  # fmt: skip
    ax.axvline(1.0, color="#d62728", lw=1, ls=":")
    ax.set_yticks(y, [i.label for i in items])
    limits = [float(v) for i in items for v in ([i.evalue.rr] if i.evalue.rr_ci is None
              else [i.evalue.rr_ci[0], i.evalue.rr_ci[1]])]  # fmt: skip
    log_ticks(ax, min(limits + [1.0]) / 1.1, max(limits + [1.0]) * 1.1)
    ax.set_xlabel("Estimate on the risk-ratio scale (95% CI), log axis")
    ax.annotate("E-value  (CI)", (1.02, n - 0.4), xycoords=("axes fraction", "data"),
                fontsize=8.5, fontweight="bold")  # fmt: skip
    ax.set_ylim(-0.7, n - 0.2)
    fig.suptitle("Each estimate on the risk-ratio scale, with its E-values")
    _save(fig, paths)


def _embed(path: Path) -> str:
    data = base64.b64encode(path.read_bytes()).decode("ascii")
    return f"data:image/png;base64,{data}"


# --------------------------------------------------------------------------- the folder
def write_report(items: Sequence[Item], folder: str | Path, command: str) -> dict[str, Path]:
    """Write the report folder; returns the files written, by role."""
    from .figures import evalue_figure, partial_r2_contours

    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    figures: list[tuple[str, Path]] = []
    forest = [out / "forest.png", out / "forest.svg"]
    forest_figure(items, forest)
    figures.append(("All estimates and their E-values", forest[0]))
    for k, item in enumerate(items, 1):
        names = [out / f"evalue_{k}.png", out / f"evalue_{k}.svg"]
        evalue_figure(item.evalue, names)
        figures.append((f"{item.label}: confounders that could explain it away", names[0]))
        if item.partial_r2 is not None:
            names = [out / f"partial_r2_{k}.png", out / f"partial_r2_{k}.svg"]
            partial_r2_contours(item.partial_r2, names)
            figures.append((f"{item.label}: partial-R² sensitivity", names[0]))

    table = supplement_table(items)
    methods, results = methods_text(items), results_text(items)
    refs = references(items)
    per_item: list[tuple[str, Document]] = []
    for item in items:
        per_item.append((item.label, item.evalue.document()))
        if item.partial_r2 is not None:
            per_item.append((f"{item.label} (partial R²)", item.partial_r2.document()))
    cautions = list(dict.fromkeys(c for i in items for c in i.evalue.cautions))
    assumptions = [
        "E-values: the bounding-factor argument (Ding & VanderWeele 2016) for a confounder "
        "or several, on the risk-ratio scale; approximate conversions for other scales.",
    ]
    if any(i.partial_r2 is not None for i in items):
        assumptions += list(next(i.partial_r2 for i in items if i.partial_r2).assumptions)

    # Markdown
    md = ["# Sensitivity to unmeasured confounding", "", "## Methods", "", methods, "",
          "## Results", "", results, "", render(table, "markdown"), ""]  # fmt: skip
    for title, path in figures:
        md += [f"![{title}]({path.name})", ""]
    for label, doc in per_item:
        md += [f"## {label}", "", doc.render("markdown"), ""]
    md += ["## Assumptions", ""] + [f"- {a}" for a in assumptions] + [""]
    md += ["## Cautions", ""] + [f"- {c}" for c in cautions] + [""]
    md += ["## References", ""] + [f"- {r}" for r in refs] + [""]
    md += ["## Reproduce", "", "```", command, "```", ""]
    (out / "report.md").write_text("\n".join(md), encoding="utf-8")

    # HTML: one file, figures embedded, no scripts, nothing fetched
    esc = lambda t: html.escape(t, quote=False)  # noqa: E731
    paragraphs = "".join(f"<p>{esc(part)}</p>" for part in results.split("\n\n"))
    body = [f"<h2>Methods</h2><p>{esc(methods)}</p>", f"<h2>Results</h2>{paragraphs}",
            render(table, "html")]  # fmt: skip
    for title, path in figures:
        image = f"<img src='{_embed(path)}' alt='{html.escape(title)}' style='max-width:100%'>"
        body.append(f"<figure>{image}<figcaption>{esc(title)}</figcaption></figure>")
    for label, doc in per_item:
        body.append(f"<h2>{esc(label)}</h2>" + doc.render("html"))
    for heading, items_ in (("Assumptions", assumptions), ("Cautions", cautions),
                            ("References", refs)):  # fmt: skip
        body.append(f"<h2>{heading}</h2><ul>" + "".join(f"<li>{esc(x)}</li>" for x in items_)
                    + "</ul>")  # fmt: skip
    body.append(f"<h2>Reproduce</h2><pre>{esc(command)}</pre>")
    page = (
        "<!DOCTYPE html>\n<html lang='en'><head><meta charset='utf-8'>"
        "<title>Sensitivity to unmeasured confounding</title>"
        f"<style>{PAGE_STYLE}figure{{margin:1.5rem 0}}</style></head><body>"
        "<h1>Sensitivity to unmeasured confounding</h1>" + "".join(body) + "</body></html>\n"
    )
    (out / "report.html").write_text(page, encoding="utf-8")

    # LaTeX: the supplement table and each estimate's tables
    tex = ["% Needs \\usepackage{booktabs} (rules in the tables); nothing else.",
           render(table, "latex")]  # fmt: skip
    for _, doc in per_item:
        tex += [render(t, "latex") for t in doc.tables]
    (out / "tables.tex").write_text("\n\n".join(tex) + "\n", encoding="utf-8")

    # JSON: every number
    estimates = []
    for item in items:
        entry = {"label": item.label, **item.evalue.to_dict()}
        if item.partial_r2 is not None:
            entry["partial_r2"] = item.partial_r2.to_dict()
        estimates.append(entry)
    data = {
        "estimates": estimates,
        "methods_text": methods,
        "results_text": results,
        "references": refs,
        "command": command,
    }
    (out / "report.json").write_text(
        json.dumps(plain(data), indent=2, ensure_ascii=False) + "\n", encoding="utf-8"
    )
    return {"folder": out, "md": out / "report.md", "html": out / "report.html",
            "tex": out / "tables.tex", "json": out / "report.json"}  # fmt: skip


__all__ = ["Item", "write_report", "Prose"]
