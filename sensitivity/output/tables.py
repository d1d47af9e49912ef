"""A small table model and its renderers (text, Markdown, LaTeX, HTML), and the writers that
carry large tables out as columns (CSV through pyarrow, JSON through orjson).

Presenters build a `Table` of already formatted cells; this module only lays it out. It
imports nothing costly at module level, so one-number commands stay fast.
"""

from __future__ import annotations

import io
import math
from collections.abc import Collection, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..common.errors import InputError

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


def percent(value: float | np.ndarray | None, digits: int = 1) -> str:
    """A share as a percentage; below 1% three significant digits keep its meaning (0.133%,
    not 0.1%)."""
    if value is None or math.isnan(float(value)):
        return "-"
    pct = 100 * float(value)
    if 0 < abs(pct) < 1:
        return f"{pct:.3g}%"
    return f"{pct:.{digits}f}%"


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


def _text(table: Table) -> str:
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


def _markdown(table: Table) -> str:
    def line(row):
        return "| " + " | ".join(c.replace("|", "\\|") for c in row) + " |"

    align = "|" + "|".join(":---" if a == "l" else "---:" for a in table.alignment()) + "|"
    out = [f"**{table.title}**", ""] if table.title else []
    out += [line(table.columns), align, *map(line, table.rows)]
    if table.footnotes:  # a blank line between footnotes keeps each its own paragraph
        out += [line for n in table.footnotes for line in ("", f"*{n}*")]
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
    "≈": r"$\approx$",
    "±": r"$\pm$",
    "–": "--",
    "—": "---",
    "‘": "`",
    "’": "'",
    "“": "``",
    "”": "''",
    "…": r"\ldots{}",
    "·": r"$\cdot$",
    "µ": r"$\mu$",
    "³": r"\textsuperscript{3}",
    "°": r"$^\circ$",
    "\u00a0": "~",
}
# Accents a name may carry (fumeur_été): base letter plus a combining mark, as LaTeX writes it.
_ACCENTS = {
    "\u0301": "'",
    "\u0300": "`",
    "\u0308": '"',
    "\u0302": "^",
    "\u0303": "~",
    "\u0327": "c",
}

#: What the LaTeX output needs beyond plain LaTeX (said at the top of every LaTeX document).
LATEX_PACKAGES = ("booktabs",)


def latex_escape(text: str) -> str:
    """Text as LaTeX that compiles with no package beyond `LATEX_PACKAGES`: special
    characters escaped and every non-ASCII character converted (pure ASCII out)."""
    import unicodedata

    out = []
    for ch in text:
        if ch in _LATEX_ESCAPES:
            out.append(_LATEX_ESCAPES[ch])
        elif ord(ch) < 128:
            out.append(ch)
        else:
            parts = unicodedata.normalize("NFD", ch)
            base, marks = parts[0], parts[1:]
            if marks and marks[0] in _ACCENTS and ord(base) < 128:
                cmd = _ACCENTS[marks[0]]
                out.append(f"\\{cmd}{{{base}}}" if cmd == "c" else f"\\{cmd}{{{base}}}")
            elif unicodedata.name(ch, "").startswith(("GREEK SMALL LETTER ", "GREEK CAPITAL")):
                word = unicodedata.name(ch).split()[-1].lower()
                out.append(
                    f"$\\{word.capitalize() if 'CAPITAL' in unicodedata.name(ch) else word}$"
                )
            else:
                ascii_form = unicodedata.normalize("NFKD", ch).encode("ascii", "ignore").decode()
                out.append(ascii_form or "?")
    return "".join(out)


def _latex(table: Table) -> str:
    spec = table.alignment()
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
    foot = "".join(
        f"<tr><td colspan='{len(table.columns)}'>{esc(n)}</td></tr>" for n in table.footnotes
    )
    foot = f"<tfoot>{foot}</tfoot>" if foot else ""
    return f"<table>{cap}<thead><tr>{head}</tr></thead><tbody>{body}</tbody>{foot}</table>"


def render(table: Table, fmt: str) -> str:
    """Lay out `table` as text, markdown, latex or html."""
    return {"text": _text, "markdown": _markdown, "latex": _latex, "html": _html}[fmt](table)


def columns_to_csv(columns: Mapping[str, np.ndarray], sink: Any = None) -> str | None:
    """Columns (name -> 1-d array) as CSV through pyarrow's C++ writer, in batches.

    NaN and None print as an empty cell, booleans as true/false. With `sink` (a path or a
    binary file) the CSV is written there and None returned; otherwise it is returned as text.
    """
    import pyarrow as pa
    import pyarrow.csv as pacsv

    names = list(columns)
    n = len(next(iter(columns.values()))) if names else 0
    schema = None
    out = io.BytesIO() if sink is None else sink
    writer = None
    try:
        for start in range(0, max(n, 1), BATCH_ROWS):
            table = pa.table(
                {
                    k: pa.array(np.asarray(v)[start : start + BATCH_ROWS], from_pandas=True)
                    for k, v in columns.items()
                }
            )
            if writer is None:
                schema = table.schema
                writer = pacsv.CSVWriter(
                    out, schema, write_options=pacsv.WriteOptions(quoting_style="needed")
                )
            writer.write_table(table.cast(schema))
    finally:
        if writer is not None:
            writer.close()
    if sink is None:
        return out.getvalue().decode("utf-8")
    return None


BATCH_ROWS = 65_536


def _tokens(values: np.ndarray) -> list[bytes]:
    """Each entry of a 1-d column as JSON bytes (NaN and infinities as null)."""
    import orjson

    values = np.asarray(values)
    if values.dtype.kind in "fiub":
        text = orjson.dumps(np.ascontiguousarray(values), option=orjson.OPT_SERIALIZE_NUMPY)
        return text[1:-1].split(b",") if values.size else []
    # Text through the standard library's C string encoder: orjson gives the same bytes, but
    # each small result it returns holds kilobytes (measured: 258 MB for 65,536 short cells)
    from json.encoder import encode_basestring

    return [
        encode_basestring(v).encode()
        if isinstance(v, str)
        else orjson.dumps(v if not isinstance(v, float) or math.isfinite(v) else None)
        for v in values.tolist()
    ]


def json_rows(
    columns: Mapping[str, np.ndarray], layout: Sequence[tuple[str, Any]]
) -> Iterator[bytes]:
    """Stream the rows of a table as JSON objects, built from numpy columns in batches.

    `layout` gives each row's keys in order: ``(key, column)`` for a plain value,
    ``(key, [(key, column), ...])`` for a nested object and ``(key, (column, column))`` for a
    pair. A pair whose first column is absent is written as null. Yields comma-separated
    chunks of bytes (no brackets), so memory stays flat whatever the number of rows.
    """
    used: list[str] = []

    def template(spec: Sequence[tuple[str, Any]]) -> bytes:
        parts = []
        for key, what in spec:
            name = b'"' + key.encode() + b'":'
            if isinstance(what, str):
                used.append(what)
                parts.append(name + b"%b")
            elif isinstance(what, tuple):
                if what[0] in columns:
                    used.extend(what)
                    parts.append(name + b"[%b,%b]")
                else:
                    parts.append(name + b"null")
            else:
                parts.append(name + template(what))
        return b"{" + b",".join(parts) + b"}"

    row = template(layout)
    n = len(np.asarray(columns[used[0]])) if used else 0
    for start in range(0, n, BATCH_ROWS):
        stop = min(n, start + BATCH_ROWS)
        toks = [_tokens(np.asarray(columns[c])[start:stop]) for c in used]
        chunk = b",".join(row % vals for vals in zip(*toks, strict=True))
        yield (b"," if start else b"") + chunk


def write_json(items: Sequence[tuple[str, Any]], sink: Any, *, indent: bool) -> None:
    """Write one JSON object whose values are plain data or row streams (`json_rows`).

    Plain values go through orjson; a value that is an iterator of byte chunks is written as
    a list, chunk by chunk. `indent` lays plain objects out for people (streamed rows stay
    compact).
    """
    import orjson

    opt = orjson.OPT_INDENT_2 if indent else 0
    if all(not _is_stream(v) for _, v in items):
        sink.write(orjson.dumps(dict(items), option=opt) + b"\n")
        return
    sink.write(b"{")
    for i, (key, value) in enumerate(items):
        sink.write((b"," if i else b"") + orjson.dumps(key) + b":")
        if _is_stream(value):
            sink.write(b"[")
            for chunk in value:
                sink.write(chunk)
            sink.write(b"]")
        else:
            sink.write(orjson.dumps(value))
    sink.write(b"}\n")


def _is_stream(value: Any) -> bool:
    return hasattr(value, "__next__")


# --------------------------------------------------------------------------- streamed tables
#: Table files by extension, for writers that take a batch at a time.
TABLE_FORMATS = {
    ".csv": "csv",
    ".tsv": "tsv",
    ".txt": "tsv",
    ".parquet": "parquet",
    ".pq": "parquet",
    ".xlsx": "excel",
    ".json": "json",
}
#: Spreadsheets run a cell that starts with one of these as a formula (OWASP, common
#: practice); text cells written for them get a leading apostrophe. A cell that reads as a
#: number ("-0.4") is left alone.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def defuse(values: Any) -> Any:
    """Text cells safe to open in a spreadsheet: formula-looking text gets a leading "'"."""
    import pyarrow as pa
    import pyarrow.compute as pc

    if not (pa.types.is_string(values.type) or pa.types.is_large_string(values.type)):
        return values
    first = pc.utf8_slice_codeunits(values, 0, 1)
    risky = pc.is_in(first, value_set=pa.array(list(FORMULA_STARTS), type=values.type))
    if not pc.any(risky).as_py():
        return values
    numeric = pc.match_substring_regex(values, r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")
    fix = pc.and_kleene(risky, pc.invert(numeric))
    if not pc.any(fix).as_py():
        return values
    quote = pa.scalar("'", type=values.type)
    empty = pa.scalar("", type=values.type)
    return pc.if_else(fix, pc.binary_join_element_wise(quote, values, empty), values)


def defuse_frame(frame: Any, trusted: Collection[str] = ()) -> Any:
    """`defuse` for every text column of a polars frame (in Rust, without pandas), except
    the `trusted` ones (columns the caller wrote itself, none starting with a formula)."""
    import polars as pl

    text = [n for n, t in frame.schema.items() if t == pl.String and n not in trusted]
    if not text:
        return frame
    starts = "".join(FORMULA_STARTS).replace("\\", "\\\\").replace("-", "\\-")
    numeric = r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$"
    first = {n: pl.col(n).str.contains(f"^[{starts}]") for n in text}
    found = frame.select(expr.any().alias(n) for n, expr in first.items()).row(0, named=True)
    risky = {n: first[n] & ~pl.col(n).str.contains(numeric) for n in text if found[n]}
    if not risky:
        return frame
    found = frame.select(expr.any().alias(n) for n, expr in risky.items()).row(0, named=True)
    fix = [n for n in risky if found[n]]
    if not fix:
        return frame
    return frame.with_columns(
        pl.when(risky[n]).then(pl.lit("'") + pl.col(n)).otherwise(pl.col(n)).alias(n) for n in fix
    )


class TableWriter:
    """Writes a table batch by batch to CSV, TSV, Parquet, Excel or JSON (by extension).

    CSV, TSV, Parquet and JSON stream (memory stays flat); Excel is built at the end and
    holds at most 1,048,575 rows. Text cells for CSV, TSV and Excel are defused against
    spreadsheet formula injection.
    """

    def __init__(self, path: Any, argument: str = "output", trusted: Collection[str] = ()
                 ) -> None:  # fmt: skip
        """`trusted`: text columns the caller computed, left as they are (see defuse_frame)."""
        from pathlib import Path

        self.path = Path(path)
        kind = TABLE_FORMATS.get(self.path.suffix.lower())
        if kind is None:
            raise InputError(
                f"`{argument}`: cannot tell the format of {self.path.name!r} from its "
                f"extension; use one of {', '.join(sorted(TABLE_FORMATS))}"
            )
        self.kind = kind
        self._writer: Any = None
        self._sink: Any = None
        self._frames: list = []
        self._rows = 0
        self._behind: Any = None
        self._trusted = frozenset(trusted)

    def write(self, table: Any) -> None:
        """Append rows: a polars DataFrame, or a pyarrow Table or RecordBatch."""
        import polars as pl

        frame: Any = table if isinstance(table, pl.DataFrame) else pl.from_arrow(table)
        first = self._rows == 0
        self._rows += frame.height
        if self.kind in ("csv", "tsv", "json"):
            # polars writes CSV three to five times faster than pyarrow here, and JSON rows
            # ten times faster than Python objects (MEASURED.md); in a second thread, while
            # the caller works on the next piece
            from ..common.overlap import WriteBehind

            if self._sink is None:
                self._sink = open(self.path, "wb")  # noqa: SIM115 - closed in close()
                if self.kind == "json":
                    self._sink.write(b'{"rows":[')
                self._behind = WriteBehind(self._write_text)
            self._behind.put((frame, first))
            return
        if self.kind == "parquet":
            import pyarrow.parquet as pq

            arrow = frame.to_arrow()
            if self._writer is None:
                self._writer = pq.ParquetWriter(str(self.path), arrow.schema)
            self._writer.write_table(arrow.cast(self._writer.schema))
            return
        if self._rows > 1_048_575:
            raise InputError(
                f"`{self.path.name}`: an Excel sheet holds at most 1,048,575 rows; write "
                "CSV or Parquet instead"
            )
        self._frames.append(frame)

    def _write_text(self, piece: tuple[Any, bool]) -> None:
        frame, first = piece
        if self.kind != "json":
            separator = "," if self.kind == "csv" else "\t"
            defuse_frame(frame, self._trusted).write_csv(
                self._sink, include_header=first, separator=separator
            )
            return
        for part in frame.iter_slices(BATCH_ROWS):  # rows as JSON objects, from Rust
            if part.height:
                self._sink.write(b"," * (not first) + part.write_json()[1:-1].encode())
                first = False

    def close(self, extra: dict | None = None) -> None:
        """Finish the file; for JSON, `extra` (plain data) follows the rows."""
        import orjson

        if self._behind is not None:
            self._behind.close()

        if self.kind == "json":
            if self._sink is None:
                self._sink = open(self.path, "wb")  # noqa: SIM115
                self._sink.write(b'{"rows":[')
            self._sink.write(b"]")
            for key, value in (extra or {}).items():
                self._sink.write(b"," + orjson.dumps(key) + b":" + orjson.dumps(value))
            self._sink.write(b"}\n")
            self._sink.close()
        elif self.kind == "excel":
            import polars as pl
            import pyarrow as pa

            if self._frames:
                table = pl.concat(self._frames).to_arrow()
                table = pa.table({n: defuse(table.column(n)) for n in table.column_names})
                table.to_pandas().to_excel(self.path, index=False)
        elif self._writer is not None:
            self._writer.close()
        elif self._sink is not None:
            self._sink.close()
