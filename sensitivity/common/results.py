"""The base of every result: a short repr, identity comparison, and views of one Document.

Each family's result class (a frozen dataclass with ``eq=False, repr=False``) holds numbers
and names its presenter (`presenter`: the family's `present` module, set by the family in
its own result class, so this module knows no family). The presenter's `document(result)`
is the Document that the text summary, the notebook view and the report all render, so they
cannot disagree; its `report_part(items)` is the family's section of a manuscript report.
"""

from __future__ import annotations

import math
from importlib import import_module
from typing import Any

import numpy as np


def plain(value: Any) -> Any:
    """JSON-ready plain Python: 0-d arrays to float, arrays to lists, NaN and ±inf to None.

    Infinities arise only where a quantity is undefined (a t value with a zero standard
    error under a capped benchmark); the result's flags say why, and JSON has no infinity.
    """
    if isinstance(value, dict):
        return {k: plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    if isinstance(value, np.ndarray):
        if value.ndim == 0:
            return plain(value.item())
        if value.dtype.kind == "f":
            finite = np.isfinite(value)
            if finite.all():
                return value.tolist()
            obj = value.astype(object)
            obj[~finite] = None
            return obj.tolist()
        if value.dtype.kind in "biu":
            return value.tolist()
        return [plain(v) for v in value.tolist()]
    if isinstance(value, (np.bool_, bool)):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return value if math.isfinite(value) else None
    return value


def _brief(value: Any) -> str:
    if isinstance(value, np.ndarray):
        if value.ndim == 0:
            return f"{float(value):.4g}"
        return f"array[{value.size}]"
    if isinstance(value, float):
        return f"{value:.4g}"
    if isinstance(value, tuple) and len(value) == 2 and not isinstance(value[0], tuple):
        return f"({_brief(value[0])}, {_brief(value[1])})"
    return repr(value)


class Result:
    """What every result offers; subclasses are frozen dataclasses holding numbers.

    `document()` is built by the family's `present` module; `summary()`, `str()` and the
    notebook view render it. `_repr_fields` names the fields `repr()` shows on one line.
    """

    _repr_fields: tuple[str, ...] = ()
    is_scalar: bool = True
    #: The module that presents this result (``document``, ``report_part``), named by the
    #: family in its own result class.
    presenter: str = ""

    def __repr__(self) -> str:
        parts = [f"{name}={_brief(getattr(self, name))}" for name in self._repr_fields]
        return f"<{type(self).__name__} {' '.join(parts)}>"

    @classmethod
    def presenting_module(cls) -> Any:
        """The family's present module (imported on first use: it pulls in the renderers)."""
        if not cls.presenter:
            raise TypeError(f"{cls.__name__} names no presenter")
        return import_module(cls.presenter)

    @property
    def family(self) -> str:
        """The family's short name: the folder of its presenter."""
        return self.presenter.split(".")[-2]

    def document(self) -> Any:
        """The Document every view of this result renders (built by the family's present)."""
        return self.presenting_module().document(self)

    #: The fields that were given to compute this result (for a report's Reproduce section).
    _input_fields: tuple[str, ...] = ()

    def inputs(self) -> str:
        """The inputs behind this result, in one line (its repr when none are named)."""
        if not self._input_fields:
            return repr(self)
        shown = []
        for name in self._input_fields:
            value = getattr(self, name, None)
            if value is not None:
                shown.append(f"{name}={_brief(value)}")
        return f"{type(self).__name__}({', '.join(shown)})"

    def report_parts(self) -> tuple[Result, ...]:
        """The results this one puts into a report, each presented by its own family (a
        regression coefficient's partial-R² result brings its E-value along)."""
        return (self,)

    def summary(self) -> str:
        """The text form: every table, sentence, note and caution."""
        return self.document().render("text")

    def __str__(self) -> str:
        return self.summary()

    def _repr_html_(self) -> str:
        return self.document().render("html")

    def sentence(self) -> str:
        """The paste-ready sentences of this result, joined (the headline first)."""
        return " ".join(self.document().sentences)

    def all_notes(self) -> tuple[str, ...]:
        return tuple(getattr(self, "notes", ())) + tuple(getattr(self, "cautions", ()))

    def to_dict(self) -> dict:  # pragma: no cover - every result defines it
        raise NotImplementedError

    def columns(self) -> dict[str, np.ndarray]:  # pragma: no cover
        raise NotImplementedError

    def to_frame(self) -> Any:
        """The columns as a pandas DataFrame (imports pandas)."""
        import pandas as pd

        return pd.DataFrame({k: np.asarray(v) for k, v in self.columns().items()})

    def records(self) -> list[dict]:
        """Flat rows (one dict a row) from `columns()`, for small tables."""
        cols = {k: plain(np.asarray(v)) for k, v in self.columns().items()}
        cols = {k: (v if isinstance(v, list) else [v]) for k, v in cols.items()}
        n = max((len(v) for v in cols.values()), default=0)
        return [{k: v[i] for k, v in cols.items()} for i in range(n)]


def rows_of_layout(columns: dict[str, np.ndarray], layout: list[tuple[str, Any]]) -> list[dict]:
    """Nested row dicts built from columns by a layout (see `output.writers.json_rows`).

    ``(key, column)`` is a plain value, ``(key, [(key, column), ...])`` a nested object and
    ``(key, (column, column))`` a pair (null when its first column is absent).
    """
    lists = {k: plain(np.asarray(v)) for k, v in columns.items()}
    n = len(next(iter(lists.values()))) if lists else 0

    def build(spec: list[tuple[str, Any]], i: int) -> dict:
        row: dict[str, Any] = {}
        for key, what in spec:
            if isinstance(what, str):
                row[key] = lists[what][i]
            elif isinstance(what, tuple):
                row[key] = [lists[what[0]][i], lists[what[1]][i]] if what[0] in lists else None
            else:
                row[key] = build(what, i)
        return row

    return [build(layout, i) for i in range(n)]
