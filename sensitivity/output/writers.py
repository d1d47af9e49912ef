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

    Numbers and booleans are written by polars as struct rows, in Rust: the same bytes as
    orjson gives for the same values (shortest round-trip floats, NaN and infinities as null;
    compared over millions of values, tests/test_output.py). Other columns (text) go through
    `_tokens`, value by value.

    Examples
    --------
    >>> cols = {"a": np.array([1.5, np.nan]), "b": np.array([True, False])}
    >>> b"".join(json_rows(cols, [("a", "a"), ("in", [("b", "b")])]))
    b'{"a":1.5,"in":{"b":true}},{"a":null,"in":{"b":false}}'
    """
    arrays = {k: np.asarray(v) for k, v in columns.items()}
    used = _used(arrays, layout)
    if used and all(_rust_ready(arrays, spec) for spec in layout):
        return _rows_in_rust(arrays, layout, used)  # started at once, in other threads
    return _rows_in_python(arrays, layout)


def _used(columns: Mapping[str, np.ndarray], spec: Sequence[tuple[str, Any]]) -> list[str]:
    """The columns a layout reads, in order."""
    out: list[str] = []
    for _, what in spec:
        if isinstance(what, str):
            out.append(what)
        elif isinstance(what, tuple):
            out.extend(what if what[0] in columns else ())
        else:
            out.extend(_used(columns, what))
    return out


def _rust_ready(columns: Mapping[str, np.ndarray], spec: tuple[str, Any]) -> bool:
    """Whether polars writes this part of a row as orjson would: float64, integer and boolean
    columns (a pair of one kind, so that neither is widened to the other's type)."""
    _, what = spec
    if isinstance(what, str):
        return columns[what].dtype.kind in "iub" or columns[what].dtype == np.float64
    if isinstance(what, tuple):
        if what[0] not in columns:
            return True
        first, second = columns[what[0]].dtype, columns[what[1]].dtype
        return first == second and (first.kind in "iub" or first == np.float64)
    return all(_rust_ready(columns, part) for part in what)


def _template(columns: Mapping[str, np.ndarray], spec: Sequence[tuple[str, Any]],
              pieces: list[str]) -> None:  # fmt: skip
    """The fixed text of a row: `pieces[i]` comes before the i-th value read, the last after
    all of them (the caller starts `pieces` with one empty string)."""
    pieces[-1] += "{"
    for i, (key, what) in enumerate(spec):
        pieces[-1] += ("," if i else "") + '"' + key + '":'
        if isinstance(what, str):
            pieces.append("")
        elif isinstance(what, tuple):
            if what[0] in columns:
                pieces[-1] += "["
                pieces.extend([",", "]"])
            else:
                pieces[-1] += "null"
        else:
            _template(columns, what, pieces)
    pieces[-1] += "}"


#: Batches of rows built at once in Rust, while the caller writes the one before.
AHEAD = 2


def _rows_in_rust(columns: Mapping[str, np.ndarray], layout: Sequence[tuple[str, Any]],
                  used: list[str]) -> Iterator[bytes]:  # fmt: skip
    """Rows as polars concatenates them: each value cast to text in Rust (polars' shortest
    round-trip floats, the same bytes as orjson's) between the row's fixed pieces. Batches
    are built AHEAD at a time in worker threads (polars runs without the GIL), in order."""
    from collections import deque
    from concurrent.futures import ThreadPoolExecutor
    from itertools import islice

    import polars as pl

    pieces = [","]  # every row opens with the comma after the row before
    _template(columns, layout, pieces)
    names = list(dict.fromkeys(used))
    frame = pl.DataFrame({name: columns[name] for name in names})

    def batch(start: int) -> bytes:
        stop = min(frame.height, start + BATCH_ROWS)
        parts = []
        for piece, name in zip(pieces, used, strict=False):
            value = pl.col(name).cast(pl.String)
            if columns[name].dtype.kind == "f" and not np.isfinite(columns[name][start:stop]).all():
                # NaN and infinities are null, as orjson writes them
                value = pl.when(pl.col(name).is_finite()).then(value).otherwise(pl.lit("null"))
            parts += [pl.lit(piece), value]
        parts.append(pl.lit(pieces[-1]))
        rows = frame.slice(start, stop - start).select(pl.concat_str(parts)).to_series()
        return _text_of(rows, skip=0 if start else 1)  # the first row has no comma before

    starts = iter(range(0, frame.height, BATCH_ROWS))
    pool = ThreadPoolExecutor(AHEAD)
    pending = deque(pool.submit(batch, start) for start in islice(starts, AHEAD))

    def drain() -> Iterator[bytes]:
        try:
            while pending:
                done = pending.popleft().result()
                pending.extend(pool.submit(batch, start) for start in islice(starts, 1))
                yield done
        finally:
            pool.shutdown(cancel_futures=True)

    return drain()


def _text_of(rows: Any, skip: int = 0) -> bytes:
    """A polars String series' values run together, as bytes (from its Arrow data buffer),
    less the first `skip` bytes."""
    import pyarrow as pa

    text = rows.to_arrow()
    buffers = text.buffers()
    wide = pa.types.is_large_string(text.type)
    offsets = np.frombuffer(buffers[1], np.int64 if wide else np.int32)
    offsets = offsets[text.offset : text.offset + len(text) + 1]
    return buffers[2][int(offsets[0]) + skip : int(offsets[-1])].to_pybytes()


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
            for chunk in value:
                sink.write(chunk)
            sink.write(b"]")
        else:
            sink.write(orjson.dumps(value))
    sink.write(b"}\n")


def _is_stream(value: Any) -> bool:
    return hasattr(value, "__next__")
