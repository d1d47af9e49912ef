"""Bounds on a weighted estimate under the marginal sensitivity model, as numbers."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..common import notes as standing
from ..common.results import Result, plain

ODDS_CAUTION = (
    "Λ bounds how far a hidden confounder moves each unit's odds of treatment beyond the "
    "measured covariates; it says nothing of confounders the model already mishandles "
    "(a misspecified propensity model) or of extreme weights, and no value of Λ is a pass "
    "mark: compare it with how far the measured covariates themselves move the odds."
)


@dataclass(frozen=True, eq=False, repr=False)
class WeightingResult(Result):
    """A weighted (Hájek IPW) effect and its bounds at each Λ, by two methods.

    `table[method]` holds arrays over `lam`: lower, upper (the point bounds), ci_lower,
    ci_upper (the percentile-bootstrap interval at level 1 - alpha), and for a binary
    outcome the same on the risk-ratio scale (rr_...). `lambda_at_null[method]` is the least
    Λ at which the interval includes `target` (None when not within [1, max Λ]).
    """

    estimand: str
    methods: tuple[str, ...]  # among "sharp" and "percentile" (the box bounds)
    estimate: float
    estimate_ci: tuple[float, float]
    risk_ratio: float | None
    lam: np.ndarray
    table: dict
    lambda_at_null: dict
    target: float
    alpha: float
    resamples: int
    seed: int
    seed_drawn: bool
    outcome_type: str
    n_treated: int
    n_control: int
    extreme: str
    cut: float
    overlap: dict
    propensity_source: str
    names: tuple[str, str] = ("treatment", "outcome")
    covariate_names: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    cautions: tuple[str, ...] = field(default=(standing.ONE_BIAS, ODDS_CAUTION, standing.DEFER))
    presenter = "sensitivity.weighting.present"
    _repr_fields = ("estimand", "estimate", "lam")

    @property
    def ci_level(self) -> float:
        return 1 - self.alpha

    @property
    def lower(self) -> np.ndarray:
        """The first method's lower bounds over `lam` (sharp when computed)."""
        return self.table[self.methods[0]]["lower"]

    @property
    def upper(self) -> np.ndarray:
        return self.table[self.methods[0]]["upper"]

    @property
    def search_range(self) -> tuple[float, float]:
        return (1.0, float(self.lam.max()))

    def rows(self) -> list[dict]:
        out = []
        for i, lam in enumerate(self.lam):
            for method in self.methods:
                t = self.table[method]
                row = {
                    "lambda": float(lam),
                    "method": method,
                    "lower": t["lower"][i],
                    "upper": t["upper"][i],
                    "ci": [t["ci_lower"][i], t["ci_upper"][i]],
                }
                if self.outcome_type == "binary":
                    row["rr_lower"] = t["rr_lower"][i]
                    row["rr_upper"] = t["rr_upper"][i]
                    row["rr_ci"] = [t["rr_ci_lower"][i], t["rr_ci_upper"][i]]
                out.append(row)
        return plain(out)

    def to_dict(self) -> dict:
        return plain(
            {
                "estimand": self.estimand,
                "estimate": self.estimate,
                "ci": list(self.estimate_ci),
                "ci_level": self.ci_level,
                "risk_ratio": self.risk_ratio,
                "outcome_type": self.outcome_type,
                "treatment": self.names[0],
                "outcome": self.names[1],
                "n_treated": self.n_treated,
                "n_control": self.n_control,
                "rows": self.rows(),
                "lambda_at_null": dict(self.lambda_at_null),
                "target": self.target,
                "search_range": list(self.search_range),
                "resamples": self.resamples,
                "seed": self.seed,
                "propensity": self.propensity_source,
                "extreme": {"rule": self.extreme, "cut": self.cut},
                "overlap": self.overlap,
                "notes": list(self.all_notes()),
            }
        )

    def columns(self) -> dict[str, np.ndarray]:
        m, k = self.lam.size, len(self.methods)
        cols: dict[str, np.ndarray] = {
            "lambda": np.repeat(self.lam, k),
            "method": np.tile(np.array(self.methods, dtype=object), m),
        }
        keys = ["lower", "upper", "ci_lower", "ci_upper"]
        if self.outcome_type == "binary":
            keys += ["rr_lower", "rr_upper", "rr_ci_lower", "rr_ci_upper"]
        for key in keys:
            cols[key] = np.column_stack([self.table[t][key] for t in self.methods]).ravel()
        return cols
