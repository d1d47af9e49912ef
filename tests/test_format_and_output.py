"""`--format` given with `--output`: a file's format comes from its extension, so a format
that names another one is refused (one line, exit 2, naming both) rather than writing the
extension's format and printing nothing, as `--format json --output x.csv` did."""

from __future__ import annotations

import json

import pytest

EVALUE = ("evalue", "--scale", "rr", "--estimate", "2", "--ci", "1.5", "3")


def _screen_input(tmp_path):
    src = tmp_path / "in.csv"
    src.write_text("scale,estimate,lower,upper\nrr,2,1.5,3\n")
    return src


@pytest.mark.parametrize(
    ("fmt", "name", "kind"),
    [("json", "x.csv", "CSV"), ("csv", "x.json", "JSON"), ("text", "x.md", "Markdown"),
     ("markdown", "x.tex", "LaTeX"), ("latex", "x.html", "HTML")],
)  # fmt: skip
def test_a_command_refuses_a_format_against_the_extension(run, tmp_path, fmt, name, kind):
    out = tmp_path / name
    res = run(*EVALUE, "--format", fmt, "-o", out)
    assert res.exit_code == 2 and not out.exists()
    assert res.stderr == (
        f"Error: `--format` {fmt} contradicts `-o` {str(out)!r}, which is {kind} by its "
        "extension; a file's format comes from its extension: drop --format or change the "
        "extension\n"
    )


@pytest.mark.parametrize(
    ("fmt", "name", "kind"),
    [("json", "x.csv", "CSV"), ("csv", "x.json", "JSON"), ("csv", "x.parquet", "Parquet"),
     ("text", "x.tsv", "TSV")],
)  # fmt: skip
def test_the_screen_refuses_a_format_against_the_extension(run, tmp_path, fmt, name, kind):
    out = tmp_path / name
    res = run("screen", _screen_input(tmp_path), "--format", fmt, "--output", out)
    assert res.exit_code == 2 and not out.exists()
    assert res.stderr.count("\n") == 1
    assert res.stderr.startswith(f"Error: `--format` {fmt} contradicts `--output` ")
    assert f"which is {kind} by its extension" in res.stderr


def test_a_format_that_agrees_or_is_not_given_still_writes(run, tmp_path):
    res = run(*EVALUE, "--format", "json", "-o", tmp_path / "a.json")
    assert res.exit_code == 0 and json.loads((tmp_path / "a.json").read_text())["evalue"] > 1
    res = run(*EVALUE, "-o", tmp_path / "b.csv")  # --format not given: the extension decides
    assert res.exit_code == 0 and (tmp_path / "b.csv").read_text().startswith('"scale"')
    res = run(*EVALUE, "--format", "json", "-o", tmp_path / "c.dat")  # no format by extension
    assert res.exit_code == 0 and json.loads((tmp_path / "c.dat").read_text())["evalue"] > 1
    res = run("screen", _screen_input(tmp_path), "--format", "csv", "-o", tmp_path / "d.csv")
    assert res.exit_code == 0 and (tmp_path / "d.csv").exists()


def test_every_output_of_a_repeated_option_is_checked(run, tmp_path):
    res = run(*EVALUE, "--format", "json", "-o", tmp_path / "a.json", "-o", tmp_path / "b.md")
    assert res.exit_code == 2 and "'" + str(tmp_path / "b.md") + "'" in res.stderr
    assert not (tmp_path / "a.json").exists()  # refused before any work


def test_a_dash_output_is_stdout_and_an_empty_one_is_refused(run, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    res = run(*EVALUE, "--format", "json", "-o", "-", "-o", "copy.json")
    assert res.exit_code == 0, res.stderr
    assert json.loads(res.stdout) == json.loads((tmp_path / "copy.json").read_text())
    assert not (tmp_path / "-").exists()  # no file named "-"
    res = run(*EVALUE, "-o", "")
    assert res.exit_code == 2 and res.stderr == (
        "Error: Invalid value for '-o': must name a file; got ''\n"
    )
