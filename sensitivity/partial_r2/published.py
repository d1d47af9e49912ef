"""Benchmarks from a paper's published numbers: a covariate's two partial R² without the data.

A reviewer holds the tables, not the data. A covariate's partial R² with the outcome comes
from its t statistic in the outcome model, R² = t² / (t² + dof) (the same identity the data
route uses on the fit's own t), and with the treatment from its t statistic in a model of the
treatment on the covariates. With those two numbers the bounds are those of the data route
(Cinelli & Hazlett 2020, section 6): `benchmark_scenarios` is shared.

Where the paper publishes no model of the treatment, the treatment side is missing; it may be
supplied as an assumption (`assumed_r2_treatment`), which the result then states.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from typing import Any

from ..common.checks import DOF, R2_STRENGTH, require
from ..common.errors import InputError
from .benchmarks import benchmark_spec
from .result import CovariateStrength, PartialR2Result, Scenario

MISSING_TREATMENT = (
    "benchmark {name!r}: its treatment side is not given (its partial R² with the treatment, "
    "or its t statistic in a model of the treatment on the covariates, with that model's "
    "degrees of freedom). The outcome side alone does not bound the bias; to go on, state the "
    "treatment side as an assumption: {how}, and the output will say it was assumed"
)


def _r2(value: object, name: str) -> float:
    return float(require(value, name, R2_STRENGTH))


def _from_t(t: object, dof: object, name: str) -> float:
    from .core import partial_r2_of_t

    t = float(require(t, f"t_{name}"))
    d = float(require(dof, f"dof_{name}", DOF))
    return float(partial_r2_of_t(t, d))


def published_benchmark(
    name: str,
    r2_treatment: float | None = None,
    r2_outcome: float | None = None,
    *,
    t_treatment: float | None = None,
    dof_treatment: float | None = None,
    t_outcome: float | None = None,
    dof_outcome: float | None = None,
    assumed_r2_treatment: float | None = None,
) -> CovariateStrength:
    """A benchmark covariate from its published numbers, for `benchmark_scenarios`.

    Parameters
    ----------
    name : str
        The covariate's name, as the output shows it.
    r2_treatment, r2_outcome : float, optional
        Its partial R² with the treatment (given the other covariates) and with the outcome
        (given treatment and the other covariates), each in [0, 1).
    t_treatment, dof_treatment : float, optional
        Instead of `r2_treatment`: its t statistic in the model of the treatment on the
        covariates, and that model's residual degrees of freedom.
    t_outcome, dof_outcome : float, optional
        Instead of `r2_outcome`: its t statistic in the outcome model and that model's
        residual degrees of freedom. R² = t² / (t² + dof).
    assumed_r2_treatment : float, optional
        Where the treatment side is not published: a value taken as an assumption; the
        result's notes and assumptions say so.

    Returns
    -------
    CovariateStrength
        With `source` "published", or "published outcome side; assumed treatment side".

    Examples
    --------
    A covariate with t = 4.5 in the outcome model (2000 dof) and t = 9.0 in the treatment
    model (2001 dof):

    >>> b = published_benchmark("age", t_treatment=9.0, dof_treatment=2001,
    ...                         t_outcome=4.5, dof_outcome=2000)
    >>> round(b.r2_treatment, 4), round(b.r2_outcome, 4)
    (0.0389, 0.01)
    """
    if not isinstance(name, str) or not name.strip():
        raise InputError(
            f"`name` of a published benchmark must be non-empty text; got {name!r}", "name"
        )
    if r2_outcome is not None and t_outcome is not None:
        raise InputError(
            f"benchmark {name!r}: give `r2_outcome` or `t_outcome`, not both",
            ("r2_outcome", "t_outcome"),
        )
    if r2_outcome is None and t_outcome is None:
        raise InputError(
            f"benchmark {name!r}: its outcome side is required (`r2_outcome`, or `t_outcome` "
            "with `dof_outcome`)",
            ("r2_outcome", "t_outcome", "dof_outcome"),
        )
    ry = _r2(r2_outcome, "r2_outcome") if t_outcome is None else None
    if ry is None:
        if dof_outcome is None:
            raise InputError(
                f"benchmark {name!r}: `t_outcome` needs `dof_outcome`", ("t_outcome", "dof_outcome")
            )
        ry = _from_t(t_outcome, dof_outcome, "outcome")
    sides = {
        "r2_treatment": r2_treatment,
        "t_treatment": t_treatment,
        "assumed_r2_treatment": assumed_r2_treatment,
    }
    given = [n for n, v in sides.items() if v is not None]
    if len(given) > 1:
        raise InputError(f"benchmark {name!r}: give one of {', '.join(given)}, not several")
    if not given:
        raise InputError(
            MISSING_TREATMENT.format(name=name, how="`assumed_r2_treatment=0.05`, say")
        )
    source = "published"
    if r2_treatment is not None:
        rt = _r2(r2_treatment, "r2_treatment")
    elif t_treatment is not None:
        if dof_treatment is None:
            raise InputError(
                f"benchmark {name!r}: `t_treatment` needs `dof_treatment`",
                ("t_treatment", "dof_treatment"),
            )
        rt = _from_t(t_treatment, dof_treatment, "treatment")
    else:
        rt = _r2(assumed_r2_treatment, "assumed_r2_treatment")
        source = "published outcome side; assumed treatment side"
    return CovariateStrength(name.strip(), (), rt, ry, source=source)


def _number(text: str, what: str) -> float:
    try:
        return float(text)
    except ValueError:
        raise InputError(f"`--benchmark-r2` {what}: {text!r} is not a number") from None


def benchmark_from_text(
    name: str, treatment: str, outcome: str, dof: float | None = None
) -> CovariateStrength:
    """A published benchmark as written on the command line (`--benchmark-r2 NAME RT RY`).

    Each side is a partial R² (``0.031``) or a t statistic written ``t:T:DOF`` (``t:T`` on
    the outcome side takes `dof`, the analysed model's own). The treatment side may be
    ``assumed:R2`` (stated as an assumption) or ``?`` (not published: an error that says what
    is missing and how to go on).

    >>> b = benchmark_from_text("age", "t:9.0:2001", "t:4.5", dof=2000)
    >>> round(b.r2_treatment, 4), round(b.r2_outcome, 4)
    (0.0389, 0.01)
    """
    kwargs: dict[str, Any] = {}
    for side, text in (("treatment", treatment.strip()), ("outcome", outcome.strip())):
        what = f"{name} {side} side"
        low = text.lower()
        if low in ("?", "-", "na", "n/a", "none", ""):
            if side == "outcome":
                raise InputError(
                    f"`--benchmark-r2` {name}: the outcome side is required (a partial R², "
                    "or t:T from the outcome model)"
                )
            raise InputError(
                MISSING_TREATMENT.format(
                    name=name, how=f"`--benchmark-r2 {name} assumed:0.05 {outcome}`, say"
                )
            )
        if low.startswith("assumed:"):
            if side == "outcome":
                raise InputError(
                    f"`--benchmark-r2` {name}: only the treatment side may be assumed; the "
                    "outcome side is the published number the benchmark rests on"
                )
            kwargs["assumed_r2_treatment"] = _number(text.split(":", 1)[1], what)
        elif low.startswith("t:"):
            parts = text.split(":")
            if len(parts) == 3:
                t, d = _number(parts[1], what), _number(parts[2], what)
            elif len(parts) == 2 and side == "outcome" and dof is not None:
                t, d = _number(parts[1], what), dof
            else:
                need = "t:T:DOF" if side == "treatment" else "t:T:DOF (or t:T with --dof)"
                raise InputError(f"`--benchmark-r2` {what}: write {need}; got {text!r}")
            kwargs[f"t_{side}"], kwargs[f"dof_{side}"] = t, d
        else:
            kwargs[f"r2_{side}"] = _number(text, what)
    return published_benchmark(name, **kwargs)


def apply_text_benchmarks(
    result: PartialR2Result, benchmark_r2: Sequence[tuple[str, str, str]]
) -> PartialR2Result:
    """`--benchmark-r2 NAME[:K[:K_OUTCOME]] RT RY` (repeatable) applied to `result`; the
    multiples after the name as for `--benchmark` (`benchmarks.benchmark_spec`)."""
    items: list[object] = []
    for spec, treatment, outcome in benchmark_r2:
        name, kt, ky = benchmark_spec(spec, "benchmark_r2")
        try:
            benchmark = benchmark_from_text(name, treatment, outcome, dof=result.dof)
        except InputError as err:  # each side is an entry of the item: RT [1], RY [2]
            sides = {f"{k}_{side}": f"benchmark_r2[{i}]" for i, side in ((1, "treatment"),
                     (2, "outcome")) for k in ("r2", "t", "dof", "assumed_r2")}  # fmt: skip
            raise err.renamed(sides) from None
        items.append((benchmark, kt, ky))
    return with_published_benchmarks(result, items)


def as_benchmark(item: object) -> tuple[CovariateStrength, float, float]:
    """(benchmark, multiple with the treatment, multiple with the outcome) from an item of
    `benchmark_r2`: a `published_benchmark(...)` value (multiple 1), that value with one or
    two multiples in a tuple, or (name, r2_treatment, r2_outcome) where the name may carry
    its multiples as for `--benchmark` ("age:2", "age:1:3")."""
    if isinstance(item, CovariateStrength):
        return item, 1.0, 1.0
    if isinstance(item, tuple | list) and item and isinstance(item[0], CovariateStrength):
        _, kt, ky = benchmark_spec((item[0].name, *item[1:]), "benchmark_r2")
        return item[0], kt, ky
    if isinstance(item, tuple | list) and len(item) == 3 and isinstance(item[0], str):
        name, kt, ky = benchmark_spec(item[0], "benchmark_r2")
        return published_benchmark(name, item[1], item[2]), kt, ky
    raise InputError(
        "`benchmark_r2` items must be (name, r2_treatment, r2_outcome), a "
        f"`published_benchmark(...)` value, or that value with its multiples; got {item!r}",
        "benchmark_r2",
    )


def published_words(
    benchmarks: Sequence[CovariateStrength],
) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """(notes, assumptions) saying where each published benchmark's numbers came from."""
    notes, assumptions = [], []
    for b in benchmarks:
        if b.source == "data":
            continue
        if b.source == "published":
            notes.append(
                f"Benchmark {b.name}: from its published numbers (partial R² "
                f"{percent(b.r2_treatment)} with the treatment, {percent(b.r2_outcome)} with "
                "the outcome), not from data."
            )
        else:
            notes.append(
                f"Benchmark {b.name}: its outcome side is published (partial R² "
                f"{percent(b.r2_outcome)}); its treatment side ({percent(b.r2_treatment)}) "
                "is an assumption, not a published number."
            )
            assumptions.append(
                f"Benchmark {b.name}: its partial R² with the treatment is taken as "
                f"{percent(b.r2_treatment)}, an assumption (no model of the treatment was "
                "published)."
            )
    return tuple(notes), tuple(assumptions)


def percent(value: float, digits: int = 2) -> str:
    """A share as a percentage (three significant digits below 1%)."""
    pct = 100 * float(value)
    return f"{pct:.3g}%" if 0 < abs(pct) < 1 else f"{pct:.{digits}f}%"


def with_published_benchmarks(
    result: PartialR2Result, benchmark_r2: Sequence[object]
) -> PartialR2Result:
    """`result` with scenarios for published benchmarks added (from data or summary input).

    Parameters
    ----------
    result : PartialR2Result
        Any partial-R² result: from `partial_r2_summary`, or a data route.
    benchmark_r2 : sequence
        (name, r2_treatment, r2_outcome) triples, the name with its multiples as for data
        benchmarks ("age", "age:2", "age:1:3"); or `published_benchmark(...)` values, alone
        (multiple 1) or in a tuple with their multiples: (benchmark, 2), (benchmark, 1, 3).
    """
    from .core import benchmark_scenarios

    items = [as_benchmark(b) for b in benchmark_r2]
    scenarios: list[Scenario] = []
    for bench, kt, ky in items:
        scenarios += benchmark_scenarios(
            result.estimate, result.se, result.dof, bench, [(kt, ky)], result.alpha
        )
    notes, assumptions = published_words([b for b, _, _ in items])
    return replace(
        result,
        scenarios=result.scenarios + tuple(scenarios),
        notes=tuple(dict.fromkeys(result.notes + notes)),
        assumptions=tuple(dict.fromkeys(result.assumptions + assumptions)),
    )
