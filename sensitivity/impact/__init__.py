"""The impact threshold of a confounding variable (Frank 2000; Frank et al. 2013)."""

from .core import impact_threshold, partial_correlation
from .result import ImpactResult

__all__ = ["ImpactResult", "impact_threshold", "partial_correlation"]
