"""Screening many published results at once: every row kept, bad rows flagged."""

from .core import Options, computed_names, screen_columns
from .result import ScreenSummary, Tally
from .text import parse, parse_many, read_result

__all__ = [
    "Options",
    "ScreenSummary",
    "Tally",
    "computed_names",
    "parse",
    "parse_many",
    "read_result",
    "screen_columns",
]
