"""Whole files or none: every output is written to a temporary file beside its target and
renamed into place only when complete.

An output that fails part-way (a full disk, a file size limit, a signal) then leaves the
target as it was, never a truncated file under the final name; two runs writing the same
path each rename a whole file (the last one wins) instead of interleaving their rows.

A target that is a symbolic link is written through: the temporary file is made beside the
file the link points to and renamed onto it, so the link stays a link (as a plain open()
would leave it).
"""

from __future__ import annotations

import contextlib
import os
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


def through_links(target: str | Path) -> Path:
    """The file a write to `target` lands in: where a symbolic link (or a chain of them)
    points, else `target` itself. A dangling link gives the file it names, which is
    created, as open() would create it.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> (folder / "link.csv").symlink_to("real.csv")
    >>> through_links(folder / "link.csv") == folder.resolve() / "real.csv"
    True
    """
    target = Path(target)
    if not os.path.islink(target):
        return target
    return Path(os.path.realpath(target))


def target_problem(target: str | Path) -> str | None:
    """What stops a write to `target` (a missing folder; a symbolic link that loops, names a
    folder, or points into a folder that does not exist), as a rule's words; else None."""
    if str(target) in ("", "."):
        return f"must name a file; got {str(target)!r}"
    real = through_links(target)
    link = f"the link {str(target)!r}"
    if os.path.islink(real):
        return f"{link} loops (a chain of symbolic links that never ends)"
    if real != Path(target) and real.is_dir():
        return f"{link} points to a folder, {str(real)!r}; give a file"
    if not real.parent.is_dir():
        where = "" if real == Path(target) else f" (where {link} points)"
        return f"folder {str(real.parent)!r}{where} does not exist"
    return None


def check_target(target: str | Path, argument: str) -> Path:
    """Refuse, before any work, an output that cannot be written (see `target_problem`);
    returns the file that will be written."""
    problem = target_problem(target)
    if problem is not None:
        from ..common.errors import InputError

        raise InputError(f"`{argument}`: {problem}", argument)
    return through_links(target)


def temporary_beside(target: str | Path) -> Path:
    """A new empty temporary file in the target's folder, keeping its extension (writers such
    as matplotlib and pandas choose the format by it). A symbolic link's folder is that of
    the file it points to (see `through_links`)."""
    import tempfile

    suffix = Path(target).suffix  # the name given decides the format, not the link's target
    if os.path.islink(target):  # a link's own folder says nothing of its target's
        target = check_target(target, "output")
    target = Path(target)
    handle, name = tempfile.mkstemp(
        prefix=f".{target.stem}.", suffix=suffix, dir=target.parent or "."
    )
    os.close(handle)
    return Path(name)


def commit(temporary: str | Path, target: str | Path) -> None:
    """Rename a finished temporary file onto the target (atomic on one file system); onto
    the file a symbolic link points to, leaving the link in place."""
    target = through_links(target)
    os.chmod(temporary, _mode_for(target))
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
