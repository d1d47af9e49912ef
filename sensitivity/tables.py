"""A small table model and its renderers: text, Markdown, LaTeX, CSV and HTML.

Results build a `Table` of already formatted cells; this module only lays it out. It imports
nothing costly, so one-number commands stay fast.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass, field

FORMATS = ("text", "json", "csv", "markdown", "latex")


@dataclass(frozen=True)
class Table:
    columns: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    title: str = ""
    footnotes: tuple[str, ...] = field(default=())


def number(value, digits: int = 2) -> str:
    """A fixed-decimals cell; missing values print as an en dash-free '-'."""
    if value is None:
        return "-"
    value = float(value)
    if math.isnan(value):
        return "-"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return f"{value:.{digits}f}"


def percent(value, digits: int = 1) -> str:
    if value is None or math.isnan(float(value)):
        return "-"
    return f"{100 * float(value):.{digits}f}%"


WIDTH = 92


def wrap(text: str, indent: str = "") -> str:
    """Wrap prose for a terminal; tables are never wrapped."""
    import textwrap

    return textwrap.fill(text, WIDTH, initial_indent=indent, subsequent_indent=" " * len(indent))


def bullets(heading: str, items) -> str:
    """A heading and one wrapped '- ' item a line; empty when there are no items."""
    items = list(items)
    if not items:
        return ""
    lines = [f"{heading}:"]
    for item in items:
        lines.append("- " + wrap(item, "  ")[2:])
    return "\n".join(lines)


def _text(table: Table) -> str:
    cells = [table.columns, *table.rows]
    widths = [max(len(row[i]) for row in cells) for i in range(len(table.columns))]

    def line(row):
        first = row[0].ljust(widths[0])
        rest = [c.rjust(w) for c, w in zip(row[1:], widths[1:], strict=True)]
        return "  ".join([first, *rest]).rstrip()

    out = [table.title] if table.title else []
    out += [line(table.columns), "  ".join("-" * w for w in widths)]
    out += [line(r) for r in table.rows]
    return "\n".join(out)


def _markdown(table: Table) -> str:
    def line(row):
        return "| " + " | ".join(c.replace("|", "\\|") for c in row) + " |"

    align = "|" + "|".join([":---"] + ["---:"] * (len(table.columns) - 1)) + "|"
    out = [f"**{table.title}**", ""] if table.title else []
    out += [line(table.columns), align, *map(line, table.rows)]
    out += [""] + [f"*{n}*" for n in table.footnotes] if table.footnotes else []
    return "\n".join(out)


_LATEX_ESCAPES = {
    "&": r"\&",
    "%": r"\%",
    "$": r"\$",
    "#": r"\#",
    "_": r"\_",
    "{": r"\{",
    "}": r"\}",
    "~": r"\textasciitilde{}",
    "^": r"\textasciicircum{}",
    "\\": r"\textbackslash{}",
    "²": r"\textsuperscript{2}",
    "√": r"$\surd$",
    "≥": r"$\geq$",
    "≤": r"$\leq$",
    "×": r"$\times$",
    "−": "-",
}


def latex_escape(text: str) -> str:
    return "".join(_LATEX_ESCAPES.get(ch, ch) for ch in text)


def _latex(table: Table) -> str:
    spec = "l" + "r" * (len(table.columns) - 1)
    body = [" & ".join(latex_escape(c) for c in row) + r" \\" for row in table.rows]
    out = [r"\begin{table}[ht]", r"\centering"]
    if table.title:
        out.append(r"\caption{" + latex_escape(table.title) + "}")
    out += [r"\begin{tabular}{" + spec + "}", r"\toprule"]
    out += [" & ".join(latex_escape(c) for c in table.columns) + r" \\", r"\midrule"]
    out += body + [r"\bottomrule", r"\end{tabular}"]
    if table.footnotes:
        out.append(r"\par\smallskip{\footnotesize " + latex_escape(" ".join(table.footnotes)) + "}")
    out.append(r"\end{table}")
    return "\n".join(out)


def _html(table: Table) -> str:
    def esc(s):
        return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")

    head = "".join(f"<th>{esc(c)}</th>" for c in table.columns)
    body = "".join(
        "<tr>" + "".join(f"<td>{esc(c)}</td>" for c in row) + "</tr>" for row in table.rows
    )
    cap = f"<caption>{esc(table.title)}</caption>" if table.title else ""
    return f"<table>{cap}<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def render(table: Table, fmt: str) -> str:
    """Lay out `table` as text, markdown, latex or html."""
    return {"text": _text, "markdown": _markdown, "latex": _latex, "html": _html}[fmt](table)


def _cell(value):
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    return value


def records_to_csv(records: list[dict]) -> str:
    """Flat records (one dict a row, same keys) as CSV; None prints as an empty cell and
    booleans as true/false, as in `columns_to_csv`."""
    buf = io.StringIO()
    if not records:
        return ""
    writer = csv.DictWriter(buf, fieldnames=list(records[0]), lineterminator="\n")
    writer.writeheader()
    for rec in records:
        writer.writerow({k: _cell(v) for k, v in rec.items()})
    return buf.getvalue()


def columns_to_csv(columns: dict) -> str:
    """Columnar data (name -> 1-d array) as CSV through pyarrow's C++ writer (a million rows
    in about a second); NaN prints as an empty cell, booleans as true/false."""
    import pyarrow as pa
    import pyarrow.csv as pacsv

    table = pa.table({k: pa.array(v, from_pandas=True) for k, v in columns.items()})
    buf = io.BytesIO()
    pacsv.write_csv(table, buf, pacsv.WriteOptions(quoting_style="none"))
    return buf.getvalue().decode("utf-8")
