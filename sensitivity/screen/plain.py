"""The common row of a screen, computed without leaving columns.

Most published results are plain: a risk, odds or hazard ratio with its interval and, for an
odds or hazard ratio, whether the outcome is rare or common. For those rows the only work is
a conversion and two E-values, so polars decides each row's route from the raw cells (no
trimming, no Python strings) and numpy computes the numbers with the very functions the
screen's core calls (the conversions inside `convert_by_route`, and `evalue_of_rr`), so a
plain row's numbers are those of `screen_columns` bit for bit.

Every other row (any cell the core would trim, read or question: blanks where a value is
needed, text that is not a number, other scales, se, dof, counts, free text, values beyond
1e-300 to 1e300) goes to `screen_columns`, which alone gives reasons.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..evalues.formulas import evalue_of_rr
from .core import COUNTS, NOTE_COMMON_HR, NOTE_COMMON_OR, NUMERIC, SCREEN_SCALES

#: Scales a plain row may have, numbered as in SCREEN_SCALES.
PLAIN_SCALES = SCREEN_SCALES[:3]
#: Numbers outside this range go to the core, which checks them against double precision.
_SMALLEST, _LARGEST = 1e-300, 1e300
#: Columns a plain row leaves blank (each would change its computation or add a check).
_UNUSED = tuple(n for n in NUMERIC if n not in ("estimate", "lower", "upper")) + COUNTS
#: Each route's note, by route code (identity, sqrt, hazard ratio of a common outcome).
ROUTE_NOTES = ("", NOTE_COMMON_OR, NOTE_COMMON_HR)


def _blank(frame: Any, name: str) -> Any:
    import polars as pl

    col = pl.col(name)
    return col.is_null() | (col == "") if frame.schema[name] == pl.String else col.is_null()


def _readable(frame: Any, names: list[str]) -> bool:
    """Columns the fast route reads as they are: text or numbers (anything else: the core)."""
    import polars as pl

    return all(frame.schema[n] == pl.String or frame.schema[n].is_numeric() for n in names)


def routes(frame: Any, mapping: dict[str, str]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per row of `frame` (columns named by `mapping`, standard name -> the frame's): its
    route (0 identity, 1 square root of a common-outcome OR, 2 common-outcome HR; -1 not a
    plain row), its scale (an index into PLAIN_SCALES, -1 if not plain), and its estimate,
    lower and upper limit as floats (NaN where blank)."""
    import polars as pl

    n = frame.height
    text = [mapping[k] for k in ("scale", "outcome") if k in mapping]
    given_numbers = [mapping[k] for k in ("estimate", "lower", "upper") if k in mapping]
    if "scale" not in mapping or "estimate" not in mapping or not _readable(frame, given_numbers):
        return no_routes(n)
    if any(frame.schema[name] != pl.String for name in text):
        return no_routes(n)
    f64 = pl.Float64
    value = {k: pl.col(mapping[k]).cast(f64, strict=False) if k in mapping else pl.lit(None, f64)
             for k in ("estimate", "lower", "upper")}  # fmt: skip
    s = pl.col(mapping["scale"])
    o = pl.col(mapping["outcome"]) if "outcome" in mapping else pl.lit("")

    def inside(x: Any) -> Any:  # NaN compares above every number in polars
        return (x >= _SMALLEST) & (x <= _LARGEST)

    # each cell read and each word compared once (an expression used twice is computed
    # twice); equality over a few words is several times faster than is_in here
    flags = {
        "rr": s == "rr", "or": s == "or", "hr": s == "hr",
        "rare": o == "rare", "common": o == "common", "none": o.is_null() | (o == ""),
    }  # fmt: skip
    numbers = frame.select(*(v.alias(f"\0{k}") for k, v in value.items()))  # no clash
    frame = frame.with_columns(
        *numbers.iter_columns(), *(v.alias(f"\0{k}") for k, v in flags.items())
    )
    e, lo, up = (pl.col(f"\0{k}") for k in ("estimate", "lower", "upper"))
    rr, or_, hr, rare, common, none_ = (pl.col(f"\0{k}") for k in flags)
    blank = {k: _blank(frame, mapping[k]) if k in mapping else pl.lit(True)
             for k in ("lower", "upper", *_UNUSED)}  # fmt: skip
    no_interval = blank["lower"] & blank["upper"]
    interval = inside(lo) & inside(up) & (lo <= e) & (e <= up)
    plain = (
        (rr & (none_ | rare | common) | (or_ | hr) & (rare | common))
        & inside(e)
        & (no_interval | interval)
        & pl.all_horizontal(*(blank[k] for k in _UNUSED))
    ).fill_null(False)
    route = pl.when(~plain).then(-1).when(rr | rare).then(0).when(or_).then(1).otherwise(2)
    scale = pl.when(~plain).then(-1).when(rr).then(0).when(or_).then(1).otherwise(2)
    picked = frame.select(route.cast(pl.Int8).alias("route"), scale.cast(pl.Int8).alias("scale"))
    values = np.empty((3, n))
    for i, column in enumerate(numbers.iter_columns()):
        values[i] = column.to_numpy()
    return np.array(picked[:, 0]), np.array(picked[:, 1]), values  # writable copies


def no_routes(n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """`routes` for `n` rows none of which is plain."""
    return np.full(n, -1, np.int8), np.full(n, -1, np.int8), np.full((3, n), np.nan)


def compute_plain(route: np.ndarray, values: np.ndarray) -> dict[str, np.ndarray]:
    """The numbers of plain rows (NaN on the others): those of the screen core's `compute`
    (target 1, no se), with each row's conversion decided by `route`, not by its text.

    The conversions are the core's own functions (`np.sqrt`, `_hr_common`), applied to the
    rows of their route only (identity rows are the values as read), and both E-values come
    from one call of `evalue_of_rr`, so each number is the core's to the bit."""
    from ..common.scales import _hr_common

    rr = values.copy()
    with np.errstate(invalid="ignore", divide="ignore"):
        for code, convert in ((1, np.sqrt), (2, _hr_common)):
            at = np.flatnonzero(route == code)
            if at.size:
                rr[:, at] = convert(values[:, at])
    off = np.flatnonzero(route < 0)
    if off.size:
        rr[:, off] = np.nan
    lower, upper = rr[1], rr[2]
    # the estimate, and the limit nearest the null (1 where the interval covers it), as
    # `evalue_of_limits` takes it against a target of 1, side by side for one call
    pair = np.empty((2, rr.shape[1]))
    pair[0] = rr[0]
    nearest = pair[1]
    nearest.fill(1.0)
    with np.errstate(invalid="ignore"):
        np.copyto(nearest, upper, where=upper < 1.0)
        np.copyto(nearest, lower, where=lower > 1.0)
        evalue, evalue_ci = evalue_of_rr(pair)
    evalue_ci[np.isnan(lower)] = np.nan  # a row without an interval
    return {"rr": rr[0], "rr_lower": lower, "rr_upper": upper, "evalue": evalue,
            "evalue_ci": evalue_ci}  # fmt: skip
