"""Tipping-point grids for a hidden confounder of chosen strength."""

from .core import (
    MAX_CELLS,
    SCALES,
    binary_confounder_grid,
    bounding_grid,
    continuous_confounder_grid,
    default_ranges,
    parse_range,
    partial_r2_grid,
    value_range,
)
from .result import TippingGrid

__all__ = [
    "MAX_CELLS",
    "SCALES",
    "TippingGrid",
    "binary_confounder_grid",
    "bounding_grid",
    "continuous_confounder_grid",
    "default_ranges",
    "parse_range",
    "partial_r2_grid",
    "value_range",
]
