"""The README's ```console blocks: run them, compare them, or paste fresh output into them.

A block holds one `$ sensitivity ...` command followed by its exact stdout. Commands run
with the repository root as working directory through `python -m sensitivity`, so they use
the installed package of the interpreter running this script.

    python scripts/readme_examples.py          # rewrite README.md with fresh output
"""

from __future__ import annotations

import re
import shlex
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
README = ROOT / "README.md"
BLOCK = re.compile(r"```console\n\$ (?P<cmd>[^\n]+)\n(?P<out>.*?)```", re.S)


def blocks(text: str):
    """(command, expected stdout, match) for every console block."""
    return [(m["cmd"], m["out"], m) for m in BLOCK.finditer(text)]


def run(cmd: str, cwd: Path = ROOT) -> subprocess.CompletedProcess:
    args = shlex.split(cmd)
    assert args[0] == "sensitivity", f"README example must start with 'sensitivity': {cmd}"
    return subprocess.run(
        [sys.executable, "-m", "sensitivity", *args[1:]],
        cwd=cwd,
        capture_output=True,
        text=True,
        timeout=120,
    )


def refresh() -> None:
    text = README.read_text(encoding="utf-8")
    pieces, last = [], 0
    for cmd, _, m in blocks(text):
        out = run(cmd)
        if out.returncode:
            sys.exit(f"{cmd!r} failed: {out.stderr}")
        pieces += [text[last : m.start()], f"```console\n$ {cmd}\n{out.stdout}```"]
        last = m.end()
    README.write_text("".join(pieces) + text[last:], encoding="utf-8")


if __name__ == "__main__":
    refresh()
