"""Tipping-point grids: where does the conclusion tip under a hidden confounder?

Three views of one question, all vectorised over the whole grid (no loop per cell):

- `binary_confounder_grid`: a binary U with prevalence `prevalence_treated` among the treated,
  `prevalence_control` among the controls, and effect `outcome_effect` on the outcome (a
  difference for md/rd, a ratio for rr/or/hr) (Lin, Psaty & Kronmal 1998; VanderWeele &
  Arah 2011).
- `bounding_grid`: the confounder's two risk ratios, through the bounding factor (Ding &
  VanderWeele 2016), with the E-value curve.
- `partial_r2_grid`: the two partial R² for an OLS coefficient (Cinelli & Hazlett 2020),
  computed by `partial_r2.surface`.

Each returns a `TippingGrid`: the long-format rows, and the tipping points: for each value of
the other varying parameters, the least grid value of the last varying one at which the
estimate (and, separately, the interval limit nearest the target) reaches the target, with
the exact set of values that reach it beside it (from the closed form: "from a", "up to b",
"a to b", every value, or none). "Reaches" allows `TOLERANCE`, on the grid and in the exact
sets alike, so the two never contradict each other.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace

import numpy as np
from numpy.typing import ArrayLike

from ..common.checks import (
    AT_LEAST_ONE,
    OPEN_UNIT,
    POSITIVE,
    PROBABILITY,
    R2_STRENGTH,
    Rule,
    inside_interval,
    interval_order,
    require,
    require_all,
    require_choice,
)
from ..common.errors import InputError
from ..common.scales import (
    OUTCOME_FREQUENCIES,
    RATIO_SCALES,
    conversion_text,
    from_risk_ratio,
    to_risk_ratio,
)
from .result import TippingGrid

#: The largest grid computed (cells = product of the axis lengths): about 40 MB per column.
MAX_CELLS = 5_000_000
SCALES = ("md", "smd", "rd", "rr", "or", "hr")


# --------------------------------------------------------------------------- ranges
def _decimals(x: float) -> int | None:
    """Decimal places of `x` as typed (its shortest repr), or None when it has too many."""
    text = repr(float(x)).lower()
    mantissa, _, exponent = text.partition("e")
    places = len(mantissa.partition(".")[2].rstrip("0")) - int(exponent or 0)
    return max(places, 0) if places <= 15 else None


def value_range(
    start: float, stop: float | None = None, step: float | None = None, name: str = "range"
) -> np.ndarray:
    """Grid values START, START+STEP, ... up to STOP (included when the steps reach it).

    A single value when only `start` is given. Refuses an empty or backwards range, a step
    that is not positive, and a range of more than `MAX_CELLS` values.

    Notes
    -----
    Values come from integer steps: when START and STEP have few decimals the i-th value is
    ``(S + i * P) / 10**k`` in exact integers (S, P the scaled START and STEP), so that
    ``0.7 - 0.2`` style fuzz never moves a grid value off the number typed.

    Examples
    --------
    >>> value_range(0, 1, 0.25).tolist()
    [0.0, 0.25, 0.5, 0.75, 1.0]
    >>> value_range(1, 2, 0.3).tolist()
    [1.0, 1.3, 1.6, 1.9]
    """
    start = float(require(start, name))
    if stop is None and step is None:
        return np.array([start])
    stop = float(require(stop, name))
    step = float(require(step, name))
    if step <= 0:
        raise InputError(f"`{name}` step must be positive; got {step:g}")
    if stop < start:
        raise InputError(f"`{name}` is backwards or empty: stop {stop:g} is below start {start:g}")
    with np.errstate(over="ignore"):
        span = (stop - start) / step
    if not np.isfinite(span) or span >= MAX_CELLS:
        raise InputError(
            f"`{name}` has more than {MAX_CELLS:,} values ({start:g} to {stop:g} by {step:g}); "
            f"the grid limit is {MAX_CELLS:,} cells"
        )
    places = [_decimals(start), _decimals(step), _decimals(stop)]
    k = None if None in places else max(p for p in places if p is not None)
    if k is not None and max(abs(start), abs(stop)) * 10.0**k < 2.0**52:
        scale = 10**k
        first, inc, last = (round(v * scale) for v in (start, step, stop))
        count = (last - first) // inc + 1
        return (first + inc * np.arange(count, dtype=np.int64)) / scale
    count = int(np.floor(span * (1 + 1e-12) + 1e-9)) + 1
    return start + step * np.arange(count)


def parse_range(text: str, name: str) -> np.ndarray:
    """'START:STOP:STEP' or a single number, as grid values (used by the CLI)."""
    parts = str(text).split(":")
    if len(parts) not in (1, 3):
        raise InputError(f"`{name}` must be a number or START:STOP:STEP; got {text!r}")
    try:
        numbers = [float(p) for p in parts]
    except ValueError:
        raise InputError(f"`{name}` must be a number or START:STOP:STEP; got {text!r}") from None
    if len(numbers) == 1:
        return value_range(numbers[0], name=name)
    return value_range(numbers[0], numbers[1], numbers[2], name=name)


def _or(value: object, default: np.ndarray) -> object:
    return default if value is None else value


def _axis(values: object, name: str, *rules: Rule) -> np.ndarray:
    return np.atleast_1d(require(values, name, *rules)).astype(float).ravel()


def _check_size(axes: tuple[tuple[str, np.ndarray], ...]) -> None:
    cells = int(np.prod([len(v) for _, v in axes]))
    if cells > MAX_CELLS:
        sizes = " x ".join(str(len(v)) for _, v in axes)
        raise InputError(f"the grid has {cells:,} cells ({sizes}); the limit is {MAX_CELLS:,}")


# --------------------------------------------------------------------------- reaching the target
#: A value within TOLERANCE x max(|observed - target|, |target|, tiny) of the target counts as
#: reaching it, on the grid and at the ends of the exact sets alike; without it, 0.7 - 0.2
#: falling 5e-17 short of 0.5 would put a tipping point one grid step late.
TOLERANCE = 1e-9

# Kinds of exact answer: the set of values of the solved parameter at which it is reached.
NEVER, ALWAYS, FROM, UP_TO, BETWEEN = 0, 1, 2, 3, 4  # the codes of result.KIND_NAMES


def _slack(observed: float, target: float) -> float:
    return TOLERANCE * max(abs(observed - target), abs(target), 1e-300)


def _reaches(value: np.ndarray, target: float, side: int, slack: float) -> np.ndarray:
    """Whether `value` has reached the target coming from `side` (+1 above, -1 below)."""
    with np.errstate(invalid="ignore"):
        return side * (np.asarray(value) - target) <= slack


def _bisect(
    reached: Callable[[np.ndarray], np.ndarray], lo: np.ndarray, hi: np.ndarray
) -> np.ndarray:
    """The boundary between not reached (at `lo`) and reached (at `hi`), per cell.

    Bisects in asinh space, which treats 1e-6 and 1e300 alike; 200 halvings reach the
    precision of a double. Used where no closed form applies (or it is not finite).
    """
    a, b = np.arcsinh(lo), np.arcsinh(hi)
    for _ in range(200):
        m = (a + b) / 2
        hit = reached(np.sinh(m))
        a, b = np.where(hit, a, m), np.where(hit, m, b)
    return np.sinh((a + b) / 2)


def monotone_set(
    reached: Callable[[np.ndarray], np.ndarray],
    root: np.ndarray,
    lo: float,
    hi: float,
    shape: tuple[int, ...],
    probe_hi: float | None = None,
    probe_lo: float | None = None,
) -> dict[str, np.ndarray]:
    """The exact set of values of a parameter at which a monotone condition holds.

    `reached(x)` evaluates the condition (with the grid's tolerance) at x, an array over the
    other parameters; `root` is the closed-form crossing. The parameter runs over [lo, hi]
    (`probe_hi` is where an open or infinite upper end is evaluated). Returns ``kind``
    (NEVER, ALWAYS, FROM, UP_TO), ``low`` and ``high`` (the set's ends; NaN where unbounded
    or empty).
    """
    top = probe_hi if probe_hi is not None else (hi if np.isfinite(hi) else 1e300)
    bottom = probe_lo if probe_lo is not None else (lo if np.isfinite(lo) else -1e300)
    at_lo = np.broadcast_to(reached(np.full(shape, bottom)), shape)
    at_hi = np.broadcast_to(reached(np.full(shape, top)), shape)
    kind = np.select([at_lo & at_hi, ~at_lo & ~at_hi, at_hi], [ALWAYS, NEVER, FROM], UP_TO)
    root = np.broadcast_to(np.asarray(root, float), shape)
    # A closed-form root a rounding error outside a finite end is that end.
    edge = TOLERANCE * max(1.0, abs(bottom), abs(top) if np.isfinite(hi) else 1.0)
    with np.errstate(invalid="ignore"):
        ok = np.isfinite(root) & (root >= bottom - edge) & (root <= top + edge)
    need = (kind >= FROM) & ~ok
    if need.any():  # no usable closed form here: find the crossing on the same condition
        lo_arr = np.where(kind == FROM, bottom, top)
        hi_arr = np.where(kind == FROM, top, bottom)
        found = _bisect(lambda x: np.broadcast_to(reached(x), shape), lo_arr, hi_arr)
        root = np.where(need, found, root)
    root = np.clip(root, bottom, top)
    lo_val = lo if np.isfinite(lo) else np.nan
    hi_val = hi if np.isfinite(hi) else np.nan
    low = np.select([kind == FROM, (kind == ALWAYS) | (kind == UP_TO)], [root, lo_val], np.nan)
    high = np.select([kind == UP_TO, (kind == ALWAYS) | (kind == FROM)], [root, hi_val], np.nan)
    return {"kind": kind, "low": low, "high": high}


def set_contains(exact: dict[str, np.ndarray], x: np.ndarray) -> np.ndarray:
    """Whether values x (broadcast against the exact set's cells) lie in the set."""
    kind, low, high = exact["kind"], exact["low"], exact["high"]
    with np.errstate(invalid="ignore"):
        above = np.where(np.isnan(low), True, x >= low)
        below = np.where(np.isnan(high), True, x <= high)
    return np.select(
        [kind == NEVER, kind == ALWAYS, kind == FROM, kind == UP_TO],
        [False, True, above, below],
        above & below,
    )


# --------------------------------------------------------------------------- shared checks
def _check_effect(
    scale: str, estimate: object, ci: tuple[object, object] | None, target: object
) -> tuple[str, float, tuple[float, float] | None, float]:
    scale = require_choice(scale, "scale", SCALES)
    ratio = scale in RATIO_SCALES
    rules = (POSITIVE,) if ratio else ()
    est = float(require(estimate, "estimate", *rules))
    null = 1.0 if ratio else 0.0
    tgt = float(require(null if target is None else target, "target", *rules))
    pair = None
    if ci is not None:
        lo = float(require(ci[0], "ci", *rules))
        up = float(require(ci[1], "ci", *rules))
        values = {"estimate": np.asarray(est), "lower": np.asarray(lo), "upper": np.asarray(up)}
        require_all(values, (interval_order(), inside_interval()))
        pair = (lo, up)
    return scale, est, pair, tgt


def _check_frequency(scale: str, outcome: str | None) -> str | None:
    """or and hr need the outcome's frequency, as in `evalue`; other scales take none."""
    if scale in ("or", "hr"):
        if outcome is None:
            raise InputError(
                f"`outcome` frequency is needed on the {scale} scale: say rare or common"
            )
        return require_choice(outcome, "outcome", OUTCOME_FREQUENCIES)
    if outcome is not None:
        raise InputError(f"`outcome` frequency applies to the or and hr scales only; got {scale}")
    return None


def _finite(cells: dict[str, np.ndarray], what: str) -> None:
    """Refuse input whose bias-adjusted values leave the range of a double."""
    for name, values in cells.items():
        if not np.all(np.isfinite(values)):
            raise InputError(
                f"{what}: the bias-adjusted values overflow double precision ({name}); use "
                "inputs between about 1e-300 and 1e300"
            )


def _with_exact(result: TippingGrid, exact_of: Callable[[float], dict]) -> TippingGrid:
    """Attach the exact sets of the solved axis for the estimate and the near CI limit."""
    if result.solved is None:
        return result
    exact = {"estimate": exact_of(result.estimate)}
    if result.ci is not None:
        exact["ci"] = exact_of(result.ci[0] if result.estimate >= result.target else result.ci[1])
    return replace(result, exact=exact)


def _reduced(axes: tuple[tuple[str, np.ndarray], ...], j: int) -> list[np.ndarray]:
    """Each axis as an array broadcasting over the grid with axis j removed (NaN for j)."""
    sizes = [len(v) for i, (_, v) in enumerate(axes) if i != j]
    out: list[np.ndarray] = []
    k = 0
    for i, (_, v) in enumerate(axes):
        if i == j:
            out.append(np.asarray(np.nan))
            continue
        shape = [1] * len(sizes)
        shape[k] = len(v)
        out.append(v.reshape(shape))
        k += 1
    return out


# --------------------------------------------------------------------------- binary U
def _binary_factor(p1: np.ndarray, p0: np.ndarray, g: np.ndarray, ratio: bool) -> np.ndarray:
    """The bias: a ratio (divide by it) or a difference (subtract it)."""
    with np.errstate(over="ignore", invalid="ignore"):
        if ratio:
            return (1 + (g - 1) * p1) / (1 + (g - 1) * p0)
        return g * (p1 - p0)


def binary_confounder_grid(
    scale: str,
    estimate: float,
    ci: tuple[float, float] | None = None,
    *,
    prevalence_treated: ArrayLike | None = None,
    prevalence_control: ArrayLike | None = None,
    outcome_effect: ArrayLike | None = None,
    target: float | None = None,
    outcome: str | None = None,
    ci_level: float = 0.95,
) -> TippingGrid:
    """Bias-adjusted estimates under a hidden binary confounder, over a grid of its strengths.

    Parameters
    ----------
    scale : {'md', 'rd', 'rr', 'or', 'hr'}
        Effect scale. md/rd use the difference formula, rr/or/hr the ratio formula.
    estimate : float
        The observed (covariate-adjusted) estimate.
    ci : (lower, upper), optional
        Its confidence limits; each is shifted by the same bias.
    prevalence_treated, prevalence_control : float or 1-d array, optional
        P(U = 1) among the treated and among the controls (default: 0 to 1 by 0.05).
    outcome_effect : float or 1-d array, optional
        Effect of U on the outcome: a difference (md, rd) or a risk ratio (rr, or, hr);
        default from `default_ranges`.
    target : float, optional
        The value the estimate is tested against (default: the null).
    outcome : {'rare', 'common'}, optional
        Required for or and hr. A common outcome's OR or HR is converted to the risk-ratio
        scale first (as in `evalue`), adjusted there, and converted back.
    ci_level : float, default 0.95
        The level of `ci`, as the sentences name it.

    Notes
    -----
    Difference scale: ``adjusted = observed - gamma (p1 - p0)``; ratio scale (on the risk
    ratio): ``adjusted = observed (1 + (G - 1) p0) / (1 + (G - 1) p1)``, with no
    U-by-treatment interaction. The tipping points use `TOLERANCE`.

    References
    ----------
    Lin DY, Psaty BM, Kronmal RA (1998). Assessing the sensitivity of regression results to
    unmeasured confounders in observational studies. Biometrics 54:948-963.
    VanderWeele TJ, Arah OA (2011). Bias formulas for sensitivity analysis of unmeasured
    confounding for general outcomes, treatments, and confounders. Epidemiology 22:42-52.

    Examples
    --------
    >>> g = binary_confounder_grid("rr", 1.8, prevalence_treated=0.5, prevalence_control=0.2,
    ...                            outcome_effect=3.0)
    >>> round(float(g.cells["bias_adjusted_estimate"].item()), 4)  # 1.8 * 1.4 / 2
    1.26
    """
    scale, est, ci, tgt = _check_effect(scale, estimate, ci, target)
    freq = _check_frequency(scale, outcome)
    ratio = scale in RATIO_SCALES
    default = default_ranges("binary", estimate=est, target=tgt, scale=scale)
    p1 = _axis(
        _or(prevalence_treated, default["prevalence_treated"]), "prevalence_treated", PROBABILITY
    )
    p0 = _axis(
        _or(prevalence_control, default["prevalence_control"]), "prevalence_control", PROBABILITY
    )
    g = _axis(
        _or(outcome_effect, default["outcome_effect"]),
        "outcome_effect",
        *((POSITIVE,) if ratio else ()),
    )
    axes = (("prevalence_treated", p1), ("prevalence_control", p0), ("outcome_effect", g))
    _check_size(axes)
    conv = {"outcome": freq}

    def on_rr(v: float) -> float:
        return float(to_risk_ratio(scale, v, **conv)) if ratio else v

    def back(v: np.ndarray) -> np.ndarray:
        return from_risk_ratio(scale, v, **conv) if ratio else v

    obs, t = on_rr(est), on_rr(tgt)
    factor = _binary_factor(p1[:, None, None], p0[None, :, None], g[None, None, :], ratio)

    def shift(v: float) -> np.ndarray:
        return v / factor if ratio else v - factor

    side = 1 if obs >= t else -1
    slack = _slack(obs, t)
    adjusted = shift(obs)
    cells = {"bias_adjusted_estimate": back(adjusted)}
    reach_ci = None
    if ci is not None:
        lo_rr, up_rr = on_rr(ci[0]), on_rr(ci[1])
        cells["bias_adjusted_ci_lower"] = back(shift(lo_rr))
        cells["bias_adjusted_ci_upper"] = back(shift(up_rr))
        reach_ci = _reaches(shift(lo_rr if side > 0 else up_rr), t, side, slack)
    _finite(cells, "`estimate`")
    notes = list(_already(est, ci, tgt)) + list(_binary_notes(scale, freq))
    result = TippingGrid(
        kind="binary",
        scale=scale,
        estimate=est,
        ci=ci,
        target=tgt,
        axes=axes,
        cells=cells,
        reach_estimate=_reaches(adjusted, t, side, slack),
        reach_ci=reach_ci,
        exact={},
        notes=tuple(notes),
        extra={"outcome": freq} if freq else {},
        ci_level=float(require(ci_level, "ci_level", OPEN_UNIT)),
    )
    return _with_exact(result, lambda value: _binary_exact(result, on_rr(value), t, side, slack))


def _already(est: float, ci: tuple[float, float] | None, target: float) -> list[str]:
    """Notes for a grid whose estimate, or interval, already sits at the target."""
    notes = []
    if est == target:
        notes.append("The estimate already equals the target: no confounding is needed.")
    elif ci is not None and ci[0] <= target <= ci[1]:
        notes.append(
            "The interval already includes the target: every confounder of this kind leaves "
            "it including the target (the interval columns say so at every cell)."
        )
    return notes


def _binary_notes(scale: str, outcome: str | None) -> tuple[str, ...]:
    notes = []
    if scale in ("or", "hr") and outcome == "rare":
        notes.append(
            f"The {scale.upper()} of a rare outcome is taken as a risk ratio (VanderWeele & "
            "Arah 2011); the ratio formula applies to it directly."
        )
    elif scale in ("or", "hr"):
        notes.append(
            f"The {scale.upper()} of a common outcome was converted to the risk-ratio scale "
            f"({conversion_text(scale, outcome)}), adjusted there, and the bias-adjusted values "
            f"converted back to the {scale.upper()} scale."
        )
    notes.append(
        "U is binary and does not modify the treatment effect (no U-by-treatment "
        "interaction); its prevalences are conditional on the measured covariates."
    )
    return tuple(notes)


def _binary_exact(
    result: TippingGrid, obs: float, t: float, side: int, slack: float
) -> dict[str, np.ndarray]:
    """The exact set of values of the solved parameter at which `obs` is moved onto the
    target, from the closed-form crossing and the condition at the parameter's ends."""
    j = result.solved
    assert j is not None
    args = _reduced(result.axes, j)
    ratio = result.scale in RATIO_SCALES
    shape = result.reduced_shape(j)
    p1, p0, g = args
    root: np.ndarray
    # The crossing of the condition itself: the moved value meets the target plus the slack.
    edge = t + side * slack
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if ratio:
            r = obs / edge  # reached when factor = (1 + (G-1) p1) / (1 + (G-1) p0) hits r
            root = [
                lambda: (r * (1 + (g - 1) * p0) - 1) / (g - 1),
                lambda: ((1 + (g - 1) * p1) / r - 1) / (g - 1),
                lambda: 1 + (r - 1) / (p1 - r * p0),
            ][j]()
        else:
            d = obs - edge
            root = [lambda: p0 + d / g, lambda: p1 - d / g, lambda: d / (p1 - p0)][j]()

    def reached(x: np.ndarray) -> np.ndarray:
        full = list(args)
        full[j] = x
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            bias = _binary_factor(full[0], full[1], full[2], ratio)
            shifted = obs / bias if ratio else obs - bias
        return _reaches(shifted, t, side, slack)

    lo, hi = (0.0, 1.0) if j < 2 else ((0.0, np.inf) if ratio else (-np.inf, np.inf))
    return monotone_set(reached, root, lo, hi, shape)


# --------------------------------------------------------------------------- normal U
def continuous_confounder_grid(
    scale: str,
    estimate: float,
    ci: tuple[float, float] | None = None,
    *,
    difference: ArrayLike | None = None,
    outcome_effect: ArrayLike | None = None,
    target: float | None = None,
    outcome: str | None = None,
    ci_level: float = 0.95,
) -> TippingGrid:
    """Bias-adjusted estimates under a normally distributed hidden confounder.

    `difference` is the difference in the confounder's mean between the treated and the
    controls, in units of its (common) SD; `outcome_effect` its effect on the outcome per SD:
    a difference for md/rd, a ratio for rr/or/hr (a common outcome's OR or HR converted to
    the risk-ratio scale first, as in `evalue`, and back).

    Notes
    -----
    Difference scale: adjusted = observed - gamma x difference (exact for a linear model);
    ratio scale: adjusted = observed / G^difference, from log RR_obs = log RR_true + gamma
    Delta for a log-linear mean model (Lin, Psaty & Kronmal 1998; approximate for a rare
    outcome's OR or HR). Both interval limits shift by the same bias.

    References
    ----------
    Lin DY, Psaty BM, Kronmal RA (1998). Biometrics 54:948-963.
    """
    scale, est, ci, tgt = _check_effect(scale, estimate, ci, target)
    freq = _check_frequency(scale, outcome)
    ratio = scale in RATIO_SCALES
    default = default_ranges("continuous", estimate=est, target=tgt, scale=scale)
    delta = _axis(_or(difference, default["difference"]), "difference")
    g = _axis(
        _or(outcome_effect, default["outcome_effect"]),
        "outcome_effect",
        *((POSITIVE,) if ratio else ()),
    )
    axes = (("difference", delta), ("outcome_effect", g))
    _check_size(axes)
    conv = {"outcome": freq}

    def on_rr(v: float) -> float:
        return float(to_risk_ratio(scale, v, **conv)) if ratio else v

    def back(v: np.ndarray) -> np.ndarray:
        return from_risk_ratio(scale, v, **conv) if ratio else v

    def shift(v: float, d: np.ndarray, e: np.ndarray) -> np.ndarray:
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            return v / np.power(e, d) if ratio else v - e * d

    obs, t = on_rr(est), on_rr(tgt)
    side = 1 if obs >= t else -1
    slack = _slack(obs, t)
    grid_d, grid_g = delta[:, None], g[None, :]
    adjusted = shift(obs, grid_d, grid_g)
    cells = {"bias_adjusted_estimate": back(adjusted)}
    reach_ci = None
    if ci is not None:
        lo_rr, up_rr = on_rr(ci[0]), on_rr(ci[1])
        cells["bias_adjusted_ci_lower"] = back(shift(lo_rr, grid_d, grid_g))
        cells["bias_adjusted_ci_upper"] = back(shift(up_rr, grid_d, grid_g))
        reach_ci = _reaches(shift(lo_rr if side > 0 else up_rr, grid_d, grid_g), t, side, slack)
    _finite(cells, "`estimate`")
    notes = (
        list(_already(est, ci, tgt))
        + list(_binary_notes(scale, freq))[:-1]
        + [
            "U is normal with the same SD among the treated and the controls and does not modify "
            "the treatment effect; its difference is conditional on the measured covariates."
        ]
    )
    result = TippingGrid(
        kind="continuous", scale=scale, estimate=est, ci=ci, target=tgt, axes=axes,
        cells=cells, reach_estimate=_reaches(adjusted, t, side, slack), reach_ci=reach_ci,
        exact={}, notes=tuple(notes), extra={"outcome": freq} if freq else {},
        ci_level=float(require(ci_level, "ci_level", OPEN_UNIT)),
    )  # fmt: skip
    if result.solved is None:
        return result
    j = result.solved
    other = g if j == 0 else delta
    shape = result.reduced_shape(j)

    def exact_of(value: float) -> dict[str, np.ndarray]:
        v = on_rr(value)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if ratio:
                log_r = np.log(v / t)
                root = log_r / np.log(other) if j == 0 else np.exp(log_r / other)
            else:
                root = (v - t) / other

        def reached(x: np.ndarray) -> np.ndarray:
            pair = (x, other) if j == 0 else (other, x)
            return _reaches(shift(v, *pair), t, side, slack)

        lo, hi = (-np.inf, np.inf) if j == 0 or not ratio else (0.0, np.inf)
        if j == 0 or not ratio:
            return _two_sided_set(reached, root, shape)
        return monotone_set(reached, root, lo, hi, shape)

    exact = {"estimate": exact_of(est)}
    if ci is not None:
        exact["ci"] = exact_of(ci[0] if est >= tgt else ci[1])
    return replace(result, exact=exact)


def _two_sided_set(
    reached: Callable[[np.ndarray], np.ndarray], root: np.ndarray, shape: tuple[int, ...]
) -> dict[str, np.ndarray]:
    """`monotone_set` over the whole real line (evaluated at +/- 1e150, inside the range
    where the products stay finite)."""
    return monotone_set(reached, np.clip(root, -1e150, 1e150), -np.inf, np.inf, shape,
                        probe_hi=1e150, probe_lo=-1e150)  # fmt: skip


# --------------------------------------------------------------------------- bounding factor
def bounding_grid(
    scale: str,
    estimate: float,
    ci: tuple[float, float] | None = None,
    *,
    rr_treatment: ArrayLike | None = None,
    rr_outcome: ArrayLike | None = None,
    outcome: str | None = None,
    target: float | None = None,
    ci_level: float = 0.95,
) -> TippingGrid:
    """The most a confounder could move the estimate, over a grid of its two risk ratios.

    On the risk-ratio scale (OR and HR need `outcome` 'rare' or 'common' for the conversion
    of `sensitivity.evalues`) the estimate and both interval limits are divided by the
    bounding factor ``B = a b / (a + b - 1)`` when the estimate lies above the target,
    multiplied when below (Ding & VanderWeele 2016). The exact tipping curve is
    ``b = R (a - 1) / (a - R)`` for ``a > R``, with ``R`` the ratio of the estimate (or the
    CI limit nearest the target) to the target, oriented to be at least 1; it passes through
    the E-value point (E, E). A limit that already covers the target (R <= 1) is reached
    for every confounder.

    References
    ----------
    Ding & VanderWeele (2016), Epidemiology 27:368; VanderWeele & Ding (2017), Ann Intern Med.
    """
    from ..evalues.core import bounding_factor, evalue

    if scale not in RATIO_SCALES:
        raise InputError(f"`scale` must be one of rr, or, hr for the bounding view; got {scale!r}")
    ev = evalue(scale, estimate, ci, outcome=outcome, target=target)
    default = default_ranges("bounding", evalue=float(ev.evalue))
    a = _axis(_or(rr_treatment, default["rr_treatment"]), "rr_treatment", AT_LEAST_ONE)
    b = _axis(_or(rr_outcome, default["rr_outcome"]), "rr_outcome", AT_LEAST_ONE)
    axes = (("rr_treatment", a), ("rr_outcome", b))
    _check_size(axes)
    B = bounding_factor(a[:, None], b[None, :])
    obs, t = float(ev.rr), float(ev.rr_target)
    side = 1 if obs >= t else -1
    slack = _slack(obs, t)
    back = {"outcome": ev.outcome}

    def moved(v: float, factor: np.ndarray) -> np.ndarray:
        return v / factor if side > 0 else v * factor

    cells = {
        "bounding_factor": B,
        "bias_adjusted_estimate": from_risk_ratio(scale, moved(obs, B), **back),
    }
    reach_ci = None
    near_rr = None
    if ev.rr_ci is not None:
        lo_rr, up_rr = float(ev.rr_ci[0]), float(ev.rr_ci[1])
        cells["bias_adjusted_ci_lower"] = from_risk_ratio(scale, moved(lo_rr, B), **back)
        cells["bias_adjusted_ci_upper"] = from_risk_ratio(scale, moved(up_rr, B), **back)
        near_rr = lo_rr if side > 0 else up_rr
        reach_ci = _reaches(moved(near_rr, B), t, side, slack)
    _finite(cells, "`estimate`")
    notes = list(ev.notes) + [
        f"Conversion to the risk-ratio scale: {ev.conversion}.",
        "The bound is the most bias a confounder of these strengths could produce (Ding & "
        "VanderWeele 2016); a real confounder of the same strengths may produce less. The "
        "estimate and both interval limits move by the same bounding factor.",
    ]
    result = TippingGrid(
        kind="bounding",
        scale=scale,
        estimate=float(ev.estimate),
        ci=None if ev.ci is None else (float(ev.ci[0]), float(ev.ci[1])),
        target=float(ev.target_value),
        axes=axes,
        cells=cells,
        reach_estimate=_reaches(moved(obs, B), t, side, slack),
        reach_ci=reach_ci,
        exact={},
        notes=tuple(notes),
        extra={
            "evalue": float(ev.evalue),
            "evalue_ci": None if ev.evalue_ci is None else float(ev.evalue_ci),
            "outcome": ev.outcome,
        },
        ci_level=float(require(ci_level, "ci_level", OPEN_UNIT)),
    )
    if result.solved is None:
        return result
    j = result.solved
    other = a if j == 1 else b
    shape = result.reduced_shape(j)

    def exact_of(value_rr: float) -> dict[str, np.ndarray]:
        ratio = (value_rr / t) ** side  # at least 1 unless the value already covers the target
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            root = np.where(other > ratio, ratio * (other - 1) / (other - ratio), np.nan)

        def reached(x: np.ndarray) -> np.ndarray:
            pair = (x, other) if j == 0 else (other, x)
            return _reaches(moved(value_rr, bounding_factor(*pair)), t, side, slack)

        return monotone_set(reached, root, 1.0, np.inf, shape)

    exact = {"estimate": exact_of(obs)}
    if near_rr is not None:
        exact["ci"] = exact_of(near_rr)
    return replace(result, exact=exact)


# --------------------------------------------------------------------------- partial R²
def partial_r2_grid(
    estimate: float,
    se: float,
    dof: float,
    *,
    r2_treatment: ArrayLike | None = None,
    r2_outcome: ArrayLike | None = None,
    alpha: float = 0.05,
    target: float | None = 0.0,
) -> TippingGrid:
    """Bias-adjusted OLS estimates over a grid of the confounder's two partial R².

    The computation is `sensitivity.partial_r2.surface` (Cinelli & Hazlett 2020); the
    interval reaches the target when its limit nearest the target does. Exact sets: for the
    estimate ``r2_outcome = d² (1 - r2_t) / (se² dof r2_t)`` with ``d = |est - target|`` (and
    its inverse in r2_treatment); for the interval, with ``r2_outcome = sin² θ``, the limit
    reaches the target where ``A sin θ + C cos θ >= d``, ``A = se sqrt(dof r2_t / (1 - r2_t))``
    and ``C = t_crit se sqrt(dof / ((dof - 1)(1 - r2_t)))``: an interval of θ, so of
    r2_outcome, that may be bounded on both sides (a stronger confounder on the outcome side
    also shrinks the standard error). On the r2_treatment axis both bias and standard error
    grow, and the set is one-sided.
    """
    from ..partial_r2.core import (
        _check_summary,
        adjusted_for_confounder,
        robustness_value_of_t,
        surface,
        t_critical,
    )

    est, se, dof, _, alpha = _check_summary(estimate, se, dof, None, 1.0, alpha)
    tgt = float(require(0.0 if target is None else target, "target"))
    default = default_ranges(
        "partial-r2", robustness_value=float(robustness_value_of_t(est / se, dof=dof))
    )
    r2t = _axis(_or(r2_treatment, default["r2_treatment"]), "r2_treatment", R2_STRENGTH)
    r2y = _axis(_or(r2_outcome, default["r2_outcome"]), "r2_outcome", R2_STRENGTH)
    axes = (("r2_treatment", r2t), ("r2_outcome", r2y))
    _check_size(axes)
    s = surface(est, se, dof, r2t, r2y, alpha)
    side = 1 if est >= tgt else -1
    slack = _slack(est, tgt)
    cells = {
        "bias": s["bias"],
        "bias_adjusted_estimate": s["estimate"],
        "bias_adjusted_se": s["se"],
        "bias_adjusted_t": s["t"],
        "bias_adjusted_ci_lower": s["lower"],
        "bias_adjusted_ci_upper": s["upper"],
    }
    _finite({k: v for k, v in cells.items() if k != "bias_adjusted_t"}, "`estimate`")
    near = "lower" if side > 0 else "upper"
    result = TippingGrid(
        kind="partial-r2",
        scale="md",
        estimate=est,
        ci=None,
        target=tgt,
        axes=axes,
        cells=cells,
        reach_estimate=_reaches(s["estimate"], tgt, side, slack),
        reach_ci=_reaches(s[near], tgt, side, slack),
        exact={},
        notes=(
            "OLS with classical standard errors; the bias is taken in the direction that "
            "shrinks the estimate toward zero (Cinelli & Hazlett 2020).",
        ),
        extra={"se": se, "dof": dof, "alpha": alpha},
        ci_level=1 - alpha,
    )
    if result.solved is None:
        return result
    j = result.solved
    other = r2t if j == 1 else r2y
    shape = result.reduced_shape(j)
    # Distance the bias must cover: it shrinks |estimate|, so a target beyond the estimate
    # (away from zero) is never reached by the estimate itself.
    toward = np.sign(est - tgt) == np.sign(est) or est == tgt
    d = np.float64(abs(est - tgt) if toward else np.nan)
    se, dof = np.float64(se), np.float64(dof)  # numpy arithmetic: overflow gives inf, not an error
    crit = float(t_critical(alpha, dof - 1))

    def reached_at(key: str) -> Callable[[np.ndarray], np.ndarray]:
        def reached(x: np.ndarray) -> np.ndarray:
            pair = (x, other) if j == 0 else (other, x)
            adj = adjusted_for_confounder(*pair, estimate=est, se=se, dof=dof, alpha=alpha)
            return _reaches(adj[key], tgt, side, slack)

        return reached

    top = 1 - 1e-12  # partial R² lies in [0, 1); the open end is evaluated just below 1
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if j == 1:
            root = d**2 * (1 - other) / (se**2 * dof * other)
        else:
            k = d**2 / (se**2 * dof * other)
            root = k / (1 + k)
    est_set = monotone_set(reached_at("estimate"), root, 0.0, 1.0, shape, probe_hi=top)
    if j == 0:
        # r2_treatment for each r2_outcome: with x = sqrt(r2_t), w = sqrt(1 - r2_t) the limit
        # reaches the target when P x + Q >= d w, increasing in the angle of (x, w).
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            P = se * np.sqrt(dof * other)
            Q = crit * se * np.sqrt(dof / (dof - 1) * (1 - other))
            angle = np.arctan2(d, P) - np.arcsin(np.clip(Q / np.hypot(P, d), -1, 1))
            ci_root = np.sin(np.clip(angle, 0, np.pi / 2)) ** 2
        ci_set = monotone_set(reached_at(near), ci_root, 0.0, 1.0, shape, probe_hi=top)
    else:
        ci_set = _partial_r2_outcome_ci_set(reached_at(near), est, se, dof, other, d, crit, shape)
    return replace(result, exact={"estimate": est_set, "ci": ci_set})


def _partial_r2_outcome_ci_set(
    reached: Callable[[np.ndarray], np.ndarray],
    est: float,
    se: float,
    dof: float,
    r2t: np.ndarray,
    d: float,
    crit: float,
    shape: tuple[int, ...],
) -> dict[str, np.ndarray]:
    """The set of r2_outcome at which the interval reaches the target: with r2_outcome =
    sin² θ the condition is R sin(θ + φ) >= d, an interval of θ that may close on both sides."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        A = se * np.sqrt(dof * r2t / (1 - r2t))
        C = crit * se * np.sqrt(dof / ((dof - 1) * (1 - r2t)))
        R = np.hypot(A, C)
        phi = np.arctan2(C, A)
        asin = np.arcsin(np.clip(d / R, -1, 1))
        first = np.sin(np.clip(asin - phi, 0, np.pi / 2)) ** 2
        last = np.sin(np.clip(np.pi - asin - phi, 0, np.pi / 2)) ** 2
        peak = np.sin(np.clip(np.pi / 2 - phi, 0, np.pi / 2)) ** 2
    top = 1 - 1e-12
    at_lo = np.broadcast_to(reached(np.zeros(shape)), shape)
    at_hi = np.broadcast_to(reached(np.full(shape, top)), shape)
    at_peak = np.broadcast_to(reached(np.broadcast_to(peak, shape).copy()), shape)
    kind = np.select([at_lo & at_hi, at_lo, at_hi, at_peak], [ALWAYS, UP_TO, FROM, BETWEEN], NEVER)
    first, last = (np.broadcast_to(x, shape) for x in (first, last))
    low = np.select(
        [kind == FROM, kind == BETWEEN, (kind == ALWAYS) | (kind == UP_TO)],
        [first, first, 0.0],
        np.nan,
    )
    high = np.select(
        [kind == UP_TO, kind == BETWEEN, (kind == ALWAYS) | (kind == FROM)],
        [last, last, 1.0],
        np.nan,
    )
    return {"kind": kind, "low": low, "high": high}


# --------------------------------------------------------------------------- default grids
def _nice(x: float) -> float:
    """The smallest of 1, 2, 2.5, 5 times a power of ten that is at least `x`."""
    if x <= 0 or not np.isfinite(x):
        return 1.0
    power = 10.0 ** np.floor(np.log10(x))
    for m in (1, 2, 2.5, 5, 10):
        if m * power >= x * (1 - 1e-12):
            return float(m * power)
    return float(10 * power)  # pragma: no cover


def default_ranges(
    kind: str,
    *,
    estimate: float | None = None,
    target: float | None = None,
    scale: str | None = None,
    evalue: float | None = None,
    robustness_value: float | None = None,
) -> dict:
    """Grids used when a parameter is not given, scaled to the estimate at hand.

    binary: prevalences 0 to 1 by 0.05; a ratio effect 1 to 6 by 0.25; a difference effect
    0 to about twice the distance of the estimate from the target, in 20 steps.
    bounding: both risk ratios from 1 to about 1.5 times the E-value (at least 3).
    partial-r2: both partial R² from 0 to about twice the robustness value (0.1 to 0.95).
    """
    if kind == "binary":
        if scale in RATIO_SCALES or estimate is None or target is None:
            effect = value_range(1, 6, 0.25)
        else:
            top = _nice(2 * abs(estimate - target)) if estimate != target else 1.0
            effect = value_range(0, top, top / 20)
        prev = value_range(0, 1, 0.05)
        return {"prevalence_treated": prev, "prevalence_control": prev, "outcome_effect": effect}
    if kind == "continuous":
        if scale in RATIO_SCALES or estimate is None or target is None:
            effect = value_range(1, 4, 0.1)
        else:
            top = _nice(2 * abs(estimate - target)) if estimate != target else 1.0
            effect = value_range(0, top, top / 20)
        return {"difference": value_range(0, 2, 0.1), "outcome_effect": effect}
    if kind == "bounding":
        top = max(3.0, float(np.ceil(1.5 * (evalue or 1.0))))
        step = _nice((top - 1) / 40)
        rr = value_range(1, top, step)
        return {"rr_treatment": rr, "rr_outcome": rr}
    top = min(0.95, max(0.1, _nice(2 * (robustness_value or 0.0))))
    r2 = value_range(0, top, _nice(top / 50))
    return {"r2_treatment": r2[r2 < 1], "r2_outcome": r2[r2 < 1]}
