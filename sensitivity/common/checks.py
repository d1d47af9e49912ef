"""Input rules as data, applied both ways.

A rule is a message and a vectorised test for bad entries. `require` raises `InputError` for
a single result at a public boundary; `flags` gives a reason per row for a batch, from the
same rules, so that a screen computes the good rows and names the problem in the bad ones.
Cross-field rules (an interval's order, an estimate inside its interval) are rules too.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from .errors import InputError, InputTypeError


@dataclass(frozen=True)
class Rule:
    """A condition on one array, stated as the text that follows the argument's name."""

    text: str
    bad: Callable[[np.ndarray], np.ndarray]


FINITE = Rule("must be a finite number", lambda x: ~np.isfinite(x))
POSITIVE = Rule("must be positive", lambda x: ~(x > 0))
AT_LEAST_ONE = Rule("must be at least 1", lambda x: ~(x >= 1))
PROBABILITY = Rule("must lie in [0, 1]", lambda x: ~((x >= 0) & (x <= 1)))
OPEN_UNIT = Rule("must lie strictly between 0 and 1", lambda x: ~((x > 0) & (x < 1)))
R2_STRENGTH = Rule("must lie in [0, 1)", lambda x: ~((x >= 0) & (x < 1)))
DOF = Rule("must be at least 2", lambda x: ~(x >= 2))


def show(value: float) -> str:
    """A number as a message shows it: short, and exact enough to find in the input."""
    value = float(value)
    return f"{value:g}" if np.isfinite(value) else str(value)


@dataclass(frozen=True)
class Check:
    """A rule over one or more named fields.

    `bad` takes the fields' arrays (broadcast together) and returns a mask of bad entries;
    `message` takes one bad entry's values and returns the text naming the fields and rule.
    `kind` is the rule in words without any row's values, so that a batch can count rows
    flagged for the same rule together; empty when the message names no value (the message
    is then its own kind).
    """

    fields: tuple[str, ...]
    bad: Callable[..., np.ndarray]
    message: Callable[..., str]
    kind: str = ""
    rule: Rule | None = None  # a one-field rule, so a caller may name the field its own way
    names: tuple[str, ...] = ()  # the arguments the message names (default: the first field)

    def error(self, values: Sequence[object], called: Mapping[str, str]) -> InputError:
        """The InputError for one bad entry, naming the field as the caller knows it
        (`called`: field -> argument, a single result's `lower` being its `ci`)."""
        name = self.fields[0]
        if self.rule is None or name not in called:
            return InputError(self.message(*values), self.names or (name,))
        text = f"`{called[name]}` {self.rule.text}; got {show(float(values[0]))}"  # type: ignore[arg-type]
        return InputError(text, called[name])


def field(
    name: str,
    rule: Rule,
    where: Callable[..., np.ndarray] | None = None,
    also: tuple[str, ...] = (),
) -> Check:
    """The check `name` `rule` ("`se` must be positive; got -0.2").

    With `where`, the rule applies only to rows where ``where(*also_arrays)`` holds (a ratio
    scale's positivity, say); `also` names the fields `where` reads.
    """
    kind = f"`{name}` {rule.text}"
    if where is None:
        return Check((name,), rule.bad, lambda v: f"{kind}; got {show(v)}", kind, rule)
    return Check(
        (name, *also),
        lambda v, *rest: np.asarray(where(*rest), bool) & rule.bad(v),
        lambda v, *rest: f"{kind}; got {show(v)}",
        kind,
        rule,
    )


def given(x: np.ndarray) -> np.ndarray:
    """Entries that were supplied: not NaN (numbers) and not None or "" (text)."""
    x = np.asarray(x)
    if x.dtype.kind == "f":
        return ~np.isnan(x)
    if x.dtype.kind == "U":
        return x != ""
    if x.dtype.kind == "O":
        return np.vectorize(lambda v: v is not None and v == v and v != "", otypes=[bool])(x)
    return np.ones(x.shape, bool)


def interval_order(lower: str = "lower", upper: str = "upper", label: str = "ci") -> Check:
    """The interval's lower limit does not exceed its upper limit."""
    return Check(
        (lower, upper),
        lambda lo, up: lo > up,
        lambda lo, up: (
            f"`{label}` lower limit must not exceed the upper; got {show(lo)} > {show(up)}"
        ),
        f"`{label}` lower limit must not exceed the upper",
        names=(label,),
    )


def inside_interval(
    estimate: str = "estimate", lower: str = "lower", upper: str = "upper", label: str = "ci"
) -> Check:
    """The estimate lies within its interval."""
    return Check(
        (estimate, lower, upper),
        lambda e, lo, up: (e < lo) | (e > up),
        lambda e, lo, up: (
            f"`{estimate}` must lie within `{label}`; got {show(e)} outside "
            f"[{show(lo)}, {show(up)}]"
        ),
        f"`{estimate}` must lie within `{label}`",
        names=(estimate, label),
    )


def as_array(value: object, name: str) -> np.ndarray:
    """`value` as a float array (0-d for a scalar); InputTypeError names `name` if not numeric
    (true/false is not a number, though numpy would read it as 1 or 0)."""
    if isinstance(value, (bool, np.bool_)) or getattr(getattr(value, "dtype", None), "kind",
                                                      None) == "b":  # fmt: skip
        shown = repr(value) if len(repr(value)) <= 60 else repr(value)[:57] + "..."
        raise InputTypeError(f"`{name}` must be numeric; got {shown}", name)
    try:
        return np.asarray(value, dtype=float)
    except OverflowError:  # an int beyond the float range (10**400)
        raise InputError(
            f"`{name}` must be a finite number; got one beyond 1.8e308", name
        ) from None
    except (TypeError, ValueError, ArithmeticError):  # also pd.NA, Decimal('sNaN')
        shown = repr(value) if len(repr(value)) <= 60 else repr(value)[:57] + "..."
        raise InputTypeError(f"`{name}` must be numeric; got {shown}", name) from None


def require_numbers(value: object, name: str) -> np.ndarray:
    """`value` as a float array in which NaN stands for a missing entry (batch helpers);
    InputError for what is not a number at all."""
    return as_array(value, name)


def require(value: object, name: str, *rules: Rule) -> np.ndarray:
    """Standardise `value` and raise InputError naming `name` and the first rule it breaks."""
    arr = as_array(value, name)
    for rule in (FINITE, *rules):
        bad = rule.bad(arr)
        if np.any(bad):
            first = arr[bad].flat[0] if arr.ndim else float(arr)
            raise InputError(f"`{name}` {rule.text}; got {show(first)}", name)
    return arr


def require_scalar(value: object, name: str, *rules: Rule) -> float:
    """`require` for one number: InputError when `value` holds none or several."""
    arr = require(value, name, *rules)
    if arr.size != 1:
        raise InputError(f"`{name}` must be a single number; got {arr.size} values", name)
    return float(arr.reshape(-1)[0])


def require_seed(value: object, name: str = "seed") -> int | None:
    """A random seed: None, or a whole number from 0 to 2^63 - 1 (numpy refuses the rest)."""
    if value is None:
        return None
    v = require_scalar(value, name)
    if v < 0 or v != int(v) or v >= 2**63:
        raise InputError(f"`{name}` must be a whole number from 0 to 2^63 - 1; got {v:g}", name)
    return int(v)


def check_pair(value: object, name: str = "ci") -> tuple[object, object] | None:
    """A (lower, upper) pair as given, or None; InputError for anything else (a number, a
    string, a one-element or three-element sequence)."""
    if value is None:
        return None
    if isinstance(value, (str, bytes)) or not hasattr(value, "__len__"):
        raise InputTypeError(f"`{name}` must be a pair (lower, upper); got {value!r}", name)
    if len(value) != 2:  # type: ignore[arg-type]
        raise InputError(f"`{name}` must be a pair (lower, upper); got {len(value)} values", name)  # type: ignore[arg-type]
    return value[0], value[1]  # type: ignore[index]


def require_all(
    values: Mapping[str, np.ndarray],
    checks: Iterable[Check],
    called: Mapping[str, str] | None = None,
) -> None:
    """Raise InputError for the first entry that breaks any of `checks` (single results).

    `called` names fields as the caller's argument knows them (a single result's `lower` and
    `upper` are its `ci`)."""
    for check in checks:
        arrays = [np.asarray(values[f]) for f in check.fields]
        shape = np.broadcast_shapes(*(a.shape for a in arrays))
        with np.errstate(invalid="ignore"):
            bad = np.broadcast_to(check.bad(*arrays), shape)
        if np.any(bad):
            i = np.flatnonzero(bad)[0]
            picked = [np.broadcast_to(a, shape).flat[i] for a in arrays]
            raise check.error(picked, called or {})


def flags(
    values: Mapping[str, np.ndarray],
    checks: Sequence[Check],
    n: int,
    reasons: np.ndarray | None = None,
) -> np.ndarray:
    """A reason per row ("" for a good row) from `checks`; the first broken check names it.

    Rows already flagged in `reasons` keep their reason. Entries that are NaN count as
    missing and are left to the checks that ask for them (a NaN is never "good" silently:
    `FINITE` flags it where a field is required).
    """
    return flag_kinds(values, checks, n, reasons)[0]


def flag_kinds(
    values: Mapping[str, np.ndarray],
    checks: Sequence[Check],
    n: int,
    reasons: np.ndarray | None = None,
    kinds: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """`flags`, with each flagged row's `Check.kind` beside its reason (rows already flagged
    keep theirs, from `kinds`)."""
    out = np.full(n, "", dtype=object) if reasons is None else reasons.copy()
    kind = np.full(n, "", dtype=object) if kinds is None else kinds.copy()
    flagged = np.zeros(n, bool) if reasons is None else out != ""
    for check in checks:
        arrays = [np.broadcast_to(np.asarray(values[f]), (n,)) for f in check.fields]
        with np.errstate(invalid="ignore"):
            bad = np.asarray(check.bad(*arrays), bool) & ~flagged
        for i in np.flatnonzero(bad):
            out[i] = check.message(*(a[i] for a in arrays))
            kind[i] = check.kind or out[i]
        flagged |= bad
    return out, kind


def require_choice(value: str, name: str, choices: Sequence[str]) -> str:
    """`value` if it is one of `choices`; otherwise InputError listing them."""
    if value not in choices:
        raise InputError(f"`{name}` must be one of {', '.join(choices)}; got {value!r}", name)
    return value


def choice_flags(values: np.ndarray, name: str, choices: Sequence[str]) -> np.ndarray:
    """Per-row reasons for entries of `values` that are not among `choices`."""
    values = np.asarray(values, dtype=object)
    ok = np.isin(values, np.asarray(list(choices), dtype=object))
    out = np.full(values.shape, "", dtype=object)
    for i in np.flatnonzero(~ok):
        out[i] = f"`{name}` must be one of {', '.join(choices)}; got {values[i]!r}"
    return out
