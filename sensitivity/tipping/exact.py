"""Reaching the target, and the exact sets of the solved parameter that reach it.

Two questions, kept apart. The grid says, cell by cell, whether a bias-adjusted value
reaches the target, allowing `TOLERANCE` (so that 0.7 - 0.2 falling 5e-17 short of 0.5 does
not put a tipping point one grid step late). The exact set says, from the closed form with
no tolerance, which values of the solved parameter reach it ("from a", "up to b", "a to b",
every value, or none): its ends are the closed-form crossings, and a curve that only
approaches the target as the parameter runs to an open end (0, infinity, a partial R² of 1)
never reaches it there. A grid cell within the tolerance of a crossing may therefore tip a
hair before the exact end; the printed ends are chosen so that the two never contradict
each other (`present.shown_ends`).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

#: A value within TOLERANCE x max(|observed - target|, |target|, tiny) of the target counts as
#: reaching it on the grid (never in the exact sets); without it, 0.7 - 0.2 falling 5e-17
#: short of 0.5 would put a tipping point one grid step late.
TOLERANCE = 1e-9

# Kinds of exact answer: the set of values of the solved parameter at which it is reached.
# OUTSIDE: up to `low` or from `high` (the interval of a partial-R² view whose target lies
# beyond the estimate, away from zero, as the treatment's partial R² grows).
NEVER, ALWAYS, FROM, UP_TO, BETWEEN, OUTSIDE = 0, 1, 2, 3, 4, 5  # codes of result.KIND_NAMES

Condition = Callable[[np.ndarray], np.ndarray]


def slack_for(observed: float, target: float) -> float:
    """The tolerance within which a value moved from `observed` reaches `target` on the grid."""
    return TOLERANCE * max(abs(observed - target), abs(target), 1e-300)


def reaches(value: np.ndarray, target: float, side: int, slack: float = 0.0) -> np.ndarray:
    """Whether `value` has reached the target coming from `side` (+1 above, -1 below),
    within `slack` (0: exactly)."""
    with np.errstate(invalid="ignore"):
        return side * (np.asarray(value) - target) <= slack


def _interior(lo: float, hi: float) -> float:
    """A point strictly inside the parameter's range (where no crossing means all or none)."""
    if np.isfinite(lo) and np.isfinite(hi):
        return (lo + hi) / 2
    if np.isfinite(lo):
        return lo + 1.0
    if np.isfinite(hi):
        return hi - 1.0
    return 0.0


def _beyond(root: np.ndarray, end: float, direction: int, open_end: bool) -> np.ndarray:
    """A point strictly between the root and the range's end on one side: the end itself
    when closed, half-way to it when open, one root-length past the root when infinite."""
    with np.errstate(over="ignore", invalid="ignore"):
        if not np.isfinite(end):
            step = np.maximum(1.0, np.abs(root))
            return np.clip(root + direction * step, -np.finfo(float).max, np.finfo(float).max)
        if open_end:
            return root + (end - root) / 2
        return np.full_like(root, end)


def monotone_set(
    reached: Condition,
    root: np.ndarray,
    lo: float,
    hi: float,
    shape: tuple[int, ...],
    open_ends: tuple[bool, bool] = (False, False),
) -> dict[str, np.ndarray]:
    """The exact set of values of a parameter at which a monotone condition holds.

    `reached(x)` evaluates the condition exactly (no tolerance) at x, an array over the
    other parameters; `root` is the closed-form crossing (where the moved value equals the
    target). The parameter runs over [lo, hi]; an infinite end, or one named in
    `open_ends`, is not part of the range, so a root there (or beyond either end, or not a
    number) means the condition holds everywhere or nowhere, which the condition at an
    inner point decides: a curve that only tends to the target never reaches it. With the
    root inside, the condition on either side of it says which side reaches (the condition
    is never evaluated at an open end). Returns ``kind`` (NEVER, ALWAYS, FROM, UP_TO),
    ``low`` and ``high`` (the set's ends; NaN where unbounded or empty).
    """
    lo_open = open_ends[0] or not np.isfinite(lo)
    hi_open = open_ends[1] or not np.isfinite(hi)
    root = np.array(np.broadcast_to(np.asarray(root, float), shape))
    with np.errstate(invalid="ignore"):
        above_lo = root > lo if lo_open else root >= lo
        below_hi = root < hi if hi_open else root <= hi
    inside = np.isfinite(root) & above_lo & below_hi
    mid = _interior(lo, hi)
    r = np.where(inside, root, mid)
    at_lo = inside & (r == lo)  # only a closed end can hold the root
    at_hi = inside & (r == hi)
    up = np.broadcast_to(reached(_beyond(r, hi, +1, hi_open)), shape) & ~at_hi
    down = np.broadcast_to(reached(_beyond(r, lo, -1, lo_open)), shape) & ~at_lo
    everywhere = np.broadcast_to(reached(np.full(shape, mid)), shape)
    kind = np.select(
        [
            ~inside,
            up & (down | at_lo),
            down & at_hi,
            up,
            down,
            at_lo,  # reached on neither side: the closed end alone
            at_hi,
        ],
        [np.where(everywhere, ALWAYS, NEVER), ALWAYS, ALWAYS, FROM, UP_TO, UP_TO, FROM],
        NEVER,
    )
    lo_val = lo if np.isfinite(lo) else np.nan
    hi_val = hi if np.isfinite(hi) else np.nan
    low = np.select([kind == FROM, (kind == ALWAYS) | (kind == UP_TO)], [r, lo_val], np.nan)
    high = np.select([kind == UP_TO, (kind == ALWAYS) | (kind == FROM)], [r, hi_val], np.nan)
    return {"kind": kind, "low": low, "high": high}


def set_contains(exact: dict[str, np.ndarray], x: np.ndarray) -> np.ndarray:
    """Whether values x (broadcast against the exact set's cells) lie in the set."""
    kind, low, high = exact["kind"], exact["low"], exact["high"]
    with np.errstate(invalid="ignore"):
        above = np.where(np.isnan(low), True, x >= low)
        below = np.where(np.isnan(high), True, x <= high)
    with np.errstate(invalid="ignore"):
        outside = (x <= low) | (x >= high)
    return np.select(
        [kind == NEVER, kind == ALWAYS, kind == FROM, kind == UP_TO, kind == OUTSIDE],
        [False, True, above, below, outside],
        above & below,
    )


def two_sided_set(reached: Condition, root: np.ndarray, shape: tuple[int, ...]) -> dict:
    """`monotone_set` over the whole real line."""
    return monotone_set(reached, root, -np.inf, np.inf, shape)


def r2_outcome_ci_set(
    toward: float, A: np.ndarray, C: np.ndarray, d: float, shape: tuple[int, ...]
) -> dict[str, np.ndarray]:
    """The set of r2_outcome in [0, 1) at which the interval limit nearest the target reaches
    it: with r2_outcome = sin² θ the condition is ``toward A sin θ + C cos θ >= d``, i.e.
    ``R sin(θ + φ) >= d`` with ``R = hypot(toward A, C)`` and ``φ = atan2(C, toward A)`` in
    [0, π]: θ from ``asin(d / R) - φ`` to ``π - asin(d / R) - φ``, cut to [0, π/2), so an
    interval that may close on both sides (`toward` is +1 when the bias moves the estimate
    toward the target, -1 away from it, 0 for an estimate of 0). θ = π/2 (a partial R² of 1)
    is not in the range: a set whose lower end lies there is empty.
    """
    half = np.pi / 2
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        a = toward * np.asarray(A, float)
        R = np.hypot(a, C)
        phi = np.arctan2(C, a)
        ratio = d / R
        s = np.arcsin(np.minimum(ratio, 1.0))
        first = s - phi
        last = np.pi - s - phi
    first, last, ratio = (np.broadcast_to(x, shape) for x in (first, last, ratio))
    empty = ~(ratio <= 1) | (first >= half) | (last < 0)
    kind = np.select(
        [empty, (first <= 0) & (last >= half), first <= 0, last >= half],
        [NEVER, ALWAYS, UP_TO, FROM],
        BETWEEN,
    )
    with np.errstate(invalid="ignore"):
        lo_end, hi_end = np.sin(first) ** 2, np.sin(last) ** 2
    low = np.select([(kind == FROM) | (kind == BETWEEN), (kind == ALWAYS) | (kind == UP_TO)],
                    [lo_end, 0.0], np.nan)  # fmt: skip
    high = np.select([(kind == UP_TO) | (kind == BETWEEN), (kind == ALWAYS) | (kind == FROM)],
                     [hi_end, 1.0], np.nan)  # fmt: skip
    return {"kind": kind, "low": low, "high": high}


def r2_treatment_ci_away_set(
    P: np.ndarray, Q: np.ndarray, d: float, shape: tuple[int, ...]
) -> dict[str, np.ndarray]:
    """The set of r2_treatment in [0, 1) at which the interval limit nearest a target that
    lies beyond the estimate (away from zero) reaches it: with x = sin α = sqrt(r2_t) and
    w = cos α the condition is ``Q - P x >= d w``, i.e. ``H sin(α + γ) <= Q`` with
    ``H = hypot(P, d)`` and ``γ = atan2(d, P)``. sin rises then falls over the range, so the
    set is α up to ``asin(Q / H) - γ``, or from ``π - asin(Q / H) - γ``, or both (OUTSIDE):
    the bias moves the limit away from the target while the wider interval brings it back.
    """
    half = np.pi / 2
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        H = np.hypot(P, d)
        gamma = np.arctan2(d, P)
        ratio = Q / H
        s = np.arcsin(np.minimum(ratio, 1.0))
        first_end = s - gamma  # the first piece: α in [0, first_end]
        second = np.pi - s - gamma  # the second piece: α in [second, π/2)
    first_end, second, ratio = (np.broadcast_to(x, shape) for x in (first_end, second, ratio))
    has_first, has_second = first_end >= 0, second < half
    kind = np.select(
        [ratio >= 1, has_first & has_second, has_first, has_second],
        [ALWAYS, OUTSIDE, UP_TO, FROM],
        NEVER,
    )
    with np.errstate(invalid="ignore"):
        a, b = np.sin(first_end) ** 2, np.sin(np.maximum(second, 0.0)) ** 2
    low = np.select([(kind == UP_TO) | (kind == ALWAYS), kind == FROM, kind == OUTSIDE],
                    [0.0, b, a], np.nan)  # fmt: skip
    high = np.select([kind == UP_TO, (kind == FROM) | (kind == ALWAYS), kind == OUTSIDE],
                     [a, 1.0, b], np.nan)  # fmt: skip
    return {"kind": kind, "low": low, "high": high}
