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
