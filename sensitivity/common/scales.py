"""Every effect scale's facts in one table, and the conversions to and from the risk ratio.

The conversions are vectorised over rows: `scale`, `outcome`, `sd` and `contrast` may each be
one value or an array with one entry per row, so a table of mixed scales is converted in one
call with no grouping by hand.

References
----------
VanderWeele TJ, Ding P (2017). Sensitivity analysis in observational research: introducing
the E-value. Annals of Internal Medicine 167:268-274 (rare outcomes; exp(0.91 d)).
VanderWeele TJ (2017). On a square-root transformation of the odds ratio for a common
outcome. Epidemiology 28:e58-e60.
VanderWeele TJ (2020). Optimal approximate conversions of odds ratios and hazard ratios to
risk ratios. Biometrics 76:746-752.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .errors import InputError


@dataclass(frozen=True)
class Scale:
    """What the code needs to know about one effect scale."""

    code: str
    name: str  # in prose: "risk ratio"
    short: str  # in table headings: "RR"
    ratio: bool  # a ratio (null 1, positive) or a difference (null 0)
    needs_outcome: bool = False  # rare/common decides the conversion (or, hr)
    needs_sd: bool = False  # the outcome's SD standardises it (md)

    @property
    def null(self) -> float:
        return 1.0 if self.ratio else 0.0


SCALES: dict[str, Scale] = {
    s.code: s
    for s in (
        Scale("rr", "risk ratio", "RR", True),
        Scale("or", "odds ratio", "OR", True, needs_outcome=True),
        Scale("hr", "hazard ratio", "HR", True, needs_outcome=True),
        Scale("smd", "standardized mean difference", "SMD", False),
        Scale("md", "mean difference", "MD", False, needs_sd=True),
        Scale("rd", "risk difference", "RD", False),
    )
}
RATIO_SCALES = tuple(c for c, s in SCALES.items() if s.ratio)
OUTCOME_FREQUENCIES = ("rare", "common")
#: Below this outcome prevalence an OR or HR is taken as a risk ratio (common practice, no
#: single published source; VanderWeele 2017 and 2020 use 15% as the working line).
RARE_OUTCOME_CUTOFF = 0.15
#: exp(0.91 d) maps a standardized mean difference to a risk ratio; 1.78 = 0.91 * 1.96
#: (VanderWeele & Ding 2017, citing Chinn 2000).
SMD_SLOPE = 0.91
SMD_INTERVAL = 1.78
_LN_HALF = float(np.log(0.5))


def as_text(values: object) -> np.ndarray:
    """Codes as a numpy string array, None and NaN as "" (fast comparisons per row)."""
    arr = np.asarray("" if values is None else values)
    if arr.dtype.kind == "U":
        return arr
    if arr.dtype.kind == "O":
        try:
            with np.errstate(invalid="ignore"):
                missing = (arr == None) | (arr != arr)  # noqa: E711 - elementwise; NaN != itself
        except ArithmeticError:  # Decimal('sNaN') refuses even to be compared
            missing = np.vectorize(
                lambda v: v is None or (isinstance(v, float) and v != v), otypes=[bool]
            )(arr)
        return np.where(missing, "", arr).astype(str)
    return arr.astype(str)


def scale(code: str) -> Scale:
    """The facts of scale `code` (KeyError for an unknown code: validate first)."""
    return SCALES[code]


def null_of(scale_codes: object) -> np.ndarray:
    """The null value per row: 1 on ratio scales, 0 on difference scales."""
    return np.where(np.isin(as_text(scale_codes), RATIO_SCALES), 1.0, 0.0)


def is_ratio(scale_codes: object) -> np.ndarray:
    return np.isin(as_text(scale_codes), RATIO_SCALES)


def frequency_of_prevalence(prevalence: object) -> np.ndarray:
    """'rare' below 15% outcome prevalence, else 'common' (common practice)."""
    p = np.asarray(prevalence, float)
    return np.where(p < RARE_OUTCOME_CUTOFF, "rare", "common").astype(object)


# --------------------------------------------------------------------------- hazard ratios
def hr_common_of_log(log_hr: np.ndarray) -> np.ndarray:
    """RR = (1 - 0.5^sqrt(HR)) / (1 - 0.5^sqrt(1/HR)), from log HR, without cancellation.

    Both differences are written with expm1 so that the map keeps its digits from HR = 1e-300
    to 1e300 (VanderWeele 2020).
    """
    half = np.asarray(log_hr, float) / 2
    with np.errstate(over="ignore"):
        root = np.exp(half)
        inv_root = np.exp(-half)
    return np.expm1(_LN_HALF * root) / np.expm1(_LN_HALF * inv_root)


def _hr_common(hr: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return hr_common_of_log(np.log(hr))


def _hr_common_inverse(rr: np.ndarray) -> np.ndarray:
    # The map is increasing in log HR; bisect in log space (exact to ~1e-15 relative).
    target = np.asarray(rr, float)
    lo = np.full(target.shape, -1400.0)
    hi = np.full(target.shape, 1400.0)
    for _ in range(120):
        mid = (lo + hi) / 2
        above = hr_common_of_log(mid) > target
        hi = np.where(above, mid, hi)
        lo = np.where(above, lo, mid)
    with np.errstate(over="ignore"):
        found = np.exp((lo + hi) / 2)
    return np.where(np.isnan(target), np.nan, found)  # a missing entry stays missing


# --------------------------------------------------------------------------- conversions
def route_of(scale_codes: object, outcome: object) -> dict[str, np.ndarray]:
    """Masks, per row, of each conversion route."""
    s = as_text(scale_codes)
    o = as_text(outcome)
    rare = o == "rare"
    ratio_or_hr = (s == "or") | (s == "hr")
    return {
        "identity": (s == "rr") | (ratio_or_hr & rare),
        "sqrt": (s == "or") & ~rare,
        "hr": (s == "hr") & ~rare,
        "smd": s == "smd",
        "md": s == "md",
    }


def convert_by_route(
    routes: dict[str, np.ndarray],
    values: object,
    sd: object = None,
    contrast: object = 1.0,
    forward: bool = True,
) -> np.ndarray:
    """The conversion with each row's route already decided (masks named as `route_of`'s; a
    row in none of them gives NaN). A caller that knows the routes skips the text
    comparisons; the numbers are those of `to_risk_ratio` whichever way the routes came."""
    x = np.asarray(values, float)
    sd_arr = np.asarray(np.nan if sd is None else sd, float)
    c_arr = np.asarray(contrast, float)
    shape = np.broadcast_shapes(
        x.shape, sd_arr.shape, c_arr.shape, *(m.shape for m in routes.values())
    )
    x, sd_arr, c_arr = (np.broadcast_to(a, shape) for a in (x, sd_arr, c_arr))
    out = np.full(shape, np.nan)
    for route, rows in routes.items():
        rows = np.asarray(rows)
        if not rows.any():
            continue
        mask: Any = np.broadcast_to(rows, shape)
        if rows.ndim == 1 and rows.shape == shape[-1:]:
            # a row's route for all its values: pick whole columns, by their numbers (twice
            # as fast as by a mask, the same doubles)
            mask = (Ellipsis, np.flatnonzero(rows))
        v = x[mask]
        if route == "identity":
            res = v
        elif route == "sqrt":
            res = np.sqrt(v) if forward else v**2
        elif route == "hr":
            res = _hr_common(v) if forward else _hr_common_inverse(v)
        else:
            per = 1.0 if route == "smd" else c_arr[mask] / sd_arr[mask]
            with np.errstate(over="ignore"):
                res = np.exp(SMD_SLOPE * v * per) if forward else np.log(v) / SMD_SLOPE / per
        out[mask] = res
    return out if shape else out[()]


def convert_to_rr(
    scale: object,
    values: object,
    *,
    outcome: object = None,
    sd: object = None,
    contrast: object = 1.0,
) -> np.ndarray:
    """`to_risk_ratio` without its checks, for code that has checked its rows already: a row
    with no route (an unknown scale) or a missing value gives NaN, and a value outside a
    scale's range gives what the formula gives."""
    return convert_by_route(route_of(scale, outcome), values, sd, contrast, forward=True)


def convert_from_rr(
    scale: object, rr: object, *, outcome: object = None, sd: object = None, contrast: object = 1.0
) -> np.ndarray:
    """`from_risk_ratio` without its checks (see `convert_to_rr`)."""
    return convert_by_route(route_of(scale, outcome), rr, sd, contrast, forward=False)


def _check_conversion(
    scale: object, values: object, name: str, outcome: object, sd: object, contrast: object,
    forward: bool,
) -> None:  # fmt: skip
    """InputError for what the conversions cannot map (the library's promise: never NaN with
    a warning from a public function). NaN in `values` marks a missing entry and gives NaN."""
    from .checks import FINITE, require, require_numbers, show

    codes = as_text(scale)
    convertible = tuple(c for c in SCALES if c != "rd")
    unknown = ~np.isin(codes, convertible)
    if np.any(unknown):
        raise InputError(
            f"`scale` must be one of {', '.join(convertible)} (a risk difference needs its "
            f"2 x 2 counts: see `evalue`); got {str(codes[unknown].flat[0])!r}",
            "scale",
        )
    x = require_numbers(values, name)
    shape = np.broadcast_shapes(codes.shape, x.shape, as_text(outcome).shape)
    codes_b, x_b = np.broadcast_to(codes, shape), np.broadcast_to(x, shape)
    present = ~np.isnan(x_b)
    if np.any(np.isinf(x_b)):
        raise InputError(
            f"`{name}` must be a finite number; got {show(x_b[np.isinf(x_b)].flat[0])}", name
        )
    positive = np.isin(codes_b, RATIO_SCALES) if forward else np.ones(shape, bool)
    bad = positive & present & ~(x_b > 0)
    if np.any(bad):
        what = "a ratio" if forward else "a risk ratio"
        raise InputError(f"`{name}` must be positive ({what}); got {show(x_b[bad].flat[0])}", name)
    needs_outcome = np.isin(codes_b, ("or", "hr"))
    if np.any(needs_outcome):
        freq = np.broadcast_to(as_text(outcome), shape)[needs_outcome]
        wrong = ~np.isin(freq, OUTCOME_FREQUENCIES)
        if np.any(wrong):
            got = str(freq[wrong].flat[0])
            raise InputError(
                "`outcome` must be 'rare' or 'common' for an odds or hazard ratio (it decides "
                f"the conversion); got {repr(got) if got else 'none'}",
                "outcome",
            )
    if np.any(codes_b == "md"):
        if sd is None:
            raise InputError("`sd` (the outcome's SD) is needed to convert a mean difference", "sd")
        sd_arr = require_numbers(sd, "sd")
        full = np.broadcast_shapes(shape, sd_arr.shape)
        sd_md = np.broadcast_to(sd_arr, full)[np.broadcast_to(codes_b, full) == "md"]
        bad_sd = ~(np.isfinite(sd_md) & (sd_md > 0))
        if np.any(bad_sd):
            raise InputError(
                f"`sd` must be a positive finite number for a mean difference; got "
                f"{show(sd_md[bad_sd].flat[0])}",
                "sd",
            )
    c = require(contrast, "contrast", FINITE)
    if np.any(c == 0):
        raise InputError("`contrast` must not be 0; got 0", "contrast")


def _check_result(out: np.ndarray, values: object, name: str, positive: bool) -> np.ndarray:
    """InputError when a finite input maps beyond double precision (exp(0.91 d) for d = 1000,
    or 0 for d = -1000 where a risk ratio must be positive)."""
    x = np.asarray(values, float)
    with np.errstate(invalid="ignore"):
        beyond = ~np.isfinite(out) | ((out == 0) if positive else False)
        beyond &= np.broadcast_to(~np.isnan(x), np.shape(out))
    if np.any(beyond):
        raise InputError(
            f"`{name}` maps beyond double precision on the risk-ratio scale (or back); got "
            f"{float(np.broadcast_to(x, np.shape(out))[beyond].flat[0]):g}"
        )
    return out


def to_risk_ratio(
    scale: object,
    values: object,
    *,
    outcome: object = None,
    sd: object = None,
    contrast: object = 1.0,
) -> np.ndarray:
    """Map values on `scale` to the approximate risk-ratio scale (the map the E-value uses).

    ``or`` rare: RR = OR; common: RR = sqrt(OR) (VanderWeele 2017).
    ``hr`` rare: RR = HR; common: RR = (1 - 0.5^sqrt(HR)) / (1 - 0.5^sqrt(1/HR))
    (VanderWeele 2020). ``smd``: RR = exp(0.91 d). ``md``: d = value * contrast / sd, then as
    ``smd`` (VanderWeele & Ding 2017). Every argument may be per row. A ratio must be
    positive; an odds or hazard ratio needs `outcome` ('rare' or 'common'), a mean difference
    a positive `sd`; NaN marks a missing entry and gives NaN; anything else raises InputError.

    Examples
    --------
    >>> to_risk_ratio(["rr", "or", "smd"], [2.0, 4.0, 0.0], outcome=["", "common", ""]).tolist()
    [2.0, 2.0, 1.0]
    """
    _check_conversion(scale, values, "values", outcome, sd, contrast, forward=True)
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        out = convert_to_rr(scale, values, outcome=outcome, sd=sd, contrast=contrast)
    return _check_result(out, values, "values", positive=True)


def from_risk_ratio(
    scale: object, rr: object, *, outcome: object = None, sd: object = None, contrast: object = 1.0
) -> np.ndarray:
    """Inverse of `to_risk_ratio`: a risk-ratio-scale value back on `scale` (`rr` positive;
    the same checks)."""
    _check_conversion(scale, rr, "rr", outcome, sd, contrast, forward=False)
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        out = convert_from_rr(scale, rr, outcome=outcome, sd=sd, contrast=contrast)
    return _check_result(out, rr, "rr", positive=False)


def conversion_text(scale: str, outcome: str | None = None, contrast: float = 1.0) -> str:
    """One phrase naming the map `to_risk_ratio` applies, with its source."""
    if scale == "rr":
        return "none (already a risk ratio)"
    if scale in ("or", "hr") and outcome == "rare":
        return f"RR ≈ {scale.upper()} for a rare outcome (VanderWeele & Ding 2017)"
    if scale == "or":
        return "RR ≈ √OR for a common outcome (VanderWeele 2017)"
    if scale == "hr":
        return "RR ≈ (1 − 0.5^√HR) / (1 − 0.5^√(1/HR)) for a common outcome (VanderWeele 2020)"
    per = f" per {contrast:g} units of treatment" if contrast != 1 else ""
    lead = "d = estimate × contrast / SD, " if scale == "md" else ""
    return f"{lead}RR ≈ exp(0.91 d){per} (VanderWeele & Ding 2017)"
