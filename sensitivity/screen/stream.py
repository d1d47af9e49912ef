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


def text_or_numbers(column: Any) -> Any:
    """A numeric column for the screen's core, converted in C: floats, with the cells that
    are not numbers (and their text) kept aside for the reasons."""
    import pyarrow as pa
    import pyarrow.compute as pc

    if pa.types.is_floating(column.type) or pa.types.is_integer(column.type):
        return column.to_numpy(zero_copy_only=False).astype(float)
    if not (pa.types.is_string(column.type) or pa.types.is_large_string(column.type)):
        column = pc.cast(column, pa.string())
    trimmed = pc.utf8_trim_whitespace(pc.fill_null(column, ""))
    try:  # the common case: every cell blank or a number, converted in one pass
        nulls = pc.if_else(pc.equal(trimmed, ""), pa.scalar(None, trimmed.type), trimmed)
        return pc.cast(nulls, pa.float64()).to_numpy(zero_copy_only=False).astype(float)
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        pass
    valid = pc.match_substring_regex(trimmed, _NUMBER, ignore_case=True)
    values = pc.cast(pc.if_else(valid, trimmed, pa.scalar(None, trimmed.type)), pa.float64())
    floats = values.to_numpy(zero_copy_only=False).astype(float)
    bad = pc.and_(pc.invert(valid), pc.not_equal(trimmed, ""))
    where = np.flatnonzero(bad.to_numpy(zero_copy_only=False))
    texts = tuple(trimmed.take(pa.array(where)).to_pylist()) if where.size else ()
    return Numbers(floats, where, texts)


def clean_text(column: Any) -> Codes:
    """A code column (scale, outcome) lower-cased and trimmed in C, as numpy strings."""
    import pyarrow as pa
    import pyarrow.compute as pc

    if not (pa.types.is_string(column.type) or pa.types.is_large_string(column.type)):
        column = pc.cast(column, pa.string())
    text = pc.utf8_lower(pc.utf8_trim_whitespace(pc.fill_null(column, "")))
    return Codes(np.asarray(text.to_numpy(zero_copy_only=False), dtype=str))


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
                values = computed[name]
                if values.dtype.kind in "OU":
                    arrays.append(pa.array(values, type=pa.string()))
                else:
                    arrays.append(pa.array(values, from_pandas=True))
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
