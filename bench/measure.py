"""Run one command and print its wall time (s) and peak resident memory (KiB).

`make bench` starts this small process to launch each measured command: a child forked
straight from the bench, after its in-process sections have grown it, would report the
bench's own size as its peak (Linux keeps the larger of the pre- and post-exec high-water
marks). Usage: python bench/measure.py CMD [ARGS...]"""

import os
import subprocess
import sys
import time


def main(cmd: list[str]) -> None:
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _, status, usage = os.wait4(proc.pid, 0)
    elapsed = time.perf_counter() - start
    print(f"{elapsed} {usage.ru_maxrss} {status}")


if __name__ == "__main__":
    main(sys.argv[1:])
