"""E-value results: numbers and inputs, no prose (the family's present module words them)."""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..common import notes as standing
from ..common.results import Result, plain
from ..common.scales import RATIO_SCALES, conversion_text


@dataclass(frozen=True, eq=False, repr=False)
class ConfounderBound(Result):
    """The most confounders of given strengths could move an estimate (bounding factor)."""

    source: EValueResult
    rr_treatment: np.ndarray
    rr_outcome: np.ndarray
    bounding_factor: np.ndarray
    rr: np.ndarray  # risk-ratio-scale estimate moved toward the target by the bounding factor
    rr_ci_limit: np.ndarray | None  # the CI limit nearest the target, moved likewise
    estimate: np.ndarray  # `rr` back on the source scale
    ci_limit: np.ndarray | None
    explains_estimate: np.ndarray  # the moved estimate reaches the target
    explains_ci: np.ndarray | None  # the moved CI limit reaches the target

    _repr_fields = ("rr_treatment", "rr_outcome", "bounding_factor", "estimate")
    presenter = "sensitivity.evalues.present"
    is_scalar = False

    def columns(self) -> dict[str, np.ndarray]:
        """One row a confounder: strengths, bounding factor, moved values, verdicts."""
        n = np.broadcast(self.rr_treatment, self.rr_outcome, self.rr).shape

        def col(x):
            return np.broadcast_to(np.asarray(np.nan if x is None else x), n).ravel()

        return {
            "rr_treatment": col(self.rr_treatment),
            "rr_outcome": col(self.rr_outcome),
            "bounding_factor": col(self.bounding_factor),
            "bias_adjusted_rr": col(self.rr),
            "bias_adjusted_rr_ci_limit": col(self.rr_ci_limit),
            "bias_adjusted_estimate": col(self.estimate),
            "bias_adjusted_ci_limit": col(self.ci_limit),
            "explains_estimate": col(self.explains_estimate).astype(bool),
            "explains_ci": (
                col(self.explains_ci).astype(bool)
                if self.explains_ci is not None
                else np.full(col(self.rr).shape, None, dtype=object)
            ),
        }

    def rows(self) -> list[dict]:
        """One nested dict a confounder, shaped like the JSON of other results."""
        out = []
        for rec in self.records():
            row = {k: v for k, v in rec.items() if not k.startswith("bias_adjusted_")}
            row["bias_adjusted"] = {
                k.removeprefix("bias_adjusted_"): v
                for k, v in rec.items()
                if k.startswith("bias_adjusted_")
            }
            out.append(row)
        return out

    def to_dict(self) -> dict:
        return {"confounders": self.rows()}


@dataclass(frozen=True, eq=False, repr=False)
class EValueResult(Result):
    """E-values of an estimate and its confidence interval, with the inputs behind them.

    Attributes mirror the JSON keys; `notes` holds conversions and degenerate-input remarks,
    `cautions` the standing cautions for this method. Every number is a numpy array (0-d
    for one result); `scale` and `outcome` are strings, or arrays of them for a mixed table.
    """

    scale: str | np.ndarray
    estimate: np.ndarray
    ci: tuple[np.ndarray, np.ndarray] | None
    se: np.ndarray | None
    sd: np.ndarray | None
    contrast: np.ndarray
    outcome: str | np.ndarray | None
    target_value: np.ndarray
    rr: np.ndarray
    rr_ci: tuple[np.ndarray, np.ndarray] | None
    rr_target: np.ndarray
    evalue: np.ndarray
    evalue_ci: np.ndarray | None
    notes: tuple[str, ...]
    cautions: tuple[str, ...] = standing.EVALUE
    confounders: ConfounderBound | None = None
    ci_level: float = 0.95
    model: dict | None = None  # from a fitted model: kind, n, outcome_share, treatment
    overlap: dict | None = None  # a binary treatment's positivity diagnostic
    several_biases: dict | None = None  # the joint E-value with selection / misclassification
    as_read: dict | None = None  # a result given as published text: what was read from it

    _repr_fields = ("scale", "estimate", "ci", "evalue", "evalue_ci")
    _input_fields = ("scale", "estimate", "ci", "ci_level", "se", "sd", "contrast", "outcome",
                     "target_value")  # fmt: skip
    presenter = "sensitivity.evalues.present"

    @property
    def is_scalar(self) -> bool:  # type: ignore[override]
        return self.estimate.ndim == 0 and isinstance(self.scale, str)

    @property
    def target_is_null(self) -> bool:
        null = np.where(np.isin(np.asarray(self.scale, dtype=object), RATIO_SCALES), 1.0, 0.0)
        return bool(np.all(self.target_value == null))

    @property
    def conversion(self) -> str | list[str]:
        """The phrase naming the conversion to the risk-ratio scale (one per row if mixed)."""
        if (
            self.is_scalar
            or isinstance(self.scale, str)
            and not isinstance(self.outcome, np.ndarray)
        ):
            return conversion_text(
                str(self.scale),
                None if self.outcome is None else str(self.outcome),
                float(np.asarray(self.contrast).flat[0]),
            )
        n = self.estimate.shape
        s = np.broadcast_to(np.asarray(self.scale, dtype=object), n).ravel()
        o = np.broadcast_to(
            np.asarray("" if self.outcome is None else self.outcome, dtype=object), n
        ).ravel()
        c = np.broadcast_to(np.asarray(self.contrast, float), n).ravel()
        return [
            conversion_text(str(a), str(b) or None, float(k))
            for a, b, k in zip(s, o, c, strict=True)
        ]

    def confounder(self, rr_treatment: object, rr_outcome: object) -> ConfounderBound:
        """The most a confounder with these two risk ratios could move the estimate.

        The estimate and both interval limits move by the bounding factor toward the target
        on the risk-ratio scale (Ding & VanderWeele 2016). Values broadcast against the
        result's estimates.
        """
        from .bounds import confounder_shift

        conversion = {"outcome": self.outcome, "sd": self.sd, "contrast": self.contrast}
        return ConfounderBound(
            source=self,
            **confounder_shift(
                self.scale, self.rr, self.rr_ci, self.rr_target, conversion,
                rr_treatment, rr_outcome,
            ),
        )  # fmt: skip

    def with_confounders(self, rr_treatment: object, rr_outcome: object) -> EValueResult:
        """This result with `confounder` bounds attached (exported and summarised with it)."""
        from ..common.checks import as_array
        from ..common.errors import InputError

        if not self.is_scalar:
            raise InputError("attach confounders to a single result; use `confounder` for arrays")
        rr_t = np.atleast_1d(as_array(rr_treatment, "rr_treatment"))
        rr_y = np.atleast_1d(as_array(rr_outcome, "rr_outcome"))
        return replace(self, confounders=self.confounder(rr_t, rr_y))

    # ----------------------------------------------------------------- export
    def to_dict(self) -> dict:
        """JSON-ready plain values under the contract's keys (plus `confounders`)."""

        def pair(p):
            return None if p is None else [p[0], p[1]]

        md = np.any(np.asarray(self.scale, dtype=object) == "md")
        out = plain(
            {
                "scale": self.scale,
                "estimate": self.estimate,
                "ci": pair(self.ci),
                "ci_level": self.ci_level if self.rr_ci is not None else None,
                "se": self.se,
                "sd": self.sd,
                "contrast": self.contrast if md else None,
                "outcome": self.outcome,
                "target": self.target_value,
                "rr": self.rr,
                "rr_ci": pair(self.rr_ci),
                "rr_target": self.rr_target,
                "conversion": self.conversion,
                "evalue": self.evalue,
                "evalue_ci": self.evalue_ci,
                "notes": list(self.all_notes()),
            }
        )
        if self.confounders is not None:
            out["confounders"] = self.confounders.rows()
        if self.model is not None:
            out["model"] = plain(self.model)
        if self.overlap is not None:
            out["overlap"] = plain(self.overlap)
        if self.several_biases is not None:
            out["several_biases"] = plain(self.several_biases)
        if self.as_read is not None:
            out["as_read"] = plain(self.as_read)
        return out

    def with_biases(self, *, selection: str | None = None,
                    misclassification: bool = False) -> EValueResult:  # fmt: skip
        """This result with the joint E-value for confounding plus the biases named."""
        from ..common.errors import InputError
        from .bounds import combined_evalues

        if not self.is_scalar:
            raise InputError("the joint E-value describes one result; index the inputs first")
        ci = None if self.rr_ci is None else (float(self.rr_ci[0]), float(self.rr_ci[1]))
        info = combined_evalues(float(self.rr), ci, float(self.rr_target), selection=selection,
                                misclassification=misclassification)  # fmt: skip
        return replace(self, several_biases=info)

    def own_columns(self) -> dict[str, np.ndarray]:
        """The result's own columns, one row an estimate."""
        n = np.broadcast(self.estimate, self.rr, self.rr_target).shape

        def col(x, kind=float):
            if x is None:
                return np.full(n, np.nan).ravel()
            return np.broadcast_to(np.asarray(x, dtype=kind), n).ravel()

        lo, up = self.ci if self.ci is not None else (None, None)
        rlo, rup = self.rr_ci if self.rr_ci is not None else (None, None)
        conv = self.conversion
        md = np.any(np.asarray(self.scale, dtype=object) == "md")
        return {
            "scale": col(self.scale, object),
            "estimate": col(self.estimate),
            "ci_lower": col(lo),
            "ci_upper": col(up),
            "se": col(self.se),
            "sd": col(self.sd),
            "contrast": col(self.contrast) if md else col(None),
            "outcome": col(self.outcome, object),
            "target": col(self.target_value),
            "rr": col(self.rr),
            "rr_ci_lower": col(rlo),
            "rr_ci_upper": col(rup),
            "rr_target": col(self.rr_target),
            "conversion": col(
                conv if isinstance(conv, str) else np.asarray(conv, dtype=object), object
            ),
            "evalue": col(self.evalue),
            "evalue_ci": col(self.evalue_ci),
        }

    def columns(self) -> dict[str, np.ndarray]:
        """Columns for CSV: one row a result, or one a hypothetical confounder when attached."""
        own = self.own_columns()
        if self.as_read is not None:  # what was read from the text, as the screen names it
            n = len(own["estimate"])
            own |= {
                f"as_read_{k}": np.full(n, np.nan if v is None else v, dtype=object)
                for k, v in self.as_read.items()
            }
        if self.confounders is None:
            return own
        conf = self.confounders.columns()
        k = len(next(iter(conf.values())))
        out = {name: np.repeat(v, k) for name, v in own.items()}
        out |= {f"confounder_{name}": v for name, v in conf.items()}
        return out


@dataclass(frozen=True, eq=False, repr=False)
class RiskDifferenceResult(Result):
    """The E-value of a risk difference from the 2 x 2 counts (the whole population)."""

    counts: tuple[int, int, int, int]  # cases and totals: treated, then controls
    estimate: float  # the risk difference
    ci: tuple[float, float]  # its Wald interval
    ci_level: float
    bounding_factor: float  # B*: brings the bound on the causal RD to 0
    bounding_factor_ci: float
    evalue: float
    evalue_ci: float
    notes: tuple[str, ...] = ()
    cautions: tuple[str, ...] = standing.EVALUE
    _repr_fields = ("estimate", "evalue", "evalue_ci")
    presenter = "sensitivity.evalues.present"

    def to_dict(self) -> dict:
        a, n1, c, n0 = self.counts
        return plain(
            {
                "scale": "rd",
                "counts": {"cases_treated": a, "total_treated": n1, "cases_control": c,
                           "total_control": n0},
                "estimate": self.estimate,
                "ci": list(self.ci),
                "ci_level": self.ci_level,
                "target": 0.0,
                "rr": self.bounding_factor,
                "rr_ci": None,
                "bounding_factor_ci": self.bounding_factor_ci,
                "evalue": self.evalue,
                "evalue_ci": self.evalue_ci,
                "notes": list(self.all_notes()),
            }
        )  # fmt: skip

    def columns(self) -> dict[str, np.ndarray]:
        d = self.to_dict()
        flat = {k: v for k, v in d.items() if not isinstance(v, (dict, list))}
        return {k: np.asarray([v], dtype=object) for k, v in flat.items()}
