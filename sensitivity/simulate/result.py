"""Probabilistic bias analysis: the distribution of bias-adjusted estimates."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..common import notes as standing
from ..common.results import Result, plain


@dataclass(frozen=True, eq=False, repr=False)
class SimulationResult(Result):
    """Bias-adjusted estimates under priors on a hidden binary confounder."""

    scale: str
    estimate: float
    ci: tuple[float, float]
    target: float
    draws: int
    seed: int
    discarded: int
    median: float
    interval: tuple[float, float]  # systematic error only, 2.5th to 97.5th percentile
    median_total: float
    interval_total: tuple[float, float]  # systematic and random error
    share_beyond_target: float
    priors: dict[str, str]
    correlation: float = 0.0
    ci_level: float = 0.95
    share_beyond_target_total: float | None = None  # the same share, random error added
    notes: tuple[str, ...] = ()
    sample: np.ndarray = field(default_factory=lambda: np.empty(0))  # for the figure
    sample_total: np.ndarray = field(default_factory=lambda: np.empty(0))
    cautions: tuple[str, ...] = (
        standing.ONE_BIAS,
        "The intervals summarise the priors given: they are as good as those priors, and a "
        "different choice gives different intervals.",
        standing.DEFER,
    )
    _repr_fields = ("scale", "draws", "median", "interval")
    presenter = "sensitivity.simulate.present"

    def to_dict(self) -> dict:
        return plain(
            {
                "scale": self.scale,
                "estimate": self.estimate,
                "ci": list(self.ci),
                "target": self.target,
                "draws": self.draws,
                "seed": self.seed,
                "discarded": self.discarded,
                "median": self.median,
                "interval": list(self.interval),
                "median_total": self.median_total,
                "interval_total": list(self.interval_total),
                "share_beyond_target": self.share_beyond_target,
                "share_beyond_target_total": self.share_beyond_target_total,
                "priors": self.priors,
                "correlation": self.correlation,
                "notes": list(self.all_notes()),
            }
        )

    def columns(self) -> dict[str, np.ndarray]:
        return {"bias_adjusted": self.sample, "bias_adjusted_total": self.sample_total}
