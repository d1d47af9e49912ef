"""Bounds on a weighted (inverse probability weighting) estimate under the marginal
sensitivity model.

Model (Tan 2006): a hidden confounder U may move each unit's odds of treatment by at most a
factor Λ >= 1 beyond what the measured covariates explain,
Λ⁻¹ <= odds(e(x, u)) / odds(e(x)) <= Λ. Each unit's true weight then lies in a box: with
v = odds(e(x)) / odds(e(x, u)) for a treated unit (the inverse for a control),

    weight = b + c·v,  v in [1/Λ, Λ],

    treated, ATE:  b = 1, c = (1 - e)/e      (1/e(x, u) = 1 + v(1 - e)/e)
    control, ATE:  b = 1, c = e/(1 - e)      (1/(1 - e(x, u)))
    control, ATT:  b = 0, c = e/(1 - e)      (the odds e(x, u)/(1 - e(x, u)))
    treated, ATT:  b = 1, c = 0              (the plain mean: ATT does not reweight them)

Box bounds (Zhao, Small & Bhattacharya 2019): each arm's stabilised (Hájek) mean
Σ w y / Σ w is maximised over the box at a vertex where the units with the largest outcomes
take v = Λ and the rest 1/Λ (a linear-fractional program). With the arm sorted by outcome,
the prefix sums P_k = Σ_{i<k} c y and Q_k = Σ_{i<k} c do not depend on Λ, and the value of
threshold k is (Σ b y + Λ P_k + (P - P_k)/Λ) / (Σ b + Λ Q_k + (Q - Q_k)/Λ). The best k is
found by Dinkelbach's iteration on the prefix sums (k(μ) = #{y > μ}, μ <- value(k)), which
reaches the optimum of the scan over every k in a few O(log n) steps, for every Λ at once.
The effect's bounds are [μ1⁻ - μ0⁺, μ1⁺ - μ0⁻] (and μ1⁻/μ0⁺, μ1⁺/μ0⁻ as risk ratios).

Sharp bounds (Dorn & Guo 2023): the box ignores that the true weights balance,
E[v | X, arm] = 1. With it, the worst case puts v = Λ above the conditional τ-quantile of
the outcome, τ = Λ/(1 + Λ), and 1/Λ below (the lower bound: Λ below the 1/(1 + Λ)-quantile).
The quantile comes from a linear quantile regression of the outcome on the covariates within
the arm (a smoothed check loss, Newton steps; He, Pan, Tan & Zhou 2023). A continuous outcome
uses the quantile-centred form of the same bound,

    μ⁺ = Σ [b y + c (Q(x) + Λ^±(y - Q(x)))] / Σ (b + c),  Λ^± = Λ above Q, 1/Λ below,

which equals the Hájek mean with those weights when the balance holds and, unlike it, does
not jump when a unit crosses the estimated quantile as Λ moves (a unit at Q adds nothing);
it is held inside the box bounds, where the sharp set of weights lies. For a binary
outcome the conditional law is P(Y = 1 | X, arm) from a logistic fit in the arm, and the atom
at the quantile is split so that the balance holds exactly:
v(1) = Λ, v(0) = (1 - pΛ)/(1 - p) when p <= 1/(1 + Λ); else v(0) = 1/Λ,
v(1) = (1 - (1 - p)/Λ)/p.

Intervals: the percentile bootstrap of Zhao, Small & Bhattacharya: resamples drawn within
each arm (the arm sizes kept), the propensity model (and the quantile model) refitted in
every resample, the interval [L_(j), U_(B+1-j)], the j-th smallest lower bound and the j-th
largest upper bound, j = max(1, floor((B + 1)·α/2)). Every resample's bounds are monotone in
Λ, so the least Λ at which the interval includes the target is the j-th smallest of the
resamples' own crossing points, each solved by Brent's method (no grid is read).

References
----------
Tan Z (2006). JASA 101:1619-1637. Zhao Q, Small DS, Bhattacharya BB (2019). JRSS-B
81:735-761. Dorn J, Guo K (2023). JASA 118:2645-2657. He X, Pan X, Tan KM, Zhou W-X (2023).
Journal of Econometrics 232:367-388.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

from ..common.checks import AT_LEAST_ONE, require, require_seed
from ..common.errors import InputError
from .models import _bandwidth, _expit, logistic_fit
from .resample import (
    _Arm,
    _Bounds,
    _crossing,
    _effect,
    _kept,
    _outcome_starts,
    _propensity,
    _resample,
    _Sample,
)
from .result import WeightingResult

ESTIMANDS = ("ate", "att")
EXTREMES = ("none", "clip", "trim")
METHODS = ("sharp", "percentile")
MIN_ARM = 10  # this project's floor: fewer units in an arm cannot carry a bootstrap
MIN_RESAMPLES = 50
MAX_LAMBDA = 1e12  # the bounds still solve here; at 1e150 the weights overflow


def _lambda_grid(values: object) -> np.ndarray:
    lam = np.atleast_1d(require(values, "lambda", AT_LEAST_ONE)).astype(float)
    if lam.ndim != 1 or lam.size == 0:
        raise InputError("`lambda` must be one value or a list of values", "lambda")
    if lam.max() > MAX_LAMBDA:
        raise InputError(f"`lambda` must be at most {MAX_LAMBDA:g} (this package's limit, "
                         f"well inside double precision); got {lam.max():g}", "lambda")  # fmt: skip
    return np.unique(lam)


def _check_inputs(
    outcome: object, treatment: object, propensity: object, n: int | None
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    try:
        y = np.asarray(outcome, dtype=float)
    except (TypeError, ValueError):
        raise InputError("`outcome` must be numeric", "outcome") from None
    if y.ndim != 1 or y.size == 0:
        raise InputError("`outcome` must be a non-empty 1-d array", "outcome")
    if not np.all(np.isfinite(y)):
        raise InputError("`outcome` must be finite (no missing values)", "outcome")
    try:
        t = np.asarray(treatment, dtype=float)
    except (TypeError, ValueError):
        raise InputError("`treatment` must be binary, coded 0 and 1", "treatment") from None
    if t.shape != y.shape:
        raise InputError(
            f"`treatment` must have one entry per unit ({y.size}); got {t.size}", "treatment"
        )
    values = np.unique(t[np.isfinite(t)])
    if not np.all(np.isfinite(t)) or not np.all(np.isin(values, [0.0, 1.0])):
        shown = ", ".join(f"{v:g}" for v in values[:6])
        raise InputError(
            f"`treatment` must be binary, coded 0 and 1; got values {shown}", "treatment"
        )
    treated = t == 1
    for name, count in (("treated", int(treated.sum())), ("control", int((~treated).sum()))):
        if count < MIN_ARM:
            raise InputError(
                f"`treatment`: the {name} arm has {count} units; need at least {MIN_ARM}",
                "treatment",
            )
    e = None
    if propensity is not None:
        try:
            e = np.asarray(propensity, dtype=float)
        except (TypeError, ValueError):
            raise InputError("`propensity` must be numeric", "propensity") from None
        if e.shape != y.shape:
            raise InputError(
                f"`propensity` must have one entry per unit ({y.size}); got {e.size}", "propensity"
            )
        bad = ~((e > 0) & (e < 1))
        if np.any(bad):
            first = e[bad][0]
            raise InputError(
                f"`propensity` must lie strictly between 0 and 1; got {first:g} "
                f"({int(bad.sum())} unit{'s' if bad.sum() != 1 else ''})",
                "propensity",
            )
    return y, treated, e


def overlap_summary(e: np.ndarray, treated: np.ndarray) -> dict:
    """Fitted treatment probabilities in each arm and the share of units outside their
    common support; `poor` when over 10% lie outside or any is beyond 0.01 to 0.99 (common
    practice; the same rule as the data route of `evalue`)."""
    t, c = e[treated], e[~treated]
    low, high = max(t.min(), c.min()), min(t.max(), c.max())
    outside = float(np.mean((e < low) | (e > high)))
    return {
        "treated": [float(t.min()), float(t.max())],
        "control": [float(c.min()), float(c.max())],
        "common_support": [float(low), float(high)],
        "share_outside": outside,
        "poor": bool(outside > 0.1 or e.min() < 0.01 or e.max() > 0.99),
    }


def _on_one_thread(func: Callable) -> Callable:
    """Run `func` with BLAS held to one thread: the products here are small, and a threaded
    BLAS on a busy machine spins (a dot product of 10^5 took 15 ms instead of 0.03 ms,
    measured here)."""
    from functools import wraps

    @wraps(func)
    def run(*args: Any, **kwargs: Any) -> Any:
        from threadpoolctl import threadpool_limits

        with threadpool_limits(1, "blas"):
            return func(*args, **kwargs)

    return run


@_on_one_thread
def weighting_bounds(
    outcome: object,
    treatment: object,
    *,
    covariates: object = None,
    propensity: object = None,
    estimand: str = "ate",
    lam: object = (1.0, 1.25, 1.5, 2.0, 3.0),
    resamples: int = 200,
    seed: int | None = None,
    alpha: float = 0.05,
    target: float = 0.0,
    extreme: str = "none",
    cut: float = 0.01,
    methods: tuple[str, ...] = METHODS,
    names: tuple[str, str] = ("treatment", "outcome"),
    covariate_names: tuple[str, ...] = (),
    progress: Callable[[int, int], None] | None = None,
    notes: tuple[str, ...] = (),
) -> WeightingResult:
    """Bounds on a weighted (IPW) effect under the marginal sensitivity model, at each Λ:
    box bounds with their percentile-bootstrap intervals, sharp (quantile-balancing) bounds
    with theirs, and the least Λ at which each interval includes `target` (see the module).

    Parameters
    ----------
    outcome, treatment : array-like
        The outcome (continuous, or binary coded 0/1) and the treatment (0/1).
    covariates : array-like (n, p), optional
        The propensity model's design, an intercept column first (as a formula gives it).
        The logistic model is fitted here and refitted in every resample; the quantile models
        use the same design.
    propensity : array-like, optional
        Fitted propensities instead of `covariates` (they stay fixed in the resamples, and
        the quantile models use an intercept and logit(propensity)).
    estimand : {'ate', 'att'}
    lam : float or sequence of float
        Values of Λ >= 1.
    resamples, seed, alpha : the bootstrap and the interval's level 1 - alpha (alpha/2 x resamples
        must be at least 1: each tail of the percentile interval needs a resample beyond it).
    target : float
        The effect (difference scale) whose inclusion changes the conclusion; 0 by default.
    extreme : {'none', 'clip', 'trim'}
        Extreme propensities: clipped to [cut, 1 - cut], or units outside it left out (in
        every resample too).
    methods : tuple of {'sharp', 'percentile'}
        Both by default; the box bounds alone ('percentile',) skip the quantile models, whose
        fits dominate the time on large data.

    Examples
    --------
    At Λ = 1 both bounds equal the ordinary weighted estimate.

    >>> rng = np.random.default_rng(3)
    >>> x = rng.normal(size=400)
    >>> a = (rng.uniform(size=400) < 1 / (1 + np.exp(-x))).astype(float)
    >>> y = x + a + rng.normal(size=400)
    >>> res = weighting_bounds(y, a, covariates=np.c_[np.ones(400), x], lam=[1, 2],
    ...                        resamples=50, seed=1)
    >>> bool(abs(res.lower[0] - res.estimate) < 1e-12 and res.lower[1] < res.estimate)
    True
    """
    from ..common.checks import OPEN_UNIT

    if estimand not in ESTIMANDS:
        raise InputError(
            f"`estimand` must be one of {', '.join(ESTIMANDS)}; got {estimand!r}", "estimand"
        )
    if extreme not in EXTREMES:
        raise InputError(
            f"`extreme` must be one of {', '.join(EXTREMES)}; got {extreme!r}", "extreme"
        )
    grid = _lambda_grid(lam)
    if isinstance(methods, str):
        methods = (methods,)
    chosen = tuple(m for m in METHODS if m in methods)
    if not chosen or len(chosen) != len(set(methods)):
        raise InputError(f"`methods` must be among sharp, percentile; got {methods!r}", "methods")
    level_alpha = float(require(alpha, "alpha", OPEN_UNIT))
    if level_alpha >= 0.5:
        raise InputError(f"`alpha` must be below 0.5; got {level_alpha:g}", "alpha")
    cut = float(require(cut, "cut", OPEN_UNIT))
    if cut >= 0.5:
        raise InputError(f"`cut` must be below 0.5; got {cut:g}", "cut")
    try:
        n_boot = int(resamples)
    except (TypeError, ValueError):
        raise InputError(
            f"`resamples` must be a whole number; got {resamples!r}", "resamples"
        ) from None
    if n_boot < MIN_RESAMPLES:
        raise InputError(f"`resamples` must be at least {MIN_RESAMPLES}; got {n_boot}", "resamples")
    if level_alpha / 2 * n_boot < 1 - 1e-9:
        # the limits are order statistics: each tail needs a resample beyond it (as in simulate)
        least = math.ceil(2 / level_alpha - 1e-9)
        raise InputError(
            f"`alpha` {level_alpha:g} needs at least {least:,} `resamples` (each tail of the "
            f"percentile interval needs alpha/2 x resamples >= 1 resample beyond it); got "
            f"{n_boot:,}",
            ("alpha", "resamples"),
        )
    tgt = float(require(target, "target"))
    if (covariates is None) == (propensity is None):
        raise InputError(
            "give `covariates` (to fit the propensity model) or `propensity`",
            ("covariates", "propensity"),
        )
    y, treated, given = _check_inputs(outcome, treatment, propensity, None)
    n = y.size
    levels = np.unique(y)
    binary = bool(levels.size == 2 and np.all(levels == [0.0, 1.0]))
    if levels.size < 2:
        raise InputError(f"`outcome` takes one value ({levels[0]:g}); it must vary", "outcome")
    out_notes = list(notes)

    # the propensity model
    if covariates is not None:
        design = np.asarray(covariates, float)
        if design.ndim == 1:
            design = design[:, None]
        if design.shape[0] != n or not np.all(np.isfinite(design)):
            raise InputError(f"`covariates` must be finite, one row per unit ({n})", "covariates")
        if not np.allclose(design[:, 0], 1):
            design = np.column_stack([np.ones(n), design])
        if np.linalg.matrix_rank(design) < design.shape[1]:
            raise InputError("`covariates`: the propensity design is rank deficient (a "
                             "covariate repeats another, or is constant)",
                             "covariates")  # fmt: skip
        beta0, ok = logistic_fit(design, treated.astype(float))
        e0 = _expit(design @ beta0)
        if not ok or e0.min() < 1e-10 or e0.max() > 1 - 1e-10:
            raise InputError(
                "`propensity`: the logistic model separates the arms (fitted probabilities "
                "of 0 or 1); positivity fails, so no weighted estimate exists",
                "propensity",
            )
        qx = design
    else:
        design, beta0, e0 = None, None, np.asarray(given, float)
        qx = np.column_stack([np.ones(n), np.log(e0 / (1 - e0))])
        out_notes.append(
            "The propensities were given, so they stay fixed in the resamples: the intervals "
            "leave out the propensity model's own uncertainty."
        )
    ov = overlap_summary(e0, treated)

    # sort by outcome once; arms keep that order
    order = np.argsort(-y, kind="stable")
    y, treated, e0, qx = y[order], treated[order], e0[order], qx[order]
    if design is not None:
        design = design[order]
    if given is not None:
        given = given[order]
    arms = tuple(
        _Arm(y=y[rows], x=qx[rows], rows=rows)
        for rows in (np.flatnonzero(treated), np.flatnonzero(~treated))
    )
    s = _Sample(arms=arms, binary=binary, estimand=estimand, design=design,  # type: ignore[arg-type]
                treated=treated, extreme=extreme, cut=cut, bandwidths={})  # fmt: skip
    if design is not None:
        pr = e0[:, None] * (1 - e0[:, None])
        s.information = (design * pr).T @ design
    e_full = _propensity(s, beta0, given)
    kept = _kept(s, e_full)
    for j, name in enumerate(("treated", "control")):
        left = int(kept[arms[j].rows].sum())
        if left < MIN_ARM:
            raise InputError(
                f"`cut`: trimming leaves {left} {name} units; need at least {MIN_ARM}", "cut"
            )
    if extreme == "trim" and not kept.all():
        out_notes.append(
            f"{int((~kept).sum())} of {n} units with propensities outside [{cut:g}, {1 - cut:g}] "
            "were left out (in every resample too): the estimate is for the remaining "
            "population, not the whole sample."
        )
    elif extreme == "clip":
        clipped = int(np.sum((e0 < cut) | (e0 > 1 - cut)))
        out_notes.append(
            f"Propensities were clipped to [{cut:g}, {1 - cut:g}] ({clipped} of {n} units), "
            "in every resample too."
        )
    if not binary:  # the quantile models' bandwidths, fixed at the full sample's
        for j, arm in enumerate(arms):
            ok = kept[arm.rows]
            s.bandwidths[j] = _bandwidth(arm.x[ok], arm.y[ok])
    evaluate_sharp = np.unique(np.concatenate(([1.0], grid)))
    # the box bounds cost next to nothing per Λ (Dinkelbach on the same prefix sums), so
    # they are also evaluated on a fine grid: the least Λ is then bracketed finely and few
    # resamples need to be drawn again to solve it
    evaluate_box = np.unique(np.concatenate((evaluate_sharp, np.linspace(1, grid.max(), 257))))
    evaluate = {"sharp": evaluate_sharp, "percentile": evaluate_box}
    starts: dict = {"keep": True}
    full = _Bounds(s, e_full, None, starts)
    point = {
        m: full.box(evaluate[m]) if m == "percentile" else full.sharp(evaluate[m]) for m in chosen
    }
    starts["keep"] = False
    if binary:
        starts.update(_outcome_starts(s, kept))

    # the bootstrap
    seed = require_seed(seed)
    drawn_seed = seed is None
    if seed is None:
        seed = int(np.random.SeedSequence().generate_state(1)[0])
    children = np.random.SeedSequence(int(seed)).spawn(n_boot)
    boot = {k: np.empty((n_boot, 4, evaluate[k].size)) for k in chosen}
    betas: list = []
    for i in range(n_boot):
        bnd, beta = _resample(s, children[i], beta0, given, starts)
        betas.append(beta)
        for method in chosen:
            grid_m = evaluate[method]
            boot[method][i] = bnd.box(grid_m) if method == "percentile" else bnd.sharp(grid_m)
        if progress is not None:
            progress(i + 1, n_boot)
    j_order = max(1, int(np.floor((n_boot + 1) * level_alpha / 2)))

    def limits(arms_b: np.ndarray, ratio: bool) -> tuple[np.ndarray, np.ndarray]:
        lo, hi = _effect(np.moveaxis(arms_b, 1, 0), ratio)  # (B, m) each
        return np.sort(lo, 0)[j_order - 1], np.sort(hi, 0)[n_boot - j_order]

    table: dict[str, dict[str, np.ndarray]] = {}
    crossing: dict[str, float | None] = {}
    for method in chosen:
        lo, hi = _effect(point[method])
        ci_lo, ci_hi = limits(boot[method], False)
        entry = {"lower": lo, "upper": hi, "ci_lower": ci_lo, "ci_upper": ci_hi}
        if binary:
            rlo, rhi = _effect(point[method], True)
            rci_lo, rci_hi = limits(boot[method], True)
            entry.update(rr_lower=rlo, rr_upper=rhi, rr_ci_lower=rci_lo, rr_ci_upper=rci_hi)
        table[method] = entry
        crossing[method] = _crossing(
            s, method, boot[method], evaluate[method], j_order, tgt, children, betas, beta0, given,
            starts,
        )  # fmt: skip
    first = table[chosen[0]]  # at Λ = 1 every method gives the ordinary estimate
    est = float(first["lower"][0])
    est_ci = (float(first["ci_lower"][0]), float(first["ci_upper"][0]))
    rr = float(first["rr_lower"][0]) if binary else None
    if ov["poor"]:
        out_notes.append(
            "Overlap is poor (over 10% of units outside the common support, or propensities "
            "beyond 0.01 to 0.99, common practice): extreme weights make the estimate and its "
            "bounds unstable; consider --extreme trim or clip."
        )
    n_treated = int(kept[arms[0].rows].sum())
    return WeightingResult(
        estimand=estimand,
        methods=chosen,
        estimate=est,
        estimate_ci=est_ci,
        risk_ratio=rr,
        lam=grid,
        table={
            m: {k: v[np.searchsorted(evaluate[m], grid)] for k, v in t.items()}
            for m, t in table.items()
        },
        lambda_at_null=crossing,
        target=tgt,
        alpha=level_alpha,
        resamples=n_boot,
        seed=int(seed),
        seed_drawn=drawn_seed,
        outcome_type="binary" if binary else "continuous",
        n_treated=n_treated,
        n_control=int(kept.sum()) - n_treated,
        extreme=extreme,
        cut=cut,
        overlap=ov,
        propensity_source="model" if design is not None else "given",
        names=tuple(names),  # type: ignore[arg-type]
        covariate_names=tuple(covariate_names),
        notes=tuple(out_notes),
    )
