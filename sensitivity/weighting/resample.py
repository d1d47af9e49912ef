"""One sample or bootstrap resample of the weighting family: its arms sorted by outcome,
the arm-wise extremes of both methods at any Λ, the resamples drawn within each arm from a
seed's children, and the least Λ solved on them. See `sensitivity.weighting.core`."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .box import _extreme, _sums, box_weights
from .models import logistic_fit, quantile_fit, split_atom


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
