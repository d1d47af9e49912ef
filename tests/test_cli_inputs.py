"""Issue 19: every numeric option of every command refuses nan and inf naming the option as
typed; a single-value option given twice is refused; a mistyped command gets a suggestion;
library messages name the option as typed."""

from __future__ import annotations

from importlib import import_module

import click
import pytest
from click.testing import CliRunner
from conftest import ROOT, first_example
from hypothesis import given, settings
from hypothesis import strategies as st

from cli import cli
from sensitivity.commands import COMMANDS

FIRST = {name: first_example(name) for name in COMMANDS}


def _numeric_options():
    out = []
    for name, (module, _) in COMMANDS.items():
        command = import_module(f"sensitivity.commands.{module}").command
        for param in command.params:
            if not isinstance(param, click.Option) or param.is_flag:
                continue
            kind = getattr(param.type, "name", "")
            types = getattr(param.type, "types", None)
            if kind in ("float", "number") or (types and any(
                    getattr(t, "name", "") in ("float", "number") for t in types)):  # fmt: skip
                opt = [o for o in param.opts if o.startswith("--")][0]
                out.append((name, opt, param.nargs))
    return out


NUMERIC = _numeric_options()


def _invoke(args):
    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)


def _with(args, option, values):
    """`args` with `option` set to `values` (replacing its values where present)."""
    args = list(args)
    if option in args:
        i = args.index(option)
        return args[: i + 1] + list(values) + args[i + 1 + len(values) :]
    return args + [option, *values]


def test_every_command_has_numeric_options_checked():
    assert {c for c, _, _ in NUMERIC} >= {"evalue", "impact", "stability", "matched", "simulate"}


@pytest.mark.parametrize("command, option, nargs", NUMERIC, ids=[f"{c} {o}" for c, o, _ in NUMERIC])
@pytest.mark.parametrize("bad", ["nan", "inf", "-inf", "Infinity"])
def test_a_non_finite_number_is_refused_naming_the_option(command, option, nargs, bad,
                                                          monkeypatch):  # fmt: skip
    monkeypatch.chdir(ROOT)
    res = _invoke(_with(FIRST[command], option, [bad] * nargs))
    assert res.exit_code == 2, res.stderr
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and option in lines[0] and "finite" in lines[0], res.stderr


def _single_options(command):
    mod = import_module(f"sensitivity.commands.{COMMANDS[command][0]}").command
    return [
        p for p in mod.params
        if isinstance(p, click.Option) and not p.multiple and not p.count and not p.is_flag
        and any(o in FIRST[command] for o in p.opts)
    ]  # fmt: skip


REPEATS = [(c, p.opts[-1] if p.opts[-1] in FIRST[c] else p.opts[0])
           for c in COMMANDS for p in _single_options(c)]  # fmt: skip


@pytest.mark.parametrize("command, option", REPEATS, ids=[f"{c} {o}" for c, o in REPEATS])
def test_a_single_value_option_given_twice_is_refused(command, option, monkeypatch):
    monkeypatch.chdir(ROOT)
    args = FIRST[command]
    i = next(k for k, a in enumerate(args) if a == option)
    cmd = import_module(f"sensitivity.commands.{COMMANDS[command][0]}").command
    nargs = next(p.nargs for p in cmd.params if option in p.opts)
    res = _invoke([*args, *args[i : i + 1 + nargs]])
    assert res.exit_code == 2
    assert "was given more than once; give it once" in res.stderr


def test_the_issue_example_of_a_repeat():
    res = _invoke(["evalue", "or", "2", "--outcome-frequency", "rare",
                   "--outcome-frequency=common"])  # fmt: skip
    assert res.exit_code == 2
    assert "Error: --outcome-frequency was given more than once" in res.stderr


@settings(max_examples=40, deadline=None)
@given(st.sampled_from(sorted(COMMANDS)), st.data())
def test_a_mistyped_command_gets_the_nearest_one(name, data):
    i = data.draw(st.integers(0, len(name) - 1))
    typo = name[:i] + name[i + 1 :]
    if typo in COMMANDS or not typo or typo.startswith("-"):
        return
    res = _invoke([typo])
    assert res.exit_code == 2
    assert f"No such command {typo!r}." in res.stderr
    assert "Did you mean" in res.stderr


def test_the_mistyped_evalue():
    res = _invoke(["evalu"])
    assert "Did you mean 'evalue'?" in res.stderr


@pytest.mark.parametrize(
    "args, expected",
    [
        (
            ["evalue", "--scale", "rr", "--estimate", "2", "--ci", "1.5", "3", "--ci-level", "1.5"],
            "`--ci-level` must",
        ),
        (["evalue", "--scale", "rr", "--estimate", "2", "--ci", "3", "1.5"], "`--ci` lower limit"),
        (["impact", "--t", "3", "--dof", "100", "--alpha", "2"], "`--alpha` must lie"),
    ],
)
def test_library_messages_name_the_option_as_typed(args, expected):
    res = _invoke(args)
    assert res.exit_code == 2 and expected in res.stderr, res.stderr
