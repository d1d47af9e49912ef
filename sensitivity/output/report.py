"""The robustness section of a manuscript: labelled results of any family, one folder.

Each family writes its own section (`present.report_part(items)`: the Methods and Results
paragraphs, supplement tables, figures, each estimate's Document, the JSON entries and the
references); this module knows no family. It puts the sections into one Document and renders
it once each way: `report.md`, a self-contained `report.html` (figures embedded, nothing
fetched) and `tables.tex`; `report.json` carries the same numbers. The "Reproduce" section
gives the command line (or the Python call and each result's inputs) and the versions of the
package and the libraries that computed it.
"""

from __future__ import annotations

import functools
import json
import sys
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..common.results import plain
from .document import (
    Block,
    Bullets,
    Code,
    Document,
    Figure,
    Heading,
    Image,
    Prose,
    html_page,
    markdown_page,
)
from .drawing import FigureWorker, draw_all
from .tables import Table

TITLE = "Sensitivity to unmeasured confounding"
#: Libraries whose versions a report names when they are loaded (the fitting libraries
#: only when a fit came from them).
LIBRARIES = ("numpy", "scipy", "pandas", "statsmodels", "matplotlib", "polars", "pyarrow")
FITTING = ("lifelines", "linearmodels", "pyfixest", "sklearn", "pyspark", "dask")
_DISTRIBUTIONS = {"sklearn": "scikit-learn"}


@dataclass(frozen=True)
class ReportItem:
    """One labelled result in the report, numbered in the order given (figure names and
    JSON entries follow that order)."""

    number: int
    label: str
    result: Any

    def __iter__(self):  # (label, result), as a family's report_part reads its items
        return iter((self.label, self.result))


@dataclass(frozen=True)
class ReportPart:
    """One family's section of the report, built by its `present.report_part(items)`.

    `entries` line up with the items the family was given (one JSON object each, with
    `label`); `figures` are drawn into the folder, in order, under their keys.
    """

    family: str
    methods: str
    results: tuple[str, ...] = ()
    tables: tuple[Table, ...] = ()
    figures: tuple[Figure, ...] = ()
    details: tuple[tuple[str, Document], ...] = ()
    entries: tuple[dict, ...] = ()
    assumptions: tuple[str, ...] = ()
    cautions: tuple[str, ...] = ()
    references: tuple[str, ...] = ()


@dataclass(frozen=True)
class Reproduce:
    """How the report was made: a command line, or a Python call with each result's inputs."""

    command: str
    inputs: tuple[str, ...] = field(default=())


def versions() -> dict[str, str]:
    """The package's version and those of the libraries loaded to compute the report."""
    found = {"sensitivity": _own_version(), "python": sys.version.split()[0]}
    for name in LIBRARIES + FITTING:
        if name in sys.modules or name in LIBRARIES[:4]:
            number = _installed(_DISTRIBUTIONS.get(name, name))
            if number is not None:
                found[name] = number
    return found


def preload() -> None:
    """What writing a report loads on first use: the figures' libraries and the versions of
    the libraries it names (for a second thread while data are read)."""
    from . import atomic, latex  # noqa: F401
    from .figures import preload as figures

    figures()
    for name in LIBRARIES:
        _installed(name)
    _own_version()


@functools.cache
def _installed(distribution: str) -> str | None:
    """An installed distribution's version (read once a process: each look-up parses the
    package's metadata file), or None."""
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version(distribution)
    except PackageNotFoundError:
        return None


@functools.cache
def _own_version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("sensitivity")
    except PackageNotFoundError:  # run from a checkout that is not installed
        return str(getattr(sys.modules.get("sensitivity"), "__version__", "unknown"))


def parts_of(items: Sequence[ReportItem]) -> list[tuple[ReportPart, list[ReportItem]]]:
    """Each family's part, in the order the families first appear. A result may bring
    others along (`Result.report_parts`), each presented by its own family under the same
    label and number."""
    groups: dict[str, list[ReportItem]] = {}
    modules: dict[str, Any] = {}
    for item in items:
        for piece in item.result.report_parts():
            groups.setdefault(piece.presenter, []).append(
                ReportItem(item.number, item.label, piece)
            )
            modules[piece.presenter] = piece.presenting_module()
    return [(modules[key].report_part(group), group) for key, group in groups.items()]


def _entries(
    parts: Sequence[tuple[ReportPart, list[ReportItem]]], count: int
) -> list[dict[str, Any]]:
    """One JSON object an item: its first family's entry flat, any other family's entry
    nested under that family's name (an E-value with its `partial_r2`)."""
    merged: list[dict[str, Any]] = [{} for _ in range(count)]
    for part, group in parts:
        for item, entry in zip(group, part.entries, strict=True):
            target = merged[item.number - 1]
            if not target:
                target.update({"label": item.label, **entry})
            else:
                target[part.family] = {k: v for k, v in entry.items() if k != "label"}
    return merged


def _planned(part: ReportPart, out: Path, taken: set[str]) -> list[tuple[Figure, list[Path]]]:
    """Each figure of a part with its files (a key taken already gets a number)."""
    planned = []
    for figure in part.figures:
        key, n = figure.key, 2
        while key in taken:
            key, n = f"{figure.key}_{n}", n + 1
        taken.add(key)
        planned.append((figure, [out / f"{key}.png", out / f"{key}.svg"]))
    return planned


def _unique(values: Sequence[str]) -> tuple[str, ...]:
    return tuple(dict.fromkeys(v for v in values if v))


def report_document(
    parts: Sequence[ReportPart], images: Sequence[Sequence[Image]], reproduce: Reproduce
) -> Document:
    """The whole report as one Document (rendered to Markdown, HTML and LaTeX)."""
    blocks: list[Block] = [Heading("Methods")]
    blocks += [Prose((p.methods,)) for p in parts if p.methods]
    blocks.append(Heading("Results"))
    for part, drawn in zip(parts, images, strict=True):
        blocks.append(Prose(part.results, role="sentence"))
        blocks += part.tables
        blocks += drawn
    for part in parts:
        for label, doc in part.details:
            blocks.append(Heading(label, 2))
            blocks += [b for b in doc.blocks if not _is_tail(b)]
    tail = (
        ("Assumptions", _unique([a for p in parts for a in p.assumptions])),
        ("Cautions", _unique([c for p in parts for c in p.cautions])),
        ("References", _unique([r for p in parts for r in p.references])),
    )
    for heading, values in tail:
        if values:
            blocks += [Heading(heading), Bullets("", values)]
    blocks += [Heading("Reproduce"), Code(reproduce.command)]
    if reproduce.inputs:
        blocks.append(Bullets("Each result's inputs", reproduce.inputs))
    stamp = ", ".join(f"{k} {v}" for k, v in versions().items())
    blocks.append(Prose((f"Computed with {stamp}.",)))
    return Document(TITLE, tuple(blocks))


def _is_tail(block: Block) -> bool:
    """Each estimate's notes stay under it; its standing cautions are said once, at the end."""
    return isinstance(block, Bullets) and block.heading == "Cautions"


def write_report(
    results: Sequence[tuple[str, Any]],
    folder: str | Path,
    reproduce: Reproduce,
    worker: FigureWorker | None = None,
) -> dict[str, Path]:
    """Write the report folder for labelled results of any family; returns the files
    written, by role ("folder", "md", "html", "tex", "json"). With a `worker` (a second
    process, started early), the figures are drawn by both processes at once."""
    out = Path(folder)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:  # a file on the way, no permission, a read-only disk: the user's
        from ..common.errors import InputError

        why = err.strerror or type(err).__name__
        raise InputError(
            f"`folder`: the folder cannot be made there ({why}); got {str(folder)!r}", "folder"
        ) from None
    items = [ReportItem(k, label, result) for k, (label, result) in enumerate(results, 1)]
    grouped = parts_of(items)
    parts = [part for part, _ in grouped]
    taken: set[str] = set()
    plans = [_planned(part, out, taken) for part in parts]
    draw_all([(figure.draw, paths) for plan in plans for figure, paths in plan], worker)
    images = [[Image(paths[0], figure.caption) for figure, paths in plan] for plan in plans]
    document = report_document(parts, images, reproduce)

    _write_text(out / "report.md", markdown_page(document))
    _write_text(out / "report.html", html_page(document))
    _write_text(out / "tables.tex", document.render("latex", tables_only=True) + "\n")
    data = {
        "estimates": _entries(grouped, len(items)),
        "methods_text": "\n\n".join(p.methods for p in parts if p.methods),
        "results_text": "\n\n".join(r for p in parts for r in p.results),
        "references": list(_unique([r for p in parts for r in p.references])),
        "command": reproduce.command,
        "versions": versions(),
    }
    text = json.dumps(plain(data), indent=2, ensure_ascii=False) + "\n"
    _write_text(out / "report.json", text)
    return {"folder": out, "md": out / "report.md", "html": out / "report.html",
            "tex": out / "tables.tex", "json": out / "report.json"}  # fmt: skip


def _write_text(path: Path, text: str) -> None:
    """Write whole or not at all: a temporary file beside the target, renamed into place."""
    from .atomic import write_text

    write_text(path, text)


def simple_part(
    family: str,
    items: Sequence[tuple[str, Any]],
    methods: str,
    *,
    assumptions: Sequence[str] = (),
    references: Sequence[str] = (),
) -> ReportPart:
    """A family's section built from each result's own Document: its sentences as the
    Results text, its tables and notes under its label, its figures drawn once a result.
    For families whose report needs no table across estimates."""
    results, details, entries, figures, cautions = [], [], [], [], []
    for k, item in enumerate(items, 1):
        label, result = item
        number = getattr(item, "number", k)
        doc = result.document()
        said = " ".join(doc.sentences)
        if said:
            results.append(f"{label}: {said}")
        details.append((label, doc))
        entries.append({"label": label, "family": family, **result.to_dict()})
        cautions += list(getattr(result, "cautions", ()))
        for drawn in doc.figures:
            figures.append(Figure(f"{drawn.key}_{number}", f"{label}: {drawn.caption}",
                                  drawn.draw))  # fmt: skip
    return ReportPart(
        family=family,
        methods=methods,
        results=tuple(results),
        figures=tuple(figures),
        details=tuple(details),
        entries=tuple(entries),
        assumptions=tuple(assumptions),
        cautions=_unique(cautions),
        references=tuple(references),
    )


__all__ = ["ReportItem", "ReportPart", "Reproduce", "simple_part", "versions", "write_report"]
