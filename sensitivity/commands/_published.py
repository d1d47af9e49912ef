"""The summary input shared by `evalue` and `report`: a result as published (TEXT) or by
name (--scale, --estimate, --ci, --ci-level), and the retired positional form."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import click

from ._options import _MARK, ci_option, exclusive

#: The scales a summary input names (`--scale`); rd needs `--counts` in `evalue`.
SUMMARY_SCALES = ("rr", "or", "hr", "smd", "md", "rd")


def published_options(func: Callable) -> Callable:
    """[TEXT] (a result as published) or --scale/--estimate/--ci/--ci-level (for scripts)."""
    func = click.option(
        "--ci-level",
        type=float,
        default=None,
        help="The interval's level: of --ci, or of a TEXT that names none (default 0.95; 0.9 "
        "for a 90% CI).",
    )(func)
    func = ci_option("Confidence limits on the same scale as --estimate.")(func)
    func = click.option(
        "--estimate", type=float, default=None, help="The estimate, by name (instead of TEXT)."
    )(func)
    func = click.option(
        "--scale",
        type=click.Choice(SUMMARY_SCALES, case_sensitive=False),
        default=None,
        help="rr, or, hr, smd, md (or rd with --counts in evalue); with TEXT, only where the "
        "text names no scale.",
    )(func)
    return click.argument("text", nargs=-1, metavar="[TEXT]")(func)


def retired_positional(command: str, words: tuple[str, ...]) -> None:
    """A one-line hint for the retired `COMMAND SCALE ESTIMATE` form; a TEXT split into
    several words is an error as well (it must be quoted)."""
    if not words:
        return
    head = words[0].removeprefix(_MARK).lower()
    if head == "rd":
        raise click.UsageError(
            f"the form `{command} rd` is retired: write `{command} --scale rd --counts A N1 C N0`"
        )
    if head in SUMMARY_SCALES and len(words) <= 2:
        value = words[1].removeprefix(_MARK) if len(words) == 2 else "1.38"
        raise click.UsageError(
            f"the form `{command} SCALE ESTIMATE` is retired: give the result as published, "
            f'`{command} "{head.upper()} {value} (95% CI ...)"`, or by name, `{command} '
            f"--scale {head} --estimate {value} [--ci LOWER UPPER]`"
        )
    if len(words) > 1:
        raise click.UsageError(
            f"TEXT is one argument: quote the published result, e.g. `{command} "
            f'"{" ".join(w.removeprefix(_MARK) for w in words)}"`'
        )


def summary_route(command: str, words: tuple[str, ...], scale: Any, estimate: Any,
                  ci: Any) -> tuple[str | None, str | None]:  # fmt: skip
    """Which summary input was given, "text" or "named" (None for neither), and the TEXT."""
    retired_positional(command, words)
    if words:
        exclusive(("TEXT", words[0]), ("--estimate", estimate))
        exclusive(("TEXT", words[0]), ("--ci", ci or None))
        return "text", words[0].removeprefix(_MARK)
    if estimate is not None or ci:
        if scale is None:
            raise click.UsageError("--estimate needs --scale (or give TEXT as published)")
        if estimate is None:
            raise click.UsageError("--ci needs --estimate (or give TEXT as published)")
        return "named", None
    return None, None
