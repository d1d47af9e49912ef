"""What a screen found: a tally kept batch by batch, so memory stays flat whatever the size."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..common import notes as standing
from ..common.results import Result

#: Rows listed for each reason a row was flagged (the first ones, by row number).
FIRST_ROWS = 5

#: log E-values are tallied on a fixed grid from 0 to 20 (E up to 4.8e8) in steps of 1e-4,
#: for the figure, and for the medians only where the values no longer fit in memory.
_EDGES = 200_000
_TOP = 20.0
#: Values kept per scale (and per estimate or interval) for exact medians: 16 MB each.
EXACT_VALUES = 2_000_000
#: A median read from the grid lies within this relative distance of the exact one (half a
#: bin of 1e-4 in log E, below the grid's top).
GRID_ERROR = float(np.expm1(0.5 * _TOP / _EDGES))


@dataclass(eq=False)
class Tally:
    """Counts kept while batches stream past."""

    threshold: float | None = None
    n_confounders: int = 0
    rows: int = 0
    flagged: dict[str, int] = field(default_factory=dict)
    first_rows: dict[str, list[int]] = field(default_factory=dict)
    scales: dict[str, dict] = field(default_factory=dict)

    def add(self, scale: np.ndarray, kinds: list[str], values: dict[str, np.ndarray],
            states: dict[str, np.ndarray], positions: list[int] | None = None) -> None:  # fmt: skip
        """Count one batch: each row's scale (an index into SCREEN_SCALES, -1 when flagged),
        the flagged rows' kinds of reason (the rule in words, without the row's values, as
        given where each reason is made) and their positions in the batch, the computed
        numbers and the confounder columns' states (2 where the confounder could explain the
        result away)."""
        from .core import SCREEN_SCALES

        start = self.rows
        self.rows += len(scale)
        for k, kind in enumerate(kinds):
            self.flagged[kind] = self.flagged.get(kind, 0) + 1
            first = self.first_rows.setdefault(kind, [])
            if positions is not None and len(first) < FIRST_ROWS:
                first.append(start + int(positions[k]) + 1)
        # every count is one bincount over the rows, by scale (slot 0: flagged rows), with no
        # row selected by a mask: a million rows in a few milliseconds
        slot = scale.astype(np.int64) + 1
        width = len(SCREEN_SCALES) + 1

        def per_scale(where: np.ndarray) -> np.ndarray:
            return np.bincount(np.where(where, slot, 0), minlength=width)

        rows = np.bincount(slot, minlength=width)
        bins = {}
        screened = slot > 0
        for key in ("evalue", "evalue_ci"):
            with np.errstate(invalid="ignore", divide="ignore"):
                idx = np.log(values[key])  # log(v) / _TOP * _EDGES, at most _EDGES, in place
                np.divide(idx, _TOP, out=idx)
                np.multiply(idx, _EDGES, out=idx)
                np.minimum(idx, _EDGES, out=idx)
            finite = np.isfinite(idx)
            finite &= screened
            # bin-major, so the counts are only as long as the largest E-value needs
            spot = idx[finite].astype(np.int64)
            spot *= width
            spot += slot[finite]
            counts = np.bincount(spot, minlength=width)
            bins[key] = np.pad(counts, (0, -counts.size % width)).reshape(-1, width)
            bins[f"{key}_n"] = per_scale(finite)
        if self.threshold is not None:
            ci = values["evalue_ci"]
            with np.errstate(invalid="ignore"):
                bins["below"] = per_scale(np.isfinite(ci) & (ci < self.threshold))
        explains = [
            (per_scale(states[f"confounder_{i}_explains_estimate"] == 2),
             per_scale(states[f"confounder_{i}_explains_ci"] == 2))
            for i in range(1, self.n_confounders + 1)
        ]  # fmt: skip
        regression = per_scale(np.isfinite(values["robustness_value"]))
        for number, code in enumerate(SCREEN_SCALES, 1):
            if not rows[number]:
                continue
            entry = self.scales.setdefault(code, _entry(self.n_confounders))
            # the rows of this scale, for the finite values kept for exact medians (a few
            # scales in a batch: cheaper than sorting the rows by scale)
            mine = np.flatnonzero(slot == number)
            entry["rows"] += int(rows[number])
            for key in ("evalue", "evalue_ci"):
                used = bins[key][:, number]
                if used.size > entry[key].size:
                    entry[key] = np.pad(entry[key], (0, used.size - entry[key].size))
                entry[key][: used.size] += used
                entry[f"{key}_n"] += int(bins[f"{key}_n"][number])
                store = entry[f"{key}_values"]
                if store is not None:
                    kept = np.asarray(values[key], float)[mine]
                    store.append(kept[np.isfinite(kept)])
                    if entry[f"{key}_n"] > EXACT_VALUES:  # no longer kept: read from the grid
                        entry[f"{key}_values"] = None
            if self.threshold is not None:
                entry["below"] += int(bins["below"][number])
            for i, (est, ci) in enumerate(explains):
                entry["explains_estimate"][i] += int(est[number])
                entry["explains_ci"][i] += int(ci[number])
            entry["regression"] += int(regression[number])

    def merge(self, other: Tally) -> Tally:
        """Add the counts of another tally (kept with the same threshold and confounders,
        over other rows: a partition screened elsewhere) to this one; returns this tally.
        The other's first flagged rows are numbered after this one's rows."""
        for kind, rows in other.first_rows.items():
            first = self.first_rows.setdefault(kind, [])
            first += [self.rows + r for r in rows][: max(FIRST_ROWS - len(first), 0)]
        self.rows += other.rows
        for kind, count in other.flagged.items():
            self.flagged[kind] = self.flagged.get(kind, 0) + count
        for code, theirs in other.scales.items():
            mine = self.scales.setdefault(code, _entry(self.n_confounders))
            for key in ("evalue", "evalue_ci"):
                if theirs[key].size > mine[key].size:
                    mine[key] = np.pad(mine[key], (0, theirs[key].size - mine[key].size))
                mine[key][: theirs[key].size] += theirs[key]
            for key in ("rows", "evalue_n", "evalue_ci_n", "below", "regression"):
                mine[key] += theirs[key]
            for key in ("evalue_values", "evalue_ci_values"):  # exact medians while they fit
                n = mine["evalue_n" if key == "evalue_values" else "evalue_ci_n"]
                if mine[key] is None or theirs[key] is None or n > EXACT_VALUES:
                    mine[key] = None
                else:
                    mine[key] = mine[key] + theirs[key]
            for key in ("explains_estimate", "explains_ci"):
                mine[key] = [a + b for a, b in zip(mine[key], theirs[key], strict=True)]
        return self

    def result(self, confounders: tuple, source: str) -> ScreenSummary:
        per_scale = {}
        hist: dict[str, tuple[np.ndarray, np.ndarray]] = {}
        for code, e in sorted(self.scales.items()):
            per_scale[code] = {
                "rows": e["rows"],
                "median_evalue": _median(e["evalue"], e["evalue_n"], e["evalue_values"]),
                "median_evalue_ci": _median(
                    e["evalue_ci"], e["evalue_ci_n"], e["evalue_ci_values"]
                ),  # fmt: skip
                "with_interval": e["evalue_ci_n"],
                "below_threshold": e["below"] if self.threshold is not None else None,
                "explains_estimate": list(e["explains_estimate"]),
                "explains_ci": list(e["explains_ci"]),
                "regression_rows": e["regression"],
            }
            est, ci = (np.pad(e[k], (0, _EDGES + 1 - e[k].size)) for k in ("evalue", "evalue_ci"))
            hist[code] = (est, ci)
        gridded = [code for code, e in sorted(self.scales.items())
                   if e["evalue_values"] is None or e["evalue_ci_values"] is None]  # fmt: skip
        if gridded:
            how = (
                f"Medians are exact (the middle value, or the mean of the two middle values) "
                f"except for {', '.join(gridded)}, with more than {EXACT_VALUES:,} values: "
                f"read from a grid of log E-values, within {GRID_ERROR:.1e} (relative) of the "
                "exact median below E = 4.8e8."
            )
        else:
            how = (
                "Medians are exact (the middle value, or the mean of the two middle values for "
                "an even count)."
            )
        return ScreenSummary(
            notes=(how, ScreenSummary.notes[-1]),
            source=source,
            rows=self.rows,
            flagged=dict(sorted(self.flagged.items(), key=lambda kv: -kv[1])),
            first_rows={k: list(v) for k, v in self.first_rows.items()},
            per_scale=per_scale,
            threshold=self.threshold,
            confounders=tuple(confounders),
            histograms=hist,
        )


def _entry(k: int) -> dict:
    return {
        "rows": 0,
        "evalue": np.zeros(0, np.int64),  # grown to the largest bin used
        "evalue_ci": np.zeros(0, np.int64),
        "evalue_n": 0,
        "evalue_ci_n": 0,
        "evalue_values": [],  # the values themselves while they fit (None after)
        "evalue_ci_values": [],
        "below": 0,
        "explains_estimate": [0] * k,
        "explains_ci": [0] * k,
        "regression": 0,
    }


def _median(counts: np.ndarray, n: int, values: list | None = None) -> float | None:
    """The median by the midpoint rule: exact from `values` when kept, else from the grid
    (the mean of the two middle bins' centres for an even count)."""
    if n == 0:
        return None
    if values is not None:
        return float(np.median(np.concatenate(values)))
    cum = np.cumsum(counts)

    def at(rank: int) -> float:  # the value of rank `rank` (1-based), as its bin's centre
        i = int(np.searchsorted(cum, rank))
        return _TOP if i >= _EDGES else (i + 0.5) / _EDGES * _TOP

    low, high = at((n + 1) // 2), at(n // 2 + 1)
    return float((np.exp(low) + np.exp(high)) / 2)  # each within GRID_ERROR, so their mean


@dataclass(frozen=True, eq=False, repr=False)
class ScreenSummary(Result):
    """The screen's summary: rows read, flags by reason, and per scale the E-values found."""

    source: str
    rows: int
    flagged: dict[str, int]
    per_scale: dict[str, dict]
    threshold: float | None
    confounders: tuple[tuple[float, float], ...]
    # per scale, counts of log E-values (estimate, interval) on the grid of `log_edges()`
    histograms: dict[str, tuple[np.ndarray, np.ndarray]] = field(default_factory=dict)
    # per reason, the first rows flagged for it (1 = the first row after the header)
    first_rows: dict[str, list[int]] = field(default_factory=dict)
    cautions: tuple[str, ...] = standing.EVALUE
    notes: tuple[str, ...] = (
        "Medians are exact (the middle value, or the mean of the two middle values for an even "
        "count).",
        "Interval E-values are of each row's own interval as published (95% unless the row "
        "says otherwise; 95% for an interval computed from an se).",
    )
    is_scalar = False
    _repr_fields = ("source", "rows")
    presenter = "sensitivity.screen.present"

    @staticmethod
    def log_edges() -> np.ndarray:
        """Upper edges of the log E-value bins of `histograms` (the last bin is open)."""
        return (np.arange(_EDGES + 1) + 1) / _EDGES * _TOP

    @property
    def n_flagged(self) -> int:
        return sum(self.flagged.values())

    def to_dict(self) -> dict:
        return {
            "source": self.source,
            "rows": self.rows,
            "flagged": self.n_flagged,
            "flagged_by_reason": self.flagged,
            "first_flagged_rows": self.first_rows,
            "threshold": self.threshold,
            "confounders": [list(c) for c in self.confounders],
            "scales": self.per_scale,
            "notes": list(self.all_notes()),
        }

    def columns(self) -> dict[str, np.ndarray]:
        codes = list(self.per_scale)
        return {
            "scale": np.array(codes, dtype=object),
            "rows": np.array([self.per_scale[c]["rows"] for c in codes]),
            "median_evalue": np.array(
                [np.nan if (m := self.per_scale[c]["median_evalue"]) is None else m for c in codes]
            ),
            "median_evalue_ci": np.array(
                [
                    np.nan if (m := self.per_scale[c]["median_evalue_ci"]) is None else m
                    for c in codes
                ]
            ),  # fmt: skip
        }
