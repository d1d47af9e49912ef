"""The passes of the logistic and Poisson fits from data (`glm.py` runs them): the reading
pass that keeps each piece (`Reading`), the passes over the kept pieces on two threads
(`Passes`), each model's Newton iteration and which kind of pass it takes next (`Newton`),
and the overlap's fitted probabilities (`Ranges`).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..common.errors import InputError
from ..common.overlap import WriteBehind
from .fitting import outcome_name, range_problem
from .irls import PieceColumn, Scratch, Step, Workspace, expit, working

TOL = 1e-11
#: Newton steps from x' W x (Gram) while the fit is far from its end; False: every pass by QR.
GRAM = True
#: A pass is by QR when the step it gives is foretold below FORETOLD x TOL (relative).
FORETOLD = 3.0
#: Below this reciprocal condition number of x' W x, the fit's passes are by QR.
MIN_RCOND = 1e-10


class Passes:
    """Jobs over every piece, two at a time (numpy and LAPACK release the GIL), on the same
    two threads for the whole fit, each reading its pieces into arrays it reuses."""

    def __init__(self, scratch: Scratch, width: int) -> None:
        from concurrent.futures import ThreadPoolExecutor

        self.scratch, self.width = scratch, width
        self.work = Workspace()
        self.pool = ThreadPoolExecutor(max_workers=2)

    def each(self, job: Any) -> list[Any]:
        """`job(k, piece)` for every piece k, in order (the piece is lent to the job)."""
        read = self.scratch.read
        return list(self.pool.map(lambda k: job(k, read(k, self.width, self.work)),
                                  range(len(self.scratch.pieces))))  # fmt: skip

    def close(self) -> None:
        self.pool.shutdown()


def _solve(r: np.ndarray) -> np.ndarray:
    """The least squares coefficients from the R factor of [X, z]."""
    from scipy.linalg import solve_triangular

    k = r.shape[1] - 1
    try:
        return solve_triangular(r[:k, :k], r[:k, k])
    except np.linalg.LinAlgError:  # every weight gone to 0: separation
        return np.full(k, np.nan)


class Newton:
    """One IRLS fit's state: its response's slot, its columns' slots, its coefficients, and
    what the last pass of R factors gave (at the coefficients before the last, tiny, step).

    Which kind of pass the next one is (`mode`): the R factor of sqrt(w) [x, z] (QR, what
    every reported number comes from) or a Newton step from x' W x and the score, a third of
    the work. Newton's steps shrink quadratically, so the size of the next step is foretold
    by the last two, s² / s' times s; a pass whose step is foretold to be the last is a QR
    pass, and so decides convergence as a QR-only fit would. A Gram step found to be the
    last is not taken: the pass is made again, by QR, at the same coefficients (a model whose
    covariance is not reported, the treatment's for the overlap, ends with its Gram step:
    only its coefficients are used, as exact that way as by QR). A Gram step
    solves for the step, not the coefficients, so its rounding is relative to the step
    (tiny near the end), not to the coefficients; a Gram matrix that will not factor, or is
    ill-conditioned, or steps that stop shrinking, send the fit to QR passes for good."""

    def __init__(self, kind: str, response: int, slots: list[int], limit: int,
                 reported: bool = True) -> None:  # fmt: skip
        self.kind, self.response, self.slots = kind, response, slots
        self.reported = reported  # its covariance is reported: it ends with a QR pass
        self.beta: np.ndarray | None = None
        self.steps: list[Step] = []
        self.r = np.zeros((0, 0))
        self.done = self.failed = False
        self.limit = limit  # the most steps taken before giving up
        self.taken = 0
        self.changes: list[float] = []  # each step's largest change
        self.qr_only = not GRAM
        self.confirm = False  # a Gram step came out as the last: take it again by QR
        self.grams = 0

    @property
    def active(self) -> bool:
        return not self.done and self.taken < self.limit

    def mode(self) -> str:
        if self.qr_only or self.confirm or self.beta is None:
            return "qr"
        if self.reported and len(self.changes) >= 2 and self.changes[-2] > 0:
            last, before = self.changes[-1], self.changes[-2]
            scale = max(1.0, float(np.max(np.abs(self.beta), initial=0.0)))
            if last**3 / before**2 <= FORETOLD * TOL * scale:
                return "qr"
        return "gram"

    def update(self, r: np.ndarray) -> None:
        """The step from the R factor of sqrt(w) [x, z] at the coefficients."""
        new = _solve(r)
        self.taken += 1
        self.confirm = False
        if not np.isfinite(new).all():
            self.failed = self.done = True
            return
        if self.beta is not None:
            change = float(np.max(np.abs(new - self.beta), initial=0.0))
            self.changes.append(change)
            self.done = change <= TOL * max(1.0, float(np.max(np.abs(new), initial=0.0)))
        self.r, self.beta = r, new

    def update_gram(self, gram: np.ndarray, score: np.ndarray) -> None:
        """The Newton step from x' W x (its upper triangle) and the score x' (y - mu)."""
        from scipy.linalg import cho_factor, cho_solve

        assert self.beta is not None
        try:
            factor = cho_factor(gram, lower=False, check_finite=True)
        except (np.linalg.LinAlgError, ValueError):
            self.qr_only = True  # the pass is made again by QR
            return
        new = self.beta + cho_solve(factor, score)
        if not np.isfinite(new).all():
            self.qr_only = True
            return
        change = float(np.max(np.abs(new - self.beta), initial=0.0))
        if change <= TOL * max(1.0, float(np.max(np.abs(new), initial=0.0))):
            if self.reported:
                self.confirm = True
                return
            self.done = True  # only its coefficients are used: the Gram step's are those
        self.grams += 1
        if _rcond(gram, factor[0]) < MIN_RCOND or (
            self.grams >= 4 and change > self.changes[-1] / 2
        ):
            self.qr_only = True
        self.taken += 1
        self.changes.append(change)
        self.beta = new


def _rcond(gram: np.ndarray, upper: np.ndarray) -> float:
    """The reciprocal condition number (1-norm) of the symmetric matrix whose upper triangle
    is `gram`, from its Cholesky factor (LAPACK dpocon's estimate)."""
    from scipy.linalg import lapack

    full = np.triu(gram) + np.triu(gram, 1).T
    rcond, info = lapack.dpocon(upper, float(np.abs(full).sum(axis=0).max()))
    return float(rcond) if info == 0 else 0.0


class Reading:
    """What the reading pass keeps of each piece, taken in a second thread while the next
    piece is made (so the main thread only builds pieces): the piece itself in the scratch
    file, each column's range and whether it is 0/1, the rows' Gram matrix (the treatment
    model's first step) and the R factor of the first step's weighted rows (the rank, and
    the outcome model's first step). `start` begins again from nothing."""

    def __init__(self, model: str, formula: str, cluster: str | None, overlap: bool) -> None:
        self.model, self.formula, self.cluster, self.overlap = model, formula, cluster, overlap
        self.behind: WriteBehind | None = None
        self._fresh()

    def _fresh(self) -> None:
        from .rfactor import TriangularFactor

        self.scratch, self.codes = Scratch(), Scratch()
        self.first = TriangularFactor()
        self.table: dict[Any, int] = {}
        self.seen: dict[str, Any] = {"positive": 0, "low": np.zeros(0), "high": np.zeros(0),
                                     "binary": np.zeros(0, bool), "gram": np.zeros((0, 0)),
                                     "sums": np.zeros(0)}  # fmt: skip

    def start(self) -> None:
        self.close()
        self._fresh()
        self.behind = WriteBehind(self._take)

    def sink(self, rows: np.ndarray, extras: dict[str, tuple[str, Any]]) -> None:
        """A piece's kept rows (outcome first; the pass lets them be kept) and extra cells."""
        y = rows[:, 0]
        if y.size:  # the outcome's rule for the model, in the in-memory fit's words
            problem = range_problem(self.model, outcome_name(self.formula), y.min(), y.max())
            if problem is not None:
                raise InputError(problem, "formula")
        if self.cluster is not None:
            codes = _cluster_codes(*extras[self.cluster], self.table)
            if (codes < 0).any():
                raise InputError(f"`errors` cluster:{self.cluster}: the column has missing "
                                 "values in rows the fit uses", "errors")  # fmt: skip
            self.codes.add(codes[:, None].astype(float))
        if self.behind is None:
            raise RuntimeError("a piece came before the pass started")
        self.behind.put(rows)

    def _take(self, rows: np.ndarray) -> None:
        """(In the second thread, a piece at a time, in order.)"""
        seen, y = self.seen, rows[:, 0]
        self.scratch.add(rows)
        seen["positive"] += int(np.count_nonzero(y > 0))
        if rows.shape[0]:
            _widen_range(seen, rows.min(axis=0), rows.max(axis=0))
            zero_one = ((rows == 0) | (rows == 1)).all(axis=0)
            old = seen["binary"]
            both = min(old.size, zero_one.size)
            merged = zero_one.copy() if zero_one.size >= old.size else old.copy()
            merged[:both] = old[:both] & zero_one[:both]
            seen["binary"] = merged
            if self.overlap:  # the treatment's first step, should its overlap be fitted
                _add_gram(seen, rows)
        z, root, _ = working(rows[:, 1:], y, None, self.model)
        np.multiply(rows, root[:, None], out=rows)  # the piece is written: weighted in place
        np.multiply(z, root, out=rows[:, 0])  # z in the outcome's slot 0
        self.first.add(rows)

    def finish(self) -> None:
        """Wait for the last piece; the scratch files are then there to be read back."""
        if self.behind is not None:
            behind, self.behind = self.behind, None
            behind.close()
        self.scratch.done()
        self.codes.done()

    def close(self) -> None:
        if self.behind is not None:
            behind, self.behind = self.behind, None
            try:
                behind.close()
            except Exception:  # noqa: BLE001, S110 - the error that stopped the pass is raised
                pass
        self.scratch.close()
        self.codes.close()


def _add_gram(seen: dict[str, Any], rows: np.ndarray) -> None:
    """Add a piece's rows' Gram matrix (upper triangle) and column sums to those so far."""
    from scipy.linalg import blas

    gram = blas.dsyrk(1.0, rows, trans=1)
    sums = rows.sum(axis=0)
    old, have = seen["gram"], seen["gram"].shape[0]
    if have < gram.shape[0]:
        gram[:have, :have] += old
        sums[:have] += seen["sums"]
    else:
        gram, sums = old + gram, seen["sums"] + sums  # (no piece is narrower than one before)
    seen["gram"], seen["sums"] = gram, sums


def treatment_start(seen: dict[str, Any], others: list[int], t_slot: int) -> np.ndarray | None:
    """The treatment model's first IRLS step from its usual starting means ((t + 1/2) / 2),
    from the rows' Gram matrix: for a 0/1 treatment every weight is 3/16 and the working
    response is c (2t - 1), c = log 3 + 4/3, so the step is the least squares fit of that on
    the covariates. None if that matrix will not factor (the first pass then takes it)."""
    from scipy.linalg import cho_factor, cho_solve

    gram, sums = seen["gram"], seen["sums"]
    upper = np.triu(gram) + np.triu(gram, 1).T
    c = np.log(3.0) + 4.0 / 3.0
    try:
        factor = cho_factor(upper[np.ix_(others, others)], lower=False)
    except (np.linalg.LinAlgError, ValueError):
        return None
    start = cho_solve(factor, c * (2.0 * upper[others, t_slot] - sums[others]))
    return start if np.isfinite(start).all() else None


def stacked(steps: list[Step]) -> np.ndarray:
    """The R factor of all pieces from the pieces' own R factors."""
    from .rfactor import fold

    factors = [s.r for s in steps if s.r is not None]
    if len(factors) < len(steps):
        raise AssertionError("a piece's step was taken without its R factor")
    return fold(np.zeros((0, factors[0].shape[1])), np.vstack(factors))


def total(parts: list[np.ndarray | None]) -> np.ndarray:
    """The pieces' sums added in order (each piece computed them: `sums` was on)."""
    total = np.zeros(0)
    for i, part in enumerate(parts):
        if part is None:
            raise AssertionError("a piece's step was taken without its sums")
        total = part if i == 0 else total + part
    return total


class Ranges:
    """`models.overlap` from the treatment model: its fitted probabilities' range in each
    group, from one pass over the pieces (made for the outcome's fit when it needs one more;
    the probabilities wait in a file of their own), and the share outside their common
    support from the probabilities alone."""

    def __init__(self, scratch: Scratch, t_slot: int) -> None:
        self.column = PieceColumn(scratch)
        self.t_slot = t_slot
        self.parts = np.zeros((0, 4))
        self.ready = False

    def piece(self, k: int, piece: np.ndarray, m: Newton) -> list[float]:
        """Piece k's fitted probabilities (kept) and each group's range of them."""
        t = piece[:, self.t_slot]
        if m.failed or not m.done:  # separation: the treatment is its own prediction
            p = np.where(t == 1, 1.0, 0.0)
        else:
            p = expit(piece[:, m.slots] @ m.beta)
        self.column.write(k, p)
        one, zero = p[t == 1], p[t == 0]
        return [one.min(initial=np.inf), one.max(initial=-np.inf),
                zero.min(initial=np.inf), zero.max(initial=-np.inf)]  # fmt: skip

    def gather(self, parts: list[list[float] | None]) -> None:
        self.parts, self.ready = np.array(parts, dtype=float), True

    def overlap(self, passes: Passes, m: Newton) -> dict[str, Any]:
        if not self.ready:
            self.gather(passes.each(lambda k, piece: self.piece(k, piece, m)))
        parts = self.parts
        t_lo, t_hi = float(parts[:, 0].min()), float(parts[:, 1].max())
        c_lo, c_hi = float(parts[:, 2].min()), float(parts[:, 3].max())
        low, high = max(t_lo, c_lo), min(t_hi, c_hi)

        def outside(k: int) -> int:
            p = self.column.read(k)
            return int(np.count_nonzero((p < low) | (p > high)))

        try:
            count = sum(passes.pool.map(outside, range(len(self.column.at) - 1)))
        finally:
            self.column.close()
        share = float(count / (self.column.at[-1] // 8))
        # every row is treated (1) or not (0): the groups' ranges span all probabilities
        return {
            "treated": [t_lo, t_hi],
            "control": [c_lo, c_hi],
            "common_support": [float(low), float(high)],
            "share_outside": share,
            "poor": bool(share > 0.1 or min(t_lo, c_lo) < 0.01 or max(t_hi, c_hi) > 0.99),
        }


def _widen_range(seen: dict[str, Any], low: np.ndarray, high: np.ndarray) -> None:
    """Each slot's smallest and largest value so far (slots met later start from theirs)."""
    for key, new, pick in (("low", low, np.minimum), ("high", high, np.maximum)):
        old = seen[key]
        both = min(old.size, new.size)
        merged = new.copy() if new.size >= old.size else old.copy()
        merged[:both] = pick(old[:both], new[:both])
        seen[key] = merged


def _cluster_codes(kind: str, values: Any, table: dict[Any, int]) -> np.ndarray:
    """Each row's cluster as an integer, numbering clusters as they are met."""
    if kind in ("number", "integer", "bool"):
        keys = [None if v != v else v for v in np.asarray(values, float).tolist()]
    else:
        keys = values.to_pylist()
    for key in dict.fromkeys(keys):
        if key not in table and key is not None:
            table[key] = len(table)
    return np.fromiter((table.get(k, -1) for k in keys), np.int64, count=len(keys))
