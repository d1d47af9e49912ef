"""Rows of a large table as JSON (sensitivity/output/writers.py): the rows put together from
whole columns are the bytes the value-by-value route gives, and the bytes orjson itself (an
outside library) writes for the same rows built as Python dicts: over every kind of double,
repeating columns (a grid's axes, flags, constants), batch edges, and the tipping CLI."""

from __future__ import annotations

import json

import numpy as np
import orjson
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from sensitivity.common.results import rows_of_layout
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
def test_rows_from_columns_are_the_bytes_of_the_value_by_value_rows(seed, monkeypatch):
    monkeypatch.setattr(writers, "JSON_ROWS", 7_000)  # several batches, a short last one
    monkeypatch.setattr(writers, "BATCH_ROWS", 6_000)
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


def _orjson_rows(cols, layout):
    """The outside reference: orjson's text of the same rows as Python dicts (NaN as None)."""
    return orjson.dumps(rows_of_layout(cols, layout))[1:-1]


def test_repeating_columns_keep_every_value_apart(monkeypatch):
    # Columns written as a few distinct texts and an index: a grid's slow axis (long runs),
    # its fast axis (a period), a constant, flags; 0.0 and -0.0 print apart, as do NaN with
    # different bits (both null) and ints beside floats in a pair
    monkeypatch.setattr(writers, "JSON_ROWS", 4_000)  # a period cut at a batch's edge
    monkeypatch.setattr(writers, "JOIN_ROWS", 333)
    slow, fast = np.meshgrid(np.array([0.5, -0.0, 0.0, np.nan, 1e-300]), np.arange(2_001) * 0.1,
                             indexing="ij")  # fmt: skip
    slow, fast = slow.ravel(), fast.ravel()
    size = slow.size
    odd_nan = np.full(size, np.nan)
    odd_nan.view(np.uint64)[::3] |= np.uint64(1)  # another NaN payload every third row
    fast[::7] = -0.0
    cols = {
        "slow": slow, "fast": fast, "one": np.full(size, 0.25), "nan": odd_nan,
        "flag": np.arange(size) % 3 == 0, "count": np.arange(size) // 700,
        "lo": np.arange(size) % 5, "hi": np.full(size, 2.5),
    }  # fmt: skip
    layout = [
        ("slow", "slow"), ("fast", "fast"),
        ("in", [("one", "one"), ("pair", ("lo", "hi")), ("nan", "nan")]),
        ("flag", "flag"), ("count", "count"),
    ]  # fmt: skip
    out = b"".join(json_rows(cols, layout))
    assert out == b"".join(_rows_in_python(cols, layout)) == _orjson_rows(cols, layout)
    rows = json.loads(b"[" + out + b"]")
    assert [r["slow"] for r in rows[2_001 : 2_001 * 3 : 2_001]] == [-0.0, 0.0]
    assert str(rows[2_001]["slow"]) == "-0.0" and rows[3 * 2_001]["slow"] is None


row_values = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0.0, -0.0, 1.5, np.nan, 1e308, 5e-324]),
)


@settings(max_examples=60, deadline=None)
@given(
    st.integers(1, 300),
    st.lists(row_values, min_size=1, max_size=6),
    st.lists(row_values, min_size=1, max_size=400),
    st.integers(1, 50),
    st.integers(0, 2**32 - 1),
)
def test_any_columns_give_the_bytes_orjson_gives_for_the_rows(size, pool, free, batch, seed):
    # columns drawn from a small pool (repeating: runs, periods, constants) beside columns of
    # any doubles, cut into batches of any size
    rng = np.random.default_rng(seed)
    pool_arr, free_arr = np.array(pool), np.array(free)
    periodic = np.resize(pool_arr, size)
    runs = np.repeat(pool_arr, -(-size // len(pool_arr)))[:size]
    cols = {
        "a": periodic, "b": runs, "c": rng.choice(free_arr, size), "d": rng.choice(pool_arr, size),
        "e": rng.random(size) < 0.5, "f": rng.integers(-3, 3, size),
    }  # fmt: skip
    layout = [("a", "a"), ("x", [("b", "b"), ("ci", ("c", "d")), ("e", "e")]), ("d", "d"),
              ("f", "f")]  # fmt: skip
    writers_batch = writers.JSON_ROWS
    try:
        writers.JSON_ROWS = batch
        out = b"".join(json_rows(cols, layout))
    finally:
        writers.JSON_ROWS = writers_batch
    assert out == _orjson_rows(cols, layout)


def test_a_large_tipping_grid_streams_the_rows_its_python_result_holds(run, monkeypatch):
    # Above COMPACT_ROWS the CLI writes the rows from the columns; they are the bytes orjson
    # writes for `to_dict()`'s rows (grid cells that never reach the target and null values
    # included), and the rest of the document is the same
    from sensitivity.commands import _options
    from sensitivity.tipping import binary_confounder_grid, parse_range

    monkeypatch.setattr(_options, "COMPACT_ROWS", 100)
    args = ["--scale", "rd", "--estimate", "0.05", "--prevalence-treated", "0:1:0.05",
            "--prevalence-control", "0:1:0.25", "--outcome-effect", "-0.5:0.5:0.1"]  # fmt: skip
    res = run("tipping", *args, "--format", "json")
    assert res.exit_code == 0, res.stderr
    result = binary_confounder_grid(
        "rd", 0.05, None,
        prevalence_treated=parse_range("0:1:0.05", "p"),
        prevalence_control=parse_range("0:1:0.25", "p"),
        outcome_effect=parse_range("-0.5:0.5:0.1", "g"),
    )  # fmt: skip
    whole = result.to_dict()
    expected = b'"rows":' + orjson.dumps(whole["rows"]) + b',"sentence":'
    assert expected in res.stdout_bytes
    assert b"NaN" not in res.stdout_bytes and b"Infinity" not in res.stdout_bytes
    streamed = json.loads(res.stdout)
    assert {k: v for k, v in streamed.items() if k not in ("sentence", "sentences")} == whole
    assert len(streamed["rows"]) == result.n_rows > 100
