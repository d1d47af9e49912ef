"""The `sensitivity` command line's root: the group, its error handling and `main()`.

Commands live in `sensitivity/commands/`, one a file, and are imported only when run, so a
one-number command loads numpy and click and nothing costly. Only our own `InputError` (and
click's usage errors) exit 2; any other exception is ours: exit 1, one line, with a
traceback only under `--debug`.
"""

from __future__ import annotations

import errno
import re
import sys
from importlib import import_module
from typing import Any

import click

from sensitivity.commands import COMMANDS


class _Cli(click.Group):
    """A group whose errors are one line on stderr: 2 for the user's input, 1 for ours."""

    def list_commands(self, ctx: click.Context) -> list[str]:
        return list(COMMANDS)

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        if name not in COMMANDS:
            return None
        return import_module(f"sensitivity.commands.{COMMANDS[name][0]}").command

    def resolve_command(self, ctx: click.Context, args: list[str]) -> tuple:
        name = args[0] if args else ""
        if name and name not in COMMANDS and not name.startswith("-"):
            from difflib import get_close_matches

            near = get_close_matches(name, list(COMMANDS), n=1, cutoff=0.5)
            hint = f" Did you mean {near[0]!r}?" if near else ""
            raise click.UsageError(
                f"No such command {name!r}.{hint} Commands: {', '.join(COMMANDS)}.", ctx
            )
        return super().resolve_command(ctx, args)

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        # Short help from the table, so `--help` imports no command module.
        rows = [(name, help_text) for name, (_, help_text) in COMMANDS.items()]
        with formatter.section("Commands"):
            formatter.write_dl(rows)

    def main(self, args=None, prog_name=None, **extra):  # type: ignore[override]
        from sensitivity.common.errors import InputError, one_line

        args = list(sys.argv[1:] if args is None else args)
        debug = "--debug" in args
        if sys.stdout is None:  # started with stdout closed (`>&-`): a result cannot be shown
            sys.stdout = _closed_stdout()
        from sensitivity.commands import _options

        _options.INVOCATION[:] = [a for a in args if a != "--debug"]
        extra.pop("standalone_mode", None)
        try:
            super().main(
                args=args, prog_name=prog_name or "sensitivity", standalone_mode=False, **extra
            )
        except click.exceptions.Exit as stop:
            sys.exit(stop.exit_code)
        except click.Abort:
            click.echo("Error: aborted", err=True)
            sys.exit(1)
        except click.exceptions.NoArgsIsHelpError as err:
            # `sensitivity` alone: the help, as --help shows it (it was squeezed into one
            # 1,200-character error line)
            click.echo(err.ctx.get_help() if err.ctx is not None else err.format_message())
            sys.exit(0)
        except click.ClickException as err:
            click.echo(f"Error: {one_line(number_hint(err.format_message()))}", err=True)
            sys.exit(2)
        except InputError as err:
            if debug:
                raise
            click.echo(f"Error: {one_line(str(err))}", err=True)
            sys.exit(2)
        except OSError as err:
            if err.errno == errno.EPIPE:  # the reader of stdout left (`| head`)
                _stop_writing_stdout()
            if debug:
                raise
            text = f"{err.strerror or err}: {err.filename or ''}".rstrip(": ")
            click.echo(f"Error: {one_line(text)}", err=True)
            sys.exit(1)
        except Exception as err:  # noqa: BLE001 - the contract: no traceback without --debug
            if debug:
                raise
            text = one_line(str(err))[:300]
            click.echo(
                f"Error: internal error ({type(err).__name__}: {text}); rerun with --debug",
                err=True,
            )
            sys.exit(1)
        sys.exit(0)


_NOT_A_NUMBER = re.compile(r"'(?P<value>[^']*)' is not a (?:valid float|number)\.?$")
_NUM = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)"
#: How a number is often mistyped, and the hint that says how to write it.
NUMBER_HINTS = (
    (re.compile(r"^[-+]?\d+,\d+$"), "a decimal comma? write {point}"),
    (re.compile(rf"^{_NUM}\s*%$"), "a percent sign? as a share, write {share}"),
    (re.compile(rf"^{_NUM}\s*(?:-|–|—|to|,|;)\s*{_NUM}$"),
     "two numbers in one? give them apart, as --ci 1.12 1.70 does"),
    (re.compile(r"^--?[A-Za-z]"),
     "{option} takes more values than were given: it read the next option as one"),
)  # fmt: skip
_OPTION = re.compile(r"^Invalid value for '(?P<option>[^']+)'")


def number_hint(message: str) -> str:
    """`message` with a hint where click could not read a number that a user often types
    another way: a decimal comma, a percent sign, a range or an option where a value was due
    (tests/test_words.py)."""
    found = _NOT_A_NUMBER.search(message)
    if found is None:
        return message
    named = _OPTION.search(message)
    value = found["value"].strip()
    words = {
        "option": named["option"] if named else "the option",
        "point": value.replace(",", "."),
        "share": f"{float(value.rstrip('% ')) / 100:g}" if value.endswith("%") else "",
    }
    for pattern, hint in NUMBER_HINTS:
        if pattern.search(value):
            return f"{message.rstrip('.')} ({hint.format(**words)})."
    return message


def _stop_writing_stdout() -> None:
    """Exit 1, quietly, when the reader of stdout has gone (a closed pipe: `| head`).

    As a Unix filter does: nothing on stderr (the reader chose to stop), and a failure status,
    since the whole result was not delivered (a shell with `pipefail` can tell). 1 is
    CONTRACT's code for a failure that is not the user's input, and what Python's own
    documentation gives for EPIPE; click exits so on the same error. Anything still buffered
    for stdout goes to the null device, so the interpreter's last flush raises nothing.
    Temporary files are removed before this, by the writers' own cleanup as the error passes.
    """
    import os

    try:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass
    sys.exit(1)


def _closed_stdout() -> Any:
    """A stdout for a process started without one: writing to it raises OSError (exit 1 with
    one line), where print() and click.echo would drop a result silently."""
    import io

    class Closed(io.RawIOBase):
        def writable(self) -> bool:
            return True

        def write(self, data: Any) -> int:
            raise OSError(errno.EBADF, "standard output is closed; give --output FILE")

    return io.TextIOWrapper(Closed(), encoding="utf-8", write_through=True)


@click.group(cls=_Cli, context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--debug", is_flag=True, help="Show tracebacks for internal errors.")
@click.version_option(package_name="sensitivity", prog_name="sensitivity")
def cli(debug: bool) -> None:
    """How strong would an unmeasured confounder have to be to explain an estimate away?

    Run `sensitivity COMMAND --help` for each command's options.
    """


def main() -> None:
    """Console entry point."""
    cli.main(prog_name="sensitivity")


if __name__ == "__main__":
    main()
