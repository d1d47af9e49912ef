"""Tables in memory and streams of frames or Arrow batches into the screen, and back out.

`screen_frames` is the one loop, over polars DataFrames: the command line feeds it pieces
read from a file, a pipeline feeds it its own; `screen_batches` wraps it for Arrow record
batches, and `screen_table` takes a pandas, polars or Arrow table and returns one of the same
kind.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Iterator, Mapping, Sequence
from itertools import chain
from typing import Any

import numpy as np

from ..adapters.files import DECIMAL_COMMA, one_column_of_many
from ..common.errors import InputError
from ..common.levels import check_alpha
from ..common.overlap import read_ahead
from .core import (
    FLAG_WORDS,
    NUMERIC,
    TEXT,
    Codes,
    Numbers,
    Options,
    computed_names,
    screen_columns,
)  # fmt: skip
from .result import ScreenSummary, Tally

_NUMBER = r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$|^[-+]?(inf|infinity|nan)$"


def _series(column: Any) -> Any:
    """A column (polars or Arrow) as a polars String series (zero-copy where it can be). The
    text work is done in polars: pyarrow's compute functions build their scalars through
    pandas, whose import alone cost half a second of a million-row screen."""
    import polars as pl

    series = pl.Series(values=column) if not isinstance(column, pl.Series) else column
    return series if series.dtype == pl.String else series.cast(pl.String)


def text_or_numbers(column: Any, decimal_comma: bool = False) -> Any:
    """A numeric column for the screen's core, converted in Rust: floats, with the cells that
    are not numbers (and their text) kept aside for the reasons. With `decimal_comma`, a
    cell such as 1,32 is read as 1.32 (a cell with both marks, 1.234,5, is not a number)."""
    import polars as pl

    series = pl.Series(values=column) if not isinstance(column, pl.Series) else column
    if series.dtype.is_numeric():
        return series.cast(pl.Float64).to_numpy()
    cell = pl.col("c").cast(pl.String).fill_null("").str.strip_chars()
    number = cell
    if decimal_comma:
        # a decimal point in a file that writes decimal commas is not guessed at (1.500?)
        number = (
            pl.when(cell.str.contains(".", literal=True))
            .then(pl.lit("\0"))
            .otherwise(cell.str.replace(DECIMAL_COMMA, r"${1}.${2}"))
        )
    # polars reads exactly the numbers _NUMBER describes (ASCII digits, inf, infinity, nan in
    # any case; checked in tests/test_screen.py), so a failed cast is a cell that is not one;
    # all in one pass over the column (a few rows cost what a piece's calls cost)
    value = number.cast(pl.Float64, strict=False)
    got = (
        series.rename("c")
        .to_frame()
        .select(value.alias("value"), (value.is_null() & (cell != "")).alias("bad"))
    )
    floats = got["value"].to_numpy().astype(float)
    bad = got["bad"].to_numpy()
    if not bad.any():
        return floats
    where = np.flatnonzero(bad)
    cells = series.rename("c").to_frame().select(cell.gather(where))["c"].to_list()
    return Numbers(floats, where, tuple(cells), decimal_comma)


#: Up to this many cells, a code column is converted cell by cell (no distinct codes found).
_FEW_CODES = 4096


def clean_text(column: Any) -> Codes:
    """A code column (scale, outcome) lower-cased and trimmed, as numpy strings."""
    import polars as pl

    series = _series(column)
    text = (  # in one query (each Series call is one)
        series.to_frame()
        .select(pl.first().fill_null("").str.strip_chars().str.to_lowercase())
        .to_series()
    )
    if text.len() <= _FEW_CODES:  # a handful of rows: as they are
        return Codes(np.asarray(text.to_list(), dtype=str))
    # few distinct codes: convert those, then index (a million cells in a few ms)
    distinct = text.unique(maintain_order=True).to_list()
    coded = text.cast(pl.Enum(distinct)).to_physical().to_numpy().astype(np.int64)
    return Codes(np.asarray(distinct or [""], dtype=str)[coded])


def _mapping(columns: Mapping[str, str] | None, header: Sequence[str], from_text: str | None
             ) -> dict[str, str]:  # fmt: skip
    """Standard name -> the table's column, after checking every name against the header."""
    mapping = {name: name for name in (*NUMERIC, *TEXT) if name in header}
    for std, user in (columns or {}).items():
        if std not in (*NUMERIC, *TEXT):
            known = ", ".join((*TEXT, *NUMERIC))
            raise InputError(
                f"`columns`: {std!r} is not a column the screen reads; it reads {known}", "columns"
            )
        if user not in header:
            raise InputError(
                f"`columns`: {user!r} (for {std}) is not a column of the table; columns: "
                + ", ".join(header[:30]),
                "columns",
            )
        mapping[std] = user
    if from_text is not None and from_text not in header:
        raise InputError(
            f"`from_text`: {from_text!r} is not a column of the table; columns: "
            + ", ".join(header[:30]),
            "from_text",
        )
    if from_text is None:
        for need in ("estimate", "scale"):
            if need not in mapping:
                one_column_of_many(list(header))
                raise InputError(
                    f"the table has no {need!r} column: map one with `columns` "
                    f"({need}=YOUR_COLUMN) or read results from text with `from_text`; "
                    "columns: " + ", ".join(header[:30]),
                    ("columns", "from_text"),
                )
    return mapping


def screen_frames(
    frames: Iterable[Any],
    *,
    columns: Mapping[str, str] | None = None,
    from_text: str | None = None,
    confounders: Sequence[tuple[float, float]] = (),
    alpha: float = 0.05,
    tally: Tally | None = None,
    decimal_comma: bool = False,
) -> Iterator[Any]:
    """Screen a stream of polars DataFrames; yield each with the computed columns added.

    `decimal_comma`: number cells written with a decimal comma (1,32) are read as such, as
    in a European file (the command line detects one; `--delimiter` sets it).

    The one loop behind the command line, `screen_batches` and `screen_table`: hand it the
    frames of a polars pipeline. Plain ratio rows are computed in columns (`plain`); every
    other row by `screen_columns`, and its values put back in its place, so each row comes
    out where it went in. Pass a `Tally` to collect the summary as the frames go by.

    Examples
    --------
    >>> import polars as pl
    >>> frame = pl.DataFrame({"scale": ["or", "rr"], "estimate": ["2.1", ""],
    ...                       "lower": ["1.4", ""], "upper": ["3.15", ""],
    ...                       "outcome": ["common", ""]})
    >>> out = next(screen_frames([frame]))
    >>> out["evalue"].round(2).to_list(), out["error"].to_list()
    ([2.26, None], ['', '`estimate` is missing'])
    """
    from ..common.checks import AT_LEAST_ONE, require

    if any(len(pair) != 2 for pair in confounders):
        raise InputError("`confounders` must be pairs (rr_treatment, rr_outcome)", "confounders")
    pairs = [(require(a, "rr_treatment", AT_LEAST_ONE), require(b, "rr_outcome", AT_LEAST_ONE))
             for a, b in confounders]  # fmt: skip
    options = Options(
        confounders=tuple((float(a), float(b)) for a, b in pairs),
        alpha=check_alpha(alpha),
        from_text=None if from_text is None else "_text",
        decimal_comma=bool(decimal_comma),
    )
    names = computed_names(options)
    frames = iter(frames)
    first = next(frames, None)
    if first is None:
        return
    _check_frame(first)
    header = list(first.columns)
    mapping = _mapping(columns, header, from_text)
    clash = [n for n in names if n in header]
    if clash:
        raise InputError(
            f"the table already has columns named {', '.join(clash)}, which the "
            "screen adds; rename them first"
        )
    # each frame's routes (polars, without the GIL) are found in a second thread while this
    # thread computes the frame before it
    routed = read_ahead(_routed(chain([first], frames), mapping, from_text))
    try:
        for frame, found in routed:
            yield _screen_frame(frame, mapping, options, from_text, names, tally, found)
    finally:
        routed.close()


def _check_frame(frame: Any) -> None:
    if not hasattr(frame, "columns") or not hasattr(frame, "with_columns"):
        raise InputError(
            f"`frames` must yield polars DataFrames; got {type(frame).__name__}", "frames"
        )


def _routed(frames: Iterable[Any], mapping: dict[str, str], from_text: str | None
            ) -> Iterator[tuple[Any, tuple]]:  # fmt: skip
    """Each frame with its rows' routes, scales and numbers (see `plain.routes`)."""
    from .plain import no_routes, routes

    for frame in frames:
        _check_frame(frame)
        found = routes(frame, mapping) if from_text is None else no_routes(frame.height)
        yield frame, found


#: Columns only the core fills (regression rows): all missing in a frame of plain rows.
_CORE_ONLY = ("partial_r2", "robustness_value", "robustness_value_alpha")


def _screen_frame(frame: Any, mapping: dict[str, str], options: Options, from_text: str | None,
                  names: list[str], tally: Tally | None, found: tuple) -> Any:  # fmt: skip
    """One frame, with its routes `found`, and the computed columns appended (see
    `screen_frames`)."""
    import polars as pl

    from .core import SCREEN_SCALES, confounder_states
    from .plain import ROUTE_NOTES, compute_plain

    n = frame.height
    route, scale, values = found
    out = compute_plain(route, values)
    plain = (route >= 0).any()
    rest = np.flatnonzero(route < 0)
    out |= {k: np.full(n, np.nan) for k in _CORE_ONLY}
    # the numbers as read are the routes' own (this thread's alone once handed over)
    read = {"as_read_estimate": values[0], "as_read_lower": values[1],
            "as_read_upper": values[2], "as_read_level": np.full(n, np.nan)}  # fmt: skip
    text = {  # each its own Series: scatter below writes in place
        # a plain row's scale cell is its code as written; every other row is overwritten below
        "scale_used": frame[mapping["scale"]].clone() if plain else pl.repeat("", n, eager=True),
        "as_read_scale": frame[mapping["scale"]].clone() if plain else pl.repeat("", n, eager=True),
        "as_read_outcome": frame[mapping["outcome"]].clone().fill_null("")
        if plain and "outcome" in mapping
        else pl.repeat("", n, eager=True),
        "error": pl.repeat("", n, eager=True),
        "notes": _words(ROUTE_NOTES, np.maximum(route, 0)),
    }
    reasons: list[str] = []
    positions: list[int] = []
    if rest.size:
        core = _core_rows(frame, rest, mapping, options, from_text)
        for key in out:
            out[key][rest] = core[key]
        for key in read:
            read[key][rest] = core[key]
        for key in text:  # a whole column rewritten only where the core's cells differ
            cells = core[key].astype(str).tolist()
            if text[key].gather(rest).to_list() != cells:
                text[key] = text[key].scatter(rest, cells)
        flagged = core["error"] != ""
        number = {c: i for i, c in enumerate(SCREEN_SCALES)}
        scale[rest] = [-1 if bad else number[c] for c, bad in
                       zip(core["scale_used"].tolist(), flagged.tolist(), strict=True)]  # fmt: skip
        reasons = core["_error_kind"][flagged].tolist()
        positions = rest[flagged].tolist()
    states: dict[str, np.ndarray] = {}
    if options.confounders:
        with np.errstate(divide="ignore", invalid="ignore"):
            rr = out["rr"]
            ratio = np.where(rr >= 1, rr, 1 / rr)
            near = np.where(rr >= 1, out["rr_lower"], 1 / out["rr_upper"])
        if rest.size:
            near[rest] = core["_near"]
        states = confounder_states(options, ratio, near, out["evalue"], out["evalue_ci"])
    if tally is not None:
        tally.add(scale, reasons, out, states, positions)

    # a column only the core fills (or the level, read from text alone) is missing on every
    # row unless one of the core's rows has it
    empty = [k for k in (*_CORE_ONLY, "as_read_level")
             if not rest.size or np.isnan((out | read)[k][rest]).all()]  # fmt: skip
    added = text | {k: pl.Series(values=v, nan_to_null=True) for k, v in (out | read).items()
                    if k not in empty}  # fmt: skip
    added |= {k: pl.repeat(None, n, dtype=pl.Float64, eager=True) for k in empty}
    added |= {k: _words(FLAG_WORDS, v) for k, v in states.items()}
    return frame.with_columns(added[k].alias(k) for k in names)


def _words(words: Sequence[str], codes: np.ndarray) -> Any:
    """A polars String column of `words[code]` per row."""
    import polars as pl

    return pl.Series(words, dtype=pl.String).gather(pl.Series(codes, dtype=pl.Int32))


def _core_rows(frame: Any, rows: np.ndarray, mapping: dict[str, str], options: Options,
               from_text: str | None) -> dict[str, np.ndarray]:  # fmt: skip
    """`screen_columns` over the given rows of `frame`."""
    import polars as pl

    part = frame[pl.Series(rows)]
    core: dict[str, Any] = {}
    for std, user in mapping.items():
        core[std] = (
            text_or_numbers(part[user], options.decimal_comma)
            if std in NUMERIC
            else clean_text(part[user])
        )
    if from_text is not None:
        core["_text"] = np.asarray(_series(part[from_text]).to_list(), dtype=object)
    done = screen_columns(core, part.height, options)
    estimate = core.get("estimate")
    if from_text is None:
        from_columns = np.ones(part.height, bool)
    elif estimate is None:
        from_columns = np.zeros(part.height, bool)
    else:  # a row with an estimate cell is read from its columns, the rest from the text
        from_columns = np.asarray([str(v).strip() not in ("", "nan", "None") for v in estimate])
    for key in ("error", "_error_kind"):
        done[key] = _in_file_terms(done[key], mapping, from_text, from_columns)
    return done


def _in_file_terms(reasons: np.ndarray, mapping: Mapping[str, str], from_text: str | None,
                   from_columns: np.ndarray) -> np.ndarray:  # fmt: skip
    """Row reasons naming the file's own columns: the screen's names (`estimate`, the
    interval `ci`) become the columns `--columns` mapped them to (`HR`, `LCL` to `UCL`), or
    the text column a row's numbers were read from."""
    lower, upper = mapping.get("lower", "lower"), mapping.get("upper", "upper")
    renamed = {std: user for std, user in mapping.items() if std != user}
    out = reasons.copy()
    done: dict[tuple[str, bool], str] = {}  # a reason met again (most are) is not redone
    for i in np.flatnonzero(reasons != ""):
        key = (str(reasons[i]), from_text is not None and not from_columns[i])
        if key in done:
            out[i] = done[key]
            continue
        text = re.sub(r"`([^`]+)`", lambda m: f"`{renamed.get(m[1], m[1])}`", str(reasons[i]))
        if from_text is not None and not from_columns[i]:
            whole = f"the interval in `{from_text}`"
            text = text.replace(
                "`ci` lower limit must not exceed the upper",
                f"{whole}: its lower limit must not exceed its upper",
            )
            text = text.replace("`estimate`", f"the estimate in `{from_text}`")
            text = text.replace("`ci`", whole)
        else:
            text = text.replace(
                "`ci` lower limit must not exceed the upper", f"`{lower}` must not exceed `{upper}`"
            )
            text = text.replace(
                "`ci` needs both limits", f"`{lower}` and `{upper}` are both needed"
            )
            text = text.replace("`ci`", f"`{lower}` to `{upper}`")
        out[i] = done[key] = text
    return out


def screen_batches(batches: Iterable[Any], **options: Any) -> Iterator[Any]:
    """Screen a stream of pyarrow RecordBatches; yield each with the computed columns added.

    Every row comes out, in order: good rows with their E-values (and for regression rows
    partial R² and robustness values), bad rows with the reason in `error`. Options are
    those of `screen_frames` (`columns`, `from_text`, `confounders`, `alpha`, and a `Tally`
    to collect the summary as the batches go by).

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
    import polars as pl

    frames = (pl.from_arrow(batch, rechunk=False) for batch in batches)
    for out in screen_frames(frames, **options):
        yield from out.to_arrow().to_batches()


#: Rows of an in-memory table screened at a time (bounds the working arrays).
TABLE_ROWS = 250_000


def _as_polars(table: Any) -> tuple[Any, str]:
    """A pandas, polars or Arrow table as a polars DataFrame, and which kind it was."""
    import polars as pl

    kind = type(table).__module__.split(".")[0]
    if kind == "pandas":
        try:
            return pl.from_pandas(table), kind
        except Exception:  # noqa: BLE001 - a column mixing text and numbers: read it as text
            mixed = [c for c in table.columns if table[c].dtype == object]
            text = table.astype({c: "string" for c in mixed})
            return pl.from_pandas(text), kind
    if kind == "polars" and isinstance(table, pl.DataFrame):
        return table, kind
    if kind == "pyarrow" and hasattr(table, "schema") and hasattr(table, "num_rows"):
        return pl.from_arrow(table), kind
    raise InputError(
        f"`table` must be a pandas, polars or pyarrow table; got {type(table).__name__}", "table"
    )


def _slices(frame: Any) -> Iterator[Any]:
    """The frame in slices of TABLE_ROWS rows (a table with no rows as itself)."""
    yield from frame.iter_slices(TABLE_ROWS) if frame.height else [frame]


def screen_table(table: Any, **options: Any) -> Any:
    """Screen a whole table in memory (pandas, polars or pyarrow); the result is the same kind.

    Options are those of `screen_frames`. The summary is not returned; use `screen_summary`
    for it. A Spark or Dask DataFrame gives a lazy frame of its own kind, each partition
    screened where it lies (`screen/engines.py`).
    """
    from ..adapters.engines import engine_of

    engine = engine_of(table)
    if engine is not None:
        from .engines import screen_engine_table

        return screen_engine_table(table, engine, **options)
    frame, kind = _as_polars(table)
    import polars as pl

    out = pl.concat(list(screen_frames(_slices(frame), **options)))
    if kind == "pandas":
        return out.to_pandas()
    if kind == "pyarrow":
        return out.to_arrow()
    return out


def screen_summary(table: Any, source: str = "the table", threshold: float | None = None,
                   **options: Any) -> ScreenSummary:  # fmt: skip
    """The summary of a screen of `table` (rows, flags by reason, E-values by scale); a
    Spark or Dask DataFrame is screened partition by partition on its engine."""
    from ..adapters.engines import engine_of

    engine = engine_of(table)
    if engine is not None:
        from .engines import screen_engine_summary

        return screen_engine_summary(table, engine, source, threshold, **options)
    frame, _ = _as_polars(table)
    tally = Tally(threshold=threshold, n_confounders=len(options.get("confounders", ())))
    for _ in screen_frames(_slices(frame), tally=tally, **options):
        pass
    return tally.result(tuple(options.get("confounders", ())), source)
