"""`report` from Python: results of any family, or fitted models, into the manuscript folder.

A front door above the layers (like `commands/`): it reads fitted models through `adapters/`
and hands labelled results to `output.report`."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from .common.errors import InputError, InputTypeError
from .common.results import Result
from .output.report import Reproduce, write_report


def _result(label: str, thing: Any, treatment: str | None) -> Result:
    """A result of any family as it is; a fitted model read by `from_model`."""
    if isinstance(thing, Result) and thing.presenter:
        if not hasattr(thing.presenting_module(), "report_part"):
            raise InputError(
                f"`results` {label!r}: a {type(thing).__name__} has no report section", "results"
            )
        return thing
    if hasattr(thing, "params") or hasattr(thing, "summary") or hasattr(thing, "coef"):
        if treatment is None:
            raise InputError(
                f"`treatment` is needed to read the fitted model {label!r}", "treatment"
            )
        from .adapters import from_model

        return _result(label, from_model(thing, treatment), None)
    raise InputTypeError(
        f"`results` {label!r} must be a result of this package or a fitted model; "
        f"got {type(thing).__name__}",
        "results",
    )


def _call(pairs: Sequence[tuple[str, Result]]) -> Reproduce:
    """The Python call and each result's inputs, as the report's Reproduce section."""
    inputs = tuple(f"{label}: {result.inputs()}" for label, result in pairs)
    return Reproduce("sensitivity.report(results, folder)  # from Python", inputs)


def report(results: Any, folder: str | Path, *, treatment: str | None = None,
           labels: Sequence[str] | None = None) -> dict[str, Path]:  # fmt: skip
    """Write the robustness section of a manuscript (report.md, report.html, tables.tex,
    report.json and figures) to `folder`, from results or fitted models.

    Parameters
    ----------
    results : a result, a fitted model, a sequence of them, or a mapping label -> each
        Results of any family (one estimate each: an E-value, a partial-R² result, a
        tipping grid, Rosenbaum bounds, ...) or fitted models that `from_model` reads
        (then `treatment` names the coefficient).
    folder : path
        Created if missing.
    treatment : str, optional
        The treatment's coefficient name in the fitted models.
    labels : sequence of str, optional
        The estimates' names in the report (default: "Estimate 1", "Estimate 2", ...).

    Returns
    -------
    dict
        The files written, by role: "folder", "md", "html", "tex" and "json".

    Examples
    --------
    >>> from sensitivity import evalue, report
    >>> files = report({"Night shift, diabetes": evalue("hr", 1.38, (1.12, 1.70),
    ...                 outcome="rare")}, "robustness")  # doctest: +SKIP
    """
    if isinstance(results, Mapping):
        pairs = [(str(k), v) for k, v in results.items()]
    else:
        many = isinstance(results, (list, tuple))
        things = list(results) if many else [results]
        names = list(labels) if labels is not None else [f"Estimate {k}" for k in
                                                          range(1, len(things) + 1)]  # fmt: skip
        if len(names) != len(things):
            raise InputError(f"`labels` has {len(names)} names for {len(things)} results", "labels")
        pairs = list(zip(names, things, strict=True))
    if not pairs:
        raise InputError("`results` is empty: give at least one result or fitted model", "results")
    chosen = [(label, _result(label, thing, treatment)) for label, thing in pairs]
    return write_report(chosen, folder, _call(chosen))


def results_from_table(path: str | Path, *, ci_level: float = 0.95) -> list[tuple[str, Any]]:
    """Labelled results from a table of estimates (the screen's columns plus a `label`),
    strictly: a row that cannot be computed stops with its reason (a report states every
    estimate or none). A regression row with `se` and `dof` brings its partial-R² result.
    `ci_level` is the level of the table's intervals (and 1 - alpha of the partial R²)."""
    from dataclasses import replace

    import numpy as np

    from .adapters.files import read_table
    from .evalues.core import evalue
    from .partial_r2.core import partial_r2_summary

    frame = read_table(path, "estimates")
    for need in ("scale", "estimate"):
        if need not in frame.columns:
            raise InputError(f"`estimates`: the table has no {need!r} column", "estimates")

    def cell(row: Any, name: str) -> Any:
        value = row.get(name) if name in row else None
        if value is None or (isinstance(value, float) and np.isnan(value)) or value == "":
            return None
        return value

    items = []
    for k, (_, row) in enumerate(frame.iterrows(), 1):
        label = str(cell(row, "label") or f"Estimate {k}")
        try:
            scale = str(row["scale"]).strip().lower()
            scale = "md" if scale == "ols" else scale
            ci = None
            if cell(row, "lower") is not None:
                ci = (float(row["lower"]), float(row["upper"]))
            num = {k2: (None if cell(row, k2) is None else float(row[k2]))
                   for k2 in ("se", "sd", "prevalence", "contrast", "target", "dof")}  # fmt: skip
            res = evalue(scale, float(row["estimate"]), ci, se=num["se"], sd=num["sd"],
                         outcome=cell(row, "outcome"), prevalence=num["prevalence"],
                         contrast=num["contrast"] or 1.0, target=num["target"],
                         ci_level=ci_level)  # fmt: skip
            pr2 = None
            if scale == "md" and num["dof"] is not None and num["se"] is not None:
                pr2 = partial_r2_summary(float(row["estimate"]), num["se"], num["dof"],
                                         sd_outcome=num["sd"], alpha=1 - ci_level)  # fmt: skip
        except (InputError, ValueError, TypeError) as err:
            raise InputError(f"`estimates` row {k} ({label}): {err}", "estimates") from None
        items.append((label, res if pr2 is None else replace(pr2, evalue=res)))
    if not items:
        raise InputError(f"`estimates`: {path} has no rows", "estimates")
    return items
