"""Rows of a large table as JSON (sensitivity/output/writers.py): the rows polars builds in
Rust are the bytes the value-by-value route gives (orjson's own text for every number, checked
against orjson itself, an outside library), over every kind of double."""

from __future__ import annotations

import json

import numpy as np
import orjson
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from sensitivity.output import writers
from sensitivity.output.writers import _rows_in_python, json_rows

LAYOUT = [
    ("a", "a"),
    ("n", "n"),
    ("inner", [("x", "x"), ("pair", ("lo", "hi")), ("gone", ("absent", "hi"))]),
    ("flag", "flag"),
]


def _columns(a, x, lo, hi, n, flag):
    return {"a": a, "x": x, "lo": lo, "hi": hi, "n": n, "flag": flag}


def _bits(rng, size):
    """Doubles from random bit patterns: every exponent, subnormals, NaN and infinities."""
    return rng.integers(0, 2**64, size, dtype=np.uint64).view(np.float64)


@pytest.mark.parametrize("seed", [0, 1])
def test_rust_rows_are_the_bytes_of_the_value_by_value_rows(seed, monkeypatch):
    monkeypatch.setattr(writers, "BATCH_ROWS", 7_000)  # several batches, a short last one
    rng = np.random.default_rng(seed)
    size = 30_001
    cols = _columns(
        _bits(rng, size), np.exp(rng.normal(0, 40, size)), rng.normal(0, 1, size).round(3),
        _bits(rng, size), rng.integers(-(2**62), 2**62, size), rng.random(size) < 0.5,
    )  # fmt: skip
    cols["x"][::13] = np.nan
    cols["lo"][::17] = np.inf
    fast = b"".join(json_rows(cols, LAYOUT))
    plain = b"".join(_rows_in_python(cols, LAYOUT))
    assert fast == plain
    rows = json.loads(b"[" + fast + b"]")
    assert len(rows) == size and rows[0]["inner"]["gone"] is None


@settings(max_examples=40, deadline=None)
@given(arrays(np.float64, st.integers(1, 40)))
def test_each_number_is_written_as_orjson_writes_it(values):
    # the outside reference: orjson's own text for the same doubles (NaN and infinities null)
    expected = orjson.dumps(values, option=orjson.OPT_SERIALIZE_NUMPY)
    got = b"".join(json_rows({"v": values}, [("v", "v")]))
    assert got == b",".join(b'{"v":' + t + b"}" for t in expected[1:-1].split(b","))


def test_text_columns_take_the_value_by_value_route():
    cols = {"s": np.array(['say "hi"', "x\ny"], dtype=object), "v": np.array([1.0, 2.0])}
    out = b"".join(json_rows(cols, [("s", "s"), ("v", "v")]))
    assert json.loads(b"[" + out + b"]") == [{"s": 'say "hi"', "v": 1.0}, {"s": "x\ny", "v": 2.0}]


@pytest.mark.parametrize("suffix", [".json", ".parquet"])
def test_a_table_written_piece_by_piece_reads_back_whole(suffix, tmp_path):
    # Pieces (an empty one first and between) written behind the caller: the file holds every
    # row once, in order, with NaN as null in JSON, as polars reads it back.
    import polars as pl

    from sensitivity.output.streams import TableWriter

    rng = np.random.default_rng(3)
    whole = pl.DataFrame({
        "study": [f's{i} "q"\n' for i in range(2_500)],
        "evalue": pl.Series(_bits(rng, 2_500), nan_to_null=True),
        "flag": rng.random(2_500) < 0.5,
    })  # fmt: skip
    writer = TableWriter(tmp_path / f"out{suffix}")
    for piece in (whole.head(0), whole[:1000], whole.head(0), whole[1000:1001], whole[1001:]):
        writer.write(piece)
    writer.close({"summary": {"rows": 2_500}} if suffix == ".json" else None)
    path = tmp_path / f"out{suffix}"
    if suffix == ".json":
        data = json.loads(path.read_bytes())
        assert data["summary"] == {"rows": 2_500}
        back = pl.DataFrame(data["rows"], schema=whole.schema)
    else:
        back = pl.read_parquet(path)
    assert back.equals(whole)
