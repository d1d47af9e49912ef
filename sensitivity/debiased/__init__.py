"""Omitted-variable bounds for debiased (double) machine-learning estimates ("Long story short")."""

from .core import (
    Moments,
    Scores,
    average_effect_scores,
    benchmark_gain,
    bounds,
    moments,
    multiplier,
    partial_linear_scores,
    robustness_value,
    robustness_value_alpha,
    surface,
)
from .result import Benchmark, DebiasedFit, DebiasedResult, Scenario


def debiased_fit(*args, **kwargs):  # noqa: D103 - documented in fit.debiased_fit
    from .fit import debiased_fit as fit

    return fit(*args, **kwargs)


debiased_fit.__doc__ = "Cross-fit the nuisances (see `sensitivity.debiased.fit.debiased_fit`)."

__all__ = [
    "Benchmark",
    "DebiasedFit",
    "DebiasedResult",
    "Moments",
    "Scenario",
    "Scores",
    "average_effect_scores",
    "benchmark_gain",
    "bounds",
    "debiased_fit",
    "moments",
    "multiplier",
    "partial_linear_scores",
    "robustness_value",
    "robustness_value_alpha",
    "surface",
]
