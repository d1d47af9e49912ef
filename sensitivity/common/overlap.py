"""Reading ahead and writing behind in a second thread, so a long stream keeps both cores
busy: polars parses and writes with the GIL released while numpy works on the piece between.

Each holds at most `depth` items in hand, so memory stays bounded by the pieces; an error in
the second thread is raised in the caller's, where it would have been raised without it.

No second thread outlives the program's own work: at exit (an error on the command line
leaves a reader parsing the next piece) every worker still running is told to stop and
waited for, before the interpreter shuts down. A daemon thread that comes back from native
code (polars, pyarrow) after shutdown has begun is ended by the interpreter from inside that
code, which native frames do not survive: a crash at exit (issue 19, a segfault seen once).
"""

from __future__ import annotations

import atexit
import queue
import threading
from collections.abc import Callable, Iterable, Iterator
from typing import Any, TypeVar

T = TypeVar("T")
_END = object()
_WAIT = 0.05  # seconds between looks at the stop flag while a queue is full
#: The longest wait at exit for one worker to finish its piece (a piece parses in well under
#: a second; a worker blocked on an empty queue is not in native code and is left).
EXIT_WAIT = 30.0
_LIVE: dict[threading.Thread, Callable[[], None]] = {}
_LIVE_LOCK = threading.Lock()


def _started(worker: threading.Thread, stop: Callable[[], None]) -> None:
    """Start `worker`, known to the exit guard until it ends (`stop` asks it to)."""
    with _LIVE_LOCK:
        _LIVE[worker] = stop
    worker.start()


def _ended(worker: threading.Thread) -> None:
    with _LIVE_LOCK:
        _LIVE.pop(worker, None)


@atexit.register
def stop_workers(wait: float = EXIT_WAIT) -> None:
    """Ask every running worker to stop, and wait for each to leave native code."""
    with _LIVE_LOCK:
        live = list(_LIVE.items())
    for _, stop in live:
        stop()
    for worker, _ in live:
        worker.join(wait)


def _put(q: queue.Queue, item: Any, stop: threading.Event) -> bool:
    """Put `item`, unless asked to stop first; True when it was put."""
    while not stop.is_set():
        try:
            q.put(item, timeout=_WAIT)
            return True
        except queue.Full:
            continue
    return False


class read_ahead(Iterator[T]):  # noqa: N801 - used as a function that starts work at once
    """The items of `items`, produced in a second thread up to `depth` ahead of the caller;
    the thread starts at once, so the first items are being made while the caller gets on
    with its own set-up. `close` (or reaching the end) lets the thread go.

    Examples
    --------
    >>> list(read_ahead(iter(range(5))))
    [0, 1, 2, 3, 4]
    """

    def __init__(self, items: Iterable[T], depth: int = 1) -> None:
        self._queue: queue.Queue = queue.Queue(maxsize=depth)
        self._stop = threading.Event()
        self._done = False
        worker = threading.Thread(target=self._produce, args=(items,), name="read-ahead",
                                  daemon=True)  # fmt: skip
        _started(worker, self._stop.set)

    def _produce(self, items: Iterable[T]) -> None:
        try:
            for item in items:
                if not _put(self._queue, (True, item), self._stop):
                    return
            _put(self._queue, (True, _END), self._stop)
        except BaseException as err:  # noqa: BLE001 - handed to the caller's thread
            _put(self._queue, (False, err), self._stop)
        finally:
            _ended(threading.current_thread())

    def __next__(self) -> T:
        if self._done:
            raise StopIteration
        while True:
            try:
                ok, item = self._queue.get(timeout=_WAIT)
                break
            except queue.Empty:
                if self._stop.is_set():  # stopped at exit: its reader may be another worker
                    self._done = True
                    raise StopIteration from None
        if not ok or item is _END:
            self.close()
            if not ok:
                raise item
            raise StopIteration
        return item

    def close(self) -> None:
        self._done = True
        self._stop.set()

    def __del__(self) -> None:
        self._stop.set()


class WriteBehind:
    """Calls `write(item)` for each item given to `put`, in a second thread, at most `depth`
    items behind; `close` waits for the last one. An error in `write` is raised by the next
    `put` or by `close`."""

    def __init__(self, write: Callable[[Any], None], depth: int = 1) -> None:
        self._write = write
        self._queue: queue.Queue = queue.Queue(maxsize=depth)
        self._stop = threading.Event()
        self._error: BaseException | None = None
        self._worker = threading.Thread(target=self._consume, name="write-behind", daemon=True)
        _started(self._worker, self._stop.set)

    def _consume(self) -> None:
        try:
            while not self._stop.is_set():
                try:
                    item = self._queue.get(timeout=_WAIT)
                except queue.Empty:
                    continue
                if item is _END:
                    return
                try:
                    self._write(item)
                except BaseException as err:  # noqa: BLE001 - handed to the caller's thread
                    self._error = err
                    self._stop.set()
                    return
        finally:
            _ended(threading.current_thread())

    def _raise(self) -> None:
        if self._error is not None:
            error, self._error = self._error, None
            raise error

    def put(self, item: Any) -> None:
        self._raise()
        _put(self._queue, item, self._stop)
        self._raise()

    def close(self) -> None:
        if self._worker.is_alive():
            _put(self._queue, _END, self._stop)
            self._worker.join()
        self._raise()


class in_background:  # noqa: N801 - used as a function that starts work at once
    """`func(*args)` computed in a second thread, started at once; `result()` waits for it and
    returns it (or raises its error) in the caller's thread, as often as asked.

    Examples
    --------
    >>> in_background(sum, [1, 2, 3]).result()
    6
    """

    def __init__(self, func: Callable[..., T], *args: Any) -> None:
        self._done = threading.Event()
        self._value: Any = None
        self._error: BaseException | None = None
        worker = threading.Thread(target=self._run, args=(func, args), name="background",
                                  daemon=True)  # fmt: skip
        _started(worker, lambda: None)  # nothing to stop: it ends when func returns

    def _run(self, func: Callable[..., Any], args: tuple) -> None:
        try:
            self._value = func(*args)
        except BaseException as err:  # noqa: BLE001 - handed to the caller's thread
            self._error = err
        finally:
            self._done.set()
            _ended(threading.current_thread())

    def done(self) -> bool:
        """Whether `func` has returned (or raised): `result()` will not wait."""
        return self._done.is_set()

    def result(self) -> Any:
        self._done.wait()
        if self._error is not None:
            raise self._error
        return self._value
