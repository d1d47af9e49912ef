"""Issue 19: outputs are whole or absent (a temporary file beside the target, renamed into
place), and a header cell cannot become a spreadsheet formula."""

from __future__ import annotations

import csv
import io
import threading

import polars as pl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.errors import InputError
from sensitivity.output.atomic import replacing, write_text
from sensitivity.output.streams import FORMULA_STARTS, TableWriter, safe_name


def _leftovers(folder):
    return sorted(p.name for p in folder.iterdir() if p.name.startswith("."))


def test_a_failure_part_way_leaves_the_old_file_and_no_temporary(tmp_path):
    target = tmp_path / "out.txt"
    target.write_text("old and whole")
    with pytest.raises(RuntimeError), replacing(target, "w") as sink:
        sink.write("half")
        raise RuntimeError("disk full")
    assert target.read_text() == "old and whole"
    assert _leftovers(tmp_path) == []


def test_a_new_file_gets_the_usual_permissions(tmp_path):
    import os

    write_text(tmp_path / "new.txt", "x")
    mask = os.umask(0)
    os.umask(mask)
    assert (tmp_path / "new.txt").stat().st_mode & 0o777 == 0o666 & ~mask


@pytest.mark.parametrize("suffix", [".csv", ".tsv", ".json", ".parquet", ".xlsx"])
def test_the_table_writer_aborted_leaves_nothing(tmp_path, suffix):
    writer = TableWriter(tmp_path / f"t{suffix}")
    writer.write(pl.DataFrame({"a": ["1", "2"]}))
    writer.abort()
    assert list(tmp_path.iterdir()) == []


def test_a_command_that_fails_while_writing_leaves_no_output(run, tmp_path, monkeypatch):
    from sensitivity.output import streams

    src = tmp_path / "in.csv"
    src.write_text("scale,estimate,lower,upper\n" + "rr,2,1.5,3\n" * 10)
    out = tmp_path / "out.csv"

    def broken(self, piece):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(streams.TableWriter, "_write_piece", broken)
    res = run("screen", src, "-o", out)
    assert res.exit_code == 1 and "No space left" in res.stderr
    assert not out.exists() and _leftovers(tmp_path) == []


def test_two_writers_of_one_path_leave_one_whole_table(tmp_path):
    target = tmp_path / "same.csv"
    tables = {k: pl.DataFrame({"who": [k] * 50_000, "n": [str(i) for i in range(50_000)]})
              for k in ("a", "b")}  # fmt: skip

    def write(k):
        writer = TableWriter(target)
        for part in tables[k].iter_slices(5_000):
            writer.write(part)
        writer.close()

    threads = [threading.Thread(target=write, args=(k,)) for k in tables]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    rows = list(csv.DictReader(io.StringIO(target.read_text())))
    assert len(rows) == 50_000 and len({r["who"] for r in rows}) == 1
    assert _leftovers(tmp_path) == []


names = st.tuples(st.sampled_from(FORMULA_STARTS), st.text(min_size=1, max_size=12)).map("".join)


@settings(max_examples=30, deadline=None)
@given(name=names)
def test_a_formula_looking_column_name_is_defused_in_csv_tsv_and_excel(name, tmp_path_factory):
    import openpyxl

    from sensitivity.output.streams import _NUMBER

    if _NUMBER.match(name):
        return  # a number ("+0") is not a formula and is left as written
    folder = tmp_path_factory.mktemp("h")
    frame = pl.DataFrame({name: ["=1+1"], "b": ["x"]})
    for suffix in (".csv", ".tsv"):
        writer = TableWriter(folder / f"t{suffix}")
        writer.write(frame)
        writer.close()
        sep = "," if suffix == ".csv" else "\t"
        with open(folder / f"t{suffix}", newline="", encoding="utf-8") as fh:
            header = next(csv.reader(fh, delimiter=sep))
        assert header[0].startswith("'") and header[0] == safe_name(name)
    writer = TableWriter(folder / "t.xlsx")
    writer.write(frame)
    writer.close()
    sheet = openpyxl.load_workbook(folder / "t.xlsx").active
    for cell in sheet[1] + sheet[2]:
        assert cell.data_type != "f", cell.value


def test_a_numeric_looking_header_is_left_alone():
    assert safe_name("-0.5") == "-0.5" and safe_name("=cmd") == "'=cmd"


@pytest.mark.parametrize("suffix", [".csv", ".tsv", ".json", ".parquet"])
def test_a_nul_in_a_column_name_is_written_or_refused_never_a_panic(suffix, tmp_path):
    """Found by the property above: a column name holding NUL made polars panic (a Rust
    panic is no Python Exception) in the formula prefilter; Parquet cannot store such a name
    and says so in one line."""
    frame = pl.DataFrame({"=a\x00b": ["=1+1"], "b": ["x"]})
    writer = TableWriter(tmp_path / f"t{suffix}")
    if suffix == ".parquet":
        with pytest.raises(InputError, match="NUL character"):
            writer.write(frame)
        return
    writer.write(frame)
    writer.close()
    assert (tmp_path / f"t{suffix}").read_bytes().count(b"=1+1") == 1


def test_an_interrupt_while_closing_still_removes_the_temporary_file(tmp_path):
    # a user's review: Ctrl-C during a screen left .out.XXXX.csv beside the output, as the
    # interrupt reached the writer being closed and the removal was skipped
    writer = TableWriter(tmp_path / "out.csv")
    writer.write(pl.DataFrame({"a": ["1", "2"]}))

    def interrupted() -> None:
        raise KeyboardInterrupt

    writer._behind.close = interrupted
    writer.abort()
    assert list(tmp_path.iterdir()) == []


# --- a symbolic link as the output is written through, and stays a link --------------------


def _linked(tmp_path, name, target_name="real", old=b"old"):
    real = tmp_path / "elsewhere" / target_name
    real.parent.mkdir(exist_ok=True)
    real.write_bytes(old)
    link = tmp_path / name
    link.symlink_to(real)
    return link, real


def _screen_input(tmp_path):
    src = tmp_path / "in.csv"
    src.write_text("scale,estimate,lower,upper\nrr,2,1.5,3\n")
    return src


@pytest.mark.parametrize("suffix", [".csv", ".tsv", ".json", ".parquet", ".xlsx"])
def test_the_screen_writes_through_a_symbolic_link(run, tmp_path, suffix):
    link, real = _linked(tmp_path, f"out{suffix}", f"real{suffix}")
    res = run("screen", _screen_input(tmp_path), "-o", link)
    assert res.exit_code == 0, res.stderr
    assert link.is_symlink() and link.resolve() == real.resolve()
    assert real.read_bytes() != b"old"
    assert _leftovers(tmp_path) == [] and _leftovers(real.parent) == []


@pytest.mark.parametrize("suffix", [".json", ".csv", ".md", ".tex", ".txt", ".html"])
def test_a_command_output_writes_through_a_symbolic_link(run, tmp_path, suffix):
    link, real = _linked(tmp_path, f"out{suffix}", "real.dat")  # the name given sets the format
    res = run("evalue", "--scale", "rr", "--estimate", "2", "-o", link)
    assert res.exit_code == 0, res.stderr
    assert link.is_symlink()
    direct = tmp_path / f"direct{suffix}"
    assert run("evalue", "--scale", "rr", "--estimate", "2", "-o", direct).exit_code == 0
    assert real.read_bytes() == direct.read_bytes()


@pytest.mark.parametrize("suffix", [".png", ".svg", ".pdf"])
def test_a_figure_writes_through_a_symbolic_link(run, tmp_path, suffix):
    link, real = _linked(tmp_path, f"fig{suffix}", f"real{suffix}")
    res = run("evalue", "--scale", "rr", "--estimate", "2", "--plot", link)
    assert res.exit_code == 0, res.stderr
    assert link.is_symlink() and real.stat().st_size > 100
    assert _leftovers(real.parent) == []


def test_the_report_writes_through_links_in_its_folder(run, tmp_path):
    folder = tmp_path / "report"
    folder.mkdir()
    link, real = _linked(folder, "report.json", "kept.json")
    res = run("report", "--scale", "rr", "--estimate", "2", "--ci", "1.5", "3", "--out", folder)
    assert res.exit_code == 0, res.stderr
    assert link.is_symlink() and real.read_bytes().startswith(b"{")


def test_the_python_writer_writes_through_a_chain_of_links(tmp_path):
    link, real = _linked(tmp_path, "middle.txt", "end.txt")
    first = tmp_path / "first.txt"
    first.symlink_to(link)
    write_text(first, "through")
    assert first.is_symlink() and link.is_symlink()
    assert real.read_text() == "through"


def test_a_dangling_link_creates_the_file_it_names(run, tmp_path):
    link = tmp_path / "out.json"
    link.symlink_to(tmp_path / "made.json")
    res = run("evalue", "--scale", "rr", "--estimate", "2", "-o", link)
    assert res.exit_code == 0, res.stderr
    assert link.is_symlink() and (tmp_path / "made.json").read_bytes().startswith(b"{")


@pytest.mark.parametrize(
    ("command", "option"),
    [
        (("evalue", "--scale", "rr", "--estimate", "2", "-o"), "-o"),
        (("evalue", "--scale", "rr", "--estimate", "2", "--plot"), "--plot"),
        (("screen", None, "-o"), "-o"),
        (("screen", None, "--flagged"), "--flagged"),
    ],
)
def test_a_link_into_a_missing_folder_is_one_line_exit_2(run, tmp_path, command, option):
    suffix = ".png" if option == "--plot" else ".csv"
    link = tmp_path / f"out{suffix}"
    link.symlink_to(tmp_path / "gone" / f"x{suffix}")
    args = [_screen_input(tmp_path) if a is None else a for a in command]
    res = run(*args, link)
    assert res.exit_code == 2
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and "does not exist" in lines[0] and option in lines[0]
    assert "where the link" in lines[0] and "Traceback" not in res.output


def test_a_link_that_loops_or_names_a_folder_is_refused(run, tmp_path):
    (tmp_path / "a.json").symlink_to(tmp_path / "b.json")
    (tmp_path / "b.json").symlink_to(tmp_path / "a.json")
    res = run("evalue", "--scale", "rr", "--estimate", "2", "-o", tmp_path / "a.json")
    assert res.exit_code == 2 and "loops" in res.stderr
    (tmp_path / "folder").mkdir()
    (tmp_path / "f.csv").symlink_to(tmp_path / "folder")
    res = run("screen", _screen_input(tmp_path), "-o", tmp_path / "f.csv")
    assert res.exit_code == 2 and "is a directory" in res.stderr  # click's own check
    assert len(res.stderr.strip().splitlines()) == 1
    with pytest.raises(InputError, match="points to a folder"):
        write_text(tmp_path / "f.csv", "x")


def test_the_python_writer_refuses_a_link_into_a_missing_folder(tmp_path):
    link = tmp_path / "out.txt"
    link.symlink_to(tmp_path / "gone" / "x.txt")
    with pytest.raises(InputError, match=r"folder .*gone.* \(where the link .* does not exist"):
        write_text(link, "x")
    assert link.is_symlink() and _leftovers(tmp_path) == []


def test_a_link_to_the_input_is_refused_as_the_input_itself(run, tmp_path):
    src = _screen_input(tmp_path)
    before = src.read_bytes()
    link = tmp_path / "to-input.csv"
    link.symlink_to(src)
    res = run("screen", src, "-o", link)
    assert res.exit_code == 2 and "is the input file given as FILE" in res.stderr
    assert src.read_bytes() == before and link.is_symlink()
