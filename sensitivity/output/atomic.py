"""Whole files or none: every output is written to a temporary file beside its target and
renamed into place only when complete.

An output that fails part-way (a full disk, a file size limit, a signal) then leaves the
target as it was, never a truncated file under the final name; two runs writing the same
path each rename a whole file (the last one wins) instead of interleaving their rows.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import IO


def _mode_for(target: Path) -> int:
    """The permission bits the target would get from a plain open(): its own if it exists,
    else 0o666 less the umask (mkstemp makes 0o600)."""
    try:
        return os.stat(target).st_mode & 0o7777
    except OSError:
        mask = os.umask(0)
        os.umask(mask)
        return 0o666 & ~mask


def temporary_beside(target: str | Path) -> Path:
    """A new empty temporary file in the target's folder, keeping its extension (writers such
    as matplotlib and pandas choose the format by it)."""
    target = Path(target)
    handle, name = tempfile.mkstemp(
        prefix=f".{target.stem}.", suffix=target.suffix, dir=target.parent or "."
    )
    os.close(handle)
    return Path(name)


def commit(temporary: str | Path, target: str | Path) -> None:
    """Rename a finished temporary file onto the target (atomic on one file system)."""
    os.chmod(temporary, _mode_for(Path(target)))
    os.replace(temporary, target)


def discard(temporary: str | Path | None) -> None:
    """Remove a temporary file that will not be committed."""
    if temporary is not None:
        Path(temporary).unlink(missing_ok=True)


@contextlib.contextmanager
def replacing(target: str | Path, mode: str = "wb", **kwargs: object) -> Iterator[IO]:
    """Open a temporary file beside `target`; on leaving without an error, rename it onto
    `target`; on an error (or a KeyboardInterrupt), remove it and leave `target` alone.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> with replacing(folder / "out.txt", "w") as sink:
    ...     _ = sink.write("whole")
    >>> (folder / "out.txt").read_text()
    'whole'
    """
    temporary = temporary_beside(target)
    try:
        with open(temporary, mode, **kwargs) as sink:  # type: ignore[call-overload]
            yield sink
        commit(temporary, target)
    except BaseException:
        discard(temporary)
        raise


def write_text(target: str | Path, text: str) -> None:
    """`text` to `target` in UTF-8, whole or not at all."""
    with replacing(target, "w", encoding="utf-8") as sink:
        sink.write(text)
