"""`make bench`: figures and ratios against a plain baseline. Nothing here is asserted.

Each section prints what it timed, the median, the baseline's median and their ratio next to
the goal the issue set. Run from the project's venv (`make bench`).
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

BIN = Path(sys.executable).parent
REPEATS = 21


def wall(cmd: list[str], repeats: int = REPEATS) -> float:
    """Median wall time of a whole command, in seconds (one warm-up run first)."""
    subprocess.run(cmd, check=True, capture_output=True)
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        subprocess.run(cmd, check=True, capture_output=True)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def timed(func, repeats: int = 5) -> float:
    """Median wall time of an in-process call, in seconds."""
    func()
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def report(label: str, value: float, baseline: float, baseline_label: str, goal: str) -> None:
    print(f"{label}: {value * 1e3:.1f} ms")
    print(f"  baseline ({baseline_label}): {baseline * 1e3:.1f} ms")
    print(f"  ratio: {value / baseline:.2f}  (goal: {goal})")


def bench_startup() -> None:
    print("== One-number command start-up (issue 2)")
    cmd = [str(BIN / "sensitivity"), "evalue", "rr", "3.9", "--ci", "1.8", "8.7"]
    base = [sys.executable, "-c", "import numpy, click"]
    report("sensitivity evalue rr 3.9 --ci 1.8 8.7", wall(cmd), wall(base),
           'python -c "import numpy, click"', "at most 1.3")


SECTIONS = [bench_startup]

if __name__ == "__main__":
    for section in SECTIONS:
        section()
        print()
