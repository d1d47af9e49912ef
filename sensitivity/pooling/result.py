"""A pooled sensitivity analysis: the studies, the random-effects fit and the shares."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..common import notes as standing
from ..common.results import Result, plain

#: Per-study columns, in output order.
STUDY_KEYS = (
    "label", "used", "scale", "log_estimate", "se", "weight", "rr", "rr_lower", "rr_upper", "level",
    "evalue", "evalue_ci", "error", "notes",
)  # fmt: skip

CAUTIONS = (
    standing.ONE_BIAS,
    "The share of meaningfully strong effects assumes the true effects are normal on the log "
    "scale and that the bias is the same in every study (or varies as stated); it describes "
    "the studies pooled, not every setting.",
    standing.NOT_A_THRESHOLD,
    standing.COMPARE_KNOWN,
    "Report as your field's guideline for meta-analyses asks (e.g. PRISMA, MOOSE), and have "
    "the analysis checked in statistical review.",
)


@dataclass(frozen=True, eq=False, repr=False)
class PoolResult(Result):
    """How much common confounding bias would shrink the share of strong true effects."""

    studies: dict  # STUDY_KEYS -> one array each, every input row
    k: int  # studies pooled
    method: str  # "pm" or "dl"
    method_name: str
    log_estimate: float
    log_se: float
    pooled_estimate: float
    ci: tuple[float, float]
    alpha: float
    tau2: float
    tau2_se: float
    tau_se: float
    q_statistic: float
    i2: float
    threshold: float  # q on the ratio scale
    share: float  # r
    direction: str  # "above" or "below"
    bias_sd: float
    bias: np.ndarray  # the grid of common bias factors
    share_beyond: np.ndarray
    share_beyond_se: np.ndarray
    share_observed: float  # the share at B = 1
    bias_to_reduce: float  # T, at least 1
    bias_to_reduce_se: float
    bias_to_reduce_raw: float  # T before truncation at 1
    strength_to_reduce: float  # G
    strength_to_reduce_se: float
    evalue: float
    evalue_ci: float
    notes: tuple[str, ...] = ()
    cautions: tuple[str, ...] = CAUTIONS
    presenter = "sensitivity.pooling.present"
    _input_fields = ("k", "method", "threshold", "share", "bias_sd", "alpha")
    is_scalar = False
    _repr_fields = ("k", "pooled_estimate", "tau2", "bias_to_reduce", "strength_to_reduce")

    @property
    def level(self) -> float:
        return 1 - self.alpha

    @property
    def tau(self) -> float:
        return float(np.sqrt(self.tau2))

    def study_rows(self) -> list[dict]:
        cols = {k: plain(np.asarray(self.studies[k])) for k in STUDY_KEYS if k in self.studies}
        n = len(cols["label"])
        return [{k: v[i] for k, v in cols.items()} for i in range(n)]

    def to_dict(self) -> dict:
        return plain(
            {
                "studies": self.study_rows(),
                "pooled": {
                    "estimate": self.pooled_estimate,
                    "ci": list(self.ci),
                    "ci_level": self.level,
                    "log_estimate": self.log_estimate,
                    "log_se": self.log_se,
                    "tau2": self.tau2,
                    "tau2_se": self.tau2_se,
                    "tau": self.tau,
                    "tau_se": self.tau_se,
                    "q_statistic": self.q_statistic,
                    "i2": self.i2,
                    "method": self.method,
                    "studies": self.k,
                },
                "threshold": self.threshold,
                "share": self.share,
                "direction": self.direction,
                "bias_sd": self.bias_sd,
                "share_beyond": [
                    {"bias": b, "share": p, "se": s}
                    for b, p, s in zip(
                        plain(self.bias),
                        plain(self.share_beyond),
                        plain(self.share_beyond_se),
                        strict=True,
                    )
                ],
                "share_without_bias": self.share_observed,
                "bias_to_reduce": {
                    "value": self.bias_to_reduce,
                    "se": self.bias_to_reduce_se,
                },
                "strength_to_reduce": {
                    "value": self.strength_to_reduce,
                    "se": self.strength_to_reduce_se,
                },
                "evalue": {"estimate": self.evalue, "ci": self.evalue_ci},
                "notes": list(self.all_notes()),
            }
        )

    def columns(self) -> dict[str, np.ndarray]:
        """The share of meaningfully strong effects at each bias factor (the CSV table)."""
        return {
            "bias": self.bias,
            "share": self.share_beyond,
            "se": self.share_beyond_se,
        }
