"""Tipping-point grids: where does the conclusion tip under a hidden confounder?

Four views of one question, all vectorised over the whole grid (no loop per cell):

- `binary_confounder_grid` (here): a binary U with prevalence `prevalence_treated` among the
  treated, `prevalence_control` among the controls, and effect `outcome_effect` on the
  outcome (a difference for md/rd, a ratio for rr/or/hr) (Lin, Psaty & Kronmal 1998;
  VanderWeele & Arah 2011).
- `continuous_confounder_grid` (here): a normal U (Lin, Psaty & Kronmal 1998).
- `bounding_grid` (`bounding.py`): the confounder's two risk ratios, through the bounding
  factor (Ding & VanderWeele 2016), with the E-value curve.
- `partial_r2_grid` (`r2grid.py`): the two partial R² for an OLS coefficient (Cinelli &
  Hazlett 2020), computed by `partial_r2.surface`.

Each returns a `TippingGrid`: the long-format rows, and the tipping points: for each value of
the other varying parameters, the least grid value of the last varying one at which the
estimate (and, separately, the interval limit nearest the target) reaches the target, with
the exact set of values that reach it beside it (`exact.py`: "from a", "up to b", "a to b",
every value, or none). On the grid "reaches" allows `TOLERANCE`; the exact sets allow
none: their ends are the closed-form crossings, and a curve that only tends to the target
as a parameter runs to an open end never reaches it. The grid's shared steps are in
`grid.py`, the ranges and default grids in `ranges.py`.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import POSITIVE, PROBABILITY
from ..common.levels import check_level
from ..common.scales import RATIO_SCALES, conversion_text, from_risk_ratio, to_risk_ratio
from .bounding import bounding_grid
from .exact import (
    ALWAYS,
    BETWEEN,
    FROM,
    NEVER,
    OUTSIDE,
    TOLERANCE,
    UP_TO,
    Condition,
    monotone_set,
    reaches,
    set_contains,
)
from .grid import (
    SCALES,
    check_effect,
    check_frequency,
    grid_axes,
    reduced_axes,
    shifted_cells,
    with_exact,
)
from .r2grid import partial_r2_grid
from .ranges import MAX_CELLS, default_ranges, parse_range, value_range
from .result import TippingGrid

__all__ = [
    "ALWAYS",
    "BETWEEN",
    "FROM",
    "MAX_CELLS",
    "NEVER",
    "OUTSIDE",
    "SCALES",
    "TOLERANCE",
    "UP_TO",
    "binary_confounder_grid",
    "bounding_grid",
    "check_effect",
    "check_frequency",
    "continuous_confounder_grid",
    "default_ranges",
    "monotone_set",
    "parse_range",
    "partial_r2_grid",
    "set_contains",
    "value_range",
]


# --------------------------------------------------------------------------- binary U
def _binary_factor(p1: np.ndarray, p0: np.ndarray, g: np.ndarray, ratio: bool) -> np.ndarray:
    """The bias: a ratio (divide by it) or a difference (subtract it)."""
    with np.errstate(over="ignore", invalid="ignore"):
        if ratio:
            return (1 + (g - 1) * p1) / (1 + (g - 1) * p0)
        return g * (p1 - p0)


def binary_confounder_grid(
    scale: str,
    estimate: float,
    ci: tuple[float, float] | None = None,
    *,
    prevalence_treated: ArrayLike | None = None,
    prevalence_control: ArrayLike | None = None,
    outcome_effect: ArrayLike | None = None,
    target: float | None = None,
    outcome: str | None = None,
    ci_level: float = 0.95,
) -> TippingGrid:
    """Bias-adjusted estimates under a hidden binary confounder, over a grid of its strengths.

    Parameters
    ----------
    scale : {'md', 'rd', 'rr', 'or', 'hr'}
        Effect scale. md/rd use the difference formula, rr/or/hr the ratio formula.
    estimate : float
        The observed (covariate-adjusted) estimate.
    ci : (lower, upper), optional
        Its confidence limits; each is shifted by the same bias.
    prevalence_treated, prevalence_control : float or 1-d array, optional
        P(U = 1) among the treated and among the controls (default: 0 to 1 by 0.05).
    outcome_effect : float or 1-d array, optional
        Effect of U on the outcome: a difference (md, rd) or a risk ratio (rr, or, hr);
        default from `default_ranges`.
    target : float, optional
        The value the estimate is tested against (default: the null).
    outcome : {'rare', 'common'}, optional
        Required for or and hr. A common outcome's OR or HR is converted to the risk-ratio
        scale first (as in `evalue`), adjusted there, and converted back.
    ci_level : float, default 0.95
        The level of `ci`, as the sentences name it.

    Notes
    -----
    Difference scale: ``adjusted = observed - gamma (p1 - p0)``; ratio scale (on the risk
    ratio): ``adjusted = observed (1 + (G - 1) p0) / (1 + (G - 1) p1)``, with no
    U-by-treatment interaction. The grid's cells reach the target within `TOLERANCE`; the
    exact sets from the closed form, with none.

    References
    ----------
    Lin DY, Psaty BM, Kronmal RA (1998). Assessing the sensitivity of regression results to
    unmeasured confounders in observational studies. Biometrics 54:948-963.
    VanderWeele TJ, Arah OA (2011). Bias formulas for sensitivity analysis of unmeasured
    confounding for general outcomes, treatments, and confounders. Epidemiology 22:42-52.

    Examples
    --------
    >>> g = binary_confounder_grid("rr", 1.8, prevalence_treated=0.5, prevalence_control=0.2,
    ...                            outcome_effect=3.0)
    >>> round(float(g.cells["bias_adjusted_estimate"].item()), 4)  # 1.8 * 1.4 / 2
    1.26
    """
    scale, est, ci, tgt = check_effect(scale, estimate, ci, target)
    freq = check_frequency(scale, outcome)
    ratio = scale in RATIO_SCALES
    axes = grid_axes(
        {
            "prevalence_treated": prevalence_treated,
            "prevalence_control": prevalence_control,
            "outcome_effect": outcome_effect,
        },
        default_ranges("binary", estimate=est, target=tgt, scale=scale),
        {
            "prevalence_treated": (PROBABILITY,),
            "prevalence_control": (PROBABILITY,),
            "outcome_effect": (POSITIVE,) if ratio else (),
        },
    )
    p1, p0, g = (v for _, v in axes)
    on_rr, back = _on_risk_ratio(scale, freq)
    obs, t = on_rr(est), on_rr(tgt)
    factor = _binary_factor(p1[:, None, None], p0[None, :, None], g[None, None, :], ratio)

    def shift(v: float) -> np.ndarray:
        return v / factor if ratio else v - factor

    ci_rr = None if ci is None else (on_rr(ci[0]), on_rr(ci[1]))
    moved = shifted_cells(obs, ci_rr, t, shift, back)
    side, slack = moved["side"], moved["slack"]
    notes = list(_already(est, ci, tgt)) + list(_binary_notes(scale, freq))
    result = TippingGrid(
        kind="binary",
        scale=scale,
        estimate=est,
        ci=ci,
        target=tgt,
        axes=axes,
        cells=moved["cells"],
        reach_estimate=moved["reach_estimate"],
        reach_ci=moved["reach_ci"],
        exact={},
        notes=tuple(notes),
        extra={"outcome": freq} if freq else {},
        ci_level=check_level(ci_level),
    )
    return with_exact(
        result,
        lambda value: _binary_exact(result, on_rr(value), t, side, slack),
        est,
        _near_limit(est, ci, tgt),
    )


def _on_risk_ratio(
    scale: str, outcome: str | None
) -> tuple[Callable[[float], float], Callable[[np.ndarray], np.ndarray]]:
    """To the scale where the bias acts (the risk ratio for a ratio scale), and back."""
    ratio = scale in RATIO_SCALES
    conv = {"outcome": outcome}

    def on_rr(v: float) -> float:
        return float(to_risk_ratio(scale, v, **conv)) if ratio else v

    def back(v: np.ndarray) -> np.ndarray:
        return from_risk_ratio(scale, v, **conv) if ratio else v

    return on_rr, back


def _near_limit(est: float, ci: tuple[float, float] | None, target: float) -> float | None:
    """The interval limit nearest the target (None without an interval)."""
    if ci is None:
        return None
    return ci[0] if est >= target else ci[1]


def _already(est: float, ci: tuple[float, float] | None, target: float) -> list[str]:
    """Notes for a grid whose estimate, or interval, already sits at the target."""
    notes = []
    if est == target:
        notes.append("The estimate already equals the target: no confounding is needed.")
    elif ci is not None and ci[0] <= target <= ci[1]:
        notes.append(
            "The interval already includes the target: every confounder of this kind leaves "
            "it including the target (the interval columns say so at every cell)."
        )
    return notes


def _binary_notes(scale: str, outcome: str | None) -> tuple[str, ...]:
    notes = []
    if scale in ("or", "hr") and outcome == "rare":
        notes.append(
            f"The {scale.upper()} of a rare outcome is taken as a risk ratio (VanderWeele & "
            "Arah 2011); the ratio formula applies to it directly."
        )
    elif scale in ("or", "hr"):
        notes.append(
            f"The {scale.upper()} of a common outcome was converted to the risk-ratio scale "
            f"({conversion_text(scale, outcome)}), adjusted there, and the bias-adjusted values "
            f"converted back to the {scale.upper()} scale."
        )
    notes.append(
        "U is binary and does not modify the treatment effect (no U-by-treatment "
        "interaction); its prevalences are conditional on the measured covariates."
    )
    return tuple(notes)


def _binary_exact(
    result: TippingGrid, obs: float, t: float, side: int, slack: float
) -> tuple[dict[str, np.ndarray], Condition]:
    """The exact set of values of the solved parameter at which `obs` is moved onto the
    target (from the closed-form crossing, with no tolerance), and the grid's own condition
    (with its tolerance) for the printed ends."""
    j = result.solved
    assert j is not None
    args = reduced_axes(result.axes, j)
    ratio = result.scale in RATIO_SCALES
    shape = result.reduced_shape(j)
    p1, p0, g = args
    root: np.ndarray
    # The crossing: the moved value equals the target.
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if ratio:
            r = obs / t  # reached when factor = (1 + (G-1) p1) / (1 + (G-1) p0) hits r
            root = [
                lambda: (r * (1 + (g - 1) * p0) - 1) / (g - 1),
                lambda: ((1 + (g - 1) * p1) / r - 1) / (g - 1),
                lambda: 1 + (r - 1) / (p1 - r * p0),
            ][j]()
        else:
            d = obs - t
            root = [lambda: p0 + d / g, lambda: p1 - d / g, lambda: d / (p1 - p0)][j]()

    def condition(allow: float) -> Condition:
        def reached(x: np.ndarray) -> np.ndarray:
            full = list(args)
            full[j] = x
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                bias = _binary_factor(full[0], full[1], full[2], ratio)
                shifted = obs / bias if ratio else obs - bias
            return reaches(shifted, t, side, allow)

        return reached

    # prevalences in [0, 1]; a ratio effect in (0, inf); a difference effect on the real line
    lo, hi = (0.0, 1.0) if j < 2 else ((0.0, np.inf) if ratio else (-np.inf, np.inf))
    exact = monotone_set(condition(0.0), root, lo, hi, shape, open_ends=(j == 2, j == 2))
    return exact, condition(slack)


# --------------------------------------------------------------------------- normal U
def continuous_confounder_grid(
    scale: str,
    estimate: float,
    ci: tuple[float, float] | None = None,
    *,
    difference: ArrayLike | None = None,
    outcome_effect: ArrayLike | None = None,
    target: float | None = None,
    outcome: str | None = None,
    ci_level: float = 0.95,
) -> TippingGrid:
    """Bias-adjusted estimates under a normally distributed hidden confounder.

    `difference` is the difference in the confounder's mean between the treated and the
    controls, in units of its (common) SD; `outcome_effect` its effect on the outcome per SD:
    a difference for md/rd, a ratio for rr/or/hr (a common outcome's OR or HR converted to
    the risk-ratio scale first, as in `evalue`, and back).

    Notes
    -----
    Difference scale: adjusted = observed - gamma x difference (exact for a linear model);
    ratio scale: adjusted = observed / G^difference, from log RR_obs = log RR_true + gamma
    Delta for a log-linear mean model (Lin, Psaty & Kronmal 1998; approximate for a rare
    outcome's OR or HR). Both interval limits shift by the same bias.

    References
    ----------
    Lin DY, Psaty BM, Kronmal RA (1998). Biometrics 54:948-963.
    """
    scale, est, ci, tgt = check_effect(scale, estimate, ci, target)
    freq = check_frequency(scale, outcome)
    ratio = scale in RATIO_SCALES
    axes = grid_axes(
        {"difference": difference, "outcome_effect": outcome_effect},
        default_ranges("continuous", estimate=est, target=tgt, scale=scale),
        {"outcome_effect": (POSITIVE,) if ratio else ()},
    )
    delta, g = (v for _, v in axes)
    on_rr, back = _on_risk_ratio(scale, freq)

    def shift(v: float, d: np.ndarray, e: np.ndarray) -> np.ndarray:
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            return v / np.power(e, d) if ratio else v - e * d

    obs, t = on_rr(est), on_rr(tgt)
    grid_d, grid_g = delta[:, None], g[None, :]
    ci_rr = None if ci is None else (on_rr(ci[0]), on_rr(ci[1]))
    moved = shifted_cells(obs, ci_rr, t, lambda v: shift(v, grid_d, grid_g), back)
    side, slack = moved["side"], moved["slack"]
    notes = (
        list(_already(est, ci, tgt))
        + list(_binary_notes(scale, freq))[:-1]
        + [
            "U is normal with the same SD among the treated and the controls and does not modify "
            "the treatment effect; its difference is conditional on the measured covariates."
        ]
    )
    result = TippingGrid(
        kind="continuous", scale=scale, estimate=est, ci=ci, target=tgt, axes=axes,
        cells=moved["cells"], reach_estimate=moved["reach_estimate"],
        reach_ci=moved["reach_ci"], exact={}, notes=tuple(notes),
        extra={"outcome": freq} if freq else {},
        ci_level=check_level(ci_level),
    )  # fmt: skip

    def exact_of(value: float) -> tuple[dict[str, np.ndarray], Condition]:
        j = result.solved
        assert j is not None  # with_exact asks only when a parameter varies
        other = g if j == 0 else delta
        shape = result.reduced_shape(j)
        v = on_rr(value)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if ratio:
                log_r = np.log(v / t)
                root = log_r / np.log(other) if j == 0 else np.exp(log_r / other)
            else:
                root = (v - t) / other

        def condition(allow: float) -> Condition:
            def reached(x: np.ndarray) -> np.ndarray:
                pair = (x, other) if j == 0 else (other, x)
                return reaches(shift(v, *pair), t, side, allow)

            return reached

        # the difference on the real line; a ratio effect in (0, inf), a difference effect
        # on the real line
        lo = 0.0 if j == 1 and ratio else -np.inf
        exact = monotone_set(condition(0.0), root, lo, np.inf, shape, open_ends=(True, True))
        return exact, condition(slack)

    return with_exact(result, exact_of, est, _near_limit(est, ci, tgt))
