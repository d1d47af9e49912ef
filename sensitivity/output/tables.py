"""A small table model, its cells (numbers and shares as text) and its renderers.

Presenters build a `Table` of already formatted cells; this module only lays it out as text,
Markdown or HTML (LaTeX in `latex.py`). Large tables leave through `writers.py` and
`streams.py`. It imports nothing costly at module level, so one-number commands stay fast.
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np

FORMATS = ("text", "json", "csv", "markdown", "latex")


@dataclass(frozen=True)
class Table:
    columns: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    title: str = ""
    footnotes: tuple[str, ...] = field(default=())
    align: str = ""  # one letter a column, l or r; default: the first left, the rest right

    def alignment(self) -> str:
        return self.align or "l" + "r" * (len(self.columns) - 1)


def number(value: float | np.ndarray | None, digits: int = 2) -> str:
    """A fixed-decimals cell; '-' when missing. Values too large or too small for fixed
    decimals to show (1e12, or 3e-5 at two decimals) keep their meaning in scientific form."""
    if value is None:
        return "-"
    value = float(value)
    if math.isnan(value):
        return "-"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    size = abs(value)
    if size >= 1e9 or 0 < size < 0.5 * 10.0**-digits:
        return f"{value:.{max(digits, 2) + 1}g}" if size < 1e9 else f"{value:.3e}"
    text = f"{value:.{digits}f}"
    # A value that is not 1 never reads as the null of a ratio: 0.9957 is 0.996, not 1.00.
    extra = digits
    while size != 1 and abs(float(text)) == 1 and extra < digits + 6:
        extra += 1
        text = f"{value:.{extra}f}"
    return text


def toward(text: str, value: float, up: bool, scale: float = 1.0) -> str:
    """`text`, `value` as `number` or `percent` printed it (rounded to the nearest, `scale`
    100 for a percentage), moved by one unit of its last digit where it lies on the wrong side
    of the value: at least the value with `up`, at most it without. A sentence's strength
    that could be enough is printed rounded up and one that is needed rounded down, so that
    each claim holds exactly (an E-value of 1.2946 is needed at 1.29, enough at 1.30).

    >>> toward("1.29", 1.2946, up=True), toward("1.29", 1.2946, up=False)
    ('1.30', '1.29')
    >>> toward("11.7%", 0.11731, up=True, scale=100)
    '11.8%'
    """
    from decimal import Decimal, InvalidOperation

    body = text[:-1] if text.endswith("%") else text
    try:
        shown = Decimal(body)
    except InvalidOperation:  # '-', words
        return text
    if not shown.is_finite() or not math.isfinite(value):
        return text
    exact = Decimal(value) * Decimal(scale)
    if (shown >= exact) if up else (shown <= exact):
        return text
    exponent = shown.as_tuple().exponent  # of the last digit shown (finite: a whole number)
    step = Decimal(1).scaleb(int(exponent))
    moved = shown + step if up else shown - step
    if "e" in body.lower():
        mantissa = body.lower().split("e")[0]
        places = len(mantissa.split(".")[1]) if "." in mantissa else 0
        out = f"{moved:.{places}e}"
    else:
        out = f"{moved:f}"
    return out + text[len(body) :]


def percent(value: float | np.ndarray | None, digits: int = 1) -> str:
    """A share as a percentage; below 1% three significant digits keep its meaning (0.133%,
    not 0.1%); from a million percent up, three significant digits in scientific form (a
    share of 3e300 is not printed as three hundred digits)."""
    if value is None or math.isnan(float(value)):
        return "-"
    pct = 100 * float(value)
    if math.isinf(pct) and math.isfinite(float(value)):  # 100 x 1e307 is beyond a double
        from decimal import Decimal

        mantissa, power = format(Decimal(repr(float(value))) * 100, ".3g").lower().split("e")
        return f"{mantissa.rstrip('0').rstrip('.')}e{power}%"
    if 0 < abs(pct) < 1 or abs(pct) >= 1e6:
        return f"{pct:.3g}%"
    return f"{pct:.{digits}f}%"


def count(value: float | int) -> str:
    """A count such as degrees of freedom: whole numbers with thousands separators (1,192),
    a fraction kept (1,192.5), and from 1e15 up (where a double no longer holds every whole
    number) three significant digits (1e+300), never three hundred digits."""
    value = float(value)
    if not math.isfinite(value) or abs(value) >= 1e15:
        return f"{value:.3g}"
    if value == int(value):
        return f"{value:,.0f}"
    return f"{value:,.6g}" if abs(value) < 1e5 else f"{value:,.1f}"


WIDTH = 92


def wrap(text: str, indent: str = "") -> str:
    """Wrap prose for a terminal; tables are never wrapped."""
    import textwrap

    return textwrap.fill(text, WIDTH, initial_indent=indent, subsequent_indent=" " * len(indent))


def bullets(heading: str, items: Iterable[str]) -> str:
    """A heading and one wrapped '- ' item a line; empty when there are no items."""
    items = list(items)
    if not items:
        return ""
    lines = [f"{heading}:"]
    for item in items:
        lines.append("- " + wrap(item, "  ")[2:])
    return "\n".join(lines)


_CONTROLS = {i: None for i in range(32) if i not in (9, 10, 13)} | {127: None}
_CONTROLS |= {i: None for i in range(0x80, 0xA0)}
_ONE_LINE = _CONTROLS | {9: " ", 10: " ", 13: " "}


def safe_text(text: str, keep_lines: bool = False) -> str:
    """One line of text with nothing a terminal or a file format would act on: control
    characters (terminal escapes among them) dropped; tabs, carriage returns and newlines
    (unless `keep_lines`) become spaces."""
    text = str(text)
    if keep_lines:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
        return text.translate(_CONTROLS | {9: " "})
    return text.translate(_ONE_LINE)


def _text(table: Table) -> str:
    table = _clean(table)
    cells = [table.columns, *table.rows]
    widths = [max(len(row[i]) for row in cells) for i in range(len(table.columns))]

    align = table.alignment()

    def line(row):
        cells = [
            c.ljust(w) if a == "l" else c.rjust(w)
            for c, w, a in zip(row, widths, align, strict=True)
        ]
        return "  ".join(cells).rstrip()

    out = [table.title] if table.title else []
    out += [line(table.columns), "  ".join("-" * w for w in widths)]
    out += [line(r) for r in table.rows]
    out += [wrap(n) for n in table.footnotes]
    return "\n".join(out)


def _clean(table: Table) -> Table:
    from dataclasses import replace

    return replace(
        table,
        columns=tuple(safe_text(c) for c in table.columns),
        rows=tuple(tuple(safe_text(c) for c in row) for row in table.rows),
        title=safe_text(table.title),
        footnotes=tuple(safe_text(n) for n in table.footnotes),
    )


def markdown_cell(text: str) -> str:
    """A cell, title or footnote for Markdown: one line, markup escaped (a label renders as
    written, never as a link, an image, emphasis or raw HTML). A "<" that cannot open a tag
    ("<0.0001") and an "&" that is no entity stay as they are, so the file reads plainly."""
    import re

    out = safe_text(text)
    for ch in "\\`*_[]|$~":  # $ opens mathematics and ~ strikes out in common renderers
        out = out.replace(ch, "\\" + ch)
    out = re.sub(r"&(?=#?\w+;)", "&amp;", out)
    return re.sub(r"<(?=[A-Za-z/!?])", "&lt;", out)


def _markdown(table: Table) -> str:
    def line(row):
        return "| " + " | ".join(markdown_cell(c) for c in row) + " |"

    align = "|" + "|".join(":---" if a == "l" else "---:" for a in table.alignment()) + "|"
    out = [f"**{markdown_cell(table.title)}**", ""] if table.title else []
    out += [line(table.columns), align, *map(line, table.rows)]
    if table.footnotes:  # a blank line between footnotes keeps each its own paragraph
        out += [line for n in table.footnotes for line in ("", f"*{markdown_cell(n)}*")]
    return "\n".join(out)


def _html(table: Table) -> str:
    def esc(s):
        return html.escape(safe_text(s), quote=False)

    head = "".join(f"<th>{esc(c)}</th>" for c in table.columns)
    body = "".join(
        "<tr>" + "".join(f"<td>{esc(c)}</td>" for c in row) + "</tr>" for row in table.rows
    )
    cap = f"<caption>{esc(table.title)}</caption>" if table.title else ""
    foot = "".join(
        f"<tr><td colspan='{len(table.columns)}'>{esc(n)}</td></tr>" for n in table.footnotes
    )
    foot = f"<tfoot>{foot}</tfoot>" if foot else ""
    return f"<table>{cap}<thead><tr>{head}</tr></thead><tbody>{body}</tbody>{foot}</table>"


def render(table: Table, fmt: str) -> str:
    """Lay out `table` as text, markdown, latex or html."""
    if fmt == "latex":
        from .latex import latex_table

        return latex_table(table)
    return {"text": _text, "markdown": _markdown, "html": _html}[fmt](table)
