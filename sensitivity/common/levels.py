"""Two-sided critical values from the lower tail, and a level as a sentence names it.

Upper-tail quantiles are taken as minus the lower-tail quantile at alpha/2 (the normal and t
distributions are symmetric), never from ``1 - alpha/2``: ``1 - 1e-20`` is 1 in floating point
and its quantile is infinite, while the lower tail stays finite down to alpha = 1e-300, the
stated limit below which the package refuses a level.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from .errors import InputError

#: The least alpha (1 - level) the package accepts: its tail quantiles are finite numbers.
ALPHA_FLOOR = 1e-300


def _open_unit(value: object, name: str) -> float:
    """`value` as a float strictly between 0 and 1, or InputError naming `name`."""
    try:
        number = float(value)  # type: ignore[arg-type]  # any object: refused if not a number
    except (TypeError, ValueError, OverflowError):
        raise InputError(f"`{name}` must be a number; got {value!r}", name) from None
    if not (0 < number < 1):
        raise InputError(f"`{name}` must lie strictly between 0 and 1; got {number:g}", name)
    return number


def check_alpha(alpha: float, name: str = "alpha") -> float:
    """`alpha` as a float in [ALPHA_FLOOR, 1), or InputError naming `name` and the limit."""
    value = _open_unit(alpha, name)
    if value < ALPHA_FLOOR:
        raise InputError(
            f"`{name}` must be at least {ALPHA_FLOOR:g} (smaller levels have no finite critical "
            f"value in double precision); got {value:g}",
            name,
        )
    return value


#: The least confidence level the package accepts: below about 1.1e-16 the two-sided critical
#: value rounds to 0 and an interval (or an se read from one) is degenerate.
LEVEL_FLOOR = 1e-15


def check_level(level: float, name: str = "ci_level") -> float:
    """A confidence level in [LEVEL_FLOOR, 1 - ALPHA_FLOOR], or InputError naming `name`."""
    value = _open_unit(level, name)
    if value < LEVEL_FLOOR:
        raise InputError(
            f"`{name}` must be at least {LEVEL_FLOOR:g} (below it the critical value is 0 in "
            f"double precision: the interval has no width); got {value:g}",
            name,
        )
    if 1 - value < ALPHA_FLOOR:
        raise InputError(
            f"`{name}` must leave at least {ALPHA_FLOOR:g} to 1; got {value:g}",
            name,
        )
    return value


def z_critical(alpha: ArrayLike) -> np.ndarray:
    """The two-sided standard normal critical value at `alpha`: finite for alpha >= 1e-300.

    >>> round(float(z_critical(0.05)), 4)
    1.96
    >>> bool(np.isfinite(z_critical(1e-300)))
    True
    """
    from scipy.special import ndtri

    return -ndtri(np.asarray(alpha, float) / 2)


def z_one_sided(alpha: ArrayLike) -> np.ndarray:
    """The one-sided standard normal critical value z_{1 - alpha}, as minus the lower-tail
    quantile at `alpha`: finite for alpha >= 1e-300.

    >>> round(float(z_one_sided(0.05)), 4)
    1.6449
    >>> bool(np.isfinite(z_one_sided(1e-300)))
    True
    """
    from scipy.special import ndtri

    return -ndtri(np.asarray(alpha, float))


def t_critical(alpha: ArrayLike, dof: ArrayLike) -> np.ndarray:
    """The two-sided Student-t critical value at `alpha` on `dof` degrees of freedom.

    >>> round(float(t_critical(0.05, 10)), 4)
    2.2281
    >>> round(float(t_critical(1e-20, 1192)), 2)
    9.51
    """
    from scipy.special import betaincinv, stdtrit

    dof = np.asarray(dof, float)
    half = np.asarray(alpha, float) / 2
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        crit = -stdtrit(dof, half)
        # stdtrit fails in the far tail of few dof (dof 3, alpha 1e-300 gives -inf): there the
        # tail is the incomplete beta, P(|T| > t) = I_x(dof/2, 1/2) with x = dof/(dof + t²)
        bad = ~(np.isfinite(crit) & (crit > 0))
        if np.any(bad):
            x = betaincinv(dof / 2, 0.5, 2 * half)
            crit = np.where(bad, np.sqrt(dof) * np.sqrt(1 / x - 1), crit)
    return crit


def level_text(level: float | None = None, *, alpha: float | None = None) -> str:
    """A confidence level as a percentage that a sentence can print truly.

    From `alpha` when given (1 - 1e-20 cannot be held as a float); the level as written, to
    15 significant digits (97.5%, not 98%; 1e-15 as 1e-13%, not 9.99201e-14%); a level within
    1e-4 of 1 as "(100 − x)%", x = 100 alpha, with 1 - level worked in decimal from the level's
    shortest repr (0.99999 gives 0.001, not 0.00100000000000655).

    >>> level_text(0.95), level_text(0.975), level_text(alpha=1e-20), level_text(0.5)
    ('95%', '97.5%', '(100 − 1e-18)%', '50%')
    >>> level_text(1e-15), level_text(0.99999), level_text(alpha=0.07)
    ('1e-13%', '(100 − 0.001)%', '93%')
    """
    from decimal import Decimal

    if alpha is not None:
        complement = Decimal(repr(float(alpha)))
    else:
        complement = 1 - Decimal(repr(float(level)))  # type: ignore[arg-type]
    if complement < Decimal("1e-4"):
        return f"(100 − {float(100 * complement):.15g})%"
    if alpha is None:
        return f"{100 * float(level):.15g}%"  # type: ignore[arg-type]
    return f"{float(100 * (1 - complement)):.15g}%"
