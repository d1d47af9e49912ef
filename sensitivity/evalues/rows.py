"""The E-value's input rules and its vectorised computation, shared by the single result
(`core.evalue`) and the batch (`evalue_rows`, used by the screen).

Every input may be one value or one per row (scale, outcome frequency, SD, contrast and
target included); the rules are data (`CHECKS`): a single result raises the first broken
rule, a batch gets a reason per row and the rest computed in one pass.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..common.checks import (
    FINITE,
    POSITIVE,
    PROBABILITY,
    Check,
    as_array,
    check_pair,
    field,
    flag_kinds,
    given,
    inside_interval,
    interval_order,
    show,
)
from ..common.errors import InputError
from ..common.scales import (
    OUTCOME_FREQUENCIES,
    SMD_INTERVAL,
    SMD_SLOPE,
    as_text,
    convert_to_rr,
    frequency_of_prevalence,
    is_ratio,
    null_of,
)
from .formulas import evalue_of_limits, evalue_of_rr

#: Scales `evalue` takes (rd needs the 2 x 2 counts and has its own route).
EVALUE_SCALES = ("rr", "or", "hr", "smd", "md")


# --------------------------------------------------------------------------- the rules
def ratio_scale(scale: np.ndarray) -> np.ndarray:
    """Per row, whether the scale is a ratio (rr, or, hr)."""
    return is_ratio(scale)


def _scale_flags(scale: np.ndarray) -> Check:
    return Check(
        ("scale",),
        lambda s: ~np.isin(as_text(s), EVALUE_SCALES),
        lambda s: f"`scale` must be one of {', '.join(EVALUE_SCALES)}; got {str(s)!r}",
        f"`scale` must be one of {', '.join(EVALUE_SCALES)}",
    )


def scale_in(s: np.ndarray, *codes: str) -> np.ndarray:
    """Per row, whether the scale is one of `codes`."""
    return np.isin(as_text(s), codes)


#: The rules of one E-value input, in the order a user meets them. Every row is checked
#: against all of them (a batch flags the first one a row breaks; one result raises it).
CHECKS: tuple[Check, ...] = (
    _scale_flags(np.empty(0)),
    field("estimate", FINITE),
    field("estimate", POSITIVE, ratio_scale, ("scale",)),
    Check(
        ("prevalence", "outcome"),
        lambda p, o: given(p) & given(o),
        lambda p, o: "give `outcome` or `prevalence`, not both",
        names=("outcome", "prevalence"),
    ),
    field("prevalence", PROBABILITY, given, ("prevalence",)),
    Check(
        ("outcome",),
        lambda o: given(o) & ~np.isin(as_text(o), OUTCOME_FREQUENCIES),
        lambda o: f"`outcome` must be one of {', '.join(OUTCOME_FREQUENCIES)}; got {str(o)!r}",
        f"`outcome` must be one of {', '.join(OUTCOME_FREQUENCIES)}",
    ),
    Check(
        ("scale", "outcome", "prevalence"),
        lambda s, o, p: scale_in(s, "or", "hr") & ~given(o) & ~given(p),
        lambda s, o, p: (
            f"the outcome's frequency (`outcome`) is needed on the {s} scale: say rare or "
            "common, or give the outcome's `prevalence`"
        ),
        names=("outcome", "prevalence"),
    ),
    Check(
        ("scale", "se"),
        lambda s, se: ratio_scale(s) & given(se),
        lambda s, se: f"`se` applies to scales smd and md only; got {s}",
        "`se` applies to scales smd and md only",
        names=("se",),
    ),
    Check(
        ("scale", "sd"),
        lambda s, sd: ~scale_in(s, "md") & given(sd),
        lambda s, sd: f"`sd` applies to scale md only; got {s}",
        "`sd` applies to scale md only",
        names=("sd",),
    ),
    Check(
        ("scale", "contrast"),
        lambda s, c: ~scale_in(s, "md") & (c != 1),
        lambda s, c: f"`contrast` applies to scale md only; got {s}",
        "`contrast` applies to scale md only",
        names=("contrast",),
    ),
    Check(
        ("scale", "sd"),
        lambda s, sd: scale_in(s, "md") & ~given(sd),
        lambda s, sd: "`sd` is required for scale md: the outcome's standard deviation",
        names=("sd",),
    ),
    field("sd", FINITE, given, ("sd",)),
    field("sd", POSITIVE, given, ("sd",)),
    field("contrast", FINITE),
    field("contrast", POSITIVE),
    Check(
        ("scale", "se", "lower"),
        lambda s, se, lo: given(se) & given(lo),
        lambda s, se, lo: f"give `se` or `ci` for scale {s}, not both",
        names=("se", "ci"),
    ),
    field("se", FINITE, given, ("se",)),
    field("se", POSITIVE, given, ("se",)),
    Check(
        ("lower", "upper"),
        lambda lo, up: given(lo) != given(up),
        lambda lo, up: "`ci` needs both limits",
        names=("ci",),
    ),
    field("lower", FINITE, given, ("lower",)),
    field("upper", FINITE, given, ("upper",)),
    field("lower", POSITIVE, lambda s, lo: ratio_scale(s) & given(lo), ("scale", "lower")),
    field("upper", POSITIVE, lambda s, up: ratio_scale(s) & given(up), ("scale", "upper")),
    interval_order(),
    inside_interval(),
    field("target", FINITE),
    field("target", POSITIVE, ratio_scale, ("scale",)),
)


# --------------------------------------------------------------------------- computation
def compute(
    scale: np.ndarray,
    estimate: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    se: np.ndarray,
    sd: np.ndarray,
    contrast: np.ndarray,
    outcome: np.ndarray,
    target: np.ndarray,
) -> dict[str, np.ndarray]:
    """E-values from checked per-row arrays (NaN where a row has no interval or se).

    Returns the risk-ratio-scale estimate, interval and target, and both E-values
    (NaN for the interval when a row has neither `ci` nor `se`).
    """
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        # one pass over the routes for all four (each row's map decided once)
        stacked = np.stack(np.broadcast_arrays(estimate, target, lower, upper))
        rr, rr_target, rr_lower, rr_upper = convert_to_rr(
            scale, stacked, outcome=outcome, sd=sd, contrast=contrast
        )
        # An interval from `se` (smd, md): exp(0.91 d -/+ 1.78 se_d) (VanderWeele & Ding 2017).
        from_se = given(se) & ~given(lower)
        if np.any(from_se):
            per = np.where(scale_in(scale, "md"), contrast / sd, 1.0)
            se_d = se * per
            d = np.log(rr) / SMD_SLOPE
            rr_lower = np.where(from_se, np.exp(SMD_SLOPE * d - SMD_INTERVAL * se_d), rr_lower)
            rr_upper = np.where(from_se, np.exp(SMD_SLOPE * d + SMD_INTERVAL * se_d), rr_upper)
        e = evalue_of_rr(rr / rr_target)
        e_ci = np.where(given(rr_lower), evalue_of_limits(rr_lower, rr_upper, rr_target), np.nan)
    return {
        "rr": rr,
        "rr_lower": rr_lower,
        "rr_upper": rr_upper,
        "rr_target": rr_target,
        "evalue": e,
        "evalue_ci": e_ci,
    }


def beyond_double(values: dict[str, np.ndarray], out: dict[str, np.ndarray]) -> np.ndarray:
    """Per row, which input leaves double precision on the risk-ratio scale ("" if none).

    An SMD of 800 maps to exp(0.91 * 800), beyond 1e308; a risk ratio of 1e-320 is below the
    smallest double. Such rows are refused rather than given an infinite E-value.
    """
    rr_ok = np.isfinite(out["rr"]) & (out["rr"] > 0)
    target_ok = np.isfinite(out["rr_target"]) & (out["rr_target"] > 0)
    moved = target_ok & (out["rr_target"] != 1)  # a target away from the null
    lost = ~np.isfinite(out["evalue"])
    # a mean difference leaves the doubles through estimate / sd: both are named
    sd_bad = scale_in(values["scale"], "md") & given(values["sd"]) & ~rr_ok
    est_bad = ~rr_ok | (lost & ~moved)
    target_bad = ~target_ok | (lost & moved)  # the estimate's ratio to the target overflows
    ci_bad = given(values["lower"]) & ~np.isfinite(out["evalue_ci"])
    # an interval made from a huge se: exp(0.91 d -/+ 1.78 se) leaves the doubles
    with np.errstate(invalid="ignore"):
        se_bad = given(values["se"]) & (
            ~np.isfinite(out["rr_upper"]) | ~(out["rr_lower"] > 0) | ~np.isfinite(out["evalue_ci"])
        )
    return np.select([sd_bad, est_bad, target_bad, ci_bad, se_bad],
                     ["sd", "estimate", "target", "ci", "se"], "").astype(object)  # fmt: skip


#: The arguments an overflow of each kind names, first the one it is about.
OVERFLOW_ARGUMENTS = {"sd": ("sd", "estimate")}

#: The input each `beyond_double` name stands for.
FIELD_OF = {"estimate": "estimate", "ci": "lower", "target": "target", "se": "se", "sd": "sd"}


def overflow_message(name: str, value: float, scale: str) -> str:
    """The reason given for an input beyond double precision on the risk-ratio scale."""
    if name == "sd":
        return (
            f"`estimate` over `sd` {show(value)} on the {scale} scale is a standardized "
            "difference whose risk ratio is beyond double precision (about 1e-308 to 1e308), "
            "so its E-value cannot be computed"
        )
    if name == "target":
        return (
            f"`target` {show(value)} on the {scale} scale is too far from the estimate: their "
            "ratio on the risk-ratio scale is beyond double precision (about 1e-308 to 1e308), "
            "so its E-value cannot be computed"
        )
    if name == "se":
        return (
            f"`se` {show(value)} on the {scale} scale gives an interval beyond double precision "
            "on the risk-ratio scale (about 1e-308 to 1e308), so its E-value cannot be computed"
        )
    return (
        f"`{name}` {show(value)} on the {scale} scale maps to a risk ratio beyond double "
        "precision (about 1e-308 to 1e308), so its E-value cannot be computed"
    )


def _numeric(value: object, name: str, shape: tuple[int, ...] | None = None) -> np.ndarray:
    """A float array for an optional numeric input (NaN where not given)."""
    if value is None:
        return np.asarray(np.nan)
    return as_array(value, name)


def _text(value: object) -> np.ndarray:
    return as_text(value)


def single_inputs(
    scale: object,
    estimate: object,
    ci: tuple[object, object] | None,
    se: object,
    sd: object,
    contrast: object,
    outcome: object,
    prevalence: object,
    target: object,
) -> dict[str, np.ndarray]:
    """The arguments of `evalue` as arrays under the names the rules use (NaN or "" where
    not given; the interval as ``lower`` and ``upper``)."""
    ci = check_pair(ci, "ci")
    if ci is not None:
        lower, upper = as_array(ci[0], "ci"), as_array(ci[1], "ci")
    else:
        lower = upper = np.asarray(np.nan)
    supplied = {"scale": scale, "estimate": estimate, "se": se, "sd": sd, "contrast": contrast,
                "prevalence": prevalence, "target": target}  # fmt: skip
    for name, value in supplied.items():
        if value is not None and np.asarray(value, object).size == 0:
            raise InputError(f"`{name}` must hold at least one value; got none", name)
    scale_arr = _text(scale)
    values = {
        "scale": scale_arr,
        "estimate": as_array(estimate, "estimate"),
        "lower": lower,
        "upper": upper,
        "se": _numeric(se, "se"),
        "sd": _numeric(sd, "sd"),
        "contrast": as_array(1.0 if contrast is None else contrast, "contrast"),
        "outcome": _text(outcome),
        "prevalence": _numeric(prevalence, "prevalence"),
    }
    values["target"] = (
        null_of(scale_arr) * np.ones(np.shape(values["estimate"]))
        if target is None
        else as_array(target, "target")
    )
    return values


def outcome_frequency(values: dict[str, np.ndarray]) -> np.ndarray:
    """Per row: the outcome frequency given, or decided from the prevalence (15% rule)."""
    o, p = as_text(values["outcome"]), values["prevalence"]
    from_p = given(p)
    decided = o
    if from_p.any():
        chosen = frequency_of_prevalence(np.where(from_p, p, 0.0)).astype(str)
        decided = np.where(from_p, chosen, o)
    # The frequency matters only for or and hr; elsewhere it is dropped (with a note).
    return np.where(scale_in(values["scale"], "or", "hr"), decided, "")


def evalue_rows(columns: Mapping[str, object], n: int) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """E-values for a batch of `n` rows: computed columns and a reason per bad row.

    `columns` holds per-row arrays under the names of `evalue`'s arguments (``lower`` and
    ``upper`` for the interval); absent numbers are NaN, absent text is "". Bad rows get a
    reason (the first rule they break) and NaN results; the rest are computed in one pass.
    """
    out, reasons, _ = evalue_row_kinds(columns, n)
    return out, reasons


def evalue_row_kinds(
    columns: Mapping[str, object], n: int
) -> tuple[dict[str, np.ndarray], np.ndarray, np.ndarray]:
    """`evalue_rows`, with each bad row's kind of reason (`Check.kind`) beside its reason."""
    values = {
        "scale": _text(columns.get("scale")),
        "estimate": np.asarray(columns.get("estimate", np.nan), float),
        "lower": np.asarray(columns.get("lower", np.nan), float),
        "upper": np.asarray(columns.get("upper", np.nan), float),
        "se": np.asarray(columns.get("se", np.nan), float),
        "sd": np.asarray(columns.get("sd", np.nan), float),
        "contrast": np.asarray(columns.get("contrast", 1.0), float),
        "outcome": _text(columns.get("outcome")),
        "prevalence": np.asarray(columns.get("prevalence", np.nan), float),
    }
    target = columns.get("target")
    values["target"] = null_of(values["scale"]) if target is None else np.asarray(target, float)
    values = {k: np.broadcast_to(v, (n,)) for k, v in values.items()}
    reasons, kinds = flag_kinds(values, CHECKS, n)
    good = reasons == ""
    freq = outcome_frequency(values)
    safe = {k: np.where(good, v, np.asarray(_SAFE.get(k, v))) for k, v in values.items()}
    out = compute(
        safe["scale"],
        safe["estimate"],
        safe["lower"],
        safe["upper"],
        safe["se"],
        safe["sd"],
        safe["contrast"],
        np.where(good, freq, "rare"),
        safe["target"],
    )
    beyond = np.where(good, beyond_double(safe, out), "")
    for i in np.flatnonzero(beyond != ""):
        field_of = FIELD_OF[beyond[i]]
        reasons[i] = overflow_message(beyond[i], values[field_of][i], values["scale"][i])
        kinds[i] = reasons[i]  # names no value that varies by rule: its own kind
    good = reasons == ""
    out = {k: np.where(good, v, np.nan) for k, v in out.items()}
    out["outcome"] = np.where(good, freq, "")
    return out, reasons, kinds


# Placeholders computed (and then blanked) for bad rows, so no numpy warning is raised.
_SAFE: dict[str, object] = {
    "scale": "rr",
    "estimate": 1.0,
    "lower": np.nan,
    "upper": np.nan,
    "se": np.nan,
    "sd": 1.0,
    "contrast": 1.0,
    "target": 1.0,
}
