"""Reaching the target, and the exact sets of the solved parameter that reach it.

The grid says, cell by cell, whether a bias-adjusted value reaches the target; the exact
set says, from the closed form, which values of the solved parameter do ("from a", "up to
b", "a to b", every value, or none). Both allow `TOLERANCE`, so they never disagree.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

#: A value within TOLERANCE x max(|observed - target|, |target|, tiny) of the target counts as
#: reaching it, on the grid and at the ends of the exact sets alike; without it, 0.7 - 0.2
#: falling 5e-17 short of 0.5 would put a tipping point one grid step late.
TOLERANCE = 1e-9

# Kinds of exact answer: the set of values of the solved parameter at which it is reached.
NEVER, ALWAYS, FROM, UP_TO, BETWEEN = 0, 1, 2, 3, 4  # the codes of result.KIND_NAMES


def slack_for(observed: float, target: float) -> float:
    """The tolerance within which a value moved from `observed` reaches `target`."""
    return TOLERANCE * max(abs(observed - target), abs(target), 1e-300)


def reaches(value: np.ndarray, target: float, side: int, slack: float) -> np.ndarray:
    """Whether `value` has reached the target coming from `side` (+1 above, -1 below)."""
    with np.errstate(invalid="ignore"):
        return side * (np.asarray(value) - target) <= slack


def _bisect(
    reached: Callable[[np.ndarray], np.ndarray], lo: np.ndarray, hi: np.ndarray
) -> np.ndarray:
    """The boundary between not reached (at `lo`) and reached (at `hi`), per cell.

    Bisects in asinh space, which treats 1e-6 and 1e300 alike; 200 halvings reach the
    precision of a double. Used where no closed form applies (or it is not finite).
    """
    a, b = np.arcsinh(lo), np.arcsinh(hi)
    for _ in range(200):
        m = (a + b) / 2
        hit = reached(np.sinh(m))
        a, b = np.where(hit, a, m), np.where(hit, m, b)
    return np.sinh((a + b) / 2)


def monotone_set(
    reached: Callable[[np.ndarray], np.ndarray],
    root: np.ndarray,
    lo: float,
    hi: float,
    shape: tuple[int, ...],
    probe_hi: float | None = None,
    probe_lo: float | None = None,
) -> dict[str, np.ndarray]:
    """The exact set of values of a parameter at which a monotone condition holds.

    `reached(x)` evaluates the condition (with the grid's tolerance) at x, an array over the
    other parameters; `root` is the closed-form crossing. The parameter runs over [lo, hi]
    (`probe_hi` is where an open or infinite upper end is evaluated). Returns ``kind``
    (NEVER, ALWAYS, FROM, UP_TO), ``low`` and ``high`` (the set's ends; NaN where unbounded
    or empty).
    """
    top = probe_hi if probe_hi is not None else (hi if np.isfinite(hi) else 1e300)
    bottom = probe_lo if probe_lo is not None else (lo if np.isfinite(lo) else -1e300)
    at_lo = np.broadcast_to(reached(np.full(shape, bottom)), shape)
    at_hi = np.broadcast_to(reached(np.full(shape, top)), shape)
    kind = np.select([at_lo & at_hi, ~at_lo & ~at_hi, at_hi], [ALWAYS, NEVER, FROM], UP_TO)
    root = np.broadcast_to(np.asarray(root, float), shape)
    # A closed-form root a rounding error outside a finite end is that end.
    edge = TOLERANCE * max(1.0, abs(bottom), abs(top) if np.isfinite(hi) else 1.0)
    with np.errstate(invalid="ignore"):
        ok = np.isfinite(root) & (root >= bottom - edge) & (root <= top + edge)
    need = (kind >= FROM) & ~ok
    if need.any():  # no usable closed form here: find the crossing on the same condition
        lo_arr = np.where(kind == FROM, bottom, top)
        hi_arr = np.where(kind == FROM, top, bottom)
        found = _bisect(lambda x: np.broadcast_to(reached(x), shape), lo_arr, hi_arr)
        root = np.where(need, found, root)
    root = np.clip(root, bottom, top)
    lo_val = lo if np.isfinite(lo) else np.nan
    hi_val = hi if np.isfinite(hi) else np.nan
    low = np.select([kind == FROM, (kind == ALWAYS) | (kind == UP_TO)], [root, lo_val], np.nan)
    high = np.select([kind == UP_TO, (kind == ALWAYS) | (kind == FROM)], [root, hi_val], np.nan)
    return {"kind": kind, "low": low, "high": high}


def set_contains(exact: dict[str, np.ndarray], x: np.ndarray) -> np.ndarray:
    """Whether values x (broadcast against the exact set's cells) lie in the set."""
    kind, low, high = exact["kind"], exact["low"], exact["high"]
    with np.errstate(invalid="ignore"):
        above = np.where(np.isnan(low), True, x >= low)
        below = np.where(np.isnan(high), True, x <= high)
    return np.select(
        [kind == NEVER, kind == ALWAYS, kind == FROM, kind == UP_TO],
        [False, True, above, below],
        above & below,
    )


def two_sided_set(
    reached: Callable[[np.ndarray], np.ndarray], root: np.ndarray, shape: tuple[int, ...]
) -> dict[str, np.ndarray]:
    """`monotone_set` over the whole real line (evaluated at +/- 1e150, inside the range
    where the products stay finite)."""
    return monotone_set(reached, np.clip(root, -1e150, 1e150), -np.inf, np.inf, shape,
                        probe_hi=1e150, probe_lo=-1e150)  # fmt: skip


def r2_outcome_ci_set(
    reached: Callable[[np.ndarray], np.ndarray],
    est: float,
    se: float,
    dof: float,
    r2t: np.ndarray,
    d: float,
    crit: float,
    shape: tuple[int, ...],
) -> dict[str, np.ndarray]:
    """The set of r2_outcome at which the interval reaches the target: with r2_outcome =
    sin² θ the condition is R sin(θ + φ) >= d, an interval of θ that may close on both sides."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        A = se * np.sqrt(dof * r2t / (1 - r2t))
        C = crit * se * np.sqrt(dof / ((dof - 1) * (1 - r2t)))
        R = np.hypot(A, C)
        phi = np.arctan2(C, A)
        asin = np.arcsin(np.clip(d / R, -1, 1))
        first = np.sin(np.clip(asin - phi, 0, np.pi / 2)) ** 2
        last = np.sin(np.clip(np.pi - asin - phi, 0, np.pi / 2)) ** 2
        peak = np.sin(np.clip(np.pi / 2 - phi, 0, np.pi / 2)) ** 2
    top = 1 - 1e-12
    at_lo = np.broadcast_to(reached(np.zeros(shape)), shape)
    at_hi = np.broadcast_to(reached(np.full(shape, top)), shape)
    at_peak = np.broadcast_to(reached(np.broadcast_to(peak, shape).copy()), shape)
    kind = np.select([at_lo & at_hi, at_lo, at_hi, at_peak], [ALWAYS, UP_TO, FROM, BETWEEN], NEVER)
    first, last = (np.broadcast_to(x, shape) for x in (first, last))
    low = np.select(
        [kind == FROM, kind == BETWEEN, (kind == ALWAYS) | (kind == UP_TO)],
        [first, first, 0.0],
        np.nan,
    )
    high = np.select(
        [kind == UP_TO, kind == BETWEEN, (kind == ALWAYS) | (kind == FROM)],
        [last, last, 1.0],
        np.nan,
    )
    return {"kind": kind, "low": low, "high": high}
