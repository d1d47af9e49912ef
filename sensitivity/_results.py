"""What every result object shares: plain-number export, text summary and notebook display."""

from __future__ import annotations

import math

import numpy as np


def plain(value):
    """JSON-ready plain Python: 0-d arrays to float, arrays to lists, NaN and ±inf to None.

    Infinities arise only where a quantity is undefined (a t value with a zero standard
    error under a capped benchmark); the result's flags say why, and JSON has no infinity.
    """
    if isinstance(value, dict):
        return {k: plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    if isinstance(value, np.ndarray):
        return plain(value.item()) if value.ndim == 0 else [plain(v) for v in value.tolist()]
    if isinstance(value, (np.bool_, bool)):
        return bool(value)
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return value if math.isfinite(value) else None
    return value


class Displayable:
    """Mixin: `summary()` is the text form; `__str__` and notebooks use it."""

    def summary(self) -> str:  # pragma: no cover - every result defines it
        raise NotImplementedError

    def table(self):  # pragma: no cover
        raise NotImplementedError

    def __str__(self) -> str:
        return self.summary()

    def _repr_html_(self) -> str:
        from .tables import render

        html = render(self.table(), "html")
        notes = "".join(f"<li>{_escape(n)}</li>" for n in self.all_notes())
        sentence = getattr(self, "sentence", None)
        lead = f"<p>{_escape(sentence())}</p>" if callable(sentence) else ""
        return f"<div>{html}{lead}<ul style='font-size:90%'>{notes}</ul></div>"

    def all_notes(self) -> tuple[str, ...]:
        return tuple(getattr(self, "notes", ())) + tuple(getattr(self, "cautions", ()))


def _escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
