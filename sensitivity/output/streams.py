"""Tables written a batch at a time (the screen): CSV, TSV, Parquet, Excel or JSON by
extension, with text cells defused against spreadsheet formula injection."""

from __future__ import annotations

from collections.abc import Callable, Collection
from functools import cache
from typing import Any, TypeVar

from ..common.errors import InputError

T = TypeVar("T")

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
_EXCEL_ILLEGAL = __import__("re").compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f]")
_NUMBER = __import__("re").compile(r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")


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


def safe_name(name: str) -> str:
    """A column name safe as a spreadsheet header cell: a formula-looking name gets "'"."""
    text = str(name)
    if text.startswith(FORMULA_STARTS) and not _NUMBER.match(text):
        return "'" + text
    return text


def defuse_header(frame: Any) -> Any:
    """A polars frame whose column names are safe header cells (the body is `defuse_frame`'s)."""
    names = {n: safe_name(n) for n in frame.columns}
    changed = {n: v for n, v in names.items() if v != n}
    if not changed:
        return frame
    taken = set(frame.columns)
    for old, new in changed.items():  # a defused name never collides with another column
        while new in taken:
            new = "'" + new
        taken.add(new)
        changed[old] = new
    return frame.rename(changed)


def defuse_frame(frame: Any, trusted: Collection[str] = ()) -> Any:
    """`defuse` for every text column of a polars frame (in Rust, without pandas), except
    the `trusted` ones (columns the caller wrote itself, none starting with a formula)."""
    import polars as pl

    text = [n for n, t in frame.schema.items() if t == pl.String and n not in trusted]
    text = [n for n in text if _may_start_a_formula(frame[n])]
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


#: Rows turned into JSON text at a time, and slices of that many turned at once (in polars'
#: thread pool, both cores).
JSON_ROWS = 8192
JSON_SLICES = 4
#: Bytes of a text file written between two requests to the kernel to start writing it out.
WRITE_OUT_BYTES = 1 << 26
_SYNC_FILE_RANGE: Any = None


def _start_writing_out(fileno: int) -> None:
    """Ask the kernel to start writing a file's cached pages to disk now, without waiting and
    without dropping them from the cache (Linux `sync_file_range`; elsewhere nothing).

    Left to itself, ext4 writes out all of a file's delayed pages at once, in the caller,
    when the file is renamed over an existing one (its `auto_da_alloc` safeguard, which
    `close` meets on every run that replaces an output): for 470 MB of JSON, a pause of
    about 0.2 s at the end and a slower write beforehand (measured, issue 26). Asked
    for a piece at a time from the writer's thread, the pages go out while the rows are
    still being made."""
    global _SYNC_FILE_RANGE
    if _SYNC_FILE_RANGE is None:
        _SYNC_FILE_RANGE = False
        import sys

        if sys.platform.startswith("linux"):
            try:
                import ctypes

                call = ctypes.CDLL(None, use_errno=True).sync_file_range
                call.argtypes = (ctypes.c_int, ctypes.c_int64, ctypes.c_int64, ctypes.c_uint)
                _SYNC_FILE_RANGE = call
            except (OSError, AttributeError):  # no such call in this C library
                pass
    if _SYNC_FILE_RANGE:
        _SYNC_FILE_RANGE(fileno, 0, 0, 2)  # SYNC_FILE_RANGE_WRITE: start, do not wait


#: The first bytes a formula starts with (all ASCII), as a lookup table over byte values.
_RISKY_BYTE = __import__("numpy").zeros(256, bool)
_RISKY_BYTE[[ord(c) for c in FORMULA_STARTS]] = True


@cache
def _c_structs() -> tuple[Any, Any]:
    """The Arrow C data interface's ArrowArray and ArrowSchema, as ctypes structures."""
    import ctypes

    c_int64, c_void_p = ctypes.c_int64, ctypes.c_void_p

    class ArrowSchema(ctypes.Structure):
        pass

    class ArrowArray(ctypes.Structure):
        pass

    ArrowSchema._fields_ = [
        ("format", ctypes.c_char_p), ("name", ctypes.c_char_p), ("metadata", ctypes.c_char_p),
        ("flags", c_int64), ("n_children", c_int64), ("children", c_void_p),
        ("dictionary", c_void_p),
        ("release", ctypes.CFUNCTYPE(None, ctypes.POINTER(ArrowSchema))),
        ("private_data", c_void_p),
    ]  # fmt: skip
    ArrowArray._fields_ = [
        ("length", c_int64), ("null_count", c_int64), ("offset", c_int64),
        ("n_buffers", c_int64), ("n_children", c_int64),
        ("buffers", ctypes.POINTER(c_void_p)), ("children", c_void_p),
        ("dictionary", c_void_p),
        ("release", ctypes.CFUNCTYPE(None, ctypes.POINTER(ArrowArray))),
        ("private_data", c_void_p),
    ]  # fmt: skip
    return ArrowArray, ArrowSchema


def _may_start_a_formula(column: Any) -> bool:
    """Whether any cell of a polars String column may start with a formula character: read
    from the column's Arrow string views, each of which holds its string's first bytes (the
    Arrow format: a 4-byte length, then the string itself up to 12 bytes or its first 4), so
    no cell is visited as text. The views are read through the Arrow C data interface
    (`_string_views`), without pyarrow, whose import alone would cost more than the check.
    Chunk by chunk, so that no views are copied together. True when that layout is not at
    hand (the full check runs)."""
    for chunk in column.get_chunks():
        found = _string_views(chunk.rename(""), _risky_start)  # a name may hold a NUL
        if found is None or found:
            return True
    return False


def _risky_start(cells: Any) -> bool:  # lengths read only if a first byte is risky (5x faster)
    if not (risky := _RISKY_BYTE.take(cells[:, 4])).any():
        return False
    return bool((risky & (cells[:, :4].copy().view("<i4")[:, 0] > 0)).any())


def _string_views(chunk: Any, read: Callable[[Any], T]) -> T | None:
    """`read` of a one-chunk polars String series' views (a numpy uint8 array, 16 bytes a
    row), while polars lends them through the Arrow C data interface; None when the series
    does not export as string views."""
    import ctypes

    import numpy as np

    arrow_array, arrow_schema = _c_structs()
    array, schema = arrow_array(), arrow_schema()
    try:
        chunk._export_arrow_to_c(ctypes.addressof(array), ctypes.addressof(schema))
    except Exception:  # noqa: BLE001 - any other layout: the caller's exact check decides
        return None
    try:
        if schema.format != b"vu" or array.n_buffers < 2 or not array.buffers[1]:
            return None
        rows = array.offset + array.length
        raw = (ctypes.c_uint8 * (rows * 16)).from_address(array.buffers[1])
        return read(np.frombuffer(raw, np.uint8).reshape(-1, 16)[array.offset :])
    finally:  # the exporter's memory is given back however the read ended
        if array.release:
            array.release(ctypes.byref(array))
        if schema.release:
            schema.release(ctypes.byref(schema))


def _joined(rows: Any, skip: int = 0) -> Any:
    """A polars String series' values run together, less the first `skip` bytes: a read-only
    slice of its Arrow data buffer (nothing copied after the series itself)."""
    import numpy as np
    import polars as pl
    import pyarrow as pa

    text = rows.rename("").to_arrow(compat_level=pl.CompatLevel.oldest())  # offsets, bytes
    buffers = text.buffers()
    wide = pa.types.is_large_string(text.type)
    if not (wide or pa.types.is_string(text.type)):
        return "".join(rows.to_list())[skip:].encode()
    offsets = np.frombuffer(buffers[1], np.int64 if wide else np.int32)
    offsets = offsets[text.offset : text.offset + len(text) + 1]
    start, stop = int(offsets[0]) + skip, int(offsets[-1])
    return buffers[2][start:stop]


def _joined_parts(rows: Any, skip: int = 0) -> list:
    """`_joined`, as slices of the buffers polars already holds the values in (nothing
    copied): where each value is longer than 12 bytes (kept out of its view) and the values
    lie one after the other in their buffers, as polars lays out a column it has just made.
    Otherwise `_joined` (one copy, in Arrow's offsets layout)."""
    import numpy as np
    import polars as pl

    text = rows.rename("").to_arrow(compat_level=pl.CompatLevel.newest())
    if str(text.type) != "string_view" or text.null_count or not len(text):
        return [_joined(rows, skip)]
    buffers = text.buffers()
    views = np.frombuffer(buffers[1], np.int32).reshape(-1, 4)[
        text.offset : text.offset + len(text)
    ]
    length, index, offset = views[:, 0], views[:, 2], views[:, 3]
    end = offset + length
    same = index[1:] == index[:-1]
    follows = np.where(
        same, offset[1:] == end[:-1], (index[1:] == index[:-1] + 1) & (offset[1:] == 0)
    )
    if (length <= 12).any() or not follows.all():
        return [_joined(rows, skip)]
    firsts = np.flatnonzero(np.r_[True, ~same])
    lasts = np.r_[firsts[1:], len(views)] - 1
    return [
        buffers[2 + int(index[first])][int(offset[first]) + skip * (n == 0) : int(end[last])]
        for n, (first, last) in enumerate(zip(firsts, lasts, strict=True))
    ]


class TableWriter:
    """Writes a table batch by batch to CSV, TSV, Parquet, Excel or JSON (by extension).

    CSV, TSV, Parquet and JSON stream (memory stays flat); Excel is built at the end and
    holds at most 1,048,575 rows. Text cells for CSV, TSV and Excel are defused against
    spreadsheet formula injection.
    """

    def __init__(self, path: Any, argument: str = "output", trusted: Collection[str] = (),
                 convert: Callable[[Any], Any] | None = None) -> None:  # fmt: skip
        """`trusted`: text columns the caller computed, left as they are (see defuse_frame).
        `convert`: for Parquet, applied to each polars frame in the writer's thread before it is
        written (the screen's column types, perhaps still being inferred: see parquet.py)."""
        from pathlib import Path

        self.path = Path(path)
        kind = TABLE_FORMATS.get(self.path.suffix.lower())
        if kind is None:
            raise InputError(
                f"`{argument}`: cannot tell the format of {self.path.name!r} from its "
                f"extension; use one of {', '.join(sorted(TABLE_FORMATS))}",
                argument,
            )
        if kind == "excel":
            from importlib.util import find_spec

            if find_spec("openpyxl") is None:
                raise InputError(
                    f"`{argument}`: writing {self.path.name!r} (Excel) needs openpyxl; install "
                    "it (pip install openpyxl) or write .csv or .parquet",
                    argument,
                )
        self.kind = kind
        self._argument = argument
        # every byte goes to a temporary file beside the target, renamed into place by close()
        self._tmp: Any = None
        self._writer: Any = None
        self._sink: Any = None
        self._frames: list = []
        self._rows = 0
        self._behind: Any = None
        self._disk: Any = None
        self._any_rows = False
        self._trusted = frozenset(trusted)
        self._out_at = 0  # where the text file stood when its writing out was last started
        self._convert = convert

    def write(self, table: Any) -> None:
        """Append rows: a polars DataFrame, or a pyarrow Table or RecordBatch."""
        import polars as pl

        frame: Any = table if isinstance(table, pl.DataFrame) else pl.from_arrow(table)
        first = self._rows == 0
        if first and self.kind == "parquet":
            nul = [name for name in frame.columns if "\x00" in name]
            if nul:
                raise InputError(
                    f"`{self._argument}`: column {nul[0]!r} has a NUL character in its name, "
                    f"which a {self.kind.upper()} file cannot hold; rename it, or write .csv",
                    self._argument,
                )
        if first and self.kind in ("csv", "tsv", "json"):
            raw = [name for name, dtype in frame.schema.items() if dtype == pl.Binary]
            if raw:
                raise InputError(
                    f"`{self._argument}`: column {raw[0]!r} holds raw bytes, which a "
                    f"{self.kind.upper()} file cannot hold; write .parquet, or leave the "
                    "column out",
                    self._argument,
                )
        self._rows += frame.height
        if self.kind in ("csv", "tsv", "json", "parquet"):
            # polars writes CSV three to five times faster than pyarrow here, and JSON rows
            # ten times faster than Python objects (MEASURED.md); in a second thread, while
            # the caller works on the next piece
            from ..common.overlap import WriteBehind

            if self._behind is None:
                if self.kind != "parquet":
                    self._sink = open(self._temporary(), "wb")  # noqa: SIM115 - closed in close()
                if self.kind == "json":
                    self._sink.write(b'{"rows":[')
                # Parquet may wait for its column types before the first piece: two pieces
                # held in hand, so that the caller can go on meanwhile (one, if it can guess)
                waits = self.kind == "parquet" and not hasattr(self._convert, "guess")
                depth = 2 if waits and self._convert is not None else 1
                self._behind = WriteBehind(self._write_piece, depth)
            self._behind.put((frame, first))
            return
        if self._rows > 1_048_575:
            raise InputError(
                f"`{self.path.name}`: an Excel sheet holds at most 1,048,575 rows; write "
                "CSV or Parquet instead",
                self.path.name,
            )
        self._frames.append(frame)

    def _write_piece(self, piece: tuple[Any, bool]) -> None:
        frame, first = piece
        if self.kind == "parquet":
            if self._writer is None:
                from .parquet import ParquetPieces

                self._writer = ParquetPieces(self._temporary, self._convert)
            self._writer.write(frame)
            return
        if self.kind != "json":
            separator = "," if self.kind == "csv" else "\t"
            frame = defuse_header(frame)
            defuse_frame(frame, self._trusted).write_csv(
                self._sink, include_header=first, separator=separator
            )
            self._write_out()
            return
        if not frame.height:
            return
        # rows as JSON objects, from Rust: each row's object by polars' JSON serializer (the
        # bytes of write_ndjson, in about three quarters of the time), after the comma that
        # separates it from the row before, all run together in one buffer (no line ends to
        # replace, no copy)
        import polars as pl

        objects = pl.concat_str(pl.lit(","), pl.struct(pl.all()).struct.json_encode())
        if self._disk is None:  # a third thread puts the text on disk while the next is made
            from ..common.overlap import WriteBehind

            self._disk = WriteBehind(self._put_down)
        # a slice at a time: its text (a few MB) reuses memory already in hand, where a whole
        # piece's (50 MB) would be fresh pages each time (measured: a third of the system time);
        # a few slices at once, each a task of polars' thread pool
        starts = range(0, frame.height, JSON_ROWS)
        for at in range(0, len(starts), JSON_SLICES):
            slices = [frame.slice(start, JSON_ROWS).lazy().select(objects)
                      for start in starts[at : at + JSON_SLICES]]  # fmt: skip
            for rows in pl.collect_all(slices):
                self._disk.put(_joined_parts(rows.to_series(), skip=0 if self._any_rows else 1))
                self._any_rows = True

    def _put_down(self, parts: list) -> None:
        for part in parts:
            self._sink.write(part)
        self._write_out()

    def _write_out(self) -> None:
        """Every WRITE_OUT_BYTES, have the kernel start writing the file out (see
        `_start_writing_out`)."""
        at = self._sink.tell()
        if at - self._out_at >= WRITE_OUT_BYTES:
            self._sink.flush()
            _start_writing_out(self._sink.fileno())
            self._out_at = at

    def close(self, extra: dict | None = None) -> None:
        """Finish the file and rename it into place; for JSON, `extra` (plain data) follows the
        rows. On an error nothing is left under the target's name."""
        try:
            if self._behind is not None:
                self._behind.close()
                self._behind = None
            if self._disk is not None:
                self._disk.close()
                self._disk = None
            self._finish(extra)
        except BaseException:
            self.abort()
            raise
        from .atomic import commit

        if self._tmp is not None:
            commit(self._tmp, self.path)
            self._tmp = None

    def _temporary(self) -> Any:
        from .atomic import temporary_beside

        if self._tmp is None:
            self._tmp = temporary_beside(self.path)
        return self._tmp

    def abort(self) -> None:
        """Stop without writing the target: close what is open and remove the temporary file
        (the target, if it existed, is left as it was)."""
        from .atomic import discard

        try:
            for name in ("_behind", "_disk", "_writer", "_sink"):  # each as the last left it
                try:
                    if (closer := getattr(self, name)) is not None:
                        closer.close()
                except BaseException:  # noqa: BLE001, S110 - the first error is the one to report
                    pass  # (a Ctrl-C's interrupt reaches a closing writer too)
        finally:  # the temporary file goes whatever happened above
            self._behind = self._disk = self._writer = self._sink = None
            discard(self._tmp)
            self._tmp = None

    def _finish(self, extra: dict | None) -> None:
        import orjson

        if self.kind == "json":
            if self._sink is None:
                self._sink = open(self._temporary(), "wb")  # noqa: SIM115
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
                frame = pl.concat(self._frames)
                # control characters cannot be held in a worksheet (openpyxl refuses them):
                # shown as U+FFFD, in the header and in text cells alike
                frame = frame.rename({n: _EXCEL_ILLEGAL.sub("\ufffd", n) for n in frame.columns})
                frame = frame.with_columns(
                    pl.col(n).str.replace_all(_EXCEL_ILLEGAL.pattern, "\ufffd")
                    for n, t in frame.schema.items() if t == pl.String
                )  # fmt: skip
                table = defuse_header(frame).to_arrow()
                table = pa.table({n: defuse(table.column(n)) for n in table.column_names})
                table.to_pandas().to_excel(self._temporary(), index=False)
        elif self._writer is not None:
            self._writer.finish()
        elif self._sink is not None:
            self._sink.close()
