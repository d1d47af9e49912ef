"""The screen over a Spark or Dask DataFrame of published results, or a Parquet dataset folder.

Each partition is screened where it lies, as Arrow batches (`screen_batches`), with a tally
of its own; the rows keep their order within a partition, and the tallies are added up on
the driver in partition order (`Tally.merge`), so the summary is the one a single pass
would keep. `screened_frames` brings the screened rows to this machine partition by
partition, in order, for a writer; `screen_table` and `screen_summary` route a Spark or Dask
DataFrame here (the first returns a lazy frame of the engine's own kind).
"""

from __future__ import annotations

import pickle
from collections.abc import Callable, Iterator, Mapping
from functools import partial
from pathlib import Path
from typing import Any

from .result import ScreenSummary, Tally

Progress = Callable[[int, int], None]


def _tally(options: Mapping[str, Any], threshold: float | None) -> Tally:
    return Tally(threshold=threshold, n_confounders=len(options.get("confounders", ())))


def screen_arrow(batches: Iterator[Any], options: Mapping[str, Any],
                 threshold: float | None = None) -> tuple[list[Any], Tally]:  # fmt: skip
    """One partition's Arrow record batches screened, and its tally."""
    from .stream import screen_batches

    tally = _tally(options, threshold)
    out = list(screen_batches((b for b in batches if b.num_rows), tally=tally, **options))
    return out, tally


# --------------------------------------------------------------------------- the output
def output_schema(schema: Any, options: Mapping[str, Any]) -> Any:
    """The Arrow schema of the screened table: the input's columns as they are, then the
    computed ones (numbers as float64, words as strings)."""
    import polars as pl
    import pyarrow as pa

    from .stream import screen_frames

    empty = pl.from_arrow(pa.table({n: pa.array([], t) for n, t in zip(schema.names,
                                                                       schema.types,
                                                                       strict=True)}))  # fmt: skip
    screened = next(screen_frames([empty], **options))
    fields = list(schema)
    for name in screened.columns[len(schema.names) :]:
        kind = screened.schema[name]
        fields.append(pa.field(name, pa.float64() if kind.is_numeric() else
                               pa.bool_() if kind == pl.Boolean else pa.string()))  # fmt: skip
    return pa.schema(fields)


def _conformed(batch: Any, schema: Any) -> Any:
    import pyarrow as pa

    return pa.Table.from_batches([batch]).cast(schema).to_batches()


# --------------------------------------------------------------------------- Spark
def _spark_screen(batches: Iterator[Any], options: dict, schema: Any) -> Iterator[Any]:
    out, _ = screen_arrow(batches, options)
    for batch in out:
        yield from _conformed(batch, schema)


def _spark_rows(batches: Iterator[Any], options: dict, threshold: float | None,
                schema: Any) -> Iterator[Any]:  # fmt: skip
    """A partition as rows of (0, Arrow IPC of a screened batch) and a last (1, its tally)."""
    import pyarrow as pa

    out, tally = screen_arrow(batches, options, threshold)
    for batch in out:
        for piece in _conformed(batch, schema):
            sink = pa.BufferOutputStream()
            with pa.ipc.new_stream(sink, schema) as writer:
                writer.write_batch(piece)
            yield pa.record_batch({"kind": pa.array([0], pa.int8()),
                                   "payload": pa.array([sink.getvalue().to_pybytes()],
                                                       pa.binary())})  # fmt: skip
    yield pa.record_batch({"kind": pa.array([1], pa.int8()),
                           "payload": pa.array([pickle.dumps(tally)], pa.binary())})  # fmt: skip


def _spark_schema(frame: Any, options: Mapping[str, Any]) -> Any:
    from pyspark.sql.pandas.types import to_arrow_schema

    return output_schema(to_arrow_schema(frame.schema), options)


# --------------------------------------------------------------------------- Dask
def _dask_screen(part: Any, options: dict, threshold: float | None) -> tuple[Any, Tally]:
    """A Dask partition (pandas) screened, as a polars frame, and its tally."""
    import polars as pl

    from .stream import _as_polars, screen_frames

    tally = _tally(options, threshold)
    frame, _ = _as_polars(part)
    out = list(screen_frames([frame] if frame.height else [], tally=tally, **options))
    return (pl.concat(out) if out else None), tally


def _dask_table(part: Any, options: dict) -> Any:
    from .stream import screen_table

    return screen_table(part, **options)


def _window(frame: Any) -> int:
    try:
        from distributed import default_client

        return max(2, 2 * sum(default_client().nthreads().values()))
    except (ImportError, ValueError):
        import os

        return max(2, 2 * (os.cpu_count() or 1))


# --------------------------------------------------------------------------- the routes
def screened_frames(data: Any, engine: str, tally: Tally, *,
                    progress: Progress | None = None, **options: Any) -> Iterator[Any]:  # fmt: skip
    """The screened rows of a Spark or Dask DataFrame as polars frames, partition by
    partition in order; each partition's tally is added to `tally` as it arrives."""
    import polars as pl

    progress = progress or (lambda done, total: None)
    if engine == "spark":
        import pyarrow as pa

        schema = _spark_schema(data, options)
        rows = data.mapInArrow(partial(_spark_rows, options=dict(options),
                                       threshold=tally.threshold, schema=schema),
                               "kind byte, payload binary")  # fmt: skip
        from ..adapters.engines import worker_errors

        total, done = data.rdd.getNumPartitions(), 0
        with worker_errors():
            for row in rows.toLocalIterator(prefetchPartitions=True):
                if row["kind"] == 1:
                    tally.merge(pickle.loads(row["payload"]))
                    done += 1
                    progress(done, total)
                    continue
                with pa.ipc.open_stream(row["payload"]) as reader:
                    yield pl.from_arrow(reader.read_all())
        return
    import dask

    _dask_table(data._meta, dict(options))  # the options and columns checked here, once
    parts = data.to_delayed()
    step = _window(data)
    for start in range(0, len(parts), step):
        tasks = [dask.delayed(_dask_screen, pure=True)(p, dict(options), tally.threshold)
                 for p in parts[start : start + step]]  # fmt: skip
        for i, (frame, theirs) in enumerate(dask.compute(*tasks), start + 1):
            tally.merge(theirs)
            progress(i, len(parts))
            if frame is not None:
                yield frame


def screen_engine_table(data: Any, engine: str, **options: Any) -> Any:
    """A lazy frame of the engine's kind: every row screened, computed columns added."""
    if engine == "spark":
        from pyspark.sql.pandas.types import from_arrow_schema

        schema = _spark_schema(data, options)
        return data.mapInArrow(partial(_spark_screen, options=dict(options), schema=schema),
                               from_arrow_schema(schema))  # fmt: skip
    meta = _dask_table(data._meta, dict(options))
    return data.map_partitions(_dask_table, dict(options), meta=meta)


def screen_engine_summary(data: Any, engine: str, source: str | None = None,
                          threshold: float | None = None,
                          **options: Any) -> ScreenSummary:  # fmt: skip
    """The summary of a screen of a Spark or Dask DataFrame (one pass; rows not kept)."""
    tally = _tally(options, threshold)
    for _ in screened_frames(data, engine, tally, **options):
        pass
    shown = source or f"a {engine} DataFrame"
    return tally.result(tuple(options.get("confounders", ())), shown)


def folder_frames(path: str | Path, argument: str = "file") -> Iterator[Any]:
    """The rows of a Parquet dataset folder as polars frames, file by file in order."""
    import polars as pl

    from ..adapters.engines import dataset_batches

    _, batches = dataset_batches(path, argument)
    for batch in batches():
        if batch.num_rows:
            yield pl.from_arrow(batch)
