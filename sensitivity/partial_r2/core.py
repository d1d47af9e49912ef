"""Omitted-variable bias of an OLS coefficient in the partial R² parameterisation.

Pure, vectorised numpy (and `scipy.special` for t quantiles); the adapters
(`sensitivity.adapters`) turn fitted models and data into the numbers these functions take.

Notation: a hidden confounder U with partial R² `r2_treatment` with the treatment given the
observed covariates, and `r2_outcome` with the outcome given treatment and covariates.

References
----------
Cinelli C, Hazlett C (2020). Making sense of sensitivity: extending omitted variable bias.
Journal of the Royal Statistical Society, Series B 82:39-67.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ..common import levels
from ..common.checks import DOF as DOF_RULE
from ..common.checks import (
    POSITIVE,
    R2_STRENGTH,
    require,
    require_numbers,
    require_scalar,
    show,
)
from ..common.errors import InputError, SensitivityWarning
from .result import CovariateStrength, PartialR2Result, Scenario
from .strengths import _k_max, benchmark_strengths


def t_critical(alpha: float, dof: ArrayLike) -> np.ndarray:
    """Two-sided Student-t critical value at level `alpha` on `dof` degrees of freedom.

    From the lower tail (finite for alpha down to 1e-300; see `common.levels`). A NaN
    `dof` marks a missing entry and gives NaN; `alpha` outside (0, 1) or `dof` not positive
    is an InputError.
    """
    alpha = levels.check_alpha(alpha)
    d = require_numbers(dof, "dof")
    if np.any(d <= 0):
        raise InputError(f"`dof` must be positive; got {show(d[d <= 0].flat[0])}", "dof")
    return levels.t_critical(alpha, d)


# --------------------------------------------------------------------------- formulas
def partial_r2_of_t(t: ArrayLike, dof: ArrayLike) -> np.ndarray:
    """Partial R² of a regressor with the outcome from its t statistic: t² / (t² + dof).

    Examples
    --------
    Cinelli & Hazlett (2020): t = 4.18 on 783 dof gives 2.2%.

    >>> round(float(partial_r2_of_t(4.18, 783)), 3)
    0.022
    """
    f = np.abs(np.asarray(t, float)) / np.sqrt(np.asarray(dof, float))
    return _share(f)


def _share(f: np.ndarray) -> np.ndarray:
    """f² / (1 + f²) for f >= 0 without overflow (f = 1e300) or underflow of the ratio."""
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        big = 1 / (1 + np.square(1 / f))
        small = np.square(f) / (1 + np.square(f))
    return np.where(f > 1, big, small)


def partial_r2_of_f(f_stat: ArrayLike, df_num: ArrayLike, dof: ArrayLike) -> np.ndarray:
    """Partial R² of a group of `df_num` regressors from their joint Wald F statistic.

    ``F q / (F q + dof)``; with one regressor (F = t²) this is `partial_r2_of_t`.
    """
    fq = np.asarray(f_stat, float) * np.asarray(df_num, float)
    return _share(np.sqrt(fq / np.asarray(dof, float)))


def robustness_value_of_t(
    t: ArrayLike, *, dof: ArrayLike, reduce_by: ArrayLike = 1.0, alpha: float | None = None
) -> np.ndarray:
    """Robustness value: the equal partial R² (with treatment and outcome) that suffices.

    Parameters
    ----------
    t : array_like
        t statistic of the treatment coefficient.
    dof : array_like
        Residual degrees of freedom of the OLS fit.
    reduce_by : array_like, default 1
        Share of the estimate a confounder must remove (1: all of it, to zero).
    alpha : float, optional
        With `alpha`, the value at which the bias-adjusted interval first reaches
        ``(1 - q)`` times the estimate (loses significance, for q = 1).

    Returns
    -------
    ndarray
        A value in [0, 1).

    Notes
    -----
    With ``f_q = q |t| / sqrt(dof)``: ``RV_q = (sqrt(f_q^4 + 4 f_q^2) - f_q^2) / 2``.
    With alpha, ``f* = t_crit(1 - alpha/2, dof - 1) / sqrt(dof - 1)`` and ``f = f_q - f*``:
    0 when ``f_q <= f*``; ``(sqrt(f^4 + 4 f^2) - f^2) / 2`` when ``f* < f_q < 1/f*``;
    else ``(f_q^2 - f*^2) / (1 + f_q^2)``, where the least strong confounder lies off the
    diagonal.

    References
    ----------
    Cinelli & Hazlett (2020), JRSS-B 82:39, the robustness value (their section 4.2) and its
    significance version (with the extreme case).

    Examples
    --------
    The published summary example (t = 4.18, dof = 783): 13.9% and, at alpha 0.05, 7.6%.

    >>> round(float(robustness_value_of_t(4.18, dof=783)), 3)
    0.139
    >>> round(float(robustness_value_of_t(4.18, dof=783, alpha=0.05)), 3)
    0.076
    """
    t = require_numbers(t, "t")
    dof = require_numbers(dof, "dof")
    reduce_by = require_numbers(reduce_by, "reduce_by")
    least = 1 if alpha is None else 2  # the interval's t has dof - 1 degrees of freedom
    for name, values, bad in (("dof", dof, dof < least), ("reduce_by", reduce_by, reduce_by <= 0)):
        if np.any(bad):  # NaN (a missing entry) passes through as NaN
            rule = f"must be at least {least}" if name == "dof" else "must be positive"
            raise InputError(f"`{name}` {rule}; got {show(values[bad].flat[0])}", name)
    with np.errstate(invalid="ignore", over="ignore"):  # fq = inf is a robustness value of 1
        fq = reduce_by * np.abs(t) / np.sqrt(dof)
    if alpha is None:
        return _rv_curve(fq)
    alpha = levels.check_alpha(alpha)
    fstar = t_critical(alpha, dof - 1) / np.sqrt(dof - 1)
    fa = fq - fstar
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # (fq² - f*²) / (1 + fq²), divided through by fq² so fq = 1e300 does not overflow
        extreme = (1 - np.square(fstar / fq)) / (1 + np.square(1 / fq))
    return np.where(fq <= fstar, 0.0, np.where(fq < 1 / fstar, _rv_curve(fa), extreme))


def _rv_curve(f: np.ndarray) -> np.ndarray:
    """(sqrt(f^4 + 4 f^2) - f^2) / 2, written as 2 f / (f + sqrt(f^2 + 4)).

    The two are equal for f >= 0; the second neither overflows (f = 1e300 gives 1) nor
    loses the small values (f = 1e-200 gives 1e-200) to cancellation.
    """
    f = np.abs(np.asarray(f, float))
    with np.errstate(invalid="ignore", over="ignore"):
        out = 2 * f / (f + np.hypot(f, 2.0))
    return np.where(np.isinf(f), 1.0, out)


def bias_of_confounder(
    r2_treatment: ArrayLike, r2_outcome: ArrayLike, *, se: ArrayLike, dof: ArrayLike
) -> np.ndarray:
    """|Bias| of the coefficient from a confounder of the given strengths.

    ``se sqrt(dof) sqrt(r2_outcome r2_treatment / (1 - r2_treatment))`` (Cinelli & Hazlett
    2020, eq. for the bias in terms of partial R²); exact in-sample for OLS.
    """
    r2t = np.asarray(r2_treatment, float)
    r2y = np.asarray(r2_outcome, float)
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        return np.asarray(se, float) * np.sqrt(dof) * np.sqrt(r2y * r2t / (1 - r2t))


def se_of_confounder(
    r2_treatment: ArrayLike, r2_outcome: ArrayLike, *, se: ArrayLike, dof: ArrayLike
) -> np.ndarray:
    """Standard error the coefficient would have with the confounder in the model.

    ``se sqrt((1 - r2_outcome) / (1 - r2_treatment)) sqrt(dof / (dof - 1))``.
    """
    r2t = np.asarray(r2_treatment, float)
    r2y = np.asarray(r2_outcome, float)
    d = np.asarray(dof, float)
    return np.asarray(se, float) * np.sqrt((1 - r2y) / (1 - r2t)) * np.sqrt(d / (d - 1))


def adjusted_for_confounder(
    r2_treatment: ArrayLike,
    r2_outcome: ArrayLike,
    *,
    estimate: ArrayLike,
    se: ArrayLike,
    dof: ArrayLike,
    alpha: float = 0.05,
) -> dict[str, np.ndarray]:
    """Estimate, se, t and CI with a confounder of the given strengths (broadcasting).

    The bias is taken in the direction that shrinks |estimate| toward zero (the adverse
    direction for the conclusion). The adjusted t and interval use ``dof - 1`` degrees of
    freedom (one more regressor).

    Returns
    -------
    dict of ndarray
        ``bias``, ``estimate``, ``se``, ``t``, ``lower``, ``upper``.
    """
    est = np.asarray(estimate, float)
    # values beyond a double (an se of 1e308) come out as inf, which the callers refuse
    # (tipping's finite_cells) or report as null; no raw warning
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        b = bias_of_confounder(r2_treatment, r2_outcome, se=se, dof=dof)
        adj = est - np.sign(est) * b
        s = se_of_confounder(r2_treatment, r2_outcome, se=se, dof=dof)
        crit = t_critical(alpha, np.asarray(dof, float) - 1)
        t = adj / s
        lower, upper = adj - crit * s, adj + crit * s
    return {"bias": b, "estimate": adj, "se": s, "t": t, "lower": lower, "upper": upper}


# --------------------------------------------------------------------------- entry point
def check_summary(
    estimate: object, se: object, dof: object, t: object, reduce_by: object, alpha: object
) -> tuple[float, float, float, float, float]:
    """One OLS coefficient's summary, checked: (estimate, se, dof, reduce_by, alpha)."""
    est = float(require_scalar(estimate, "estimate"))
    if se is not None and t is not None:
        raise InputError("give `se` or `t`, not both", ("se", "t"))
    if se is None and t is None:
        raise InputError("`se` (or the t statistic `t`) is required", ("se", "t"))
    dof = float(require_scalar(dof, "dof", DOF_RULE))
    if t is not None:
        t = float(require_scalar(t, "t"))
        if t == 0 or est == 0:
            raise InputError(f"`t` must be non-zero with a non-zero estimate; got t = {t:g}", "t")
        if np.sign(t) != np.sign(est):
            raise InputError(
                f"`t` must have the sign of `estimate`; got {t:g} for {est:g}", ("t", "estimate")
            )
        se = est / t
    se = float(require_scalar(se, "se", POSITIVE))
    with np.errstate(over="ignore"):
        ratio = est / se
    if not np.isfinite(ratio):
        raise InputError(
            f"`estimate` / `se` must be a finite t statistic; got {est:g} / {se:g}",
            ("estimate", "se"),
        )
    reduce_by = float(require_scalar(reduce_by, "reduce_by", POSITIVE))
    checked = levels.check_alpha(alpha)  # type: ignore[arg-type]  # it checks any object
    return est, se, dof, reduce_by, checked


def hypothetical_scenarios(
    estimate: ArrayLike,
    se: ArrayLike,
    dof: ArrayLike,
    r2_treatment: ArrayLike | None,
    r2_outcome: ArrayLike | None,
    alpha: float,
) -> list[Scenario]:
    """Scenarios for confounders of chosen strengths (`r2_*` are equal-length sequences)."""
    r2t = np.atleast_1d(require(r2_treatment, "r2_treatment", R2_STRENGTH))
    r2y = np.atleast_1d(require(r2_outcome, "r2_outcome", R2_STRENGTH))
    if r2t.shape != r2y.shape:
        raise InputError(
            f"`r2_treatment` and `r2_outcome` must come in pairs; got {r2t.size} and {r2y.size}",
            ("r2_treatment", "r2_outcome"),
        )
    adj = adjusted_for_confounder(r2t, r2y, estimate=estimate, se=se, dof=dof, alpha=alpha)
    a = {k: np.asarray(v, float) for k, v in adj.items()}
    return [
        Scenario(float(r2t[i]), float(r2y[i]), float(a["bias"][i]), float(a["estimate"][i]),
                 float(a["se"][i]), float(a["t"][i]), (float(a["lower"][i]), float(a["upper"][i])))
        for i in range(r2t.size)
    ]  # fmt: skip


def benchmark_scenarios(
    estimate: ArrayLike,
    se: ArrayLike,
    dof: ArrayLike,
    covariate: CovariateStrength,
    k_pairs: Sequence[tuple[float, float]],
    alpha: float,
) -> list[Scenario]:
    """Scenarios for confounders of k times the strength of `covariate` (a CovariateStrength)."""
    out = []
    k_max = _k_max(covariate.r2_treatment)
    for kt, ky in k_pairs:
        if kt >= k_max:
            # too strong to exist: the confounder would explain all of the treatment's
            # residual variance. The row says so, with the largest k that exists; the
            # other rows are computed.
            nan = float("nan")
            out.append(Scenario(nan, nan, nan, nan, nan, nan, (nan, nan), kind="benchmark",
                                benchmark=covariate.name, k_treatment=float(kt),
                                k_outcome=float(ky), k_max=float(k_max)))  # fmt: skip
            continue
        r2t, r2y, capped = benchmark_strengths(covariate.r2_treatment, covariate.r2_outcome, kt, ky)
        adj = adjusted_for_confounder(r2t, r2y, estimate=estimate, se=se, dof=dof, alpha=alpha)
        k = f"×{kt:g}" if kt == ky else f"×{kt:g}/×{ky:g}"
        if bool(capped):
            warnings.warn(
                f"a confounder {covariate.name} {k} would need an outcome-side partial R² above "
                "1; it was capped at 1 (the confounder would explain all residual outcome "
                "variance)",
                SensitivityWarning,
                stacklevel=3,
            )
        out.append(
            Scenario(
                float(r2t),
                float(r2y),
                float(adj["bias"]),
                float(adj["estimate"]),
                float(adj["se"]),
                float(adj["t"]),
                (float(adj["lower"]), float(adj["upper"])),
                kind="benchmark",
                benchmark=covariate.name,
                k_treatment=float(kt),
                k_outcome=float(ky),
                capped=bool(capped),
                benchmark_source=covariate.source,
            )
        )
    return out


def partial_r2_summary(
    estimate: ArrayLike,
    se: float | None = None,
    dof: float | None = None,
    *,
    t: float | None = None,
    reduce_by: float = 1.0,
    alpha: float = 0.05,
    r2_treatment: ArrayLike | None = None,
    r2_outcome: ArrayLike | None = None,
    sd_outcome: float | None = None,
    contrast: float = 1.0,
    benchmark_r2: Sequence[Any] = (),
) -> PartialR2Result:
    """Partial-R² sensitivity of an OLS coefficient from its summary numbers.

    Parameters
    ----------
    estimate : float
        The coefficient of the treatment.
    se : float
        Its (classical) standard error; or give `t` instead.
    dof : float
        Residual degrees of freedom of the fit (n minus the number of coefficients).
    t : float, optional
        The t statistic, instead of `se`.
    reduce_by : float, default 1
        Share of the estimate a confounder must explain away (1: all of it).
    alpha : float, default 0.05
        Significance level for the significance robustness value and adjusted intervals.
    r2_treatment, r2_outcome : float or sequence, optional
        Hypothetical confounder strengths, in pairs; each pair adds a scenario.
    sd_outcome : float, optional
        The outcome's standard deviation: adds the E-value through the SMD conversion.
    contrast : float, default 1
        Treatment difference the E-value alongside refers to (the coefficient is per unit;
        e.g. 10 for "per 10 minutes"). The partial-R² numbers do not depend on it.
    benchmark_r2 : sequence, optional
        Benchmarks from a paper's published numbers: (name, r2_treatment, r2_outcome), the
        name with its multiples as for data ("age:2"), or `published_benchmark(...)` values
        (see `with_published_benchmarks`).

    Returns
    -------
    PartialR2Result

    Examples
    --------
    Cinelli & Hazlett (2020): t = 4.18 on 783 dof.

    >>> res = partial_r2_summary(4.18, se=1.0, dof=783)
    >>> rv, rv_alpha = res.robustness_value, res.robustness_value_alpha
    >>> round(res.partial_r2, 3), round(rv, 3), round(rv_alpha, 3)
    (0.022, 0.139, 0.076)
    """
    from .published import with_published_benchmarks

    est, se, dof, reduce_by, alpha = check_summary(estimate, se, dof, t, reduce_by, alpha)
    result = assemble(
        est,
        se,
        dof,
        reduce_by=reduce_by,
        alpha=alpha,
        r2_treatment=r2_treatment,
        r2_outcome=r2_outcome,
        sd_outcome=sd_outcome,
        contrast=contrast,
    )
    return with_published_benchmarks(result, benchmark_r2)


def assemble(
    est: float,
    se: float,
    dof: float,
    *,
    reduce_by: float,
    alpha: float,
    r2_treatment: ArrayLike | None = None,
    r2_outcome: ArrayLike | None = None,
    sd_outcome: float | None = None,
    contrast: float = 1.0,
    scenarios: Sequence[Scenario] = (),
    **context: Any,
) -> PartialR2Result:
    """Build the result from checked numbers; adapters add covariates and benchmarks."""
    if (r2_treatment is None) != (r2_outcome is None):
        given, missing = (
            ("r2_treatment", "r2_outcome") if r2_outcome is None else ("r2_outcome", "r2_treatment")
        )
        raise InputError(
            f"`{given}` needs `{missing}`: a hypothetical confounder has both", (given, missing)
        )
    t = est / se
    hyp = []
    if r2_treatment is not None:
        hyp = hypothetical_scenarios(est, se, dof, r2_treatment, r2_outcome, alpha)
    ev = None
    if sd_outcome is not None:
        from ..evalues.core import evalue

        sd = float(require_scalar(sd_outcome, "sd_outcome", POSITIVE))
        ev = evalue("md", est, se=se, sd=sd, contrast=contrast)
    notes = list(context.pop("notes", ()))
    if ev is not None:
        per = "" if contrast == 1 else f" per {contrast:g} units of treatment"
        notes.append(
            f"E-value: the coefficient{per} standardised by the outcome's SD "
            f"({sd:.4g}) and mapped to a risk ratio with exp(0.91 d) (VanderWeele & "
            "Ding 2017); it answers the same question on the risk-ratio scale."
        )
    return PartialR2Result(
        estimate=est,
        se=se,
        dof=dof,
        t=t,
        partial_r2=float(partial_r2_of_t(t, dof)),
        reduce_by=reduce_by,
        alpha=alpha,
        robustness_value=float(robustness_value_of_t(t, dof=dof, reduce_by=reduce_by)),
        robustness_value_alpha=float(
            robustness_value_of_t(t, dof=dof, reduce_by=reduce_by, alpha=alpha)
        ),
        scenarios=tuple(hyp) + tuple(scenarios),
        evalue=ev,
        notes=tuple(notes),
        **context,
    )


def surface(
    estimate: ArrayLike,
    se: ArrayLike,
    dof: ArrayLike,
    r2_treatment: ArrayLike | None,
    r2_outcome: ArrayLike | None,
    alpha: float = 0.05,
) -> dict[str, np.ndarray]:
    """`adjusted_for_confounder` over the grid of two 1-d strength vectors (rows: r2_treatment).

    The shared computation behind the contour figure and the partial-R² tipping grid.
    """
    r2t = np.atleast_1d(require(r2_treatment, "r2_treatment", R2_STRENGTH))
    r2y = np.atleast_1d(require(r2_outcome, "r2_outcome", R2_STRENGTH))
    return adjusted_for_confounder(
        r2t[:, None], r2y[None, :], estimate=estimate, se=se, dof=dof, alpha=alpha
    )
