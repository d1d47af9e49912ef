"""What a confounder of given strength, or several biases together, could do to a result.

Numbers only: `confounder_shift` moves a result's risk ratios by the bounding factor, and
`combined_evalues` gives the joint E-value of confounding with selection bias and outcome
misclassification. `EValueResult.confounder`, `.with_confounders` and `.with_biases` build
the results from them, so this module does not import the result (the arrow points from
`result.py` here, one way).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import AT_LEAST_ONE, require
from ..common.errors import InputError
from ..common.scales import from_risk_ratio
from .formulas import bounding_factor


def confounder_shift(
    scale: object,
    rr: np.ndarray,
    rr_ci: tuple[np.ndarray, np.ndarray] | None,
    rr_target: np.ndarray,
    conversion: dict,
    rr_treatment: object,
    rr_outcome: object,
) -> dict:
    """The most a confounder with these two risk ratios could move the estimate.

    Under the bounding factor B (Ding & VanderWeele 2016) the whole result, estimate and
    both interval limits, moves by the same factor toward the target on the risk-ratio
    scale: divided by B when the estimate lies above the target, multiplied when below. The
    interval includes the target once the moved limit nearest it reaches it. `conversion`
    holds the result's ``outcome``, ``sd`` and ``contrast`` (for the way back to `scale`).
    Returns the fields of a `ConfounderBound` other than its source.
    """
    rr_t = require(rr_treatment, "rr_treatment", AT_LEAST_ONE)
    rr_y = require(rr_outcome, "rr_outcome", AT_LEAST_ONE)
    b = bounding_factor(rr_t, rr_y)
    t = rr_target
    above = rr >= t

    def toward_target(value: np.ndarray) -> np.ndarray:
        return np.where(above, value / b, value * b)

    moved = toward_target(rr)
    reach_est = np.where(above, moved <= t, moved >= t) | (rr == t)
    rr_lim = lim = reach_ci = None
    if rr_ci is not None:
        lo, up = rr_ci
        nearest = np.where(above, lo, up)
        rr_lim = toward_target(nearest)
        reach_ci = np.where(above, rr_lim <= t, rr_lim >= t)
        lim = from_risk_ratio(scale, rr_lim, **conversion)
    return {
        "rr_treatment": rr_t,
        "rr_outcome": rr_y,
        "bounding_factor": b,
        "rr": moved,
        "rr_ci_limit": rr_lim,
        "estimate": from_risk_ratio(scale, moved, **conversion),
        "ci_limit": lim,
        "explains_estimate": reach_est,
        "explains_ci": reach_ci,
    }


# --------------------------------------------------------------------------- several biases
#: The biases a joint E-value can include, with the assumption each one brings.
BIASES = {
    "confounding": (
        "unmeasured confounding: the confounder's risk ratios with the treatment and the "
        "outcome, within the selected population (Ding & VanderWeele 2016)"
    ),
    "selection": (
        "selection bias: the risk ratios relating a selection factor to the outcome and to "
        "selection, in each treatment group (Smith & VanderWeele 2019); 'whole' bounds it for "
        "the whole population with two such factors, 'simplified' with one, which needs the "
        "simplifying assumption of that paper about how selection relates to the outcome"
    ),
    "misclassification": (
        "differential outcome misclassification: the largest ratio of sensitivities or "
        "false-positive probabilities across treatment groups (VanderWeele & Li 2019)"
    ),
}


#: Selection-bias factors in the bound: the whole population (two), or simplified (one).
SELECTION_FACTORS = {None: 0, "whole": 2, "simplified": 1}


def combined_evalue(
    rr: ArrayLike,
    *,
    confounding: bool = True,
    selection: str | None = None,
    misclassification: bool = False,
) -> np.ndarray:
    """The joint E-value: the common strength x of every bias parameter that could explain
    the risk ratio away, the root of (x² / (2x - 1))^(k_c + k_s) x^(k_m) = RR.

    k_c = 1 with confounding, k_s = 2 for selection bias in the whole population (1 when
    simplified to one factor), k_m = 1 with differential outcome misclassification (Smith,
    Mathur & VanderWeele 2021). With
    confounding alone it is the ordinary E-value; with whole-population selection alone it is
    sqrt(RR) + sqrt(RR - sqrt(RR)).

    Examples
    --------
    >>> round(float(combined_evalue(3.9, confounding=False, selection="whole")), 6)
    3.362342
    """
    r = np.asarray(rr, float)
    r = np.where(r < 1, 1 / r, r)
    k_s = SELECTION_FACTORS.get(selection)
    if k_s is None:
        raise InputError(f"`selection` must be whole or simplified; got {selection!r}", "selection")
    k = (1 if confounding else 0) + k_s
    m = 1 if misclassification else 0
    if k + m == 0:
        raise InputError("include at least one bias (confounding, selection, misclassification)")

    def log_bound(x: np.ndarray) -> np.ndarray:
        return k * (2 * np.log(x) - np.log(2 * x - 1)) + m * np.log(x)

    target = np.log(r)
    lo = np.ones_like(r)
    hi = np.maximum(2 * r + 2, 2.0)
    for _ in range(200):  # the bound rises with x from 1 at x = 1: bisect
        mid = (lo + hi) / 2
        below = log_bound(mid) < target
        lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
    return (lo + hi) / 2


def combined_evalues(
    rr: float,
    rr_ci: tuple[float, float] | None,
    rr_target: float,
    *,
    selection: str | None = None,
    misclassification: bool = False,
) -> dict:
    """The joint E-value of confounding and the other biases named, for the estimate and
    for the interval limit nearest the target (1 when the interval includes it)."""
    ratio = float(rr / rr_target)
    joint = float(combined_evalue(ratio, selection=selection,
                                    misclassification=misclassification))  # fmt: skip
    joint_ci = None
    if rr_ci is not None:
        lo, up = (float(v) / float(rr_target) for v in rr_ci)
        near = lo if ratio >= 1 else up
        covers = lo <= 1 <= up
        joint_ci = (
            1.0
            if covers
            else float(
                combined_evalue(near, selection=selection, misclassification=misclassification)
            )
        )
    included = ["confounding"] + (["selection"] if selection else [])
    included += ["misclassification"] if misclassification else []
    return {
        "included": included,
        "selection": selection,
        "evalue": joint,
        "evalue_ci": joint_ci,
        "assumptions": [BIASES[b] for b in included],
    }
