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


# --------------------------------------------------------------------------- issue 26: the
# screen's writers near the floor. Each fast path is checked against the long way it stands for
# (the exact defusing check, polars' own NDJSON writer, the stripped and comma-read casts).
_CELLS = st.one_of(
    st.none(),
    st.text(alphabet=st.sampled_from(list("=+-@\t\r 'x1.,é\n\"\\")), max_size=20),
    st.text(max_size=30),
)


@settings(max_examples=200, deadline=None)
@given(st.lists(_CELLS, max_size=40), st.integers(0, 5), st.booleans())
def test_the_formula_prefilter_never_misses_a_risky_cell(cells, cut, pieces):
    # Read from the Arrow string views (first bytes inline or as a prefix, Arrow's columnar
    # format): a column the prefilter passes holds no cell starting with a formula character.
    import polars as pl

    from sensitivity.output.streams import FORMULA_STARTS, _may_start_a_formula

    column = pl.Series(cells, dtype=pl.String)
    if pieces:  # several chunks, then a slice of them
        column = pl.concat([column, pl.Series(["=x" * 9, "ok"], dtype=pl.String)], rechunk=False)
    column = column.slice(min(cut, len(column)), None)
    risky = any(c is not None and c[:1] in FORMULA_STARTS for c in column.to_list())
    assert _may_start_a_formula(column) or not risky


def test_a_column_without_risky_cells_is_left_alone_and_one_with_is_defused():
    import polars as pl

    from sensitivity.output.streams import _may_start_a_formula, defuse_frame

    safe = pl.DataFrame({"s": ["ok", None, "", "x" * 30, "-0.5"]})
    assert not _may_start_a_formula(pl.Series(["ok", None, "", "x" * 30, "a=b"]))
    assert defuse_frame(safe).equals(safe)
    risky = pl.DataFrame({"s": ["ok", "=1+1", "-0.5", "@" + "y" * 20]})
    assert defuse_frame(risky)["s"].to_list() == ["ok", "'=1+1", "-0.5", "'@" + "y" * 20]


_JSON_FRAME_COLUMNS = {
    "text": st.lists(_CELLS, min_size=3, max_size=3),
    "number": st.lists(
        st.one_of(st.none(), st.floats(allow_nan=True, allow_infinity=True)),
        min_size=3,
        max_size=3,
    ),
    "whole": st.lists(
        st.one_of(st.none(), st.integers(-(2**63), 2**63 - 1)), min_size=3, max_size=3
    ),  # fmt: skip
    "flag": st.lists(st.one_of(st.none(), st.booleans()), min_size=3, max_size=3),
}


@settings(max_examples=100, deadline=None)
@given(columns=st.fixed_dictionaries(_JSON_FRAME_COLUMNS), split=st.integers(0, 3))
def test_json_rows_are_the_bytes_of_polars_ndjson_writer(columns, split, tmp_path_factory):
    # The JSON table's rows come from polars' JSON serializer row by row (struct.json_encode),
    # joined by commas: the same bytes as write_ndjson's lines joined by commas (the writer
    # used before, and polars' documented NDJSON), for text with quotes, control characters
    # and non-ASCII, floats (NaN and infinities as null), 64-bit integers and booleans.
    import polars as pl

    from sensitivity.output.streams import TableWriter

    frame = pl.DataFrame(columns, schema={"text": pl.String, "number": pl.Float64,
                                          "whole": pl.Int64, "flag": pl.Boolean})  # fmt: skip
    frame = frame.rename({"text": 'te"x\\t é'})
    path = tmp_path_factory.mktemp("json") / "out.json"
    writer = TableWriter(path)
    for piece in (frame[:split], frame.head(0), frame[split:]):
        writer.write(piece)
    writer.close({"n": 3})
    lines = frame.write_ndjson().encode().rstrip(b"\n").replace(b"\n", b",")
    assert path.read_bytes() == b'{"rows":[' + lines + b'],"n":3}\n'


@settings(max_examples=200, deadline=None)
@given(st.lists(st.sampled_from(["1", "1.5", " 2.5", "3 ", "", None, "1,5", "-0,25", "1e3",
                                 "+4", "-7", "007", "nan", "inf", "abc", "  ", "1,5e3", ",5",
                                 "5,", "1_000", "-0"]), min_size=1, max_size=8),
       st.sampled_from(["Float64", "Int64"]))  # fmt: skip
def test_typed_columns_cast_directly_where_that_reads_every_cell(cells, kind):
    # with_types casts a column straight to its type when every filled cell reads that way,
    # else strips the cells and reads decimal commas first: the same column either way.
    import polars as pl

    from sensitivity.adapters.files import with_types

    dtype = getattr(pl, kind)
    frame = pl.DataFrame({"a": cells, "b": ["x"] * len(cells)},
                         schema={"a": pl.String, "b": pl.String})  # fmt: skip
    cell = pl.col("a").str.strip_chars()
    if dtype == pl.Float64:
        cell = cell.str.replace(r"^([-+]?[0-9]*),([0-9]+(?:[eE][-+]?[0-9]+)?)$", r"${1}.${2}")
    long_way = frame.with_columns(
        pl.when(cell == "").then(None).otherwise(cell).cast(dtype, strict=False).alias("a")
    )
    got = with_types(frame, {"a": dtype, "b": pl.String, "absent": pl.Int64})
    assert got.schema == long_way.schema
    assert got.equals(long_way)


@pytest.mark.parametrize("suffix", [".csv", ".tsv", ".json"])
def test_a_column_of_raw_bytes_is_refused_in_one_line_for_text_files(suffix, tmp_path):
    # Neither polars' CSV nor its JSON writer can hold raw bytes (a Parquet input's binary
    # column): the writer says so by name, before any row, and leaves no file behind.
    import polars as pl

    from sensitivity.common.errors import InputError
    from sensitivity.output.streams import TableWriter

    writer = TableWriter(tmp_path / f"out{suffix}")
    with pytest.raises(InputError, match="`output`: column 'blob' holds raw bytes"):
        writer.write(pl.DataFrame({"x": [1.0], "blob": [b"\x00a"]}))
    writer.abort()
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("suffix", [".json", ".csv"])
def test_text_tables_are_the_same_bytes_however_they_are_cut_and_written_out(
    suffix, tmp_path, monkeypatch
):
    # JSON rows turned a few slices at once (in polars' thread pool), and the kernel asked to
    # start writing the file out every few bytes (Linux sync_file_range; elsewhere nothing):
    # the file holds the bytes of polars' own NDJSON (rows joined by commas) or CSV writer for
    # the whole frame, the outside reference.
    import polars as pl

    from sensitivity.output import streams
    from sensitivity.output.streams import TableWriter

    asked = []
    start = streams._start_writing_out
    monkeypatch.setattr(streams, "_start_writing_out", lambda fd: (asked.append(fd), start(fd)))
    monkeypatch.setattr(streams, "JSON_ROWS", 37)
    monkeypatch.setattr(streams, "JSON_SLICES", 3)
    monkeypatch.setattr(streams, "WRITE_OUT_BYTES", 1000)
    rng = np.random.default_rng(5)
    frame = pl.DataFrame({
        "study": [f"s{i} \"q\" é" for i in range(1_000)],
        "evalue": pl.Series(_bits(rng, 1_000), nan_to_null=True),
        "n": np.arange(1_000),
    })  # fmt: skip
    path = tmp_path / f"out{suffix}"
    writer = TableWriter(path)
    for piece in (frame[:1], frame[1:100], frame.head(0), frame[100:1000]):
        writer.write(piece)
    writer.close({"n": 1_000} if suffix == ".json" else None)
    if suffix == ".json":
        lines = frame.write_ndjson().encode().rstrip(b"\n").replace(b"\n", b",")
        assert path.read_bytes() == b'{"rows":[' + lines + b'],"n":1000}\n'
    else:
        assert path.read_bytes() == frame.write_csv().encode()
    # asked as the file grew (CSV: after a piece), not once at the end
    assert len(asked) >= (5 if suffix == ".json" else 2)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.text(max_size=40), min_size=1, max_size=300), st.integers(0, 1),
       st.booleans())  # fmt: skip
def test_json_text_handed_to_disk_is_the_values_run_together(values, skip, made):
    # The JSON rows go to disk as slices of the buffers polars made them in, where every value
    # lies out of its view one after the other; any other layout (a short value, a column
    # read or sliced) takes one copy: the bytes are the values joined (Python's own join,
    # the reference) either way.
    import polars as pl

    from sensitivity.output.streams import _joined_parts

    column = pl.Series(values)
    if made:  # as the writer's: a column polars has just made, each value past 12 bytes
        column = pl.select(pl.concat_str(pl.lit(",{" * 7), pl.lit(column))).to_series()
        column = column.slice(len(values) // 3)
    expected = "".join(column.to_list()).encode()[skip:]
    assert b"".join(bytes(part) for part in _joined_parts(column, skip)) == expected
