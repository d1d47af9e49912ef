"""Rosenbaum bounds for matched pairs (sign test and Wilcoxon signed-rank test)."""

from .core import ranks, rosenbaum_bounds, sign_test_bounds, signed_rank_bounds
from .result import MatchedResult

__all__ = ["MatchedResult", "ranks", "rosenbaum_bounds", "sign_test_bounds", "signed_rank_bounds"]
