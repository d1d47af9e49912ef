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
from typing import Any

import numpy as np

from ..common.checks import given
from ..common.scales import as_text
from ..evalues.formulas import bounding_factor
from ..evalues.risk_difference import evalue_of_risk_difference
from ..evalues.rows import evalue_row_kinds
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
NOTE_COMMON_OR = "common-outcome OR: RR = sqrt(OR)"
NOTE_COMMON_HR = "common-outcome HR converted (VanderWeele 2020)"


@dataclass(frozen=True)
class Options:
    """What the screen adds to every row: confounders to test, significance level."""

    confounders: tuple[tuple[float, float], ...] = ()
    alpha: float = 0.05
    from_text: str | None = None  # the input column holding free-text results
    decimal_comma: bool = False  # number cells such as 1,32 read as 1.32 (a European file)


#: What the screen read from each row (the columns, or the free text where it supplied them),
#: before any conversion: so that a reader can check the parser.
AS_READ = ("as_read_scale", "as_read_estimate", "as_read_lower", "as_read_upper",
           "as_read_level", "as_read_outcome")  # fmt: skip
#: The as-read columns that echo the input's text (defused like it when written).
AS_READ_TEXT = ("as_read_scale", "as_read_outcome")


def computed_names(options: Options) -> list[str]:
    """The computed columns, in output order (after the input's own columns)."""
    names = [*AS_READ, "scale_used", "rr", "rr_lower", "rr_upper", "evalue", "evalue_ci"]
    names += ["partial_r2", "robustness_value", "robustness_value_alpha"]
    for i in range(1, len(options.confounders) + 1):
        names += [f"confounder_{i}_explains_estimate", f"confounder_{i}_explains_ci"]
    return names + ["error", "notes"]


@dataclass(frozen=True)
class Codes:
    """A code column (scale, outcome) already lower-cased and trimmed by a fast reader."""

    values: np.ndarray


@dataclass(frozen=True)
class Numbers:
    """A numeric column read by a fast reader: floats (NaN where blank or unreadable), and
    the unreadable cells' positions and text, for the reasons."""

    values: np.ndarray
    bad: np.ndarray
    bad_text: tuple[str, ...]
    decimal_comma: bool = False  # read with decimal commas: a decimal point is not guessed at


def _numbers(values: np.ndarray | Numbers, name: str) -> tuple[np.ndarray, np.ndarray]:
    """Text cells as floats (blank: NaN) and a reason for each cell that is not a number.

    A column that is numeric already (a Parquet column, or text the reader converted) passes
    straight through."""
    if isinstance(values, Numbers):
        reasons = np.full(len(values.values), "", dtype=object)
        for i, text in zip(values.bad.tolist(), values.bad_text, strict=True):
            hint = " (a decimal comma?)" if "," in text else ""
            if values.decimal_comma and "." in text:
                hint = " (a decimal point where the file writes decimal commas: 1,5 or 1.500?)"
            reasons[i] = f"`{name}` is not a number: {text.strip()[:40]!r}{hint}"
        return values.values, reasons
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


_KNOWN_WORDS = np.asarray(["", "rare", "common", *SCALE_ALIASES])


def _texts(values: np.ndarray | Codes) -> np.ndarray:
    """Codes compared per row: lower case, trimmed, numpy strings ("" where blank). Cells
    already in that form (nearly all) are left alone, so a million rows cost little."""
    if isinstance(values, Codes):
        return values.values
    arr = as_text(values)
    odd = ~np.isin(arr, _KNOWN_WORDS)
    if odd.any():
        arr = arr.astype(f"<U{max(arr.dtype.itemsize // 4, 1)}")
        arr[odd] = np.strings.lower(np.strings.strip(arr[odd]))
    return arr


def _codes(scale: np.ndarray) -> np.ndarray:
    """Scale words to codes ("hazard ratio" -> "hr"), one comparison per alias in use."""
    code = scale.astype(f"<U{max(scale.dtype.itemsize // 4, 3)}")
    if np.isin(scale, SCREEN_SCALES + ("",)).all():
        return code
    for word, target in SCALE_ALIASES.items():
        if word != target:
            code[scale == word] = target
    return code


class _Reasons:
    """Each row's first reason ("" for a good row), and its kind: the rule in words without
    the row's own values, given where the reason is made, so that rows flagged for the
    same rule are counted together (`Tally`)."""

    def __init__(self, n: int) -> None:
        self.text = np.full(n, "", dtype=object)
        self.kind = np.full(n, "", dtype=object)

    def first(self, new: np.ndarray, kind: np.ndarray | str, rows: Any = slice(None)) -> None:
        """Give rows without a reason yet the `new` ones ("" for none), of `kind`."""
        fresh = (self.text[rows] == "") & (np.asarray(new, dtype=object) != "")
        self.text[rows] = np.where(fresh, new, self.text[rows])
        self.kind[rows] = np.where(fresh, kind, self.kind[rows])

    def set(self, i: Any, text: str, kind: str | None = None) -> None:
        """Row i's reason (its own kind unless the text names the row's values)."""
        self.text[i] = text
        self.kind[i] = text if kind is None else kind

    @property
    def good(self) -> np.ndarray:
        return self.text == ""


class _Notes:
    """Per-row notes kept as bit flags, joined into text once at the end (fast for a
    million rows: only the distinct combinations are ever written out)."""

    def __init__(self, n: int) -> None:
        self.codes = np.zeros(n, np.int64)
        self.texts: list[str] = []

    def add(self, mask: np.ndarray, text: str, rows: np.ndarray | None = None) -> None:
        if text not in self.texts:
            self.texts.append(text)
        bit = np.int64(1) << self.texts.index(text)
        if rows is None:
            self.codes |= np.where(mask, bit, 0)
        else:
            self.codes[rows] |= np.where(mask, bit, 0)

    def render(self, keep: np.ndarray) -> np.ndarray:
        codes = np.where(keep, self.codes, 0)
        uniq, inverse = np.unique(codes, return_inverse=True)
        words = ["; ".join(t for k, t in enumerate(self.texts) if int(u) >> k & 1) for u in uniq]
        return np.asarray(words, dtype=object)[inverse]


def screen_columns(
    columns: Mapping[str, np.ndarray], n: int, options: Options = Options()
) -> dict[str, np.ndarray]:
    """Computed columns for `n` rows of text `columns` (see the module's description)."""
    reasons = _Reasons(n)
    notes = _Notes(n)
    num: dict[str, np.ndarray] = {}
    for name in NUMERIC:
        if name in columns:
            num[name], why = _numbers(columns[name], name)
            reasons.first(why, f"`{name}` is not a number")
        else:
            num[name] = np.full(n, np.nan)
    scale = _texts(columns["scale"]) if "scale" in columns else np.full(n, "")
    outcome = _texts(columns["outcome"]) if "outcome" in columns else np.full(n, "")
    if options.from_text is not None:
        parsed = parse_many(np.asarray(columns[options.from_text], dtype=object))
        # The text supplies what the columns leave blank; where a row's columns give the
        # estimate the text is only checked against them, and its own problems do not count.
        # (a risk-difference row's four counts are its columns too: such a row is read from
        # them, as a row with an estimate column is, whatever its text says)
        from_columns = given(num["estimate"]) | np.all([given(num[k]) for k in COUNTS], axis=0)
        # a text's reason names the text's own problem, and counts as its own kind
        text_error = np.where(from_columns, "", parsed["error"])
        reasons.first(text_error, text_error)
        both = from_columns & given(parsed["estimate"])
        differ = both & ~np.isclose(num["estimate"], parsed["estimate"], rtol=5e-3, atol=5e-3)
        for i in np.flatnonzero(differ & reasons.good):
            reasons.set(
                i,
                f"the estimate column says {num['estimate'][i]:g} but the text says "
                f"{parsed['estimate'][i]:g}",
            )
        for key in ("estimate", "lower", "upper"):
            num[key] = np.where(from_columns, num[key], parsed[key])
        named = (parsed["scale"] != "") & ~from_columns | (parsed["scale"] != "") & (scale == "")
        clash = named & (scale != "") & (_codes(scale) != parsed["scale"].astype(str))
        for i in np.flatnonzero(clash & reasons.good):
            reasons.set(
                i,
                f"the scale column says {str(scale[i])!r} but the text names "
                f"{str(parsed['scale'][i])!r}",
            )
        notes.add(named & (scale == ""), "scale read from the text")
        scale = np.where(scale == "", parsed["scale"].astype(str), scale)
        level = parsed["level"]
        notes.add(given(level) & (level != 0.95), "interval level read from text")
    as_read = {
        "as_read_scale": np.asarray(scale, dtype=object),
        "as_read_estimate": num["estimate"].copy(),
        "as_read_lower": num["lower"].copy(),
        "as_read_upper": num["upper"].copy(),
        "as_read_level": parsed["level"].astype(float) if options.from_text else np.full(n, np.nan),
        "as_read_outcome": np.asarray(outcome, dtype=object),
    }
    code = _codes(scale)
    missing = (code != "rd") & ~given(num["estimate"])
    reasons.first(np.where(missing, "`estimate` is missing", ""), "`estimate` is missing")
    unknown = (code != "") & ~np.isin(code, SCREEN_SCALES)
    one_of = f"`scale` must be one of {', '.join(SCREEN_SCALES)}"
    for i in np.flatnonzero(unknown & reasons.good):
        reasons.set(i, f"{one_of}; got {str(scale[i])!r}", one_of)
    for i in np.flatnonzero((code == "") & reasons.good):
        reasons.set(i, "`scale` is missing (give a scale column, or text that names one)")

    out = {k: np.full(n, np.nan) for k in ("rr", "rr_lower", "rr_upper", "evalue", "evalue_ci")}
    out |= {k: np.full(n, np.nan) for k in ("partial_r2", "robustness_value",
                                           "robustness_value_alpha", "_near")}  # fmt: skip
    regression = np.isin(code, ["md", "ols"]) & given(num["dof"])
    rd = code == "rd"
    # ------------------------------------------------------------- E-value rows
    ev_rows = ~rd & ~((code == "ols") | (regression & ~given(num["sd"]))) & reasons.good
    if ev_rows.any():
        idx = np.flatnonzero(ev_rows)
        sub = {k: num[k][idx] for k in ("estimate", "lower", "upper", "se", "sd", "prevalence")}
        sub["contrast"] = np.where(given(num["contrast"][idx]), num["contrast"][idx], 1.0)
        if given(num["target"][idx]).any():
            from ..common.scales import null_of

            null = null_of(np.where(code[idx] == "ols", "md", code[idx]))
            sub["target"] = np.where(given(num["target"][idx]), num["target"][idx], null)
        sub["scale"] = np.where(code[idx] == "ols", "md", code[idx])
        sub["outcome"] = outcome[idx]
        ev, why, kinds = evalue_row_kinds(sub, len(idx))
        reasons.text[idx], reasons.kind[idx] = why, kinds
        for k in out.keys() & ev.keys():
            out[k][idx] = ev[k]
        conv = ev["outcome"]
        notes.add(
            given(sub["prevalence"]) & (why == ""),
            "outcome frequency from its prevalence (15% rule)",
            idx,
        )
        notes.add((sub["scale"] == "or") & (conv == "common"), NOTE_COMMON_OR, idx)
        notes.add((sub["scale"] == "hr") & (conv == "common"), NOTE_COMMON_HR, idx)
        notes.add(np.isin(sub["scale"], ["smd", "md"]), "RR = exp(0.91 d)", idx)
        notes.add(given(sub["se"]) & ~given(sub["lower"]), "interval from se", idx)
    # ------------------------------------------------------------- regression rows
    reg = regression & reasons.good | ((code == "ols") & reasons.good)
    if reg.any():
        _regression(num, reg, reasons, out, notes, options)
    # ------------------------------------------------------------- risk differences
    rd_rows = rd & reasons.good
    if rd_rows.any():
        _risk_differences(num, rd_rows, reasons, out, options.alpha)
    # ------------------------------------------------------------- confounders
    good = reasons.good
    for k in out:
        out[k] = np.where(good, out[k], np.nan)
    result: dict[str, np.ndarray] = {**as_read, "scale_used": np.where(good, code, "")}
    # the interval limit nearest the null, oriented to be at least 1 unless it covers the null
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(out["rr"] >= 1, out["rr"], 1 / out["rr"])
        near = np.where(out["rr"] >= 1, out["rr_lower"], 1 / out["rr_upper"])
    near = np.where(rd, out.pop("_near"), near)
    result |= out
    words = np.asarray(FLAG_WORDS, dtype=object)
    states = confounder_states(options, ratio, near, out["evalue"], out["evalue_ci"])
    result |= {name: words[state] for name, state in states.items()}
    result["error"] = reasons.text
    result["_error_kind"] = reasons.kind  # not written: what the tally counts rows by
    result["notes"] = notes.render(good)
    result["_near"] = near  # not written: the limit the confounder columns were judged on
    return result


#: A confounder column's cell by state: no E-value, could not, could explain the result away.
FLAG_WORDS = ("", "false", "true")


def confounder_states(
    options: Options, ratio: np.ndarray, near: np.ndarray, evalue: np.ndarray,
    evalue_ci: np.ndarray,
) -> dict[str, np.ndarray]:  # fmt: skip
    """Per `--confounder` column, each row's state (an index into FLAG_WORDS): whether a
    confounder of that strength could explain the estimate (its risk ratio, oriented to be at
    least 1) or the interval (its limit `near` the null, covering it when at most 1) away."""
    states = {}
    has, has_ci = given(evalue), given(evalue_ci)
    covered = near <= 1
    for number, (a, b) in enumerate(options.confounders, 1):
        bf = float(bounding_factor(a, b))
        states[f"confounder_{number}_explains_estimate"] = np.where(
            has, np.where(bf >= ratio, 2, 1), 0
        ).astype(np.int8)
        states[f"confounder_{number}_explains_ci"] = np.where(
            has_ci, np.where(covered | (bf >= near), 2, 1), 0
        ).astype(np.int8)
    return states


def _regression(num, rows, reasons, out, notes, options):
    """Partial R² and robustness values for rows with estimate, se and dof."""
    from ..common.checks import DOF, FINITE, POSITIVE, field, flag_kinds
    from ..partial_r2.core import partial_r2_of_t, robustness_value_of_t

    idx = np.flatnonzero(rows)
    vals = {k: num[k][idx] for k in ("estimate", "se", "dof")}
    checks = [
        field("estimate", FINITE),
        field("se", POSITIVE),
        field("dof", DOF),
    ]
    why, kinds = flag_kinds(vals, checks, len(idx))
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
    reasons.first(why, kinds, idx)
    no_sd = ~given(num["sd"][idx])
    notes.add(ok & no_sd, "regression row: no sd, so no E-value", idx)


def _risk_differences(num, rows, reasons, out, alpha):
    """The E-value of a risk difference from the 2 x 2 counts."""
    idx = np.flatnonzero(rows)
    counts = {k: num[k][idx] for k in COUNTS}
    why = np.full(len(idx), "", dtype=object)
    kinds = np.full(len(idx), "", dtype=object)
    none = np.all([np.isnan(counts[k]) for k in COUNTS], axis=0)
    for i in np.flatnonzero(none):
        kinds[i] = why[i] = (
            "a risk-difference row needs its four counts (cases_treated, total_treated, "
            "cases_control, total_control): its E-value is computed from them"
        )
    for name in COUNTS:
        v = counts[name]
        bad = ~np.isfinite(v) | (v < 0) | (v != np.round(v))
        for i in np.flatnonzero(bad & (why == "")):
            why[i] = f"`{name}` must be a whole number of people, 0 or more (risk-difference rows)"
            kinds[i] = why[i]
    for cases, total in (("cases_treated", "total_treated"), ("cases_control", "total_control")):
        bad = (counts[total] <= 0) | (counts[cases] > counts[total])
        for i in np.flatnonzero(bad & (why == "")):
            kinds[i] = f"`{cases}` must not exceed `{total}`, which must be positive"
            why[i] = f"{kinds[i]}; got {counts[cases][i]:g} of {counts[total][i]:g}"
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
    reasons.first(why, kinds, idx)


__all__ = ["Options", "computed_names", "screen_columns"]
