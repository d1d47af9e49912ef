"""The one exception the command line turns into a usage error, and the package's warning."""

from __future__ import annotations


class InputError(ValueError):
    """Input that breaks one of our rules: the CLI prints its message and exits 2."""


class InputTypeError(InputError, TypeError):
    """Input of the wrong type (a string where a number belongs): also exit 2."""


class SensitivityWarning(UserWarning):
    """Legal input whose result needs a caveat (robust standard errors, a capped bound, ...)."""
