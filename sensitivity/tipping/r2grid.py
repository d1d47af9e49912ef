"""The partial-R² view: an OLS coefficient over a grid of the confounder's two partial R².

The bias-adjusted values are `sensitivity.partial_r2.surface` (Cinelli & Hazlett 2020); the
grid, the reaching and the exact sets are the tipping family's.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import R2_STRENGTH, require_scalar
from .exact import (
    monotone_set,
    r2_outcome_ci_set,
    r2_treatment_ci_away_set,
    reaches,
    slack_for,
)
from .grid import finite_cells, grid_axes, side_of
from .ranges import default_ranges
from .result import TippingGrid


def partial_r2_grid(
    estimate: float,
    se: float,
    dof: float,
    *,
    r2_treatment: ArrayLike | None = None,
    r2_outcome: ArrayLike | None = None,
    alpha: float = 0.05,
    target: float | None = 0.0,
) -> TippingGrid:
    """Bias-adjusted OLS estimates over a grid of the confounder's two partial R².

    The computation is `sensitivity.partial_r2.surface` (Cinelli & Hazlett 2020); the
    interval reaches the target when its limit nearest the target does. Exact sets: for the
    estimate ``r2_outcome = d² (1 - r2_t) / (se² dof r2_t)`` with ``d = |est - target|`` (and
    its inverse in r2_treatment); for the interval, with ``r2_outcome = sin² θ``, the limit
    reaches the target where ``A sin θ + C cos θ >= d``, ``A = se sqrt(dof r2_t / (1 - r2_t))``
    and ``C = t_crit se sqrt(dof / ((dof - 1)(1 - r2_t)))``: an interval of θ, so of
    r2_outcome, that may be bounded on both sides (a stronger confounder on the outcome side
    also shrinks the standard error). On the r2_treatment axis both bias and standard error
    grow, and the set is one-sided. A partial R² of 1 is not in the range: a curve that
    only tends to the target there never reaches it.
    """
    from ..partial_r2.core import (
        adjusted_for_confounder,
        check_summary,
        robustness_value_of_t,
        surface,
        t_critical,
    )

    est, se, dof, _, alpha = check_summary(estimate, se, dof, None, 1.0, alpha)
    tgt = float(require_scalar(0.0 if target is None else target, "target"))
    default = default_ranges(
        "partial-r2", robustness_value=float(robustness_value_of_t(est / se, dof=dof))
    )
    axes = grid_axes(
        {"r2_treatment": r2_treatment, "r2_outcome": r2_outcome},
        default,
        {"r2_treatment": (R2_STRENGTH,), "r2_outcome": (R2_STRENGTH,)},
    )
    r2t, r2y = (v for _, v in axes)
    s = surface(est, se, dof, r2t, r2y, alpha)
    side = side_of(est, tgt)
    slack = slack_for(est, tgt)
    cells = {
        "bias": s["bias"],
        "bias_adjusted_estimate": s["estimate"],
        "bias_adjusted_se": s["se"],
        "bias_adjusted_t": s["t"],
        "bias_adjusted_ci_lower": s["lower"],
        "bias_adjusted_ci_upper": s["upper"],
    }
    finite_cells({k: v for k, v in cells.items() if k != "bias_adjusted_t"}, "estimate")
    near = "lower" if side > 0 else "upper"
    result = TippingGrid(
        kind="partial-r2",
        scale="md",
        estimate=est,
        ci=None,
        target=tgt,
        axes=axes,
        cells=cells,
        reach_estimate=reaches(s["estimate"], tgt, side, slack),
        reach_ci=reaches(s[near], tgt, side, slack),
        exact={},
        notes=(
            "OLS with classical standard errors; the bias is taken in the direction that "
            "shrinks the estimate toward zero (Cinelli & Hazlett 2020).",
        ),
        extra={"se": se, "dof": dof, "alpha": alpha},
        ci_level=1 - alpha,
    )
    if result.solved is None:
        return result
    j = result.solved
    other = r2t if j == 1 else r2y
    shape = result.reduced_shape(j)
    # The bias shrinks |estimate|: it moves the estimate toward the target (toward = +1),
    # away from it (-1), or not at all (an estimate of 0). Reached: toward bias >= d for the
    # estimate, toward bias + t_crit se_adjusted >= d for the interval limit nearest it.
    toward = float(side * np.sign(est))
    d = np.float64(abs(est - tgt))
    se, dof = np.float64(se), np.float64(dof)  # numpy arithmetic: overflow gives inf, not an error
    crit = float(t_critical(alpha, dof - 1))

    def condition(key: str, allow: float) -> Callable[[np.ndarray], np.ndarray]:
        def reached(x: np.ndarray) -> np.ndarray:
            pair = (x, other) if j == 0 else (other, x)
            adj = adjusted_for_confounder(*pair, estimate=est, se=se, dof=dof, alpha=alpha)
            return reaches(adj[key], tgt, side, allow)

        return reached

    # partial R² lies in [0, 1): a curve that only tends to the target as one of them tends
    # to 1 never reaches it
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if j == 1:  # the bias equals d
            root = d**2 * (1 - other) / (se**2 * dof * other)
        else:
            k = d**2 / (se**2 * dof * other)
            root = k / (1 + k)
    est_set = monotone_set(condition("estimate", 0.0), root, 0.0, 1.0, shape, (False, True))
    if j == 0:
        # r2_treatment for each r2_outcome: with x = sin α = sqrt(r2_t), w = cos α the limit
        # reaches the target when toward P x + Q >= d w. For toward >= 0 this is
        # H sin(α - β) >= -Q with H = hypot(P, d), β = atan2(d, P): increasing in α, from
        # α = β - asin(Q / H). A target beyond the estimate (toward = -1) may be reached on
        # two pieces (exact.r2_treatment_ci_away_set).
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            P = se * np.sqrt(dof * other)
            Q = crit * se * np.sqrt(dof / (dof - 1) * (1 - other))
        if toward < 0:
            ci_set = r2_treatment_ci_away_set(P, Q, d, shape)
        else:
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                angle = np.arctan2(d, P) - np.arcsin(Q / np.hypot(P, d))
                # an angle outside [0, π/2] is no crossing in the range: a root outside it
                ci_root = np.where(
                    angle < 0, -1.0, np.where(angle > np.pi / 2, 2.0, np.sin(angle) ** 2)
                )
            ci_set = monotone_set(condition(near, 0.0), ci_root, 0.0, 1.0, shape, (False, True))
    else:
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            A = se * np.sqrt(dof * other / (1 - other))
            C = crit * se * np.sqrt(dof / ((dof - 1) * (1 - other)))
        ci_set = r2_outcome_ci_set(toward, A, C, d, shape)
    return replace(
        result,
        exact={"estimate": est_set, "ci": ci_set},
        tips={"estimate": condition("estimate", slack), "ci": condition(near, slack)},
    )
