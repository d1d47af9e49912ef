"""Input rules shared by every public entry point.

Each rule is data (a message and a vectorised test for bad entries), so that the same rule
raises at a single-result boundary and flags rows in batch work without being written twice.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Rule:
    """A condition on an array, stated as the text that follows the argument's name."""

    text: str
    bad: Callable[[np.ndarray], np.ndarray]


FINITE = Rule("must be a finite number", lambda x: ~np.isfinite(x))
POSITIVE = Rule("must be positive", lambda x: ~(x > 0))
PROBABILITY = Rule("must lie in [0, 1]", lambda x: ~((x >= 0) & (x <= 1)))
OPEN_UNIT = Rule("must lie strictly between 0 and 1", lambda x: ~((x > 0) & (x < 1)))
R2_STRENGTH = Rule("must lie in [0, 1)", lambda x: ~((x >= 0) & (x < 1)))


def _show(value: float) -> str:
    return f"{value:g}" if np.isfinite(value) else str(value)


def as_array(value, name: str) -> np.ndarray:
    """`value` as a float array (0-d for a scalar); TypeError names `name` if not numeric."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise TypeError(f"`{name}` must be numeric; got {value!r}") from None
    return arr


def require(value, name: str, *rules: Rule) -> np.ndarray:
    """Standardise `value` and raise ValueError naming `name` and the first rule it breaks."""
    arr = as_array(value, name)
    for rule in (FINITE, *rules):
        bad = rule.bad(arr)
        if np.any(bad):
            first = arr[bad].flat[0] if arr.ndim else float(arr)
            raise ValueError(f"`{name}` {rule.text}; got {_show(first)}")
    return arr


def require_choice(value: str, name: str, choices) -> str:
    if value not in choices:
        raise ValueError(f"`{name}` must be one of {', '.join(choices)}; got {value!r}")
    return value
