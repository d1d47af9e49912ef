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
from .irls import Scratch, Step, piece_step, working

#: The models this route fits (their links are canonical: IRLS is Newton's method).
MODELS = ("logit", "poisson")
#: The error types it computes from per-piece sums. statsmodels computes every HC name of a
#: likelihood fit as the HC0 sandwich, so hc1-hc3 are refused for these fits (as the in-memory
#: route does) rather than shown under a name they do not have.
ERRORS = ("classical", "hc0", "cluster")
TOL = 1e-11
MAX_STEPS = 60


def _each_piece(scratch: Scratch, width: int, job: Any) -> list[Any]:
    """`job(k, piece)` over every piece, two at a time (numpy and LAPACK release the GIL)."""
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=2) as pool:
        return list(pool.map(lambda k: job(k, scratch.read(k, width)), range(len(scratch.pieces))))


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
    what the last pass gave (at the coefficients before the last, tiny, step)."""

    def __init__(self, kind: str, response: int, slots: list[int]) -> None:
        self.kind, self.response, self.slots = kind, response, slots
        self.beta: np.ndarray | None = None
        self.steps: list[Step] = []
        self.r = np.zeros((0, 0))
        self.done = self.failed = False

    def update(self, r: np.ndarray) -> None:
        new = _solve(r)
        if not np.isfinite(new).all():
            self.failed = self.done = True
            return
        if self.beta is not None:
            change = float(np.max(np.abs(new - self.beta), initial=0.0))
            self.done = change <= TOL * max(1.0, float(np.max(np.abs(new), initial=0.0)))
        self.r, self.beta = r, new


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
    from .rfactor import TriangularFactor, one_blas_thread, plain_design, plain_terms

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
    scratch, codes_scratch = Scratch(), Scratch()
    first = TriangularFactor()
    table: dict[Any, int] = {}
    seen: dict[str, Any] = {"positive": 0, "low": np.zeros(0), "high": np.zeros(0),
                            "binary": np.zeros(0, bool)}  # fmt: skip

    def sink(rows: np.ndarray, extras: dict[str, tuple[str, Any]]) -> None:
        y = rows[:, 0]
        if model == "logit" and ((y < 0) | (y > 1)).any():
            raise InputError(f"`formula` {formula!r} could not be fitted (logit): endog must "
                             "be in the unit interval.", "formula")  # fmt: skip
        if model == "poisson" and (y < 0).any():
            raise InputError(f"`formula` {formula!r} could not be fitted (poisson): the "
                             "outcome must not be negative", "formula")  # fmt: skip
        scratch.add(rows)
        seen["positive"] += int(np.count_nonzero(y > 0))
        if rows.shape[0]:
            _widen_range(seen, rows.min(axis=0), rows.max(axis=0))
            zero_one = ((rows == 0) | (rows == 1)).all(axis=0)
            old = seen["binary"]
            both = min(old.size, zero_one.size)
            merged = zero_one.copy() if zero_one.size >= old.size else old.copy()
            merged[:both] = old[:both] & zero_one[:both]
            seen["binary"] = merged
        if cluster is not None:
            codes = _cluster_codes(*extras[cluster], table)
            if (codes < 0).any():
                raise InputError(f"`errors` cluster:{cluster}: the column has missing values in "
                                 "rows the fit uses", "errors")  # fmt: skip
            codes_scratch.add(codes[:, None].astype(float))
        z, root, _ = working(rows[:, 1:], y, None, model)
        weighted = np.multiply(rows, root[:, None], order="F")
        np.multiply(z, root, out=weighted[:, 0])  # z in the outcome's slot 0
        first.add(weighted)

    try:
        with one_blas_thread():
            design = plain_design(source, *plain, progress or (lambda rows: None), sink=sink,
                                  extra=(cluster,) if cluster else (), factor=False)  # fmt: skip
        scratch.done()
        codes_scratch.done()
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
        outcome = _Model(model, 0, slots)
        outcome.update(first.of(slots + [0]))  # the first step, folded while reading
        models = [outcome]
        t_slot = design.slots[j]
        others = [s for i, s in zip(kept, slots, strict=True) if i != j]
        low, high = seen["low"], seen["high"]
        treated = None
        if overlap and others and low[t_slot] == 0 and high[t_slot] == 1 \
                and any(low[s] != high[s] for s in others) \
                and seen["binary"][t_slot]:  # fmt: skip
            treated = _Model("logit", t_slot, others)
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

        def job(k: int, piece: np.ndarray, active: list[_Model]) -> list[Step]:
            code = None
            if cluster is not None and sums:
                code = codes_scratch.read(k, 1)[:, 0].astype(np.int64)
            return [piece_step(piece[:, m.slots], piece[:, m.response], m.beta, m.kind,
                               sums and m is outcome, code, clusters) for m in active]  # fmt: skip

        with one_blas_thread():
            for _ in range(MAX_STEPS):
                active = [m for m in models if not m.done]
                if not active:
                    break
                results = _each_piece(scratch, width, lambda k, p, a=active: job(k, p, a))
                for i, m in enumerate(active):
                    m.steps = [res[i] for res in results]
                    m.update(_stacked(m.steps))
        if outcome.failed or not outcome.done or outcome.beta is None:
            raise InputError(f"`data`: the {model} fit did not converge: a covariate or the "
                             "treatment predicts the outcome (nearly) exactly (perfect "
                             "separation), so the estimate is not defined", "data")  # fmt: skip
        beta = outcome.beta
        cov, cov_type = _covariance(outcome, kind, design.used, len(kept), clusters)
        ov = None if treated is None else _overlap(scratch, width, treated, t_slot)
    finally:
        scratch.close()
        codes_scratch.close()
    return Fit([names[i] for i in kept], beta, cov, design.used,
               seen["positive"] / design.used, cov_type, notes, ov, binary, clusters)  # fmt: skip


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


def _overlap(scratch: Scratch, width: int, m: _Model, t_slot: int) -> dict[str, Any]:
    """`models.overlap` from the treatment model's passes: fitted probabilities' range in
    each group (one pass) and the share outside their common support (another)."""
    from scipy.special import expit

    def fitted(piece: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        t = piece[:, t_slot]
        if m.failed or not m.done:  # separation: the treatment is its own prediction
            return np.where(t == 1, 1.0, 0.0), t
        return expit(piece[:, m.slots] @ m.beta), t

    def ranges(k: int, piece: np.ndarray) -> list[float]:
        p, t = fitted(piece)
        one, zero = p[t == 1], p[t == 0]
        return [one.min(initial=np.inf), one.max(initial=-np.inf),
                zero.min(initial=np.inf), zero.max(initial=-np.inf)]  # fmt: skip

    parts = np.array(_each_piece(scratch, width, ranges))
    t_lo, t_hi = float(parts[:, 0].min()), float(parts[:, 1].max())
    c_lo, c_hi = float(parts[:, 2].min()), float(parts[:, 3].max())
    low, high = max(t_lo, c_lo), min(t_hi, c_hi)

    def outside(k: int, piece: np.ndarray) -> tuple[int, int, float, float]:
        p, _ = fitted(piece)
        return (int(np.count_nonzero((p < low) | (p > high))), p.size,
                float(p.min(initial=np.inf)), float(p.max(initial=-np.inf)))  # fmt: skip

    counts = np.array(_each_piece(scratch, width, outside))
    share = float(counts[:, 0].sum() / counts[:, 1].sum())
    return {
        "treated": [t_lo, t_hi],
        "control": [c_lo, c_hi],
        "common_support": [float(low), float(high)],
        "share_outside": share,
        "poor": bool(share > 0.1 or counts[:, 2].min() < 0.01 or counts[:, 3].max() > 0.99),
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
    from scipy.special import ndtri

    from .errors import WORDS
    from .models import evalue_of_fit, model_kind_scale

    fit = glm_one_pass(data, formula, treatment, model, errors=errors, progress=progress)
    from .design import find_treatment

    j = find_treatment(treatment, fit.names, {})
    scale = model_kind_scale(model)
    b = float(fit.params[j])
    se = float(np.sqrt(fit.cov[j, j]))
    z = float(ndtri(1 - alpha / 2))
    ci = np.array([b - z * se, b + z * se])
    code = {"nonrobust": "classical", "HC0": "hc0"}.get(fit.cov_type, fit.cov_type)
    words = WORDS.get(code, f"cluster-robust standard errors ({fit.clusters:,} clusters)")
    return evalue_of_fit(model, scale, b, ci, treatment=treatment, n=fit.n, share=fit.share,
                         binary=fit.binary, errors=(code, words), contrast=contrast,
                         alpha=alpha, outcome=outcome, overlap=fit.overlap,
                         notes=fit.notes)  # fmt: skip
