"""The column types of a text table, worked out beside the work that needs them (the screen
writing Parquet), with an early guess from the file's first piece."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from . import files


class LateTypes:
    """`text_types` of a file, worked out in a thread of its own (started at once), for a
    writer that converts a piece at a time: `frame` converted to the file's types (`with_types`),
    and what the first piece of the file says of them, known long before the rest is read.

    A Parquet writer that would otherwise wait for the whole file to be read before its first
    piece can write its first pieces with the guess, keeping them until `ready`; the file's
    types then say whether the guess held (nearly always: every cell of the first piece read as
    it reads in the whole file), and if not the kept pieces are written again (see
    `output.parquet.ParquetPieces`)."""

    def __init__(self, path: str | Path, delimiter: str) -> None:
        import threading

        from ..common.overlap import in_background

        self._first: dict[str, Any] | None = None
        self._seen = threading.Event()
        self._job = in_background(self._types, path, delimiter)

    def _types(self, path: str | Path, delimiter: str) -> dict[str, Any]:
        try:
            return files.text_types(path, delimiter, early=self._early)
        finally:
            self._seen.set()  # no early word (a first piece polars could not read): the file's

    def _early(self, types: dict[str, Any]) -> None:
        self._first = types
        self._seen.set()

    def __call__(self, frame: Any) -> Any:
        """`frame` converted to the file's types (waiting for them if need be)."""
        return files.with_types(frame, self.result())

    def result(self) -> dict[str, Any]:
        """The file's types (waiting for them if need be)."""
        return self._job.result()

    def ready(self) -> bool:
        """Whether the file's types are known."""
        return self._job.done()

    def guessed(self, frame: Any) -> Any:
        """`frame` converted to the types `guess` says."""
        return files.with_types(frame, self.guess())

    def guess(self) -> dict[str, Any]:
        """The types the file's first piece says (the file's own, where it was not read by
        pieces); waits for that piece only."""
        self._seen.wait()
        return self.result() if self._first is None else self._first
