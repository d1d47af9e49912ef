"""Logistic and Poisson regressions from data in passes over pieces, in flat memory.

Iteratively reweighted least squares (Newton's method for these canonical links): at the
coefficients b, each row has the mean mu (expit or exp of x'b), the weight w (mu (1 - mu), or
mu) and the working response z = x'b + (y - mu) / w; the next b is the weighted least squares
fit of z on x, found as in the OLS route from the R factor of sqrt(w) [x, z] folded a piece at
a time (`rfactor.fold`). The first step starts from the usual means ((y + 1/2) / 2, or
y + 1/2) and is folded while the file is read; the pieces are kept in a scratch file, so each
later step reads back numbers, not text. Iterations stop when the step is below 1e-11 of the
coefficients (Newton's steps shrink quadratically, so the last R is that of the final b to
about 1e-20).

Covariances from per-piece sums: classical (R'R)^-1; HC0 the sandwich B M B with B = (R'R)^-1
and M = sum x x' (y - mu)²; cluster the sandwich with M the sum over clusters of each cluster's
score sum s s' (s = sum x (y - mu)), times G / (G - 1) (n - 1) / (n - k), statsmodels' default.
statsmodels gives the HC0 sandwich under every HC name for these fits, so hc1-hc3 are refused
(as the in-memory route refuses them). Negative binomial and Cox fits, and formulas other than
columns and C(col) joined by '+', stay with the in-memory fit (`models.fit`).

`piece_step` is a pure function of a piece and the coefficients: a distributed engine can map
it over partitions and fold the R factors and add the sums it returns.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..common.errors import InputError
from .irls import PieceColumn, Scratch, Step, Workspace, expit, piece_step, working

#: The models this route fits (their links are canonical: IRLS is Newton's method).
MODELS = ("logit", "poisson")
#: The error types it computes from per-piece sums. statsmodels computes every HC name of a
#: likelihood fit as the HC0 sandwich, so hc1-hc3 are refused for these fits (as the in-memory
#: route does) rather than shown under a name they do not have.
ERRORS = ("classical", "hc0", "cluster")
TOL = 1e-11
MAX_STEPS = 60
#: Newton steps from x' W x (Gram) while the fit is far from its end; False: every pass by QR.
GRAM = True
#: A pass is by QR when the step it gives is foretold below FORETOLD x TOL (relative).
FORETOLD = 3.0
#: Below this reciprocal condition number of x' W x, the fit's passes are by QR.
MIN_RCOND = 1e-10


class _Passes:
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


class _Model:
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


# --------------------------------------------------------------------------- the fit
@dataclass
class Fit:
    """A fitted model's parts: coefficient names, estimates, covariance, rows used, the
    outcome's share above zero, statsmodels' name of the covariance, notes, and the overlap
    of a binary treatment (as `models.overlap` gives it)."""

    names: list[str]
    params: np.ndarray
    cov: np.ndarray
    n: int
    share: float
    cov_type: str
    notes: list[str] = field(default_factory=list)
    overlap: dict[str, Any] | None = None
    binary: bool = False  # the outcome is 0/1 and both occur
    clusters: int = 0


def parse_errors(errors: str | None) -> tuple[str, str | None]:
    """(kind, cluster column) of an `errors` value: classical, hc0, hc1, hc2, hc3 or
    cluster:COLUMN."""
    if errors is None:
        return "classical", None
    kind, _, column = str(errors).strip().partition(":")
    kind = kind.strip().lower()
    if kind == "cluster" and column.strip():
        return "cluster", column.strip()
    if kind in ("classical", "hc0", "hc1", "hc2", "hc3") and not column:
        return kind, None
    raise InputError(
        f"`errors` must be classical, hc0, hc1, hc2, hc3 or cluster:COLUMN; got {errors!r}",
        "errors",
    )


def supports(formula: Any, model: str, errors: str | None = None) -> bool:
    """Whether this route fits the model: logit or Poisson, a plain formula, and errors it
    computes from per-piece sums."""
    from .rfactor import plain_terms

    if model not in MODELS or not isinstance(formula, str) or plain_terms(formula) is None:
        return False
    try:
        return parse_errors(errors)[0] in ERRORS
    except InputError:
        return True  # the route names the problem


def glm_one_pass(data: Any, formula: str, treatment: str, model: str, *,
                 errors: str | None = None, overlap: bool = True,
                 progress: Any = None) -> Fit:  # fmt: skip
    """Fit a logistic or Poisson `formula` (columns and C(col) joined by '+') on `data` (a
    file or a DataFrame) in passes over pieces: equal to statsmodels' Logit or Poisson fit
    (to 1e-8), with `errors` classical, hc0 or cluster:COLUMN, in memory that does not grow
    with the rows (the pieces wait in a temporary file: 8 bytes a design cell)."""
    from .batches import file_source, frame_source
    from .design import check_names, find_treatment, no_interaction
    from .onepass import _Header, _kept
    from .rfactor import one_blas_thread, plain_design, plain_terms

    if model not in MODELS:
        raise InputError(f"`model` must be one of {', '.join(MODELS)} here; got {model!r}", "model")
    kind, cluster = parse_errors(errors)
    if kind not in ERRORS:
        raise InputError(
            f"`errors` {kind} is computed for OLS fits only; for a {model} fit statsmodels "
            "gives the HC0 sandwich under every HC name, so use hc0 (or cluster:COLUMN)",
            "errors",
        )
    plain = plain_terms(formula) if isinstance(formula, str) else None
    if plain is None:
        raise InputError(f"`formula` {formula!r}: this route takes columns and C(col) joined "
                         "by '+'", "formula")  # fmt: skip
    source = frame_source(data) if hasattr(data, "columns") else file_source(data, "data")
    check_names(_Header(source.columns), formula, treatment)
    if cluster is not None and cluster not in source.columns:
        raise InputError(
            f"`errors` cluster:{cluster}: {cluster!r} is not a column of the data", "errors"
        )
    reading = _Reading(model, formula, cluster, overlap)
    restartable = source.batches

    def batches(wanted: list[str], forced: dict[str, str]) -> Any:
        reading.start()  # (again, when a column's type changed partway: from the top)
        return restartable(wanted, forced)

    source.batches = batches
    passes, ranges = None, None
    try:
        with one_blas_thread():
            design = plain_design(source, *plain, progress or (lambda rows: None),
                                  sink=reading.sink, extra=(cluster,) if cluster else (),
                                  factor=False)  # fmt: skip
            reading.finish()
        scratch, codes_scratch, first, seen = (reading.scratch, reading.codes, reading.first,
                                               reading.seen)  # fmt: skip
        table = reading.table
        if design.used == 0:
            raise InputError("`data`: no row has a value in every column the formula uses", "data")
        names = design.names
        j = find_treatment(treatment, names, design.groups)
        no_interaction(names[j], names)
        # the rank, from the first step's weighted design (every weight positive)
        first.widen(max(design.slots, default=0) + 1)
        kept = _kept(first.of(design.slots), design.used)
        notes: list[str] = []  # what the E-value carries, as the in-memory fit's does
        if j not in kept:
            raise InputError(f"`treatment` {names[j]!r} is a linear combination of the "
                             "covariates in these data: its coefficient is not "
                             "identified", "treatment")  # fmt: skip
        if len(kept) < len(names):
            left = ", ".join(n for i, n in enumerate(names) if i not in kept)
            notes.append(f"Left out as linear combinations of the columns before them: {left}.")
        if design.used - len(kept) < 1:
            raise InputError(f"`data`: the fit has {design.used - len(kept)} residual degrees "
                             "of freedom; need at least 1", "data")  # fmt: skip
        width = first.r.shape[1]
        slots = [design.slots[i] for i in kept]
        outcome = _Model(model, 0, slots, MAX_STEPS + 1)
        outcome.update(first.of(slots + [0]))  # the first step, folded while reading
        models = [outcome]
        t_slot = design.slots[j]
        others = [s for i, s in zip(kept, slots, strict=True) if i != j]
        low, high = seen["low"], seen["high"]
        treated = None
        if overlap and others and low[t_slot] == 0 and high[t_slot] == 1 \
                and any(low[s] != high[s] for s in others) \
                and seen["binary"][t_slot]:  # fmt: skip
            treated = _Model("logit", t_slot, others, MAX_STEPS, reported=False)
            treated.beta = _treatment_start(seen, others, t_slot)
            treated.taken = int(treated.beta is not None)
            models.append(treated)
        clusters = len(table)
        if cluster is not None and clusters < 2:
            raise InputError(
                f"`errors` cluster:{cluster}: need at least 2 clusters; got 1", "errors"
            )
        binary = bool(low[0] == 0 and high[0] == 1 and seen["binary"][0])
        if errors is None and model == "poisson" and binary:
            kind = "hc0"  # modified Poisson (Zou 2004): robust errors by default
        sums = kind != "classical"
        finite = bool(np.isfinite(low).all() and np.isfinite(high).all())
        passes = _Passes(scratch, width)
        if treated is not None:
            ranges = _Ranges(scratch, t_slot)

        def job(k: int, piece: np.ndarray, plan: list[tuple[_Model, str]],
                fitted: bool) -> tuple[list[Step], list[float] | None]:  # fmt: skip
            steps = []
            for m, mode in plan:
                final = mode == "qr" and sums and m is outcome
                code = None
                if cluster is not None and final:
                    code = codes_scratch.read(k, 1)[:, 0].astype(np.int64)
                # a Gram step's x'b over the piece's every column (no copy of the model's
                # columns: all finite); a QR pass's as a QR-only fit computes it
                gram = mode == "gram" and finite
                x, columns = (piece, m.slots) if gram else (piece[:, m.slots], None)
                steps.append(piece_step(x, piece[:, m.response], m.beta, m.kind, final, code,
                                        clusters, gram=mode == "gram", columns=columns,
                                        work=passes.work))  # fmt: skip
            return steps, (ranges.piece(k, piece, treated) if fitted else None)  # type: ignore[union-attr]

        with one_blas_thread():
            for _ in range(3 * MAX_STEPS + 3):  # each model's steps are counted by itself
                plan = [(m, m.mode()) for m in models if m.active]
                if not plan:
                    break
                # the overlap's fitted probabilities, in a pass made anyway for the outcome
                fitted = ranges is not None and not ranges.ready and not treated.active  # type: ignore[union-attr]
                results = passes.each(lambda k, p, a=plan, f=fitted: job(k, p, a, f))
                if fitted:
                    ranges.gather([res[1] for res in results])  # type: ignore[union-attr]
                for i, (m, mode) in enumerate(plan):
                    steps = [res[0][i] for res in results]
                    if mode == "qr":
                        m.steps = steps
                        m.update(_stacked(steps))
                    else:
                        m.update_gram(_total([s.gram for s in steps]),
                                      _total([s.score for s in steps]))  # fmt: skip
            if outcome.failed or not outcome.done or outcome.beta is None:
                raise InputError(f"`data`: the {model} fit did not converge: a covariate or "
                                 "the treatment predicts the outcome (nearly) exactly (perfect "
                                 "separation), so the estimate is not defined", "data")  # fmt: skip
            beta = outcome.beta
            cov, cov_type = _covariance(outcome, kind, design.used, len(kept), clusters)
            ov = None if ranges is None or treated is None else ranges.overlap(passes, treated)
    finally:
        if passes is not None:
            passes.close()
        if ranges is not None:
            ranges.column.close()
        reading.close()
    return Fit([names[i] for i in kept], beta, cov, design.used,
               seen["positive"] / design.used, cov_type, notes, ov, binary, clusters)  # fmt: skip


class _Reading:
    """What the reading pass keeps of each piece, taken in a second thread while the next
    piece is made (so the main thread only builds pieces): the piece itself in the scratch
    file, each column's range and whether it is 0/1, the rows' Gram matrix (the treatment
    model's first step) and the R factor of the first step's weighted rows (the rank, and
    the outcome model's first step). `start` begins again from nothing."""

    def __init__(self, model: str, formula: str, cluster: str | None, overlap: bool) -> None:
        self.model, self.formula, self.cluster, self.overlap = model, formula, cluster, overlap
        self.behind: Any = None
        self.scratch = self.codes = None

    def start(self) -> None:
        from ..common.overlap import WriteBehind
        from .rfactor import TriangularFactor

        self.close()
        self.scratch, self.codes = Scratch(), Scratch()
        self.first = TriangularFactor()
        self.table: dict[Any, int] = {}
        self.seen: dict[str, Any] = {"positive": 0, "low": np.zeros(0), "high": np.zeros(0),
                                     "binary": np.zeros(0, bool), "gram": np.zeros((0, 0)),
                                     "sums": np.zeros(0)}  # fmt: skip
        self.behind = WriteBehind(self._take)

    def sink(self, rows: np.ndarray, extras: dict[str, tuple[str, Any]]) -> None:
        """A piece's kept rows (outcome first; the pass lets them be kept) and extra cells."""
        y, formula, model = rows[:, 0], self.formula, self.model
        if model == "logit" and ((y < 0) | (y > 1)).any():
            raise InputError(f"`formula` {formula!r} could not be fitted (logit): endog must "
                             "be in the unit interval.", "formula")  # fmt: skip
        if model == "poisson" and (y < 0).any():
            raise InputError(f"`formula` {formula!r} could not be fitted (poisson): the "
                             "outcome must not be negative", "formula")  # fmt: skip
        if self.cluster is not None:
            codes = _cluster_codes(*extras[self.cluster], self.table)
            if (codes < 0).any():
                raise InputError(f"`errors` cluster:{self.cluster}: the column has missing "
                                 "values in rows the fit uses", "errors")  # fmt: skip
            self.codes.add(codes[:, None].astype(float))  # type: ignore[union-attr]
        self.behind.put(rows)

    def _take(self, rows: np.ndarray) -> None:
        """(In the second thread, a piece at a time, in order.)"""
        seen, y = self.seen, rows[:, 0]
        self.scratch.add(rows)  # type: ignore[union-attr]
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
        self.behind.close()
        self.scratch.done()  # type: ignore[union-attr]
        self.codes.done()  # type: ignore[union-attr]

    def close(self) -> None:
        if self.behind is not None:
            behind, self.behind = self.behind, None
            try:
                behind.close()
            except Exception:  # noqa: BLE001, S110 - the error that stopped the pass is raised
                pass
        for held in (self.scratch, self.codes):
            if held is not None:
                held.close()


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


def _treatment_start(seen: dict[str, Any], others: list[int], t_slot: int) -> np.ndarray | None:
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


def _stacked(steps: list[Step]) -> np.ndarray:
    """The R factor of all pieces from the pieces' own R factors."""
    from .rfactor import fold

    r = np.zeros((0, steps[0].r.shape[1]))
    return fold(r, np.vstack([s.r for s in steps]))


def _covariance(m: _Model, kind: str, n: int, k: int, clusters: int) -> tuple[np.ndarray, str]:
    """The coefficients' covariance and statsmodels' name for it."""
    from scipy.linalg import solve_triangular

    r = m.r[:k, :k]
    inverse = solve_triangular(r, np.eye(k))
    bread = inverse @ inverse.T
    if kind == "classical":
        return bread, "nonrobust"
    if kind == "hc0":
        meat = _total([s.meat for s in m.steps])
        return bread @ meat @ bread, "HC0"
    scores = _total([s.scores for s in m.steps])
    meat = scores.T @ scores
    scale = clusters / (clusters - 1) * (n - 1) / (n - k) if clusters > 1 else 1.0
    return scale * bread @ meat @ bread, "cluster"


def _total(parts: list[np.ndarray | None]) -> np.ndarray:
    """The pieces' sums added in order (each piece computed them: `sums` was on)."""
    total = np.zeros(0)
    for i, part in enumerate(parts):
        if part is None:
            raise AssertionError("a piece's step was taken without its sums")
        total = part if i == 0 else total + part
    return total


class _Ranges:
    """`models.overlap` from the treatment model: its fitted probabilities' range in each
    group, from one pass over the pieces (made for the outcome's fit when it needs one more;
    the probabilities wait in a file of their own), and the share outside their common
    support from the probabilities alone."""

    def __init__(self, scratch: Scratch, t_slot: int) -> None:
        self.column = PieceColumn(scratch)
        self.t_slot = t_slot
        self.parts = np.zeros((0, 4))
        self.ready = False

    def piece(self, k: int, piece: np.ndarray, m: _Model) -> list[float]:
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

    def overlap(self, passes: _Passes, m: _Model) -> dict[str, Any]:
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


# --------------------------------------------------------------------------- the E-value
def evalue_one_pass(data: Any, formula: str, treatment: str, model: str, *,
                    contrast: float = 1.0, alpha: float = 0.05, outcome: str | None = None,
                    errors: str | None = None, progress: Any = None) -> Any:  # fmt: skip
    """The E-value of `treatment` in a logistic or Poisson fit of `formula` on `data`, fitted
    in passes over pieces (`glm_one_pass`): the result `models.evalue_from_data` gives from
    statsmodels' fit (numbers to 1e-8, the same words), in memory flat in the rows."""
    from statistics import NormalDist

    from .errors import WORDS
    from .models import evalue_of_fit, model_kind_scale

    fit = glm_one_pass(data, formula, treatment, model, errors=errors, progress=progress)
    from .design import find_treatment

    j = find_treatment(treatment, fit.names, {})
    scale = model_kind_scale(model)
    b = float(fit.params[j])
    se = float(np.sqrt(fit.cov[j, j]))
    level = 1 - alpha / 2  # (NormalDist: scipy.special's ndtri to 1e-15, MEASURED)
    z = NormalDist().inv_cdf(level) if level < 1 else float("inf")
    ci = np.array([b - z * se, b + z * se])
    code = {"nonrobust": "classical", "HC0": "hc0"}.get(fit.cov_type, fit.cov_type)
    words = WORDS.get(code, f"cluster-robust standard errors ({fit.clusters:,} clusters)")
    return evalue_of_fit(model, scale, b, ci, treatment=treatment, n=fit.n, share=fit.share,
                         binary=fit.binary, errors=(code, words), contrast=contrast,
                         alpha=alpha, outcome=outcome, overlap=fit.overlap,
                         notes=fit.notes)  # fmt: skip
