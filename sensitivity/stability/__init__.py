"""Coefficient stability under proportional selection (Oster 2019)."""

from .core import coefficient_stability, delta_for_target, real_roots
from .result import StabilityResult

__all__ = ["StabilityResult", "coefficient_stability", "delta_for_target", "real_roots"]
