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
    notes: tuple[str, ...] = ()
    cautions: tuple[str, ...] = (standing.ONE_BIAS, standing.COMPARE_KNOWN, standing.DEFER)
    is_scalar = False
    _repr_fields = ("test", "pairs", "statistic", "gamma_at_alpha")

    def columns(self) -> dict[str, np.ndarray]:
        return {"gamma": self.gamma, "p_upper": self.p_upper, "p_lower": self.p_lower}

    def to_dict(self) -> dict:
        rows = [
            {"gamma": g, "p_upper": u, "p_lower": lo}
            for g, u, lo in zip(self.gamma.tolist(), self.p_upper.tolist(),
                                self.p_lower.tolist(), strict=True)
        ]  # fmt: skip
        return plain(
            {
                "test": self.test,
                "pairs": self.pairs,
                "statistic": self.statistic,
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
