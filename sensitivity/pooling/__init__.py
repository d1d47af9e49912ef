"""Confounding in a random-effects meta-analysis (Mathur & VanderWeele 2020)."""

from .core import (
    bias_to_reduce,
    share_beyond,
    share_se,
    strength_of_bias,
    tau2_variance,
)
from .data import fit_random_effects, pool_estimates, pool_table, read_studies
from .result import PoolResult

__all__ = [
    "PoolResult",
    "bias_to_reduce",
    "fit_random_effects",
    "pool_estimates",
    "pool_table",
    "read_studies",
    "share_beyond",
    "share_se",
    "strength_of_bias",
    "tau2_variance",
]
