"""E-values and the bounding factor: the family's public names."""

from ..common.scales import RATIO_SCALES, SCALES, conversion_text, from_risk_ratio, to_risk_ratio
from .core import (
    CHECKS,
    EVALUE_SCALES,
    bounding_factor,
    confounder_bound,
    evalue,
    evalue_of_interval,
    evalue_of_rr,
    evalue_rows,
)
from .result import ConfounderBound, EValueResult

__all__ = [
    "CHECKS",
    "EVALUE_SCALES",
    "RATIO_SCALES",
    "SCALES",
    "ConfounderBound",
    "EValueResult",
    "bounding_factor",
    "confounder_bound",
    "conversion_text",
    "evalue",
    "evalue_of_interval",
    "evalue_of_rr",
    "evalue_rows",
    "from_risk_ratio",
    "to_risk_ratio",
]
