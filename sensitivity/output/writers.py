"""Writers that carry tables out as columns: CSV through pyarrow, JSON through orjson, in
batches, so memory stays flat whatever the number of rows."""

from __future__ import annotations

import io
import math
from collections.abc import Iterator, Mapping, Sequence
from typing import Any

import numpy as np


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

    Every value is orjson's own text (shortest round-trip floats, NaN and infinities as
    null; text through the standard library's string encoder), the bytes the value-by-value
    route gives (`_rows_in_python`, compared in tests/test_writers.py). The rows are put
    together from whole columns (`_rows_in_pieces`): one short bytes object a row for each
    group of neighbouring number columns, none for a column of repeating values (a grid's
    axes, flags), no dict or list a row; neither polars nor pyarrow is imported.

    Examples
    --------
    >>> cols = {"a": np.array([1.5, np.nan]), "b": np.array([True, False])}
    >>> b"".join(json_rows(cols, [("a", "a"), ("in", [("b", "b")])]))
    b'{"a":1.5,"in":{"b":true}},{"a":null,"in":{"b":false}}'
    """
    arrays = {k: np.asarray(v) for k, v in columns.items()}
    return _rows_in_pieces(arrays, layout)


def _template(columns: Mapping[str, np.ndarray], spec: Sequence[tuple[str, Any]],
              pieces: list[str], slots: list[str]) -> None:  # fmt: skip
    """The fixed text of a row around its values: `pieces[i]` comes before the column
    `slots[i]`, the last piece after all of them (the caller starts `pieces` with one
    string)."""
    pieces[-1] += "{"
    for i, (key, what) in enumerate(spec):
        pieces[-1] += ("," if i else "") + '"' + key + '":'
        if isinstance(what, str):
            slots.append(what)
            pieces.append("")
        elif isinstance(what, tuple):
            if what[0] in columns:
                pieces[-1] += "["
                slots.extend(what)
                pieces.extend([",", "]"])
            else:
                pieces[-1] += "null"
        else:
            _template(columns, what, pieces, slots)
    pieces[-1] += "}"


#: A column whose values in a batch repeat (a grid's axes, constants, flags) has its few
#: distinct texts written once and repeated; neighbouring ones are joined into one text
#: (with the fixed text between them) while their combinations stay at most this many.
DISTINCT_TEXTS = 4_096
#: Rows of JSON made at once: a batch's buffers stay small enough for the allocator to reuse
#: them (measured on the 1000 x 1000 grid: 65,536 at once took five times the page faults
#: and about twice the system time).
JSON_ROWS = 16_384
#: Rows joined at once (a join of many short pieces is fastest in blocks of about this many).
JOIN_ROWS = 2_048
#: At most this many neighbouring number columns are written as one text a row (`_run`).
RUN = 30


def _rows_in_pieces(columns: Mapping[str, np.ndarray], layout: Sequence[tuple[str, Any]]
                    ) -> Iterator[bytes]:  # fmt: skip
    """Rows put together a batch at a time from whole columns. Each row is its fixed pieces
    with, between them, each column's value as text: a column of repeating values (`_codes`)
    becomes a short list of texts and an index into it, merged with its neighbours; other
    number columns side by side become one text a row (`_run`), text columns one a value.
    The row's parts are laid into one list by slices and joined."""
    pieces = [","]  # every row opens with the comma after the row before
    slots: list[str] = []
    _template(columns, layout, pieces, slots)
    n = len(columns[slots[0]]) if slots else 0
    texts = [p.encode() for p in pieces]
    for start in range(0, n, JSON_ROWS):
        stop = min(n, start + JSON_ROWS)
        size = stop - start
        values = [columns[name][start:stop] for name in slots]
        coded = [_repeating(v) for v in values]
        # a row's parts in order: each (texts, codes) for repeating text (codes None: one text
        # in every row), or a list of one text a row
        parts: list[Any] = [([texts[0]], None)]
        i = 0
        while i < len(slots):
            if coded[i] is not None:
                parts.append(coded[i])
                i += 1
            elif values[i].dtype.kind in "fiu":
                j = i + 1
                while (j < len(slots) and j - i < RUN and coded[j] is None
                       and values[j].dtype == values[i].dtype):  # fmt: skip
                    j += 1
                parts.append(_run(values[i:j], texts[i + 1 : j]))
                i = j
            else:
                parts.append(_tokens(values[i]))
                i += 1
            parts.append(([texts[i]], None))
        merged = _merge(parts)
        width = len(merged)
        flat: list[Any] = [None] * (size * width)
        for i, part in enumerate(merged):
            if isinstance(part, list):
                flat[i::width] = part
            elif part[1] is None:
                flat[i::width] = part[0] * size
            else:
                flat[i::width] = np.array(part[0], dtype=object)[part[1]].tolist()
        if not start:
            flat[0] = flat[0][1:]  # the first row has no comma before it
        step = JOIN_ROWS * width
        for i in range(0, len(flat), step):  # pieces of a size the allocator reuses
            yield b"".join(flat[i : i + step])
        del values, coded, parts, merged, flat  # freed before the next batch reuses the memory


def _repeating(column: np.ndarray) -> tuple[list[bytes], np.ndarray | None] | None:
    """A column's text as (distinct texts, each row's index) when its values repeat (flags,
    a grid's axes; None for the index when there is one value); None otherwise."""
    if column.dtype.kind == "b":
        return ([b"false", b"true"], column.view(np.uint8))
    coded = _codes(column)
    if coded is None:
        return None
    distinct, codes = coded
    return (_tokens(distinct), codes)


def _run(values: list[np.ndarray], between: list[bytes]) -> list[bytes]:
    """Neighbouring number columns of one type as one text a row: their values, with
    `between[j]` between the j-th and the next. orjson writes them interleaved as one list;
    its commas are then marked where the row's text differs from a comma (between rows with
    a zero byte), the marks replaced and the text cut between rows."""
    size, width = len(values[0]), len(values)
    if not size:
        return []
    if width == 1:
        return orjson_numbers(values[0])[1:-1].split(b",")
    table = np.empty((size, width), dtype=values[0].dtype)
    for j, column in enumerate(values):
        table[:, j] = column
    raw = np.frombuffer(bytearray(orjson_numbers(table.ravel())), dtype=np.uint8)
    commas = np.flatnonzero(raw == ord(","))  # numbers and null hold none
    at = np.empty((size, width), dtype=np.intp)  # the last row has no comma after it
    at.reshape(-1)[:-1] = commas
    raw[at[:-1, -1]] = 0
    marks = {}
    for j, text in enumerate(between):
        if text != b",":
            raw[at[:, j]] = j + 1
            marks[bytes([j + 1])] = text
    out = raw[1:-1].tobytes()
    for mark, text in marks.items():
        out = out.replace(mark, text)
    return out.split(b"\0")


def orjson_numbers(values: np.ndarray) -> bytes:
    """orjson's text of a numeric array (NaN and infinities as null)."""
    import orjson

    return orjson.dumps(np.ascontiguousarray(values), option=orjson.OPT_SERIALIZE_NUMPY)


def _codes(column: np.ndarray) -> tuple[np.ndarray, np.ndarray | None] | None:
    """A numeric column's distinct values and each row's index into them (None for the codes
    when there is one value), when there are few; None otherwise. Values are told apart by
    their bits, so 0.0 and -0.0 (whose texts differ) stay apart."""
    if column.dtype.kind not in "fiu" or column.dtype.itemsize != 8 or not len(column):
        return None
    bits = column.view(np.int64)
    ends = np.flatnonzero(bits[1:] != bits[:-1])  # where a run of equal values ends
    if not len(ends):
        return column[:1], None
    if len(ends) < len(column) // 16:  # long runs: a grid's slower axes
        starts = np.concatenate([[0], ends + 1])
        lengths = np.diff(np.append(starts, len(column)))
        return column[starts], np.repeat(np.arange(len(starts)), lengths)
    again = np.flatnonzero(bits[1 : len(bits) // 8 + 1] == bits[0])
    if len(again):  # values that come round again in the same order: a grid's fastest axis
        period = int(again[0]) + 1
        if np.array_equal(bits[period:], bits[:-period]):
            return column[:period], np.arange(len(column)) % period
    # (sorted by hand: np.unique would import numpy.ma, a cost at every start)
    sample = np.sort(bits[:: max(1, len(bits) // 1024)])
    if np.count_nonzero(sample[1:] != sample[:-1]) >= len(sample) // 4:  # mostly distinct
        return None
    order = np.argsort(bits, kind="stable")
    ordered = bits[order]
    new = np.empty(len(bits), dtype=bool)
    new[0], new[1:] = True, ordered[1:] != ordered[:-1]
    if np.count_nonzero(new) > len(column) // 8:
        return None
    codes = np.empty(len(bits), dtype=np.intp)
    codes[order] = np.cumsum(new) - 1
    return ordered[new].view(column.dtype), codes


def _merge(parts: list[Any]) -> list[Any]:
    """Neighbouring repeating parts joined into one: texts of every combination (at most
    DISTINCT_TEXTS), codes combined; a list of one text a row stays as it is."""
    out: list[Any] = []
    for part in parts:
        if isinstance(part, tuple) and out and isinstance(out[-1], tuple):
            (left, lc), (right, rc) = out[-1], part
            if len(left) * len(right) <= DISTINCT_TEXTS:
                texts = [a + b for a in left for b in right]
                if lc is None:
                    codes = rc
                elif rc is None:
                    codes = lc
                else:
                    codes = lc.astype(np.intp) * len(right) + rc
                out[-1] = (texts, codes)
                continue
        out.append(part)
    return out


def _rows_in_python(
    columns: Mapping[str, np.ndarray], layout: Sequence[tuple[str, Any]]
) -> Iterator[bytes]:
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
            # a second thread puts each chunk on disk while the next is made
            from ..common.overlap import WriteBehind

            behind = WriteBehind(sink.write, depth=2)
            try:
                for chunk in value:
                    behind.put(chunk)
            finally:
                behind.close()
            sink.write(b"]")
        else:
            sink.write(orjson.dumps(value))
    sink.write(b"}\n")


def _is_stream(value: Any) -> bool:
    return hasattr(value, "__next__")
