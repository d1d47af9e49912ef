"""E-values and the bounding factor, on the risk-ratio scale and on every common scale.

Everything here is vectorised: each argument may be a scalar or an array, and arrays
broadcast. Only numpy is imported, so a one-number command starts fast.

References
----------
Ding P, VanderWeele TJ (2016). Sensitivity analysis without assumptions. Epidemiology
27:368-377 (erratum Epidemiology 29:e19, 2018).
VanderWeele TJ, Ding P (2017). Sensitivity analysis in observational research: introducing
the E-value. Annals of Internal Medicine 167:268-274.
VanderWeele TJ (2017). On a square-root transformation of the odds ratio for a common
outcome. Epidemiology 28:e58-e60.
VanderWeele TJ (2020). Optimal approximate conversions of odds ratios and hazard ratios to
risk ratios. Biometrics 76:746-752.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from . import cautions
from ._checks import POSITIVE, PROBABILITY, Rule, as_array, require, require_choice
from ._results import Displayable, plain
from .tables import Table, bullets, number, render, wrap

SCALES = ("rr", "or", "hr", "smd", "md")
RATIO_SCALES = ("rr", "or", "hr")
SCALE_NAMES = {
    "rr": "risk ratio",
    "or": "odds ratio",
    "hr": "hazard ratio",
    "smd": "standardized mean difference",
    "md": "mean difference",
}
#: Below this outcome prevalence an OR or HR is taken as a risk ratio (common practice, no
#: single published source; VanderWeele 2017 and 2020 use 15% as the working line).
RARE_OUTCOME_CUTOFF = 0.15
#: exp(0.91 d) maps a standardized mean difference to a risk ratio; 1.78 = 0.91 * 1.96
#: (VanderWeele & Ding 2017, citing Chinn 2000).
SMD_SLOPE = 0.91
SMD_INTERVAL = 1.78

AT_LEAST_ONE = Rule("must be at least 1", lambda x: ~(x >= 1))


# --------------------------------------------------------------------------- core formulas
def evalue_of_rr(rr):
    """E-value of a risk ratio: the strength both confounder associations need to explain it.

    Parameters
    ----------
    rr : array_like
        Risk ratio(s), positive. A ratio below 1 is inverted first.

    Returns
    -------
    ndarray
        ``E = RR + sqrt(RR (RR - 1))`` with ``RR = max(rr, 1/rr)``.

    Notes
    -----
    E solves ``B(E, E) = RR`` for the bounding factor ``B`` (see `bounding_factor`).

    References
    ----------
    VanderWeele & Ding (2017), Ann Intern Med 167:268, formula in the section "The E-value".

    Examples
    --------
    The published worked example, RR 3.9 (VanderWeele & Ding 2017):

    >>> round(float(evalue_of_rr(3.9)), 2)
    7.26
    """
    rr = np.asarray(rr, dtype=float)
    r = np.where(rr < 1, 1 / rr, rr)
    return r + np.sqrt(r) * np.sqrt(r - 1)  # not sqrt(r (r - 1)): no overflow below 1e308


def evalue_of_interval(lower, upper, target=1.0):
    """E-value of a confidence interval: of the limit nearest `target`, 1 if it covers it.

    Examples
    --------
    >>> float(evalue_of_interval(1.8, 8.7))  # VanderWeele & Ding (2017)
    3.0
    >>> float(evalue_of_interval(0.8, 1.3))
    1.0
    """
    lower, upper, target = np.broadcast_arrays(
        *(np.asarray(a, float) for a in (lower, upper, target))
    )
    nearest = np.where(lower > target, lower, np.where(upper < target, upper, target))
    return evalue_of_rr(nearest / target)


def bounding_factor(rr_treatment, rr_outcome):
    """Joint bounding factor of a confounder with the given two risk ratios.

    Parameters
    ----------
    rr_treatment : array_like
        Largest risk ratio relating the treatment to the confounder (>= 1).
    rr_outcome : array_like
        Largest risk ratio relating the confounder to the outcome, within treatment arms (>= 1).

    Returns
    -------
    ndarray
        ``B = RR_TU RR_UY / (RR_TU + RR_UY - 1)``; the true risk ratio is at least
        ``RR_obs / B`` when ``RR_obs > 1``.

    References
    ----------
    Ding & VanderWeele (2016), Epidemiology 27:368, the bounding factor (their BF_U).

    Examples
    --------
    >>> round(float(bounding_factor(7.26, 7.26)), 2)  # B(E, E) = RR
    3.9
    """
    a = np.asarray(rr_treatment, dtype=float)
    b = np.asarray(rr_outcome, dtype=float)
    return a * b / (a + b - 1)


def _hr_common(hr):
    return (1 - 0.5 ** np.sqrt(hr)) / (1 - 0.5 ** np.sqrt(1 / hr))


def to_risk_ratio(scale, values, *, outcome=None, sd=None, contrast=1.0):
    """Map values on `scale` to the approximate risk-ratio scale (the map the E-value uses).

    ``or`` rare: RR = OR; common: RR = sqrt(OR) (VanderWeele 2017).
    ``hr`` rare: RR = HR; common: RR = (1 - 0.5^sqrt(HR)) / (1 - 0.5^sqrt(1/HR))
    (VanderWeele 2020). ``smd``: RR = exp(0.91 d). ``md``: d = value * contrast / sd, then as
    ``smd`` (VanderWeele & Ding 2017).
    """
    x = np.asarray(values, dtype=float)
    if scale == "rr" or (scale in ("or", "hr") and outcome == "rare"):
        return x
    if scale == "or":
        return np.sqrt(x)
    if scale == "hr":
        return _hr_common(x)
    if scale == "smd":
        return np.exp(SMD_SLOPE * x)
    return np.exp(SMD_SLOPE * x * contrast / sd)


def from_risk_ratio(scale, rr, *, outcome=None, sd=None, contrast=1.0):
    """Inverse of `to_risk_ratio`: a risk-ratio-scale value back on `scale`."""
    rr = np.asarray(rr, dtype=float)
    if scale == "rr" or (scale in ("or", "hr") and outcome == "rare"):
        return rr
    if scale == "or":
        return rr**2
    if scale == "hr":
        # _hr_common is increasing in log HR; bisect in log space (exact to ~1e-15).
        lo = np.full(rr.shape, -60.0)
        hi = np.full(rr.shape, 60.0)
        for _ in range(110):
            mid = (lo + hi) / 2
            above = _hr_common(np.exp(mid)) > rr
            hi = np.where(above, mid, hi)
            lo = np.where(above, lo, mid)
        return np.exp((lo + hi) / 2)
    d = np.log(rr) / SMD_SLOPE
    return d if scale == "smd" else d * sd / contrast


def conversion_text(scale, outcome=None, contrast=1.0) -> str:
    """One phrase naming the map `to_risk_ratio` applies, with its source."""
    if scale == "rr":
        return "none (already a risk ratio)"
    if scale in ("or", "hr") and outcome == "rare":
        return f"RR ≈ {scale.upper()} for a rare outcome (VanderWeele & Ding 2017)"
    if scale == "or":
        return "RR ≈ √OR for a common outcome (VanderWeele 2017)"
    if scale == "hr":
        return "RR ≈ (1 − 0.5^√HR) / (1 − 0.5^√(1/HR)) for a common outcome (VanderWeele 2020)"
    per = f" per {contrast:g} units of treatment" if contrast != 1 else ""
    lead = "d = estimate × contrast / SD, " if scale == "md" else ""
    return f"{lead}RR ≈ exp(0.91 d){per} (VanderWeele & Ding 2017)"


# --------------------------------------------------------------------------- input checks
def _check_interval(lower, upper, estimate, scale):
    rules = (POSITIVE,) if scale in RATIO_SCALES else ()
    lower = require(lower, "ci", *rules)
    upper = require(upper, "ci", *rules)
    backwards = lower > upper
    if np.any(backwards):
        lo, up = np.broadcast_arrays(lower, upper)
        i = np.flatnonzero(np.broadcast_to(backwards, lo.shape))[0]
        raise ValueError(
            f"`ci` lower limit must not exceed the upper; got {lo.flat[i]:g} > {up.flat[i]:g}"
        )
    outside = (estimate < lower) | (estimate > upper)
    if np.any(outside):
        est, lo, up = np.broadcast_arrays(estimate, lower, upper)
        i = np.flatnonzero(np.broadcast_to(outside, est.shape))[0]
        raise ValueError(
            f"`estimate` must lie within `ci`; got {est.flat[i]:g} outside "
            f"[{lo.flat[i]:g}, {up.flat[i]:g}]"
        )
    return lower, upper


def _check_outcome(scale, outcome, prevalence, notes):
    """Standardise the outcome's frequency to 'rare', 'common' or None."""
    if outcome is not None and prevalence is not None:
        raise ValueError("give `outcome` or `prevalence`, not both")
    if prevalence is not None:
        p = require(prevalence, "prevalence", PROBABILITY)
        if p.ndim:
            raise ValueError("`prevalence` must be a single number")
        outcome = "rare" if p < RARE_OUTCOME_CUTOFF else "common"
        notes.append(
            f"Outcome prevalence {float(p):g} is {'below' if outcome == 'rare' else 'at or above'} "
            f"{RARE_OUTCOME_CUTOFF:.0%}: treated as {outcome} (common practice)."
        )
    if outcome is not None:
        require_choice(outcome, "outcome", ("rare", "common"))
    if scale in ("or", "hr") and outcome is None:
        raise ValueError(
            f"`outcome` frequency is needed on the {scale} scale: say rare or common "
            "(--rare/--common) or give the outcome's prevalence (--prevalence)"
        )
    if scale not in ("or", "hr") and outcome is not None:
        notes.append(f"The outcome's frequency does not enter the {scale} scale; ignored.")
        outcome = None
    return outcome


# --------------------------------------------------------------------------- results
@dataclass(frozen=True, repr=False)
class ConfounderBound(Displayable):
    """The most a confounder of given strengths could move an estimate (bounding factor)."""

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

    def to_dict(self) -> dict:
        return plain(
            {
                "rr_treatment": self.rr_treatment,
                "rr_outcome": self.rr_outcome,
                "bounding_factor": self.bounding_factor,
                "bias_adjusted": {
                    "rr": self.rr,
                    "rr_ci_limit": self.rr_ci_limit,
                    "estimate": self.estimate,
                    "ci_limit": self.ci_limit,
                },
                "explains_estimate": self.explains_estimate,
                "explains_ci": self.explains_ci,
            }
        )

    def records(self) -> list[dict]:
        """Flat rows, one a confounder (`bias_adjusted_*` columns), for CSV."""
        d = self.to_dict()
        flat = {k: v for k, v in d.items() if k != "bias_adjusted"}
        flat.update({f"bias_adjusted_{k}": v for k, v in d["bias_adjusted"].items()})
        return _rows_of(flat)

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

    def table(self) -> Table:
        src = self.source
        rows = []
        for rec in self.records():
            moved_ci = rec["bias_adjusted_ci_limit"]
            verdict = "estimate" if rec["explains_estimate"] else ""
            if rec["explains_ci"]:
                verdict = "estimate and CI" if verdict else "CI"
            rows.append(
                (
                    number(rec["rr_treatment"]),
                    number(rec["rr_outcome"]),
                    number(rec["bounding_factor"], 3),
                    number(rec["bias_adjusted_estimate"]),
                    number(moved_ci),
                    verdict or "neither",
                )
            )
        target = "the null" if src.target_is_null else f"{src.target_value:g}"
        return Table(
            columns=(
                "RR with treatment",
                "RR with outcome",
                "Bounding factor",
                f"Estimate moved to ({src.scale.upper()})",
                "CI limit moved to",
                f"Reaches {target}",
            ),
            rows=tuple(rows),
            title="Hypothetical confounder: the most it could move the result",
        )

    def summary(self) -> str:
        return render(self.table(), "text")

    def sentences(self) -> list[str]:
        """One sentence a hypothetical confounder: the reviewer's question answered."""
        src = self.source
        goal = "the null" if src.target_is_null else f"{float(src.target_value):g}"
        out = []
        for r in self.records():
            text = (
                f"A confounder with risk ratio {number(r['rr_treatment'])} with the treatment and "
                f"{number(r['rr_outcome'])} with the outcome (bounding factor "
                f"{number(r['bounding_factor'], 3)}) could move the estimate at most to "
                f"{number(r['bias_adjusted_estimate'])}"
            )
            if r["bias_adjusted_ci_limit"] is not None:
                text += f" and the nearest CI limit to {number(r['bias_adjusted_ci_limit'])}"
            if r["explains_estimate"]:
                text += f"; it could explain the estimate away (reach {goal})."
            elif r["explains_ci"]:
                text += (
                    f"; it could not explain the estimate away, but the CI could include {goal}."
                )
            else:
                text += f"; it could not move the estimate or its CI to {goal}."
            out.append(text)
        return out


def _rows_of(flat: dict) -> list[dict]:
    """Split a dict of equal-length lists (or scalars) into one dict a row."""
    n = max((len(v) for v in flat.values() if isinstance(v, list)), default=1)
    return [{k: (v[i] if isinstance(v, list) else v) for k, v in flat.items()} for i in range(n)]


@dataclass(frozen=True, repr=False)
class EValueResult(Displayable):
    """E-values of an estimate and its confidence interval, with the inputs behind them.

    Attributes mirror the JSON keys; `notes` holds conversions and degenerate-input remarks,
    `cautions` the standing cautions for this method.
    """

    scale: str
    estimate: np.ndarray
    ci: tuple[np.ndarray, np.ndarray] | None
    se: np.ndarray | None
    sd: np.ndarray | None
    contrast: float
    outcome: str | None
    target_value: np.ndarray
    rr: np.ndarray
    rr_ci: tuple[np.ndarray, np.ndarray] | None
    rr_target: np.ndarray
    evalue: np.ndarray
    evalue_ci: np.ndarray | None
    conversion: str
    notes: tuple[str, ...]
    cautions: tuple[str, ...] = cautions.EVALUE
    confounders: ConfounderBound | None = None

    @property
    def target_is_null(self) -> bool:
        null = 1.0 if self.scale in RATIO_SCALES else 0.0
        return bool(np.all(self.target_value == null))

    @property
    def is_scalar(self) -> bool:
        return self.estimate.ndim == 0

    def confounder(self, rr_treatment, rr_outcome) -> ConfounderBound:
        """The most a confounder with these two risk ratios could move the estimate.

        The estimate (and the CI limit nearest the target) is divided by the bounding factor
        when it lies above the target on the risk-ratio scale, multiplied when below
        (Ding & VanderWeele 2016). Values broadcast against the result's estimates.
        """
        rr_t = require(rr_treatment, "rr_treatment", AT_LEAST_ONE)
        rr_y = require(rr_outcome, "rr_outcome", AT_LEAST_ONE)
        b = bounding_factor(rr_t, rr_y)
        t = self.rr_target

        def toward_target(value):
            moved = np.where(value > t, value / b, np.where(value < t, value * b, value))
            reaches = np.where(value > t, moved <= t, moved >= t)
            return moved, reaches

        back = dict(outcome=self.outcome, sd=self.sd, contrast=self.contrast)
        rr, reach_est = toward_target(self.rr)
        rr_lim = lim = reach_ci = None
        if self.rr_ci is not None:
            lo, up = self.rr_ci
            nearest = np.where(self.rr >= t, lo, up)
            covers = (lo <= t) & (up >= t)
            rr_lim, reach_ci = toward_target(nearest)
            reach_ci = reach_ci | covers
            lim = from_risk_ratio(self.scale, rr_lim, **back)
        return ConfounderBound(
            source=self,
            rr_treatment=rr_t,
            rr_outcome=rr_y,
            bounding_factor=b,
            rr=rr,
            rr_ci_limit=rr_lim,
            estimate=from_risk_ratio(self.scale, rr, **back),
            ci_limit=lim,
            explains_estimate=reach_est,
            explains_ci=reach_ci,
        )

    def with_confounders(self, rr_treatment, rr_outcome) -> EValueResult:
        """This result with `confounder` bounds attached (exported and summarised with it)."""
        if not self.is_scalar:
            raise ValueError("attach confounders to a single result; use `confounder` for arrays")
        rr_t = np.atleast_1d(as_array(rr_treatment, "rr_treatment"))
        rr_y = np.atleast_1d(as_array(rr_outcome, "rr_outcome"))
        return replace(self, confounders=self.confounder(rr_t, rr_y))

    # ----------------------------------------------------------------- export
    def to_dict(self) -> dict:
        """JSON-ready plain values under the contract's keys (plus `sentence`, `confounders`)."""
        out = self._core_dict()
        if self.is_scalar:
            out["sentence"] = self.sentence()
        if self.confounders is not None:
            out["confounders"] = self.confounders.rows()
        return out

    def _core_dict(self) -> dict:
        def pair(p):
            return None if p is None else [p[0], p[1]]

        return plain(
            {
                "scale": self.scale,
                "estimate": self.estimate,
                "ci": pair(self.ci),
                "se": self.se,
                "sd": self.sd,
                "contrast": self.contrast if self.scale == "md" else None,
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

    def _back(self, rr):
        return from_risk_ratio(
            self.scale, rr, outcome=self.outcome, sd=self.sd, contrast=self.contrast
        )

    def _own_records(self) -> list[dict]:
        flat = {}
        for key, value in self._core_dict().items():
            if key in ("ci", "rr_ci"):
                lo, up = value if value is not None else (None, None)
                flat[f"{key}_lower"], flat[f"{key}_upper"] = lo, up
            elif key != "notes":
                flat[key] = value
        return _rows_of(flat)

    def records(self) -> list[dict]:
        """Flat rows for CSV: one a result, or one a hypothetical confounder when attached."""
        rows = self._own_records()
        if self.confounders is None:
            return rows
        return [
            rows[0] | {f"confounder_{k}": v for k, v in c.items()}
            for c in self.confounders.records()
        ]

    def to_frame(self):
        """The records as a pandas DataFrame (imports pandas)."""
        import pandas as pd

        return pd.DataFrame(self.records())

    # ----------------------------------------------------------------- presentation
    def table(self) -> Table:
        name = SCALE_NAMES[self.scale].capitalize()
        show_rr = self.scale != "rr"
        near = "null" if self.target_is_null else "target"
        columns = ("", f"Observed ({self.scale.upper()})")
        columns += ("Risk-ratio scale",) if show_rr else ()
        columns += ("E-value",)
        rows = []
        for rec in self._own_records():
            label = "Estimate" if self.is_scalar else f"Estimate {len(rows) // 2 + 1}"
            est = (label, number(rec["estimate"]))
            est += (number(rec["rr"]),) if show_rr else ()
            rows.append((*est, number(rec["evalue"])))
            if rec["evalue_ci"] is None:
                continue
            lo_rr, up_rr = rec["rr_ci_lower"], rec["rr_ci_upper"]
            lower_nearer = rec["rr"] >= rec["rr_target"]
            observed = rec["ci_lower"] if lower_nearer else rec["ci_upper"]
            if observed is None:  # interval from `se`: show its limit on the observed scale
                observed = float(self._back(lo_rr if lower_nearer else up_rr))
            limit = ("  CI limit nearest the " + near, number(observed))
            limit += (number(lo_rr if lower_nearer else up_rr),) if show_rr else ()
            rows.append((*limit, number(rec["evalue_ci"])))
        return Table(
            columns=columns,
            rows=tuple(rows),
            title=f"E-values: {name}",
            footnotes=(f"Conversion to the risk-ratio scale: {self.conversion}.",),
        )

    def tables(self) -> list[Table]:
        return [self.table()] + ([] if self.confounders is None else [self.confounders.table()])

    def sentence(self) -> str:
        """One paste-ready sentence for a manuscript (scalar results only)."""
        if not self.is_scalar:
            raise ValueError("a sentence describes one result; index the inputs first")
        r = self._own_records()[0]
        name = SCALE_NAMES[self.scale]
        ci = ""
        if r["ci_lower"] is not None:
            ci = f" (CI {number(r['ci_lower'])} to {number(r['ci_upper'])})"
        elif r["se"] is not None:
            ci = f" (standard error {number(r['se'])})"
        conv = ""
        if self.scale != "rr" and not (self.scale in ("or", "hr") and self.outcome == "rare"):
            conv = f", approximately a risk ratio of {number(r['rr'])},"
        goal = "the null" if self.target_is_null else f"{float(self.target_value):g}"
        text = (
            f"For the observed {name} of {number(r['estimate'])}{ci}{conv} an unmeasured "
            f"confounder would need a risk ratio of at least {number(r['evalue'])} with both "
            f"the treatment and the outcome, beyond the measured covariates, to move the "
            f"estimate to {goal} (E-value)"
        )
        if r["evalue_ci"] is None:
            return text + "."
        if r["evalue_ci"] <= 1:
            return text + f"; the confidence interval already includes {goal}."
        return text + (
            f"; a risk ratio of at least {number(r['evalue_ci'])} with both would move the "
            f"confidence interval to include {goal}."
        )

    def summary(self) -> str:
        parts = [render(self.table(), "text"), wrap(f"Conversion: {self.conversion}.")]
        if self.is_scalar:
            parts.append(wrap(self.sentence()))
        if self.confounders is not None:
            parts.append(self.confounders.summary())
            parts.append("\n".join(wrap(s) for s in self.confounders.sentences()))
        parts.append(bullets("Notes", self.notes))
        parts.append(bullets("Cautions", self.cautions))
        return "\n\n".join(p for p in parts if p)


# --------------------------------------------------------------------------- entry point
def evalue(
    scale,
    estimate,
    ci=None,
    *,
    se=None,
    sd=None,
    contrast=1.0,
    outcome=None,
    prevalence=None,
    target=None,
) -> EValueResult:
    """E-values of an adjusted estimate and its confidence interval, on any common scale.

    Parameters
    ----------
    scale : {'rr', 'or', 'hr', 'smd', 'md'}
        Risk ratio, odds ratio, hazard ratio, standardized mean difference, or mean
        difference / linear-regression coefficient (needs `sd`).
    estimate : array_like
        The adjusted estimate(s) on `scale`.
    ci : (lower, upper), optional
        Confidence limits on `scale`. For ``smd``/``md`` give `ci` or `se`, not both.
    se : array_like, optional
        Standard error on `scale` (``smd``/``md``); the interval is then
        ``exp(0.91 d -/+ 1.78 se_d)`` on the risk-ratio scale.
    sd : array_like, optional
        The outcome's standard deviation (``md`` only).
    contrast : float, default 1
        For ``md`` with a continuous treatment: the treatment difference of interest, in the
        treatment's units (the coefficient is per one unit; 10 means "per 10 units").
    outcome : {'rare', 'common'}, optional
        The outcome's frequency at the end of follow-up; required for ``or`` and ``hr``.
    prevalence : float, optional
        The outcome's prevalence, instead of `outcome`: below 0.15 counts as rare.
    target : array_like, optional
        True value to test against, on `scale` (default: the null, 1 or 0).

    Returns
    -------
    EValueResult

    Notes
    -----
    The estimate is mapped to the risk-ratio scale (see `to_risk_ratio`), divided by the
    mapped target, and ``E = RR + sqrt(RR (RR - 1))`` is applied (inverting ratios below 1).
    The interval's E-value uses the limit nearest the target and is 1 when the interval
    includes it.

    References
    ----------
    VanderWeele & Ding (2017), Ann Intern Med 167:268-274; VanderWeele (2017), Epidemiology
    28:e58; VanderWeele (2020), Biometrics 76:746.

    Examples
    --------
    The worked example of VanderWeele & Ding (2017): RR 3.9, 95% CI 1.8 to 8.7.

    >>> res = evalue("rr", 3.9, ci=(1.8, 8.7))
    >>> round(float(res.evalue), 2), round(float(res.evalue_ci), 2)
    (7.26, 3.0)
    """
    scale = require_choice(scale, "scale", SCALES)
    notes: list[str] = []
    ratio = scale in RATIO_SCALES
    est = require(estimate, "estimate", *((POSITIVE,) if ratio else ()))
    outcome = _check_outcome(scale, outcome, prevalence, notes)
    if ratio:
        for name, value in (("se", se), ("sd", sd)):
            if value is not None:
                raise ValueError(f"`{name}` applies to scales smd and md only; got {scale}")
    if scale != "md":
        if sd is not None:
            raise ValueError(f"`sd` applies to scale md only; got {scale}")
        if contrast != 1:
            raise ValueError(f"`contrast` applies to scale md only; got {scale}")
    if scale == "md" and sd is None:
        raise ValueError("`sd` is required for scale md: the outcome's standard deviation")
    sd_arr = require(sd, "sd", POSITIVE) if sd is not None else None
    contrast = float(require(contrast, "contrast", POSITIVE))
    if se is not None and ci is not None:
        raise ValueError(f"give `se` or `ci` for scale {scale}, not both")
    se_arr = require(se, "se", POSITIVE) if se is not None else None
    null = 1.0 if ratio else 0.0
    tgt = require(null if target is None else target, "target", *((POSITIVE,) if ratio else ()))

    conv = dict(outcome=outcome, sd=sd_arr, contrast=contrast)
    rr = to_risk_ratio(scale, est, **conv)
    rr_target = to_risk_ratio(scale, tgt, **conv)
    ci_pair = rr_ci = None
    if ci is not None:
        if len(ci) != 2:
            raise ValueError(f"`ci` must be a pair (lower, upper); got {len(ci)} values")
        ci_pair = _check_interval(ci[0], ci[1], est, scale)
        rr_ci = tuple(to_risk_ratio(scale, lim, **conv) for lim in ci_pair)
    elif se_arr is not None:
        se_d = se_arr if scale == "smd" else se_arr * contrast / sd_arr
        d = np.log(rr) / SMD_SLOPE
        rr_ci = (
            np.exp(SMD_SLOPE * d - SMD_INTERVAL * se_d),
            np.exp(SMD_SLOPE * d + SMD_INTERVAL * se_d),
        )
    elif not ratio:
        notes.append("No `se` or `ci` given: only the estimate's E-value is computed.")

    e_ci = None
    if rr_ci is not None:
        e_ci = evalue_of_interval(rr_ci[0], rr_ci[1], rr_target)
        covers = (rr_ci[0] <= rr_target) & (rr_ci[1] >= rr_target)
        if np.any(covers):
            where = "The" if est.ndim == 0 else "For some rows the"
            goal = "null" if target is None else "target"
            notes.append(
                f"{where} confidence interval includes the {goal}: its E-value is 1 "
                "(no confounding is needed to reach it)."
            )
    if np.any(rr == rr_target):
        notes.append("The estimate equals the target: its E-value is 1.")
    return EValueResult(
        scale=scale,
        estimate=est,
        ci=ci_pair,
        se=se_arr,
        sd=sd_arr,
        contrast=contrast,
        outcome=outcome,
        target_value=tgt,
        rr=rr,
        rr_ci=rr_ci,
        rr_target=rr_target,
        evalue=evalue_of_rr(rr / rr_target),
        evalue_ci=e_ci,
        conversion=conversion_text(scale, outcome, contrast),
        notes=tuple(notes),
    )
