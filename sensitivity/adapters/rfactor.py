"""The one-pass route's design: the formula's terms, and the R factor of the design's QR
decomposition folded a batch at a time.

Plain formulas (columns and ``C(col)`` joined by '+', with or without an intercept) are built
here in numpy, reading the data once; any other formula goes through patsy's incremental
builder, which makes its own passes over the same batches. A categorical column's levels may
be met in any order: each new level adds a column of the factor (zero on the rows before
it), and patsy's coding (the first level in sorted order left out) is chosen at the end.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..common.errors import InputError
from ..common.overlap import read_ahead
from .batches import ColumnTypeChange, Source, restarting
from .textcells import refuse_numbers_held_as_text

#: The most levels a categorical column may have in this route.
MAX_LEVELS = 10_000

# --------------------------------------------------------------------------- the formula
_TERM = re.compile(r"^(?:C\(\s*(?P<c>[A-Za-z_][A-Za-z0-9_]*)\s*\)|(?P<n>[A-Za-z_][A-Za-z0-9_]*))$")


NUMERIC = ("number", "integer")
#: Kinds whose cells reach the design as floats (a true/false column as 1 and 0).
FLOATS = (*NUMERIC, "bool")


@dataclass
class Term:
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


def plain_terms(formula: str) -> tuple[str, list[Term], bool] | None:
    """(outcome, terms, intercept) for a formula of columns and ``C(col)`` joined by '+'
    (with 0, 1 or -1 for the intercept); None for anything patsy should build."""
    left, _, right = formula.partition("~")
    outcome = left.strip()
    if not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", outcome):
        return None
    intercept = True
    terms: list[Term] = []
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
            terms.append(Term(name, column, wrapped=bool(match.group("c"))))
    return outcome, terms, intercept


# --------------------------------------------------------------------------- R factor
class TriangularFactor:
    """The R of a QR decomposition of every row added so far; columns may be added (zero on
    the rows before them). R is kept square (zero rows until as many rows as columns are
    met); each batch is folded under it by LAPACK's dtpqrt, the QR of a triangle stacked on
    a block, in blocked (level-3) steps: 1.6x faster here than dgeqrf on the stacked array,
    itself 2.4x faster than numpy.linalg.qr."""

    def __init__(self, width: int = 0) -> None:
        self.r = np.zeros((0, width))

    def widen(self, width: int) -> None:
        if width > self.r.shape[1]:
            self.r = np.hstack([self.r, np.zeros((self.r.shape[0], width - self.r.shape[1]))])

    def block(self, rows: int, width: int) -> np.ndarray:
        """A zeroed array (Fortran order) to fill with a batch's rows and hand to `add`. (R is
        no longer stacked on top: `block(...).shape[0] - rows` is 0.)"""
        self.widen(width)
        return np.zeros((rows, width), order="F")

    def add(self, block: np.ndarray) -> None:
        """Fold in a `block` holding a batch (used up: it is overwritten)."""
        if block.shape[0] == 0 or block.shape[1] == 0:
            return
        self.widen(block.shape[1])
        self.r = fold(self.r, block, overwrite=True)

    def add_rows(self, rows: np.ndarray) -> None:
        """Fold in rows (left as they are)."""
        if rows.shape[0] == 0 or rows.shape[1] == 0:
            return
        self.widen(rows.shape[1])
        self.r = fold(self.r, rows)

    def of(self, columns: list[int]) -> np.ndarray:
        """The R factor of those columns of the design, in that order."""
        return r_of(self.r[:, columns])


@contextmanager
def one_blas_thread() -> Iterator[None]:
    """BLAS held to one thread while a pass folds: the reading runs in a second thread
    beside it, and on a shared two-core machine two BLAS threads made the factor's steps
    several times slower, not faster (MEASURED). Without threadpoolctl, as it is."""
    import scipy.linalg.lapack  # noqa: F401 - its own BLAS must be loaded to be limited

    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # pragma: no cover - a dependency; kept optional for odd installs
        yield
        return
    with threadpool_limits(1, user_api="blas"):
        yield


def fold(r: np.ndarray, rows: np.ndarray, overwrite: bool = False) -> np.ndarray:
    """The square R factor of [r; rows]: `r` upper triangular (or fewer rows, the rest
    taken as zero), `rows` any number of rows of the same width (overwritten if `overwrite`
    and already float64 in Fortran order). A pure function of its inputs otherwise, so pieces
    folded anywhere (threads, workers) combine by folding their R's."""
    from scipy.linalg import lapack

    width = rows.shape[1]
    a = np.zeros((width, width), order="F")
    a[: r.shape[0]] = r[:width]
    usable = overwrite and rows.flags.f_contiguous and rows.dtype == np.float64
    b = rows if usable else np.array(rows, dtype=float, order="F")
    a, _, _, info = lapack.dtpqrt(0, min(16, width), a, b, overwrite_a=1, overwrite_b=1)
    if info != 0:
        raise RuntimeError(f"LAPACK dtpqrt failed (info {info})")
    return np.triu(a)


def r_of(a: np.ndarray) -> np.ndarray:
    """The R of a QR decomposition."""
    return np.asarray(np.linalg.qr(a, mode="r"))


@dataclass
class Moments:
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
    outcome: Moments
    read: int
    used: int


#: Called with a piece's kept rows (outcome first, then the factor's slots) and extra columns.
Sink = Callable[[np.ndarray, dict[str, tuple[str, Any]]], None]


# --------------------------------------------------------------------------- plain formulas
def plain_design(source: Source, outcome: str, terms: list[Term], intercept: bool,
                  progress: Callable[[int], None], sink: Sink | None = None,
                  extra: tuple[str, ...] = (), factor: bool = True) -> Design:  # fmt: skip
    """The design of a plain formula in one pass: numbers as they come, each categorical
    column's levels as they are met (a new level is a new column of the factor).

    `sink`, if given, is handed each piece's kept rows as read (column 0 the outcome, the
    others in the factor's slots, before any shift; to be used at once) and the `extra`
    columns' cells on those rows (missing cells there do not leave a row out). With `factor`
    False the rows are not folded (the sink folds its own), and the sink may keep them: the
    pass does not touch a piece's rows again."""
    folding = factor
    wanted = list(dict.fromkeys([outcome] + [t.column for t in terms] + list(extra)))

    def build(forced: dict[str, str]) -> Design:
        for term in terms:
            term.kind, term.levels, term.table = "", [], None
        slots: dict[tuple, int] = {("y",): 0}
        if intercept:
            slots[("1",)] = 1
        factor, moments, read, used = TriangularFactor(len(slots)), Moments(), 0, 0
        shift: dict[int, float] = {}
        # the next piece is parsed (polars, GIL released) while this one is folded
        batches = read_ahead(source.batches(wanted, forced))
        try:
            for batch in batches:
                kind, y = batch[outcome]
                if kind not in NUMERIC:
                    raise InputError(
                        f"`formula`: the outcome column {outcome!r} must be numeric", "formula"
                    )
                rows = y.size
                keep = ~np.isnan(y)
                parts: list[tuple[int, np.ndarray]] = [(0, y)]
                if intercept:
                    parts.append((1, np.ones(rows)))
                for term in terms:
                    kind, values = batch[term.column]
                    if not term.wrapped and kind not in FLOATS:  # text where a number is used
                        refuse_numbers_held_as_text(term.column, values)
                    if term.kind in NUMERIC and kind in NUMERIC:
                        kind = "number" if "number" in (kind, term.kind) else kind  # NA: floats
                    elif term.kind and term.kind != kind:
                        raise ColumnTypeChange(term.column, "text")
                    term.kind = kind
                    if not term.categorical:
                        parts.append((slots.setdefault(("x", term.name), len(slots)), values))
                        keep &= ~np.isnan(values)
                        continue
                    codes = _level_codes(term, values, kind)
                    keep &= codes >= 0
                    for i, level in enumerate(term.levels):
                        slot = slots.setdefault(("level", term.name, level), len(slots))
                        parts.append((slot, codes == i))  # 0/1 as the block takes it
                extras = {name: batch[name] for name in extra}
                kept = int(keep.sum())
                block = factor.block(kept, len(slots))
                top = block.shape[0] - kept
                every = kept == rows  # no row left out: the columns go in as they are
                for slot, values in parts:
                    block[top:, slot] = values if every else values[keep]
                if sink is not None:
                    sink(block[top:], {name: _kept_cells(kind, values, keep)
                                       for name, (kind, values) in extras.items()})  # fmt: skip
                if folding:  # (the sink, if folding is its own, may keep the block)
                    if intercept:  # numbers less a constant: an offset costs no digits
                        _shifted(block[top:], [0] + [slots[("x", t.name)] for t in terms
                                                     if not t.categorical], shift)  # fmt: skip
                    moments.add(block[top:, 0])
                    factor.add(block)
                read, used = read + rows, used + kept
                progress(read)
        finally:
            batches.close()
        return _plain_layout(terms, intercept, slots, factor, moments, read, used)

    return restarting(build)


def _kept_cells(kind: str, values: Any, keep: np.ndarray) -> tuple[str, Any]:
    if kind in FLOATS:
        return kind, values[keep]
    import pyarrow as pa

    return kind, values.filter(pa.array(keep))


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


def _level_codes(term: Term, values: Any, kind: str) -> np.ndarray:
    """Each cell's index among the term's levels met so far (adding new ones); -1 if missing.
    Text is matched in Arrow against levels kept as an Arrow array, and the missing cells
    filled in polars: building Arrow values from Python ones, or converting nulls, would
    import pandas (half a second) through pyarrow."""
    if kind in FLOATS:
        present = values[~np.isnan(values)]
        seen = np.asarray(term.levels, float)
        term.levels += np.setdiff1d(np.unique(present), seen).tolist()
        if not term.levels:  # nothing met yet, and every cell of this batch missing
            return np.full(len(values), -1, np.int64)
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
                             "distinct values to code as categories", "data")  # fmt: skip
        codes = pc.index_in(values, value_set=term.table)
    if codes is None:  # nothing met yet, and every cell of this batch missing
        return np.full(len(values), -1, np.int64)
    return _filled_codes(codes)


def _filled_codes(codes: Any) -> np.ndarray:
    """An Arrow array of int32 codes as int64, missing ones -1: read from its buffers (a
    polars fill_null cost 3 ms a call, and Arrow's own imports pandas)."""
    import pyarrow as pa

    if isinstance(codes, pa.ChunkedArray):
        codes = codes.combine_chunks()
    n, at = len(codes), codes.offset
    validity, data = codes.buffers()[:2]
    out = np.frombuffer(data, np.int32, count=at + n)[at:].astype(np.int64)
    if codes.null_count:
        valid = np.unpackbits(np.frombuffer(validity, np.uint8), count=at + n,
                              bitorder="little")[at:].astype(bool)  # fmt: skip
        out[~valid] = -1
    return out


def _plain_layout(terms: list[Term], intercept: bool, slots: dict[tuple, int],
                  factor: TriangularFactor, moments: Moments, read: int,
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
def patsy_design(source: Source, formula: str, progress: Callable[[int], None]) -> Design:
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
        except ColumnTypeChange:
            raise
        except Exception as err:  # noqa: BLE001 - patsy's errors are the user's formula
            from .fitting import formula_failure

            raise formula_failure(err, formula) from None
        if len(y_info.column_names) != 1:
            raise InputError("`formula`: the outcome must be a single numeric column", "formula")
        names = list(x_info.column_names)
        factor, moments, read, used = TriangularFactor(len(names) + 1), Moments(), 0, 0
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

    return restarting(build)
