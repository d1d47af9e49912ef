"""The impact threshold's result: numbers and inputs (present.py words them)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..common import notes as standing
from ..common.results import Result, plain


@dataclass(frozen=True, eq=False, repr=False)
class ImpactResult(Result):
    """How strong a confounding variable would have to be to change the inference."""

    estimate: float | None
    se: float | None
    t: float
    n: int | None
    covariates: int | None
    dof: float
    alpha: float
    t_critical: float
    correlation: float  # observed partial correlation of treatment and outcome
    correlation_threshold: float  # the correlation at which significance is lost (signed)
    itcv: float  # the impact: the product of the confounder's two correlations
    itcv_component: float  # each correlation, taken equal in size
    significant: bool  # at alpha: the question is then losing significance, else gaining it
    estimate_threshold: float | None  # t_critical x se
    bias_share: float | None  # the share of the coefficient bias would have to account for
    swapped_observations: float | None  # n x bias_share: observations swapped for no-effect ones
    # short of significance: the proportion by which the coefficient must grow to reach it
    estimate_growth: float | None = None
    cautions: tuple[str, ...] = (standing.ONE_BIAS, standing.COMPARE_KNOWN, standing.DEFER)
    notes: tuple[str, ...] = ()
    _repr_fields = ("t", "dof", "itcv", "bias_share")
    presenter = "sensitivity.impact.present"

    def to_dict(self) -> dict:
        return plain(
            {
                "estimate": self.estimate,
                "se": self.se,
                "t": self.t,
                "n": self.n,
                "covariates": self.covariates,
                "dof": self.dof,
                "alpha": self.alpha,
                "t_critical": self.t_critical,
                "correlation": self.correlation,
                "correlation_threshold": self.correlation_threshold,
                "itcv": self.itcv,
                "itcv_component": self.itcv_component,
                "significant": self.significant,
                "estimate_threshold": self.estimate_threshold,
                "bias_share": self.bias_share,
                "swapped_observations": self.swapped_observations,
                "estimate_growth": self.estimate_growth,
                "notes": list(self.all_notes()),
            }
        )

    def columns(self) -> dict[str, np.ndarray]:
        d = self.to_dict()
        return {k: np.asarray([v], dtype=object) for k, v in d.items() if k != "notes"}
