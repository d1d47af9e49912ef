"""Grid ranges: typed ranges ('START:STOP:STEP') to exact grid values, and the default grids.

Grid values come from integer steps, so a value typed as 0.7 is 0.7 on the grid. The
defaults are scaled to the estimate at hand (its distance from the target, its E-value or
its robustness value).
"""

from __future__ import annotations

import numpy as np

from ..common.checks import require_scalar
from ..common.errors import InputError
from ..common.scales import RATIO_SCALES

#: The largest grid computed (cells = product of the axis lengths): about 40 MB per column.
MAX_CELLS = 5_000_000


def _decimals(x: float) -> int | None:
    """Decimal places of `x` as typed (its shortest repr), or None when it has too many."""
    text = repr(float(x)).lower()
    mantissa, _, exponent = text.partition("e")
    places = len(mantissa.partition(".")[2].rstrip("0")) - int(exponent or 0)
    return max(places, 0) if places <= 15 else None


def value_range(
    start: float, stop: float | None = None, step: float | None = None, name: str = "range"
) -> np.ndarray:
    """Grid values START, START+STEP, ... up to STOP (included when the steps reach it).

    A single value when only `start` is given. Refuses an empty or backwards range, a step
    that is not positive, and a range of more than `MAX_CELLS` values.

    Notes
    -----
    Values come from integer steps: when START and STEP have few decimals the i-th value is
    ``(S + i * P) / 10**k`` in exact integers (S, P the scaled START and STEP), so that
    ``0.7 - 0.2`` style fuzz never moves a grid value off the number typed.

    Examples
    --------
    >>> value_range(0, 1, 0.25).tolist()
    [0.0, 0.25, 0.5, 0.75, 1.0]
    >>> value_range(1, 2, 0.3).tolist()
    [1.0, 1.3, 1.6, 1.9]
    """
    start = float(require_scalar(start, name))
    if stop is None and step is None:
        return np.array([start])
    stop = float(require_scalar(stop, name))
    step = float(require_scalar(step, name))
    if step <= 0:
        raise InputError(f"`{name}` step must be positive; got {step:g}", name)
    if stop < start:
        raise InputError(
            f"`{name}` is backwards or empty: stop {stop:g} is below start {start:g}", name
        )
    with np.errstate(over="ignore"):
        span = (stop - start) / step
    if not np.isfinite(span) or span >= MAX_CELLS:
        raise InputError(
            f"`{name}` has more than {MAX_CELLS:,} values ({start:g} to {stop:g} by {step:g}); "
            f"the grid limit is {MAX_CELLS:,} cells",
            name,
        )
    places = [_decimals(start), _decimals(step), _decimals(stop)]
    k = None if None in places else max(p for p in places if p is not None)
    if k is not None and max(abs(start), abs(stop)) * 10.0**k < 2.0**52:
        scale = 10**k
        first, inc, last = (round(v * scale) for v in (start, step, stop))
        count = (last - first) // inc + 1
        return (first + inc * np.arange(count, dtype=np.int64)) / scale
    count = int(np.floor(span * (1 + 1e-12) + 1e-9)) + 1
    return start + step * np.arange(count)


def parse_range(text: str, name: str) -> np.ndarray:
    """'START:STOP:STEP' or a single number, as grid values (used by the CLI)."""
    parts = str(text).split(":")
    if len(parts) not in (1, 3):
        raise InputError(f"`{name}` must be a number or START:STOP:STEP; got {text!r}", name)
    try:
        numbers = [float(p) for p in parts]
    except ValueError:
        raise InputError(
            f"`{name}` must be a number or START:STOP:STEP; got {text!r}", name
        ) from None
    if len(numbers) == 1:
        return value_range(numbers[0], name=name)
    return value_range(numbers[0], numbers[1], numbers[2], name=name)


def _nice(x: float) -> float:
    """The smallest of 1, 2, 2.5, 5 times a power of ten that is at least `x`."""
    if x <= 0 or not np.isfinite(x):
        return 1.0
    power = 10.0 ** np.floor(np.log10(x))
    for m in (1, 2, 2.5, 5, 10):
        if m * power >= x * (1 - 1e-12):
            return float(m * power)
    return float(10 * power)  # pragma: no cover


def default_ranges(
    kind: str,
    *,
    estimate: float | None = None,
    target: float | None = None,
    scale: str | None = None,
    evalue: float | None = None,
    robustness_value: float | None = None,
) -> dict:
    """Grids used when a parameter is not given, scaled to the estimate at hand.

    binary: prevalences 0 to 1 by 0.05; a ratio effect 1 to 6 by 0.25; a difference effect
    0 to about twice the distance of the estimate from the target, in 20 steps.
    bounding: both risk ratios from 1 to about 1.5 times the E-value (at least 3).
    partial-r2: both partial R² from 0 to about twice the robustness value (0.1 to 0.95).
    """
    if kind == "binary":
        if scale in RATIO_SCALES or estimate is None or target is None:
            effect = value_range(1, 6, 0.25)
        else:
            top = _nice(2 * abs(estimate - target)) if estimate != target else 1.0
            effect = value_range(0, top, top / 20)
        prev = value_range(0, 1, 0.05)
        return {"prevalence_treated": prev, "prevalence_control": prev, "outcome_effect": effect}
    if kind == "continuous":
        if scale in RATIO_SCALES or estimate is None or target is None:
            effect = value_range(1, 4, 0.1)
        else:
            top = _nice(2 * abs(estimate - target)) if estimate != target else 1.0
            effect = value_range(0, top, top / 20)
        return {"difference": value_range(0, 2, 0.1), "outcome_effect": effect}
    if kind == "bounding":
        top = max(3.0, float(np.ceil(1.5 * (evalue or 1.0))))
        step = _nice((top - 1) / 40)
        rr = value_range(1, top, step)
        return {"rr_treatment": rr, "rr_outcome": rr}
    top = min(0.95, max(0.1, _nice(2 * (robustness_value or 0.0))))
    r2 = value_range(0, top, _nice(top / 50))
    return {"r2_treatment": r2[r2 < 1], "r2_outcome": r2[r2 < 1]}
