"""What a screen found: a tally kept batch by batch, so memory stays flat whatever the size."""

from __future__ import annotations

import tempfile
import weakref
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..common import notes as standing
from ..common.results import Result

#: Rows listed for each reason a row was flagged (the first ones, by row number).
FIRST_ROWS = 5

#: log E-values are tallied on a fixed grid from 0 to 20 (E up to 4.8e8) in steps of 1e-4,
#: for the figure.
_EDGES = 200_000
_TOP = 20.0
#: Values held in memory per scale (and per estimate or interval) for the exact medians, 1 MiB
#: each; beyond, they go to a temporary file (`Values`), read back a piece of this size at a
#: time.
HELD_VALUES = 131_072


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
        # the E-values themselves are kept per scale (`Values`): the histograms of the figure
        # and the exact medians come from them at the end (`result`); counted here, the
        # values each row has (+inf included: it goes to the histogram's last bin)
        given = {}
        for key in ("evalue", "evalue_ci"):
            with np.errstate(invalid="ignore"):
                given[key] = per_scale(values[key] > 0)
        if self.threshold is not None:
            ci = values["evalue_ci"]
            with np.errstate(invalid="ignore"):
                below = per_scale(np.isfinite(ci) & (ci < self.threshold))
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
            # the rows of this scale, for the finite values kept (a few scales in a batch:
            # cheaper than sorting the rows by scale)
            mine = np.flatnonzero(slot == number)
            entry["rows"] += int(rows[number])
            for key in ("evalue", "evalue_ci"):
                entry[f"{key}_n"] += int(given[key][number])
                kept = np.asarray(values[key], float)[mine]
                entry[f"{key}_values"].append(kept[np.isfinite(kept)])
            if self.threshold is not None:
                entry["below"] += int(below[number])
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
            for key in ("rows", "evalue_n", "evalue_ci_n", "below", "regression"):
                mine[key] += theirs[key]
            for key in ("evalue_values", "evalue_ci_values"):  # for the exact medians
                mine[key].extend(theirs[key])
            for key in ("explains_estimate", "explains_ci"):
                mine[key] = [a + b for a, b in zip(mine[key], theirs[key], strict=True)]
        return self

    def result(self, confounders: tuple, source: str) -> ScreenSummary:
        per_scale = {}
        hist: dict[str, tuple[np.ndarray, np.ndarray]] = {}
        for code, e in sorted(self.scales.items()):
            # each store's histogram (it guides the median), then with the infinite values,
            # which no store keeps, in its last bin
            stores = [e[f"{key}_values"] for key in ("evalue", "evalue_ci")]
            est, ci = (store.histogram() for store in stores)
            medians = [store.median(h) for store, h in zip(stores, (est, ci), strict=True)]
            for h, key, store in zip((est, ci), ("evalue", "evalue_ci"), stores, strict=True):
                h[_EDGES] += e[f"{key}_n"] - store.count
            per_scale[code] = {
                "rows": e["rows"],
                "median_evalue": medians[0],
                "median_evalue_ci": medians[1],
                "with_interval": e["evalue_ci_n"],
                "below_threshold": e["below"] if self.threshold is not None else None,
                "explains_estimate": list(e["explains_estimate"]),
                "explains_ci": list(e["explains_ci"]),
                "regression_rows": e["regression"],
            }
            hist[code] = (est, ci)
        return ScreenSummary(
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
        "evalue_n": 0,  # the rows with an E-value (finite or not)
        "evalue_ci_n": 0,
        "evalue_values": Values(),  # the values themselves, for exact medians
        "evalue_ci_values": Values(),
        "below": 0,
        "explains_estimate": [0] * k,
        "explains_ci": [0] * k,
        "regression": 0,
    }


def _temporary():  # an anonymous file: no name in the folder, gone when closed or at exit
    # (the system's temporary folder, TMPDIR)
    return tempfile.TemporaryFile(buffering=0)


class Values:
    """Numbers kept for an exact median with flat memory: up to `HELD_VALUES` in memory, the
    rest appended (raw float64) to an anonymous temporary file, closed when this store is
    collected or at exit (on POSIX its name goes as it is made, so nothing is left behind,
    also after an error, Ctrl-C or a kill). Where no temporary file can be made or written,
    the values stay in memory: the median is exact either way. Pickles as its values."""

    def __init__(self) -> None:
        self.count = 0
        self._held: list[np.ndarray] = []
        self._n_held = 0
        self._file: Any = None  # the anonymous temporary file, once values go to it
        self._spilled = 0  # values in the file (a failed write's part beyond is never read)
        self._spill = True

    def append(self, values: np.ndarray) -> None:
        if not values.size:
            return
        self._held.append(np.asarray(values, float))
        self._n_held += values.size
        self.count += values.size
        if self._spill and self._n_held > HELD_VALUES:
            self._write()

    def extend(self, other: Values) -> None:
        for piece in other.pieces():
            self.append(piece)

    def _write(self) -> None:
        data = np.concatenate(self._held)
        try:
            if self._file is None:
                self._file = _temporary()
                self._closer = weakref.finalize(self, self._file.close)
            self._file.seek(self._spilled * 8)
            view = memoryview(data.data).cast("B")
            while view:
                view = view[self._file.write(view) :]
        except OSError:  # no room for a temporary file: the values stay in memory
            self._spill = False
            self._held = [data]
            return
        self._spilled += data.size
        self._held, self._n_held = [], 0

    def pieces(self) -> Iterator[np.ndarray]:
        """The values in pieces of at most `HELD_VALUES` (new arrays from the file)."""
        spilled, held = self._spilled, list(self._held)
        for start in range(0, spilled, HELD_VALUES):
            piece = np.empty(min(HELD_VALUES, spilled - start))
            view = memoryview(piece.data).cast("B")
            self._file.seek(start * 8)
            while view:
                got = self._file.readinto(view)
                if not got:
                    raise OSError("the screen's temporary file of E-values came back short")
                view = view[got:]
            yield piece
        yield from held

    def values(self) -> np.ndarray:
        return np.concatenate([np.zeros(0), *self.pieces()])

    def __getstate__(self) -> dict:
        return {"values": self.values()}

    def __setstate__(self, state: dict) -> None:
        Values.__init__(self)
        self.append(state["values"])

    def histogram(self) -> np.ndarray:
        """How many values lie in each bin of the log E-value grid (`_bins`), in pieces."""
        counts = np.zeros(_EDGES + 1, np.int64)
        for piece in self.pieces():
            counts += np.bincount(_bins(piece), minlength=_EDGES + 1)
        return counts

    def median(self, histogram: np.ndarray | None = None) -> float | None:
        """The median by the midpoint rule (numpy's: the mean of the two middle values for an
        even count), exact: in memory as numpy computes it, or from the file by selection
        (within the bin of `histogram`, this store's own, that holds each middle value,
        where given and that bin is small enough; else by `_ranked`)."""
        if not self.count:
            return None
        if not self._spilled:
            return float(np.median(np.concatenate(self._held)))
        ranks = ((self.count - 1) // 2, self.count // 2)
        found = None if histogram is None else _in_bins(self, ranks, histogram)
        low, high = found or _ranked(self, ranks)
        return float(np.mean(np.array([low, high]))) if self.count % 2 == 0 else low


def _bins(values: np.ndarray) -> np.ndarray:
    """Each E-value's bin on the log grid: log(v) / _TOP * _EDGES, at most _EDGES, whole (the
    last bin is open); the values finite, at least 1."""
    idx = np.log(values)
    np.divide(idx, _TOP, out=idx)
    np.multiply(idx, _EDGES, out=idx)
    np.minimum(idx, _EDGES, out=idx)
    return idx.astype(np.int64)


def _in_bins(store: Values, ranks: tuple[int, ...], histogram: np.ndarray) -> list[float] | None:
    """The values of the given ranks (0 = the smallest), each exact: the bin holding each rank
    found from the store's `histogram`, then that bin's values gathered in one pass and
    partitioned; None where a bin holds more than `HELD_VALUES` (or the histogram does not
    count the store's values)."""
    cum = np.cumsum(histogram)
    if not cum.size or int(cum[-1]) != store.count:
        return None
    wanted: dict[int, list[int]] = {}
    for r in ranks:
        wanted.setdefault(int(np.searchsorted(cum, r, side="right")), []).append(r)
    if any(histogram[b] > HELD_VALUES for b in wanted):
        return None
    parts: dict[int, list[np.ndarray]] = {b: [] for b in wanted}
    for piece in store.pieces():
        bins = _bins(piece)
        for b in wanted:
            parts[b].append(piece[bins == b])
    found = {}
    for b, rs in wanted.items():
        below = int(cum[b - 1]) if b else 0
        within = [r - below for r in rs]
        chosen = np.partition(np.concatenate(parts[b]), within)
        for r, k in zip(rs, within, strict=True):
            found[r] = float(chosen[k])
    return [found[r] for r in ranks]


_SIGN = np.uint64(1 << 63)


def _keys(x: np.ndarray) -> np.ndarray:
    """Unsigned integers in the order of the floats `x` (no NaN)."""
    bits = x.view(np.uint64)
    return np.where(bits >= _SIGN, ~bits, bits | _SIGN)


def _ranked(store: Values, ranks: tuple[int, ...]) -> list[float]:
    """The values of the given ranks (0 = the smallest), each exact, in streamed passes with
    bounded memory: a radix selection on the values' bits, 16 at a time (the bucket holding
    each rank found from counts), until a rank's bucket holds at most `HELD_VALUES` values
    (then gathered and partitioned) or a single value. Two or three passes; five at most."""
    # per rank: its candidates are the values whose keys start with `prefix` (`bits` long);
    # `below` values lie under them, `size` among them
    state = {r: {"prefix": 0, "bits": 0, "below": 0, "size": store.count} for r in ranks}
    found: dict[int, float] = {}
    while len(found) < len(state):
        groups: dict[tuple[int, int], list[int]] = {}
        for r, s in state.items():
            if r not in found:
                groups.setdefault((s["prefix"], s["bits"]), []).append(r)
        gather: dict[tuple[int, int], list[np.ndarray]] = {
            g: [] for g, rs in groups.items() if state[rs[0]]["size"] <= HELD_VALUES
        }
        counts = {g: np.zeros(1 << 16, np.int64) for g in groups if g not in gather}
        for piece in store.pieces():
            keys = _keys(piece)
            for prefix, bits in groups:
                if bits:
                    inside = (keys >> np.uint64(64 - bits)) == np.uint64(prefix)
                    mine, theirs = keys[inside], piece[inside]
                else:
                    mine, theirs = keys, piece
                if (prefix, bits) in gather:
                    gather[prefix, bits].append(theirs)
                else:
                    nxt = (mine >> np.uint64(48 - bits)) & np.uint64(0xFFFF)
                    counts[prefix, bits] += np.bincount(nxt.astype(np.intp), minlength=1 << 16)
        for g, parts in gather.items():
            within = [r - state[r]["below"] for r in groups[g]]
            chosen = np.partition(np.concatenate(parts), within)
            for r, k in zip(groups[g], within, strict=True):
                found[r] = float(chosen[k])
        for g, tally in counts.items():
            cum = np.cumsum(tally)
            for r in groups[g]:
                s = state[r]
                bucket = int(np.searchsorted(cum, r - s["below"], side="right"))
                s["below"] += int(cum[bucket - 1]) if bucket else 0
                s["size"] = int(tally[bucket])
                s["prefix"], s["bits"] = (s["prefix"] << 16) | bucket, s["bits"] + 16
                if s["bits"] == 64:  # one key: one value
                    key = np.array([s["prefix"]], np.uint64)
                    raw = np.where(key >= _SIGN, key ^ _SIGN, ~key)
                    found[r] = float(raw.view(float)[0])
    return [found[r] for r in ranks]


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
