"""Text cells where numbers were meant: a column a formula (or a covariate list) uses as a
number, whose cells are text, is refused with the rule instead of being coded as categories,
one a value: a stray word among numbers, or numbers written with a percent sign or a decimal
comma."""

from __future__ import annotations

from typing import Any

from ..common.errors import InputError

#: A column a formula uses as a number (not C(col)) whose cells are at least this share
#: numbers, with more than MANY_NUMBERS distinct ones, is taken for a number column with
#: stray text, not for categories (a few codes and a word stay categories, as patsy has them).
MOSTLY_NUMBERS = 0.9
MANY_NUMBERS = 50


def refuse_numbers_held_as_text(column: str, cells: Any, where: str = "formula") -> None:
    """InputError when a text column used as a plain term (not ``C(col)``) is mostly numbers
    of many values: a stray word ("unknown") in a number column would otherwise make every
    distinct number a category, a design as wide as the values are many. `cells`: the
    column's cells as text (polars or Arrow, or a sequence; missing cells not counted).
    `where`: "formula" (the way out is C(col)), or "covariates" (a list of columns, whose
    text columns are coded as categories: the way out is to write the cells as numbers)."""
    import polars as pl

    text = pl.Series(values=cells) if not isinstance(cells, pl.Series) else cells
    text = text.cast(pl.String).str.strip_chars()
    filled = text.filter(text.is_not_null() & (text != ""))
    if not filled.len():
        return
    numbers = filled.cast(pl.Float64, strict=False)
    read = int(numbers.is_not_null().sum())
    if read < MOSTLY_NUMBERS * filled.len():
        _refuse_written_numbers(column, filled, where)
    if read == filled.len() or read < MOSTLY_NUMBERS * filled.len():
        return
    if numbers.drop_nulls().n_unique() <= MANY_NUMBERS:
        return
    first = filled.filter(numbers.is_null())[0]
    raise InputError(
        f"`data`: column {column!r} {_USE[where]}, but cells such as "
        f"{first!r} are not numbers ({filled.len() - read:,} of {filled.len():,} filled "
        f"cells); blank or correct them{_OR[where](column)}",
        "data",
    )


_USE = {
    "formula": "is used as a number in the formula",
    "covariates": "is a covariate whose cells are mostly numbers",
}
_OR = {
    "formula": lambda column: f", or write C({column}) to code the column as categories",
    "covariates": lambda column: " (as text, each value would be a category of its own)",
}


#: Numbers as a spreadsheet may write them, and how to write them instead.
WRITTEN_NUMBERS = (
    (r"^[-+]?(\d+(\.\d*)?|\.\d+)\s*%$", "a percent sign", "write 12.5 for 12.5%"),
    (r"^[-+]?\d+,\d+$", "a decimal comma", "write 1.5 for 1,5"),
)


def _refuse_written_numbers(column: str, filled: Any, where: str = "formula") -> None:
    """A column whose cells are (mostly) numbers written with a percent sign or a decimal
    comma would be coded as categories, each value one: refused, saying how to write them."""
    for pattern, what, how in WRITTEN_NUMBERS:
        written = filled.str.contains(pattern)
        if int(written.sum()) >= MOSTLY_NUMBERS * filled.len():
            first = filled.filter(written)[0]
            use = "is used as a number in the formula" if where == "formula" else "is a covariate"
            raise InputError(
                f"`data`: column {column!r} {use}, but its cells are numbers written with "
                f"{what} (such as {first!r}), which are not read as numbers: "
                f"{how}{_OR[where](column)}",
                "data",
            )


def refuse_numbers_in_frame(data: Any, formula: str) -> None:
    """`refuse_numbers_held_as_text` for each plain term's text column of a pandas frame."""
    from .rfactor import plain_terms

    parsed = plain_terms(formula)
    for term in parsed[1] if parsed is not None and hasattr(data, "dtypes") else ():
        if not term.wrapped and term.column in data.columns and data[term.column].dtype.kind == "O":
            cells = [None if v is None or v != v else str(v) for v in data[term.column].tolist()]
            refuse_numbers_held_as_text(term.column, cells)
