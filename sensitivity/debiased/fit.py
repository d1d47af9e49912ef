"""Cross-fitting with scikit-learn learners: data in, a frozen `DebiasedFit` out.

The family's data-facing module: pandas and scikit-learn are imported inside the functions
(scikit-learn is the optional extra ``sensitivity[ml]``), so `core` and `result` stay light.
"""

from __future__ import annotations

import time
import warnings
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from ..common.errors import InputError
from . import core
from .learners import (
    LEARNERS,
    check_learner,
    fresh_copy,
    learner_name,
    make_learner,
    one_thread,
    require_sklearn,
    seed_everything,
)
from .result import Benchmark, DebiasedFit

__all__ = ["LEARNERS", "debiased_fit", "fold_ids", "make_learner"]

TARGET_EFFECTS = ("partial-linear", "average")
#: Fewest rows a fold may hold (common practice: a learner needs some rows to fit at all).
MIN_FOLD_ROWS = 10


def _design(frame: Any, covariates: Sequence[str]) -> tuple[np.ndarray, dict[str, list[int]]]:
    """The covariate matrix (text and categorical columns as indicators, first level
    dropped) and, for each covariate name, the matrix columns it owns."""
    import pandas as pd
    from pandas.api.types import is_bool_dtype, is_numeric_dtype

    blocks, groups, at = [], {}, 0
    for name in covariates:
        col = frame[name]
        if is_numeric_dtype(col) and not is_bool_dtype(col):
            block = col.to_numpy(dtype=float)[:, None]
        else:
            if col.dtype.kind == "O":  # "12.5%", "1,5" or a stray word among numbers
                from ..adapters.textcells import refuse_numbers_held_as_text

                cells = [None if v is None or v != v else str(v) for v in col.tolist()]
                refuse_numbers_held_as_text(name, cells, where="covariates")
            block = pd.get_dummies(col.astype("category"), drop_first=True).to_numpy(float)
            if block.shape[1] == 0:
                raise InputError(f"`covariates`: column {name!r} has a single value", "covariates")
        groups[name] = list(range(at, at + block.shape[1]))
        at += block.shape[1]
        blocks.append(block)
    return np.hstack(blocks), groups


def _columns(
    data: Any, treatment: Any, outcome: Any, covariates: Any, formula: Any
) -> tuple[str, str, list[str]]:
    """Treatment, outcome and covariate names from a column list or a formula."""
    if formula is not None:
        from ..adapters.statsmodels import formula_columns

        if covariates is not None:
            raise InputError("give `covariates` or `formula`, not both", ("covariates", "formula"))
        left, right = formula_columns(formula)
        if len(left) != 1:
            raise InputError(
                f"`formula` must have one outcome on its left side; got {formula!r}", "formula"
            )
        if outcome is not None and outcome != left[0]:
            raise InputError(
                f"`outcome` {outcome!r} differs from the formula's {left[0]!r}", "outcome"
            )
        outcome = left[0]
        if treatment not in right:
            raise InputError(f"`treatment` {treatment!r} is not a term of the formula", "treatment")
        covariates = [c for c in dict.fromkeys(right) if c != treatment]
    if treatment is None:
        raise InputError("`treatment` is required", "treatment")
    if outcome is None:
        raise InputError("`outcome` is required", "outcome")
    if covariates is None:
        raise InputError("`covariates` (or a `formula`) is required", ("covariates", "formula"))
    if isinstance(covariates, str):
        covariates = [c.strip() for c in covariates.split(",") if c.strip()]
    covariates = list(dict.fromkeys(str(c) for c in covariates))
    if not covariates:
        raise InputError("`covariates` must name at least one column", "covariates")
    columns = [str(c) for c in data.columns]
    shown = ", ".join(columns[:30]) + (", ..." if len(columns) > 30 else "")
    for arg, names in (
        ("treatment", [treatment]),
        ("outcome", [outcome]),
        ("covariates", covariates),
    ):
        for name in names:
            if name not in columns:
                raise InputError(
                    f"`{arg}` {name!r} is not a column of the data; columns: {shown}", arg
                )
    for arg, name in (("treatment", treatment), ("outcome", outcome)):
        if name in covariates:
            raise InputError(f"`covariates` must not include the {arg} {name!r}", "covariates")
    if treatment == outcome:
        raise InputError(
            f"`treatment` and `outcome` must differ; both are {treatment!r}",
            ("treatment", "outcome"),
        )
    return str(treatment), str(outcome), covariates


def _benchmark_groups(benchmarks: Any, covariates: Sequence[str]) -> list[tuple[str, list[str]]]:
    """(label, covariate names) for each benchmark: a name, "a+b", or a sequence of names."""
    out = []
    for b in benchmarks or ():
        names = [p.strip() for p in b.split("+")] if isinstance(b, str) else [str(p) for p in b]
        for name in names:
            if name not in covariates:
                raise InputError(
                    f"`benchmark` {name!r} is not one of the covariates: {', '.join(covariates)}",
                    "benchmark",
                )
        if len(names) == len(covariates):
            raise InputError(
                f"`benchmark` {'+'.join(names)!r} takes away every covariate; leave at least one",
                "benchmark",
            )
        out.append(("+".join(names), names))
    return out


def _numeric(frame: Any, name: str, argument: str) -> np.ndarray:
    from pandas.api.types import is_bool_dtype, is_numeric_dtype

    col = frame[name]
    if not (is_numeric_dtype(col) or is_bool_dtype(col)):
        raise InputError(f"`{argument}` column {name!r} must be numeric; got {col.dtype}", argument)
    return col.to_numpy(dtype=float)


# --------------------------------------------------------------------------- folds
def fold_ids(n: int, folds: int, seed: int | None, strata: np.ndarray | None = None) -> np.ndarray:
    """Each row's fold (0..folds-1): a seeded random split, stratified on `strata` if given."""
    if folds == 1:
        return np.zeros(n, int)
    rng = np.random.default_rng(seed)
    out = np.empty(n, int)
    groups = [np.arange(n)] if strata is None else [np.flatnonzero(strata == v) for v in (0, 1)]
    offset = 0
    for rows in groups:
        order = rows[rng.permutation(rows.size)]
        out[order] = (np.arange(rows.size) + offset) % folds
        offset += rows.size
    return out


def _crossfit(
    x: np.ndarray,
    target: np.ndarray,
    learner: Any,
    ids: np.ndarray,
    folds: int,
    kind: str,
    subset: np.ndarray | None,
    tick: Callable[[], None],
    caught: list,
) -> np.ndarray:
    """Out-of-fold predictions for every row (in-sample when folds is 1); a learner is fit
    on the training rows of `subset` (all rows if None)."""
    pred = np.empty(x.shape[0])
    for k in range(folds):
        test = ids == k
        train = ~test if folds > 1 else np.ones_like(test)
        if subset is not None:
            train = train & subset
        model = fresh_copy(learner)
        with warnings.catch_warnings(record=True) as seen, one_thread(int(train.sum())):
            warnings.simplefilter("always")
            model.fit(x[train], target[train])
            if kind == "regressor":
                pred[test] = np.asarray(model.predict(x[test]), float).ravel()
            else:
                proba = np.asarray(model.predict_proba(x[test]), float)
                classes = list(getattr(model, "classes_", [0, 1]))
                pred[test] = proba[:, classes.index(1)] if 1 in classes else proba[:, -1]
        caught.extend(
            str(w.message).split("\n")[0]
            for w in seen
            if not issubclass(w.category, (FutureWarning, DeprecationWarning))
        )
        tick()
    return pred


# --------------------------------------------------------------------------- entry point
def debiased_fit(
    data: Any,
    treatment: str | None = None,
    outcome: str | None = None,
    covariates: Sequence[str] | str | None = None,
    *,
    formula: str | None = None,
    target_effect: str = "partial-linear",
    learner: str = "boosting",
    outcome_learner: Any = None,
    treatment_learner: Any = None,
    folds: int = 5,
    seed: int | None = 0,
    benchmarks: Sequence[str | Sequence[str]] = (),
    trim: float = 0.01,
    progress: bool | Callable[[str], None] = False,
) -> DebiasedFit:
    """Cross-fit the nuisances of a debiased-ML estimate and keep what the bounds need.

    Parameters
    ----------
    data : DataFrame or path
        The data (a pandas DataFrame, or a CSV, TSV, Excel or Parquet file).
    treatment, outcome : str
        Column names.
    covariates : sequence of str or "x1,x2,..."
        The observed covariates (text or categorical columns become indicators). Or give
        `formula` ("y ~ d + x1 + x2"): the outcome is its left side, the covariates the
        right side's other columns.
    target_effect : {"partial-linear", "average"}
        The partially linear model's coefficient (any treatment), or the average effect of
        a binary (0/1) treatment.
    learner : {"linear", "lasso", "forest", "boosting"}
        The named learners for both nuisances (see `make_learner`).
    outcome_learner, treatment_learner : scikit-learn estimators, optional
        Your own: a regressor for the outcome (and, in the partially linear model, the
        treatment) and a classifier (with predict_proba) for the propensity.
    folds : int, default 5
        K-fold cross-fitting; 1 fits and predicts on all rows (no cross-fitting).
    seed : int, default 0
        Seeds the folds and every learner that takes a random_state: equal seeds give equal
        bits.
    benchmarks : sequence
        Covariates (a name, "a+b", or a list of names for a group) whose strengths are
        measured by refitting the nuisances without them.
    trim : float, default 0.01
        Propensities are clipped to [trim, 1 - trim] (average effect).
    progress : bool or callable
        True prints progress to stderr; a callable receives each progress line.

    Returns
    -------
    DebiasedFit
        Call ``.bounds(...)`` for any strengths without refitting.
    """
    from ..common.checks import OPEN_UNIT, require, require_choice

    require_sklearn()
    require_choice(target_effect, "target_effect", TARGET_EFFECTS)
    if isinstance(data, (str, bytes)) or hasattr(data, "__fspath__"):
        from ..adapters.files import read_table

        data = read_table(data)
    if not hasattr(data, "columns"):
        raise InputError(
            f"`data` must be a pandas DataFrame or a file path; got {type(data).__name__}", "data"
        )
    if isinstance(folds, bool) or not isinstance(folds, (int, np.integer)) or folds < 1:
        raise InputError(f"`folds` must be a whole number of at least 1; got {folds!r}", "folds")
    folds = int(folds)
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, (int, np.integer))):
        raise InputError(f"`seed` must be a whole number; got {seed!r}", "seed")
    if seed is not None and not 0 <= seed < 2**32:  # scikit-learn's random_state range
        raise InputError(f"`seed` must be a whole number from 0 to 2^32 - 1; got {seed}", "seed")
    trim = float(require(trim, "trim", OPEN_UNIT))
    if trim >= 0.5:
        raise InputError(f"`trim` must be below 0.5; got {trim:g}", "trim")
    treatment, outcome, covariates = _columns(data, treatment, outcome, covariates, formula)
    groups = _benchmark_groups(benchmarks, covariates)

    frame = data[[treatment, outcome, *covariates]]
    keep = ~frame.isna().any(axis=1).to_numpy()
    notes = []
    if not keep.all():
        notes.append(
            f"{int((~keep).sum())} of {len(frame)} rows had missing values in the treatment, "
            "outcome or covariates and were left out."
        )
        frame = frame[keep]
    n = len(frame)
    y = _numeric(frame, outcome, "outcome")
    d = _numeric(frame, treatment, "treatment")
    if n == 0:
        raise InputError(
            "`data` has no complete rows in the treatment, outcome and covariates", "data"
        )
    if np.all(d == d[0]):
        raise InputError(
            f"`treatment` {treatment!r} is constant (every row {d[0]:g}); it must vary", "treatment"
        )
    if np.all(y == y[0]):
        raise InputError(
            f"`outcome` {outcome!r} is constant (every row {y[0]:g}); it must vary", "outcome"
        )
    if target_effect == "average":
        values = np.unique(d)
        if not np.array_equal(values, [0.0, 1.0]):
            shown = ", ".join(f"{v:g}" for v in values[:5])
            raise InputError(
                f"`treatment` {treatment!r} must be coded 0/1 for the average effect; got "
                f"values {shown}{', ...' if values.size > 5 else ''}",
                "treatment",
            )
    if n < MIN_FOLD_ROWS * folds:
        raise InputError(
            f"`folds` {folds} leaves {n // folds} rows per fold ({n} rows); each fold needs at "
            f"least {MIN_FOLD_ROWS}",
            "folds",
        )
    if target_effect == "average":
        for arm, label in ((1.0, "treated"), (0.0, "untreated")):
            count = int(np.sum(d == arm))
            if count < 2 * max(folds, 1):
                raise InputError(
                    f"`treatment` {treatment!r} has {count} {label} rows; with `folds` {folds} "
                    f"each fold needs at least 2 (at least {2 * folds} in all)",
                    ("treatment", "folds"),
                )

    x, owned = _design(frame, covariates)
    if outcome_learner is not None:
        check_learner(outcome_learner, "outcome_learner", "regressor")
    if treatment_learner is not None:
        kind = "regressor" if target_effect == "partial-linear" else "classifier"
        check_learner(treatment_learner, "treatment_learner", kind)
    reg = (
        outcome_learner if outcome_learner is not None else make_learner(learner, "regressor", seed)
    )
    if target_effect == "partial-linear":
        clf = None
        if treatment_learner is not None:
            reg_d = treatment_learner
        else:
            reg_d = reg if outcome_learner is None else make_learner(learner, "regressor", seed)
    else:
        reg_d = None
        clf = (
            treatment_learner
            if treatment_learner is not None
            else make_learner(learner, "classifier", seed)
        )
    for model in (reg, reg_d, clf):
        if model is not None and seed is not None and hasattr(model, "get_params"):
            seed_everything(model, seed)
    names = (
        learner
        if outcome_learner is None and treatment_learner is None
        else f"{learner_name(reg)} / {learner_name(reg_d if clf is None else clf)}"
    )

    ids = fold_ids(n, folds, seed, d if target_effect == "average" else None)
    per_fit = folds * (2 if target_effect == "partial-linear" else 3)
    total = per_fit * (1 + len(groups))
    say = _reporter(progress)
    state = {"done": 0, "start": time.perf_counter()}

    def tick() -> None:
        state["done"] += 1
        if say is not None:
            took = time.perf_counter() - state["start"]
            say(f"fitting learners: {state['done']} of {total} fits ({took:.1f} s)")

    caught: list[str] = []
    fitter = _Fitter(y, d, target_effect, reg, reg_d, clf, ids, folds, trim, tick, caught)
    main, predictions, trimmed = fitter(x)
    predictions["fold"] = ids
    if target_effect == "average":
        pi = predictions["propensity"]
        alpha_s = d / pi - (1 - d) / (1 - pi)
        plug_in = float(np.mean(alpha_s * alpha_s))
        if main.nu2 < 0.5 * plug_in:
            notes.append(
                f"The Riesz representer's variance from the debiased moment ({main.nu2:.4g}) is "
                f"less than half its plug-in value ({plug_in:.4g}): the propensities may be "
                "poorly calibrated, and then S and the bounds are too small; compare another "
                "`learner`."
            )
    if trimmed:
        notes.append(
            f"{trimmed} of {n} propensities lay outside [{trim:g}, {1 - trim:g}] and were "
            "clipped to it (trim)."
        )
    found = []
    for label, names_in in groups:
        cols = sorted(c for name in names_in for c in owned[name])
        keep_cols = np.setdiff1d(np.arange(x.shape[1]), cols)
        without, _, _ = fitter(x[:, keep_cols])
        gain = core.benchmark_gain(main, without)
        found.append(
            Benchmark(label, tuple(names_in), gain.cy2, gain.cd2, gain.rho, gain.estimate_without)
        )
    if caught:
        first = list(dict.fromkeys(caught))
        notes.append(
            f"The learners raised {len(caught)} warning(s) while fitting, e.g. {first[0][:160]!r}."
        )
    return DebiasedFit(
        moments=main,
        target_effect=target_effect,
        treatment=treatment,
        outcome=outcome,
        covariates=tuple(covariates),
        learner=names,
        folds=folds,
        seed=seed,
        benchmarks=tuple(found),
        predictions=predictions,
        notes=tuple(notes),
    )


class _Fitter:
    """One cross-fit of every nuisance on a covariate matrix, with the same folds and seeds."""

    def __init__(self, y, d, effect, reg, reg_d, clf, ids, folds, trim, tick, caught):
        self.args = (y, d, effect, reg, reg_d, clf, ids, folds, trim, tick, caught)

    def __call__(self, x: np.ndarray) -> tuple[core.Moments, dict[str, np.ndarray], int]:
        y, d, effect, reg, reg_d, clf, ids, folds, trim, tick, caught = self.args
        if effect == "partial-linear":
            y_hat = _crossfit(x, y, reg, ids, folds, "regressor", None, tick, caught)
            d_hat = _crossfit(x, d, reg_d, ids, folds, "regressor", None, tick, caught)
            scores = core.partial_linear_scores(y, d, y_hat, d_hat)
            return core.moments(scores), {"outcome": y_hat, "treatment": d_hat}, 0
        treated = d == 1
        mu1 = _crossfit(x, y, reg, ids, folds, "regressor", treated, tick, caught)
        mu0 = _crossfit(x, y, reg, ids, folds, "regressor", ~treated, tick, caught)
        pi = _crossfit(x, d, clf, ids, folds, "classifier", None, tick, caught)
        trimmed = int(np.sum((pi < trim) | (pi > 1 - trim)))
        pi = np.clip(pi, trim, 1 - trim)
        scores = core.average_effect_scores(y, d, mu0, mu1, pi)
        preds = {"outcome_treated": mu1, "outcome_control": mu0, "propensity": pi}
        try:
            return core.moments(scores), preds, trimmed
        except InputError as err:
            if err.argument != "learner":  # the Riesz variance, not an outcome predicted exactly
                raise
            raise InputError(
                f"{str(err).split(':')[0]}: {trimmed} propensities reached the trim limits "
                f"[{trim:g}, {1 - trim:g}]; raise `trim`, or choose another `learner` (the "
                "treatment may be too predictable from the covariates: poor overlap)",
                ("trim", "learner"),
            ) from None


def _reporter(progress: bool | Callable[[str], None]) -> Callable[[str], None] | None:
    if callable(progress):
        return progress
    if progress:
        import sys

        def say(line: str) -> None:
            print(line, file=sys.stderr, flush=True)

        return say
    return None
