"""What every tipping view shares: the checked effect, the grid's axes, and the moved values.

The binary, continuous and bounding views differ only in how a confounder moves a value
(`shift`); the grid of moved estimates and interval limits, and whether each cell reaches
the target, are built here once (`shifted_cells`). The partial-R² view takes its cells from
`partial_r2.surface` and shares the rest.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import replace

import numpy as np

from ..common.checks import (
    POSITIVE,
    Rule,
    check_pair,
    inside_interval,
    interval_order,
    require,
    require_all,
    require_choice,
    require_scalar,
)
from ..common.errors import InputError
from ..common.scales import OUTCOME_FREQUENCIES, RATIO_SCALES
from .exact import reaches, slack_for
from .ranges import MAX_CELLS
from .result import TippingGrid

SCALES = ("md", "smd", "rd", "rr", "or", "hr")

Axes = tuple[tuple[str, np.ndarray], ...]


def check_effect(
    scale: str, estimate: object, ci: tuple[object, object] | None, target: object
) -> tuple[str, float, tuple[float, float] | None, float]:
    """The scale, estimate, interval and target checked (ratios positive, the interval in
    order around the estimate); the target defaults to the scale's null."""
    scale = require_choice(scale, "scale", SCALES)
    ratio = scale in RATIO_SCALES
    rules = (POSITIVE,) if ratio else ()
    est = float(require_scalar(estimate, "estimate", *rules))
    null = 1.0 if ratio else 0.0
    tgt = float(require_scalar(null if target is None else target, "target", *rules))
    pair = None
    ci = check_pair(ci, "ci")
    if ci is not None:
        lo = float(require_scalar(ci[0], "ci", *rules))
        up = float(require_scalar(ci[1], "ci", *rules))
        values = {"estimate": np.asarray(est), "lower": np.asarray(lo), "upper": np.asarray(up)}
        require_all(values, (interval_order(), inside_interval()))
        pair = (lo, up)
    return scale, est, pair, tgt


def check_frequency(scale: str, outcome: str | None) -> str | None:
    """or and hr need the outcome's frequency, as in `evalue`; other scales take none."""
    if scale in ("or", "hr"):
        if outcome is None:
            raise InputError(
                f"the outcome's frequency (`outcome`) is needed on the {scale} scale: say rare "
                "or common",
                "outcome",
            )
        return require_choice(outcome, "outcome", OUTCOME_FREQUENCIES)
    if outcome is not None:
        raise InputError(
            f"the outcome's frequency (`outcome`) applies to the or and hr scales only; "
            f"got {scale}",
            "outcome",
        )
    return None


def grid_axes(
    given: Mapping[str, object],
    default: Mapping[str, np.ndarray],
    rules: Mapping[str, tuple[Rule, ...]],
) -> Axes:
    """The grid's axes in the order of `given`: each value given (or its default) checked as
    a 1-d float array; refuses a grid of more than `MAX_CELLS` cells."""
    axes = tuple(
        (
            name,
            np.atleast_1d(
                require(default[name] if value is None else value, name, *rules.get(name, ()))
            )
            .astype(float)
            .ravel(),
        )
        for name, value in given.items()
    )
    for name, values in axes:
        if values.size == 0:
            raise InputError(f"`{name}` must hold at least one value; got none", name)
    cells = int(np.prod([len(v) for _, v in axes]))
    if cells > MAX_CELLS:
        sizes = " x ".join(str(len(v)) for _, v in axes)
        raise InputError(f"the grid has {cells:,} cells ({sizes}); the limit is {MAX_CELLS:,}")
    return axes


def finite_cells(cells: Mapping[str, np.ndarray], *arguments: str) -> None:
    """Refuse input whose bias-adjusted values leave the range of a double (`arguments`: the
    inputs to blame)."""
    what = " or ".join(f"`{a}`" for a in arguments)
    for name, values in cells.items():
        if not np.all(np.isfinite(values)):
            raise InputError(
                f"{what}: the bias-adjusted values overflow double precision ({name}); use "
                "inputs between about 1e-300 and 1e300",
                arguments,
            )


def side_of(observed: float, target: float) -> int:
    """+1 when the value comes down to the target, -1 when it comes up."""
    return 1 if observed >= target else -1


def shifted_cells(
    observed: float,
    ci: tuple[float, float] | None,
    target: float,
    shift: Callable[[float], np.ndarray],
    back: Callable[[np.ndarray], np.ndarray],
    first: Mapping[str, np.ndarray] | None = None,
) -> dict:
    """The grid of moved values: `shift(v)` moves v by each cell's confounder (on the scale
    where the bias acts), `back` returns the moved values to the effect's scale.

    Returns ``cells`` (`first`, then the bias-adjusted estimate and, with an interval, its
    limits; checked finite), ``reach_estimate``, ``reach_ci`` (of the limit nearest the
    target, or None), ``side``, ``slack`` and ``near`` (that limit, or None).
    """
    side = side_of(observed, target)
    slack = slack_for(observed, target)
    # values moved beyond a double become inf here and are refused by finite_cells, with
    # the input named, instead of a raw overflow warning
    with np.errstate(over="ignore", under="ignore", divide="ignore", invalid="ignore"):
        adjusted = shift(observed)
        cells = dict(first or {})
        cells["bias_adjusted_estimate"] = back(adjusted)
        reach_ci = near = None
        if ci is not None:
            cells["bias_adjusted_ci_lower"] = back(shift(ci[0]))
            cells["bias_adjusted_ci_upper"] = back(shift(ci[1]))
            near = ci[0] if side > 0 else ci[1]
            reach_ci = reaches(shift(near), target, side, slack)
    finite_cells(cells, "estimate", "ci")
    return {
        "cells": cells,
        "reach_estimate": reaches(adjusted, target, side, slack),
        "reach_ci": reach_ci,
        "side": side,
        "slack": slack,
        "near": near,
    }


def with_exact(
    result: TippingGrid,
    exact_of: Callable[[float], tuple[dict, Callable[[np.ndarray], np.ndarray]]],
    estimate: float,
    near: float | None,
) -> TippingGrid:
    """Attach the exact sets of the solved axis for the estimate and the interval limit
    nearest the target (`near`, None without an interval); `exact_of(value)` gives the set
    and the grid's own condition (with its tolerance), kept for the printed ends."""
    if result.solved is None:
        return result
    exact, tips = {}, {}
    exact["estimate"], tips["estimate"] = exact_of(estimate)
    if near is not None:
        exact["ci"], tips["ci"] = exact_of(near)
    return replace(result, exact=exact, tips=tips)


def reduced_axes(axes: Axes, j: int) -> list[np.ndarray]:
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
