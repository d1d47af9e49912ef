"""The tipping-point grid: bias-adjusted values over a grid of confounder strengths."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..common import notes as standing
from ..common.results import Result, plain, rows_of_layout
from ..common.scales import RATIO_SCALES

#: The exact set's kinds, by code (see `tipping.exact.monotone_set`).
KIND_NAMES = {0: "never", 1: "always", 2: "from", 3: "up_to", 4: "between", 5: "outside"}


@dataclass(frozen=True, eq=False, repr=False)
class TippingGrid(Result):
    """A grid of bias-adjusted results and where they tip, with the inputs behind them."""

    kind: str  # "binary", "bounding" or "partial-r2"
    scale: str
    estimate: float
    ci: tuple[float, float] | None
    target: float
    axes: tuple[tuple[str, np.ndarray], ...]
    cells: dict  # name -> array of the grid's shape (bias_adjusted_* and extras)
    reach_estimate: np.ndarray
    reach_ci: np.ndarray | None
    # "estimate"/"ci" -> the exact set of values of the solved parameter that reach the target:
    # "kind" (see KIND_NAMES), "low" and "high" (NaN where open or empty), grid shape less it
    exact: dict
    notes: tuple[str, ...] = ()
    cautions: tuple[str, ...] = standing.TIPPING
    extra: dict = field(default_factory=dict)  # e.g. the E-values of the bounding view
    # "estimate"/"ci" -> the grid's own condition (with its tolerance) at values of the solved
    # parameter, an array over the other cells: decides how an exact set's ends are printed
    tips: dict = field(default_factory=dict)
    ci_level: float = 0.95
    is_scalar = False
    _repr_fields = ("kind", "scale", "estimate", "ci", "shape")
    presenter = "sensitivity.tipping.present"

    # ----------------------------------------------------------------- structure
    @property
    def shape(self) -> tuple[int, ...]:
        return tuple(len(v) for _, v in self.axes)

    @property
    def varying(self) -> list[int]:
        return [i for i, (_, v) in enumerate(self.axes) if len(v) > 1]

    @property
    def solved(self) -> int | None:
        """Axis solved for in the tipping points: the last varying one."""
        return self.varying[-1] if self.varying else None

    @property
    def level(self) -> str:
        """The interval's level as text: from alpha in the partial-r2 view (1 - 1e-17 is 1)."""
        from ..common.levels import level_text

        if "alpha" in self.extra:
            return level_text(alpha=self.extra["alpha"])
        return level_text(self.ci_level)

    @property
    def n_rows(self) -> int:
        return int(np.prod(self.shape))

    def reduced_shape(self, j: int) -> tuple[int, ...]:
        return tuple(n for i, n in enumerate(self.shape) if i != j)

    @property
    def target_is_null(self) -> bool:
        return self.target == (1.0 if self.scale in RATIO_SCALES else 0.0)

    # ----------------------------------------------------------------- export
    def columns(self) -> dict[str, np.ndarray]:
        """Long format as columns (one entry a cell, first axis slowest)."""
        mesh = np.meshgrid(*[v for _, v in self.axes], indexing="ij")
        out = {name: m.ravel() for (name, _), m in zip(self.axes, mesh, strict=True)}
        out |= {k: np.broadcast_to(v, self.shape).ravel() for k, v in self.cells.items()}
        out["reaches_target"] = np.asarray(self.reach_estimate).ravel()
        if self.reach_ci is not None:
            out["ci_reaches_target"] = np.asarray(self.reach_ci).ravel()
        return out

    def tipping_points(self) -> list[dict]:
        """For each value of the other varying axes, the least value of the solved axis."""
        if "_tipping_points" not in self.__dict__:  # worked out once (the JSON, the document)
            object.__setattr__(self, "_tipping_points", self._find_tipping_points())
        return [{k: dict(v) if isinstance(v, dict) else v for k, v in row.items()}
                for row in self.__dict__["_tipping_points"]]  # fmt: skip

    def _find_tipping_points(self) -> list[dict]:
        j = self.solved
        if j is None:
            return []
        name, values = self.axes[j]
        others = [i for i in self.varying if i != j]
        out = []
        reach = {"estimate": self.reach_estimate, "ci": self.reach_ci}
        least = {}
        for key, r in reach.items():
            if r is None:
                continue
            any_hit = r.any(axis=j)
            first = np.take(values, np.argmax(r, axis=j))
            least[key] = np.where(any_hit, first, np.nan)
        grid_shape = [len(self.axes[i][1]) for i in others]
        for idx in np.ndindex(*grid_shape) if others else [()]:
            full = [0] * len(self.axes)
            for i, k in zip(others, idx, strict=True):
                full[i] = k
            pos = full[:j] + full[j + 1 :]  # index into arrays that lack the solved axis
            row: dict[str, Any] = {
                self.axes[i][0]: float(self.axes[i][1][k]) for i, k in zip(others, idx, strict=True)
            }
            row["parameter"] = name
            for key in ("estimate", "ci"):
                if key in least:
                    row[key] = least[key][tuple(pos)]
                    exact = self.exact[key]
                    at = tuple(pos)
                    row[f"{key}_exact"] = {
                        "reached": KIND_NAMES[int(exact["kind"][at])],
                        "low": exact["low"][at],
                        "high": exact["high"][at],
                    }
            out.append(plain(row))
        return out

    def _head(self) -> dict:
        return plain(
            {
                "kind": self.kind,
                "scale": self.scale,
                "estimate": self.estimate,
                "ci": None if self.ci is None else list(self.ci),
                # the level of `ci` (1 - alpha in the partial-r2 view, whose interval is worked)
                "ci_level": self.ci_level
                if self.ci is not None or self.kind == "partial-r2"
                else None,
                "target": self.target,
                "parameters": {n: v for n, v in self.axes},
                **self.extra,
            }
        )

    def row_layout(self) -> list[tuple[str, Any]]:
        """How a JSON row is built from `columns()` (see `output.writers.json_rows`)."""
        cols = self.columns()
        names = [n for n, _ in self.axes]
        extras = [
            k
            for k in cols
            if k not in names
            and not k.startswith("bias_adjusted_")
            and not k.endswith("reaches_target")
        ]
        adjusted: list[tuple[str, Any]] = [("estimate", "bias_adjusted_estimate")]
        adjusted += [(k, f"bias_adjusted_{k}") for k in ("se", "t") if f"bias_adjusted_{k}" in cols]
        adjusted.append(("ci", ("bias_adjusted_ci_lower", "bias_adjusted_ci_upper")))
        layout: list[tuple[str, Any]] = [(k, k) for k in names + extras]
        layout.append(("bias_adjusted", adjusted))
        layout.append(("reaches_target", "reaches_target"))
        if "ci_reaches_target" in cols:
            layout.append(("ci_reaches_target", "ci_reaches_target"))
        return layout

    def to_dict(self) -> dict:
        """The JSON object with `rows` as a list of dicts (the CLI streams them instead)."""
        return self._head() | {
            "rows": rows_of_layout(self.columns(), self.row_layout()),
            "tipping_points": self.tipping_points(),
            "notes": list(self.all_notes()),
        }

    def json_head(self) -> dict:
        """The JSON object without `rows`: what a streamed writer puts around them."""
        return self._head() | {
            "tipping_points": self.tipping_points(),
            "notes": list(self.all_notes()),
        }
