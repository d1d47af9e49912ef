"""Issue 19: what a user typed or a file held never reaches the terminal as an instruction.

A label or a column name may hold a bell, a carriage return, a newline or an escape sequence
(the OSC sequence that retitles a terminal, a colour). Every line the command line prints on
stdout or stderr from such text is one line with no control character: the report's echo of
its labels and every `Error:` line (cli.py).
"""

from __future__ import annotations

from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cli import cli

CONTROLS = [chr(i) for i in range(32)] + ["\x7f", "\x9b", "\x1b]0;title\x07", "\x1b[31m"]
HOSTILE = st.lists(
    st.one_of(st.sampled_from(CONTROLS), st.text(alphabet="ab <>|$é😀", max_size=3)),
    min_size=1,
    max_size=8,
).map("".join)


def _no_controls(text: str) -> None:
    for line in text.split("\n"):
        bad = [c for c in line if ord(c) < 32 or 0x7F <= ord(c) < 0xA0]
        assert not bad, (line, bad)


SLOW = [HealthCheck.too_slow, HealthCheck.function_scoped_fixture]


@settings(max_examples=5, deadline=None, suppress_health_check=SLOW)
@given(label=HOSTILE.filter(lambda x: x.strip() and not x.startswith("-")))
def test_a_report_echoes_a_hostile_label_as_one_safe_line(label, tmp_path):
    out = tmp_path / "r"
    res = CliRunner().invoke(
        cli,
        ["report", "--scale", "rr", "--estimate", "2", "--ci", "1.5", "2.7", "--label", label,
         "--out", str(out)],
    )  # fmt: skip
    assert res.exit_code == 0, res.stderr
    _no_controls(res.stdout)
    _no_controls(res.stderr)
    assert res.stdout.count("\n") == 1  # one estimate, one line


@settings(max_examples=40, deadline=None, suppress_health_check=SLOW)
@given(name=HOSTILE)
def test_an_error_naming_a_hostile_column_is_one_safe_line(name, tmp_path):
    """The screen's error for a table with no estimate column lists the columns it has."""
    path = tmp_path / "t.csv"
    quoted = '"' + name.replace('"', '""') + '"'
    path.write_bytes(f"{quoted},scale\n1,rr\n".encode("utf-8", "surrogatepass"))
    res = CliRunner().invoke(cli, ["screen", str(path)])
    assert res.exit_code == 2, res.stderr
    assert res.stderr.startswith("Error: ") and res.stderr.count("\n") == 1, res.stderr
    _no_controls(res.stderr)


@settings(max_examples=10, deadline=None, suppress_health_check=SLOW)
@given(name=HOSTILE.filter(lambda x: "/" not in x and "\x00" not in x and x not in (".", "..")))
def test_the_screen_sentence_names_a_hostile_file_as_one_safe_line(name, tmp_path_factory):
    """The summary sentence on stderr names the file read; its name may hold escapes."""
    folder = tmp_path_factory.mktemp("f")
    path = folder / ("f" + name[:60] + ".csv")
    path.write_text("scale,estimate\nrr,2\n")
    for args in (["--format", "markdown"], ["-o", str(folder / "out.csv")]):
        res = CliRunner().invoke(cli, ["screen", str(path), *args])
        assert res.exit_code == 0, res.stderr
        _no_controls(res.stderr)
