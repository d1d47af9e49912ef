"""Weighted (IPW) estimates under the marginal sensitivity model: box bounds with
percentile-bootstrap intervals, sharp quantile-balancing bounds, and the least Λ that
changes the conclusion."""

from .box import box_bounds
from .core import weighting_bounds
from .result import WeightingResult

__all__ = ["WeightingResult", "box_bounds", "weighted_sensitivity", "weighting_bounds"]


def weighted_sensitivity(*args, **kwargs):  # noqa: ANN002, ANN003 - see data.weighted_sensitivity
    """Read data (a DataFrame or a file), fit the propensity model and bound the weighted
    effect; see `sensitivity.weighting.data.weighted_sensitivity`."""
    from .data import weighted_sensitivity as run

    return run(*args, **kwargs)
