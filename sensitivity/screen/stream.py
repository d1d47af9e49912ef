"""Tables in memory and streams of Arrow batches into the screen, and back out.

`screen_batches` is the one loop: the command line feeds it batches read from a file, a
pipeline feeds it its own; `screen_table` takes a pandas, polars or Arrow table and returns
one of the same kind.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator, Mapping, Sequence
from typing import Any

import numpy as np

from ..common.errors import InputError
from .core import NUMERIC, TEXT, Codes, Numbers, Options, computed_names, screen_columns
from .result import ScreenSummary, Tally

_NUMBER = r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$|^[-+]?(inf|infinity|nan)$"


def _series(column: Any) -> Any:
    """An Arrow column as a polars String series (zero-copy where it can be). The text work
    is done in polars: pyarrow's compute functions build their scalars through pandas, whose
    import alone cost half a second of a million-row screen."""
    import polars as pl

    series = pl.Series(values=column) if not isinstance(column, pl.Series) else column
    return series if series.dtype == pl.String else series.cast(pl.String)


def text_or_numbers(column: Any) -> Any:
    """A numeric column for the screen's core, converted in Rust: floats, with the cells that
    are not numbers (and their text) kept aside for the reasons."""
    import polars as pl
    import pyarrow as pa

    if isinstance(column, pa.Array | pa.ChunkedArray) and (
        pa.types.is_floating(column.type) or pa.types.is_integer(column.type)
    ):
        return column.to_numpy(zero_copy_only=False).astype(float)
    trimmed = _series(column).fill_null("").str.strip_chars()
    # polars reads exactly the numbers _NUMBER describes (ASCII digits, inf, infinity, nan in
    # any case; checked in tests/test_screen.py), so a failed cast is a cell that is not one
    values = trimmed.cast(pl.Float64, strict=False)
    floats = values.to_numpy().astype(float)
    bad = (values.is_null() & (trimmed != "")).to_numpy()
    if not bad.any():
        return floats
    where = np.flatnonzero(bad)
    return Numbers(floats, where, tuple(trimmed.gather(where).to_list()))


def clean_text(column: Any) -> Codes:
    """A code column (scale, outcome) lower-cased and trimmed, as numpy strings."""
    import polars as pl

    text = _series(column).fill_null("").str.strip_chars().str.to_lowercase()
    # few distinct codes: convert those, then index (a million cells in a few ms)
    distinct = text.unique(maintain_order=True).to_list()
    coded = text.cast(pl.Enum(distinct)).to_physical().to_numpy().astype(np.int64)
    return Codes(np.asarray(distinct or [""], dtype=str)[coded])


def _arrow(values: np.ndarray) -> Any:
    """A computed column for the output batch: text as strings, NaN as a missing value."""
    import polars as pl

    if values.dtype.kind in "OU":
        return pl.Series(values=values, dtype=pl.String).to_arrow()
    return pl.Series(values=values, nan_to_null=True).to_arrow()


def _mapping(columns: Mapping[str, str] | None, header: Sequence[str], from_text: str | None
             ) -> dict[str, str]:  # fmt: skip
    """Standard name -> the table's column, after checking every name against the header."""
    mapping = {name: name for name in (*NUMERIC, *TEXT) if name in header}
    for std, user in (columns or {}).items():
        if std not in (*NUMERIC, *TEXT):
            known = ", ".join((*TEXT, *NUMERIC))
            raise InputError(
                f"`columns`: {std!r} is not a column the screen reads; it reads {known}"
            )
        if user not in header:
            raise InputError(
                f"`columns`: {user!r} (for {std}) is not a column of the table; columns: "
                + ", ".join(header[:30])
            )
        mapping[std] = user
    if from_text is not None and from_text not in header:
        raise InputError(
            f"`from_text`: {from_text!r} is not a column of the table; columns: "
            + ", ".join(header[:30])
        )
    if from_text is None:
        for need in ("estimate", "scale"):
            if need not in mapping:
                raise InputError(
                    f"the table has no {need!r} column: map one with `columns` "
                    f"({need}=YOUR_COLUMN) or read results from text with `from_text`"
                )
    return mapping


def screen_batches(
    batches: Iterable[Any],
    *,
    columns: Mapping[str, str] | None = None,
    from_text: str | None = None,
    confounders: Sequence[tuple[float, float]] = (),
    alpha: float = 0.05,
    tally: Tally | None = None,
) -> Iterator[Any]:
    """Screen a stream of pyarrow RecordBatches; yield each with the computed columns added.

    Every row comes out, in order: good rows with their E-values (and for regression rows
    partial R² and robustness values), bad rows with the reason in `error`. Pass a `Tally`
    to collect the summary as the batches go by.

    Examples
    --------
    >>> import pyarrow as pa
    >>> batch = pa.record_batch({"scale": ["hr", "rr"], "estimate": ["1.38", "oops"],
    ...                          "lower": ["1.12", ""], "upper": ["1.70", ""],
    ...                          "outcome": ["rare", ""]})
    >>> out = next(screen_batches([batch]))
    >>> round(out.column("evalue")[0].as_py(), 2), out.column("error")[1].as_py()
    (2.1, "`estimate` is not a number: 'oops'")
    """
    import pyarrow as pa

    options = Options(
        confounders=tuple((float(a), float(b)) for a, b in confounders),
        alpha=alpha,
        from_text=None if from_text is None else "_text",
    )
    names = computed_names(options)
    mapping: dict[str, str] | None = None
    for batch in batches:
        if isinstance(batch, pa.Table):
            parts = batch.to_batches()
        else:
            parts = [batch]
        for part in parts:
            if mapping is None:
                header = part.schema.names
                mapping = _mapping(columns, header, from_text)
                clash = [n for n in names if n in header]
                if clash:
                    raise InputError(
                        f"the table already has columns named {', '.join(clash)}, which the "
                        "screen adds; rename them first"
                    )
            core: dict[str, Any] = {}
            for std, user in mapping.items():
                col = part.column(user)
                if std in NUMERIC:
                    core[std] = text_or_numbers(col)
                else:
                    core[std] = clean_text(col)
            if from_text is not None:
                core["_text"] = np.asarray(part.column(from_text).to_pylist(), dtype=object)
            computed = screen_columns(core, part.num_rows, options)
            if tally is not None:
                tally.add(computed)
            arrays = list(part.columns)
            fields = list(part.schema.names)
            for name in names:
                arrays.append(_arrow(computed[name]))
                fields.append(name)
            yield pa.RecordBatch.from_arrays(arrays, names=fields)


def screen_table(table: Any, **options: Any) -> Any:
    """Screen a whole table in memory (pandas, polars or pyarrow); the result is the same kind.

    Options are those of `screen_batches`. The summary is not returned; use
    `screen_summary` for it.
    """
    import pyarrow as pa

    kind = type(table).__module__.split(".")[0]
    if kind == "pandas":
        arrow = pa.Table.from_pandas(table, preserve_index=False)
    elif kind == "polars":
        arrow = table.to_arrow()
    elif isinstance(table, (pa.Table, pa.RecordBatch)):
        arrow = table if isinstance(table, pa.Table) else pa.Table.from_batches([table])
    else:
        raise InputError(
            f"`table` must be a pandas, polars or pyarrow table; got {type(table).__name__}"
        )
    out = pa.Table.from_batches(list(screen_batches(arrow.to_batches(), **options)))
    if kind == "pandas":
        return out.to_pandas()
    if kind == "polars":
        import polars as pl

        return pl.from_arrow(out)
    return out


def screen_summary(table: Any, source: str = "the table", threshold: float | None = None,
                   **options: Any) -> ScreenSummary:  # fmt: skip
    """The summary of a screen of `table` (rows, flags by reason, E-values by scale)."""
    import pyarrow as pa

    tally = Tally(threshold=threshold, n_confounders=len(options.get("confounders", ())))
    arrow = table if isinstance(table, pa.Table) else pa.Table.from_pandas(table)
    for _ in screen_batches(arrow.to_batches(), tally=tally, **options):
        pass
    return tally.result(tuple(options.get("confounders", ())), source)
