"""The screen's exact medians with flat memory (issue 26): the E-values kept for the medians
beyond `HELD_VALUES` go to an anonymous temporary file, and the median is found from it by a
streamed selection.

Reference: numpy's median (`np.median`, the midpoint rule for an even count) of all the values
at once, compared bit for bit. The values are drawn to reach the selection's corners: ties,
exactly 1 (the interval E-value of a null result), the edges of the summary's log grid, values
above the grid's top (E = 4.8e8) up to 1e300, even and odd counts, several scales and batches,
with the values held in memory forced down to a few so that the file is used.
"""

from __future__ import annotations

import gc
import io
import pickle
from contextlib import contextmanager

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.screen import result as screen_result
from sensitivity.screen.core import SCREEN_SCALES
from sensitivity.screen.result import Tally, Values

_GRID = 20.0 / 200_000  # the width of the summary's log-grid bins
evalue = st.one_of(
    st.sampled_from([1.0, 1.0 + 2**-52, 1.5, 2.0, 4.8e8, 1e300]),  # ties, 1, the top
    st.integers(0, 200_000).map(lambda k: float(np.exp(k * _GRID))),  # the grid's edges
    st.floats(1.0, 1e300),
    st.floats(1.0, 3.0),
)
batches = st.lists(st.lists(evalue, max_size=25), min_size=1, max_size=6)


@contextmanager
def held(n: int):
    saved = screen_result.HELD_VALUES
    screen_result.HELD_VALUES = n
    try:
        yield
    finally:
        screen_result.HELD_VALUES = saved


def same(got: float | None, values: list[float]) -> bool:
    if not values:
        return got is None
    exact = np.median(np.array(values))
    return np.float64(got).view(np.int64) == exact.view(np.int64)  # bit for bit


@settings(max_examples=300, deadline=None)
@given(batches, st.integers(1, 12), st.booleans())
def test_the_median_is_numpys_median_of_all_values(parts, budget, travels):
    with held(budget):
        store = Values()
        for part in parts:
            store.append(np.array(part, float))
        if travels:  # pickled, as a partition's tally between processes
            store = pickle.loads(pickle.dumps(store))
        everything = [v for p in parts for v in p]
        assert store.count == len(everything)
        assert same(store.median(), everything)
        # guided by the store's histogram (the bins holding the middle values), as the
        # summary finds it: the same value to the bit
        assert same(store.median(store.histogram()), everything)
        assert np.array_equal(store.values(), np.array(everything, float))


@settings(max_examples=150, deadline=None)
@given(st.lists(st.tuples(st.integers(-1, len(SCREEN_SCALES) - 1), evalue,
                          st.one_of(evalue, st.just(float("nan")))),
                max_size=80),
       st.integers(1, 40), st.integers(1, 10), st.integers(1, 4))  # fmt: skip
def test_tallies_in_batches_and_merged_keep_numpys_median(rows, batch, budget, parts):
    """Rows of several scales (-1: flagged), counted in batches, by one tally or by several
    merged (some pickled on the way): each scale's medians are numpy's of its rows."""

    def tally_of(chunk: list) -> Tally:
        tally = Tally()
        for start in range(0, len(chunk), batch):
            piece = chunk[start : start + batch]
            scale = np.array([r[0] for r in piece], np.int64)
            est = np.array([r[1] if r[0] >= 0 else np.nan for r in piece])
            ci = np.array([r[2] if r[0] >= 0 else np.nan for r in piece])
            numbers = {"evalue": est, "evalue_ci": ci,
                       "robustness_value": np.full(len(piece), np.nan)}  # fmt: skip
            tally.add(scale, ["bad"] * int((scale < 0).sum()), numbers, {})
        return tally

    with held(budget):
        whole = tally_of(rows).result((), "t")
        cut = np.linspace(0, len(rows), parts + 1).astype(int)
        merged = Tally()
        for k, (a, b) in enumerate(zip(cut[:-1], cut[1:], strict=True)):
            part = tally_of(rows[a:b])
            merged.merge(pickle.loads(pickle.dumps(part)) if k % 2 else part)
        merged = merged.result((), "t")
    for code_index, code in enumerate(SCREEN_SCALES):
        mine = [r for r in rows if r[0] == code_index]
        if not mine:
            assert code not in whole.per_scale and code not in merged.per_scale
            continue
        est = [r[1] for r in mine]
        ci = [r[2] for r in mine if np.isfinite(r[2])]
        for summary in (whole, merged):
            entry = summary.per_scale[code]
            assert same(entry["median_evalue"], est), code
            assert same(entry["median_evalue_ci"], ci), code
            assert entry["with_interval"] == len(ci)
    assert whole.to_dict() == merged.to_dict()
    # the figure's histograms: each row's E-value on the log grid (the last bin open),
    # counted here row by row
    for code_index, code in enumerate(SCREEN_SCALES):
        mine = [r for r in rows if r[0] == code_index]
        for k, key in enumerate((1, 2)):
            expected = np.zeros(200_001, np.int64)
            for r in mine:
                if not np.isnan(r[key]):
                    expected[min(int(np.log(r[key]) / 20.0 * 200_000), 200_000)] += 1
            for summary in (whole, merged):
                got = summary.histograms.get(code, (np.zeros(200_001),) * 2)[k]
                assert np.array_equal(got, expected), (code, key)


def test_a_spilled_store_leaves_no_file_and_closes_when_collected(tmp_path, monkeypatch):
    import tempfile

    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))
    with held(4):
        store = Values()
        for k in range(10):
            store.append(np.arange(1.0, 8.0) + k)
        assert store._spilled > 0  # the file is in use
        assert list(tmp_path.iterdir()) == []  # and has no name in the folder
        closer = store._closer
        assert closer.alive
        assert store.median() == np.median(np.concatenate([np.arange(1.0, 8.0) + k
                                                           for k in range(10)]))  # fmt: skip
    del store
    gc.collect()
    assert not closer.alive  # the file was closed with its store
    assert list(tmp_path.iterdir()) == []


class _FullDisk(io.RawIOBase):
    """A temporary file that takes `room` bytes, then fails as a full disk does."""

    def __init__(self, room: int) -> None:
        self.data, self.room, self.at = bytearray(), room, 0

    def seekable(self) -> bool:
        return True

    def readable(self) -> bool:
        return True

    def writable(self) -> bool:
        return True

    def seek(self, offset: int, whence: int = 0) -> int:
        self.at = offset
        return offset

    def write(self, b) -> int:
        space = self.room - len(self.data)
        if space <= 0:
            raise OSError(28, "No space left on device")
        b = bytes(b)[: max(space // 2, 1)]  # part of what was asked, as a short write
        self.data[self.at : self.at + len(b)] = b
        self.at += len(b)
        return len(b)

    def readinto(self, b) -> int:
        got = self.data[self.at : self.at + len(b)]
        b[: len(got)] = got
        self.at += len(got)
        return len(got)


@pytest.mark.parametrize("room", [0, 40, 200, 10_000])
def test_without_room_for_the_file_the_values_stay_in_memory(monkeypatch, room):
    """No temporary file (room 0: it cannot be written at all), or a disk that fills up part
    way through a write: the median is exact all the same (the values stay in memory)."""
    if room == 0:

        def fails():
            raise OSError(30, "Read-only file system")

        monkeypatch.setattr(screen_result, "_temporary", fails)
    else:
        monkeypatch.setattr(screen_result, "_temporary", lambda: _FullDisk(room))
    rng = np.random.default_rng(5)
    values = np.exp(rng.normal(0, 1, 301)).round(2) + 1
    with held(8):
        store = Values()
        for part in np.array_split(values, 37):
            store.append(part)
        assert same(store.median(), list(values))
        assert np.array_equal(store.values(), values)
        copy = pickle.loads(pickle.dumps(store))
    assert same(copy.median(), list(values))


def test_a_tally_pickles_with_its_values():
    """The engines send a partition's tally between processes as a pickle."""
    with held(3):
        tally = Tally()
        values = np.array([3.0, 1.0, 2.0, 2.0, 9.0, 1.5, 7.0, 4.0])
        numbers = {"evalue": values, "evalue_ci": values / 2 + 0.5,
                   "robustness_value": np.full(8, np.nan)}  # fmt: skip
        tally.add(np.zeros(8, np.int64), [], numbers, {})
        assert tally.scales["rr"]["evalue_values"]._spilled > 0
        back = pickle.loads(pickle.dumps(tally))
    entry = back.result((), "t").per_scale["rr"]
    assert entry["median_evalue"] == np.median(values) == 2.5
    assert entry["median_evalue_ci"] == np.median(values / 2 + 0.5)


def test_dask_partitions_spilled_give_the_single_table_summary():
    """The demo's invented table screened by Dask in four partitions, each tally's values on
    file (two held in memory): the summary is the single-table one, medians bit for bit."""
    import warnings

    import pandas as pd
    from conftest import ROOT

    from sensitivity.screen.stream import screen_summary

    dask = pytest.importorskip("dask", reason="the dask extra is not installed")
    dd = pytest.importorskip("dask.dataframe", reason="the dask extra is not installed")
    table = pd.read_csv(ROOT / "demo" / "published_results.csv", dtype=str,
                        keep_default_na=False)  # fmt: skip
    parts = [table.iloc[a : a + 10] for a in range(0, len(table), 10)]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # dask's note on unknown divisions
        ddf = dd.from_delayed([dask.delayed(p) for p in parts], meta=parts[0].iloc[:0],
                              verify_meta=False)  # fmt: skip
    options = {"from_text": "result", "threshold": 1.5}
    reference = screen_summary(table, **options).to_dict()
    with held(2):
        got = screen_summary(ddf, **options).to_dict()
    assert got["scales"] == reference["scales"]
