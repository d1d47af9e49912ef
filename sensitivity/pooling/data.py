"""Pooling the studies (statsmodels) and reading them from a table (the screen's reader).

`pool_estimates` takes log estimates and standard errors; `pool_table` takes a table of
studies in the screen's columns (or free text, or `log_estimate` and `se`), keeps every row
and flags the ones pooling cannot use. Both fit the random-effects model with statsmodels'
`combine_effects` and hand the fit to `core` for the share of meaningfully strong effects.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..common.checks import (
    AT_LEAST_ONE,
    OPEN_UNIT,
    POSITIVE,
    require,
    require_choice,
    require_scalar,
)
from ..common.errors import InputError
from ..common.levels import check_alpha, z_critical
from . import core
from .result import PoolResult

#: Heterogeneity estimators: our name -> (statsmodels' `method_re`, the name in sentences).
METHODS = {
    "pm": ("pm", "Paule-Mandel"),
    "dl": ("dl", "DerSimonian-Laird"),
}
#: Paule-Mandel iteration: statsmodels' defaults (atol 1e-5, 50 steps) tightened. Not further:
#: statsmodels sets tau^2 to 0 whenever the estimating equation comes out negative, and near
#: the root rounding alone can do that (atol 1e-10 gave 0 in a fifth of simulated cases).
PM_OPTIONS = {"atol": 1e-7, "maxiter": 1000}
#: Fewer studies than this: the estimates of the share are rough (Mathur & VanderWeele 2020
#: recommend about 10 or more [recalled from the paper, not re-read]).
MIN_STUDIES = 10
#: A share this close to 0 or 1: the delta-method interval is unreliable (the project's own
#: rule of thumb, not from the paper).
NEAR_EDGE = 0.10


@dataclass(frozen=True)
class Fit:
    """The random-effects fit on the log scale."""

    mu: float
    se_mu: float
    tau2: float
    var_tau2: float
    q: float
    i2: float
    k: int
    method: str
    weights: np.ndarray  # relative random-effects weights, summing to 1
    converged: bool


def fit_random_effects(y: np.ndarray, se: np.ndarray, method: str = "pm") -> Fit:
    """The random-effects pooled log estimate and tau^2 from statsmodels' `combine_effects`.

    A negative DerSimonian-Laird moment estimate (statsmodels leaves it untruncated) is set
    to 0, and the pooled estimate is then the fixed-effect one, as the estimator defines it.
    """
    from statsmodels.stats.meta_analysis import combine_effects

    y, se = core.check_studies(y, se)
    require_choice(method, "method", tuple(METHODS))
    var = se**2
    kwds = PM_OPTIONS if method == "pm" else {}

    def equation(t2: float) -> float:
        """The Paule-Mandel estimating equation: generalised Q minus its df."""
        w = 1 / (var + t2)
        return float(w @ (y - w @ y / w.sum()) ** 2 - (y.size - 1))

    def combine(**options: Any) -> Any:
        with np.errstate(all="ignore"):  # I^2 of identical studies; a negative DL tau^2
            return combine_effects(y, var, method_re=METHODS[method][0], use_t=False, **options)

    res = combine(**kwds)
    converged = True
    if method == "pm":
        if res.tau2 == 0 and equation(0.0) > 0:  # a zero from rounding (see PM_OPTIONS)
            res = combine()
        tau2 = float(res.tau2)
        # the estimating equation holds at the answer (or is negative at 0)
        converged = abs(equation(tau2)) < 1e-4 if tau2 > 0 else equation(0.0) <= 0
    tau2 = float(res.tau2)
    if tau2 <= 0:
        tau2 = 0.0
        mu, se_mu = float(res.mean_effect_fe), float(res.sd_eff_w_fe)
        weights = np.asarray(res.weights_rel_fe, float)
    else:
        mu, se_mu = float(res.mean_effect_re), float(res.sd_eff_w_re)
        weights = np.asarray(res.weights_rel_re, float)
    return Fit(
        mu=mu,
        se_mu=se_mu,
        tau2=tau2,
        var_tau2=core.tau2_variance(var, tau2, method),
        q=float(res.q),
        i2=float(max(res.i2, 0.0)) if np.isfinite(res.i2) else 0.0,
        k=int(y.size),
        method=method,
        weights=weights,
        converged=bool(converged),
    )


def _bias_grid(bias: object, threshold_bias: float) -> np.ndarray:
    """The bias factors to report: those given, or 1 to past the threshold bias in about 20
    round steps (0.01, 0.02, 0.025, 0.05, 0.1, ...)."""
    if bias is not None:
        return np.atleast_1d(require(bias, "bias", AT_LEAST_ONE)).astype(float).ravel()
    top = max(1.25 * float(threshold_bias), 1.5)
    raw = (top - 1) / 20
    power = 10.0 ** np.floor(np.log10(raw))
    step = next(m * power for m in (1, 2, 2.5, 5, 10) if m * power >= raw)
    count = int(np.ceil((top - 1) / step - 1e-9))
    return np.round(1 + step * np.arange(count + 1), 10)


def pool_estimates(
    log_estimates: object,
    se: object,
    *,
    threshold: float,
    share: float = 0.10,
    bias: object = None,
    bias_sd: float = 0.0,
    method: str = "pm",
    alpha: float = 0.05,
    labels: Sequence[str] | None = None,
    _studies: dict[str, np.ndarray] | None = None,
) -> PoolResult:
    """How much common confounding bias would shrink the share of meaningfully strong effects.

    Parameters
    ----------
    log_estimates, se : array_like
        Each study's log risk ratio (or a log ratio taken on that scale) and its standard
        error; at least two studies, every `se` positive.
    threshold : float
        The meaningful effect q on the ratio scale (1.1, or 0.9 for a preventive effect):
        the share counts true effects beyond it, in the pooled estimate's direction.
    share : float
        r, in (0, 1): the share the least bias is asked to bring the share down to.
    bias : float or array_like, optional
        Common bias factors B (at least 1) at which to report the share; default a grid from
        1 to past the answer.
    bias_sd : float
        The SD of log bias between studies (heterogeneous bias; 0: the same in each study).
    method : {"pm", "dl"}
        Heterogeneity estimator: Paule-Mandel or DerSimonian-Laird (statsmodels).
    alpha : float
        1 - the level of the pooled estimate's confidence interval.
    labels : sequence of str, optional
        The studies' names, for the tables and the forest plot.

    Examples
    --------
    >>> r = pool_estimates([0.30, 0.10, 0.45, 0.22, 0.05], [0.10, 0.12, 0.15, 0.09, 0.11],
    ...                    threshold=1.1, share=0.1, method="dl")
    >>> round(r.pooled_estimate, 3), round(r.bias_to_reduce, 3)
    (1.236, 1.253)
    """
    y, s = core.check_studies(log_estimates, se)
    q_ratio = float(require_scalar(threshold, "threshold", POSITIVE))
    r = float(require_scalar(share, "share", OPEN_UNIT))
    a = check_alpha(alpha)
    sd = float(require_scalar(bias_sd, "bias_sd"))
    if sd < 0:
        raise InputError(f"`bias_sd` must be 0 or more; got {sd:g}", "bias_sd")
    fit = fit_random_effects(y, s, method)
    q = float(np.log(q_ratio))
    direction = core.direction_of(fit.mu)
    tau = float(np.sqrt(fit.tau2))
    var_mu = fit.se_mu**2
    var_tau = core.tau_variance(fit.tau2, fit.var_tau2)
    # with no spread, Var(tau) does not enter (z is 0 in the T formula's tau term)
    var_tau_t = 0.0 if tau == 0 else var_tau
    raw = float(core.bias_to_reduce(fit.mu, tau, q, r, direction, sd))
    t_bias = max(raw, 1.0)
    t_se = float(core.bias_to_reduce_se(raw, tau, var_mu, var_tau_t, r, sd)) if raw > 1 else np.nan
    grid = _bias_grid(bias, t_bias)
    shares = core.share_beyond(fit.mu, tau, q, grid, direction, sd)
    shares_se = core.share_se(fit.mu, tau, var_mu, var_tau, q, grid, direction, sd)
    z = float(z_critical(a))
    from ..evalues.core import evalue_of_interval, evalue_of_rr

    lo, hi = np.exp(fit.mu - z * fit.se_mu), np.exp(fit.mu + z * fit.se_mu)
    n = y.size
    studies = dict(_studies) if _studies is not None else _plain_studies(y, s, labels)
    studies["weight"] = np.full(studies["used"].size, np.nan)
    studies["weight"][studies["used"]] = fit.weights
    notes = _notes(fit, direction, q_ratio, shares, raw, r, sd)
    return PoolResult(
        studies=studies,
        k=n,
        method=method,
        method_name=METHODS[method][1],
        log_estimate=fit.mu,
        log_se=fit.se_mu,
        pooled_estimate=float(np.exp(fit.mu)),
        ci=(float(lo), float(hi)),
        alpha=a,
        tau2=fit.tau2,
        tau2_se=float(np.sqrt(fit.var_tau2)),
        tau_se=float(np.sqrt(var_tau)) if tau > 0 else float("nan"),
        q_statistic=fit.q,
        i2=fit.i2,
        threshold=q_ratio,
        share=r,
        direction=direction,
        bias_sd=sd,
        bias=grid,
        share_beyond=shares,
        share_beyond_se=shares_se,
        share_observed=float(core.share_beyond(fit.mu, tau, q, 1.0, direction, 0.0)),
        bias_to_reduce=t_bias,
        bias_to_reduce_se=t_se,
        bias_to_reduce_raw=raw,
        strength_to_reduce=float(core.strength_of_bias(t_bias)),
        strength_to_reduce_se=float(core.strength_se(t_bias, t_se)) if raw > 1 else np.nan,
        evalue=float(evalue_of_rr(np.exp(fit.mu))),
        evalue_ci=float(evalue_of_interval(lo, hi)),
        notes=notes,
    )


def _plain_studies(y: np.ndarray, s: np.ndarray, labels: Sequence[str] | None
                   ) -> dict[str, np.ndarray]:  # fmt: skip
    """Per-study columns for arrays given directly (every study used)."""
    n = y.size
    if labels is None:
        names = np.array([f"Study {i}" for i in range(1, n + 1)], dtype=object)
    else:
        names = np.asarray([str(v) for v in labels], dtype=object)
        if names.size != n:
            raise InputError(f"`labels` must name each study; got {names.size} for {n} "
                             "studies", "labels")  # fmt: skip
    return _study_columns(names, y, s, np.full(n, "", dtype=object), np.full(n, "", dtype=object))


def _study_columns(labels: Any, y: Any, s: Any, errors: Any, notes: Any) -> dict[str, Any]:
    from scipy.special import ndtri

    from ..evalues.core import evalue_of_interval, evalue_of_rr

    z = ndtri(0.975)
    with np.errstate(invalid="ignore", over="ignore"):
        rr = np.exp(y)
        lo, hi = np.exp(y - z * s), np.exp(y + z * s)
        ev = evalue_of_rr(rr)
        ev_ci = evalue_of_interval(lo, hi)
    return {
        "label": labels,
        "log_estimate": y,
        "se": s,
        "rr": rr,
        "rr_lower": lo,
        "rr_upper": hi,
        "evalue": ev,
        "evalue_ci": ev_ci,
        "level": np.full(y.size, 0.95),  # each study's interval: z from 0.975 above
        "used": errors == "",
        "error": errors,
        "notes": notes,
    }


def _notes(fit: Fit, direction: str, q_ratio: float, shares: np.ndarray, raw: float, r: float,
           sd: float) -> tuple[str, ...]:  # fmt: skip
    out = []
    if fit.k < MIN_STUDIES:
        out.append(
            f"Only {fit.k} studies: the share and its standard error are rough with fewer than "
            f"about {MIN_STUDIES} (Mathur & VanderWeele 2020 recommend at least about 10)."
        )
    if fit.tau2 == 0:
        out.append(
            "The estimated heterogeneity is 0: every true effect is taken as the pooled one, so "
            "the share is 0 or 1 and the least bias is the pooled ratio over the threshold "
            "(its strength the ordinary E-value of that ratio)."
        )
    else:
        edge = (shares < NEAR_EDGE) | (shares > 1 - NEAR_EDGE)
        if edge.any():
            out.append(
                f"At {int(edge.sum())} of the bias factors the share is below "
                f"{NEAR_EDGE:.0%} or above {1 - NEAR_EDGE:.0%}: the delta-method standard "
                "error is unreliable there (a rule of thumb of this project)."
            )
    if (direction == core.CAUSATIVE) != (q_ratio >= 1):
        side = "above" if direction == core.CAUSATIVE else "below"
        out.append(
            f"The threshold {q_ratio:g} lies on the other side of the null from the pooled "
            f"estimate; the share counts true effects {side} {q_ratio:g}."
        )
    if raw <= 1:
        out.append(
            f"Without any bias the share beyond the threshold is already at most {r:.0%}, so "
            "the least bias factor and strength are reported as 1."
        )
    if not fit.converged:
        out.append("The Paule-Mandel iteration did not converge; the heterogeneity is rough.")
    if sd > 0:
        out.append(
            f"Bias varies between studies: log bias factors normal with SD {sd:g}, independent "
            "of the true effects."
        )
    out.append(
        f"Heterogeneity by the {METHODS[fit.method][1]} estimator (statsmodels); the standard "
        "errors of the share and of the least bias are delta-method ones (Mathur & "
        "VanderWeele 2020), with Var(tau) from the estimator's own large-sample variance."
    )
    return tuple(out)


# --------------------------------------------------------------------------- tables
#: Columns a table of studies may give directly on the log scale.
LOG_COLUMNS = ("log_estimate", "se")
LABEL_COLUMNS = ("label", "study", "name")


def read_studies(
    table: Any,
    *,
    columns: Mapping[str, str] | None = None,
    from_text: str | None = None,
    level: float = 0.95,
) -> dict[str, np.ndarray]:
    """Each row's log estimate and standard error, with a reason for rows pooling cannot use.

    A table with a `log_estimate` column (after `columns` renames) is read on the log scale
    with `se`; any other goes through the screen (`screen_table`: its columns or free text,
    every scale converted to the risk-ratio scale as the screen does), and each row's se
    comes from its risk-ratio interval: (log upper - log lower) / (2 z) at the row's level
    (`level`, or the level the text names; 95% for an interval the screen made from an se).
    """
    import polars as pl

    from ..screen.stream import _as_polars, screen_table

    frame, _ = _as_polars(table)
    level = float(require_scalar(level, "level", OPEN_UNIT))
    mapping = dict(columns or {})
    header = list(frame.columns)
    label_col = mapping.pop("label", None) or next((c for c in LABEL_COLUMNS if c in header), None)
    if label_col is not None and label_col not in header:
        raise InputError(f"`columns`: {label_col!r} (for label) is not a column of the "
                         "table", "columns")  # fmt: skip
    n = frame.height
    if n == 0:
        raise InputError("the table of studies has no rows")
    labels = (
        np.asarray(
            [str(v) if v is not None else "" for v in frame[label_col].to_list()], dtype=object
        )  # fmt: skip
        if label_col is not None
        else np.asarray([f"Row {i}" for i in range(1, n + 1)], dtype=object)
    )
    log_col = mapping.pop("log_estimate", "log_estimate")
    if from_text is None and log_col in header:
        se_col = mapping.pop("se", "se")
        if se_col not in header:
            raise InputError(f"the table has {log_col!r} but no standard error column {se_col!r}: "
                             "map one with `columns` (se=YOUR_COLUMN)", "columns")  # fmt: skip
        from ..screen.stream import text_or_numbers

        reasons = np.full(n, "", dtype=object)
        values = {}
        for std, col in (("log_estimate", log_col), ("se", se_col)):
            got = text_or_numbers(frame[col])
            from ..screen.core import _numbers

            values[std], why = _numbers(got, std)
            reasons = np.where(reasons == "", why, reasons)
        y, s = values["log_estimate"], values["se"]
        for i in range(n):
            if reasons[i]:
                continue
            if not np.isfinite(y[i]):
                reasons[i] = (
                    "`log_estimate` is missing"
                    if np.isnan(y[i])
                    else (f"`log_estimate` must be a finite number; got {y[i]:g}")
                )
            elif not (s[i] > 0) or not np.isfinite(s[i]):
                reasons[i] = (
                    "`se` is missing"
                    if np.isnan(s[i])
                    else (f"`se` must be positive; got {s[i]:g}")
                )
        notes = np.where(reasons == "", "given on the log scale", "").astype(object)
        y = np.where(reasons == "", y, np.nan)
        s = np.where(reasons == "", s, np.nan)
        columns_out = _study_columns(labels, y, s, reasons, notes)
        columns_out["scale"] = np.where(reasons == "", "log", "").astype(object)
        return columns_out
    out = screen_table(frame, columns=mapping or None, from_text=from_text)
    rr = out["rr"].fill_null(np.nan).to_numpy().astype(float)
    lo = out["rr_lower"].fill_null(np.nan).to_numpy().astype(float)
    hi = out["rr_upper"].fill_null(np.nan).to_numpy().astype(float)
    scale = np.asarray(out["scale_used"].fill_null("").to_list(), dtype=object)
    reasons = np.asarray(out["error"].fill_null("").to_list(), dtype=object)
    notes = np.asarray(out["notes"].fill_null("").to_list(), dtype=object)
    levels = np.full(n, level)
    if from_text is not None:
        from ..screen.text import parse_many

        parsed = parse_many(np.asarray(frame[from_text].to_list(), dtype=object))
        levels = np.where(np.isfinite(parsed["level"]), parsed["level"], level)
    from_se = np.asarray(["interval from se" in t for t in notes.tolist()])
    levels = np.where(from_se, 0.95, levels)
    from scipy.special import ndtri

    z = -ndtri((1 - levels) / 2)
    with np.errstate(divide="ignore", invalid="ignore"):
        s = (np.log(hi) - np.log(lo)) / (2 * z)
        y = np.log(rr)
    for i in range(n):
        if reasons[i]:
            continue
        if scale[i] == "rd":
            reasons[i] = "risk-difference rows are not pooled (no interval on the ratio scale)"
        elif not np.isfinite(y[i]):
            reasons[i] = "no risk-ratio-scale estimate (a regression row needs `sd`)"
        elif not (np.isfinite(lo[i]) and np.isfinite(hi[i])):
            reasons[i] = "pooling needs the interval (`lower` and `upper`) or `se`"
        elif not s[i] > 0:
            reasons[i] = f"`se` must be positive; got {s[i]:g} (an interval of zero width)"
    good = reasons == ""
    y, s = np.where(good, y, np.nan), np.where(good, s, np.nan)
    notes = np.where(good, notes, "")
    columns_out = _study_columns(labels, y, s, reasons, notes)
    # the screen's own ratio-scale numbers for every row it could read (the study's E-values)
    columns_out["rr"], columns_out["rr_lower"], columns_out["rr_upper"] = rr, lo, hi
    columns_out["evalue"] = out["evalue"].fill_null(np.nan).to_numpy().astype(float)
    columns_out["evalue_ci"] = out["evalue_ci"].fill_null(np.nan).to_numpy().astype(float)
    columns_out["level"] = levels
    columns_out["scale"] = np.where(good, scale, "").astype(object)
    del pl
    return columns_out


def pool_table(
    table: Any,
    *,
    threshold: float,
    columns: Mapping[str, str] | None = None,
    from_text: str | None = None,
    level: float = 0.95,
    **options: Any,
) -> PoolResult:
    """`pool_estimates` for a table of studies (pandas, polars or Arrow), every row kept.

    Rows pooling cannot use are flagged with the reason and left out of the pool; see
    `read_studies` for the columns read. Options are those of `pool_estimates`.

    Examples
    --------
    >>> import pandas as pd
    >>> table = pd.DataFrame({"study": ["A", "B", "C", "D"],
    ...                       "result": ["RR 1.35 (1.10-1.66)", "RR 1.10 (0.85-1.42)",
    ...                                  "RR 1.60 (1.21-2.12)", "NR"]})
    >>> r = pool_table(table, from_text="result", threshold=1.1, method="dl")
    >>> r.k, list(r.studies["error"])[3]
    (3, 'no result in the text (blank or not reported)')
    """
    studies = read_studies(table, columns=columns, from_text=from_text, level=level)
    good = studies["used"]
    k = int(good.sum())
    if k < 2:
        flagged = [f"row {i + 1}: {e}" for i, e in enumerate(studies["error"]) if e][:3]
        detail = f" (flagged: {'; '.join(flagged)})" if flagged else ""
        raise InputError(f"pooling needs at least 2 usable studies; got {k}{detail}")
    result = pool_estimates(
        studies["log_estimate"][good], studies["se"][good], threshold=threshold,
        _studies=studies, **options,
    )  # fmt: skip
    scales = sorted(set(studies["scale"][good].tolist()))
    if len(scales) > 1:
        from dataclasses import replace

        mixed = (
            f"Studies on {len(scales)} scales ({', '.join(scales)}) were pooled on the "
            "risk-ratio scale after the screen's conversions; pool only studies of one "
            "question, and check that the conversions suit each outcome."
        )
        result = replace(result, notes=(mixed, *result.notes))
    return result


__all__ = ["METHODS", "fit_random_effects", "pool_estimates", "pool_table", "read_studies"]
