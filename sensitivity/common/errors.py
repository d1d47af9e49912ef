"""The one exception the command line turns into a usage error, and the package's warning."""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence


class Argument(str):
    """A slot in a message where an argument is named: the Python name, as data."""


class InputError(ValueError):
    """Input that breaks one of our rules: the CLI prints its message and exits 2.

    `argument` names the Python argument (or arguments) the message is about, as data, and
    the message names each in backticks (`ci_level`). ``str(err)`` is the message as the
    library says it; `render` names each argument another way (the command line names the
    option as typed: `--ci-level`) without reading the message back. A message about a column
    or a row of a file names no argument: its backticked words are the file's, left as they
    are.

    >>> err = InputError("`ci_level` must lie strictly between 0 and 1; got 5", "ci_level")
    >>> err.argument, str(err)
    ('ci_level', '`ci_level` must lie strictly between 0 and 1; got 5')
    >>> err.render(lambda name: "`--" + name.replace("_", "-") + "`")
    '`--ci-level` must lie strictly between 0 and 1; got 5'
    """

    def __init__(self, message: str = "", argument: str | Sequence[str] | None = None) -> None:
        super().__init__(message)
        names = (argument,) if isinstance(argument, str) else tuple(argument or ())
        #: Every argument the message names, first the one it is about.
        self.arguments: tuple[str, ...] = names
        #: The message as text and `Argument` slots, built once from the names given here.
        self.parts: tuple[str, ...] = _parts(str(message), names)

    @property
    def argument(self) -> str | None:
        """The argument the message is about (None for a column, a row or a whole input)."""
        return self.arguments[0] if self.arguments else None

    def render(self, name: Callable[[str], str]) -> str:
        """The message with each argument's slot filled by ``name(argument)`` (which gives
        the whole phrase, backticks included)."""
        return "".join(name(str(p)) if isinstance(p, Argument) else p for p in self.parts)

    def renamed(self, names: Mapping[str, str]) -> InputError:
        """The same error where a caller knows an argument by another name (`names`: old ->
        new): the screen's `--pool` is the pooling's `threshold`."""
        new = type(self)(self.render(lambda a: f"`{names.get(a, a)}`"))
        new.arguments = tuple(names.get(a, a) for a in self.arguments)
        new.parts = tuple(
            Argument(names.get(p, p)) if isinstance(p, Argument) else p for p in self.parts
        )
        return new

    def __reduce__(self):  # keep the argument across processes
        return (type(self), (str(self), self.arguments))


def _parts(message: str, names: tuple[str, ...]) -> tuple[str, ...]:
    """`message` cut at every `name` of `names` (the slots), in order of appearance."""
    parts: list[str] = [message]
    for name in names:
        token = f"`{name}`"
        cut: list[str] = []
        for part in parts:
            if isinstance(part, Argument) or token not in part:
                cut.append(part)
                continue
            pieces = part.split(token)
            for i, piece in enumerate(pieces):
                if i:
                    cut.append(Argument(name))
                if piece:
                    cut.append(piece)
        parts = cut
    return tuple(parts)


class InputTypeError(InputError, TypeError):
    """Input of the wrong type (a string where a number belongs): also exit 2."""


class SensitivityWarning(UserWarning):
    """Legal input whose result needs a caveat (robust standard errors, a capped bound, ...)."""
