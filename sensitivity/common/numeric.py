"""Numerical routines without scipy's import (0.2-0.4 s of a command's start): Brent's root
finder, the standard normal distribution function and the logistic function.

`brent` is Brent's method (Brent 1973, "Algorithms for Minimization without Derivatives",
chapter 4) step for step as scipy.optimize.brentq takes it, so the same function and bracket
give the same root to the bit (tests/test_numeric.py checks it against scipy). `normal_cdf`
is Phi(x) from the error functions, as scipy.special.ndtr computes it, to within 1e-13
relative (the error functions are the C library's, not scipy's), and 0 below the smallest
normal double.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Callable

import numpy as np
from numpy.typing import ArrayLike


def expit(x: np.ndarray) -> np.ndarray:
    """1 / (1 + exp(-x)), scipy.special.expit's formula, in numpy (0 where exp(-x)
    overflows). numpy's exp and the C library's differ in the last bit for about 2% of
    arguments (MEASURED), so results agree with scipy's to a unit in the last place."""
    with np.errstate(over="ignore"):
        return 1.0 / (1.0 + np.exp(-x))


def brent(f: Callable[[float], float], a: float, b: float, *, xtol: float = 2e-12,
          rtol: float = 8.881784197001252e-16, maxiter: int = 100) -> float:  # fmt: skip
    """A root of `f` in [a, b], where f(a) and f(b) differ in sign, to within
    xtol + rtol |root| (the bracket shrinks by interpolation where that is safe, by
    bisection where it is not). Raises ValueError if the signs agree or it does not
    converge in `maxiter` steps."""
    x_pre, x_cur = float(a), float(b)
    f_pre, f_cur = float(f(x_pre)), float(f(x_cur))
    if f_pre == 0:
        return x_pre
    if f_cur == 0:
        return x_cur
    if math.copysign(1.0, f_pre) == math.copysign(1.0, f_cur):
        raise ValueError("f(a) and f(b) must have different signs")
    x_blk = f_blk = s_pre = s_cur = 0.0
    for _ in range(maxiter):
        if (
            f_pre != 0 and f_cur != 0 and (math.copysign(1.0, f_pre) != math.copysign(1.0, f_cur))
        ):  # the root lies between the previous point and the current: that is the bracket
            x_blk, f_blk = x_pre, f_pre
            s_pre = s_cur = x_cur - x_pre
        if abs(f_blk) < abs(f_cur):  # the current point is the best one so far
            x_pre, x_cur, x_blk = x_cur, x_blk, x_cur
            f_pre, f_cur, f_blk = f_cur, f_blk, f_cur
        delta = (xtol + rtol * abs(x_cur)) / 2
        s_bis = (x_blk - x_cur) / 2
        if f_cur == 0 or abs(s_bis) < delta:
            return x_cur
        if abs(s_pre) > delta and abs(f_cur) < abs(f_pre):
            try:
                if x_pre == x_blk:  # secant
                    s_try = -f_cur * (x_cur - x_pre) / (f_cur - f_pre)
                else:  # inverse quadratic
                    d_pre = (f_pre - f_cur) / (x_pre - x_cur)
                    d_blk = (f_blk - f_cur) / (x_blk - x_cur)
                    s_try = (
                        -f_cur * (f_blk * d_blk - f_pre * d_pre) / (d_blk * d_pre * (f_blk - f_pre))
                    )
            except ZeroDivisionError:  # an infinite or undefined step (in C): bisect
                s_try = math.inf
            if 2 * abs(s_try) < min(abs(s_pre), 3 * abs(s_bis) - delta):
                s_pre, s_cur = s_cur, s_try  # a good short step
            else:
                s_pre = s_cur = s_bis
        else:
            s_pre = s_cur = s_bis
        x_pre, f_pre = x_cur, f_cur
        x_cur += s_cur if abs(s_cur) > delta else (delta if s_bis > 0 else -delta)
        f_cur = float(f(x_cur))
    raise ValueError(f"Brent's method did not converge in {maxiter} steps")


_ROOT_HALF = math.sqrt(0.5)
_SMALLEST = sys.float_info.min  # the smallest normal double, 2.2e-308


def _phi(x: float) -> float:
    z = x * _ROOT_HALF
    if abs(z) < _ROOT_HALF:
        return 0.5 + 0.5 * math.erf(z)
    tail = 0.5 * math.erfc(abs(z))
    if tail < _SMALLEST:  # below the normal doubles it has lost its digits: 0, as scipy gives
        tail = 0.0
    return 1.0 - tail if z > 0 else tail


def normal_cdf(x: ArrayLike) -> np.ndarray:
    """Phi(x), the standard normal distribution function, elementwise (NaN stays NaN); for
    the few values a call of a one-number command needs (a Python loop). Far in the lower
    tail it keeps its relative accuracy down to the smallest normal double, 2.2e-308 (below
    it, 0; take an upper tail as normal_cdf(-z), never 1 - normal_cdf(z))."""
    values = np.asarray(x, float)
    out = np.array([_phi(v) if v == v else math.nan for v in values.ravel().tolist()])
    return out.reshape(values.shape)


__all__ = ["brent", "expit", "normal_cdf"]
