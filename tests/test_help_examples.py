"""Every example printed by `--help` runs as printed (from a folder holding the demo data)."""

import shlex
import shutil

import pytest
from click.testing import CliRunner
from conftest import ROOT, help_examples

from cli import cli
from sensitivity.commands import COMMANDS


def _examples():
    return [(command, line) for command in COMMANDS for line in help_examples(command)]


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
