"""Probabilistic bias analysis for a hidden binary confounder."""

from .core import Prior, parse_prior, simulate
from .result import SimulationResult

__all__ = ["Prior", "SimulationResult", "parse_prior", "simulate"]
