"""Partial-R² results: numbers and inputs (the family's present module words them)."""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from ..common import notes as standing
from ..common.results import Result, plain

if TYPE_CHECKING:
    from ..evalues.result import EValueResult


def covariate_name(name: str) -> str:
    """A formula term as a reader knows it: C(shift) is shift."""
    match = re.fullmatch(r"C\(\s*([^,)]+?)\s*(,.*)?\)", name)
    return match.group(1) if match else name


def _share(value: float) -> str:
    """A partial R² as a percentage (three significant digits below 1%)."""
    pct = 100 * float(value)
    return f"{pct:.3g}%" if 0 < abs(pct) < 1 else f"{pct:.2f}%"


@dataclass(frozen=True, eq=False)
class Scenario:
    """One confounder strength and the bias-adjusted result under it."""

    r2_treatment: float
    r2_outcome: float
    bias: float
    estimate: float
    se: float
    t: float
    ci: tuple[float, float]
    kind: str = "hypothetical"  # or "benchmark"
    benchmark: str | None = None
    k_treatment: float | None = None
    k_outcome: float | None = None
    capped: bool = False
    benchmark_source: str | None = None  # "data", "published", or with an assumed side
    # set when the benchmark multiple is too strong to exist: the largest k_treatment that does
    # (exclusive); the numbers are then NaN (null in JSON)
    k_max: float | None = None

    @property
    def impossible(self) -> bool:
        """True for a benchmark multiple no confounder can have."""
        return self.k_max is not None

    @property
    def label(self) -> str:
        """The scenario's one name, in every view: "smoker ×2", "shift ×1/×3" (treatment /
        outcome multiples), "chosen 2.00% / 5.00%" (partial R² given directly). The numbers
        are also fields of their own."""
        if self.kind == "benchmark":
            kt, ky = self.k_treatment, self.k_outcome
            times = f"×{kt:g}" if kt == ky else f"×{kt:g}/×{ky:g}"
            source = self.benchmark_source or "data"
            mark = {"data": "", "published": " (published)"}.get(
                source, " (treatment side assumed)"
            )
            return f"{covariate_name(self.benchmark or '')} {times}{mark}"
        return f"chosen {_share(self.r2_treatment)} / {_share(self.r2_outcome)}"

    def to_dict(self) -> dict:
        out = {
            "label": self.label,
            "kind": self.kind,
            "r2_treatment": self.r2_treatment,
            "r2_outcome": self.r2_outcome,
            "bias": self.bias,
            "bias_adjusted": {
                "estimate": self.estimate,
                "se": self.se,
                "t": self.t,
                "ci": list(self.ci),
            },
        }
        if self.kind == "benchmark":
            out |= {
                "benchmark": self.benchmark,
                "multiple_treatment": self.k_treatment,
                "multiple_outcome": self.k_outcome,
                "capped": self.capped,
                "benchmark_source": self.benchmark_source or "data",
            }
            if self.impossible:
                out |= {"impossible": True, "k_max": self.k_max}
        return plain(out)


@dataclass(frozen=True, eq=False)
class CovariateStrength:
    """An observed covariate (or categorical group): its own partial R² on each side."""

    name: str
    columns: tuple[str, ...]
    r2_treatment: float
    r2_outcome: float
    source: str = "data"  # or "published" (a paper's numbers), with an assumed treatment side

    def to_dict(self) -> dict:
        return plain(
            {
                "name": self.name,
                "columns": list(self.columns),
                "r2_treatment": self.r2_treatment,
                "r2_outcome": self.r2_outcome,
            }
        )


@dataclass(frozen=True, eq=False, repr=False)
class PartialR2Result(Result):
    """Partial-R² sensitivity of one OLS coefficient, with its inputs and scenarios."""

    estimate: float
    se: float
    dof: float
    t: float
    partial_r2: float
    reduce_by: float
    alpha: float
    robustness_value: float
    robustness_value_alpha: float
    treatment: str | None = None
    outcome: str | None = None
    n: int | None = None
    scenarios: tuple[Scenario, ...] = ()
    covariates: tuple[CovariateStrength, ...] | None = None
    evalue: EValueResult | None = None  # an EValueResult through the SMD conversion, if available
    notes: tuple[str, ...] = ()
    cautions: tuple[str, ...] = standing.PARTIAL_R2
    assumptions: tuple[str, ...] = field(
        default=(
            "OLS. The partial R², robustness value, bias and bias-adjusted estimates are "
            "identities of the fit and do not depend on the standard errors; the robustness "
            "value at alpha and the bias-adjusted se, t and CI use classical (homoskedastic) "
            "standard errors.",
            "A single hidden confounder (or a linear combination of several), entering the "
            "outcome model linearly.",
            "Benchmarks: the confounder is orthogonal to the benchmark covariate given the others.",
        )
    )
    is_scalar = True
    _repr_fields = ("estimate", "se", "dof", "robustness_value", "robustness_value_alpha")
    _input_fields = ("estimate", "se", "dof", "alpha", "reduce_by", "treatment")
    presenter = "sensitivity.partial_r2.present"

    # ----------------------------------------------------------------- derived views
    def report_parts(self) -> tuple[Result, ...]:
        """In a report a coefficient brings its E-value (when the outcome's SD gave one)."""
        return (self,) if self.evalue is None else (self.evalue, self)

    def with_scenarios(self, extra: Sequence[Scenario]) -> PartialR2Result:
        from dataclasses import replace

        return replace(self, scenarios=self.scenarios + tuple(extra))

    # ----------------------------------------------------------------- export
    def to_dict(self) -> dict:
        out: dict[str, Any] = {
            "treatment": self.treatment,
            "outcome": self.outcome,
            "n": self.n,
            "estimate": self.estimate,
            "se": self.se,
            "dof": self.dof,
            "t": self.t,
            "partial_r2": self.partial_r2,
            "reduce_by": self.reduce_by,
            "alpha": self.alpha,
            "robustness_value": self.robustness_value,
            "robustness_value_alpha": self.robustness_value_alpha,
            "scenarios": [s.to_dict() for s in self.scenarios],
        }
        if self.covariates is not None:
            out["covariates"] = [c.to_dict() for c in self.covariates]
        if self.evalue is not None:
            e = self.evalue
            out["evalue"] = {
                "evalue": e.evalue,
                "evalue_ci": e.evalue_ci,
                "rr": e.rr,
                "rr_ci": None if e.rr_ci is None else list(e.rr_ci),
                "sd_outcome": e.sd,
                "conversion": e.conversion,
            }
        out["assumptions"] = list(self.assumptions)
        out["notes"] = list(self.all_notes())
        return plain(out)

    def records(self) -> list[dict]:
        """One flat row a scenario (or one row with no scenarios), for CSV."""
        base = {
            k: v
            for k, v in self.to_dict().items()
            if k not in ("scenarios", "covariates", "evalue", "notes", "assumptions")
        }
        rows = []
        for s in self.scenarios or [None]:
            row = dict(base)
            if s is not None:
                d = s.to_dict()
                adj = d.pop("bias_adjusted")
                row |= {f"scenario_{k}": v for k, v in d.items()}
                row |= {
                    "bias_adjusted_estimate": adj["estimate"],
                    "bias_adjusted_se": adj["se"],
                    "bias_adjusted_t": adj["t"],
                    "bias_adjusted_ci_lower": adj["ci"][0],
                    "bias_adjusted_ci_upper": adj["ci"][1],
                }
            rows.append(row)
        return rows

    def columns(self) -> dict[str, np.ndarray]:
        """One row a scenario (or one row with no scenarios), for CSV."""
        rows = self.records()
        keys = list(dict.fromkeys(k for r in rows for k in r))  # every row's keys, in order
        return {k: np.asarray([r.get(k) for r in rows], dtype=object) for k in keys}
