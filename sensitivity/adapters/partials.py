"""The one-pass data route in pieces: one partition's share, two shares combined exactly, and
the whole handed to the one-pass route's finish.

A partition (of a Spark or Dask DataFrame, a file of a Parquet dataset) yields a `Partial`:
the R factor of the QR of its own rows of the design [outcome, intercept, numeric columns,
one column per categorical level met], each column keyed by what it holds, with the levels
it met and the constants subtracted from its numeric columns. Two partials combine exactly:
the second's columns are brought to the first's constants (with an intercept, subtracting
c from a column adds a multiple of the intercept's column, so R changes by a multiple of
R's intercept column), both factors are laid out on the union of their columns (a level a
partition never met is a column of zeros there) and the stack of the two is
re-triangularised. Since R'R = X'X for every piece, the stacked factor's R'R is the whole
design's, and its R equals the one-pass factor up to the signs of its rows; the finish reads
only such sign-free quantities. The order and grouping of the combines do not matter, so
any tree reduction gives the same numbers (to rounding).

Only plain formulas (columns and ``C(col)`` joined by '+') split this way: patsy's own
transforms need passes of their own over the whole data.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..common.errors import InputError
from .batches import Batch
from .rfactor import FLOATS, MAX_LEVELS, NUMERIC, Design, Moments, TriangularFactor, plain_terms

__all__ = ["Partial", "arrow_batches", "combine", "design_of", "partition_factor", "plain_only"]


def plain_only(formula: str) -> tuple[str, list, bool]:
    """(outcome, terms, intercept) of a formula the engines can split; InputError otherwise."""
    if not isinstance(formula, str) or "~" not in formula:
        raise InputError(f"`formula` must look like 'y ~ t + x1 + x2'; got {formula!r}", "formula")
    plain = plain_terms(formula)
    if plain is None:
        raise InputError(
            f"`formula` {formula!r}: on Spark or Dask a formula may hold only columns and "
            "C(column) terms joined by '+' (transform a column in the engine first)",
            "formula",
        )
    return plain


@dataclass
class Partial:
    """One partition's share of the design (or several partitions' combined)."""

    keys: list[tuple]  # each column of r: ("y",), ("1",), ("x", term), ("level", term, level)
    r: np.ndarray  # upper-triangular, one column per key
    shift: dict[tuple, float] = field(default_factory=dict)  # constant taken from a column
    kinds: dict[str, str] = field(default_factory=dict)  # term -> kind met ("" if none)
    levels: dict[str, list] = field(default_factory=dict)  # term -> levels met, in order
    outcome: Moments = field(default_factory=Moments)  # of the outcome as read
    read: int = 0
    used: int = 0


def _kind(term: str, column: str, had: str, kind: str) -> str:
    """A term's kind across pieces: integers and numbers make numbers; text never mixes."""
    if not had or had == kind or not kind:
        return kind or had
    if had in NUMERIC and kind in NUMERIC:
        return "number"
    raise InputError(
        f"`data`: column {column!r} is read as {had} in one partition and as {kind} in "
        "another; give it one type in every partition",
        "data",
    )


def _codes(values: Any, kind: str) -> tuple[np.ndarray, list]:
    """Each cell's index among this batch's distinct values (-1 if missing), and those."""
    if kind in FLOATS:
        present = np.unique(values[~np.isnan(values)])
        at = np.minimum(np.searchsorted(present, values), max(present.size - 1, 0))
        return np.where(np.isnan(values), -1, at), present.tolist()
    import pyarrow.compute as pc

    encoded = pc.dictionary_encode(values)
    codes = encoded.indices.to_numpy(zero_copy_only=False)
    codes = np.where(np.isnan(codes), -1, codes) if codes.dtype.kind == "f" else codes
    return codes.astype(np.int64), encoded.dictionary.to_pylist()


def partition_factor(batches: Iterable[Batch], formula: str) -> Partial:
    """The `Partial` of a partition's typed batches (see `batches.Batch`; `arrow_batches`
    makes them from Arrow record batches). No batch at all gives an empty partial."""
    outcome, terms, intercept = plain_only(formula)
    keys: dict[tuple, int] = {("y",): 0}
    if intercept:
        keys[("1",)] = 1
    part = Partial(list(keys), np.zeros((0, len(keys))))
    part.kinds = {t.name: "" for t in terms}
    part.levels = {t.name: [] for t in terms}
    seen: dict[str, dict] = {t.name: {} for t in terms}
    factor = TriangularFactor(len(keys))
    for batch in batches:
        kind, y = batch[outcome]
        if kind not in NUMERIC:
            raise InputError(
                f"`formula`: the outcome column {outcome!r} must be numeric", "formula"
            )
        keep = ~np.isnan(y)
        columns: list[tuple[tuple, np.ndarray]] = [(("y",), y)]
        if intercept:
            columns.append((("1",), np.ones(y.size)))
        for term in terms:
            kind, values = batch[term.column]
            term.kind = part.kinds[term.name] = _kind(term.name, term.column,
                                                      part.kinds[term.name], kind)  # fmt: skip
            if not term.categorical:
                columns.append((("x", term.name), values))
                keep &= ~np.isnan(values)
                continue
            codes, distinct = _codes(values, kind)
            keep &= codes >= 0
            for i, level in enumerate(distinct):
                level = float(level) if kind in FLOATS else level
                if level not in seen[term.name]:
                    seen[term.name][level] = True
                    part.levels[term.name].append(level)
                    if len(part.levels[term.name]) > MAX_LEVELS:
                        raise InputError(f"`data`: column {term.column!r} has more than "
                                         f"{MAX_LEVELS:,} distinct values to code as "
                                         "categories", "data")  # fmt: skip
                columns.append((("level", term.name, level), (codes == i).astype(float)))
        kept = int(keep.sum())
        for key, _ in columns:
            keys.setdefault(key, len(keys))
        block = factor.block(kept, len(keys))
        top = block.shape[0] - kept
        for key, values in columns:
            block[top:, keys[key]] = values[keep]
        part.outcome.add(block[top:, 0])
        if intercept and kept:  # as the one-pass route: numbers less a constant
            for key, _ in columns:
                if key[0] in ("y", "x"):
                    col = keys[key]
                    part.shift.setdefault(key, float(block[top:, col].mean()))
                    block[top:, col] -= part.shift[key]
        factor.add(block)
        part.read, part.used = part.read + y.size, part.used + kept
    factor.widen(len(keys))
    part.keys, part.r = list(keys), factor.r
    return part


def combine(a: Partial, b: Partial) -> Partial:
    """Two partials as one: `b`'s columns brought to `a`'s constants, both laid out on the
    union of their columns, and the stack re-triangularised (exact in arithmetic)."""
    index = {key: i for i, key in enumerate(a.keys)}
    keys = list(a.keys) + [k for k in b.keys if k not in index]
    index = {key: i for i, key in enumerate(keys)}
    shift = dict(b.shift) | a.shift
    rb = np.array(b.r, dtype=float)
    if ("1",) in b.keys:
        one = rb[:, b.keys.index(("1",))].copy()
        for key, constant in b.shift.items():
            rb[:, b.keys.index(key)] += (constant - shift[key]) * one
    stacked = np.zeros((a.r.shape[0] + rb.shape[0], len(keys)), order="F")
    stacked[: a.r.shape[0], [index[k] for k in a.keys]] = a.r
    stacked[a.r.shape[0] :, [index[k] for k in b.keys]] = rb
    factor = TriangularFactor(len(keys))
    factor.add_rows(stacked)
    kinds = {t: _kind(t, re.sub(r"^C\(\s*(\w+)\s*\)$", r"\1", t), a.kinds.get(t, ""), k)
             for t, k in b.kinds.items()}  # fmt: skip
    levels = {}
    for term in a.levels:
        met = set(a.levels[term])
        levels[term] = a.levels[term] + [v for v in b.levels.get(term, []) if v not in met]
    outcome = _merged(a.outcome, b.outcome)
    return Partial(keys, factor.r, shift, kinds, levels, outcome, a.read + b.read,
                   a.used + b.used)  # fmt: skip


def _merged(a: Moments, b: Moments) -> Moments:
    """Count, mean and sum of squared deviations of two pieces as one (Chan et al. 1979)."""
    if not b.n:
        return Moments(a.n, a.mean, a.m2)
    if not a.n:
        return Moments(b.n, b.mean, b.m2)
    n = a.n + b.n
    delta = b.mean - a.mean
    return Moments(n, a.mean + delta * b.n / n, a.m2 + b.m2 + delta * delta * a.n * b.n / n)


def design_of(part: Partial, formula: str) -> Design:
    """The one-pass route's `Design` of a combined partial: the same layout (patsy's names
    and order, the first level of each categorical term in sorted order left out) built by
    the one-pass route's own code from the levels met in all partitions."""
    from .rfactor import _plain_layout

    outcome, terms, intercept = plain_only(formula)
    for term in terms:
        term.kind = part.kinds.get(term.name) or "number"
        term.levels = list(part.levels.get(term.name, []))
    slots = {key: i for i, key in enumerate(part.keys)}
    factor = TriangularFactor(len(part.keys))
    factor.r = part.r
    moments = Moments(part.outcome.n, part.outcome.mean, part.outcome.m2)
    return _plain_layout(terms, intercept, slots, factor, moments, part.read, part.used)


def arrow_batches(batches: Iterable[Any], wanted: list[str]) -> Iterable[Batch]:
    """Typed batches (as the one-pass route reads a Parquet file) of Arrow record batches."""
    from .batches import _arrow_batch

    for batch in batches:
        if batch.num_rows:
            yield _arrow_batch(batch, wanted)
