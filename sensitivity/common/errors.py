"""The one exception the command line turns into a usage error, and the package's warning."""

from __future__ import annotations


class InputError(ValueError):
    """Input that breaks one of our rules: the CLI prints its message and exits 2."""


class InputTypeError(InputError, TypeError):
    """Input of the wrong type (a string where a number belongs): also exit 2."""


class SensitivityWarning(UserWarning):
    """Legal input whose result needs a caveat (robust standard errors, a capped bound, ...)."""


_CONTROLS = {i: None for i in (*range(32), *range(0x7F, 0xA0))} | {9: " ", 10: " ", 13: " "}


def one_line(message: object) -> str:
    """A message as one line with nothing a terminal acts on: a column name or a label in it
    may hold a bell, an escape sequence or a newline (issue 19). Control characters are
    dropped, tabs and line breaks become spaces, runs of spaces one."""
    return " ".join(str(message).translate(_CONTROLS).split())
