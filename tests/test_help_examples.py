"""Every example printed by `--help` runs as printed (from a folder holding the demo data)."""

import shlex
import shutil

import pytest
from click.testing import CliRunner
from conftest import ROOT

from cli import cli
from sensitivity.commands import COMMANDS


def _examples():
    runner = CliRunner()
    found = []
    for command in COMMANDS:
        text = runner.invoke(cli, [command, "--help"], terminal_width=200).stdout
        lines, current = [], ""
        for raw in text.split("Examples:")[1].split("Options:")[0].splitlines():
            line = raw.strip()
            if not line:
                continue
            current = f"{current} {line}".strip()
            if current.endswith("\\"):
                current = current[:-1].strip()
                continue
            lines.append(current)
            current = ""
        found += [(command, cmd) for cmd in lines]
    return found


EXAMPLES = _examples()


def test_every_command_has_examples():
    assert {c for c, _ in EXAMPLES} == set(COMMANDS)


@pytest.mark.parametrize("command, example", EXAMPLES, ids=[e for _, e in EXAMPLES])
def test_help_example_runs(command, example, tmp_path, monkeypatch):
    shutil.copytree(ROOT / "demo", tmp_path / "demo")
    monkeypatch.chdir(tmp_path)
    args = shlex.split(example)
    assert args[0] == "sensitivity" and args[1] == command
    res = CliRunner().invoke(cli, args[1:])
    assert res.exit_code == 0, res.stderr
