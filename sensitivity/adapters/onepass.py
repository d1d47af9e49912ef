"""The partial-R² data route in one pass over the data, in batches.

Every regression the route needs comes from one upper-triangular factor R of the design
[covariates, treatment, outcome]: each batch of rows is stacked under the R so far and
re-triangularised (the R of QR, so memory does not grow with the number of rows). With the
treatment last among the regressors,

- the outcome model y ~ covariates + treatment: the treatment's coefficient r_ty / r_tt, its
  standard error sqrt(r_yy^2 / dof) / |r_tt| (r_yy^2 is the residual sum of squares);
- the treatment model t ~ covariates: its residual sum of squares is r_tt^2;
- each covariate's (or categorical group's) partial R² in either model: R re-triangularised
  with the group just before the model's outcome, the share of that outcome's remaining sum
  of squares the group takes (the Wald F identity, by orthogonal steps).

QR rather than the cross-product matrix X'X: X'X squares the design's condition number, the
R factor does not, so ill-conditioned designs agree with statsmodels' refits to 1e-8 as well
(tests/test_onepass.py). Any subset or order of the design's columns has its own R factor in
the QR of the same columns of R, so a categorical column's levels can be met in any order:
each new level adds a column (zero on the rows before it), and patsy's coding (the first
level in sorted order left out) is chosen at the end.

Plain formulas (columns and ``C(col)`` joined by '+', with or without an intercept) are built
here in numpy, reading the file once; any other formula goes through patsy's incremental
builder, which makes its own passes over the same batches.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..common.errors import InputError
from ..partial_r2.result import CovariateStrength, PartialR2Result

#: Rows a batch of a DataFrame holds (files come in the reader's own blocks of 8 MB).
BATCH_ROWS = 65_536
#: The most levels a categorical column may have in this route.
MAX_LEVELS = 10_000
#: Cells read as missing, as pandas reads a CSV (its default list).
MISSING = ["", "#N/A", "#N/A N/A", "#NA", "-1.#IND", "-1.#QNAN", "-NaN", "-nan", "1.#IND",
           "1.#QNAN", "<NA>", "N/A", "NA", "NULL", "NaN", "None", "n/a", "nan", "null"]  # fmt: skip


# --------------------------------------------------------------------------- the data
class _TypeChange(Exception):
    """A CSV column read as numbers (from its first block) holds text further on."""

    def __init__(self, column: str, kind: str) -> None:
        super().__init__(column)
        self.column, self.kind = column, kind


#: A batch: column name -> ("number" | "integer" | "bool", float64 with NaN; bools as 1 and 0)
#: or ("text", Arrow strings). "integer": a column of whole numbers read as such (pandas shows
#: its levels as 2).
Batch = dict[str, tuple[str, Any]]


@dataclass
class Source:
    """A table read in batches: a file (CSV, TSV, Parquet, Excel) or a DataFrame. `batches`
    takes the wanted columns and the kinds forced on some of them (after a _TypeChange)."""

    columns: list[str]
    batches: Callable[[list[str], dict[str, str]], Iterator[Batch]]


def _arrow_batch(batch: Any, wanted: list[str]) -> Batch:
    import pyarrow as pa

    out: Batch = {}
    for name in wanted:
        col = batch.column(name)
        kind_of = col.type
        if pa.types.is_dictionary(kind_of):
            col, kind_of = col.cast(pa.string()), pa.string()
        if pa.types.is_integer(kind_of):
            out[name] = ("integer", col.cast(pa.float64()).to_numpy(zero_copy_only=False))
        elif pa.types.is_floating(kind_of) or pa.types.is_decimal(kind_of) \
                or pa.types.is_null(kind_of):  # fmt: skip
            out[name] = ("number", col.cast(pa.float64()).to_numpy(zero_copy_only=False))
        elif pa.types.is_boolean(kind_of):
            out[name] = ("bool", col.cast(pa.float64()).to_numpy(zero_copy_only=False))
        else:
            out[name] = ("text", col.cast(pa.string()))
    return out


def file_source(path: str | Path, argument: str = "data") -> Source:
    """The columns of a file, read a batch at a time."""
    from .files import _checked

    p, kind = _checked(path, argument)
    if kind == "excel":  # sheets are small: read whole, then batch as a frame
        from .files import read_table

        return frame_source(read_table(p, argument))
    if kind == "parquet":
        import pyarrow.parquet as pq

        try:
            names = list(pq.ParquetFile(p).schema_arrow.names)
        except Exception as err:  # noqa: BLE001 - the file's problem
            first = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
            raise InputError(f"`{argument}`: could not read {path} as parquet: {first}") from None

        def parquet(wanted: list[str], forced: dict[str, str]) -> Iterator[Batch]:
            for batch in pq.ParquetFile(p).iter_batches(batch_size=BATCH_ROWS, columns=wanted):
                yield _arrow_batch(batch, wanted)

        return Source(names, parquet)
    delimiter = "," if kind == "csv" else "\t"
    names = _csv_header(p, delimiter, argument)

    def text(wanted: list[str], forced: dict[str, str]) -> Iterator[Batch]:
        yield from _csv_batches(p, delimiter, names, wanted, forced, argument)

    return Source(names, text)


def _csv_header(path: Path, delimiter: str, argument: str) -> list[str]:
    """The column names, refusing a file with no data row after them."""
    import csv

    from .files import text_header

    header = text_header(path, delimiter, argument)
    with open(path, newline="", encoding="utf-8-sig") as fh:
        rows = csv.reader(fh, delimiter=delimiter)
        next(rows, None)
        if next((row for row in rows if any(cell.strip() for cell in row)), None) is None:
            raise InputError(f"`{argument}`: {path} has no data rows")
    return header


def _csv_batches(path: Path, delimiter: str, header: list[str], wanted: list[str],
                 forced: dict[str, str], argument: str) -> Iterator[Batch]:  # fmt: skip
    """Typed batches of the wanted columns, each parsed on its own from a piece of the file
    by polars: types inferred over the whole first piece (except those forced) and held for
    the rest; a column whose type breaks further on raises _TypeChange."""
    import io

    import polars as pl

    from .files import byte_chunks

    dtypes: dict[str, Any] = {
        name: pl.Float64 if kind == "number" else pl.String for name, kind in forced.items()
    }
    first = True
    for head, body in byte_chunks(path):
        try:
            frame = pl.read_csv(
                io.BytesIO(head + body), separator=delimiter, columns=wanted,
                null_values=MISSING, infer_schema_length=None if first else 0,
                schema_overrides=dtypes, raise_if_empty=False,
            )  # fmt: skip
        except Exception as err:  # noqa: BLE001 - a parser failure is the file's, not ours
            # the first paragraph, on one line (a cell's own newline shown as \n)
            text = " ".join(str(err).strip().split("\n\n")[0].replace("\n`", "\\n`").split())
            text = text or type(err).__name__
            found = re.search(r"as dtype `(\w+)` at column '([^']*)'", text)
            if found and found.group(1) != "str" and found.group(2) in wanted:
                kind = "number" if found.group(1).startswith("i") else "text"
                raise _TypeChange(found.group(2), kind) from None
            raise InputError(f"`{argument}`: could not read {path}: {text}") from None
        if first:
            dtypes = {name: frame.schema[name] for name in wanted} | dtypes
            first = False
        yield {name: _polars_column(frame[name]) for name in wanted}


def _polars_column(column: Any) -> tuple[str, Any]:
    import polars as pl
    import pyarrow as pa

    if column.dtype.is_integer():
        kind = "integer" if column.null_count() == 0 else "number"
        return kind, column.cast(pl.Float64).to_numpy()
    if column.dtype.is_numeric() or column.dtype == pl.Null:
        return "number", column.cast(pl.Float64).to_numpy()
    if column.dtype == pl.Boolean:
        return "bool", column.cast(pl.Float64).to_numpy()
    return "text", column.cast(pl.String).to_arrow().cast(pa.string())


def frame_source(frame: Any) -> Source:
    """A pandas (or polars, or Arrow) table held in memory, sliced into batches."""
    if not hasattr(frame, "iloc"):
        frame = frame.to_pandas()
    if frame.shape[0] == 0:
        raise InputError("`data` has no rows")

    def slices(wanted: list[str], forced: dict[str, str]) -> Iterator[Batch]:
        for start in range(0, len(frame), BATCH_ROWS):
            part = frame.iloc[start : start + BATCH_ROWS]
            yield {name: _pandas_column(part[name]) for name in wanted}

    return Source([str(c) for c in frame.columns], slices)


def _pandas_column(column: Any) -> tuple[str, Any]:
    import pyarrow as pa
    from pandas.api.types import is_bool_dtype, is_integer_dtype, is_numeric_dtype

    if is_integer_dtype(column.dtype) and not column.isna().any():
        return "integer", column.to_numpy(dtype=float)
    if is_bool_dtype(column.dtype):
        return "bool", column.to_numpy(dtype=float, na_value=np.nan)
    if is_numeric_dtype(column.dtype):
        return "number", column.to_numpy(dtype=float, na_value=np.nan)
    values = column.astype(object).where(column.notna(), None)
    return "text", pa.array([None if v is None else str(v) for v in values], pa.string())


# --------------------------------------------------------------------------- the formula
_TERM = re.compile(r"^(?:C\(\s*(?P<c>[A-Za-z_][A-Za-z0-9_]*)\s*\)|(?P<n>[A-Za-z_][A-Za-z0-9_]*))$")


NUMERIC = ("number", "integer")
#: Kinds whose cells reach the design as floats (a true/false column as 1 and 0).
FLOATS = (*NUMERIC, "bool")


@dataclass
class _Term:
    name: str  # as patsy names it: "x1", "C(region)", "smoker"
    column: str
    wrapped: bool  # written C(col): categorical whatever its kind
    kind: str = ""  # the column's kind once read: number, bool or text
    levels: list[Any] = field(default_factory=list)  # as met; sorted by `coded_levels`
    table: Any = None  # text levels as met, as an Arrow array (built without pandas)

    @property
    def categorical(self) -> bool:
        return self.wrapped or self.kind not in NUMERIC

    def coded_levels(self) -> list[Any]:
        """The levels as patsy sorts and shows them."""
        if self.kind == "bool":
            return [False, True]
        if self.kind == "integer":
            return sorted(int(v) for v in self.levels)
        return sorted(self.levels)

    def key(self, level: Any) -> Any:
        """A level as met and as shown, compared (a bool met as 1.0 is shown as True)."""
        return float(level) if self.kind in FLOATS else level


def plain_terms(formula: str) -> tuple[str, list[_Term], bool] | None:
    """(outcome, terms, intercept) for a formula of columns and ``C(col)`` joined by '+'
    (with 0, 1 or -1 for the intercept); None for anything patsy should build."""
    left, _, right = formula.partition("~")
    outcome = left.strip()
    if not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", outcome):
        return None
    intercept = True
    terms: list[_Term] = []
    pieces = re.split(r"\s*([+-])\s*", "+" + right.strip())
    if pieces[0]:
        return None
    for sign, piece in zip(pieces[1::2], pieces[2::2], strict=True):
        if piece in ("0", "1"):
            intercept = intercept and not (piece == "0" or sign == "-")
            continue
        match = _TERM.match(piece)
        if match is None or sign == "-":
            return None
        column = match.group("c") or match.group("n")
        name = f"C({column})" if match.group("c") else column
        if all(t.name != name for t in terms):
            terms.append(_Term(name, column, wrapped=bool(match.group("c"))))
    return outcome, terms, intercept


# --------------------------------------------------------------------------- R factor
class TriangularFactor:
    """The R of a QR decomposition of every row added so far; columns may be added (zero on
    the rows before them). Each batch is stacked under R in Fortran order and handed to
    LAPACK's dgeqrf in place (2.4x faster here than numpy.linalg.qr, which copies)."""

    def __init__(self, width: int = 0) -> None:
        self.r = np.zeros((0, width))

    def widen(self, width: int) -> None:
        if width > self.r.shape[1]:
            self.r = np.hstack([self.r, np.zeros((self.r.shape[0], width - self.r.shape[1]))])

    def block(self, rows: int, width: int) -> np.ndarray:
        """A zeroed array to fill with a batch's rows, below the room R takes."""
        self.widen(width)
        return np.zeros((self.r.shape[0] + rows, width), order="F")

    def add(self, stacked: np.ndarray) -> None:
        """Fold in a `block` whose lower rows hold a batch."""
        from scipy.linalg import lapack

        top, width = self.r.shape
        if stacked.shape[0] == top:
            return
        stacked[:top] = self.r
        qr, _, _, info = lapack.dgeqrf(stacked, overwrite_a=1)
        if info != 0:
            raise RuntimeError(f"LAPACK dgeqrf failed (info {info})")
        self.r = np.triu(qr[: min(qr.shape[0], width)])

    def add_rows(self, rows: np.ndarray) -> None:
        block = self.block(rows.shape[0], rows.shape[1])
        block[self.r.shape[0] :] = rows
        self.add(block)

    def of(self, columns: list[int]) -> np.ndarray:
        """The R factor of those columns of the design, in that order."""
        return _r_of(self.r[:, columns])


def _r_of(a: np.ndarray) -> np.ndarray:
    """The R of a QR decomposition."""
    return np.asarray(np.linalg.qr(a, mode="r"))


@dataclass
class _Moments:
    """Count, mean and sum of squared deviations, merged batch by batch (Chan et al. 1979)."""

    n: int = 0
    mean: float = 0.0
    m2: float = 0.0

    def add(self, values: np.ndarray) -> None:
        if values.size == 0:
            return
        m, mean = values.size, float(values.mean())
        m2 = float(np.square(values - mean).sum())
        delta, total = mean - self.mean, self.n + m
        self.mean += delta * m / total
        self.m2 += m2 + delta * delta * self.n * m / total
        self.n = total

    @property
    def sd(self) -> float:
        return float(np.sqrt(self.m2 / (self.n - 1))) if self.n > 1 else float("nan")


@dataclass
class Design:
    """What the pass found: each design column's name and place in the factor, the term
    groups, and the counts."""

    names: list[str]  # in patsy's order
    slots: list[int]  # the factor's column of each name
    groups: dict[str, list[int]]
    intercepts: set[int]
    factor: TriangularFactor
    y_slot: int
    outcome: _Moments
    read: int
    used: int


def _restarting(build: Callable[[dict[str, str]], Design]) -> Design:
    """Run a pass; when a CSV column's type breaks partway, run it again with the type forced
    (numbers where integers broke, then text)."""
    forced: dict[str, str] = {}
    while True:
        try:
            return build(forced)
        except _TypeChange as change:
            if forced.get(change.column) == change.kind:
                raise InputError(f"`data`: column {change.column!r} could not be read") from None
            forced[change.column] = change.kind


# --------------------------------------------------------------------------- plain formulas
def _plain_design(source: Source, outcome: str, terms: list[_Term], intercept: bool,
                  progress: Callable[[int], None]) -> Design:  # fmt: skip
    """The design of a plain formula in one pass: numbers as they come, each categorical
    column's levels as they are met (a new level is a new column of the factor)."""
    wanted = list(dict.fromkeys([outcome] + [t.column for t in terms]))

    def build(forced: dict[str, str]) -> Design:
        for term in terms:
            term.kind, term.levels, term.table = "", [], None
        slots: dict[tuple, int] = {("y",): 0}
        if intercept:
            slots[("1",)] = 1
        factor, moments, read, used = TriangularFactor(len(slots)), _Moments(), 0, 0
        shift: dict[int, float] = {}
        for batch in source.batches(wanted, forced):
            kind, y = batch[outcome]
            if kind not in NUMERIC:
                raise InputError(f"`formula`: the outcome column {outcome!r} must be numeric")
            rows = y.size
            keep = ~np.isnan(y)
            parts: list[tuple[int, np.ndarray]] = [(0, y)]
            if intercept:
                parts.append((1, np.ones(rows)))
            for term in terms:
                kind, values = batch[term.column]
                if term.kind in NUMERIC and kind in NUMERIC:
                    kind = "number" if "number" in (kind, term.kind) else kind  # NA: floats
                elif term.kind and term.kind != kind:
                    raise _TypeChange(term.column, "text")
                term.kind = kind
                if not term.categorical:
                    parts.append((slots.setdefault(("x", term.name), len(slots)), values))
                    keep &= ~np.isnan(values)
                    continue
                codes = _level_codes(term, values, kind)
                keep &= codes >= 0
                for i, level in enumerate(term.levels):
                    slot = slots.setdefault(("level", term.name, level), len(slots))
                    parts.append((slot, (codes == i).astype(float)))
            kept = int(keep.sum())
            block = factor.block(kept, len(slots))
            top = block.shape[0] - kept
            for slot, values in parts:
                block[top:, slot] = values[keep]
            if intercept:  # numbers less a constant: an offset costs no digits (see _shifted)
                _shifted(block[top:], [0] + [slots[("x", t.name)] for t in terms
                                             if not t.categorical], shift)  # fmt: skip
            moments.add(block[top:, 0])
            factor.add(block)
            read, used = read + rows, used + kept
            progress(read)
        return _plain_layout(terms, intercept, slots, factor, moments, read, used)

    return _restarting(build)


def _shifted(rows: np.ndarray, columns: list[int], shift: dict[int, float]) -> None:
    """Subtract from each numeric column a constant (its mean in the first rows that have
    one). With an intercept in the model this changes no coefficient but the intercept's, no
    residual and no partial R², and spares the factor the digits an offset would cost (blood
    pressure near 120, years near 2000: the column and the intercept nearly parallel)."""
    for col in columns:
        if col not in shift and rows.shape[0]:
            shift[col] = float(rows[:, col].mean())
        if col in shift:
            rows[:, col] -= shift[col]


def _level_codes(term: _Term, values: Any, kind: str) -> np.ndarray:
    """Each cell's index among the term's levels met so far (adding new ones); -1 if missing.
    Text is matched in Arrow against levels kept as an Arrow array, and the missing cells
    filled in polars: building Arrow values from Python ones, or converting nulls, would
    import pandas (half a second) through pyarrow."""
    if kind in FLOATS:
        present = values[~np.isnan(values)]
        seen = np.asarray(term.levels, float)
        term.levels += np.setdiff1d(np.unique(present), seen).tolist()
        table = np.asarray(term.levels, float)
        order = np.argsort(table)
        at = np.minimum(np.searchsorted(table[order], values), len(table) - 1)
        return np.where(np.isnan(values), -1, order[at])
    import pyarrow as pa
    import pyarrow.compute as pc

    codes = None if term.table is None else pc.index_in(values, value_set=term.table)
    unseen = pc.is_valid(values) if codes is None else pc.and_(pc.is_null(codes),
                                                              pc.is_valid(values))  # fmt: skip
    if pc.any(unseen).as_py():
        new = pc.unique(pc.filter(values, unseen))
        new = new.take(pc.sort_indices(new))
        term.table = new if term.table is None else pa.concat_arrays([term.table, new])
        term.levels += new.to_pylist()
        if len(term.levels) > MAX_LEVELS:
            raise InputError(f"`data`: column {term.column!r} has more than {MAX_LEVELS:,} "
                             "distinct values to code as categories")  # fmt: skip
        codes = pc.index_in(values, value_set=term.table)
    import polars as pl

    return pl.Series(values=codes).fill_null(-1).to_numpy().astype(np.int64)


def _plain_layout(terms: list[_Term], intercept: bool, slots: dict[tuple, int],
                  factor: TriangularFactor, moments: _Moments, read: int,
                  used: int) -> Design:  # fmt: skip
    """patsy's names and order: the intercept, pure categorical terms, then numeric ones,
    each as written; a categorical term leaves out its first level (sorted), except the first
    one when there is no intercept."""
    names, where = (["Intercept"], [slots[("1",)]]) if intercept else ([], [])
    groups: dict[str, list[int]] = {"Intercept": [0]} if intercept else {}
    full = not intercept
    ordered = [t for t in terms if t.categorical] + [t for t in terms if not t.categorical]
    for term in ordered:
        start = len(names)
        if not term.categorical:
            names.append(term.name)
            where.append(slots[("x", term.name)])
        else:
            shown = term.coded_levels()
            met = {term.key(v): v for v in term.levels}
            for level in shown if full else shown[1:]:
                label = f"{term.name}[{level}]" if full else f"{term.name}[T.{level}]"
                names.append(label)
                raw = met.get(term.key(level))
                slot = slots.get(("level", term.name, raw)) if raw is not None else None
                where.append(-1 if slot is None else slot)
            full = False
        groups[term.name] = list(range(start, len(names)))
    if -1 in where:  # a bool level never met: a column of zeros
        factor.widen(len(slots) + 1)
        where = [len(slots) if s == -1 else s for s in where]
    intercepts = {0} if intercept else set()
    return Design(names, where, groups, intercepts, factor, 0, moments, read, used)


# --------------------------------------------------------------------------- other formulas
def _patsy_design(source: Source, formula: str, progress: Callable[[int], None]) -> Design:
    """Any other formula: patsy's incremental builder over the same batches."""
    import pandas as pd
    import patsy

    # every column the formula's text names (reading one too many costs little)
    named = set(re.findall(r"[A-Za-z_][A-Za-z0-9_.]*", formula))
    named |= set(re.findall(r"Q\(\s*[\'\"]([^\'\"]+)[\'\"]\s*\)", formula))
    wanted = [c for c in source.columns if c in named]

    def build(forced: dict[str, str]) -> Design:
        def frames() -> Iterator[Any]:
            for batch in source.batches(wanted, forced):
                data: dict[str, Any] = {}
                for name, (kind, values) in batch.items():
                    if kind in NUMERIC:
                        data[name] = values
                    elif kind == "bool":
                        data[name] = pd.Series([None if v != v else bool(v) for v in values],
                                               dtype=object)  # fmt: skip
                    else:
                        data[name] = pd.Series(values.to_pylist(), dtype=object)
                yield pd.DataFrame(data)

        env = patsy.EvalEnvironment([{"np": np}])
        try:
            y_info, x_info = patsy.incr_dbuilders(formula, frames, eval_env=env)
        except _TypeChange:
            raise
        except Exception as err:  # noqa: BLE001 - patsy's errors are the user's formula
            text = " ".join(str(err).split()) or type(err).__name__
            raise InputError(f"`formula` {formula!r} could not be fitted: {text[:300]}") from None
        if len(y_info.column_names) != 1:
            raise InputError("`formula`: the outcome must be a single numeric column")
        names = list(x_info.column_names)
        factor, moments, read, used = TriangularFactor(len(names) + 1), _Moments(), 0, 0
        shift: dict[int, float] = {}
        numeric = [i for i in range(len(names) + 1) if i == len(names) or names[i] != "Intercept"]
        for frame in frames():
            y, x = patsy.build_design_matrices([y_info, x_info], frame, return_type="matrix")
            block = np.hstack([np.asarray(x, float), np.asarray(y, float)])
            if "Intercept" in names:
                _shifted(block, numeric, shift)
            moments.add(block[:, -1])
            factor.add_rows(block)
            read, used = read + len(frame), used + block.shape[0]
            progress(read)
        groups = {t: list(range(len(names)))[sl] for t, sl in x_info.term_name_slices.items()}
        intercepts = {i for i, n in enumerate(names) if n == "Intercept"}
        slots = list(range(len(names)))
        return Design(names, slots, groups, intercepts, factor, len(names), moments, read, used)

    return _restarting(build)


# --------------------------------------------------------------------------- the regressions
def _kept(r: np.ndarray, rows: int) -> list[int]:
    """Columns of R (regressors in order) whose own information is not rounding error, by
    numpy's matrix_rank rule as statsmodels counts the rank: a column in the span of the
    ones before it (its diagonal entry below the tolerance) is left out, and the columns after
    it are re-triangularised without it."""
    width = r.shape[1]
    if not width:
        return []
    tol = float(np.linalg.svd(r, compute_uv=False).max()) * max(rows, width) * np.finfo(float).eps
    kept = list(range(width))
    part = r
    at = 0
    while at < len(kept):
        if at < part.shape[0] and abs(part[at, at]) > tol:
            at += 1
            continue
        del kept[at]
        part = _r_of(r[:, kept]) if kept else part
    return kept


def _share_after(r: np.ndarray, first: list[int], group: list[int], target: int) -> float:
    """Partial R² of the `group` columns with the `target` column given the `first` columns:
    with R re-triangularised in the order [first, group, target], the group lowers the
    target's residual sum of squares by ||R[group rows, target]||² and leaves r_target²,
    so the share is their ratio. (Equal to the Wald F route, Fq / (Fq + dof), in exact
    arithmetic; orthogonal steps keep its digits where inverting the covariance would not.)"""
    part = _r_of(r[:, first + group + [target]])
    m = len(first)
    gained = float(np.sum(np.square(part[m : m + len(group), -1])))
    left = float(part[m + len(group), -1] ** 2) if part.shape[0] > m + len(group) else 0.0
    return gained / (gained + left) if gained + left > 0 else 0.0


def partial_r2_one_pass(data: Any, formula: str, treatment: str, **options: Any
                        ) -> PartialR2Result:  # fmt: skip
    """Partial-R² sensitivity of `treatment` from `data` (a file path or a DataFrame) and an
    OLS `formula`, in one pass over the data in batches: equal to fitting the formula with
    statsmodels and calling `partial_r2_from_model` (to 1e-8), in memory that does not grow
    with the number of rows. Options are those of `partial_r2_from_model`, and `progress`, a
    function called with the number of rows read after each batch.
    """
    from .statsmodels import _find_treatment, check_names, no_interaction, partial_r2_from_parts

    if not isinstance(formula, str) or "~" not in formula:
        raise InputError(f"`formula` must look like 'y ~ t + x1 + x2'; got {formula!r}")
    source = frame_source(data) if hasattr(data, "columns") else file_source(data, "data")
    check_names(_Header(source.columns), formula, treatment, options.get("benchmarks", ()))
    progress = options.pop("progress", None) or (lambda rows: None)
    plain = plain_terms(formula)
    if plain:
        design = _plain_design(source, *plain, progress)
    else:
        design = _patsy_design(source, formula, progress)
    if design.used == 0:
        raise InputError("`data`: no row has a value in every column the formula uses")
    names = design.names
    j = _find_treatment(treatment, names, design.groups)
    no_interaction(names[j], names)
    rest = [i for i in range(len(names)) if i != j]
    r = design.factor.of([design.slots[i] for i in rest + [j]] + [design.y_slot])
    kept = _kept(r[:, :-1], design.used)
    if design.used - len(kept) < 2:  # too few rows: say so before any rank problem
        raise InputError(f"`data`: the fit has {design.used - len(kept)} residual degrees of "
                         "freedom; need at least 2")  # fmt: skip
    notes: list[str] = []
    if design.read > design.used:
        notes.append(f"{design.read - design.used} of {design.read} rows had missing values in "
                     "the model's columns and were left out of the fit.")  # fmt: skip
    if len(rest) not in kept:
        raise InputError(f"`treatment` {names[j]!r} is a linear combination of the covariates "
                         "in these data: its coefficient is not identified")  # fmt: skip
    dropped = [names[rest[i]] for i in range(len(rest)) if i not in kept]
    if dropped:
        notes.append("Left out as linear combinations of the columns before them: "
                     + ", ".join(dropped) + ".")  # fmt: skip
    k = len(kept) - 1
    dof = design.used - (k + 1)  # at least 2: checked above
    r = _r_of(r[:, kept + [r.shape[1] - 1]])  # covariates, treatment, outcome
    # the treatment is the last regressor: b = r_ty / r_tt, se = sqrt(rss / dof) / |r_tt|
    estimate = float(r[k, k + 1] / r[k, k])
    se = float(np.sqrt(r[k + 1, k + 1] ** 2 / dof) / abs(r[k, k]))
    position = {rest[c]: pos for pos, c in enumerate(kept[:-1])}  # design column -> factor
    strengths = []
    for name, cols in design.groups.items():
        cols = [c for c in cols if c not in design.intercepts and c in position]
        if not cols:
            continue
        group = [position[c] for c in cols]
        others = [i for i in range(k) if i not in group]
        r2y = _share_after(r, others + [k], group, k + 1)
        r2t = _share_after(r, others, group, k)
        strengths.append(CovariateStrength(name, tuple(names[c] for c in cols), r2t, r2y))
    return partial_r2_from_parts(
        estimate, se, float(dof), tuple(strengths), treatment=names[j],
        outcome=formula.split("~", 1)[0].strip(), n=design.used, sd_outcome=design.outcome.sd,
        notes=tuple(options.pop("notes", ())) + tuple(notes), **options,
    )  # fmt: skip


@dataclass
class _Header:
    """The column names of a source, where check_names looks for them."""

    columns: list[str]
