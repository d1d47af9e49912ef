"""Screening a table of published results: every row in, every row out, bad rows flagged.

`screen_columns` takes one batch of the table as text columns (what a file holds, echoed
exactly) and returns the computed columns, an `error` reason per bad row ("" for a good one)
and the `notes` of conversions applied to each row. Each kind of row goes to the family that
computes it, in one vectorised pass per kind:

- ratio rows (rr, or, hr with an outcome frequency or prevalence per row), smd and md rows:
  `evalues.core.evalue_rows`, the same rules and numbers as `sensitivity evalue`;
- regression rows (estimate, se, dof; scale md or ols): also partial R² and both robustness
  values (`partial_r2.core`), with the E-value when the row gives the outcome's SD;
- risk-difference rows with the four counts: `evalues.core.evalue_of_risk_difference`.

numpy only: reading and writing files is the adapters' and the output's work.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ..common.checks import given
from ..evalues.core import bounding_factor, evalue_of_risk_difference, evalue_rows
from .text import SCALE_WORDS, parse_many

#: Input columns the screen reads (after `--columns` renames), and their kinds.
NUMERIC = (
    "estimate", "lower", "upper", "se", "dof", "sd", "prevalence", "contrast", "target",
    "cases_treated", "total_treated", "cases_control", "total_control",
)  # fmt: skip
TEXT = ("scale", "outcome")
COUNTS = ("cases_treated", "total_treated", "cases_control", "total_control")
SCALE_ALIASES = {**SCALE_WORDS, "ols": "ols", "regression": "ols"}
SCREEN_SCALES = ("rr", "or", "hr", "smd", "md", "ols", "rd")


@dataclass(frozen=True)
class Options:
    """What the screen adds to every row: confounders to test, significance level."""

    confounders: tuple[tuple[float, float], ...] = ()
    alpha: float = 0.05
    from_text: str | None = None  # the input column holding free-text results


def computed_names(options: Options) -> list[str]:
    """The computed columns, in output order (after the input's own columns)."""
    names = ["scale_used", "rr", "rr_lower", "rr_upper", "evalue", "evalue_ci"]
    names += ["partial_r2", "robustness_value", "robustness_value_alpha"]
    for i in range(1, len(options.confounders) + 1):
        names += [f"confounder_{i}_explains_estimate", f"confounder_{i}_explains_ci"]
    return names + ["error", "notes"]


def _numbers(values: np.ndarray, name: str) -> tuple[np.ndarray, np.ndarray]:
    """Text cells as floats (blank: NaN) and a reason for each cell that is not a number.

    A column that is numeric already (a Parquet column, or text the reader converted) passes
    straight through."""
    arr = np.asarray(values)
    if arr.dtype.kind in "fiu":
        return arr.astype(float), np.full(len(arr), "", dtype=object)
    cells = np.asarray(values, dtype=object)
    blank = np.array([v is None or (isinstance(v, str) and not v.strip()) for v in cells])
    filled = np.where(blank, "nan", cells)
    reasons = np.full(len(cells), "", dtype=object)
    try:
        out = filled.astype(float)
    except (TypeError, ValueError):
        out = np.full(len(cells), np.nan)
        for i, v in enumerate(filled.tolist()):
            try:
                out[i] = float(v)
            except (TypeError, ValueError):
                text = str(v).strip()
                hint = " (a decimal comma?)" if "," in text else ""
                reasons[i] = f"`{name}` is not a number: {text[:40]!r}{hint}"
    bad_text = ~blank & np.isnan(out) & (reasons == "")
    for j in np.flatnonzero(bad_text):
        reasons[j] = f"`{name}` is not a number: {str(cells[j]).strip()[:40]!r}"
    return out, reasons


def _texts(values: np.ndarray) -> np.ndarray:
    cells = np.asarray(values, dtype=object)
    return np.array(["" if v is None else str(v).strip().lower() for v in cells], dtype=object)


def _first(reasons: np.ndarray, new: np.ndarray) -> np.ndarray:
    """Keep each row's first reason."""
    return np.where(reasons == "", new, reasons)


def _append(notes: np.ndarray, mask: np.ndarray, text: str) -> np.ndarray:
    with_sep = np.where(notes == "", text, notes + "; " + text)
    return np.where(mask, with_sep, notes)


def screen_columns(
    columns: Mapping[str, np.ndarray], n: int, options: Options = Options()
) -> dict[str, np.ndarray]:
    """Computed columns for `n` rows of text `columns` (see the module's description)."""
    reasons = np.full(n, "", dtype=object)
    notes = np.full(n, "", dtype=object)
    num: dict[str, np.ndarray] = {}
    for name in NUMERIC:
        if name in columns:
            num[name], why = _numbers(columns[name], name)
            reasons = _first(reasons, why)
        else:
            num[name] = np.full(n, np.nan)
    scale = _texts(columns["scale"]) if "scale" in columns else np.full(n, "", dtype=object)
    outcome = _texts(columns["outcome"]) if "outcome" in columns else np.full(n, "", dtype=object)
    if options.from_text is not None:
        parsed = parse_many(np.asarray(columns[options.from_text], dtype=object))
        # The text supplies what the columns leave blank; where a row's columns give the
        # estimate the text is only checked against them, and its own problems do not count.
        from_columns = given(num["estimate"])
        reasons = _first(reasons, np.where(from_columns, "", parsed["error"]))
        both = from_columns & given(parsed["estimate"])
        differ = both & ~np.isclose(num["estimate"], parsed["estimate"], rtol=5e-3, atol=5e-3)
        for i in np.flatnonzero(differ & (reasons == "")):
            reasons[i] = (
                f"the estimate column says {num['estimate'][i]:g} but the text says "
                f"{parsed['estimate'][i]:g}"
            )
        for key in ("estimate", "lower", "upper"):
            num[key] = np.where(from_columns, num[key], parsed[key])
        named = (parsed["scale"] != "") & ~from_columns | (parsed["scale"] != "") & (scale == "")
        clash = (
            named
            & (scale != "")
            & (np.array([SCALE_ALIASES.get(s, s) for s in scale], dtype=object) != parsed["scale"])
        )
        for i in np.flatnonzero(clash & (reasons == "")):
            reasons[i] = (
                f"the scale column says {scale[i]!r} but the text names {parsed['scale'][i]!r}"
            )
        notes = _append(notes, named & (scale == ""), "scale read from the text")
        scale = np.where(scale == "", parsed["scale"], scale)
        level = parsed["level"]
        notes = _append(notes, given(level) & (level != 0.95), "interval level read from text")
    code = np.array([SCALE_ALIASES.get(s, s) for s in scale], dtype=object)
    missing = (code != "rd") & ~given(num["estimate"]) & (reasons == "")
    reasons = np.where(missing, "`estimate` is missing", reasons)
    unknown = (code != "") & ~np.isin(code, np.asarray(SCREEN_SCALES, dtype=object))
    for i in np.flatnonzero(unknown & (reasons == "")):
        reasons[i] = f"`scale` must be one of {', '.join(SCREEN_SCALES)}; got {scale[i]!r}"
    for i in np.flatnonzero((code == "") & (reasons == "")):
        reasons[i] = "`scale` is missing (give a scale column, or text that names one)"

    out = {k: np.full(n, np.nan) for k in ("rr", "rr_lower", "rr_upper", "evalue", "evalue_ci")}
    out |= {k: np.full(n, np.nan) for k in ("partial_r2", "robustness_value",
                                           "robustness_value_alpha", "_near")}  # fmt: skip
    regression = np.isin(code, np.asarray(["md", "ols"], dtype=object)) & given(num["dof"])
    rd = code == "rd"
    # ------------------------------------------------------------- E-value rows
    ev_rows = ~rd & ~((code == "ols") | (regression & ~given(num["sd"]))) & (reasons == "")
    if ev_rows.any():
        idx = np.flatnonzero(ev_rows)
        sub = {k: num[k][idx] for k in ("estimate", "lower", "upper", "se", "sd", "prevalence")}
        sub["contrast"] = np.where(given(num["contrast"][idx]), num["contrast"][idx], 1.0)
        if given(num["target"][idx]).any():
            from ..common.scales import null_of

            null = null_of(np.where(code[idx] == "ols", "md", code[idx]))
            sub["target"] = np.where(given(num["target"][idx]), num["target"][idx], null)
        sub["scale"] = np.where(code[idx] == "ols", "md", code[idx]).astype(object)
        sub["outcome"] = outcome[idx]
        ev, why = evalue_rows(sub, len(idx))
        reasons[idx] = why
        for k in out.keys() & ev.keys():
            out[k][idx] = ev[k]
        conv = ev["outcome"]
        notes[idx] = _append(notes[idx], given(sub["prevalence"]) & (why == ""),
                             "outcome frequency from its prevalence (15% rule)")  # fmt: skip
        notes[idx] = _append(notes[idx], (sub["scale"] == "or") & (conv == "common"),
                             "common-outcome OR: RR = sqrt(OR)")  # fmt: skip
        notes[idx] = _append(notes[idx], (sub["scale"] == "hr") & (conv == "common"),
                             "common-outcome HR converted (VanderWeele 2020)")  # fmt: skip
        notes[idx] = _append(
            notes[idx],
            np.isin(sub["scale"], np.asarray(["smd", "md"], dtype=object)),
            "RR = exp(0.91 d)",
        )
        notes[idx] = _append(notes[idx], given(sub["se"]) & ~given(sub["lower"]),
                             "interval from se")  # fmt: skip
    # ------------------------------------------------------------- regression rows
    reg = regression & (reasons == "") | ((code == "ols") & (reasons == ""))
    if reg.any():
        reasons, out, notes = _regression(num, reg, reasons, out, notes, options)
    # ------------------------------------------------------------- risk differences
    rd_rows = rd & (reasons == "")
    if rd_rows.any():
        reasons, out = _risk_differences(num, rd_rows, reasons, out, options.alpha)
    # ------------------------------------------------------------- confounders
    good = reasons == ""
    for k in out:
        out[k] = np.where(good, out[k], np.nan)
    result: dict[str, np.ndarray] = {"scale_used": np.where(good, code, "").astype(object)}
    # the interval limit nearest the null, oriented to be at least 1 unless it covers the null
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(out["rr"] >= 1, out["rr"], 1 / out["rr"])
        near = np.where(out["rr"] >= 1, out["rr_lower"], 1 / out["rr_upper"])
    near = np.where(rd, out.pop("_near"), near)
    result |= out
    for number, (a, b) in enumerate(options.confounders, 1):
        tag = f"confounder_{number}"
        bf = float(bounding_factor(a, b))
        has = given(out["evalue"])
        result[f"{tag}_explains_estimate"] = np.where(
            has, np.where(bf >= ratio, "true", "false"), ""
        ).astype(object)
        has_ci = given(out["evalue_ci"])
        covered = near <= 1
        result[f"{tag}_explains_ci"] = np.where(
            has_ci, np.where(covered | (bf >= near), "true", "false"), ""
        ).astype(object)
    result["error"] = reasons
    result["notes"] = np.where(good, notes, "").astype(object)
    return result


def _regression(num, rows, reasons, out, notes, options):
    """Partial R² and robustness values for rows with estimate, se and dof."""
    from ..common.checks import DOF, FINITE, POSITIVE, field, flags
    from ..partial_r2.core import partial_r2_of_t, robustness_value_of_t

    idx = np.flatnonzero(rows)
    vals = {k: num[k][idx] for k in ("estimate", "se", "dof")}
    checks = [
        field("estimate", FINITE),
        field("se", POSITIVE),
        field("dof", DOF),
    ]
    why = flags(vals, checks, len(idx))
    ok = why == ""
    safe_se = np.where(ok, vals["se"], 1.0)
    safe_dof = np.where(ok, vals["dof"], 10.0)
    t = np.where(ok, vals["estimate"], 1.0) / safe_se
    with np.errstate(invalid="ignore", divide="ignore"):
        out["partial_r2"][idx] = np.where(ok, partial_r2_of_t(t, safe_dof), np.nan)
        out["robustness_value"][idx] = np.where(ok, robustness_value_of_t(t, dof=safe_dof), np.nan)
        out["robustness_value_alpha"][idx] = np.where(
            ok, robustness_value_of_t(t, dof=safe_dof, alpha=options.alpha), np.nan
        )
    reasons[idx] = _first(reasons[idx], why)
    no_sd = ~given(num["sd"][idx])
    notes[idx] = _append(notes[idx], ok & no_sd, "regression row: no sd, so no E-value")
    return reasons, out, notes


def _risk_differences(num, rows, reasons, out, alpha):
    """The E-value of a risk difference from the 2 x 2 counts."""
    idx = np.flatnonzero(rows)
    counts = {k: num[k][idx] for k in COUNTS}
    why = np.full(len(idx), "", dtype=object)
    for name in COUNTS:
        v = counts[name]
        bad = ~np.isfinite(v) | (v < 0) | (v != np.round(v))
        for i in np.flatnonzero(bad & (why == "")):
            why[i] = f"`{name}` must be a whole number of people, 0 or more (risk-difference rows)"
    for cases, total in (("cases_treated", "total_treated"), ("cases_control", "total_control")):
        bad = (counts[total] <= 0) | (counts[cases] > counts[total])
        for i in np.flatnonzero(bad & (why == "")):
            why[i] = (
                f"`{cases}` must not exceed `{total}`, which must be positive; got "
                f"{counts[cases][i]:g} of {counts[total][i]:g}"
            )
    ok = why == ""
    safe = {k: np.where(ok, v, 1.0 if k.startswith("total") else 0.0) for k, v in counts.items()}
    safe["cases_treated"] = np.where(ok, counts["cases_treated"], 1.0)
    safe["total_treated"] = np.where(ok, counts["total_treated"], 2.0)
    res = evalue_of_risk_difference(
        safe["cases_treated"], safe["total_treated"], safe["cases_control"],
        safe["total_control"], alpha=alpha,
    )  # fmt: skip
    # For a risk difference the E-value comes from B*, the bounding factor that would bring
    # the bound on the causal difference to 0: that is the row's risk-ratio-scale value.
    out["rr"][idx] = np.where(ok, res["bounding_factor"], np.nan)
    out["evalue"][idx] = np.where(ok, res["evalue"], np.nan)
    out["evalue_ci"][idx] = np.where(ok, res["evalue_ci"], np.nan)
    out["_near"][idx] = np.where(ok, res["bounding_factor_ci"], np.nan)
    reasons[idx] = _first(reasons[idx], why)
    return reasons, out


__all__ = ["Options", "computed_names", "screen_columns"]
