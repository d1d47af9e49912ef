"""Logistic and Poisson regressions from data in passes over pieces, in flat memory.

Iteratively reweighted least squares (Newton's method for these canonical links): at the
coefficients b, each row has the mean mu (expit or exp of x'b), the weight w (mu (1 - mu), or
mu) and the working response z = x'b + (y - mu) / w; the next b is the weighted least squares
fit of z on x, found as in the OLS route from the R factor of sqrt(w) [x, z] folded a piece at
a time (`rfactor.fold`). The first step starts from the usual means ((y + 1/2) / 2, or
y + 1/2) and is folded while the file is read; the pieces are kept in a scratch file, so each
later step reads back numbers, not text. Iterations stop when the step is below 1e-11 of the
coefficients (Newton's steps shrink quadratically, so the last R is that of the final b to
about 1e-20). Passes far from the end take the same Newton step from x' W x and the score
instead of the R factor (a third of the work); the last pass is by R factor, as before
(`Newton`).

Covariances from per-piece sums: classical (R'R)^-1; HC0 the sandwich B M B with B = (R'R)^-1
and M = sum x x' (y - mu)²; cluster the sandwich with M the sum over clusters of each cluster's
score sum s s' (s = sum x (y - mu)), times G / (G - 1) (n - 1) / (n - k), statsmodels' default.
statsmodels gives the HC0 sandwich under every HC name for these fits, so hc1-hc3 are refused
(as the in-memory route refuses them). Negative binomial and Cox fits, and formulas other than
columns and C(col) joined by '+', stay with the in-memory fit (`models.fit`).

`piece_step` is a pure function of a piece and the coefficients: a distributed engine can map
it over partitions and fold the R factors (or add the Gram matrices and scores) and add the
sums it returns.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..common.errors import InputError
from .glm_passes import Newton, Passes, Ranges, Reading, stacked, total, treatment_start
from .irls import Step, piece_step

#: The models this route fits (their links are canonical: IRLS is Newton's method).
MODELS = ("logit", "poisson")
#: The error types it computes from per-piece sums. statsmodels computes every HC name of a
#: likelihood fit as the HC0 sandwich, so hc1-hc3 are refused for these fits (as the in-memory
#: route does) rather than shown under a name they do not have.
ERRORS = ("classical", "hc0", "cluster")
MAX_STEPS = 60


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
    from .fitting import constant_problem, outcome_name
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
    reading = Reading(model, formula, cluster, overlap)
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
        lowest, highest = float(seen["low"][0]), float(seen["high"][0])
        problem = constant_problem(model, outcome_name(formula), lowest, highest)
        if problem is not None:  # (rather than a fit that cannot converge)
            raise InputError(problem, "formula")
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
        outcome = Newton(model, 0, slots, MAX_STEPS + 1)
        outcome.update(first.of(slots + [0]))  # the first step, folded while reading
        models = [outcome]
        t_slot = design.slots[j]
        others = [s for i, s in zip(kept, slots, strict=True) if i != j]
        low, high = seen["low"], seen["high"]
        treated = None
        if overlap and others and low[t_slot] == 0 and high[t_slot] == 1 \
                and any(low[s] != high[s] for s in others) \
                and seen["binary"][t_slot]:  # fmt: skip
            treated = Newton("logit", t_slot, others, MAX_STEPS, reported=False)
            treated.beta = treatment_start(seen, others, t_slot)
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
        passes = Passes(scratch, width)
        if treated is not None:
            ranges = Ranges(scratch, t_slot)

        def job(k: int, piece: np.ndarray, plan: list[tuple[Newton, str]],
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
            if fitted and ranges is not None and treated is not None:
                return steps, ranges.piece(k, piece, treated)
            return steps, None

        with one_blas_thread():
            for _ in range(3 * MAX_STEPS + 3):  # each model's steps are counted by itself
                plan = [(m, m.mode()) for m in models if m.active]
                if not plan:
                    break
                # the overlap's fitted probabilities, in a pass made anyway for the outcome
                fitted = (ranges is not None and treated is not None and not ranges.ready
                          and not treated.active)  # fmt: skip
                results = passes.each(lambda k, p, a=plan, f=fitted: job(k, p, a, f))
                if fitted and ranges is not None:
                    ranges.gather([res[1] for res in results])
                for i, (m, mode) in enumerate(plan):
                    steps = [res[0][i] for res in results]
                    if mode == "qr":
                        m.steps = steps
                        m.update(stacked(steps))
                    else:
                        m.update_gram(total([s.gram for s in steps]),
                                      total([s.score for s in steps]))  # fmt: skip
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


def _covariance(m: Newton, kind: str, n: int, k: int, clusters: int) -> tuple[np.ndarray, str]:
    """The coefficients' covariance and statsmodels' name for it."""
    from scipy.linalg import solve_triangular

    r = m.r[:k, :k]
    inverse = solve_triangular(r, np.eye(k))
    bread = inverse @ inverse.T
    if kind == "classical":
        return bread, "nonrobust"
    if kind == "hc0":
        meat = total([s.meat for s in m.steps])
        return bread @ meat @ bread, "HC0"
    scores = total([s.scores for s in m.steps])
    meat = scores.T @ scores
    scale = clusters / (clusters - 1) * (n - 1) / (n - k) if clusters > 1 else 1.0
    return scale * bread @ meat @ bread, "cluster"


# --------------------------------------------------------------------------- the E-value
def evalue_one_pass(data: Any, formula: str, treatment: str, model: str, *,
                    contrast: float = 1.0, alpha: float = 0.05, outcome: str | None = None,
                    errors: str | None = None, progress: Any = None) -> Any:  # fmt: skip
    """The E-value of `treatment` in a logistic or Poisson fit of `formula` on `data`, fitted
    in passes over pieces (`glm_one_pass`): the result `models.evalue_from_data` gives from
    statsmodels' fit (numbers to 1e-8, the same words), in memory flat in the rows."""
    from statistics import NormalDist

    from .errors import WORDS, clustered
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
    if code == "cluster":
        code, words = clustered(parse_errors(errors)[1], fit.clusters)
    else:
        words = WORDS[code]
    return evalue_of_fit(model, scale, b, ci, treatment=treatment, n=fit.n, share=fit.share,
                         binary=fit.binary, errors=(code, words), contrast=contrast,
                         alpha=alpha, outcome=outcome, overlap=fit.overlap,
                         notes=fit.notes, se=se)  # fmt: skip
