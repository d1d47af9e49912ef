"""The bounding view: the most a confounder of two risk ratios could move the estimate.

The bounding factor and the E-value come from `sensitivity.evalues` (Ding & VanderWeele
2016); the grid, the reaching and the exact sets are the tipping family's.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import AT_LEAST_ONE
from ..common.errors import InputError
from ..common.levels import check_level
from ..common.scales import RATIO_SCALES, convert_from_rr
from .exact import Condition, monotone_set, reaches
from .grid import check_frequency, grid_axes, shifted_cells, side_of, with_exact
from .ranges import default_ranges
from .result import TippingGrid


def bounding_grid(
    scale: str,
    estimate: float,
    ci: tuple[float, float] | None = None,
    *,
    rr_treatment: ArrayLike | None = None,
    rr_outcome: ArrayLike | None = None,
    outcome: str | None = None,
    target: float | None = None,
    ci_level: float = 0.95,
) -> TippingGrid:
    """The most a confounder could move the estimate, over a grid of its two risk ratios.

    On the risk-ratio scale (OR and HR need `outcome` 'rare' or 'common' for the conversion
    of `sensitivity.evalues`) the estimate and both interval limits are divided by the
    bounding factor ``B = a b / (a + b - 1)`` when the estimate lies above the target,
    multiplied when below (Ding & VanderWeele 2016). The exact tipping curve is
    ``b = R (a - 1) / (a - R)`` for ``a > R``, with ``R`` the ratio of the estimate (or the
    CI limit nearest the target) to the target, oriented to be at least 1; it passes through
    the E-value point (E, E). A limit that already covers the target (R <= 1) is reached
    for every confounder.

    References
    ----------
    Ding & VanderWeele (2016), Epidemiology 27:368; VanderWeele & Ding (2017), Ann Intern Med.
    """
    from ..evalues.core import bounding_factor, evalue

    if scale not in RATIO_SCALES:
        raise InputError(
            f"`scale` must be one of rr, or, hr for the bounding view; got {scale!r}", "scale"
        )
    if scale in ("or", "hr"):  # tipping takes no prevalence: name only `outcome`
        check_frequency(scale, outcome)
    ev = evalue(scale, estimate, ci, outcome=outcome, target=target)
    axes = grid_axes(
        {"rr_treatment": rr_treatment, "rr_outcome": rr_outcome},
        default_ranges("bounding", evalue=float(ev.evalue)),
        {"rr_treatment": (AT_LEAST_ONE,), "rr_outcome": (AT_LEAST_ONE,)},
    )
    a, b = (v for _, v in axes)
    B = bounding_factor(a[:, None], b[None, :])
    obs, t = float(ev.rr), float(ev.rr_target)
    side = side_of(obs, t)
    back = {"outcome": ev.outcome}

    def moved(v: float, factor: np.ndarray) -> np.ndarray:
        return v / factor if side > 0 else v * factor

    rr_ci = None if ev.rr_ci is None else (float(ev.rr_ci[0]), float(ev.rr_ci[1]))
    shifted = shifted_cells(
        obs,
        rr_ci,
        t,
        lambda v: moved(v, B),
        lambda v: convert_from_rr(scale, v, **back),
        first={"bounding_factor": B},
    )
    slack = shifted["slack"]
    notes = list(ev.notes) + [
        f"Conversion to the risk-ratio scale: {ev.conversion}.",
        "The bound is the most bias a confounder of these strengths could produce (Ding & "
        "VanderWeele 2016); a real confounder of the same strengths may produce less. The "
        "estimate and both interval limits move by the same bounding factor.",
    ]
    result = TippingGrid(
        kind="bounding",
        scale=scale,
        estimate=float(ev.estimate),
        ci=None if ev.ci is None else (float(ev.ci[0]), float(ev.ci[1])),
        target=float(ev.target_value),
        axes=axes,
        cells=shifted["cells"],
        reach_estimate=shifted["reach_estimate"],
        reach_ci=shifted["reach_ci"],
        exact={},
        notes=tuple(notes),
        extra={
            "evalue": float(ev.evalue),
            "evalue_ci": None if ev.evalue_ci is None else float(ev.evalue_ci),
            "outcome": ev.outcome,
        },
        ci_level=check_level(ci_level),
    )

    def exact_of(value_rr: float) -> tuple[dict[str, np.ndarray], Condition]:
        j = result.solved
        assert j is not None  # with_exact asks only when a parameter varies
        other = a if j == 1 else b
        ratio = (value_rr / t) ** side  # at least 1 unless the value already covers the target
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            root = np.where(other > ratio, ratio * (other - 1) / (other - ratio), np.nan)

        def condition(allow: float) -> Condition:
            def reached(x: np.ndarray) -> np.ndarray:
                pair = (x, other) if j == 0 else (other, x)
                return reaches(moved(value_rr, bounding_factor(*pair)), t, side, allow)

            return reached

        # B(a, b) tends to the other ratio as one grows without bound: a curve that only
        # tends to the target is never reached (the range [1, inf) is open above)
        exact = monotone_set(condition(0.0), root, 1.0, np.inf, result.reduced_shape(j))
        return exact, condition(slack)

    return with_exact(result, exact_of, obs, shifted["near"])
