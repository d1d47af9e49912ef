"""The screen's Parquet file (sensitivity/output/streams.py): what a reader gets back is what
pyarrow's own default writer gives for the same table (the outside reference: the same column
types in pyarrow's and polars' readers, the same values), although the writer chooses per
column where to keep a dictionary and statistics; and pieces written with guessed column types
are written again where the file's own types turn out otherwise."""

from __future__ import annotations

import threading

import numpy as np
import polars as pl
import pyarrow.parquet as pq
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.adapters.files import with_types
from sensitivity.output import parquet
from sensitivity.output.parquet import ParquetPieces, parquet_options
from sensitivity.output.streams import TableWriter

_TEXT = st.one_of(st.none(), st.text(max_size=6), st.sampled_from(["rr", "hr", "", "=1+2"]))


def _table(rows: int, seed: int) -> pl.DataFrame:
    rng = np.random.default_rng(seed)
    return pl.DataFrame({
        "study": [f"s{i}" for i in range(rows)],  # an identifier: every cell distinct
        "scale": rng.choice(["rr", "hr", "or"], rows),  # a few codes
        "note": pl.Series([None if i % 7 == 0 else "" for i in range(rows)], dtype=pl.String),
        "estimate": np.round(np.exp(rng.normal(0.2, 0.3, rows)), 3),
        "evalue": np.sqrt(1 + rng.random(rows)),
        "count": rng.integers(0, 50, rows),
        "flag": rng.random(rows) < 0.3,
        "empty": pl.Series([None] * rows, dtype=pl.Float64),
    })  # fmt: skip


def _assert_read_back_as_pyarrows_default(path, whole, tmp_path):
    reference = tmp_path / "reference.parquet"
    pq.write_table(whole.to_arrow(), reference)  # pyarrow's defaults: the outside reference
    assert pq.read_schema(path).equals(pq.read_schema(reference), check_metadata=True)
    # pyarrow's tables compare NaN unequal to itself: polars' comparison, which does not
    assert pl.from_arrow(pq.read_table(path)).equals(pl.from_arrow(pq.read_table(reference)))
    assert pl.read_parquet_schema(path) == pl.read_parquet_schema(reference) == whole.schema
    assert pl.read_parquet(path).equals(whole)


def test_identifier_without_dictionary_codes_without_statistics(tmp_path):
    whole = _table(30_000, 1)
    path = tmp_path / "out.parquet"
    writer = TableWriter(path)
    for start in range(0, whole.height, 7_000):
        writer.write(whole.slice(start, 7_000))
    writer.close()
    _assert_read_back_as_pyarrows_default(path, whole, tmp_path)
    meta = pq.ParquetFile(path).metadata
    assert meta.num_row_groups == 5
    for group in range(meta.num_row_groups):
        chunks = {meta.row_group(group).column(i).path_in_schema: meta.row_group(group).column(i)
                  for i in range(meta.num_columns)}  # fmt: skip
        assert "RLE_DICTIONARY" not in chunks["study"].encodings
        assert "RLE_DICTIONARY" in chunks["scale"].encodings
        assert chunks["study"].is_stats_set and chunks["evalue"].is_stats_set
        assert not chunks["scale"].is_stats_set and not chunks["note"].is_stats_set


def test_nested_columns_take_pyarrows_defaults():
    frame = pl.DataFrame({"id": ["a", "b"], "pair": [[1, 2], [3]]})
    assert parquet_options(frame, frame.to_arrow().schema) == {}


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(_TEXT, _TEXT, st.floats(allow_nan=True)), min_size=0, max_size=40),
       st.integers(1, 15))  # fmt: skip
def test_any_text_reads_back_as_pyarrows_default_gives_it(rows, piece):
    import tempfile
    from pathlib import Path

    whole = pl.DataFrame(rows, schema={"a": pl.String, "b": pl.String, "x": pl.Float64},
                         orient="row")  # fmt: skip
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "out.parquet"
        writer = TableWriter(path)
        for start in range(0, max(whole.height, 1), piece):
            writer.write(whole.slice(start, piece))
        writer.close()
        _assert_read_back_as_pyarrows_default(path, whole, Path(folder))


class _Types:
    """A stand-in for LateTypes: the guess at once, the file's types when `release` is set."""

    def __init__(self, guess: dict, final: dict) -> None:
        self._guess, self._final = guess, final
        self.release = threading.Event()

    def guess(self) -> dict:
        return self._guess

    def ready(self) -> bool:
        return self.release.is_set()

    def result(self) -> dict:
        self.release.wait()
        return self._final

    def __call__(self, frame):
        return with_types(frame, self.result())

    def guessed(self, frame):
        return with_types(frame, self._guess)


def _text_pieces(late: str) -> tuple[list[pl.DataFrame], pl.DataFrame]:
    """Pieces of text cells as the screen hands them on: a column of whole numbers until
    `late`, in the last piece; and the whole table as polars reads it from a file (the
    reference)."""
    import io

    lines = ["id,dose,scale"] + [f"{i},{i % 9},rr" for i in range(40)] + [f"40,{late},hr"]
    text = "\n".join(lines) + "\n"
    cells = pl.read_csv(io.StringIO(text), infer_schema=False)
    whole = pl.read_csv(io.StringIO(text), infer_schema_length=None)
    return [cells.slice(start, 6) for start in range(0, cells.height, 6)], whole


@pytest.mark.parametrize("late", ["5", "2.5", "n/a"])
@pytest.mark.parametrize("known_after", [0, 2, 3, 5, 99])
def test_pieces_written_with_a_guess_are_written_again_where_it_was_wrong(
    tmp_path, monkeypatch, late, known_after
):
    # The guess (the first piece's types: dose Int64) holds when the late cell is a whole
    # number; a decimal or a word makes the file's dose Float64 or String, and the pieces
    # already written are written again from the cells kept. The file's types become known
    # before the first piece, after a few, or only at the end (the writer waits when it holds
    # GUESSED_PIECES). Either way the file is what polars reads from the whole text.
    pieces, whole = _text_pieces(late)
    guess = {"id": pl.Int64, "dose": pl.Int64, "scale": pl.String}
    types = _Types(guess, dict(whole.schema))
    path = tmp_path / "out.parquet"
    written = []
    real = ParquetPieces._write

    def counted(self, frame):
        written.append(frame.height)
        real(self, frame)

    monkeypatch.setattr(ParquetPieces, "_write", counted)
    writer = TableWriter(path, convert=types)
    for n, piece in enumerate(pieces):
        if n == known_after or n == parquet.GUESSED_PIECES + 1:
            types.release.set()
        writer.write(piece)
    types.release.set()
    writer.close()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.parquet"]  # no temporary left
    back = pl.read_parquet(path)
    assert back.schema == whole.schema
    assert back.equals(whole)
    # once the fourth piece is handed on, the first has been written with the guess (the
    # second was taken up): where the guess was wrong it is written again (when the types
    # came earlier, perhaps not)
    if late == "5":
        assert len(written) == len(pieces)
    elif known_after >= 3:
        assert len(written) > len(pieces)


def test_a_guessed_writer_stopped_early_leaves_nothing(tmp_path):
    pieces, whole = _text_pieces("2.5")
    types = _Types({"id": pl.Int64, "dose": pl.Int64, "scale": pl.String}, dict(whole.schema))
    (tmp_path / "out.parquet").write_bytes(b"before")
    writer = TableWriter(tmp_path / "out.parquet", convert=types)
    for piece in pieces[:2]:
        writer.write(piece)
    writer.abort()
    types.release.set()
    assert (tmp_path / "out.parquet").read_bytes() == b"before"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.parquet"]
