"""Issue 19: no read-ahead or write-behind thread is still working when the program exits.

A screen that stops on an error (exit 2) used to leave its reader parsing the next piece in
polars, in a daemon thread; when such a thread comes back from native code after the
interpreter has begun to shut down, the interpreter ends it from inside that code, which the
native frames do not survive (the segfault seen once in issue 19 is of that kind). Now every
worker is told to stop and waited for at exit. Sleeping stands in for native work: like
polars, it releases the GIL.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap
import threading
import time

from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity.common import overlap
from sensitivity.common.overlap import WriteBehind, read_ahead, stop_workers


def _slow(n, pause, made):
    for i in range(n):
        time.sleep(pause)  # the GIL released, as in polars' parser
        made.append(i)
        yield i


@settings(max_examples=30, deadline=None)
@given(n=st.integers(0, 6), taken=st.integers(0, 6), depth=st.integers(1, 3),
       nested=st.booleans())  # fmt: skip
def test_after_the_exit_guard_no_reader_is_working(n, taken, depth, nested):
    """Abandon a read-ahead (or one reading another, as the screen's two do) after any
    number of items: the guard leaves no worker alive and none producing afterwards."""
    made: list[int] = []
    outer = read_ahead(_slow(n, 0.002, made), depth)
    reader = read_ahead(iter(outer), depth) if nested else outer
    for _, _ in zip(range(taken), reader, strict=False):
        pass
    workers = list(overlap._LIVE)
    stop_workers(wait=5.0)
    assert not any(w.is_alive() for w in workers)
    assert not overlap._LIVE
    count = len(made)
    time.sleep(0.02)
    assert len(made) == count  # nothing made after the guard returned


def test_a_write_behind_left_open_is_stopped_and_joined():
    written: list[int] = []

    def write(item):
        time.sleep(0.01)
        written.append(item)

    behind = WriteBehind(write, depth=2)
    for i in range(3):
        behind.put(i)
    worker = behind._worker
    stop_workers(wait=5.0)
    assert not worker.is_alive() and not overlap._LIVE


def test_the_worker_finishes_before_the_interpreter_shuts_down(tmp_path):
    """In a real exit: the reader's generator is closed (its `finally` runs) in its own
    thread before shutdown, where a daemon thread would simply be cut off mid-piece."""
    marker = tmp_path / "closed"
    code = textwrap.dedent(f"""
        import time
        from sensitivity.common.overlap import read_ahead

        def pieces():
            try:
                while True:
                    time.sleep(0.05)
                    yield 1
            finally:
                open({str(marker)!r}, "w").write("closed")

        reader = read_ahead(pieces())
        next(reader)
        raise SystemExit(2)  # as an InputError does, with the reader mid-piece
    """)
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=60)  # fmt: skip
    assert done.returncode == 2, done.stderr
    assert marker.read_text() == "closed"


def test_no_thread_is_left_after_a_normal_read():
    before = threading.active_count()
    assert list(read_ahead(iter(range(50)))) == list(range(50))
    deadline = time.monotonic() + 5
    while overlap._LIVE and time.monotonic() < deadline:
        time.sleep(0.01)
    assert not overlap._LIVE
    assert threading.active_count() <= before + 1
