"""Reading ahead and writing behind in a second thread (sensitivity/common/overlap.py): the
items and their order are those of a plain loop, an error surfaces in the caller's thread,
and a caller that stops early leaves no thread waiting."""

from __future__ import annotations

import threading
import time

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common.overlap import WriteBehind, in_background, read_ahead


@settings(max_examples=30, deadline=None)
@given(st.lists(st.integers(), max_size=50), st.integers(1, 4))
def test_read_ahead_gives_every_item_in_order(items, depth):
    assert list(read_ahead(iter(items), depth)) == items


def test_an_error_while_reading_ahead_is_raised_in_the_caller():
    def items():
        yield 1
        yield 2
        raise ValueError("bad piece")

    got = []
    with pytest.raises(ValueError, match="bad piece"):
        for item in read_ahead(items()):
            got.append(item)
    assert got == [1, 2]


def test_a_caller_that_stops_early_leaves_no_thread_behind():
    before = threading.active_count()
    stream = read_ahead(iter(range(1000)))
    assert next(stream) == 0
    stream.close()
    for _ in range(100):  # the producer sees the stop flag within a few waits
        if threading.active_count() == before:
            break
        time.sleep(0.02)
    assert threading.active_count() == before


def test_write_behind_writes_every_item_in_order_and_close_waits():
    written = []
    behind = WriteBehind(lambda item: (time.sleep(0.001), written.append(item)))
    for i in range(50):
        behind.put(i)
    behind.close()
    assert written == list(range(50))


def test_an_error_while_writing_behind_is_raised_by_put_or_close():
    def write(item):
        if item == 3:
            raise OSError("disk full")

    behind = WriteBehind(write)
    with pytest.raises(OSError, match="disk full"):
        for i in range(100):
            behind.put(i)
            time.sleep(0.001)
        behind.close()


def test_in_background_gives_its_value_and_raises_its_error_in_the_caller():
    started = threading.Event()

    def slow(x):
        started.set()
        time.sleep(0.05)
        return x * 2

    job = in_background(slow, 21)
    assert started.wait(5)
    assert job.result() == 42 and job.result() == 42  # asked again: the same value

    def fail():
        raise ValueError("no types")

    job = in_background(fail)
    for _ in range(2):
        with pytest.raises(ValueError, match="no types"):
            job.result()
