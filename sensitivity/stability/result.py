"""Coefficient stability's result: numbers and inputs (present.py words them)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..common import notes as standing
from ..common.results import Result, plain


@dataclass(frozen=True, eq=False, repr=False)
class StabilityResult(Result):
    """Oster's bias-adjusted coefficient and the delta that explains the estimate away."""

    estimate_short: float
    r2_short: float
    estimate_long: float
    r2_long: float
    r2_max: float
    delta: float
    target: float
    bias_adjusted: float | None
    bias_adjusted_roots: tuple[float, ...] | None
    bias_adjusted_approx: float
    delta_for_target: float | None
    delta_for_target_approx: float
    notes: tuple[str, ...] = ()
    variances: tuple[float, float, float] | None = None
    # the root nearer the long estimate than every real root, when it is complex (then the
    # reported bias-adjusted coefficient is a far root)
    complex_nearer: complex | None = None
    cautions: tuple[str, ...] = (standing.ONE_BIAS, standing.COMPARE_KNOWN, standing.DEFER)
    _repr_fields = ("delta", "r2_max", "bias_adjusted", "delta_for_target")
    presenter = "sensitivity.stability.present"

    def to_dict(self) -> dict:
        return plain(
            {
                "estimate_short": self.estimate_short,
                "r2_short": self.r2_short,
                "estimate_long": self.estimate_long,
                "r2_long": self.r2_long,
                "delta": self.delta,
                "r2_max": self.r2_max,
                "target": self.target,
                "bias_adjusted": self.bias_adjusted,
                "bias_adjusted_roots": None if self.bias_adjusted_roots is None
                else list(self.bias_adjusted_roots),
                "bias_adjusted_approx": self.bias_adjusted_approx,
                "delta_for_target": self.delta_for_target,
                "delta_for_target_approx": self.delta_for_target_approx,
                "notes": list(self.all_notes()),
            }
        )  # fmt: skip

    def columns(self) -> dict[str, np.ndarray]:
        d = self.to_dict()
        return {
            k: np.asarray([v if not isinstance(v, list) else ";".join(map(str, v))], dtype=object)
            for k, v in d.items()
            if k != "notes"
        }
