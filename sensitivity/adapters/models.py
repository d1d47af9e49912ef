"""Fitted models into the right method: the E-value on the fit's own scale.

Logistic fits give an odds ratio, log-binomial fits a risk ratio, Poisson and negative
binomial fits a rate ratio, Cox fits a hazard ratio (statsmodels PHReg, or lifelines'
CoxPHFitter). The estimate and interval are exp(coefficient x contrast) and the fit's own
confidence limits; the outcome's event share in the model's data decides rare or common (the
15% rule, common practice) and the output says so. OLS fits go to the partial-R² route.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np

from ..common.errors import InputError, SensitivityWarning
from ..common.levels import level_text
from ..evalues.result import EValueResult
from .design import evalue_of_coefficient
from .errors import is_binary, parse_errors, used_by
from .fitting import KINDS, _converged, fit

SHOWN = {"logit": "logistic", "log-binomial": "log-binomial", "poisson": "Poisson",
         "negbin": "negative binomial", "cox": "Cox", "ols": "OLS"}  # fmt: skip


def model_kind_scale(kind: str) -> str:
    """The effect scale of a model kind: or, rr, hr (md for OLS)."""
    return {"logit": "or", "log-binomial": "rr", "poisson": "rr", "negbin": "rr",
            "cox": "hr", "ols": "md"}[kind]  # fmt: skip


def model_kind(results: Any) -> tuple[str, str]:
    """(model kind, effect scale) of a fitted model; InputError for one we do not route."""
    model = getattr(results, "model", None)
    name = type(model).__name__
    if type(results).__name__ == "CoxPHFitter" or hasattr(results, "baseline_hazard_"):
        return "cox", "hr"
    if name == "OLS":
        return "ols", "md"
    if name == "Logit":
        return "logit", "or"
    if name in ("Poisson", "GeneralizedPoisson"):
        return "poisson", "rr"
    if name in ("NegativeBinomial", "NegativeBinomialP"):
        return "negbin", "rr"
    if name == "PHReg":
        return "cox", "hr"
    if name == "GLM" and model is not None:
        family = type(model.family).__name__
        link = type(model.family.link).__name__
        if family == "Binomial" and link == "Logit":
            return "logit", "or"
        if family == "Binomial" and link == "Log":
            return "log-binomial", "rr"
        if family == "Poisson" and link == "Log":
            return "poisson", "rr"
        if family == "NegativeBinomial" and link == "Log":
            return "negbin", "rr"
        raise InputError(
            f"`results`: a GLM with family {family} and link {link} has no E-value route; "
            "use a logit or log link (binomial), or a log link (Poisson, negative binomial)",
            "results",
        )
    raise InputError(
        f"`results` must be a fitted OLS, logistic, log-binomial, Poisson, negative binomial "
        f"or Cox model; got {what_it_is(results)}",
        "results",
    )


def what_it_is(value: Any) -> str:
    """What was passed instead of a fitted model, in words a user can act on (a data frame,
    a model not yet fitted, a string: each said plainly, not "NoneType")."""
    kind = type(value)
    if value is None:
        return "None"
    if isinstance(value, str):
        return f"a string ({value[:40]!r})"
    if hasattr(value, "fit") and hasattr(value, "endog") and not hasattr(value, "params"):
        return f"an unfitted {kind.__name__} model (call .fit() and pass what it returns)"
    if kind.__module__.split(".")[0] in ("pandas", "polars", "pyarrow", "numpy"):
        return f"{kind.__module__.split('.')[0]} {kind.__name__} (data, not a fitted model)"
    model = getattr(value, "model", None)
    if model is not None:
        return f"a fit of a {type(model).__name__} model"
    if kind.__module__ == "builtins":
        return f"a {kind.__name__} ({repr(value)[:40]})"
    return f"{kind.__module__}.{kind.__name__}"


def _check_contrast(contrast: object) -> None:
    """A finite, non-zero contrast (exp(b x 0) = 1 whatever the fit: no answer at all)."""
    from ..common.checks import FINITE, require

    if require(contrast, "contrast", FINITE) == 0:
        raise InputError("`contrast` must not be 0; got 0", "contrast")


def _treatment_index(names: list[str], treatment: str) -> int:
    if treatment in names:
        return names.index(treatment)
    raise InputError(
        f"`treatment` {treatment!r} is not a coefficient of the model; coefficients: "
        + ", ".join(map(str, names)),
        "treatment",
    )


def overlap(treatment: np.ndarray, covariates: np.ndarray) -> dict[str, Any] | None:
    """Positivity for a binary treatment: fitted treatment probabilities in each group and
    the share of units outside their common support (None for a non-binary treatment)."""
    import statsmodels.api as sm

    t = np.asarray(treatment, float)
    if not np.isin(np.unique(t), [0.0, 1.0]).all() or np.unique(t).size != 2:
        return None
    x = np.asarray(covariates, float)
    if x.ndim == 1:
        x = x[:, None]
    if x.shape[1] == 0 or np.allclose(x, x[:1]):
        return None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            p = np.asarray(sm.Logit(t, x).fit(disp=0, maxiter=200).predict(x))
        except Exception:  # noqa: BLE001 - separation here is itself the finding
            p = np.where(t == 1, 1.0, 0.0)
    treated, control = p[t == 1], p[t == 0]
    low, high = max(treated.min(), control.min()), min(treated.max(), control.max())
    outside = float(np.mean((p < low) | (p > high)))
    return {
        "treated": [float(treated.min()), float(treated.max())],
        "control": [float(control.min()), float(control.max())],
        "common_support": [float(low), float(high)],
        "share_outside": outside,
        "poor": bool(outside > 0.1 or p.min() < 0.01 or p.max() > 0.99),
    }


def coefficient(b: float, se: float | None) -> dict[str, float | None]:
    """The model record's `coefficient` and `se`: the treatment's fitted coefficient on the
    fit's own scale (the log of the ratio for logit, Poisson, negative binomial and Cox;
    the outcome's units for OLS), per one unit of the treatment whatever the contrast, and
    its standard error (robust or clustered as the fit's errors are); None if not finite."""

    def finite(v: float | None) -> float | None:
        return float(v) if v is not None and np.isfinite(v) else None

    return {"coefficient": finite(b), "se": finite(se)}


def _warn(message: str, notes: list[str], depth: int = 3) -> None:
    """A SensitivityWarning to the caller of `evalue_from_model`, kept as a note as well
    (`depth`: the frames between here and that caller, plus one)."""
    warnings.warn(message, SensitivityWarning, stacklevel=depth)
    notes.append(message[0].upper() + message[1:] + ".")


def evalue_from_model(
    results: Any,
    treatment: str,
    *,
    contrast: float = 1.0,
    alpha: float = 0.05,
    outcome: str | None = None,
) -> EValueResult:
    """The E-value of `treatment`'s effect in a fitted logistic, log-binomial, Poisson,
    negative binomial or Cox model, on the fit's own scale.

    Parameters
    ----------
    results : fitted model
        statsmodels Logit, GLM (binomial with logit or log link, Poisson, negative binomial),
        Poisson, NegativeBinomial or PHReg results; or a fitted lifelines CoxPHFitter.
    treatment : str
        The treatment's coefficient name.
    contrast : float, default 1
        For a continuous treatment: the difference the ratio refers to (exp(b x contrast)).
    alpha : float, default 0.05
        The interval is the fit's own (1 - alpha) interval (robust or clustered if the fit's
        covariance is).
    outcome : {'rare', 'common'}, optional
        Overrides the frequency the model's event share decides.

    Examples
    --------
    >>> import numpy as np, statsmodels.api as sm
    >>> rng = np.random.default_rng(1)
    >>> t = rng.binomial(1, 0.5, 4000); y = rng.binomial(1, np.where(t == 1, 0.06, 0.04))
    >>> fit = sm.Logit(y, sm.add_constant(t.astype(float))).fit(disp=0)
    >>> res = evalue_from_model(fit, "x1")
    >>> res.scale, res.outcome, res.model["kind"]
    ('or', 'rare', 'logit')
    """
    _check_contrast(contrast)
    return _evalue_of_results(results, treatment, contrast=contrast, alpha=alpha,
                              outcome=outcome)  # fmt: skip


def _evalue_of_results(
    results: Any,
    treatment: str,
    *,
    contrast: float,
    alpha: float,
    outcome: str | None,
    cluster: str | None = None,
) -> EValueResult:
    """`evalue_from_model`; `cluster` names the column a fit made here was clustered by."""
    kind, scale = model_kind(results)
    if kind == "ols":
        raise InputError(
            "`results` is an OLS fit: use the partial-R² route (from_model)", "results"
        )
    if kind == "cox" and type(getattr(results, "model", None)).__name__ != "PHReg":
        return _lifelines(results, treatment, contrast=contrast, alpha=alpha, outcome=outcome)
    _converged(results)
    model = results.model
    names = list(model.exog_names)
    j = _treatment_index(names, treatment)
    b = float(np.asarray(results.params)[j])
    se = float(np.asarray(results.bse)[j])
    ci = np.asarray(results.conf_int(alpha=alpha))[j]
    y = np.asarray(model.endog, float)
    if kind == "cox":
        status = getattr(model, "status", None)
        events = np.asarray(status if status is not None else np.ones_like(y), float)
        share, n = float(events.mean()), len(y)
    elif kind in ("logit", "log-binomial"):
        share, n = float(np.mean(y > 0)), len(y)
    else:
        share, n = float(np.mean(y > 0)), len(y)
    code, words = used_by(results, cluster)
    exog = np.asarray(model.exog, float)
    others = [i for i in range(exog.shape[1]) if i != j]
    ov = overlap(exog[:, j], exog[:, others]) if others else None
    return evalue_of_fit(kind, scale, b, ci, treatment=treatment, n=n, share=share,
                         binary=is_binary(y), errors=(code, words), contrast=contrast,
                         alpha=alpha, outcome=outcome, overlap=ov, se=se)  # fmt: skip


def evalue_of_fit(
    kind: str,
    scale: str,
    b: float,
    ci: np.ndarray,
    *,
    treatment: str,
    n: int,
    share: float,
    binary: bool,
    errors: tuple[str, str],
    contrast: float,
    alpha: float,
    outcome: str | None,
    overlap: dict | None,
    notes: Sequence[str] = (),
    se: float | None = None,
) -> EValueResult:
    """The E-value of a log-scale coefficient `b` with its interval `ci`, from a fit made in
    memory (statsmodels) or in passes (`glm.evalue_one_pass`): the same notes, warnings and
    model record either way. `errors` is the code and the words of the fit's errors; `se`
    is b's standard error (the model record keeps b and se on the log scale)."""
    from dataclasses import replace

    code, words = errors
    notes = list(notes)
    notes.append(f"The {level_text(alpha=alpha)} interval is the fit's own, from its {words}.")
    if code == "classical" and kind == "poisson" and binary:
        _warn(
            f"a {SHOWN[kind]} fit of a 0/1 outcome with model-based errors: for a risk ratio "
            "from such a fit (modified Poisson, Zou 2004) robust errors are the usual choice; "
            "refit with cov_type='HC0' (or --errors hc0 on the data route)",
            notes,
            depth=4,
        )
    prevalence = share if outcome is None and scale in ("or", "hr") else None
    est = float(np.exp(b * contrast))
    interval: tuple[float, float] | None = None
    if np.isfinite(ci).all():
        lo, up = (float(v) for v in np.exp(np.sort(ci * contrast)))
        interval = (lo, up)
    else:
        _warn(
            f"the fit gives no finite standard error for {treatment!r} (the model's Hessian "
            "could not be inverted: a parameter at its boundary, such as a negative binomial "
            "dispersion near 0, or separation), so only the estimate's E-value is reported",
            notes,
            depth=4,
        )
    res = evalue_of_coefficient(b, contrast, scale, est, interval, outcome=outcome,
                                prevalence=prevalence, ci_level=1 - alpha)  # fmt: skip
    what = {"or": "odds ratio", "rr": "risk or rate ratio", "hr": "hazard ratio"}[scale]
    per = f" per {contrast:g} units" if contrast != 1 else ""
    notes.insert(
        0,
        f"From a fitted {SHOWN[kind]} model (n = {n:,}): {what} exp(b){per} = {est:.4g}; the "
        f"outcome occurs in {share:.1%} of the model's data.",
    )
    info = {"kind": kind, "n": n, "outcome_share": share, "treatment": treatment,
            "errors": code, **coefficient(b, se)}  # fmt: skip
    if overlap is not None and overlap["poor"]:
        _warn(
            f"poor overlap: {overlap['share_outside']:.1%} of units lie outside the common "
            "support of the fitted treatment probabilities; the sensitivity analysis assumes "
            "the adjusted estimate itself is sound",
            notes,
            depth=4,
        )
    return replace(res, notes=tuple(notes) + res.notes, model=info, overlap=overlap)


def _lifelines(fitter: Any, treatment: str, *, contrast: float, alpha: float,
               outcome: str | None) -> EValueResult:  # fmt: skip
    """A lifelines CoxPHFitter: its summary gives the coefficient and its interval."""
    from dataclasses import replace

    summary = fitter.summary
    if treatment not in summary.index:
        raise InputError(
            f"`treatment` {treatment!r} is not a coefficient of the model; coefficients: "
            + ", ".join(map(str, summary.index)),
            "treatment",
        )
    b = float(summary.loc[treatment, "coef"])
    se = float(summary.loc[treatment, "se(coef)"])
    from scipy.special import ndtri

    z = float(-ndtri(alpha / 2))
    events = np.asarray(fitter.event_observed, float)
    share = float(events.mean())
    est = float(np.exp(b * contrast))
    lo, up = sorted(float(np.exp((b + s * z * se) * contrast)) for s in (-1, 1))
    res = evalue_of_coefficient(b, contrast, "hr", est, (lo, up), outcome=outcome,
                                prevalence=None if outcome else share,
                                ci_level=1 - alpha)  # fmt: skip
    note = (
        f"From a fitted Cox model (lifelines, n = {len(events):,}): hazard ratio {est:.4g}; "
        f"the event occurs in {share:.1%} of the data."
    )
    code, words = used_by(fitter)
    errors = f"The {level_text(alpha=alpha)} interval is from the fit's {words}."
    info = {"kind": "cox", "n": len(events), "outcome_share": share, "treatment": treatment,
            "errors": code, **coefficient(b, se)}  # fmt: skip
    return replace(res, notes=(note, errors, *res.notes), model=info)


def evalue_from_data(
    data: Any,
    formula: str,
    treatment: str,
    model: str,
    *,
    event: str | None = None,
    contrast: float = 1.0,
    alpha: float = 0.05,
    outcome: str | None = None,
    errors: str | None = None,
) -> EValueResult:
    """Fit `model` on `data` (a DataFrame or a file) and give the E-value of `treatment`.

    ``ols`` gives the E-value of the coefficient through the standardized difference (the
    outcome's SD from the data; at alpha 0.05 the interval from se of VanderWeele & Ding 2017,
    at any other alpha the fit's own (1 - alpha) interval); the others as `evalue_from_model`.
    `errors` chooses the standard errors (classical, hc0, hc1, hc2, hc3 or cluster:COLUMN;
    hc1-hc3 for ols only; by default hc0 for a Poisson fit of a 0/1 outcome, classical
    otherwise); the notes and ``model["errors"]`` name them.
    """
    from dataclasses import replace

    from .design import check_names
    from .glm import evalue_one_pass, supports

    _check_contrast(contrast)
    if event is not None and model != "cox" and model in KINDS:
        raise InputError(f"`event` applies to model cox only; got model {model}", "event")
    if supports(formula, model, errors):  # logit and Poisson: fitted in passes over pieces
        return evalue_one_pass(data, formula, treatment, model, contrast=contrast, alpha=alpha,
                               outcome=outcome, errors=errors)  # fmt: skip

    if not hasattr(data, "columns"):
        from .files import read_table

        data = read_table(data, "data")
    check_names(data, formula, treatment)
    results = fit(data, formula, model, event, errors)
    cluster = None if errors is None else parse_errors(errors)[1]
    if model != "ols":
        return _evalue_of_results(results, treatment, contrast=contrast, alpha=alpha,
                                  outcome=outcome, cluster=cluster)  # fmt: skip
    names = list(results.model.exog_names)
    j = _treatment_index(names, treatment)
    sd = float(np.std(np.asarray(results.model.endog, float), ddof=1))
    b, se = float(np.asarray(results.params)[j]), float(np.asarray(results.bse)[j])
    if abs(alpha - 0.05) < 1e-12:  # 95%: the interval from se of VanderWeele & Ding (2017)
        res = evalue_of_coefficient(b, contrast, "md", b, se=se, sd=sd, contrast=contrast)
    else:  # the fit's own interval at the level asked for
        if 1 - alpha == 1:  # the level 1 - alpha rounds to 1
            raise InputError(f"`alpha` must be at least 1.2e-16; got {alpha:g}", "alpha")
        ci = tuple(float(v) for v in np.asarray(results.conf_int(alpha=alpha))[j])
        res = evalue_of_coefficient(b, contrast, "md", b, ci, sd=sd, contrast=contrast,
                                    ci_level=1 - alpha)  # fmt: skip
    code, words = used_by(results, cluster)
    info = {"kind": "ols", "n": int(results.nobs), "outcome_share": None, "treatment": treatment,
            "errors": code, **coefficient(b, se)}  # fmt: skip
    note = (
        f"From a fitted OLS model (n = {int(results.nobs):,}): coefficient {b:.4g} (se "
        f"{se:.3g}, from {words}); the outcome's SD in the data is {sd:.4g}."
    )
    return replace(res, notes=(note, *res.notes), model=info)


def ols_report_from_data(data: Any, formula: str, treatment: str, *, contrast: float = 1.0,
                         event: str | None = None, **options: Any) -> Any:  # fmt: skip
    """The partial-R² result of an OLS `formula` on `data` (a file or a DataFrame) with the
    coefficient's E-value beside it, as `evalue_from_data(..., "ols")` gives it with classical
    errors, from one pass over the data (`onepass.partial_r2_one_pass`): the report's data
    route fits once. Options are those of `partial_r2_from_data`."""
    from dataclasses import replace

    from .errors import WORDS
    from .onepass import partial_r2_one_pass

    if event is not None:
        raise InputError("`event` applies to model cox only; got model ols", "event")
    pr2 = partial_r2_one_pass(data, formula, treatment, contrast=contrast, **options)
    ev = pr2.evalue
    if ev is None or ev.sd is None or pr2.n is None:  # a fit from data has all three
        raise AssertionError("the one-pass OLS fit gave no E-value")
    b, se, sd, n = float(pr2.estimate), float(pr2.se), float(ev.sd), int(pr2.n)
    info = {"kind": "ols", "n": n, "outcome_share": None, "treatment": treatment,
            "errors": "classical", **coefficient(b, se)}  # fmt: skip
    note = (
        f"From a fitted OLS model (n = {n:,}): coefficient {b:.4g} (se "
        f"{se:.3g}, from {WORDS['classical']}); the outcome's SD in the data is {sd:.4g}."
    )
    return replace(pr2, evalue=replace(ev, notes=(note, *ev.notes), model=info))


def impact_from_model(results: Any, treatment: str, *, alpha: float = 0.05) -> Any:
    """The impact threshold of `treatment` in a fitted statsmodels OLS model (classical se;
    df and covariates from the fit)."""
    from ..impact.core import impact_threshold
    from .statsmodels import check_ols

    model, _ = check_ols(results)
    names = list(model.exog_names)
    j = _treatment_index(names, treatment)
    cov = np.asarray(results.normalized_cov_params, float) * float(results.scale)
    n, dof = int(results.nobs), float(results.df_resid)
    return impact_threshold(
        estimate=float(np.asarray(results.params)[j]), se=float(np.sqrt(cov[j, j])), n=n,
        covariates=int(round(n - dof - 2)), alpha=alpha,
    )  # fmt: skip
