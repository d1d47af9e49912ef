"""A screen you can audit: what was read beside what was computed, every reason with its rows,
the flagged rows alone, European files, and Parquet that keeps the input's types.

The numbers the screen computes are checked against published examples in test_screen.py;
here the check is that the same results written in other forms (free text, European
spreadsheets) give the same numbers as the plain columns.
"""

import json

import numpy as np
import polars as pl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.screen.result import Tally
from sensitivity.screen.stream import screen_frames, screen_summary, screen_table

PLAIN = (
    "id,scale,estimate,lower,upper,outcome\n"
    "1,hr,1.32,1.05,1.66,rare\n"
    "2,rr,0.81,0.69,0.95,\n"
    "3,or,2.4,1.8,3.2,common\n"
)
EUROPEAN = (
    "id;scale;estimate;lower;upper;outcome\n"
    "1;hr;1,32;1,05;1,66;rare\n"
    "2;rr;0,81;0,69;0,95;\n"
    "3;or;2,4;1,8;3,2;common\n"
)
COMPUTED = ("rr", "rr_lower", "rr_upper", "evalue", "evalue_ci")


def test_as_read_columns_show_what_the_text_parser_read():
    frame = pl.DataFrame(
        {
            "result": ["HR 0.72 (95% CI 0.60-0.86)", "OR=2.1, 90% CI 1.2-3.6", "nothing"],
            "outcome": ["rare", "common", ""],
        }
    )
    out = screen_table(frame, from_text="result")
    assert out["as_read_scale"].to_list() == ["hr", "or", ""]
    assert out["as_read_estimate"].to_list()[:2] == [0.72, 2.1]
    assert out["as_read_lower"].to_list()[:2] == [0.60, 1.2]
    assert out["as_read_upper"].to_list()[:2] == [0.86, 3.6]
    assert out["as_read_level"].to_list()[:2] == [0.95, 0.9]
    assert out["as_read_outcome"].to_list() == ["rare", "common", ""]
    assert out["as_read_estimate"][2] is None and out["error"][2] != ""


def test_as_read_columns_of_plain_rows_are_the_columns():
    frame = pl.read_csv(PLAIN.encode(), infer_schema=False)
    out = screen_table(frame)
    assert out["as_read_estimate"].to_list() == [1.32, 0.81, 2.4]
    assert out["as_read_scale"].to_list() == ["hr", "rr", "or"]
    assert out["as_read_outcome"].to_list() == ["rare", "", "common"]
    assert out["as_read_level"].null_count() == 3


def test_every_reason_is_listed_with_its_count_and_first_rows(run, tmp_path):
    lines = ["scale,estimate,lower,upper,se,dof"]
    bad = [
        ("rr", "x", "", "", "", ""),
        ("zz", "1.2", "", "", "", ""),
        ("", "1.2", "", "", "", ""),
        ("rr", "", "", "", "", ""),
        ("rr", "-1", "", "", "", ""),
        ("rr", "1.5", "1.6", "2", "", ""),
        ("ols", "1", "", "", "-1", "100"),
    ]
    for k in range(7):
        lines += [",".join(bad[k])] * (k + 1) + ["rr,1.5,1.2,1.9,,"]
    path = tmp_path / "many.csv"
    path.write_text("\n".join(lines) + "\n")
    res = run("screen", path)
    assert res.exit_code == 0, res.stderr
    assert "more reasons" not in res.stdout
    assert "Flagged rows by reason" in res.stdout
    summary = screen_summary(pl.read_csv(path, infer_schema=False))
    assert len(summary.flagged) == 7
    assert summary.first_rows["`estimate` is not a number"] == [1]
    # seven rows for the last reason: the first five are listed, then "..."
    last = next(k for k, v in summary.flagged.items() if v == 7)
    assert len(summary.first_rows[last]) == 5
    assert ", ..." in res.stdout
    paragraph = " ".join(res.stdout.split())
    for reason, count in summary.flagged.items():
        assert f"{count} × {reason}" in paragraph


def test_first_rows_count_across_pieces():
    frames = [pl.DataFrame({"scale": ["rr", "rr"], "estimate": ["1.5", "x"]})] * 3
    tally = Tally()
    for _ in screen_frames(frames, tally=tally):
        pass
    assert tally.first_rows == {"`estimate` is not a number": [2, 4, 6]}


@pytest.mark.parametrize("suffix", ["csv", "json", "parquet"])
def test_flagged_file_holds_the_flagged_rows_alone(run, tmp_path, suffix):
    src = tmp_path / "in.csv"
    src.write_text(PLAIN + "4,rr,oops,,,\n5,zz,1.2,,,\n")
    res = run("screen", src, "--output", tmp_path / "all.csv", "--flagged",
              tmp_path / f"bad.{suffix}")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert f"Wrote 2 flagged rows to {tmp_path / f'bad.{suffix}'}" in res.stderr
    if suffix == "csv":
        bad = pl.read_csv(tmp_path / "bad.csv", infer_schema=False)
    elif suffix == "json":
        bad = pl.DataFrame(json.loads((tmp_path / "bad.json").read_text())["rows"])
    else:
        bad = pl.read_parquet(tmp_path / "bad.parquet")
    assert [str(v) for v in bad["id"].to_list()] == ["4", "5"]
    assert all(bad["error"].to_list())
    every = pl.read_csv(tmp_path / "all.csv", infer_schema=False)
    assert every.height == 5 and every.columns == bad.columns


def test_flagged_file_without_flagged_rows_has_the_header(run, tmp_path):
    src = tmp_path / "in.csv"
    src.write_text(PLAIN)
    res = run("screen", src, "--flagged", tmp_path / "bad.csv")
    assert res.exit_code == 0 and "Wrote 0 flagged rows" in res.stderr
    assert (tmp_path / "bad.csv").read_text().startswith("id,scale,estimate")


def test_flagged_and_output_must_differ(run, tmp_path):
    src = tmp_path / "in.csv"
    src.write_text(PLAIN)
    res = run("screen", src, "-o", tmp_path / "x.csv", "--flagged", tmp_path / "x.csv")
    assert res.exit_code == 2 and "--flagged and --output must be different files" in res.stderr


def test_a_european_file_is_detected_and_gives_the_same_numbers(run, tmp_path):
    (tmp_path / "us.csv").write_text(PLAIN)
    (tmp_path / "eu.csv").write_text(EUROPEAN)
    out = {}
    for name in ("us", "eu"):
        res = run("screen", tmp_path / f"{name}.csv", "--format", "csv")
        assert res.exit_code == 0, res.stderr
        out[name] = pl.read_csv(res.stdout.encode(), infer_schema=False)
    for column in COMPUTED:
        assert out["eu"][column].to_list() == out["us"][column].to_list()
    assert out["eu"]["estimate"].to_list() == ["1,32", "0,81", "2,4"]  # echoed as written
    res = run("screen", tmp_path / "eu.csv")
    assert "read as a European file, detected" in " ".join(res.stdout.split())


def test_delimiter_option(run, tmp_path):
    (tmp_path / "eu.csv").write_text(EUROPEAN)
    res = run("screen", tmp_path / "eu.csv", "--delimiter", ";")
    assert res.exit_code == 0 and "as --delimiter says" in " ".join(res.stdout.split())
    res = run("screen", tmp_path / "eu.csv", "--delimiter", ",")
    assert res.exit_code == 2 and res.stderr.count("\n") == 1
    assert "try --delimiter ';'" in res.stderr


def test_decimal_commas_from_python():
    frame = pl.read_csv(EUROPEAN.encode(), separator=";", infer_schema=False)
    eu = screen_table(frame, decimal_comma=True)
    us = screen_table(pl.read_csv(PLAIN.encode(), infer_schema=False))
    for column in COMPUTED:
        assert np.allclose(eu[column].to_numpy(), us[column].to_numpy())
    flagged = screen_table(frame)  # without the option, a decimal comma is not a number
    assert all("decimal comma" in e for e in flagged["error"].to_list())


@pytest.mark.parametrize("source", ["PLAIN", "EUROPEAN"])
def test_parquet_output_keeps_the_input_types(run, tmp_path, source):
    src = tmp_path / "in.csv"
    src.write_text(globals()[source])
    res = run("screen", src, "--output", tmp_path / "out.parquet")
    assert res.exit_code == 0, res.stderr
    out = pl.read_parquet(tmp_path / "out.parquet")
    assert out.schema["id"] == pl.Int64
    assert out.schema["estimate"] == pl.Float64
    assert out.schema["scale"] == pl.String
    assert out["estimate"].to_list() == [1.32, 0.81, 2.4]
    assert out["outcome"].to_list() == ["rare", "", "common"]  # text as written


@pytest.mark.parametrize("delimiter", [",", ";"])
def test_parquet_types_are_the_whole_files_even_when_a_late_piece_demotes_one(
    run, tmp_path, monkeypatch, delimiter
):
    # The column types are inferred from the whole file in a thread of their own while the
    # first pieces are screened (the writer waits for them). A column whose cells all read
    # as integers until the last piece, where one reads as a decimal (or as text), is Float64
    # (String) in the file, as polars reads the whole file (the outside reference); columns
    # never demoted keep theirs. Tiny pieces, so the late cells come many pieces in.
    import sensitivity.adapters.files as files

    monkeypatch.setattr(files, "FRAME_BYTES", 256)
    decimal = "2.5" if delimiter == "," else "2,5"
    lines = [f"id{delimiter}scale{delimiter}estimate{delimiter}lower{delimiter}upper"
             f"{delimiter}count{delimiter}dose{delimiter}code"]  # fmt: skip
    for i in range(400):
        estimate, lower, upper = (("1.5", "1.2", "1.9") if delimiter == "," else
                                  ("1,5", "1,2", "1,9"))  # fmt: skip
        dose = decimal if i == 399 else str(i)
        code = "x7" if i == 399 else str(i % 5)
        lines.append(delimiter.join([str(i), "rr", estimate, lower, upper, str(i), dose, code]))
    src = tmp_path / "late.csv"
    src.write_text("\n".join(lines) + "\n")
    for target in ("out.parquet", "bad.parquet"):
        (tmp_path / target).unlink(missing_ok=True)
    res = run("screen", src, "--output", tmp_path / "out.parquet", "--flagged",
              tmp_path / "bad.parquet")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    whole = pl.read_csv(src, separator=delimiter, infer_schema_length=None,
                        decimal_comma=delimiter == ";")  # fmt: skip
    assert whole.schema["count"] == pl.Int64 and whole.schema["dose"] == pl.Float64
    assert whole.schema["code"] == pl.String
    out = pl.read_parquet(tmp_path / "out.parquet")
    for name in whole.columns:
        assert out.schema[name] == whole.schema[name], name
        assert out[name].equals(whole[name]), name
    bad = pl.read_parquet(tmp_path / "bad.parquet")  # no row flagged: the header alone
    assert bad.height == 0 and bad.schema == out.schema


@pytest.mark.parametrize("late", ["7", "2.5", "x7"])
def test_parquet_pieces_written_with_the_first_pieces_types_are_rewritten_when_wrong(
    run, tmp_path, monkeypatch, late
):
    # The writer does not wait for the whole file's types: it writes its first pieces with
    # the types of the file's first piece (here a few lines: `dose` reads as whole numbers)
    # and keeps them until the file's types are known (held back here until GUESSED_PIECES
    # are written). A decimal or a word in the last line makes `dose` Float64 or String: those
    # pieces are written again. The file is what polars reads from the whole text (the
    # reference), and the flagged rows' file has its types too.
    import threading

    import sensitivity.adapters.files as files
    from sensitivity.output import parquet

    monkeypatch.setattr(files, "FRAME_BYTES", 256)
    monkeypatch.setattr(files, "FIRST_FRAME_BYTES", 256)
    monkeypatch.setattr(files, "TYPE_PIECE_BYTES", (64, 256))
    written: list[int] = []
    enough = threading.Event()
    write_piece = parquet.ParquetPieces._write

    def counted(self, frame):
        write_piece(self, frame)
        if frame.height:  # the screened rows' file (no row is flagged)
            written.append(frame.height)
            if len(written) == parquet.GUESSED_PIECES:
                enough.set()

    text_types = files.text_types

    def held_back(*args, **kwargs):
        found = text_types(*args, **kwargs)
        enough.wait(30)
        return found

    monkeypatch.setattr(parquet.ParquetPieces, "_write", counted)
    monkeypatch.setattr(files, "text_types", held_back)
    lines = ["id,scale,estimate,lower,upper,dose"]
    lines += [f"{i},rr,1.5,1.2,1.9,{i % 9}" for i in range(300)] + [f"300,rr,1.5,1.2,1.9,{late}"]
    src = tmp_path / "late.csv"
    src.write_text("\n".join(lines) + "\n")
    res = run("screen", src, "--output", tmp_path / "out.parquet", "--flagged",
              tmp_path / "bad.parquet")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    whole = pl.read_csv(src, infer_schema_length=None)
    assert whole.schema["dose"] == {"7": pl.Int64, "2.5": pl.Float64, "x7": pl.String}[late]
    out = pl.read_parquet(tmp_path / "out.parquet")
    for name in whole.columns:
        assert out.schema[name] == whole.schema[name], name
        assert out[name].equals(whole[name]), name
    rewritten = 0 if late == "7" else parquet.GUESSED_PIECES
    assert sum(written) == whole.height + sum(written[:rewritten])
    bad = pl.read_parquet(tmp_path / "bad.parquet")
    assert bad.height == 0 and bad.schema == out.schema
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.parquet", "late.csv", "out.parquet"]


def test_an_error_while_inferring_parquet_types_leaves_no_file(run, tmp_path, monkeypatch):
    # The inference runs beside the screen: its error reaches the command, and nothing is
    # left under the output's name (the previous file stays as it was).
    import sensitivity.adapters.files as files

    def fail(path, delimiter, early=None):
        raise OSError("the disk went away")

    monkeypatch.setattr(files, "text_types", fail)
    src = tmp_path / "in.csv"
    src.write_text(PLAIN)
    (tmp_path / "out.parquet").write_bytes(b"before")
    res = run("screen", src, "--output", tmp_path / "out.parquet")
    assert res.exit_code != 0 and "the disk went away" in res.stderr, res.stderr
    assert (tmp_path / "out.parquet").read_bytes() == b"before"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["in.csv", "out.parquet"]


def test_parquet_input_types_pass_through(run, tmp_path):
    pl.DataFrame({"id": [7, 8], "scale": ["rr", "hr"], "estimate": [1.5, 2.0],
                  "outcome": ["", "rare"]}).write_parquet(tmp_path / "in.parquet")  # fmt: skip
    res = run("screen", tmp_path / "in.parquet", "--output", tmp_path / "out.parquet")
    assert res.exit_code == 0, res.stderr
    out = pl.read_parquet(tmp_path / "out.parquet")
    assert out.schema["id"] == pl.Int64 and out["id"].to_list() == [7, 8]


def test_a_decimal_point_in_a_european_file_is_flagged_not_guessed(run, tmp_path):
    path = tmp_path / "eu.csv"
    path.write_text(EUROPEAN + "4;rr;1.500;1,2;1,9;\n")
    res = run("screen", path, "--format", "csv")
    out = pl.read_csv(res.stdout.encode(), infer_schema=False)
    assert "a decimal point where the file writes decimal commas" in out["error"][3]
    assert out["error"].to_list()[:3] == ["", "", ""]


_RAW_CELLS = ["1", "-2", "+3", "007", "-0", "1.5", ".5", "5.", "1e5", "1E-3", "inf", "-inf",
              "NaN", "nan", "true", "False", "TRUE", "", '""', '"1"', '"1.5"', '"a""b"', " 1",
              "1 ", "\u0663", "99999999999999999999", "abc", "1_0", '"x\ny"']  # fmt: skip
_RAW_CELLS_EUROPEAN = ["1,5", "-0,25", "1,5e3", ",5", "5,", '"2,5"', "1.5"]


@settings(max_examples=150, deadline=None)
@given(
    st.sampled_from([",", ";"]),
    st.lists(st.lists(st.sampled_from(_RAW_CELLS + _RAW_CELLS_EUROPEAN), min_size=1,
                      max_size=3), min_size=1, max_size=3),
    st.integers(1, 80),
    st.sampled_from(["\n", "\r\n"]),
    st.integers(0, 10**6),
)  # fmt: skip
def test_column_types_by_piece_are_polars_whole_file_inference(
    delimiter, pools, rows, newline, seed
):
    # text_types infers each column from the distinct texts of a piece of the file at a time:
    # the types are polars' own inference over the whole file (the outside reference), for
    # numbers of every form polars knows (signs, exponents, inf, NaN, decimal commas in a
    # ';' file, integers beyond 64 bits, Unicode digits), booleans, quoted cells (a quoted
    # empty one, a quoted number, a doubled quote, a line end inside), blank cells, spaces,
    # Windows line ends and a blank line; pieces of a few dozen bytes.
    import tempfile
    from pathlib import Path

    import sensitivity.adapters.files as files

    rng = np.random.default_rng(seed)
    if delimiter == ",":  # a decimal comma is a cell of its own only in a ';' file
        pools = [[c for c in pool if c not in _RAW_CELLS_EUROPEAN or c.startswith('"')] or ["1"]
                 for pool in pools]  # fmt: skip
    lines = [delimiter.join(f"c{i}" for i in range(len(pools)))]
    for _ in range(rows):
        lines.append(delimiter.join(pool[rng.integers(len(pool))] for pool in pools))
    if rows > 3 and seed % 4 == 0:
        lines.insert(2, "")
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "t.csv"
        path.write_bytes((newline.join(lines) + newline).encode())
        saved = files.TYPE_PIECE_BYTES
        files.TYPE_PIECE_BYTES = (48, 160)
        try:
            got = files.text_types(path, delimiter)
        finally:
            files.TYPE_PIECE_BYTES = saved
        assert got == files._whole_file_types(path, delimiter)


@pytest.mark.parametrize("late", ["n/a", "2.5"])
def test_column_types_come_by_piece_for_a_table_of_rounded_numbers(tmp_path, late):
    # A table like a screen's, with a column of counts that turns to text (or to a decimal)
    # only in its last row, several pieces in: text is found by piece; Int64 in the first
    # pieces and Float64 in the last sends the file to the whole-file inference. The types
    # are polars' whole-file inference either way.
    import sensitivity.adapters.files as files

    lines = ["study,scale,estimate,count"]
    for i in range(120_000):
        count = late if i == 119_999 else str(i % 50)
        lines.append(f"s{i},rr,{1 + i % 97 / 100:.2f},{count}")
    path = tmp_path / "t.csv"
    path.write_text("\n".join(lines) + "\n")
    assert len(list(files.byte_chunks(path, *files.TYPE_PIECE_BYTES[::-1]))) >= 2
    by_piece = files._types_by_piece(path, ",")
    whole = files._whole_file_types(path, ",")
    assert whole["count"] == (pl.String if late == "n/a" else pl.Float64)
    assert by_piece == (whole if late == "n/a" else None)
    assert files.text_types(path, ",") == whole


def test_the_screen_holds_blas_to_one_thread_and_passes_no_setting_on(tmp_path):
    # The command line's screen loads numpy with OpenBLAS held to one thread (it calls no BLAS
    # routine; the start-up threads cost CPU), only for itself: the setting is gone from the
    # environment afterwards, and the table is byte for byte the one screened in a process
    # whose numpy was loaded as usual (this one).
    import ast

    from click.testing import CliRunner

    from cli import cli

    src = tmp_path / "in.csv"
    src.write_text(
        "study,scale,estimate,lower,upper,outcome\n"
        "a,rr,1.5,1.1,2.0,\nb,or,2.1,1.4,3.15,common\nc,hr,0.7,0.5,0.9,common\nd,or,oops,,,\n"
    )
    done = _blas_probe(["screen", str(src), "--output", str(tmp_path / "sub.csv")])
    assert done.returncode == 0, done.stderr
    blas, setting = done.stderr.strip().splitlines()[-1].rsplit(" ", 1)
    assert setting == "None"
    assert set(ast.literal_eval(blas)) <= {1}
    result = CliRunner().invoke(cli, ["screen", str(src), "--output", str(tmp_path / "in.out.csv")])
    assert result.exit_code == 0, result.output
    assert (tmp_path / "sub.csv").read_bytes() == (tmp_path / "in.out.csv").read_bytes()


def test_a_one_number_command_loads_numpy_with_one_blas_thread(tmp_path):
    """Issue 26: a command on summary numbers multiplies no matrices, so OpenBLAS's start-up
    threads (which spin while numpy loads) are held to one; the setting does not stay in the
    environment, and a user's own setting is kept."""
    import ast

    for setting in (None, "2"):
        done = _blas_probe(["evalue", "--scale", "rr", "--estimate", "1.5"], setting)
        assert "E-value" in done.stdout, done.stderr
        blas, left = done.stderr.strip().splitlines()[-1].rsplit(" ", 1)
        assert left == str(setting)
        if setting is None:
            assert set(ast.literal_eval(blas)) <= {1}


def _blas_probe(args: list[str], setting: str | None = None):
    """Run the command line in a fresh Python (OPENBLAS_NUM_THREADS unset, or `setting`);
    its last stderr line is OpenBLAS's thread counts and the setting left at exit."""
    import os
    import subprocess
    import sys
    from pathlib import Path

    probe = (
        "import atexit, os, sys\n"
        "def show():\n"
        "    import threadpoolctl\n"
        "    blas = [i['num_threads'] for i in threadpoolctl.threadpool_info()\n"
        "            if i['internal_api'] == 'openblas']\n"
        "    print(blas, os.environ.get('OPENBLAS_NUM_THREADS'), file=sys.stderr)\n"
        "atexit.register(show)\n"
        "from cli import main\n"
        "sys.argv = ['sensitivity', *sys.argv[1:]]\n"
        "main()\n"
    )
    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
    root = str(Path(__file__).resolve().parents[1])
    env["PYTHONPATH"] = os.pathsep.join([root, env.get("PYTHONPATH", "")])
    if setting is not None:
        env["OPENBLAS_NUM_THREADS"] = setting
    return subprocess.run([sys.executable, "-c", probe, *args], capture_output=True, text=True,
                          env=env, check=False)  # fmt: skip
