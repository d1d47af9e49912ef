"""Omitted-variable bias of an OLS coefficient in the partial R² parameterisation."""

from .core import (
    adjusted_for_confounder,
    assemble,
    benchmark_scenarios,
    benchmark_strengths,
    bias_of_confounder,
    hypothetical_scenarios,
    partial_r2_of_f,
    partial_r2_of_t,
    partial_r2_summary,
    robustness_value_of_t,
    se_of_confounder,
    surface,
    t_critical,
)
from .published import benchmark_from_text, published_benchmark, with_published_benchmarks
from .result import CovariateStrength, PartialR2Result, Scenario

__all__ = [
    "CovariateStrength",
    "PartialR2Result",
    "Scenario",
    "assemble",
    "benchmark_scenarios",
    "benchmark_strengths",
    "benchmark_from_text",
    "bias_of_confounder",
    "adjusted_for_confounder",
    "hypothetical_scenarios",
    "partial_r2_of_f",
    "partial_r2_of_t",
    "partial_r2_summary",
    "published_benchmark",
    "robustness_value_of_t",
    "se_of_confounder",
    "surface",
    "t_critical",
    "with_published_benchmarks",
]
