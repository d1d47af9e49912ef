"""Reading tables users hand us: CSV, TSV, Excel and Parquet, chosen by file extension."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from ..common.errors import InputError

READERS = {
    ".csv": "csv",
    ".txt": "csv",
    ".tsv": "tsv",
    ".tab": "tsv",
    ".xlsx": "excel",
    ".xls": "excel",
    ".parquet": "parquet",
    ".pq": "parquet",
}


def read_table(path: str | Path, argument: str = "data") -> Any:
    """A pandas DataFrame from `path`; ValueError names `argument` for any unreadable file."""
    import pandas as pd

    p, kind = _checked(path, argument)
    try:
        if kind == "csv":
            frame = pd.read_csv(p)
        elif kind == "tsv":
            frame = pd.read_csv(p, sep="\t")
        elif kind == "excel":
            frame = pd.read_excel(p)
        else:
            frame = pd.read_parquet(p)
    except ImportError as err:
        raise InputError(f"`{argument}`: reading {kind} needs an optional package: {err}") from None
    except Exception as err:  # noqa: BLE001 - any parser failure is the file's, not ours
        first = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        raise InputError(f"`{argument}`: could not read {path} as {kind}: {first}") from None
    if frame.shape[0] == 0 or frame.shape[1] == 0:
        raise InputError(f"`{argument}`: {path} has no data rows")
    return frame


# --------------------------------------------------------------------------- batches
BATCH_ROWS = 100_000


def file_kind(path: str | Path, argument: str = "file") -> str:
    """The format of `path` from its extension; InputError names `argument` if unknown."""
    p = Path(path)
    kind = READERS.get(p.suffix.lower())
    if kind is None:
        raise InputError(
            f"`{argument}`: cannot tell the format of {p.name!r} from its extension; use one "
            f"of {', '.join(sorted(READERS))}"
        )
    return kind


def _checked(path: str | Path, argument: str) -> tuple[Path, str]:
    """The file and its format, refusing an unknown extension, a missing or empty file."""
    p = Path(path)
    kind = file_kind(p, argument)
    if not p.is_file():
        raise InputError(f"`{argument}`: file not found: {path}")
    if p.stat().st_size == 0:
        raise InputError(f"`{argument}`: {path} is empty")
    return p, kind


def read_batches(path: str | Path, argument: str = "file", batch_rows: int = BATCH_ROWS) -> Any:
    """The rows of a table file as pyarrow RecordBatches, read a batch at a time.

    CSV and TSV cells are read as text, so every cell is echoed exactly as the file holds
    it; Parquet keeps its column types; Excel is read whole (its sheets are small).
    """
    import pyarrow as pa

    p, kind = _checked(path, argument)
    try:
        if kind in ("csv", "tsv"):
            yield from _text_batches(p, "," if kind == "csv" else "\t", batch_rows)
        elif kind == "parquet":
            import pyarrow.parquet as pq

            yield from pq.ParquetFile(p).iter_batches(batch_size=batch_rows)
        else:
            import pandas as pd

            frame = pd.read_excel(p, dtype=str, keep_default_na=False)
            table = pa.Table.from_pandas(frame, preserve_index=False)
            yield from table.to_batches(max_chunksize=batch_rows)
    except InputError:
        raise
    except ImportError as err:
        raise InputError(f"`{argument}`: reading {kind} needs an optional package: {err}") from None
    except Exception as err:  # noqa: BLE001 - a parser failure is the file's, not ours
        first = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        raise InputError(f"`{argument}`: could not read {path} as {kind}: {first}") from None


def text_header(path: Path, delimiter: str, argument: str) -> list[str]:
    """A text table's column names; InputError for none, or for a name given twice."""
    import csv

    with open(path, newline="", encoding="utf-8-sig") as fh:
        header = next(csv.reader(fh, delimiter=delimiter), None)
    if not header:
        raise InputError(f"`{argument}`: {path} has no header row")
    if len(set(header)) != len(header):
        twice = sorted({h for h in header if header.count(h) > 1})
        raise InputError(f"`{argument}`: {path} has columns named twice: {', '.join(twice)}")
    return header


def _text_batches(path: Path, delimiter: str, batch_rows: int) -> Any:
    """Every cell as text, exactly as the file holds it, a piece of the file at a time (see
    `byte_chunks`)."""
    import io

    import pyarrow as pa
    import pyarrow.csv as pacsv

    header = text_header(path, delimiter, "file")
    options = {
        "parse_options": pacsv.ParseOptions(delimiter=delimiter, newlines_in_values=True),
        "convert_options": pacsv.ConvertOptions(
            column_types={h: pa.string() for h in header},
            strings_can_be_null=False,
            quoted_strings_can_be_null=False,
        ),
    }
    rows = 0
    for head, body in byte_chunks(path):
        # each piece parsed whole (both cores), so memory is bounded by the piece; a row with
        # too few or too many cells is an error, as from a streaming reader
        table = pacsv.read_csv(io.BytesIO(head + body), **options)
        rows += table.num_rows
        yield from table.to_batches(max_chunksize=batch_rows)
    if not rows:
        raise InputError(f"`file`: {path} has no data rows")


# --------------------------------------------------------------------------- byte chunks
CHUNK_BYTES = 1 << 23


def byte_chunks(path: str | Path, size: int | None = None) -> Any:
    """A text table as (header line, body) pairs of about `size` bytes, each body whole
    records: cut at a newline outside quotes (an even number of quote characters before it,
    which doubled quotes inside a quoted cell keep), so a quoted cell may hold newlines.

    Parsing each piece on its own keeps memory bounded by the piece, however large the file,
    where a streaming reader's read-ahead grows with it (docs in MEASURED: flat 1e6 -> 4e6).
    """
    size = size or CHUNK_BYTES
    with open(path, "rb") as fh:
        header = fh.readline()
        if header.startswith(b"\xef\xbb\xbf"):
            header = header[3:]
        carry = b""
        while True:
            data = fh.read(size)
            if not data:
                if carry.strip():
                    yield header, carry if carry.endswith(b"\n") else carry + b"\n"
                return
            buf = carry + data
            cut = buf.rfind(b"\n")
            while cut >= 0 and buf.count(b'"', 0, cut) % 2:
                cut = buf.rfind(b"\n", 0, cut)
            if cut < 0:  # one record longer than the piece: read on
                carry = buf
                continue
            yield header, buf[: cut + 1]
            carry = buf[cut + 1 :]
