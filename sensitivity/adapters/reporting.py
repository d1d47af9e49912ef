"""`report` from Python: results or fitted models into the manuscript folder."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from ..common.errors import InputError, InputTypeError
from ..evalues.result import EValueResult
from ..output.report import Item, write_report
from ..partial_r2.result import PartialR2Result


def _item(label: str, thing: Any, treatment: str | None) -> Item:
    if isinstance(thing, EValueResult):
        return Item(label, thing)
    if isinstance(thing, PartialR2Result):
        if thing.evalue is None:
            raise InputError(
                f"`results` {label!r}: this partial-R² result has no E-value alongside (give "
                "the outcome's SD); the report's table is built on E-values"
            )
        return Item(label, thing.evalue, thing)
    if hasattr(thing, "params") or hasattr(thing, "summary") or hasattr(thing, "coef"):
        if treatment is None:
            raise InputError(f"`treatment` is needed to read the fitted model {label!r}")
        from . import from_model

        return _item(label, from_model(thing, treatment), None)
    raise InputTypeError(
        f"`results` {label!r} must be an E-value or partial-R² result or a fitted model; "
        f"got {type(thing).__name__}"
    )


def report(results: Any, folder: str | Path, *, treatment: str | None = None,
           labels: Sequence[str] | None = None) -> dict[str, Path]:  # fmt: skip
    """Write the robustness section of a manuscript (report.md, report.html, tables.tex,
    report.json and figures) to `folder`, from results or fitted models.

    Parameters
    ----------
    results : a result, a fitted model, a sequence of them, or a mapping label -> each
        E-value results, partial-R² results (with their E-value alongside) or fitted models
        that `from_model` reads (then `treatment` names the coefficient).
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
            raise InputError(f"`labels` has {len(names)} names for {len(things)} results")
        pairs = list(zip(names, things, strict=True))
    if not pairs:
        raise InputError("`results` is empty: give at least one result or fitted model")
    items = [_item(label, thing, treatment) for label, thing in pairs]
    return write_report(items, folder, "sensitivity.report(...) from Python")
