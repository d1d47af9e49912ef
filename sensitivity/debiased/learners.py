"""The learners of the debiased family: the named defaults and the checks and copies of a
user's own scikit-learn estimators. scikit-learn (the optional extra ``sensitivity[ml]``) is
imported inside the functions.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..common.errors import InputError

LEARNERS = ("linear", "lasso", "forest", "boosting")
INSTALL = "the debiased family needs scikit-learn: pip install 'sensitivity[ml]'"


def require_sklearn() -> Any:
    try:
        import sklearn
    except ImportError:
        raise InputError(INSTALL) from None
    return sklearn


def make_learner(name: str, kind: str, seed: int | None = 0) -> Any:
    """A named default learner: `kind` "regressor" or "classifier".

    linear: least squares (logistic regression without penalty for a classifier); lasso:
    standardised L1 fits with the penalty chosen by 3-fold cross-validation; forest: 100
    trees, leaves of at least 5 rows (20 for a classifier); boosting: histogram gradient
    boosting with early stopping on a tenth of the training rows (a classifier: learning rate
    0.05, at most 15 leaves of at least 50 rows), each with `seed`. Classifiers are coarser
    because the propensity enters the Riesz representer as 1/pi.
    """
    sklearn = require_sklearn()
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    if name not in LEARNERS:
        raise InputError(f"`learner` must be one of {', '.join(LEARNERS)}; got {name!r}", "learner")
    reg = kind == "regressor"
    if name == "linear":
        from sklearn.linear_model import LinearRegression, LogisticRegression

        return LinearRegression() if reg else LogisticRegression(C=np.inf, max_iter=5000)
    if name == "lasso":
        from sklearn.linear_model import LassoCV, LogisticRegressionCV

        if reg:
            return make_pipeline(StandardScaler(), LassoCV(cv=3, random_state=seed))
        major, minor = (int(p) for p in sklearn.__version__.split(".")[:2])
        l1 = (
            {"l1_ratios": (1.0,)}
            if (major, minor) >= (1, 8)
            else {"penalty": "l1"}  # pragma: no cover - older scikit-learn
        )
        clf = LogisticRegressionCV(
            Cs=10, cv=3, solver="liblinear", scoring="neg_log_loss", random_state=seed, **l1
        )
        return make_pipeline(StandardScaler(), clf)
    if name == "forest":
        from sklearn.ensemble import RandomForestClassifier, RandomForestRegressor

        if reg:
            return RandomForestRegressor(
                n_estimators=100, min_samples_leaf=5, random_state=seed, n_jobs=1
            )
        # Propensities enter through 1/pi: larger leaves keep them calibrated (leaves of 5
        # rows gave propensities of 0.01 where the truth was near 0.15 in the demo data).
        return RandomForestClassifier(
            n_estimators=100, min_samples_leaf=20, random_state=seed, n_jobs=1
        )
    from sklearn.ensemble import HistGradientBoostingClassifier, HistGradientBoostingRegressor

    # Early stopping always (not only above 10,000 rows): without it small folds overfit and
    # the propensities run to 0 and 1; the classifier is also slower and coarser, for the
    # same reason.
    if reg:
        return HistGradientBoostingRegressor(early_stopping=True, random_state=seed)
    return HistGradientBoostingClassifier(
        early_stopping=True,
        learning_rate=0.05,
        max_leaf_nodes=15,
        min_samples_leaf=50,
        random_state=seed,
    )


def check_learner(learner: Any, argument: str, kind: str) -> None:
    need = ("fit", "predict") if kind == "regressor" else ("fit", "predict_proba")
    missing = [m for m in need if not callable(getattr(learner, m, None))]
    if missing:
        raise InputError(
            f"`{argument}` must be a scikit-learn style {kind} with "
            f"{' and '.join(need)} methods; {type(learner).__name__} lacks {', '.join(missing)}",
            argument,
        )


def fresh_copy(learner: Any) -> Any:
    """An unfitted copy (sklearn's clone where it works, else a deep copy)."""
    from sklearn.base import clone

    try:
        return clone(learner)
    except Exception:  # noqa: BLE001 - not a full estimator: copy it instead
        import copy

        return copy.deepcopy(learner)


# --------------------------------------------------------------------------- data
def one_thread(rows: int) -> Any:
    """Learners run on one thread. Measured on a shared two-core machine under load:
    histogram boosting on 80,000 rows took 2.4 s on one thread and 34 s on two (OpenMP
    threads wait for each other when the cores are busy); on 500 rows 0.18 s against 2.2 s.
    Cross-fitting is many fits, so one thread each loses little even on an idle machine."""
    from threadpoolctl import threadpool_limits

    return threadpool_limits(1)


def seed_everything(model: Any, seed: int) -> None:
    """Set every random_state parameter left at None (also inside pipelines) to `seed`, so
    equal seeds give equal bits; a random_state the user set is kept."""
    params = model.get_params(deep=True)
    fixed = {
        k: seed
        for k, v in params.items()
        if (k == "random_state" or k.endswith("__random_state")) and v is None
    }
    if fixed:
        model.set_params(**fixed)


def learner_name(model: Any) -> str:
    steps = getattr(model, "steps", None)
    return type(steps[-1][1] if steps else model).__name__
