"""Which standard errors an interval comes from: chosen for a fit we make, read from one we get.

`--errors classical|hc0|hc1|hc2|hc3|cluster:COL` for the data route. statsmodels gives HC0-HC3
for OLS; for its likelihood fits (logit, Poisson, negative binomial) it computes every `HC*`
name as the HC0 sandwich, so hc1-hc3 are refused there rather than shown under a name they
do not have. A Cox fit (statsmodels PHReg) takes hc0 (the robust sandwich, one observation a
group) or cluster. A Poisson fit of a 0/1 outcome (the "modified Poisson" risk ratio, Zou 2004)
gets hc0 by default: its model-based errors do not fit a binary outcome.

Reference: Zou G (2004). A modified Poisson regression approach to prospective studies with
binary data. American Journal of Epidemiology 159:702-706.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..common.errors import InputError

CHOICES = ("classical", "hc0", "hc1", "hc2", "hc3")
WORDS = {
    "classical": "model-based (classical) standard errors",
    "hc0": "heteroskedasticity-robust (HC0 sandwich) standard errors",
    "hc1": "heteroskedasticity-robust (HC1) standard errors",
    "hc2": "heteroskedasticity-robust (HC2) standard errors",
    "hc3": "heteroskedasticity-robust (HC3) standard errors",
}


def parse_errors(errors: object) -> tuple[str, str | None]:
    """("classical"|"hc0".."hc3"|"cluster", cluster column or None) from `errors` text."""
    if not isinstance(errors, str):
        raise InputError(
            f"`errors` must be text such as 'hc0' or 'cluster:site'; got {errors!r}", "errors"
        )
    text = errors.strip()
    low = text.lower()
    if low in CHOICES:
        return low, None
    if low.startswith("cluster:") and text.split(":", 1)[1].strip():
        return "cluster", text.split(":", 1)[1].strip()
    raise InputError(
        f"`errors` must be classical, hc0, hc1, hc2, hc3 or cluster:COLUMN; got {errors!r}",
        "errors",
    )


def is_binary(y: Any) -> bool:
    """True for an outcome whose values are all 0 or 1 (and both occur)."""
    v = np.unique(np.asarray(y, float))
    return v.size == 2 and bool(np.isin(v, [0.0, 1.0]).all())


def default_errors(model: str, outcome: Any) -> str:
    """hc0 for a Poisson fit of a 0/1 outcome (modified Poisson); classical otherwise."""
    return "hc0" if model == "poisson" and is_binary(outcome) else "classical"


def check_errors(model: str, kind: str) -> None:
    """Refuse an error type the fit does not compute under that name."""
    if kind in ("hc1", "hc2", "hc3") and model != "ols":
        raise InputError(
            f"`errors` {kind} is computed for OLS fits only; for a {model} fit statsmodels "
            "gives the HC0 sandwich under every HC name, so use hc0 (or cluster:COLUMN)",
            "errors",
        )


def robust_refit(results: Any, model: str, kind: str, groups: Any = None) -> Any:
    """The same fit with the chosen covariance (statsmodels), from the first fit's estimate."""
    m = results.model
    if model == "cox":
        n = len(np.asarray(m.endog))
        return m.fit(groups=np.arange(n) if groups is None else np.asarray(groups))
    options: dict[str, Any] = {"cov_type": "cluster" if kind == "cluster" else kind.upper()}
    if kind == "cluster":
        options["cov_kwds"] = {"groups": np.asarray(groups)}
    if model == "ols":
        return m.fit(**options)
    extra = {"maxiter": 200} if model == "negbin" else {}
    return m.fit(disp=0, start_params=np.asarray(results.params), **extra, **options)


def cluster_groups(data: Any, results: Any, column: str) -> np.ndarray:
    """The cluster labels of the rows the fit used (rows with missing values left out)."""
    if column not in data.columns:
        raise InputError(
            f"`errors` cluster:{column}: {column!r} is not a column of the data", "errors"
        )
    labels = getattr(getattr(results.model, "data", None), "row_labels", None)
    values = data[column] if labels is None else data.loc[labels, column]
    if values.isna().any():
        raise InputError(
            f"`errors` cluster:{column}: the column has missing values in rows the fit uses",
            "errors",
        )
    codes = np.unique(values.astype(str).to_numpy(), return_inverse=True)[1]
    if np.unique(codes).size < 2:
        raise InputError(f"`errors` cluster:{column}: need at least 2 clusters; got 1", "errors")
    return codes


def clustered(column: str | None, count: int | None) -> tuple[str, str]:
    """(code, words) for cluster-robust errors: the code is the `errors` value that asks for
    them (cluster:COLUMN) where the column is known, else "cluster" (a fit made elsewhere,
    whose group labels carry no name)."""
    by = f" by {column!r}" if column else ""
    count_text = f" ({count:,} clusters)" if count is not None else ""
    code = f"cluster:{column}" if column else "cluster"
    return code, f"cluster-robust standard errors{by}{count_text}"


def used_by(results: Any, cluster: str | None = None) -> tuple[str, str]:
    """(code, words) for the standard errors a fitted model's interval comes from; `cluster`
    names the column a clustered fit made here was clustered by."""
    if type(results).__name__ == "CoxPHFitter" or hasattr(results, "baseline_hazard_"):
        column = getattr(results, "cluster_col", None)
        if column:
            code, words = clustered(column, None)
            return code, f"{words} (lifelines)"
        if getattr(results, "robust", False):
            return "hc0", "robust (sandwich) standard errors (lifelines, robust=True)"
        return "classical", WORDS["classical"] + " (lifelines)"
    if type(getattr(results, "model", None)).__name__ == "PHReg":
        groups = getattr(results.model, "groups", None)  # PHReg.fit(groups=...) sets it
        if groups is None:
            return "classical", WORDS["classical"]
        g = np.unique(np.asarray(groups)).size
        if g < len(np.asarray(results.model.endog)):
            return clustered(cluster, g)
        return "hc0", "robust (sandwich) standard errors"
    cov = str(getattr(results, "cov_type", "nonrobust"))
    if cov == "nonrobust":
        return "classical", WORDS["classical"]
    if cov.lower() in WORDS:
        return cov.lower(), WORDS[cov.lower()]
    if cov == "cluster":
        groups = getattr(results, "cov_kwds", {}).get("groups")
        return clustered(cluster, None if groups is None else np.unique(np.asarray(groups)).size)
    return cov.lower(), f"{cov} standard errors"
