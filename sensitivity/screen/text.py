"""Reading a published result from free text: "HR 0.72 (95% CI 0.60 to 0.86)" and friends.

A cell gives an estimate, an interval and, where the text names one, a scale and a level.
What cannot be read for certain is flagged with a reason, never guessed: decimal commas, an
interval cut short, two results in one cell, "NR" and blanks.
"""

from __future__ import annotations

import re
from typing import cast

import numpy as np

#: Scale words as published, lower case, to the project's scale codes.
SCALE_WORDS = {
    "hr": "hr", "ahr": "hr", "hazard ratio": "hr", "adjusted hazard ratio": "hr",
    "or": "or", "aor": "or", "odds ratio": "or", "adjusted odds ratio": "or",
    "rr": "rr", "arr": "rr", "risk ratio": "rr", "relative risk": "rr", "irr": "rr",
    "rate ratio": "rr", "incidence rate ratio": "rr", "prevalence ratio": "rr", "pr": "rr",
    "smd": "smd", "d": "smd", "cohen's d": "smd", "hedges' g": "smd", "g": "smd",
    "md": "md", "mean difference": "md", "b": "md", "beta": "md", "β": "md", "coef": "md",
    "rd": "rd", "risk difference": "rd",
}  # fmt: skip
_WORDS = sorted(SCALE_WORDS, key=len, reverse=True)
_NUM = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_SCALE = r"(?P<scale>" + "|".join(re.escape(w) for w in _WORDS) + r")"
_LEVEL = r"(?:(?P<level>\d{1,3}(?:\.\d+)?)\s*%\s*)?(?:ci|confidence interval|cl|cri|ui)?"
_SEP = r"\s*(?:to|,|;|-|–|—|\.\.)\s*"
# a scale word may carry its abbreviation in brackets ("hazard ratio [HR] 0.72") and be set
# off by a comma ("HR, 0.72; 95% CI, 0.60-0.86"), as journal styles print them
_ABBREVIATION = r"(?:\s*[(\[]\s*[A-Za-z]{1,5}\s*[)\]])?"
PATTERN = re.compile(
    r"^\s*(?:" + _SCALE + r"\b" + _ABBREVIATION + r"\s*[:=,]?\s*)?"
    r"(?P<estimate>" + _NUM + r")\s*"
    r"(?:[(\[]?\s*[;,]?\s*" + _LEVEL + r"\s*[:=,]?\s*"
    r"(?P<lower>" + _NUM + r")" + _SEP + r"(?P<upper>" + _NUM + r")\s*[)\]]?)?"
    r"\s*[.;,]?\s*$",
    re.IGNORECASE,
)
#: "23% lower risk (95% CI 10% to 34%)": a relative change in percent, read as the ratio
#: 1 - 0.23 (lower) or 1 + 0.23 (higher); the interval's limits likewise (and in order).
PERCENT = re.compile(
    r"^\s*(?P<pct>" + _NUM + r")\s*%\s*(?P<dir>lower|higher|reduced|increased|reduction in|"
    r"increase in|decrease in|less|greater)\s+(?P<what>risk|odds|hazard|rate)s?\b\s*"
    r"(?:[(\[]\s*"
    + _LEVEL
    + r"\s*[:=,]?\s*(?P<lower>"
    + _NUM
    + r")\s*%?"
    + _SEP
    + r"(?P<upper>"
    + _NUM
    + r")\s*%?\s*[)\]])?\s*[.;,]?\s*$",
    re.IGNORECASE,
)
_PERCENT_SCALE = {"risk": "rr", "rate": "rr", "odds": "or", "hazard": "hr"}
MISSING = re.compile(
    r"^\s*(?:nr|n\.r\.|na|n/a|n\.a\.|not reported|not available|-|–|—|\.|)\s*$", re.I
)
_P_VALUE = re.compile(r"[,;]?\s*\(?\s*p\s*(?:=|<|>|≤|<=)\s*[\d.]+(?:e-?\d+)?\s*\)?\s*$", re.I)
_DASHES = str.maketrans({"−": "-", "‐": "-", "‑": "-", "‒": "-", "\u00a0": " ", "·": "."})
MAX_LENGTH = 200


def parse(text: object) -> dict[str, object]:
    """One cell: ``estimate``, ``lower``, ``upper`` (NaN where absent), ``scale`` and
    ``level`` ("" / NaN where the text names none) and ``error`` ("" when read)."""
    out: dict[str, object] = {
        "estimate": np.nan, "lower": np.nan, "upper": np.nan, "scale": "", "level": np.nan,
        "error": "",
    }  # fmt: skip
    if text is None or (isinstance(text, float) and np.isnan(text)):
        out["error"] = "the result text is blank"
        return out
    raw = str(text)
    if len(raw) > MAX_LENGTH:
        out["error"] = f"the result text is longer than {MAX_LENGTH} characters"
        return out
    if any(ord(ch) < 32 and ch not in "\t" for ch in raw) or "\ufffd" in raw:
        out["error"] = "the result text holds control or undecodable characters"
        return out
    if MISSING.match(raw):
        out["error"] = "no result in the text (blank or not reported)"
        return out
    cell = raw.translate(_DASHES)
    cell = re.sub(r"\s+", " ", cell)
    cell = _P_VALUE.sub("", cell)  # a trailing p-value is not part of the result
    numbers = re.findall(r"\d+(?:[.,]\d+)*", cell)
    if re.search(r"\d,\d", cell) and "." not in cell:
        out["error"] = "decimal commas: the numbers cannot be read for certain (write 1.45)"
        return out
    relative = PERCENT.match(cell)
    if relative is not None:
        return _relative_change(relative, out)
    if len(re.findall(r"[(\[]", cell)) > 1 or cell.count(";") > 1 and len(numbers) > 3:
        out["error"] = "two results in one cell"
        return out
    match = PATTERN.match(cell)
    if match is None:
        if re.search(r"\d,\d", cell):  # "0.72 (95% CI 0,60-0,86)": commas beside points
            out["error"] = "decimal commas: the numbers cannot be read for certain (write 1.45)"
            return out
        opened = cell.count("(") + cell.count("[") > cell.count(")") + cell.count("]")
        if opened or re.search(r"(?:-|to|,)\s*[)\]]?\s*$", cell):
            out["error"] = "the interval is incomplete"
        elif len(numbers) > 3:
            out["error"] = "two results in one cell"
        else:
            out["error"] = f"cannot read an estimate and interval from {raw.strip()[:60]!r}"
        return out
    out["estimate"] = float(match["estimate"])
    if match["lower"] is not None:
        out["lower"], out["upper"] = float(match["lower"]), float(match["upper"])
    if match["scale"]:
        out["scale"] = SCALE_WORDS[match["scale"].lower()]
    if match["level"]:
        if not 0 < float(match["level"]) < 100:
            return _bad_level(match["level"], out)
        out["level"] = float(match["level"]) / 100
    return out


def _bad_level(level: str, out: dict[str, object]) -> dict[str, object]:
    """A level of 0% or 100% or more names no interval: nothing is read."""
    out.update(estimate=np.nan, lower=np.nan, upper=np.nan, scale="", level=np.nan)
    out["error"] = f"the interval's level {level}% must lie strictly between 0 and 100%"
    return out


def _relative_change(match: re.Match, out: dict[str, object]) -> dict[str, object]:
    """A ratio from "23% lower risk (95% CI 10% to 34%)": 0.77 (0.66 to 0.90)."""
    down = match["dir"].lower() in ("lower", "reduced", "reduction in", "decrease in", "less")
    sign = -1.0 if down else 1.0

    def ratio(pct: str) -> float:  # in decimal, so 34% lower is 0.66, not 0.6599999999999999
        from decimal import Decimal

        return float(1 + Decimal(int(sign)) * Decimal(pct) / 100)

    estimate = ratio(match["pct"])
    if estimate <= 0:
        out["error"] = f"a {match['pct']}% reduction leaves no positive ratio"
        return out
    out["estimate"] = estimate
    if match["lower"] is not None:
        limits = sorted((ratio(match["lower"]), ratio(match["upper"])))
        if limits[0] <= 0:
            out["error"] = "a reduction of 100% or more in the interval leaves no positive ratio"
            out["estimate"] = np.nan
            return out
        out["lower"], out["upper"] = limits
    out["scale"] = _PERCENT_SCALE[match["what"].lower()]
    if match["level"]:
        if not 0 < float(match["level"]) < 100:
            return _bad_level(match["level"], out)
        out["level"] = float(match["level"]) / 100
    return out


def parse_many(texts: np.ndarray) -> dict[str, np.ndarray]:
    """`parse` over a column: arrays of estimates, limits, scales, levels and errors."""
    cells = [parse(t) for t in texts.tolist()]
    return {
        key: np.array([c[key] for c in cells], dtype=float if key in ("estimate", "lower",
                      "upper", "level") else object)
        for key in ("estimate", "lower", "upper", "scale", "level", "error")
    }  # fmt: skip


def read_result(text: object, argument: str = "TEXT") -> dict[str, object]:
    """One published result as a command or a script gives it: `parse`'s fields, plus the
    ``text`` as given, with numbers as floats and ``scale`` / ``level`` None where the text
    names none. Text that cannot be read for certain is an InputError naming `argument`.

    >>> r = read_result("HR 0.72 (95% CI 0.60-0.86)")
    >>> r["scale"], r["estimate"], r["lower"], r["upper"], r["level"]
    ('hr', 0.72, 0.6, 0.86, 0.95)
    >>> read_result("OR=2.1, 95%CI 1.2-3.6")["scale"]
    'or'
    """
    from ..common.errors import InputError

    cell = parse(text)
    if cell["error"]:
        shown = repr(str(text).strip()[:60])
        got = "" if shown in str(cell["error"]) else f"; got {shown}"
        raise InputError(f"`{argument}`: {cell['error']}{got}", argument)

    def number(key: str) -> float | None:
        value = float(cast(float, cell[key]))
        return None if np.isnan(value) else value

    shown = repr(str(text).strip()[:60])
    typed = [n for n in re.findall(_NUM, str(text)) if not np.isfinite(float(n))]
    if typed:  # "RR 1e400": beyond double precision, as the user typed it
        raise InputError(
            f"`{argument}`: the number {typed[0]} is beyond double precision (about 1.8e308); "
            f"got {shown}",
            argument,
        )
    est, lo, up = number("estimate"), number("lower"), number("upper")
    if lo is not None and up is not None:
        if lo > up:
            raise InputError(
                f"`{argument}`: the interval's lower limit {lo:g} exceeds its upper limit "
                f"{up:g}; got {shown}",
                argument,
            )
        if est is not None and not lo <= est <= up:
            raise InputError(
                f"`{argument}`: the estimate {est:g} must lie within its interval "
                f"{lo:g} to {up:g}; got {shown}",
                argument,
            )
    return {
        "text": str(text).strip(),
        "scale": cell["scale"] or None,
        "estimate": number("estimate"),
        "lower": number("lower"),
        "upper": number("upper"),
        "level": number("level"),
    }
