"""Where the screened table goes: a file by its extension, or stdout as CSV or JSON, batch by
batch through `output.streams.TableWriter` (the one writer; memory stays flat)."""

from __future__ import annotations

import sys
from collections.abc import Callable, Collection
from pathlib import Path
from typing import Any


def check_table_path(output: str | Path) -> None:
    """Refuse, before any work, an output whose format its extension does not tell (the
    writer's own rule) or whose folder does not exist."""
    from ..common.errors import InputError
    from ..output.streams import TableWriter

    TableWriter(output)  # checks the extension; opens nothing until the first write
    if not Path(output).parent.is_dir():
        raise InputError(f"`output`: folder {str(Path(output).parent)!r} does not exist", "output")


def table_writer(output: str | Path | None, fmt: str, trusted: Collection[str] = (),
                 convert: Callable[[Any], Any] | None = None) -> Any:  # fmt: skip
    """A writer for the screened table: to `output` (format by extension), else to stdout when
    `fmt` is csv or json, else None (only the summary is shown). `trusted`: the text
    columns the screen computed, left as they are (see `output.streams.defuse_frame`);
    `convert`: what a Parquet file's pieces go through first (see `TableWriter`).

    Examples
    --------
    >>> table_writer(None, "text") is None
    True
    >>> table_writer("screened.parquet", "text").kind
    'parquet'
    """
    from ..output.streams import TableWriter

    if output is not None:
        return TableWriter(output, trusted=trusted, convert=convert)
    if fmt in ("csv", "json"):
        return StdoutTable(fmt, trusted)
    return None


class StdoutTable:
    """The screened table on stdout, as CSV or JSON, batch by batch: written by `TableWriter`
    to a temporary file (in a second thread, as a file is) and copied out at the end."""

    def __init__(self, kind: str, trusted: Collection[str] = ()) -> None:
        import tempfile

        from ..output.streams import TableWriter

        self.kind = kind
        self._tmp = tempfile.NamedTemporaryFile(suffix=f".{kind}", delete=False)
        self._tmp.close()
        self._writer = TableWriter(self._tmp.name, trusted=trusted)

    def write(self, batch: Any) -> None:
        self._writer.write(batch)

    def abort(self) -> None:
        self._writer.abort()
        Path(self._tmp.name).unlink(missing_ok=True)

    def close(self, extra: dict | None = None) -> None:
        import shutil

        try:
            self._writer.close(extra)
            with open(self._tmp.name, "rb") as fh:
                shutil.copyfileobj(fh, sys.stdout.buffer)
            sys.stdout.buffer.flush()
        finally:  # also when the reader of stdout stops early (a closed pipe)
            Path(self._tmp.name).unlink(missing_ok=True)
