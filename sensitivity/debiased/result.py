"""Debiased-ML results: the frozen fit (nuisances reduced to numbers) and its bounds.

`DebiasedFit` is what cross-fitting leaves behind: the estimate's and the bound's moments
(`core.Moments`), the benchmarks' measured gains and the per-row nuisance predictions. Its
`bounds()` answers any number of strength questions without refitting; the answer is a
`DebiasedResult` that the family's present module words.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..common import notes as standing
from ..common.errors import InputError
from ..common.levels import check_alpha, level_text, z_critical
from ..common.results import Result, plain
from . import core

#: Scenario columns in the order the table and the CSV show them.
SCENARIO_FIELDS = (
    "kind",
    "benchmark",
    "k_outcome",
    "k_treatment",
    "cy2",
    "cd2",
    "rho",
    "bias",
    "bound_lower",
    "bound_upper",
    "ci_lower",
    "ci_upper",
    "capped",
)


@dataclass(frozen=True, eq=False)
class Scenario:
    """One confounder strength and the bounds on the effect under it."""

    cy2: float
    cd2: float
    rho: float
    bias: float
    bound_lower: float
    bound_upper: float
    ci_lower: float
    ci_upper: float
    kind: str = "chosen"  # or "benchmark"
    benchmark: str | None = None
    k_outcome: float | None = None
    k_treatment: float | None = None
    capped: bool = False

    def to_dict(self) -> dict:
        return plain({k: getattr(self, k) for k in SCENARIO_FIELDS})


@dataclass(frozen=True, eq=False)
class Benchmark:
    """An observed covariate (or group): its strengths measured by refitting without it."""

    name: str
    columns: tuple[str, ...]
    cy2: float
    cd2: float
    rho: float
    estimate_without: float

    def to_dict(self) -> dict:
        return plain(
            {
                "name": self.name,
                "columns": list(self.columns),
                "cy2": self.cy2,
                "cd2": self.cd2,
                "rho": self.rho,
                "estimate_without": self.estimate_without,
            }
        )


ASSUMPTIONS = {
    "partial-linear": (
        "The partially linear model Y = theta D + g(X) + e: the effect does not vary with the "
        "covariates (otherwise theta is a variance-weighted average of effects).",
    ),
    "average": (
        "A binary treatment; the average effect over the whole sample (interactive model), "
        "with propensities trimmed away from 0 and 1.",
    ),
}
COMMON_ASSUMPTIONS = (
    "The learners estimate the nuisance functions well enough (fast enough) for the "
    "orthogonal score; standard errors come from the influence functions (large samples).",
    "The bound covers every hidden confounder (or set of them) of the given strengths; the "
    "strengths cy2 and cd2 are shares of the outcome's and the Riesz representer's "
    "variation that the confounder would explain.",
    "Benchmarks: the hidden confounder is compared with what a measured covariate adds to "
    "the learners' fits; that says nothing about how strong unmeasured confounders are.",
)


@dataclass(frozen=True, eq=False, repr=False)
class DebiasedResult(Result):
    """Omitted-variable bounds for a debiased-ML estimate at chosen strengths and benchmarks."""

    presenter = "sensitivity.debiased.present"

    estimate: float
    se: float
    ci: tuple[float, float]
    alpha: float
    target: float
    rho: float
    s: float
    robustness_value: float
    robustness_value_alpha: float
    moments: core.Moments
    target_effect: str = "partial-linear"
    treatment: str | None = None
    outcome: str | None = None
    covariates: tuple[str, ...] = ()
    learner: str | None = None
    folds: int | None = None
    seed: int | None = None
    scenarios: tuple[Scenario, ...] = ()
    benchmarks: tuple[Benchmark, ...] = ()
    notes: tuple[str, ...] = ()
    cautions: tuple[str, ...] = standing.PARTIAL_R2
    assumptions: tuple[str, ...] = ()
    is_scalar = True
    _repr_fields = ("estimate", "se", "robustness_value", "robustness_value_alpha")
    _input_fields = (
        "target_effect", "treatment", "outcome", "covariates", "learner", "folds", "seed",
        "alpha", "rho", "target",
    )  # fmt: skip

    @property
    def n(self) -> int:
        return self.moments.n

    def to_dict(self) -> dict:
        out: dict[str, Any] = {
            "target_effect": self.target_effect,
            "treatment": self.treatment,
            "outcome": self.outcome,
            "covariates": list(self.covariates),
            "n": self.n,
            "learner": self.learner,
            "folds": self.folds,
            "seed": self.seed,
            "estimate": self.estimate,
            "se": self.se,
            "ci": list(self.ci),
            "alpha": self.alpha,
            "target": self.target,
            "rho": self.rho,
            "s": self.s,
            "sigma2": self.moments.sigma2,
            "nu2": self.moments.nu2,
            "robustness_value": self.robustness_value,
            "robustness_value_alpha": self.robustness_value_alpha,
            "scenarios": [s.to_dict() for s in self.scenarios],
            "benchmarks": [b.to_dict() for b in self.benchmarks],
            "assumptions": list(self.assumptions),
            "notes": list(self.all_notes()),
        }
        return plain(out)

    def columns(self) -> dict[str, np.ndarray]:
        """One row a scenario (or one row with no scenarios): the fit's numbers repeated."""
        base = {
            "target_effect": self.target_effect,
            "treatment": self.treatment,
            "outcome": self.outcome,
            "n": self.n,
            "learner": self.learner,
            "folds": self.folds,
            "seed": self.seed,
            "estimate": self.estimate,
            "se": self.se,
            "ci_lower_estimate": self.ci[0],
            "ci_upper_estimate": self.ci[1],
            "alpha": self.alpha,
            "target": self.target,
            "s": self.s,
            "robustness_value": self.robustness_value,
            "robustness_value_alpha": self.robustness_value_alpha,
        }
        rows = len(self.scenarios) or 1
        out = {k: np.asarray([v] * rows, dtype=object) for k, v in base.items()}
        for name in SCENARIO_FIELDS:
            values = [getattr(s, name) for s in self.scenarios] or [None]
            out[f"scenario_{name}" if name in ("kind", "capped") else name] = np.asarray(
                values, dtype=object
            )
        return out


@dataclass(frozen=True, eq=False, repr=False)
class DebiasedFit:
    """Cross-fitted nuisances reduced to what every bound needs; `bounds()` reuses them.

    Attributes
    ----------
    moments : core.Moments
        Estimate, sigma2, nu2 and the influence-function covariances.
    benchmarks : tuple of Benchmark
        Each requested covariate group's strengths, measured by refitting without it.
    predictions : dict of ndarray
        The cross-fitted nuisance predictions per row, and ``fold`` (each row's fold).
    """

    moments: core.Moments
    target_effect: str
    treatment: str | None = None
    outcome: str | None = None
    covariates: tuple[str, ...] = ()
    learner: str | None = None
    folds: int | None = None
    seed: int | None = None
    benchmarks: tuple[Benchmark, ...] = ()
    predictions: dict[str, np.ndarray] = field(default_factory=dict)
    notes: tuple[str, ...] = ()

    def __repr__(self) -> str:
        m = self.moments
        return (
            f"<DebiasedFit {self.target_effect} estimate={m.estimate:.4g} se={m.se:.4g} "
            f"n={m.n} learner={self.learner} folds={self.folds}>"
        )

    @property
    def estimate(self) -> float:
        return self.moments.estimate

    @property
    def se(self) -> float:
        return self.moments.se

    def grid(
        self, cy2: Any, cd2: Any, rho: float = 1.0, alpha: float = 0.05
    ) -> dict[str, np.ndarray]:
        """Bounds over a grid (rows: cd2, columns: cy2), as `core.surface`."""
        return core.surface(self.moments, cy2, cd2, rho, alpha)

    def bounds(
        self,
        strengths: Sequence[tuple[float, float]] = (),
        *,
        rho: float = 1.0,
        alpha: float = 0.05,
        target: float = 0.0,
        multiples: Sequence[float | tuple[float, float]] = (1.0,),
    ) -> DebiasedResult:
        """Bounds for confounders of chosen strengths and for every benchmark's multiples.

        Parameters
        ----------
        strengths : sequence of (cy2, cd2)
            Hypothetical confounders: cy2 the share of the outcome's residual variation,
            cd2 that of the Riesz representer's (each in [0, 1)).
        rho : float, default 1
            The correlation |rho| in (0, 1] between the confounder's two effects (1: the
            worst case).
        alpha : float, default 0.05
            Each confidence bound is one-sided at level 1 - alpha; the estimate's own
            interval is two-sided at 1 - alpha.
        target : float, default 0
            The value the robustness values ask about.
        multiples : sequence of k or (k_outcome, k_treatment)
            Multiples of every benchmark's strengths.

        Returns
        -------
        DebiasedResult
        """
        from ..common.checks import FINITE, require

        m = self.moments
        rho = float(require(rho, "rho", core.RHO))
        alpha = check_alpha(alpha)  # to 1e-300: its critical values are finite
        target = float(require(target, "target", FINITE))
        scenarios: list[Scenario] = []
        pairs = [tuple(p) for p in strengths]
        for p in pairs:
            if len(p) != 2:
                raise InputError(f"`strengths` must be (cy2, cd2) pairs; got {p!r}", "strengths")
        if pairs:
            cy2, cd2, _ = core.check_strengths([p[0] for p in pairs], [p[1] for p in pairs], rho)
            out = core.bounds(m, cy2, cd2, rho, alpha)
            for i in range(len(pairs)):
                scenarios.append(_scenario(out, i, cy2[i], cd2[i], rho))
        ks = [_multiple(k) for k in multiples]
        notes = list(self.notes)
        for b in self.benchmarks:
            for ky, kd in ks:
                cy2, cd2, capped = core.scaled_strengths(b.cy2, b.cd2, ky, kd)
                out = core.bounds(m, cy2, cd2, rho, alpha)
                scenarios.append(
                    _scenario(
                        out,
                        None,
                        cy2,
                        cd2,
                        rho,
                        kind="benchmark",
                        benchmark=b.name,
                        k_outcome=ky,
                        k_treatment=kd,
                        capped=bool(capped),
                    )
                )
                if bool(capped):
                    notes.append(
                        f"A confounder with {ky:g} times the strength of {b.name} on the outcome "
                        "side would explain more than all of the outcome's residual variation; cy2 "
                        "was capped at 1."
                    )
        rv = core.robustness_value(m, target, rho)
        rva, reached = core.robustness_value_alpha(m, target, rho, alpha)
        if not reached:
            notes.append(
                f"The one-sided {level_text(alpha=alpha)} confidence bound does not reach "
                f"{target:g} for any equal strength below 1 (S is estimated too imprecisely); "
                "the robustness value with sampling error is reported as 1."
            )
        z2 = float(z_critical(alpha))  # from the lower tail: finite to alpha 1e-300
        return DebiasedResult(
            estimate=m.estimate,
            se=m.se,
            ci=(m.estimate - z2 * m.se, m.estimate + z2 * m.se),
            alpha=alpha,
            target=target,
            rho=rho,
            s=m.s,
            robustness_value=rv,
            robustness_value_alpha=rva,
            moments=m,
            target_effect=self.target_effect,
            treatment=self.treatment,
            outcome=self.outcome,
            covariates=self.covariates,
            learner=self.learner,
            folds=self.folds,
            seed=self.seed,
            scenarios=tuple(scenarios),
            benchmarks=self.benchmarks,
            notes=tuple(notes),
            assumptions=ASSUMPTIONS[self.target_effect] + COMMON_ASSUMPTIONS,
        )


def _multiple(k: Any) -> tuple[float, float]:
    """A benchmark multiple as (k_outcome, k_treatment): k alone means both sides."""
    from ..common.checks import as_array

    arr = as_array(k, "multiples")
    if arr.ndim == 0:
        return float(arr), float(arr)
    if arr.shape != (2,):
        raise InputError(
            f"`multiples` must be k or (k_outcome, k_treatment) pairs; got {k!r}", "multiples"
        )
    return float(arr[0]), float(arr[1])


def _scenario(out: dict, i: int | None, cy2: Any, cd2: Any, rho: float, **extra: Any) -> Scenario:
    def pick(key: str) -> float:
        v = np.asarray(out[key])
        return float(v if i is None else v.flat[i])

    return Scenario(
        cy2=float(cy2),
        cd2=float(cd2),
        rho=rho,
        bias=pick("bias"),
        bound_lower=pick("bound_lower"),
        bound_upper=pick("bound_upper"),
        ci_lower=pick("ci_lower"),
        ci_upper=pick("ci_upper"),
        **extra,
    )
