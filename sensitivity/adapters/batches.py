"""A table read in batches, whatever it is: a CSV or TSV file (in pieces cut between
records), Parquet, Excel, or a DataFrame in memory. Each batch gives each wanted column's
kind (number, integer, bool, text) and values, so the one-pass route never holds the table.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any, TypeVar

import numpy as np

from ..common.errors import InputError

#: Rows a batch of a DataFrame holds (files come in the reader's own blocks of 8 MB).
BATCH_ROWS = 65_536
#: Rows of a text file's first piece its column types are first inferred from (`_read_first`).
INFER_ROWS = 1000
MISSING = ["", "#N/A", "#N/A N/A", "#NA", "-1.#IND", "-1.#QNAN", "-NaN", "-nan", "1.#IND",
           "1.#QNAN", "<NA>", "N/A", "NA", "NULL", "NaN", "None", "n/a", "nan", "null"]  # fmt: skip


# --------------------------------------------------------------------------- the data
class ColumnTypeChange(Exception):
    """A CSV column read as numbers (from its first block) holds text further on."""

    def __init__(self, column: str, kind: str) -> None:
        super().__init__(column)
        self.column, self.kind = column, kind


#: A batch: column name -> ("number" | "integer" | "bool", float64 with NaN; bools as 1 and 0)
#: or ("text", Arrow strings). "integer": a column of whole numbers read as such (pandas shows
#: its levels as 2).
Batch = dict[str, tuple[str, Any]]


@dataclass
class Source:
    """A table read in batches: a file (CSV, TSV, Parquet, Excel) or a DataFrame. `batches`
    takes the wanted columns and the kinds forced on some of them (after a ColumnTypeChange)."""

    columns: list[str]
    batches: Callable[[list[str], dict[str, str]], Iterator[Batch]]


def _arrow_batch(batch: Any, wanted: list[str]) -> Batch:
    import pyarrow as pa

    out: Batch = {}
    for name in wanted:
        col = batch.column(name)
        kind_of = col.type
        if pa.types.is_dictionary(kind_of):
            col, kind_of = col.cast(pa.string()), pa.string()
        if pa.types.is_integer(kind_of):
            out[name] = ("integer", col.cast(pa.float64()).to_numpy(zero_copy_only=False))
        elif pa.types.is_floating(kind_of) or pa.types.is_decimal(kind_of) \
                or pa.types.is_null(kind_of):  # fmt: skip
            out[name] = ("number", col.cast(pa.float64()).to_numpy(zero_copy_only=False))
        elif pa.types.is_boolean(kind_of):
            out[name] = ("bool", col.cast(pa.float64()).to_numpy(zero_copy_only=False))
        else:
            out[name] = ("text", col.cast(pa.string()))
    return out


def file_source(path: str | Path, argument: str = "data") -> Source:
    """The columns of a file, read a batch at a time."""
    from .files import checked_file

    p, kind = checked_file(path, argument)
    if kind == "excel":  # sheets are small: read whole, then batch as a frame
        from .files import read_table

        return frame_source(read_table(p, argument))
    if kind == "parquet":
        import pyarrow.parquet as pq

        try:
            names = list(pq.ParquetFile(p).schema_arrow.names)
        except Exception as err:  # noqa: BLE001 - the file's problem
            first = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
            raise InputError(
                f"`{argument}`: could not read {path} as parquet: {first}", argument
            ) from None

        def parquet(wanted: list[str], forced: dict[str, str]) -> Iterator[Batch]:
            for batch in pq.ParquetFile(p).iter_batches(batch_size=BATCH_ROWS, columns=wanted):
                yield _arrow_batch(batch, wanted)

        return Source(names, parquet)
    delimiter = "," if kind == "csv" else "\t"
    names = _csv_header(p, delimiter, argument)

    def text(wanted: list[str], forced: dict[str, str]) -> Iterator[Batch]:
        yield from _csv_batches(p, delimiter, names, wanted, forced, argument)

    return Source(names, text)


def _csv_header(path: Path, delimiter: str, argument: str) -> list[str]:
    """The column names, refusing a file with no data row after them."""
    import csv

    from .files import text_header

    header = text_header(path, delimiter, argument)
    with open(path, newline="", encoding="utf-8-sig") as fh:
        rows = csv.reader(fh, delimiter=delimiter)
        next(rows, None)
        if next((row for row in rows if any(cell.strip() for cell in row)), None) is None:
            raise InputError(f"`{argument}`: {path} has no data rows", argument)
    return header


def _csv_batches(path: Path, delimiter: str, header: list[str], wanted: list[str],
                 forced: dict[str, str], argument: str) -> Iterator[Batch]:  # fmt: skip
    """Typed batches of the wanted columns, each parsed on its own from a piece of the file
    by polars: types inferred over the whole first piece (except those forced) and held for
    the rest; a column whose type breaks further on raises ColumnTypeChange."""
    import io

    import polars as pl

    from .files import byte_chunks

    dtypes: dict[str, Any] = {
        name: pl.Float64 if kind == "number" else pl.String for name, kind in forced.items()
    }
    first = True
    for head, body in byte_chunks(path):
        piece = head + body

        def read(types: dict[str, Any], infer: int | None, piece: bytes = piece,
                 nulls: list[str] | None = MISSING) -> Any:  # fmt: skip
            return pl.read_csv(
                io.BytesIO(piece), separator=delimiter, columns=wanted, null_values=nulls,
                infer_schema_length=infer, schema_overrides=types, raise_if_empty=False,
            )  # fmt: skip

        try:
            frame = _read_first(read, dtypes) if first else _read_held(read, dtypes)
        except Exception as err:  # noqa: BLE001 - a parser failure is the file's, not ours
            change = _type_change(read, dtypes, wanted)
            if change is not None:
                raise change from None
            # the parser's first paragraph, on one line (a cell's own newline shown as \n)
            text = " ".join(str(err).strip().split("\n\n")[0].replace("\n`", "\\n`").split())
            text = text or type(err).__name__
            raise InputError(f"`{argument}`: could not read {path}: {text}", argument) from None
        if first:
            dtypes = {name: frame.schema[name] for name in wanted} | dtypes
            first = False
        yield {name: _polars_column(frame[name]) for name in wanted}


def _read_first(read: Callable[..., Any], dtypes: dict[str, Any]) -> Any:
    """The first piece, its column types inferred from all its rows, as before: polars' type
    inference over a whole piece cost 0.2 s (MEASURED), so the types are inferred from its
    first INFER_ROWS rows and the whole piece parsed with them, which gives the same frame
    whenever it parses and every column has a cell in those rows: every cell then reads as
    the type the first rows gave (an integer, a number, a true/false; text if one of them is
    text), which is the type inference over every row gives (text or a wider number further
    on fails to parse). Otherwise the piece is inferred whole, as before."""
    import polars as pl

    try:
        frame = read(dtypes, INFER_ROWS)
    except Exception:  # noqa: BLE001 - inferred whole, as before
        return read(dtypes, None)
    if frame.height > INFER_ROWS:
        first = frame.head(INFER_ROWS)
        for name, kind in frame.schema.items():  # a column empty in those rows: no type yet
            if kind == pl.Null or first[name].null_count() == first.height:
                return read(dtypes, None)
    return frame


def _read_held(read: Callable[..., Any], dtypes: dict[str, Any]) -> Any:
    """A piece after the first, its column types held: parsed first without the list of
    missing-value words (matching 19 words at every cell doubled the parse), which gives the
    same columns whenever it parses: a number column's cell that is one of the words is
    either a parse error (then the piece is parsed again with the list) or NaN (`nan`,
    `NaN`, `-nan`, `-NaN`: NaN in numpy either way); a text column's cells that are one of
    the words (quoted or not, as the list matches them) are made missing here."""
    import polars as pl

    try:
        frame = read(dtypes, 0, nulls=None)
    except Exception:  # noqa: BLE001 - parsed again with the list, as before
        return read(dtypes, 0)
    texts = [name for name, kind in frame.schema.items() if kind == pl.String]
    if texts:
        frame = frame.with_columns(
            pl.when(pl.col(name).is_in(MISSING)).then(None).otherwise(pl.col(name)).alias(name)
            for name in texts
        )
    return frame


def _type_change(
    read: Callable[[dict[str, Any], int | None], Any], dtypes: dict[str, Any], wanted: list[str]
) -> ColumnTypeChange | None:
    """Which held column type a piece breaks, found by reading the piece again with that one
    type held and every other column as text: an integer column that reads as numbers
    becomes "number", any other "text". None when no single held type is the cause (the
    piece itself cannot be parsed)."""
    import polars as pl

    try:
        read({}, 0)  # every column as text
    except Exception:  # noqa: BLE001 - the piece itself cannot be parsed
        return None
    for name in wanted:
        held = dtypes.get(name)
        if held is None or held == pl.String:
            continue
        try:
            read({name: held}, 0)
            continue
        except Exception:  # noqa: BLE001 - this column's held type is what breaks
            pass
        if held.is_integer():
            try:
                read({name: pl.Float64}, 0)
                return ColumnTypeChange(name, "number")
            except Exception:  # noqa: BLE001 - not numbers either: text
                pass
        return ColumnTypeChange(name, "text")
    return None


def _polars_column(column: Any) -> tuple[str, Any]:
    import polars as pl
    import pyarrow as pa

    if column.dtype.is_integer():
        kind = "integer" if column.null_count() == 0 else "number"
        return kind, column.cast(pl.Float64).to_numpy()
    if column.dtype.is_numeric() or column.dtype == pl.Null:
        return "number", column.cast(pl.Float64).to_numpy()
    if column.dtype == pl.Boolean:
        return "bool", column.cast(pl.Float64).to_numpy()
    return "text", column.cast(pl.String).to_arrow().cast(pa.string())


def frame_source(frame: Any) -> Source:
    """A pandas (or polars, or Arrow) table held in memory, sliced into batches."""
    if not hasattr(frame, "iloc"):
        frame = frame.to_pandas()
    if frame.shape[0] == 0:
        raise InputError("`data` has no rows", "data")

    def slices(wanted: list[str], forced: dict[str, str]) -> Iterator[Batch]:
        for start in range(0, len(frame), BATCH_ROWS):
            part = frame.iloc[start : start + BATCH_ROWS]
            yield {name: _pandas_column(part[name]) for name in wanted}

    return Source([str(c) for c in frame.columns], slices)


def _pandas_column(column: Any) -> tuple[str, Any]:
    import pyarrow as pa
    from pandas.api.types import is_bool_dtype, is_integer_dtype, is_numeric_dtype

    if is_integer_dtype(column.dtype) and not column.isna().any():
        return "integer", column.to_numpy(dtype=float)
    if is_bool_dtype(column.dtype):
        return "bool", column.to_numpy(dtype=float, na_value=np.nan)
    if is_numeric_dtype(column.dtype):
        return "number", column.to_numpy(dtype=float, na_value=np.nan)
    values = column.astype(object).where(column.notna(), None)
    return "text", pa.array([None if v is None else str(v) for v in values], pa.string())


T = TypeVar("T")


def restarting(build: Callable[[dict[str, str]], T]) -> T:
    """Run a pass; when a CSV column's type breaks partway, run it again with the type forced
    (numbers where integers broke, then text)."""
    forced: dict[str, str] = {}
    while True:
        try:
            return build(forced)
        except ColumnTypeChange as change:
            if forced.get(change.column) == change.kind:
                raise InputError(
                    f"`data`: column {change.column!r} could not be read", "data"
                ) from None
            forced[change.column] = change.kind
