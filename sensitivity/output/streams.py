"""Tables written a batch at a time (the screen): CSV, TSV, Parquet, Excel or JSON by
extension, with text cells defused against spreadsheet formula injection."""

from __future__ import annotations

import io
from collections.abc import Collection
from typing import Any

from ..common.errors import InputError

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
        self._disk: Any = None
        self._trusted = frozenset(trusted)

    def write(self, table: Any) -> None:
        """Append rows: a polars DataFrame, or a pyarrow Table or RecordBatch."""
        import polars as pl

        frame: Any = table if isinstance(table, pl.DataFrame) else pl.from_arrow(table)
        first = self._rows == 0
        self._rows += frame.height
        if self.kind in ("csv", "tsv", "json", "parquet"):
            # polars writes CSV three to five times faster than pyarrow here, and JSON rows
            # ten times faster than Python objects (MEASURED.md); in a second thread, while
            # the caller works on the next piece
            from ..common.overlap import WriteBehind

            if self._behind is None:
                if self.kind != "parquet":
                    self._sink = open(self.path, "wb")  # noqa: SIM115 - closed in close()
                if self.kind == "json":
                    self._sink.write(b'{"rows":[')
                self._behind = WriteBehind(self._write_piece)
            self._behind.put((frame, first))
            return
        if self._rows > 1_048_575:
            raise InputError(
                f"`{self.path.name}`: an Excel sheet holds at most 1,048,575 rows; write "
                "CSV or Parquet instead"
            )
        self._frames.append(frame)

    def _write_piece(self, piece: tuple[Any, bool]) -> None:
        frame, first = piece
        if self.kind == "parquet":
            import pyarrow.parquet as pq

            arrow = frame.to_arrow()
            if self._writer is None:
                self._writer = pq.ParquetWriter(str(self.path), arrow.schema)
            self._writer.write_table(arrow.cast(self._writer.schema))
            return
        if self.kind != "json":
            separator = "," if self.kind == "csv" else "\t"
            defuse_frame(frame, self._trusted).write_csv(
                self._sink, include_header=first, separator=separator
            )
            return
        if not frame.height:
            return
        # rows as JSON objects, from Rust: one a line, the line ends then turned into the
        # commas between them (a JSON row holds no raw newline: strings escape theirs). The
        # streaming engine's writer spreads the work over polars' threads (the same bytes
        # as write_ndjson, in about two thirds of the time)
        text = io.BytesIO()
        frame.lazy().sink_ndjson(text)
        rows = text.getvalue()[:-1].replace(b"\n", b",")
        if self._disk is None:  # a third thread puts the text on disk while the next is made
            from ..common.overlap import WriteBehind

            self._disk = WriteBehind(self._sink.write)
        if not first:
            self._disk.put(b",")
        self._disk.put(rows)

    def close(self, extra: dict | None = None) -> None:
        """Finish the file; for JSON, `extra` (plain data) follows the rows."""
        import orjson

        if self._behind is not None:
            self._behind.close()
        if self._disk is not None:
            self._disk.close()

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
