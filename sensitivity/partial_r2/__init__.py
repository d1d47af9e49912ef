"""Omitted-variable bias of an OLS coefficient in the partial R² parameterisation."""

from .core import (
    assemble,
    benchmark_scenarios,
    benchmark_strengths,
    bias,
    bias_adjusted,
    hypothetical_scenarios,
    partial_r2_of_f,
    partial_r2_of_t,
    partial_r2_summary,
    robustness_value,
    se_with_confounder,
    surface,
    t_critical,
)
from .result import CovariateStrength, PartialR2Result, Scenario

__all__ = [
    "CovariateStrength",
    "PartialR2Result",
    "Scenario",
    "assemble",
    "benchmark_scenarios",
    "benchmark_strengths",
    "bias",
    "bias_adjusted",
    "hypothetical_scenarios",
    "partial_r2_of_f",
    "partial_r2_of_t",
    "partial_r2_summary",
    "robustness_value",
    "se_with_confounder",
    "surface",
    "t_critical",
]
