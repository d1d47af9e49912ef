"""The command line as the user typed it: each option's spelling, how a command names a
Python argument in a message (the option as typed, never re-reading the message), and the
checks on the typed line itself (an option given twice, a number that is not finite)."""

from __future__ import annotations

from collections.abc import Callable

import click

#: How a command names a Python argument: an option ("--lambda"), or one value of a
#: multi-value option (("--strength", 2): its second value).
Named = str | tuple[str, int]
_ORDINALS = ("first", "second", "third", "fourth")
#: Python arguments that shared options fill, in every command that has the option (and no
#: option of the argument's own name): a figure's `limits`, a `--confounder` pair's risk
#: ratios, the two sides of a `--benchmark-r2` NAME RT RY.
SHARED_NAMES: dict[str, Named] = {
    "limits": "--plot-limits",
    "marks": "--plot-mark",
    "rr_treatment": ("--confounder", 1),
    "rr_outcome": ("--confounder", 2),
    "benchmark_r2[1]": ("--benchmark-r2", 2),
    "benchmark_r2[2]": ("--benchmark-r2", 3),
}


def name_arguments(**names: Named) -> None:
    """Name Python arguments by options for the rest of the running command, where the name
    depends on the input: with --propensity-column, the library's `propensity` holds that
    column's values (``name_arguments(propensity="--propensity-column")``)."""
    ctx = click.get_current_context()
    ctx.meta.setdefault("names", {}).update(names)


def _option_name(param: click.Parameter) -> str:
    """The option as a user types it: the first long name (--ci), else the first."""
    names = [n for n in param.opts if n.startswith("--")] or list(param.opts)
    return names[0]


def _typed(command: click.Command, args: list[str]) -> dict[str, str]:
    """Each option the user gave, as they spelt it (`-o` or `--output`): param name -> text."""
    spelt: dict[str, click.Option] = {}
    for param in command.params:
        if isinstance(param, click.Option):
            for name in param.opts + param.secondary_opts:
                spelt[name] = param
    typed: dict[str, str] = {}
    for token in args:
        if token == "--":
            break
        name = token.split("=", 1)[0] if token.startswith("--") else token
        option = spelt.get(name)
        if option is not None and option.name:
            typed.setdefault(option.name, name)
    return typed


def namer(command: click.Command, ctx: click.Context) -> Callable[[str], str]:
    """How the command line names a Python argument in a message: the option as typed
    (`--ci-level`), one value of a multi-value option ("the second value of `--strength`"),
    any other (a positional argument, `file`) keeps its Python name."""
    typed = ctx.meta.get("typed") or {}
    options = [p for p in command.params if isinstance(p, click.Option)]
    by_option = {o: p for p in options for o in p.opts if o.startswith("--")}
    by_name = {p.name: p for p in options}
    names = {a: spec for a, spec in SHARED_NAMES.items()
             if (spec if isinstance(spec, str) else spec[0]) in by_option
             and "--" + a.replace("_", "-") not in by_option}  # fmt: skip
    names.update({**getattr(command, "names", {}), **ctx.meta.get("names", {})})

    def spelt(param: click.Parameter) -> str:
        return typed.get(param.name or "", _option_name(param))

    def name(argument: str) -> str:
        spec = names.get(argument)
        if spec is not None:
            option, place = (spec, 0) if isinstance(spec, str) else spec
            shown = f"`{spelt(by_option[option])}`"
            return f"the {_ORDINALS[place - 1]} value of {shown}" if place else shown
        param = by_option.get("--" + argument.replace("_", "-")) or by_name.get(argument)
        return f"`{spelt(param)}`" if param is not None else f"`{argument}`"

    return name


def _refuse_repeats(command: click.Command, args: list[str]) -> None:
    """A single-value option given twice is an error, not a silent last-one-wins."""
    options: dict[str, click.Option] = {}
    for param in command.params:
        if isinstance(param, click.Option):
            for name in param.opts + param.secondary_opts:
                options[name] = param
    seen: set[str] = set()
    skip = 0
    for token in args:
        if skip:
            skip -= 1
            continue
        if token == "--":
            break
        name, inline = token.split("=", 1)[0], "=" in token and token.startswith("--")
        option = options.get(name if inline else token)
        if option is None:
            continue
        skip = 0 if option.is_flag or option.count or inline else option.nargs
        if option.multiple or option.count or option.name is None:
            continue
        if option.name in seen:
            raise click.UsageError(
                f"{name if inline else token} was given more than once; give it once"
            )
        seen.add(option.name)


def _refuse_non_finite(command: click.Command, ctx: click.Context) -> None:
    """Every number an option takes is finite: nan or inf is an error naming the option as
    typed (and which of its values, for an option of several). (Positional numbers are
    checked by the library, whose message names them.)"""
    import math

    typed = ctx.meta.get("typed") or {}
    for param in command.params:
        if not isinstance(param, click.Option):
            continue
        value = ctx.params.get(param.name) if param.name else None
        if value is None:
            continue
        groups = value if param.multiple else (value,)
        for group in groups:
            values = group if isinstance(group, (tuple, list)) else (group,)
            for place, v in enumerate(values):
                if isinstance(v, float) and not math.isfinite(v):
                    which = f" as its {_ORDINALS[place]} value" if param.nargs > 1 else ""
                    raise click.BadParameter(
                        f"must be a finite number; got {v}{which}",
                        ctx,
                        param,
                        param_hint=repr(typed.get(param.name, _option_name(param))),
                    )


#: Parameters that name files the command reads, and those it writes.
INPUT_PATHS = ("file", "data", "estimates")
OUTPUT_PATHS = ("outputs", "output", "flagged", "plots")


def _refuse_overwriting_inputs(command: click.Command, ctx: click.Context) -> None:
    """No output may replace a file the command reads (or land inside a dataset folder it
    reads): `screen results.csv -o results.csv` would lose the input and still succeed."""
    from pathlib import Path

    def paths(names: tuple[str, ...]) -> list[tuple[str, Path]]:
        found = []
        for param in command.params:
            value = ctx.params.get(param.name) if param.name in names else None
            for item in value if isinstance(value, (tuple, list)) else (value,):
                if item not in (None, "", "-"):
                    found.append((param.name, Path(str(item))))
        return found

    typed = ctx.meta.get("typed") or {}
    for out_name, out in paths(OUTPUT_PATHS):
        for in_name, source in paths(INPUT_PATHS):
            same = out.exists() and source.exists() and out.samefile(source)
            inside = source.is_dir() and out.resolve().is_relative_to(source.resolve())
            if same or inside or out.resolve() == source.resolve():
                option = next(p for p in command.params if p.name == out_name)
                spelt = typed.get(out_name) or _option_name(option)
                where = "inside the dataset folder" if inside and not same else "the input file"
                shown = "FILE" if in_name == "file" else f"--{in_name}"
                raise click.UsageError(
                    f"`{spelt}` {str(out)!r} is {where} given as {shown}; write to another file"
                )
