"""Reading tables users hand us: CSV, TSV, Excel and Parquet, chosen by file extension."""

from __future__ import annotations

from collections.abc import Callable
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


#: A number written with a decimal comma (1,32; -0,5; 1,2e-3) and no other separator.
DECIMAL_COMMA = r"^([-+]?[0-9]*),([0-9]+(?:[eE][-+]?[0-9]+)?)$"


def read_table(path: str | Path, argument: str = "data") -> Any:
    """A pandas DataFrame from `path`; ValueError names `argument` for any unreadable file."""
    import pandas as pd

    p, kind = checked_file(path, argument)
    try:
        if kind == "csv" and sniff_delimiter(p) == ";":  # a European file: decimal commas
            frame = pd.read_csv(p, sep=";", decimal=",")
        elif kind == "csv":
            frame = pd.read_csv(p)
        elif kind == "tsv":
            frame = pd.read_csv(p, sep="\t")
        elif kind == "excel":
            frame = pd.read_excel(p)
        else:
            frame = pd.read_parquet(p)
    except ImportError as err:
        raise InputError(
            f"`{argument}`: reading {kind} needs an optional package: {err}", argument
        ) from None
    except Exception as err:  # noqa: BLE001 - any parser failure is the file's, not ours
        first = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        raise InputError(
            f"`{argument}`: could not read {path} as {kind}: {first}", argument
        ) from None
    if frame.shape[0] == 0 or frame.shape[1] == 0:
        raise InputError(f"`{argument}`: {path} has no data rows", argument)
    one_column_of_many([str(c) for c in frame.columns], argument)
    return frame


def one_column_of_many(header: list[str], argument: str | None = None) -> None:
    """A table read as one column whose name holds tabs, semicolons or commas: the file's
    delimiter is not the one its extension promises (a TSV named .csv)."""
    if len(header) != 1:
        return
    name = header[0]
    for mark, shown in (("\t", "tabs"), (";", "semicolons"), (",", "commas"), ("|", "bars")):
        if name.count(mark) >= 1:
            parts = [p.strip() for p in name.split(mark)]
            raise InputError(
                (f"`{argument}`: " if argument else "")
                + f"the table was read as one column, whose name holds {shown}: "
                f"{' | '.join(repr(p) for p in parts[:8])}; the file's cells are separated by "
                f"{shown}, not what its extension says"
                + (
                    " (a TSV named .csv?): rename it .tsv"
                    if mark == "\t"
                    else ": save it with commas as .csv, or with tabs as .tsv"
                ),
                argument,
            )


# --------------------------------------------------------------------------- batches
BATCH_ROWS = 100_000


def file_kind(path: str | Path, argument: str = "file") -> str:
    """The format of `path` from its extension; InputError names `argument` if unknown."""
    p = Path(path)
    kind = READERS.get(p.suffix.lower())
    if kind is None:
        raise InputError(
            f"`{argument}`: cannot tell the format of {p.name!r} from its extension; use one "
            f"of {', '.join(sorted(READERS))}",
            argument,
        )
    return kind


def checked_file(path: str | Path, argument: str) -> tuple[Path, str]:
    """The file and its format, refusing an unknown extension, a missing or empty file."""
    p = Path(path)
    kind = file_kind(p, argument)
    if not p.is_file():
        raise InputError(f"`{argument}`: file not found: {path}", argument)
    if p.stat().st_size == 0:
        raise InputError(f"`{argument}`: {path} is empty", argument)
    return p, kind


class Share:
    """How far into a file each frame `read_frames` yields ends, from 0 to 1, in order: a
    consumer that takes one per frame it has finished knows its own progress, however far
    ahead the reading runs. `delimiter`: the one a text file was read with (once known)."""

    def __init__(self) -> None:
        from collections import deque

        self.ends: deque[float] = deque()
        self.delimiter: str | None = None

    def add(self, end: float) -> None:
        self.ends.append(end)

    def next(self) -> float:
        """The end of the oldest frame not yet taken (1 if none is waiting)."""
        return self.ends.popleft() if self.ends else 1.0


DELIMITERS = {",": ",", ";": ";", "tab": "\t", "\t": "\t"}


def sniff_delimiter(path: str | Path, fallback: str = ",") -> str:
    """The delimiter of a text table: ';' for a European file (more ';' than ',' in the
    header, and the same number of ';' on each of the first lines), else `fallback`."""
    with open(path, "rb") as fh:
        lines = [fh.readline() for _ in range(6)]
    lines = [line.lstrip(b"\xef\xbb\xbf").rstrip(b"\r\n") for line in lines if line.strip()]
    if not lines or lines[0].count(b'"') % 2:
        return fallback
    semicolons = [_outside_quotes(line, b";") for line in lines]
    if semicolons[0] > _outside_quotes(lines[0], b",") and len(set(semicolons)) == 1:
        return ";"
    return fallback


def text_delimiter(path: Path, kind: str, delimiter: str = "auto") -> str:
    """The delimiter a text table is read with: the one given, or for "auto" the extension's
    (',' for .csv, tab for .tsv), with a .csv file that has ';' between cells found."""
    if delimiter != "auto":
        return DELIMITERS[delimiter]
    return sniff_delimiter(path) if kind == "csv" else "\t"


def resolve_delimiter(path: str | Path, delimiter: str = "auto", argument: str = "file") -> str:
    """For a command, before reading: the file checked, and the delimiter a text file will be
    read with ("" for Excel and Parquet)."""
    if delimiter != "auto" and delimiter not in DELIMITERS:
        raise InputError(
            f"`delimiter` must be auto, ',', ';' or tab; got {delimiter!r}", "delimiter"
        )
    p, kind = checked_file(path, argument)
    return text_delimiter(p, kind, delimiter) if kind in ("csv", "tsv") else ""


Early = Callable[[dict[str, Any]], None] | None


def text_types(path: str | Path, delimiter: str, early: Early = None) -> dict[str, Any]:
    """The type of each column of a text table, inferred by polars from the whole file:
    Int64 or Float64 where every cell is a number (a decimal comma read as one in a file with
    ';' between cells), String otherwise. A scan: the file is read, not held.

    polars' inference reads every cell of every column in one thread (about 0.4 s of CPU a
    million rows of six columns). The same types come here from less work: a cell's type
    depends on its text alone, so polars infers each column from the distinct texts of a
    piece of the file (a few thousand where a column holds rounded numbers), and a column
    found to be text in one piece is not read again. Pieces that disagree otherwise (say
    Int64 in one, Float64 in another), or any piece polars cannot read whole, send the file
    to polars' own inference over the whole file.

    `early`, if given, is told the types of the file's first piece (512 KiB) as soon as they
    are known: what the file's types would be if it ended there (a guess, see
    `late_types.LateTypes`)."""
    try:
        types = _types_by_piece(Path(path), delimiter, early)
    except Exception:  # noqa: BLE001 - the whole-file inference decides (and says what is wrong)
        types = None
    return _whole_file_types(path, delimiter) if types is None else types


#: Bytes of the file read at a time by `text_types`: a small first piece (where most text
#: columns show that they are text), then larger ones.
TYPE_PIECE_BYTES = (1 << 19, 1 << 23)


def _whole_file_types(path: str | Path, delimiter: str) -> dict[str, Any]:
    """polars' inference over the whole file: the reference `text_types` keeps to."""
    import polars as pl

    scan = pl.scan_csv(path, separator=delimiter, infer_schema_length=None,
                       decimal_comma=delimiter == ";")  # fmt: skip
    return dict(scan.collect_schema())


def _types_by_piece(path: Path, delimiter: str, early: Early = None) -> dict[str, Any] | None:
    """`text_types` a piece at a time (None where only the whole file can tell); `early` is
    told the first piece's types."""
    import io

    import polars as pl

    comma = delimiter == ";"
    found: dict[str, Any] = {}  # column -> the one type its pieces so far agree on
    names: list[str] | None = None
    first, size = TYPE_PIECE_BYTES
    for head, body in byte_chunks(path, size, first=first):
        opening = names is None
        open_ = None if names is None else [n for n in names if found.get(n) != pl.String]
        if open_ == []:
            break
        # every cell as text: blank (missing) cells null, as polars' inference skips them; a
        # quoted empty cell ("") stays an empty text, which polars' inference reads as text
        piece = pl.read_csv(head + body, separator=delimiter, infer_schema=False,
                            columns=open_)  # fmt: skip
        names = piece.columns if names is None else names
        whole = False  # only the whole file can tell (said after the first piece's guess)
        for name in piece.columns:
            filled = piece[name].drop_nulls()
            texts = filled.unique()
            if not len(texts):
                continue
            # mostly distinct texts (full-length numbers, a running count): no shorter by
            # piece than the whole file at once (a text column shows itself in the first)
            crowded = len(texts) > len(filled) // 2
            if crowded and not opening:
                return None
            # the texts as a one-column file, every cell quoted (polars' inference reads a
            # quoted cell by what is inside the quotes, "" included)
            one = pl.DataFrame({"x": texts}).write_csv(separator=delimiter, quote_style="always")
            kind = pl.scan_csv(io.BytesIO(one.encode()), separator=delimiter, decimal_comma=comma,
                               infer_schema_length=None).collect_schema()["x"]  # fmt: skip
            if kind == pl.String:
                found[name] = pl.String
            elif crowded:  # the first piece (a later one has returned above)
                found[name] = kind
                whole = True
            elif found.setdefault(name, kind) != kind:
                return None  # e.g. Int64 here, Float64 there: the whole file decides
        if opening and early is not None and len(set(names)) == len(names):
            early({name: found.get(name, pl.String) for name in names})
        if whole:
            return None
    if names is None or len(set(names)) != len(names):
        return None
    return {name: found.get(name, pl.String) for name in names}  # a column with no cell: text


def with_types(frame: Any, types: dict[str, Any]) -> Any:
    """Text columns of `frame` cast to `types` (blank cells missing); others as they are."""
    import polars as pl

    names = [name for name, dtype in types.items() if name in frame.columns
             and frame.schema[name] == pl.String and dtype != pl.String]  # fmt: skip
    if not names:
        return frame
    # true/false as polars reads them in a file (any case; a blank cell missing): polars
    # casts no text to Boolean, so they are matched here
    flags = [name for name in names if types[name] == pl.Boolean]
    names = [name for name in names if name not in flags]
    casts = []
    for name in flags:
        word = pl.col(name).str.to_lowercase()
        casts.append(pl.when(word == "true").then(True).when(word == "false").then(False)
                     .otherwise(None).alias(name))  # fmt: skip
    # Nearly every cell reads as it is (no spaces around it, no decimal comma): cast directly,
    # and take the long way below only for a column where some filled cell did not
    direct = frame.select(pl.col(name).cast(types[name], strict=False) for name in names)
    missed = {name: bool((direct[name].is_null() & (frame[name] != "")).any()) for name in names}
    casts += [direct[name] for name in names if not missed[name]]
    for name in (name for name in names if missed[name]):
        dtype = types[name]
        cell = pl.col(name).str.strip_chars()
        if dtype.is_float():
            cell = cell.str.replace(r"^([-+]?[0-9]*),([0-9]+(?:[eE][-+]?[0-9]+)?)$", r"${1}.${2}")
        typed = pl.when(cell == "").then(None).otherwise(cell).cast(dtype, strict=False)
        casts.append(typed.alias(name))
    return frame.with_columns(casts) if casts else frame


def _outside_quotes(line: bytes, mark: bytes) -> int:
    parts = line.split(b'"')
    return sum(part.count(mark) for part in parts[::2])


def read_frames(path: str | Path, argument: str = "file", batch_rows: int = BATCH_ROWS,
                share: Share | None = None, delimiter: str = "auto") -> Any:  # fmt: skip
    """The rows of a table file as polars DataFrames, a piece of the file at a time.

    CSV and TSV cells are read as text, so every cell is echoed exactly as the file holds
    it; Parquet keeps its column types; Excel is read whole (its sheets are small). `share`,
    if given, is kept up to date with the part of the file read so far (for a progress bar)
    and told the text file's delimiter. `delimiter`: "auto" (a .csv file with ';' between
    cells is found by `sniff_delimiter`), ",", ";" or "tab".
    """
    import polars as pl

    share = share or Share()
    p, kind = checked_file(path, argument)
    if delimiter != "auto" and delimiter not in DELIMITERS:
        raise InputError(
            f"`delimiter` must be auto, ',', ';' or tab; got {delimiter!r}", "delimiter"
        )
    try:
        if kind in ("csv", "tsv"):
            size = p.stat().st_size
            mark = text_delimiter(p, kind, delimiter)
            share.delimiter = mark
            for frame, end in _text_frames(p, mark, argument):
                share.add(end / size)
                yield frame
        elif kind == "parquet":
            import pyarrow.parquet as pq

            parquet = pq.ParquetFile(p)
            rows = 0
            for batch in parquet.iter_batches(batch_size=batch_rows):
                rows += batch.num_rows
                share.add(rows / max(parquet.metadata.num_rows, 1))
                yield pl.from_arrow(batch)
        else:
            import pandas as pd

            frame = pd.read_excel(p, dtype=str, keep_default_na=False)
            share.add(1.0)
            yield pl.from_pandas(frame)
    except InputError:
        raise
    except ImportError as err:
        raise InputError(
            f"`{argument}`: reading {kind} needs an optional package: {err}", argument
        ) from None
    except Exception as err:  # noqa: BLE001 - a parser failure is the file's, not ours
        first = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        hint = ""
        if share.delimiter not in (None, ";") and sniff_delimiter(p, "") == ";":
            hint = " (its cells look separated by ';': try --delimiter ';')"
        raise InputError(
            f"`{argument}`: could not read {path} as {kind}: {first}{hint}", argument
        ) from None


def text_header(path: Path, delimiter: str, argument: str) -> list[str]:
    """A text table's column names; InputError for none, or for a name given twice."""
    import csv

    with open(path, newline="", encoding="utf-8-sig") as fh:
        header = next(csv.reader(fh, delimiter=delimiter), None)
    if not header:
        raise InputError(f"`{argument}`: {path} has no header row", argument)
    if len(set(header)) != len(header):
        twice = sorted({h for h in header if header.count(h) > 1})
        raise InputError(
            f"`{argument}`: {path} has columns named twice: {', '.join(twice)}", argument
        )
    return header


def _text_frames(path: Path, delimiter: str, argument: str) -> Any:
    """Every cell as text, exactly as the file holds it, a piece of the file at a time (see
    `byte_chunks`): each piece parsed whole by polars (both cores), so memory is bounded by
    the piece. polars pads a row that is cut short and keeps blank lines as rows, so a piece
    is taken from it only when its records and cells add up (`_cells_add_up`); any other
    piece is parsed by pyarrow, which skips blank lines and refuses a row with too few or
    too many cells."""
    import polars as pl

    header = text_header(path, delimiter, argument)
    rows = 0
    end = 0
    first = min(FIRST_FRAME_BYTES, FRAME_BYTES)
    for head, body in byte_chunks(path, FRAME_BYTES, first=first):
        end += len(body) + (end == 0) * len(head)
        try:
            frame = pl.read_csv(head + body, separator=delimiter, infer_schema=False,
                                empty_string_is_null=False)  # fmt: skip
        except pl.exceptions.ComputeError:
            frame = None  # pyarrow says what is wrong, in its words
        if frame is None or not _cells_add_up(body, delimiter, len(header), frame.height):
            frame = _pyarrow_piece(head + body, delimiter, header)
        rows += frame.height
        yield frame, end
    if not rows:
        raise InputError(f"`{argument}`: {path} has no data rows", argument)


#: The size of the pieces `read_frames` parses: smaller than the data route's, as each piece
#: is a table that is computed on and written while the next is read (4 MiB measured as fast
#: as 8 on a million rows, in three quarters of the memory).
FRAME_BYTES = 1 << 22
#: The first piece is smaller, so that its rows reach the writer (the slowest stage) while the
#: later pieces are still being read: the stages start working together sooner.
FIRST_FRAME_BYTES = 1 << 18
#: Above this many quote characters in a piece, cells inside quotes are found with numpy.
_FEW_QUOTES = 4096


def _cells_add_up(body: bytes, delimiter: str, columns: int, records: int) -> bool:
    """True when the `records` polars read from `body` are its lines as written: the
    delimiters outside quotes number records x (columns - 1). polars refuses a record with
    too many cells, so the count rules out one too short, and a blank line (which polars
    keeps as a row); with one column, blank lines are looked for directly."""
    if columns == 1:
        return not (body.startswith((b"\n", b"\r\n")) or b"\n\n" in body or b"\n\r\n" in body)
    import numpy as np

    mark = delimiter.encode()
    raw = np.frombuffer(body, np.uint8)  # counted in numpy: several times bytes.count's speed
    found = int(np.count_nonzero(raw == ord(mark)))
    quotes = int(np.count_nonzero(raw == ord('"')))
    if quotes % 2:
        return False
    if quotes > _FEW_QUOTES:
        at = np.flatnonzero(raw == ord('"'))
        inside = np.searchsorted(at, np.flatnonzero(raw == ord(mark))) % 2 == 1
        found -= int(np.count_nonzero(inside))
    elif quotes:
        start = body.find(b'"')
        while start >= 0:  # an escaped quote ("") closes and reopens: the count holds
            end = body.find(b'"', start + 1)
            found -= body.count(mark, start + 1, end)
            start = body.find(b'"', end + 1)
    return found == records * (columns - 1)


def _pyarrow_piece(data: bytes, delimiter: str, header: list[str]) -> Any:
    """A piece parsed by pyarrow: blank lines skipped, a ragged row an error."""
    import io

    import polars as pl
    import pyarrow as pa
    import pyarrow.csv as pacsv

    table = pacsv.read_csv(
        io.BytesIO(data),
        parse_options=pacsv.ParseOptions(delimiter=delimiter, newlines_in_values=True),
        convert_options=pacsv.ConvertOptions(
            column_types={h: pa.string() for h in header},
            strings_can_be_null=False,
            quoted_strings_can_be_null=False,
        ),
    )
    return pl.from_arrow(table)


# --------------------------------------------------------------------------- byte chunks
CHUNK_BYTES = 1 << 23


def byte_chunks(path: str | Path, size: int | None = None, first: int | None = None) -> Any:
    """A text table as (header line, body) pairs of about `size` bytes, each body whole
    records: cut at a newline outside quotes (an even number of quote characters before it,
    which doubled quotes inside a quoted cell keep), so a quoted cell may hold newlines.

    Parsing each piece on its own keeps memory bounded by the piece, however large the file,
    where a streaming reader's read-ahead grows with it (docs in MEASURED: flat 1e6 -> 4e6).
    `first`, if given, is the size of the first piece.
    """
    size = size or CHUNK_BYTES
    step = first or size
    with open(path, "rb") as fh:
        header = fh.readline()
        if header.startswith(b"\xef\xbb\xbf"):
            header = header[3:]
        carry = b""
        while True:
            data = fh.read(step)
            step = size
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
