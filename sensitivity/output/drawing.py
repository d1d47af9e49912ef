"""Figures drawn by two processes at once: this one and a second Python that has loaded
matplotlib while this one was busy (reading data, or drawing).

matplotlib draws under Python's lock, so a second thread cannot share the work; a second
process can. `FigureWorker` starts one at once (its start, about one figure's drawing, is
spent on the other core), and `draw_all` hands it figures from the far end of the list while
this process draws from the near end, so each draws whatever is left when it is free.

What the second process draws is exactly what this one would: the same function and result
(pickled), the same library versions, the same files written whole (`atomic`). Anything it
does not report as done (it failed, died, or never started) is drawn here afterwards, so an
error is raised here as without it.
"""

from __future__ import annotations

import contextlib
import os
import pickle
import signal
import struct
import subprocess
import sys
import threading
from collections import deque
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import IO, Any

#: A figure to draw: `draw(paths)` writes it to each path.
Job = tuple[Callable[[Sequence[Path]], Any], Sequence[Path]]

_HEADER = struct.Struct("<Q")
_READY = b"ready"
# the package's folder first on the second process's path: it imports this very copy
_START = "import sys; sys.path.insert(0, sys.argv[1]); from {0} import _serve; _serve()"


def _processors() -> int:
    """The processors this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # not Linux
        return os.cpu_count() or 1


def _busy() -> bool:
    """Whether every processor has work already, so that a second process would take a core
    from other work rather than use a free one: the load average over the last minute at
    least one above the processors (this process counts for about one). Where the system
    does not say, never."""
    try:
        return os.getloadavg()[0] >= _processors() + 1
    except (AttributeError, OSError):  # not Unix
        return False


def _send(sink: IO[bytes], value: Any) -> None:
    data = pickle.dumps(value, protocol=pickle.HIGHEST_PROTOCOL)
    sink.write(_HEADER.pack(len(data)) + data)
    sink.flush()


def _receive(source: IO[bytes]) -> Any:
    head = source.read(_HEADER.size)
    if len(head) < _HEADER.size:
        raise EOFError("the other process has gone")
    (size,) = _HEADER.unpack(head)
    data = source.read(size)
    if len(data) < size:
        raise EOFError("the other process has gone")
    return pickle.loads(data)


class FigureWorker:
    """A second Python process, started now, that draws figures handed to it by `draw_all`.

    Use it as a context manager (or call `close`): the process ends with it. If it cannot
    start (no second processor, no Python to start), or every processor is busy already (a
    second process would cost CPU and memory and save no time), every figure is drawn in
    this one."""

    def __init__(self) -> None:
        self._process: subprocess.Popen[bytes] | None = None
        self._drawing = False  # a job is in the second process's hands
        if not sys.executable or getattr(sys, "frozen", False) or _processors() < 2 or _busy():
            return  # no second Python to start (or a bundled one), or no core for it
        root = str(Path(__file__).resolve().parents[2])
        # it multiplies no large matrices: OpenBLAS's start-up threads would only spin
        env = {"OPENBLAS_NUM_THREADS": "1", **os.environ}
        with contextlib.suppress(OSError):
            self._process = subprocess.Popen(
                [sys.executable, "-c", _START.format(__name__), root], env=env,
                stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL,
            )  # fmt: skip

    def __enter__(self) -> FigureWorker:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """End the second process. One that is drawing is asked to stop (it removes the file
        it was writing); one that is not is stopped at once."""
        process, self._process = self._process, None
        if process is None:
            return
        with contextlib.suppress(OSError):
            if self._drawing:  # SIGTERM, turned into SystemExit there
                process.terminate()
            else:
                process.kill()
        try:
            process.wait(timeout=10)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait()
        # closed once it has ended: a thread may be waiting on its output (closing a stream
        # that a thread is reading waits for that read to return)
        for stream in (process.stdin, process.stdout):
            with contextlib.suppress(OSError):
                if stream is not None:
                    stream.close()

    def draw_all(self, jobs: Sequence[Job]) -> None:
        """Draw every job, sharing them with the second process; returns when all are drawn.

        This process takes jobs from the front, the second from the back. A job the second
        process does not confirm is drawn here at the end (so its error, if any, is raised
        here)."""
        left = deque(range(len(jobs)))
        lock = threading.Lock()
        state: dict[str, Any] = {"finished": False, "redo": []}
        feeder = None
        if self._process is not None and len(jobs) > 1:
            feeder = threading.Thread(target=self._feed, args=(jobs, left, lock, state),
                                      name="hand-figures", daemon=True)  # fmt: skip
            feeder.start()
        while True:
            with lock:
                if not left:
                    state["finished"] = True
                    waiting = self._drawing
                    break
                k = left.popleft()
            draw, paths = jobs[k]
            draw(paths)
        if feeder is not None and waiting:
            feeder.join()
        elif feeder is not None:  # still loading, or idle: it gets nothing more
            self.close()
        for k in sorted(state["redo"]):
            draw, paths = jobs[k]
            draw(paths)

    def _feed(self, jobs: Sequence[Job], left: deque[int], lock: threading.Lock,
              state: dict[str, Any]) -> None:  # fmt: skip
        """Hand the second process one job at a time, from the back of the list, until none
        is left; a job it does not confirm goes to `state["redo"]`."""
        process = self._process
        assert process is not None and process.stdin is not None and process.stdout is not None
        try:
            if _receive(process.stdout) != _READY:
                return
        except (EOFError, OSError, pickle.UnpicklingError, ValueError):
            return
        while True:
            with lock:
                if state["finished"] or not left:
                    return
                k = left.pop()
                self._drawing = True
            try:
                _send(process.stdin, jobs[k])
                done = _receive(process.stdout) is True
            except Exception:  # pickling, a closed pipe, a dead process: drawn here instead
                done = False
            with lock:
                self._drawing = False
                if not done:
                    state["redo"].append(k)
                    return


#: From this many figures on, a second process started just for them pays for its start.
MANY_FIGURES = 4


def draw_all(jobs: Sequence[Job], worker: FigureWorker | None = None) -> None:
    """Draw every job: shared with `worker` if one is given, or with one started here for
    `MANY_FIGURES` or more; else here, in order."""
    if worker is not None:
        worker.draw_all(jobs)
    elif len(jobs) >= MANY_FIGURES:
        with FigureWorker() as started:
            started.draw_all(jobs)
    else:
        for draw, paths in jobs:
            draw(paths)


def _serve() -> None:
    """The second process: load matplotlib, say so, then draw each job sent until the input
    ends, answering True (drawn) or False (not drawn) for each."""
    channel_in = os.fdopen(os.dup(0), "rb")
    channel_out = os.fdopen(os.dup(1), "wb")
    devnull = os.open(os.devnull, os.O_RDWR)
    os.dup2(devnull, 0)
    os.dup2(devnull, 1)  # nothing printed can reach the channel
    signal.signal(signal.SIGTERM, _leave)
    try:
        from .figures import preload

        preload()
        import scipy.special  # noqa: F401 - the figures' quantiles (t, normal): loaded while idle

        _send(channel_out, _READY)
        while True:
            try:
                draw, paths = _receive(channel_in)
            except EOFError:
                return
            except Exception:  # a job that cannot be read here is drawn there
                _send(channel_out, False)
                continue
            try:
                draw(paths)
            except Exception:  # drawn again by the first process, which raises it there
                _send(channel_out, False)
            else:
                _send(channel_out, True)
    except (KeyboardInterrupt, SystemExit, BrokenPipeError, EOFError):
        return


def _leave(*_: object) -> None:
    raise SystemExit(0)


__all__ = ["FigureWorker", "draw_all"]
