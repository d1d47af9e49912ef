"""The partial-R² data route on Spark and Dask, and on a Parquet dataset folder.

Each partition yields its `Partial` (the R factor of its rows, the levels it met: see
`partials.py`) on the engine's workers; the engine's own tree reduction combines them (Spark:
`mapInArrow` then `treeAggregate`; Dask: one delayed task a partition, then a tree of
combines); the driver finishes as the one-pass route does (`onepass.partial_r2_of_design`).
Only the factors travel: p x p numbers a partition for p design columns, whatever its rows.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from functools import partial
from pathlib import Path
from typing import Any

from ..common.errors import InputError
from ..partial_r2.result import PartialR2Result
from .partials import Partial, arrow_batches, combine, design_of, partition_factor, plain_only

ENGINES = ("local", "dask", "spark")
#: What to install for each engine (the project's optional extras).
EXTRAS = {"dask": "dask", "spark": "spark"}
#: Partials combined per step of a tree reduction.
FAN_IN = 8

Progress = Callable[[int, int], None]
#: A Dask client opened for DASK_SCHEDULER_ADDRESS, kept for the life of the process.
_CLIENTS: list[Any] = []


# --------------------------------------------------------------------------- routing
def engine_of(data: Any) -> str | None:
    """'spark' for a Spark DataFrame, 'dask' for a Dask DataFrame, else None."""
    module = type(data).__module__
    if module.startswith("pyspark.") and hasattr(data, "mapInArrow"):
        return "spark"
    if module.startswith("dask") and hasattr(data, "to_delayed"):
        return "dask"
    return None


def needs(engine: str) -> None:
    """Refuse, in one line naming the extra to install, an engine whose library is missing."""
    import importlib.util

    wanted = {"dask": ("dask", "distributed", "pandas"), "spark": ("pyspark",)}.get(engine, ())
    for name in wanted:
        if importlib.util.find_spec(name) is None:
            raise InputError(
                f"`engine` {engine} needs {name}, which is not installed: "
                f"pip install 'sensitivity[{EXTRAS[engine]}]'",
                "engine",
            )


def check_engine(engine: Any) -> str:
    if engine not in ENGINES:
        raise InputError(f"`engine` must be one of {', '.join(ENGINES)}; got {engine!r}", "engine")
    return engine


def is_dataset(data: Any) -> bool:
    """A path to a folder (a Parquet dataset)."""
    return isinstance(data, (str, Path)) and Path(data).is_dir()


def open_with(path: str | Path, engine: str, argument: str = "data") -> Any:
    """A Parquet file or dataset folder opened by Dask or Spark (lazily)."""
    p = Path(path)
    if not p.exists():
        raise InputError(f"`{argument}`: not found: {path}", argument)
    if p.is_file() and p.suffix.lower() not in (".parquet", ".pq"):
        raise InputError(
            f"`{argument}`: --engine {engine} reads Parquet (a file or a dataset folder); "
            f"got {p.name!r}",
            argument,
        )
    needs(engine)
    if engine == "dask":
        import os

        import dask.dataframe as dd

        address = os.environ.get("DASK_SCHEDULER_ADDRESS")
        if address and _dask_client() is None:  # kept open as the default client
            from distributed import Client

            _CLIENTS.append(Client(address))
        return dd.read_parquet(str(p))
    return spark_session().read.parquet(str(p))


def spark_session() -> Any:
    """The active Spark session, or a new one (local unless spark-submit says otherwise), with
    Spark's own log quietened to errors; InputError when Java cannot be started."""
    import os
    import sys

    needs("spark")
    os.environ.setdefault("PYSPARK_PYTHON", sys.executable)
    from pyspark.sql import SparkSession

    try:
        session = (
            SparkSession.builder.appName("sensitivity")
            .config("spark.ui.showConsoleProgress", "false")
            .getOrCreate()
        )
    except Exception as err:  # noqa: BLE001 - Java missing or misconfigured
        text = " ".join(str(err).split())[:200] or type(err).__name__
        raise InputError(f"`engine` spark could not start Spark (it needs Java 17): {text}",
                         "engine") from None  # fmt: skip
    session.sparkContext.setLogLevel("ERROR")
    return session


# --------------------------------------------------------------------------- partial R²
def partial_r2_engine(data: Any, formula: str, treatment: str, *, engine: str | None = None,
                      **options: Any) -> PartialR2Result:  # fmt: skip
    """Partial-R² sensitivity from a Spark or Dask DataFrame, a Parquet dataset folder, a file
    or a pandas frame: the one-pass route's numbers, on the engine that holds the data.

    `engine` (local, dask, spark) says how a path is read; a Spark or Dask DataFrame runs on
    its own engine. `progress`, if given, is called with (partitions done, partitions) on
    Spark and Dask, and with the rows read on the local route.
    """
    from .design import check_names

    kind = engine_of(data)
    if engine is not None:
        check_engine(engine)
        if kind is not None and engine != kind:
            raise InputError(f"`engine` {engine}: the data are a {kind} DataFrame; "
                             f"use engine={kind!r} or leave it out", "engine")  # fmt: skip
    if kind is None and engine in ("dask", "spark"):
        data, kind = open_with(data, engine), engine
    if kind is None:
        if is_dataset(data):
            return partial_r2_dataset(data, formula, treatment, **options)
        from .onepass import partial_r2_one_pass

        return partial_r2_one_pass(data, formula, treatment, **options)
    plain_only(formula)
    check_names(_Header([str(c) for c in data.columns]), formula, treatment,
                options.get("benchmarks", ()))  # fmt: skip
    progress = options.pop("progress", None) or (lambda done, total: None)
    run = _spark_partial if kind == "spark" else _dask_partial
    total = run(data, formula, progress)
    return finish(total, formula, treatment, **options)


def finish(total: Partial, formula: str, treatment: str, **options: Any) -> PartialR2Result:
    """The one-pass route's finish of the combined partial."""
    from .onepass import partial_r2_of_design

    if total.used == 0:
        raise InputError("`data`: no row has a value in every column the formula uses", "data")
    return partial_r2_of_design(design_of(total, formula), formula, treatment, **options)


def wanted_columns(formula: str) -> list[str]:
    outcome, terms, _ = plain_only(formula)
    return list(dict.fromkeys([outcome] + [t.column for t in terms]))


def tree(items: list[Any], join: Callable[[list[Any]], Any]) -> Any:
    """Join items FAN_IN at a time, level by level, down to one."""
    while len(items) > 1:
        items = [join(items[i : i + FAN_IN]) for i in range(0, len(items), FAN_IN)]
    return items[0]


def combine_all(parts: list[Partial]) -> Partial:
    out = parts[0]
    for other in parts[1:]:
        out = combine(out, other)
    return out


# --------------------------------------------------------------------------- Dask
def dask_partition(frame: Any, formula: str) -> Partial:
    """A Dask partition (a pandas DataFrame) into its partial, through Arrow batches."""
    import pyarrow as pa

    from .batches import BATCH_ROWS

    wanted = wanted_columns(formula)
    if not len(frame):
        return partition_factor([], formula)
    try:
        table = pa.Table.from_pandas(frame[wanted], preserve_index=False)
    except (pa.ArrowInvalid, pa.ArrowTypeError) as err:  # a column of mixed types
        text = " ".join(str(err).split())[:200]
        raise InputError(f"`data`: a column the formula uses mixes types ({text}); give it "
                         "one type", "data") from None  # fmt: skip
    return partition_factor(arrow_batches(table.to_batches(BATCH_ROWS), wanted), formula)


def _dask_partial(frame: Any, formula: str, progress: Progress) -> Partial:
    import dask

    parts = frame[wanted_columns(formula)].to_delayed()
    total = len(parts)
    tasks = [dask.delayed(dask_partition, pure=True)(p, formula,
                                                     dask_key_name=f"sensitivity-partial-{i}")
             for i, p in enumerate(parts)]  # fmt: skip
    if not tasks:
        return partition_factor([], formula)
    client = _dask_client()
    if client is not None:  # futures: each partition reported as it finishes
        from distributed import as_completed

        futures = client.compute(tasks)
        for done, _ in enumerate(as_completed(futures), 1):
            progress(done, total)
        joined = tree(futures, lambda group: client.submit(combine_all, group, pure=False))
        return joined.result()
    joined = tree(tasks, lambda group: dask.delayed(combine_all, pure=True)(group))
    with _DaskCounter(progress, total):
        return dask.compute(joined)[0]


def _dask_client() -> Any:
    try:
        from distributed import default_client
    except ImportError:
        return None
    try:
        return default_client()
    except ValueError:
        return None


class _DaskCounter:
    """Partitions done, reported as Dask's local schedulers finish their tasks."""

    def __init__(self, progress: Progress, total: int) -> None:
        from dask.callbacks import Callback

        self.progress, self.total, self.done = progress, total, 0

        def posttask(key: Any, result: Any, dsk: Any, state: Any, worker: Any) -> None:
            name = key[0] if isinstance(key, tuple) else key
            if str(name).startswith("sensitivity-partial-"):
                self.done += 1
                self.progress(self.done, self.total)

        self.callback = Callback(posttask=posttask)

    def __enter__(self) -> _DaskCounter:
        self.callback.__enter__()
        return self

    def __exit__(self, *exc: Any) -> None:
        self.callback.__exit__(*exc)


# --------------------------------------------------------------------------- Spark
def spark_partition(batches: Iterator[Any], formula: str) -> Iterator[Any]:
    """A Spark partition's Arrow batches into one row holding its pickled partial."""
    import pickle

    import pyarrow as pa

    part = partition_factor(arrow_batches(batches, wanted_columns(formula)), formula)
    yield pa.record_batch({"partial": pa.array([pickle.dumps(part)], pa.binary())})


def _unpickled(row: Any) -> Partial:
    import pickle

    return pickle.loads(row[0])


def _spark_partial(frame: Any, formula: str, progress: Progress) -> Partial:
    wanted = wanted_columns(formula)
    rows = frame.select(*wanted).mapInArrow(partial(spark_partition, formula=formula),
                                             "partial binary")  # fmt: skip
    empty = partition_factor([], formula)
    with _SparkWatch(frame, progress), worker_errors():
        if type(frame).__module__.startswith("pyspark.sql.connect"):  # no RDDs: combine here
            parts = [_unpickled(row) for row in rows.toLocalIterator()]
            return tree(parts or [empty], combine_all)
        return rows.rdd.map(_unpickled).treeAggregate(empty, combine, combine, depth=2)


class worker_errors:
    """A bad-input error raised in a Spark worker reaches the driver wrapped in Spark's own
    exception; raise it here as the InputError it was (one line, exit 2 on the command line)."""

    def __enter__(self) -> None:
        return None

    def __exit__(self, kind: Any, err: Any, trace: Any) -> None:
        import re

        if err is None or isinstance(err, InputError):
            return
        found = re.search(r"InputError: (.+)", str(err))
        if found:
            raise InputError(found.group(1).strip()) from None


class _SparkWatch:
    """Partitions done, read from Spark's status tracker in a second thread."""

    def __init__(self, frame: Any, progress: Progress) -> None:
        self.frame, self.progress = frame, progress

    def __enter__(self) -> _SparkWatch:
        import threading
        import uuid

        self.stop = threading.Event()
        context = getattr(self.frame.sparkSession, "sparkContext", None)
        if context is None:
            return self
        self.group = f"sensitivity-{uuid.uuid4().hex[:8]}"
        context.setJobGroup(self.group, "sensitivity partial R2")
        self.thread = threading.Thread(target=self._watch, args=(context,), daemon=True)
        self.thread.start()
        return self

    shown = -1

    def _look(self, context: Any) -> None:
        """Report the first stage's tasks done (one task a partition), if they changed."""
        tracker = context.statusTracker()
        jobs = tracker.getJobIdsForGroup(self.group)
        info = tracker.getJobInfo(min(jobs)) if jobs else None
        if info is None or not info.stageIds:
            return
        stage = tracker.getStageInfo(min(info.stageIds))
        if stage is not None and stage.numCompletedTasks != self.shown:
            self.shown = stage.numCompletedTasks
            self.progress(self.shown, stage.numTasks)

    def _watch(self, context: Any) -> None:
        while not self.stop.wait(0.25):
            self._look(context)

    def __exit__(self, *exc: Any) -> None:
        self.stop.set()
        if hasattr(self, "thread"):
            self.thread.join()
            context = self.frame.sparkSession.sparkContext
            if exc[0] is None:
                self._look(context)  # the last count, however quick the job was
            context.setLocalProperty("spark.jobGroup.id", None)


# --------------------------------------------------------------------------- local folder
def dataset_batches(path: str | Path, argument: str = "data") -> tuple[list[str], Callable]:
    """A Parquet dataset folder: its column names, and a function giving its Arrow record
    batches (of chosen columns) file by file in order, hive-style key=value folders adding
    their columns."""
    import pyarrow.dataset as ds

    from .batches import BATCH_ROWS

    try:
        dataset = ds.dataset(str(path), format="parquet", partitioning="hive")
    except Exception as err:  # noqa: BLE001 - the folder's problem
        first = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        raise InputError(f"`{argument}`: could not read {path} as a Parquet dataset: {first}",
                         argument) from None  # fmt: skip
    if not dataset.files:
        raise InputError(f"`{argument}`: {path} holds no Parquet files", argument)

    def batches(columns: list[str] | None = None) -> Iterator[Any]:
        for fragment in dataset.get_fragments():
            # no read-ahead: memory stays that of a batch, not of several row groups
            yield from fragment.to_batches(schema=dataset.schema, columns=columns,
                                           batch_size=BATCH_ROWS, batch_readahead=0,
                                           fragment_readahead=0)  # fmt: skip

    return list(dataset.schema.names), batches


def dataset_source(path: str | Path, argument: str = "data") -> Any:
    """A Parquet dataset folder as the one-pass route's `Source`, a batch at a time."""
    from .batches import Source

    names, batches = dataset_batches(path, argument)

    def typed(wanted: list[str], forced: dict[str, str]) -> Iterator[Any]:
        yield from arrow_batches(batches(wanted), wanted)

    return Source(names, typed)


def partial_r2_dataset(path: str | Path, formula: str, treatment: str, **options: Any
                       ) -> PartialR2Result:  # fmt: skip
    """The one-pass route over a Parquet dataset folder on this machine."""
    from .design import check_names
    from .onepass import partial_r2_of_design
    from .rfactor import patsy_design, plain_design, plain_terms

    if not isinstance(formula, str) or "~" not in formula:
        raise InputError(f"`formula` must look like 'y ~ t + x1 + x2'; got {formula!r}", "formula")
    source = dataset_source(path)
    check_names(_Header(source.columns), formula, treatment, options.get("benchmarks", ()))
    progress = options.pop("progress", None) or (lambda rows: None)
    plain = plain_terms(formula)
    if plain:
        design = plain_design(source, *plain, progress)
    else:
        design = patsy_design(source, formula, progress)
    return partial_r2_of_design(design, formula, treatment, **options)


class _Header:
    """Column names, where check_names looks for them."""

    def __init__(self, columns: list[str]) -> None:
        self.columns = columns
