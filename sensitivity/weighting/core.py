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

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..common.checks import AT_LEAST_ONE, require
from ..common.errors import InputError
from .result import WeightingResult

ESTIMANDS = ("ate", "att")
EXTREMES = ("none", "clip", "trim")
METHODS = ("sharp", "percentile")
MIN_ARM = 10  # this project's floor: fewer units in an arm cannot carry a bootstrap
MIN_RESAMPLES = 50
_CHUNK = 1 << 21  # cells of a (units x Λ) table computed at once in the full scan


# --------------------------------------------------------------------------- the box


def box_weights(e: np.ndarray, treated: np.ndarray, estimand: str) -> tuple[np.ndarray, ...]:
    """(b, c) of every unit's weight b + c·v, v in [1/Λ, Λ] (see the module)."""
    e = np.asarray(e, float)
    treated = np.asarray(treated, bool)
    odds = e / (1 - e)
    if estimand == "ate":
        b = np.ones_like(e)
        c = np.where(treated, 1 / odds, odds)
    else:
        b = np.where(treated, 1.0, 0.0)
        c = np.where(treated, 0.0, odds)
    return b, c


def _sums(y: np.ndarray, b: np.ndarray, c: np.ndarray, m: np.ndarray | None) -> tuple:
    """The Λ-free sums of one arm sorted by outcome, descending: Σ b y, Σ b, P_k, Q_k."""
    mb = b if m is None else m * b
    mc = c if m is None else m * c
    p = np.empty(y.size + 1)
    p[0] = 0.0
    np.cumsum(mc * y, out=p[1:])
    q = np.empty(y.size + 1)
    q[0] = 0.0
    np.cumsum(mc, out=q[1:])
    return float((mb * y).sum()), float(mb.sum()), p, q


def _value(sums: tuple, k: np.ndarray, lam: np.ndarray, top: np.ndarray) -> np.ndarray:
    """The Hájek mean when the k largest outcomes take v = top and the rest 1/top·... (see
    `_extreme`): `top` is Λ for the maximum and 1/Λ for the minimum."""
    by, bs, p, q = sums
    pk, qk = p[k], q[k]
    return (by + top * pk + (p[-1] - pk) / top) / (bs + top * qk + (q[-1] - qk) / top)


def _extreme(
    y_desc: np.ndarray, sums: tuple, lam: np.ndarray, upper: bool, start: np.ndarray
) -> np.ndarray:
    """max (or min) of the arm's Hájek mean over the box, for every Λ (Dinkelbach on the
    prefix sums). `y_desc` is the arm's outcomes sorted descending."""
    top = lam if upper else 1 / lam
    neg = -y_desc  # ascending, for searchsorted
    mu = start
    k = np.searchsorted(neg, -mu, side="left")  # k(μ) = #{y > μ}
    for _ in range(200):
        mu = _value(sums, k, lam, top)
        k_new = np.searchsorted(neg, -mu, side="left")
        if np.array_equal(k_new, k):
            return mu
        k = k_new
    return _scan(sums, lam, upper)  # pragma: no cover - Dinkelbach ends in a few steps


def _scan(sums: tuple, lam: np.ndarray, upper: bool) -> np.ndarray:
    """The same extremum by scanning every threshold k = 0..n (the reference route)."""
    n = sums[2].size
    out = np.empty(lam.size)
    step = max(1, _CHUNK // max(n, 1))
    for s in range(0, lam.size, step):
        part = lam[s : s + step]
        top = part if upper else 1 / part
        k = np.arange(n)[:, None]
        values = _value(sums, k, part[None, :], top[None, :])
        out[s : s + step] = values.max(0) if upper else values.min(0)
    return out


def box_bounds(
    y: np.ndarray,
    b: np.ndarray,
    c: np.ndarray,
    lam: np.ndarray,
    *,
    weights: np.ndarray | None = None,
    scan: bool = False,
) -> tuple[np.ndarray, np.ndarray]:
    """Least and greatest Σ w y / Σ w over w_i = b_i + c_i·v_i, v_i in [1/Λ, Λ], for every Λ.

    `weights` are frequencies (a bootstrap's counts). `scan=True` scans every threshold
    instead of Dinkelbach's iteration (the two agree; tests compare them with enumeration).

    Examples
    --------
    >>> lo, hi = box_bounds(np.array([1.0, 0.0]), np.ones(2), np.ones(2), np.array([1.0, 3.0]))
    >>> lo.round(4).tolist(), hi.round(4).tolist()
    ([0.5, 0.25], [0.5, 0.75])
    """
    y = np.asarray(y, float)
    order = np.argsort(-y, kind="stable")
    y_desc = y[order]
    m = None if weights is None else np.asarray(weights, float)[order]
    sums = _sums(y_desc, np.asarray(b, float)[order], np.asarray(c, float)[order], m)
    lam = np.atleast_1d(np.asarray(lam, float))
    if scan:
        return _scan(sums, lam, False), _scan(sums, lam, True)
    start = np.full(lam.shape, (sums[0] + sums[2][-1]) / (sums[1] + sums[3][-1]))
    return _extreme(y_desc, sums, lam, False, start), _extreme(y_desc, sums, lam, True, start)


# --------------------------------------------------------------------------- small fits


def logistic_fit(
    x: np.ndarray,
    a: np.ndarray,
    weights: np.ndarray | None = None,
    start: np.ndarray | None = None,
    iterations: int = 50,
    tol: float = 1e-10,
    information: np.ndarray | None = None,
) -> tuple[np.ndarray, bool]:
    """Maximum-likelihood logistic regression by Newton's method (IRLS): (coefficients,
    converged). `weights` are frequencies; the design `x` carries its own intercept.

    With `information` (the full sample's X'WX, for a bootstrap resample started at the full
    sample's fit), the steps use that fixed matrix: a resample's own differs from it by
    sampling error only, so the steps shrink fast without forming X'WX again (the costly
    part), to the same maximum (where the score is zero); full Newton steps take over if
    they do not."""
    from scipy.special import expit

    n, p = x.shape
    w = np.ones(n) if weights is None else np.asarray(weights, float)
    beta = np.zeros(p) if start is None else np.array(start, float)
    if information is not None:
        xt = np.ascontiguousarray(x.T)  # rows of covariates: both products run along memory
        for _ in range(30):
            step = np.linalg.solve(information, xt @ (w * (a - expit(beta @ xt))))
            beta = beta + step
            if not np.all(np.isfinite(beta)):
                beta = np.array(start, float)
                break
            if np.max(np.abs(step)) < 1e-3 * tol * (1 + np.max(np.abs(beta))):
                return beta, True  # the same fixed point as Newton's (the score is zero)
    for _ in range(iterations):
        pr = expit(x @ beta)
        grad = x.T @ (w * (a - pr))
        info = (x * (w * pr * (1 - pr))[:, None]).T @ x
        try:
            step = np.linalg.solve(info + 1e-12 * np.eye(p), grad)
        except np.linalg.LinAlgError:
            return beta, False
        beta = beta + step
        if not np.all(np.isfinite(beta)):
            return beta, False
        if np.max(np.abs(step)) < tol * (1 + np.max(np.abs(beta))):
            return beta, True
    return beta, False


def _ncdf(z: np.ndarray) -> np.ndarray:
    from scipy.special import ndtr

    return ndtr(z)


def quantile_fit(
    x: np.ndarray,
    y: np.ndarray,
    tau: float,
    *,
    weights: np.ndarray | None = None,
    bandwidth: float | None = None,
    start: np.ndarray | None = None,
) -> np.ndarray:
    """Linear τ-quantile regression of y on x: the check loss smoothed by a Gaussian kernel
    of width h, minimised by Newton steps with backtracking (He, Pan, Tan & Zhou 2023).

    h defaults to s·max(0.05, ((p + log n)/n)^(1/4)), s = 1.4826·MAD of the least-squares
    residuals (this project's choice of scale). The loss per unit is
    h·φ(r/h) + r·(τ - Φ(-r/h)); its gradient τ - Φ(-r/h), its curvature φ(r/h)/h.
    """
    n, p = x.shape
    w = np.ones(n) if weights is None else np.asarray(weights, float)
    sw = np.sqrt(w)
    if start is None or bandwidth is None:
        ls = np.linalg.lstsq(x * sw[:, None], y * sw, rcond=None)[0]
        resid = y - x @ ls
    if bandwidth is None:
        mad = _weighted_quantile(np.abs(resid - _weighted_quantile(resid, w, 0.5)), w, 0.5)
        scale = 1.4826 * mad if mad > 0 else (np.std(resid) or 1.0)
        bandwidth = scale * max(0.05, ((p + np.log(max(n, 2))) / max(n, 2)) ** 0.25)
    h = float(bandwidth)
    if start is None:
        beta = ls.copy()
        beta[0] += _weighted_quantile(resid, w, tau)  # the design's first column is 1
    else:
        beta = np.array(start, float)

    root = np.sqrt(2 * np.pi)
    ridge = 1e-10 * max(1.0, float(w.sum())) * np.eye(p)

    def state(b: np.ndarray) -> tuple:
        """Residuals, Φ(-r/h), φ(r/h) and the smoothed loss at b (each computed once)."""
        r = y - x @ b
        z = r / h
        cdf = _ncdf(-z)
        pdf = np.exp(-0.5 * z * z) / root
        return r, cdf, pdf, float((w * (h * pdf + r * (tau - cdf))).sum())

    r, cdf, pdf, current = state(beta)
    for _ in range(100):
        grad = -(x.T @ (w * (tau - cdf)))
        hess = (x * (w * pdf / h)[:, None]).T @ x + ridge
        step = np.linalg.solve(hess, grad)
        t = 1.0
        while True:
            trial = beta - t * step
            new = state(trial)
            if new[3] <= current + 1e-12 * abs(current) or t < 1e-8:
                break
            t /= 2
        done = np.max(np.abs(t * step)) < 1e-8 * (1 + np.max(np.abs(beta)))
        beta = trial
        r, cdf, pdf, current = new
        if done:
            break
    return beta


def _weighted_quantile(v: np.ndarray, w: np.ndarray, q: float) -> float:
    """The lower q-quantile of v with frequency weights w."""
    order = np.argsort(v)
    cw = np.cumsum(w[order])
    i = int(np.searchsorted(cw, q * cw[-1], side="left"))
    return float(v[order][min(i, v.size - 1)])


def split_atom(p: np.ndarray, lam: float) -> tuple[np.ndarray, np.ndarray]:
    """Quantile balancing for a binary outcome: (v at the favoured value, v at the other)
    maximising E[v·1{favoured}] subject to E[v] = 1 and v in [1/Λ, Λ], where p is the
    favoured value's probability. The atom at the quantile is split so that E[v] = 1."""
    p = np.asarray(p, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        low = p <= 1 / (1 + lam)
        fav = np.where(low, lam, (1 - (1 - p) / lam) / np.where(p > 0, p, 1))
        other = np.where(low, (1 - p * lam) / np.where(p < 1, 1 - p, 1), 1 / lam)
    return fav, other


# --------------------------------------------------------------------------- one sample


@dataclass
class _Arm:
    """One arm's data, sorted by outcome (descending)."""

    y: np.ndarray
    x: np.ndarray  # the quantile (or outcome-logistic) model's design
    rows: np.ndarray  # positions in the whole sample


@dataclass
class _Sample:
    """Everything fixed across resamples."""

    arms: tuple[_Arm, _Arm]  # treated, controls
    binary: bool
    estimand: str
    design: np.ndarray | None  # the propensity design (None: propensities given)
    treated: np.ndarray
    extreme: str
    cut: float
    bandwidths: dict  # (arm, tau) -> h, fixed at the full sample's
    information: np.ndarray | None = None  # the propensity fit's X'WX on the full sample


def _propensity(s: _Sample, beta: np.ndarray | None, given: np.ndarray | None) -> np.ndarray:
    from scipy.special import expit

    e = np.asarray(given if beta is None else expit(s.design @ beta), float)  # type: ignore[operator]
    if s.extreme == "clip":
        e = np.clip(e, s.cut, 1 - s.cut)
    return e


def _kept(s: _Sample, e: np.ndarray) -> np.ndarray:
    if s.extreme == "trim":
        return (e >= s.cut) & (e <= 1 - s.cut)
    return np.ones(e.size, bool)


class _Bounds:
    """The arm-wise extremes of one sample (or resample) at any Λ, for both methods."""

    def __init__(self, s: _Sample, e: np.ndarray, counts: np.ndarray | None, q_start: dict):
        self.s = s
        keep = _kept(s, e)
        m = keep.astype(float) if counts is None else counts * keep
        b, c = box_weights(e, s.treated, s.estimand)
        self.parts = []
        for arm in s.arms:
            mm = m[arm.rows]
            bb, cc = b[arm.rows], c[arm.rows]
            self.parts.append((arm, mm, bb, cc, _sums(arm.y, bb, cc, mm)))
        self.q_start = q_start
        self.p_fit: dict = {}
        self.drawn: dict = {}

    def _start(self, key: tuple) -> np.ndarray | None:
        """The full sample's fit at this τ, else at the nearest τ fitted (a warm start)."""
        if key in self.q_start:
            return self.q_start[key]
        near = [k for k in self.q_start if isinstance(k, tuple) and k[0] == key[0]
                and isinstance(k[1], float)]  # fmt: skip
        if not near:
            return None
        return self.q_start[min(near, key=lambda k: abs(k[1] - key[1]))]

    def box(self, lam: np.ndarray) -> np.ndarray:
        """(4, len(lam)): μ1⁻, μ1⁺, μ0⁻, μ0⁺."""
        out = []
        for arm, _, _, _, sums in self.parts:
            start = np.full(lam.shape, (sums[0] + sums[2][-1]) / (sums[1] + sums[3][-1]))
            out += [
                _extreme(arm.y, sums, lam, False, start),
                _extreme(arm.y, sums, lam, True, start),
            ]
        return np.array(out)

    def _arm_sharp(self, j: int, lam: float, upper: bool) -> float:
        arm, m, b, c, sums = self.parts[j]
        if not np.any(c[m > 0]):  # an arm the estimand does not reweight
            return float((m * b) @ arm.y / (m * b).sum())
        if self.s.binary:
            if j not in self.p_fit:
                from scipy.special import expit

                ok = m > 0
                beta, _ = logistic_fit(arm.x[ok], arm.y[ok], m[ok], self.q_start.get(("p", j)))
                self.p_fit[j] = np.clip(expit(arm.x @ beta), 0.0, 1.0)
            p1 = self.p_fit[j]
            if upper:
                fav, other = split_atom(p1, lam)
                v = np.where(arm.y == 1, fav, other)
            else:
                fav, other = split_atom(1 - p1, lam)
                v = np.where(arm.y == 0, fav, other)
        else:
            tau = lam / (1 + lam) if upper else 1 / (1 + lam)
            key = (j, round(tau, 12))
            if j not in self.drawn:  # the units drawn (the others add nothing)
                ok = m > 0
                self.drawn[j] = (arm.x[ok], arm.y[ok], m[ok], b[ok], c[ok])
            xs, ys, ms, bs, cs = self.drawn[j]
            beta = quantile_fit(xs, ys, tau, weights=ms, bandwidth=self.s.bandwidths.get(j),
                                start=self._start(key))  # fmt: skip
            if self.q_start.get("keep"):
                self.q_start[key] = beta
            # the quantile-centred form: Σ m[b y + c(Q + Λ^±(y - Q))] / Σ m(b + c), which
            # equals the Hájek mean with v = Λ^± at the balance, and is continuous in Q (a
            # unit at the quantile adds nothing, so the bound does not jump as Q moves)
            r = ys - xs @ beta
            big, small = (lam, 1 / lam) if upper else (1 / lam, lam)
            tilted = ys - r + np.where(r > 0, big, small) * r
            return float((ms * (bs * ys + cs * tilted)).sum() / (ms * (bs + cs)).sum())
        w = m * (b + c * v)
        return float(w @ arm.y / w.sum())

    def sharp(self, lam: np.ndarray) -> np.ndarray:
        out = np.empty((4, lam.size))
        for i, lv in enumerate(lam):
            out[0, i] = self._arm_sharp(0, float(lv), False)
            out[1, i] = self._arm_sharp(0, float(lv), True)
            out[2, i] = self._arm_sharp(1, float(lv), False)
            out[3, i] = self._arm_sharp(1, float(lv), True)
        if not self.s.binary:
            # the quantile-centred form can step a hair outside the box in a finite sample;
            # the sharp set of weights lies inside the box's, so its bounds do too
            box = self.box(lam)
            out[[0, 2]] = np.maximum(out[[0, 2]], box[[0, 2]])
            out[[1, 3]] = np.minimum(out[[1, 3]], box[[1, 3]])
        return out


def _effect(arms: np.ndarray, ratio: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """(lower, upper) of the effect from arm-wise extremes (4, ...)."""
    if ratio:
        with np.errstate(divide="ignore", invalid="ignore"):
            return arms[0] / arms[3], arms[1] / arms[2]
    return arms[0] - arms[3], arms[1] - arms[2]


# --------------------------------------------------------------------------- entry point


def _lambda_grid(values: object) -> np.ndarray:
    lam = np.atleast_1d(require(values, "lambda", AT_LEAST_ONE)).astype(float)
    if lam.ndim != 1 or lam.size == 0:
        raise InputError("`lambda` must be one value or a list of values")
    return np.unique(lam)


def _check_inputs(
    outcome: object, treatment: object, propensity: object, n: int | None
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    try:
        y = np.asarray(outcome, dtype=float)
    except (TypeError, ValueError):
        raise InputError("`outcome` must be numeric") from None
    if y.ndim != 1 or y.size == 0:
        raise InputError("`outcome` must be a non-empty 1-d array")
    if not np.all(np.isfinite(y)):
        raise InputError("`outcome` must be finite (no missing values)")
    try:
        t = np.asarray(treatment, dtype=float)
    except (TypeError, ValueError):
        raise InputError("`treatment` must be binary, coded 0 and 1") from None
    if t.shape != y.shape:
        raise InputError(f"`treatment` must have one entry per unit ({y.size}); got {t.size}")
    values = np.unique(t[np.isfinite(t)])
    if not np.all(np.isfinite(t)) or not np.all(np.isin(values, [0.0, 1.0])):
        shown = ", ".join(f"{v:g}" for v in values[:6])
        raise InputError(f"`treatment` must be binary, coded 0 and 1; got values {shown}")
    treated = t == 1
    for name, count in (("treated", int(treated.sum())), ("control", int((~treated).sum()))):
        if count < MIN_ARM:
            raise InputError(
                f"`treatment`: the {name} arm has {count} units; need at least {MIN_ARM}"
            )
    e = None
    if propensity is not None:
        try:
            e = np.asarray(propensity, dtype=float)
        except (TypeError, ValueError):
            raise InputError("`propensity` must be numeric") from None
        if e.shape != y.shape:
            raise InputError(f"`propensity` must have one entry per unit ({y.size}); got {e.size}")
        bad = ~((e > 0) & (e < 1))
        if np.any(bad):
            first = e[bad][0]
            raise InputError(
                f"`propensity` must lie strictly between 0 and 1; got {first:g} "
                f"({int(bad.sum())} unit{'s' if bad.sum() != 1 else ''})"
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


def _one_thread():
    """BLAS held to one thread: the products here are small, and a threaded BLAS on a busy
    machine spins (a dot product of 10^5 took 15 ms instead of 0.03 ms, measured here)."""
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # pragma: no cover - an optional helper
        from contextlib import nullcontext

        return nullcontext()
    return threadpool_limits(1, "blas")


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
    resamples, seed, alpha : the bootstrap and the interval's level 1 - alpha.
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
    options = dict(locals())
    with _one_thread():
        return _bounds(**options)


def _bounds(
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
    from ..common.checks import OPEN_UNIT

    if estimand not in ESTIMANDS:
        raise InputError(f"`estimand` must be one of {', '.join(ESTIMANDS)}; got {estimand!r}")
    if extreme not in EXTREMES:
        raise InputError(f"`extreme` must be one of {', '.join(EXTREMES)}; got {extreme!r}")
    grid = _lambda_grid(lam)
    if isinstance(methods, str):
        methods = (methods,)
    chosen = tuple(m for m in METHODS if m in methods)
    if not chosen or len(chosen) != len(set(methods)):
        raise InputError(f"`methods` must be among sharp, percentile; got {methods!r}")
    level_alpha = float(require(alpha, "alpha", OPEN_UNIT))
    if level_alpha >= 0.5:
        raise InputError(f"`alpha` must be below 0.5; got {level_alpha:g}")
    cut = float(require(cut, "cut", OPEN_UNIT))
    if cut >= 0.5:
        raise InputError(f"`cut` must be below 0.5; got {cut:g}")
    try:
        n_boot = int(resamples)
    except (TypeError, ValueError):
        raise InputError(f"`resamples` must be a whole number; got {resamples!r}") from None
    if n_boot < MIN_RESAMPLES:
        raise InputError(f"`resamples` must be at least {MIN_RESAMPLES}; got {n_boot}")
    tgt = float(require(target, "target"))
    if (covariates is None) == (propensity is None):
        raise InputError("give `covariates` (to fit the propensity model) or `propensity`")
    y, treated, given = _check_inputs(outcome, treatment, propensity, None)
    n = y.size
    levels = np.unique(y)
    binary = bool(levels.size == 2 and np.all(levels == [0.0, 1.0]))
    if levels.size < 2:
        raise InputError(f"`outcome` takes one value ({levels[0]:g}); it must vary")
    out_notes = list(notes)

    # the propensity model
    if covariates is not None:
        design = np.asarray(covariates, float)
        if design.ndim == 1:
            design = design[:, None]
        if design.shape[0] != n or not np.all(np.isfinite(design)):
            raise InputError(f"`covariates` must be finite, one row per unit ({n})")
        if not np.allclose(design[:, 0], 1):
            design = np.column_stack([np.ones(n), design])
        if np.linalg.matrix_rank(design) < design.shape[1]:
            raise InputError("`covariates`: the propensity design is rank deficient (a "
                             "covariate repeats another, or is constant)")  # fmt: skip
        beta0, ok = logistic_fit(design, treated.astype(float))
        e0 = _expit(design @ beta0)
        if not ok or e0.min() < 1e-10 or e0.max() > 1 - 1e-10:
            raise InputError(
                "`propensity`: the logistic model separates the arms (fitted probabilities "
                "of 0 or 1); positivity fails, so no weighted estimate exists"
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
            raise InputError(f"`cut`: trimming leaves {left} {name} units; need at least {MIN_ARM}")
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


def _expit(z: np.ndarray) -> np.ndarray:
    from scipy.special import expit

    return expit(z)


def _bandwidth(x: np.ndarray, y: np.ndarray) -> float:
    n, p = x.shape
    ls = np.linalg.lstsq(x, y, rcond=None)[0]
    resid = y - x @ ls
    mad = float(np.median(np.abs(resid - np.median(resid))))
    scale = 1.4826 * mad if mad > 0 else (float(np.std(resid)) or 1.0)
    return scale * max(0.05, ((p + np.log(max(n, 2))) / max(n, 2)) ** 0.25)


def _outcome_starts(s: _Sample, kept: np.ndarray) -> dict:
    out = {}
    for j, arm in enumerate(s.arms):
        ok = kept[arm.rows]
        beta, _ = logistic_fit(arm.x[ok], arm.y[ok])
        out[("p", j)] = beta
    return out


def _resample(
    s: _Sample, child: np.random.SeedSequence, beta0: np.ndarray | None,
    given: np.ndarray | None, starts: dict,
) -> tuple[_Bounds, np.ndarray | None]:  # fmt: skip
    """One resample, drawn within each arm, with the propensity model refitted."""
    rng = np.random.default_rng(child)
    counts = np.zeros(s.treated.size)
    for arm in s.arms:
        k = arm.rows.size
        counts[arm.rows] = np.bincount(rng.integers(0, k, k), minlength=k)
    beta = None
    if s.design is not None:
        # units not drawn add nothing to the likelihood; Newton converges quadratically, so
        # a last step below 1e-6 leaves an error near 1e-12
        drawn = counts > 0
        beta, _ = logistic_fit(
            s.design[drawn], s.treated[drawn].astype(float), counts[drawn], beta0, tol=1e-6,
            information=s.information,
        )  # fmt: skip
        if not np.all(np.isfinite(beta)):
            beta = beta0
    e = _propensity(s, beta, given)
    e = np.clip(e, 1e-12, 1 - 1e-12)
    return _Bounds(s, e, counts, starts), beta


def _crossing(s, method, boot, evaluate, j_order, tgt, children, betas, beta0, given, starts):
    """The least Λ in [1, max Λ] at which the interval includes `tgt`; None if none.

    Every resample's lower bound falls and upper bound rises with Λ, so the interval's
    lower limit (the j-th smallest lower bound) reaches `tgt` exactly at the j-th smallest
    of the resamples' own crossing points. Only resamples whose crossing lies in the grid
    cell of that order statistic are solved (Brent), the rest are ordered by their cell.
    """
    from scipy.optimize import brentq

    n_boot = boot.shape[0]
    lo, hi = _effect(np.moveaxis(boot, 1, 0))  # (B, m)
    ci_lo = np.sort(lo[:, 0])[j_order - 1]
    ci_hi = np.sort(hi[:, 0])[n_boot - j_order]
    if ci_lo <= tgt <= ci_hi:
        return 1.0
    above = ci_lo > tgt
    side = lo if above else hi
    reached = side <= tgt if above else side >= tgt  # (B, m), monotone in Λ
    reached = np.maximum.accumulate(reached, axis=1)
    cell = np.where(reached.any(1), reached.argmax(1), evaluate.size)  # first grid index
    ranked = np.sort(cell)
    c_star = ranked[j_order - 1]
    if c_star >= evaluate.size:
        return None
    if c_star == 0:
        return 1.0
    before = int(np.sum(cell < c_star))
    inside = np.flatnonzero(cell == c_star)
    a, b = float(evaluate[c_star - 1]), float(evaluate[c_star])
    roots = []
    for i in inside:
        # a plain function with its arguments, not a closure: each resample's arrays are
        # freed as soon as its root is found (a closure cycle kept them until a collection)
        extra = (_rebuild(s, children[i], betas[i], given, starts), method, above, tgt)
        fa, fb = _limit_at(a, *extra), _limit_at(b, *extra)
        if fa == 0:
            roots.append(a)
        elif np.sign(fa) == np.sign(fb):
            roots.append(b)  # a bound that is not monotone inside the cell: its grid end
        else:
            roots.append(brentq(_limit_at, a, b, args=extra, xtol=1e-10, rtol=1e-12))
        del extra
    roots.sort()
    return float(roots[j_order - 1 - before])


def _limit_at(lam: float, bnd: _Bounds, method: str, above: bool, tgt: float) -> float:
    """The resample's lower (or upper) effect bound at Λ, less the target."""
    one = np.array([lam])
    arms_b = bnd.box(one) if method == "percentile" else bnd.sharp(one)
    low, high = _effect(arms_b)
    return float((low[0] if above else high[0]) - tgt)


def _rebuild(
    s: _Sample, child: np.random.SeedSequence, beta: np.ndarray | None,
    given: np.ndarray | None, starts: dict,
) -> _Bounds:  # fmt: skip
    """The resample `child` again, with its fitted propensity coefficients."""
    rng = np.random.default_rng(child)
    counts = np.zeros(s.treated.size)
    for arm in s.arms:
        k = arm.rows.size
        counts[arm.rows] = np.bincount(rng.integers(0, k, k), minlength=k)
    e = np.clip(_propensity(s, beta, given), 1e-12, 1 - 1e-12)
    return _Bounds(s, e, counts, starts)
