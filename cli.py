"""The `sensitivity` command line's root: the group, its error handling and `main()`.

Commands live in `sensitivity/commands/`, one a file, and are imported only when run, so a
one-number command loads numpy and click and nothing costly. Only our own `InputError` (and
click's usage errors) exit 2; any other exception is ours: exit 1, one line, with a
traceback only under `--debug`.
"""

from __future__ import annotations

import sys
from importlib import import_module

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
        except click.ClickException as err:
            click.echo(f"Error: {one_line(err.format_message())}", err=True)
            sys.exit(2)
        except InputError as err:
            if debug:
                raise
            click.echo(f"Error: {one_line(str(err))}", err=True)
            sys.exit(2)
        except OSError as err:
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
