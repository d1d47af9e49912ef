"""A stdout that closes (the reader of a pipe stops: `| head -c 100`) or was never open
(`>&-`): every command stops the same way, with no traceback and no temporary file left.

A reader that leaves early: exit 1 and nothing on stderr, as Unix filters stop (quietly, with
a failure status, since the whole result was not delivered; 1 is CONTRACT's code for a
failure that is not the user's input, and the code Python's documentation gives for EPIPE).
A stdout closed from the start: exit 1 with one line, since a result would otherwise vanish.
"""

from __future__ import annotations

import os
import subprocess
import sys

import pytest


def _screen_file(folder):
    path = folder / "many.csv"
    rows = "".join(f"rr,{2 + (i % 7) / 10:.1f},1.5,3.5\n" for i in range(60_000))
    path.write_text("scale,estimate,lower,upper\n" + rows)
    return path


COMMANDS = {
    "screen csv": ("screen", "{file}", "--format", "csv"),
    "screen json": ("screen", "{file}", "--format", "json"),
    "tipping csv": ("tipping", "--scale", "rr", "--estimate", "2", "--ci", "1.5", "3",
                    "--prevalence-treated", "0:1:0.002", "--prevalence-control", "0:1:0.01",
                    "--outcome-effect", "2", "--format", "csv"),
    "tipping json": ("tipping", "--scale", "rr", "--estimate", "2", "--ci", "1.5", "3",
                     "--prevalence-treated", "0:1:0.002", "--prevalence-control", "0:1:0.01",
                     "--outcome-effect", "2", "--format", "json"),
    "matched csv": ("matched", "--discordant", "100", "--treated-events", "70",
                    "--gamma", "1:60:0.001", "--format", "csv"),
}  # fmt: skip


def _command(name, folder):
    return [sys.executable, "-m", "sensitivity",
            *(a.format(file=_screen_file(folder)) for a in COMMANDS[name])]  # fmt: skip


def _env(folder):
    scratch = folder / "tmp"
    scratch.mkdir()
    return {**os.environ, "TMPDIR": str(scratch)}, scratch


@pytest.mark.parametrize("name", list(COMMANDS))
def test_a_reader_that_stops_early_gives_exit_1_and_silence(name, tmp_path):
    env, scratch = _env(tmp_path)
    with subprocess.Popen(_command(name, tmp_path), stdout=subprocess.PIPE,
                          stderr=subprocess.PIPE, env=env, cwd=tmp_path) as proc:  # fmt: skip
        assert proc.stdout is not None and proc.stderr is not None
        assert len(proc.stdout.read(100)) == 100
        proc.stdout.close()  # the reader leaves, as `head -c 100` does
        err = proc.stderr.read().decode()
        code = proc.wait(timeout=120)
    assert code == 1, err
    assert "Traceback" not in err and "Error" not in err and "Exception" not in err
    assert list(scratch.iterdir()) == [] and not list(tmp_path.glob(".*"))


@pytest.mark.parametrize("args", [("evalue", "--scale", "rr", "--estimate", "2"),
                                  ("evalue", "--scale", "rr", "--estimate", "2", "--format",
                                   "json"),
                                  ("screen", "{file}", "--format", "csv")])  # fmt: skip
def test_a_stdout_closed_from_the_start_is_one_line_exit_1(args, tmp_path):
    env, scratch = _env(tmp_path)
    command = [sys.executable, "-m", "sensitivity",
               *(a.format(file=_screen_file(tmp_path)) for a in args)]  # fmt: skip
    done = subprocess.run(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env,
                          text=True, preexec_fn=lambda: os.close(1), timeout=120)  # fmt: skip
    assert done.returncode == 1
    assert done.stderr == "Error: standard output is closed; give --output FILE\n"
    assert list(scratch.iterdir()) == []


def test_a_closed_stdout_does_not_matter_with_output(tmp_path):
    env, _ = _env(tmp_path)
    out = tmp_path / "out.json"
    done = subprocess.run([sys.executable, "-m", "sensitivity", "evalue", "--scale", "rr",
                           "--estimate", "2", "-o", str(out)], stdout=subprocess.DEVNULL,
                          stderr=subprocess.PIPE, env=env, text=True,
                          preexec_fn=lambda: os.close(1), timeout=120)  # fmt: skip
    assert done.returncode == 0, done.stderr
    assert out.read_text().startswith("{")
