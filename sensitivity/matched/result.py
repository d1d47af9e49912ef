"""Rosenbaum bounds' result: numbers and inputs (present.py words them)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..common import notes as standing
from ..common.results import Result, plain


@dataclass(frozen=True, eq=False, repr=False)
class MatchedResult(Result):
    """Bounds on a matched-pairs test's one-sided p-value over a range of hidden bias."""

    test: str  # "sign" or "signed-rank"
    pairs: int
    statistic: float
    alpha: float
    method: str
    zeros: str | None
    gamma: np.ndarray
    p_upper: np.ndarray
    p_lower: np.ndarray
    gamma_at_alpha: float | None
    zero_pairs: int = 0
    missing: int = 0
    estimate_low: np.ndarray | None = None  # Hodges-Lehmann range at each Gamma (signed rank)
    estimate_high: np.ndarray | None = None
    alternative: str = "greater"  # the one-sided test's direction: treated above control
    notes: tuple[str, ...] = ()
    cautions: tuple[str, ...] = (standing.ONE_BIAS, standing.COMPARE_KNOWN, standing.DEFER)
    is_scalar = False
    _repr_fields = ("test", "pairs", "statistic", "gamma_at_alpha")
    presenter = "sensitivity.matched.present"

    def columns(self) -> dict[str, np.ndarray]:
        out = {"gamma": self.gamma, "p_upper": self.p_upper, "p_lower": self.p_lower}
        if self.estimate_low is not None and self.estimate_high is not None:
            out |= {"estimate_low": self.estimate_low, "estimate_high": self.estimate_high}
        return out

    def to_dict(self) -> dict:
        cols = {k: np.asarray(v).tolist() for k, v in self.columns().items()}
        rows = [dict(zip(cols, values, strict=True)) for values in zip(*cols.values(), strict=True)]
        return plain(
            {
                "test": self.test,
                "pairs": self.pairs,
                "statistic": self.statistic,
                "alternative": self.alternative,
                "alpha": self.alpha,
                "method": self.method,
                "zeros": self.zeros,
                "zero_pairs": self.zero_pairs,
                "missing_pairs": self.missing,
                "rows": rows,
                "gamma_at_alpha": self.gamma_at_alpha,
                "notes": list(self.all_notes()),
            }
        )
