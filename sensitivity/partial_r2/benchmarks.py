"""A benchmark as users write it: a covariate with its multiples in one value.

``"smoker"`` (a confounder of smoker's strength on both sides), ``"smoker:2"`` (twice its
strength on both), ``"smoker:1:3"`` (its strength with the treatment, three times it with
the outcome). From Python a tuple does the same: ``("smoker", 2)``, ``("smoker", 1, 3)``.
"""

from __future__ import annotations

from collections.abc import Iterable

from ..common.errors import InputError

BENCHMARK_HELP = (
    "COLUMN[:MULTIPLE[:MULTIPLE_OUTCOME]]: a measured covariate, and how many times its "
    "strength the confounder has (both sides, or treatment then outcome; default 1)"
)


def _number(text: str) -> float | None:
    try:
        value = float(text)
    except ValueError:
        return None
    return value


def benchmark_spec(value: object, argument: str = "benchmark") -> tuple[str, float, float]:
    """(covariate, multiple with the treatment, multiple with the outcome) from one value.

    Multiples are read from the right of the last colons, so a formula term holding a colon
    (an interaction ``a:b``) stays a name.

    >>> benchmark_spec("smoker"), benchmark_spec("smoker:2"), benchmark_spec("age:1:3")
    (('smoker', 1.0, 1.0), ('smoker', 2.0, 2.0), ('age', 1.0, 3.0))
    >>> benchmark_spec(("C(shift)", 2))
    ('C(shift)', 2.0, 2.0)
    """
    if isinstance(value, (tuple, list)):
        if not 1 <= len(value) <= 3 or not isinstance(value[0], str):
            raise InputError(
                f"`{argument}` must be a name, (name, multiple) or (name, multiple with the "
                f"treatment, multiple with the outcome); got {value!r}",
                argument,
            )
        name, numbers = value[0], [float(v) for v in value[1:]]
    elif isinstance(value, str):
        parts = value.split(":")
        numbers = []
        while len(parts) > 1 and len(numbers) < 2 and (n := _number(parts[-1])) is not None:
            numbers.insert(0, n)
            parts.pop()
        name = ":".join(parts)
    else:
        raise InputError(f"`{argument}` must be a covariate name; got {value!r}", argument)
    if not name.strip():
        raise InputError(f"`{argument}` names no covariate; got {value!r}", argument)
    if len(numbers) == 0:
        numbers = [1.0]
    kt, ky = (numbers[0], numbers[0]) if len(numbers) == 1 else (numbers[0], numbers[1])
    for k in (kt, ky):
        if not k > 0 or k != k or k == float("inf"):
            raise InputError(
                f"`{argument}` {value!r}: a multiple must be a positive finite number; got {k:g}",
                argument,
            )
    return name.strip(), float(kt), float(ky)


def benchmark_specs(values: Iterable[object], argument: str = "benchmark"
                    ) -> list[tuple[str, float, float]]:  # fmt: skip
    """`benchmark_spec` over several values (a single string, or a single (name, multiple,
    ...) tuple, counts as one)."""
    if isinstance(values, str) or (
        isinstance(values, tuple) and values and isinstance(values[0], str)
        and len(values) > 1 and not any(isinstance(v, str) for v in values[1:])
    ):  # fmt: skip
        values = [values]
    return [benchmark_spec(v, argument) for v in values]
