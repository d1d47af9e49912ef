"""The impact threshold of a confounding variable (Frank 2000) and the share of a
coefficient bias would have to account for before its significance changes (Frank et al.
2013).

Correlations are partial on the model's other covariates. With t the treatment's t statistic
on df residual degrees of freedom and t# the two-sided critical value:

- observed correlation r = t / sqrt(t² + df); threshold r# = t# / sqrt(t#² + df);
- a significant coefficient (|r| > r#), to lose significance: impact k = (|r| - r#) /
  (1 - r#), each component sqrt(k) (the omitted variable's partial correlation with the
  treatment and with the outcome, taken equal, which needs the least impact: Frank 2000);
- a coefficient short of significance (|r| < r#), to gain it: a suppressor, r_x = -r_y with
  r² = (r# - |r|) / (1 + r#), k = -r² (derived in the project's methods notes; the sign
  convention is Frank's to confirm);
- the share of the coefficient bias would have to account for: 1 - d# / |b| with d# = t# se
  (short of significance, the share missing: 1 - |b| / d#), and the observations that many
  of n would have to be swapped for no-effect ones: n x share (Frank et al. 2013).

References
----------
Frank KA (2000). Impact of a confounding variable on a regression coefficient. Sociological
Methods & Research 29:147-194.
Frank KA, Maroulis SJ, Duong MQ, Kelcey BM (2013). What would it take to change an
inference? Educational Evaluation and Policy Analysis 35:437-460.
"""

from __future__ import annotations

import numpy as np

from ..common import levels
from ..common.checks import POSITIVE, require_scalar
from ..common.errors import InputError
from .result import ImpactResult


def partial_correlation(r_xy: float, r_xc: float, r_yc: float) -> float:
    """The treatment-outcome correlation after partialling out a confounder."""
    return (r_xy - r_xc * r_yc) / np.sqrt((1 - r_xc**2) * (1 - r_yc**2))


def impact_threshold(
    *,
    t: float | None = None,
    dof: float | None = None,
    estimate: float | None = None,
    se: float | None = None,
    n: int | None = None,
    covariates: int | None = None,
    alpha: float = 0.05,
) -> ImpactResult:
    """How strong an omitted variable would have to be to change a regression coefficient's
    significance (the impact threshold), and the share of the coefficient bias would have
    to account for. Keyword arguments only: the regression's test first, then its size.

    Parameters
    ----------
    t : float
        The treatment coefficient's t statistic; or give `estimate` and `se` (which also
        give the share of the coefficient).
    dof : float
        Residual degrees of freedom; or give `n` and `covariates`.
    estimate, se : float
        The treatment's coefficient and standard error (instead of `t`).
    n : int
        The number of observations (also gives the observations to swap).
    covariates : int
        The number of covariates besides the treatment; df = n - covariates - 2 (the
        treatment and the intercept count too).
    alpha : float, default 0.05
        Two-sided level of the test.

    Examples
    --------
    A kindergarten-retention estimate of -9.01 with se 0.68 on a large sample (recalled
    from Frank et al. 2013): bias would have to account for about 85% of it.

    >>> res = impact_threshold(estimate=-9.01, se=0.68, dof=10_000)
    >>> round(float(res.bias_share), 2)
    0.85
    """
    alpha = levels.check_alpha(alpha)
    if t is None and (estimate is None or se is None):
        raise InputError("give `estimate` and `se`, or `t`", ("estimate", "se", "t"))
    if t is not None and se is not None:
        raise InputError("give `se` or `t`, not both", ("se", "t"))
    if se is not None:
        se = float(require_scalar(se, "se", POSITIVE))
        estimate = float(require_scalar(estimate, "estimate"))
        with np.errstate(over="ignore", under="ignore"):
            t = float(np.float64(estimate) / se)
        if not np.isfinite(t):
            raise InputError(
                f"`estimate` / `se` must be a finite t statistic; got {estimate:g} / {se:g}",
                ("estimate", "se"),
            )
    t = float(require_scalar(t, "t"))
    if dof is not None and (n is not None or covariates is not None):
        raise InputError(
            "give `dof`, or `n` and `covariates`, not both", ("dof", "n", "covariates")
        )
    if dof is None:
        if n is None or covariates is None:
            raise InputError("give `n` and `covariates` (or `dof`)", ("n", "covariates", "dof"))
        n = int(require_scalar(n, "n", POSITIVE))
        covariates = int(require_scalar(covariates, "covariates"))
        if covariates < 0:
            raise InputError(f"`covariates` must be 0 or more; got {covariates}", "covariates")
        if covariates + 2 >= n:
            raise InputError(
                f"`covariates` must leave residual degrees of freedom: {covariates} covariates, "
                f"the treatment and an intercept need more than {covariates + 2} observations; "
                f"got n = {n}",
                "covariates",
            )
        dof = float(n - covariates - 2)
    dof = float(require_scalar(dof, "dof", POSITIVE))
    t_crit = float(levels.t_critical(alpha, dof))
    if not np.isfinite(t_crit):
        raise InputError(
            f"`alpha` {alpha:g} has no finite critical t on {dof:g} degrees of freedom (`dof`); "
            "give a larger alpha or more degrees of freedom",
            ("alpha", "dof"),
        )
    # t / sqrt(t² + dof) through hypot: no overflow at t = 1e155
    r = t / float(np.hypot(t, np.sqrt(dof)))
    r_crit = t_crit / float(np.hypot(t_crit, np.sqrt(dof)))
    sign = 1.0 if r >= 0 else -1.0
    size = abs(r)
    if size > r_crit:
        k = (size - r_crit) / (1 - r_crit)
        component = np.sqrt(k)
        significant = True
    else:
        r2 = (r_crit - size) / (1 + r_crit)
        k = -r2
        component = np.sqrt(r2)
        significant = False
    # the shares need t alone: d# / |b| = t# / |t| (issue 19: from t and dof too)
    threshold = None if se is None else t_crit * se
    size_t = abs(t)
    growth = None
    if size_t > t_crit:
        share = 1 - t_crit / size_t
    else:
        share = 1 - size_t / t_crit
        # short of significance: the coefficient itself must grow by d#/|b| - 1 to reach d#
        growth = t_crit / size_t - 1 if size_t > 0 else None
    swapped = None if n is None else n * share
    return ImpactResult(
        estimate=estimate,
        se=se,
        t=t,
        n=n,
        covariates=covariates,
        dof=dof,
        alpha=alpha,
        t_critical=t_crit,
        correlation=float(r),
        correlation_threshold=float(r_crit * sign),
        itcv=float(sign * k),
        itcv_component=float(component),
        significant=significant,
        estimate_threshold=threshold,
        bias_share=share,
        swapped_observations=swapped,
        estimate_growth=growth,
    )
