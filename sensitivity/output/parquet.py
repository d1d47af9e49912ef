"""A Parquet file written a piece at a time (the screen's table, by `streams.TableWriter`), with
pyarrow's writer: the settings it chooses per column, and pieces written with guessed column
types while the file's own are still being worked out."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

#: Pieces a Parquet writer writes with guessed column types and keeps, at most, while the
#: file's own are worked out (see `ParquetPieces`).
GUESSED_PIECES = 2
#: A text column of which more than this share of the first piece's filled cells are distinct
#: (an identifier, free text) is written without a dictionary (see `parquet_options`).
DISTINCT_TEXT = 0.9


def parquet_options(first: Any, schema: Any) -> dict[str, Any]:
    """pyarrow ParquetWriter settings for a table whose first piece is `first` (a polars
    DataFrame) and whose Arrow schema is `schema`. What a reader gets back is what pyarrow's
    defaults give: the same column types and values. Two things differ, for speed (1M screened
    rows, measured for issue 26: 0.38 s of the writer's CPU against 0.54 s, and 25.6 MB against
    27.2 MB):

    - A text column of mostly distinct cells (an identifier) is stored without a dictionary.
      pyarrow would hash every cell, fill a dictionary page with the first 1 MiB of them in each
      row group and store the rest plainly anyway: the hashing (a sixth of the writer's time
      here) bought nothing, and the file is a little smaller without that dictionary.
    - A text column that keeps its dictionary (a few codes: a scale, a reason) is stored
      without minimum, maximum and null count. pyarrow compares every cell to find them (a
      sixth of the writer's time); over pieces that each hold most of the codes they would
      let a reader skip no row group. Number columns and identifiers keep theirs.

    Nested columns (a Parquet input's lists or structs) take pyarrow's defaults: these
    settings name top-level columns only."""
    import pyarrow as pa

    if any(pa.types.is_nested(field.type) for field in schema):
        return {}
    text = [field.name for field in schema
            if pa.types.is_string(field.type) or pa.types.is_large_string(field.type)]  # fmt: skip
    if not text or len(set(schema.names)) != len(schema.names):
        return {}
    crowded = set()
    for name in text:
        filled = first[name].drop_nulls()
        if len(filled) and filled.n_unique() > DISTINCT_TEXT * len(filled):
            crowded.add(name)
    codes = set(text) - crowded
    return {
        "use_dictionary": [name for name in schema.names if name not in crowded],
        "write_statistics": [name for name in schema.names if name not in codes],
    }


def warm_up() -> None:
    """Import pyarrow's Parquet writer in a thread of its own, now: the writer's thread would
    otherwise import it with its first piece, while the caller's thread is busy with its own
    start (the two share the interpreter lock: 0.3-0.4 s for that first piece on a loaded
    machine, against 0.03 s for the import alone)."""
    from importlib import import_module

    from ..common.overlap import in_background

    in_background(import_module, "pyarrow.parquet")


class ParquetPieces:
    """Pieces (polars DataFrames) written in turn as the row groups of one Parquet file, at
    the path `temporary()` gives.

    `convert`, if given, turns each piece to the table's column types first. One that can
    also `guess` them (those of the first piece of the file, known at once) and say when
    they are `ready` (`adapters.late_types.LateTypes`) is not waited for: up to GUESSED_PIECES
    pieces are written with the guess and kept. Once the types are known, or that many pieces
    are kept, the writer waits for them; where they differ from the guess, the file is begun
    again from the pieces kept (see `_settle`).

    Each piece is turned to Arrow in the caller's thread, and encoded and written by pyarrow
    in a thread of its own meanwhile (pyarrow's writer uses one core): for the screen, the
    writer's thread had been the busiest of all (0.47 s of CPU for 1M rows, against the main
    thread's 0.41 s)."""

    def __init__(self, temporary: Callable[[], Any], convert: Any = None) -> None:
        self._temporary = temporary
        self._convert = convert
        self._schema: Any = None  # the Arrow schema of the file begun (None: none yet)
        self._disk: Any = None  # the thread that encodes and writes the row groups
        self._writer: Any = None  # pyarrow's, in that thread
        # pieces written with guessed types, kept until the types are known (None: known)
        self._held: list | None = [] if hasattr(convert, "guess") else None

    def write(self, frame: Any) -> None:
        convert = self._convert
        if self._held is not None and (convert.ready() or len(self._held) >= GUESSED_PIECES):
            self._settle()
        if self._held is not None:  # the types are not known yet: written with the guess
            self._write(convert.guessed(frame))
            self._held.append(frame)
        else:
            self._write(frame if convert is None else convert(frame))

    def _write(self, frame: Any) -> None:
        arrow = frame.to_arrow()
        if self._disk is None:
            from ..common.overlap import WriteBehind

            self._disk = WriteBehind(self._put_down)
        if self._schema is None:  # the file begun (again): its schema, and how to write it
            self._schema = arrow.schema
            self._disk.put((arrow.schema, parquet_options(frame, arrow.schema)))
        self._disk.put(arrow.cast(self._schema))

    def _put_down(self, item: Any) -> None:
        import pyarrow.parquet as pq

        if isinstance(item, tuple):
            if self._writer is not None:
                self._writer.close()  # the same file is opened anew, empty
            schema, options = item
            self._writer = pq.ParquetWriter(str(self._temporary()), schema, **options)
        else:
            self._writer.write_table(item)

    def _settle(self) -> None:
        """Wait for the column types, and check the pieces written with the guess against
        them: where a column's type differs (a word, or a decimal, only after the first piece
        of the file), the file is begun again from the pieces kept, converted to the types."""
        held, self._held = self._held, None
        if not held:
            return
        convert = self._convert
        if convert.result() == convert.guess():
            return
        self._schema = None  # the next piece begins the file again
        for frame in held:
            self._write(convert(frame))

    def finish(self) -> None:
        """Finish the file (after the types are known and checked)."""
        if self._held is not None:
            self._settle()
        self.close()

    def close(self) -> None:
        """Close the file as it stands (the caller removes an unfinished one)."""
        self._held = None
        try:
            if self._disk is not None:
                disk, self._disk = self._disk, None
                disk.close()  # the last row groups written (or the first error raised)
        finally:
            if self._writer is not None:
                writer, self._writer = self._writer, None
                writer.close()
