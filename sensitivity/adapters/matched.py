"""Matched pairs from data: a table of pairs (a DataFrame or a file) into the differences
`matched.rosenbaum_bounds` takes, leaving out pairs with a missing or non-numeric value."""

from __future__ import annotations

from typing import Any

import numpy as np

from ..matched.result import MatchedResult


def matched_differences(
    data: Any,
    *,
    treated: str | None = None,
    control: str | None = None,
    differences: str | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Treated-minus-control differences from `data` (a DataFrame or a file path), one a
    pair: the `differences` column, or `treated` minus `control`. Returns the differences
    and the positions (0-based rows of the table) of the pairs left out because a value is
    missing or not a number. Differences of `treated` minus `control` must number two or more
    and not all be zero (as `rosenbaum_bounds` requires; the message names the columns)."""
    from ..common.errors import InputError

    from_file = not hasattr(data, "columns")
    frame, decimal_comma = _text_table(data) if from_file else (data, False)
    if differences and (treated or control):
        raise InputError(
            "give `differences`, or `treated` and `control`, not both",
            ("differences", "treated", "control"),
        )
    cols = [differences] if differences else [treated, control]
    if not all(cols):
        raise InputError(
            "`data` needs `treated` and `control`, or `differences`",
            ("data", "treated", "control", "differences"),
        )
    if not differences and treated == control:
        raise InputError(
            f"`treated` and `control` name the same column ({treated!r}): every difference "
            "would be zero; name the treated and the control unit's columns",
            ("treated", "control"),
        )
    named = ("differences",) if differences else ("treated", "control")
    for col, argument in zip(cols, named, strict=True):
        if col not in frame.columns:
            raise InputError(
                f"`{argument}`: `data` has no column {col!r}; columns: {', '.join(frame.columns)}",
                (argument, "data"),
            )
    every = np.column_stack([_numbers(frame, str(col), decimal_comma) for col in cols])
    bad = np.isnan(every).any(axis=1)

    def where(i: int) -> str:  # a file's line (the header is line 1), else the table's row
        return f"file line {i + 2}" if from_file else f"row {i}"

    infinite = np.isinf(every) & ~bad[:, None]
    if infinite.any():
        i, j = (int(k[0]) for k in np.nonzero(infinite))
        raise InputError(
            f"column {cols[j]!r} holds {every[i, j]:g} on {where(i)} (an infinity, or a number "
            "beyond double precision, about 1.8e308): each value must be a finite number"
        )
    v = every[~bad]
    with np.errstate(over="ignore", invalid="ignore"):
        d = v[:, 0] if differences else v[:, 0] - v[:, 1]
    if not np.isfinite(d).all():
        i = int(np.flatnonzero(~bad)[np.flatnonzero(~np.isfinite(d))[0]])
        raise InputError(
            f"the difference {treated!r} minus {control!r} on {where(i)} is beyond double "
            "precision (about 1.8e308)"
        )
    if not differences:  # the test's own checks name `differences`, which was not given
        _check_named(d, int(bad.sum()), f"the differences {treated!r} minus {control!r}")
    return d, np.flatnonzero(bad)


def _check_named(d: np.ndarray, left_out: int, what: str) -> None:
    """`rosenbaum_bounds`' two checks on the differences (at least two pairs, not all zero),
    worded for the columns they came from."""
    from ..common.errors import InputError

    if d.size < 2:
        why = (f" ({left_out:,} {'pair' if left_out == 1 else 'pairs'} left out for a missing "
               "or non-numeric value)") if left_out else ""  # fmt: skip
        raise InputError(f"{what} must hold at least two pairs; got {d.size}{why}")
    if not np.any(d != 0):
        raise InputError(f"{what} are all zero: the test has nothing to rank")


def _text_table(path: Any) -> tuple[Any, bool]:
    """A CSV or TSV file's cells as text, read as the screen reads them (polars: a file with
    ';' between cells found, a column named twice or a TSV named .csv refused), and whether
    its numbers have decimal commas; another format through pandas."""
    from .files import Share, checked_file, one_column_of_many, read_frames, read_table

    _, kind = checked_file(path, "data")
    if kind not in ("csv", "tsv"):
        return read_table(path, "data"), False
    import polars as pl

    share = Share()
    frame = pl.concat(list(read_frames(path, "data", share=share)), how="vertical")
    one_column_of_many(frame.columns, "data")
    return frame, share.delimiter == ";"


def _numbers(frame: Any, name: str, decimal_comma: bool) -> np.ndarray:
    """A column as floats, NaN where a cell is missing or not a number: pandas' to_numeric
    (errors="coerce") for a pandas table; for a polars table (a file's text cells), a cast
    of each trimmed cell (with `decimal_comma`, 1,32 read as 1.32)."""
    if not type(frame).__module__.startswith("polars"):
        import pandas as pd

        return pd.to_numeric(frame[name], errors="coerce").to_numpy(float)
    import polars as pl

    from .files import DECIMAL_COMMA

    if frame.schema[name].is_numeric():  # a user's polars table
        number = pl.col(name).cast(pl.Float64).fill_null(np.nan)
    else:
        cell = pl.col(name).cast(pl.String).str.strip_chars()
        if decimal_comma:
            cell = cell.str.replace(DECIMAL_COMMA, r"${1}.${2}")
        number = cell.cast(pl.Float64, strict=False).fill_null(np.nan)
    return frame.select(number)[name].to_numpy().astype(float)


def rosenbaum_bounds_from_data(
    data: Any,
    *,
    treated: str | None = None,
    control: str | None = None,
    differences: str | None = None,
    **options: Any,
) -> MatchedResult:
    """Rosenbaum bounds for the pairs in `data` (a DataFrame or a file path): the columns as
    in `matched_differences`, the pairs left out counted in the result (`missing`), and the
    other options (`gamma`, `alpha`, `method`, `zeros`, `alternative`) as in
    `rosenbaum_bounds`.

    Examples
    --------
    Invented pairs; the same result as the differences given directly:

    >>> import pandas as pd
    >>> from sensitivity.matched import rosenbaum_bounds
    >>> pairs = pd.DataFrame({"a": [5.0, 7.5, 6.0, 8.0, None], "b": [4.0, 6.0, 6.5, 5.0, 3.0]})
    >>> res = rosenbaum_bounds_from_data(pairs, treated="a", control="b", gamma=[1, 2])
    >>> ref = rosenbaum_bounds(differences=[1.0, 1.5, -0.5, 3.0], gamma=[1, 2], missing=1)
    >>> res.to_dict() == ref.to_dict()
    True
    """
    from ..matched.core import rosenbaum_bounds

    d, left_out = matched_differences(
        data, treated=treated, control=control, differences=differences
    )
    return rosenbaum_bounds(differences=d, missing=len(left_out), **options)
