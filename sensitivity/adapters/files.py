"""Reading tables users hand us: CSV, TSV, Excel and Parquet, chosen by file extension."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from ..common.errors import InputError

READERS = {
    ".csv": "csv",
    ".txt": "csv",
    ".tsv": "tsv",
    ".tab": "tsv",
    ".xlsx": "excel",
    ".xls": "excel",
    ".parquet": "parquet",
    ".pq": "parquet",
}


def read_table(path: str | Path, argument: str = "data") -> Any:
    """A pandas DataFrame from `path`; ValueError names `argument` for any unreadable file."""
    import pandas as pd

    p = Path(path)
    kind = READERS.get(p.suffix.lower())
    if kind is None:
        raise InputError(
            f"`{argument}`: cannot tell the format of {p.name!r} from its extension; use one "
            f"of {', '.join(sorted(READERS))}"
        )
    if not p.is_file():
        raise InputError(f"`{argument}`: file not found: {path}")
    if p.stat().st_size == 0:
        raise InputError(f"`{argument}`: {path} is empty")
    try:
        if kind == "csv":
            frame = pd.read_csv(p)
        elif kind == "tsv":
            frame = pd.read_csv(p, sep="\t")
        elif kind == "excel":
            frame = pd.read_excel(p)
        else:
            frame = pd.read_parquet(p)
    except ImportError as err:
        raise InputError(f"`{argument}`: reading {kind} needs an optional package: {err}") from None
    except Exception as err:  # noqa: BLE001 - any parser failure is the file's, not ours
        first = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        raise InputError(f"`{argument}`: could not read {path} as {kind}: {first}") from None
    if frame.shape[0] == 0 or frame.shape[1] == 0:
        raise InputError(f"`{argument}`: {path} has no data rows")
    return frame
