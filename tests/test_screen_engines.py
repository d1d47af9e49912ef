"""The screen over Spark and Dask DataFrames and Parquet dataset folders (issue 25).

Reference: the single-table screen (`screen_table`, `screen_summary`, `sensitivity screen
FILE`) of the same rows, itself checked against published worked examples in
tests/test_screen.py. The engines must give the same table row for row (partition order, rows
in order within each) and the same summary, whatever the partitioning, empty partitions
included. Data: the demo's invented table of published results.
"""

from __future__ import annotations

import re
import warnings

import numpy as np
import pandas as pd
import polars as pl
import pytest
from conftest import ROOT

from sensitivity.screen.result import Tally
from sensitivity.screen.stream import screen_summary, screen_table

OPTIONS = {"confounders": [(2.0, 2.0)], "alpha": 0.05}
CUTS = [0, 7, 7, 20, 33, 40]  # pieces of 7, 0, 13, 13 and 7 rows, and an empty one


@pytest.fixture(scope="module")
def published():
    return pd.read_csv(ROOT / "demo" / "published_results.csv", dtype=str, keep_default_na=False)


def pieces(frame, cuts=CUTS):
    return [frame.iloc[a:b] for a, b in zip(cuts[:-1], cuts[1:], strict=True)] + [frame.iloc[:0]]


def same_table(reference: pd.DataFrame, got: pd.DataFrame) -> None:
    assert list(got.columns) == list(reference.columns)
    left, right = pl.from_pandas(reference), pl.from_pandas(got.reset_index(drop=True))
    assert right.cast(left.schema).equals(left, null_equal=True)


def same_summary(reference, got) -> None:
    a, b = reference.to_dict(), got.to_dict()
    a.pop("source"), b.pop("source")
    assert a == b


def test_tallies_merge_to_the_whole(published):
    from sensitivity.screen.stream import screen_frames

    whole = Tally(threshold=1.5, n_confounders=1)
    for _ in screen_frames([pl.from_pandas(published)], tally=whole, **OPTIONS):
        pass
    merged = Tally(threshold=1.5, n_confounders=1)
    for part in pieces(published):
        tally = Tally(threshold=1.5, n_confounders=1)
        for _ in screen_frames([pl.from_pandas(part)], tally=tally, **OPTIONS):
            pass
        merged.merge(tally)
    same_summary(whole.result((), "a"), merged.result((), "b"))


# --------------------------------------------------------------------------- Dask
dd = pytest.importorskip("dask.dataframe", reason="the dask extra is not installed")


def dask_frame(parts):
    import dask

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # dask's note on unknown divisions
        return dd.from_delayed([dask.delayed(p) for p in parts], meta=parts[0].iloc[:0],
                               verify_meta=False)  # fmt: skip


def test_dask_screen_equals_the_single_table_screen(published):
    reference = screen_table(published, **OPTIONS)
    ddf = dask_frame(pieces(published))
    same_table(reference, screen_table(ddf, **OPTIONS).compute())
    same_summary(screen_summary(published, threshold=1.5, **OPTIONS),
                 screen_summary(ddf, threshold=1.5, **OPTIONS))  # fmt: skip


# --------------------------------------------------------------------------- Spark
def spark_frame(spark, parts):
    """A Spark DataFrame of text columns whose partition i holds piece i's rows, in order."""
    columns = list(parts[0].columns)
    rows = [[tuple(r) for r in p.itertuples(index=False)] for p in parts]
    rdd = spark.sparkContext.parallelize(range(len(rows)), len(rows)).flatMap(lambda i: rows[i])
    return spark.createDataFrame(rdd, ", ".join(f"{c} string" for c in columns))


def test_spark_screen_equals_the_single_table_screen(spark, published):
    reference = screen_table(published, **OPTIONS)
    sdf = spark_frame(spark, pieces(published))
    got = screen_table(sdf, **OPTIONS).toPandas()
    same_table(reference, got)
    same_summary(screen_summary(published, threshold=1.5, **OPTIONS),
                 screen_summary(sdf, threshold=1.5, **OPTIONS))  # fmt: skip


def test_spark_keeps_numbers_typed(spark):
    frame = pd.DataFrame({"scale": ["rr", "or", "hr"], "estimate": [1.8, np.nan, 0.7],
                          "lower": [1.2, 1.1, 0.5], "upper": [2.7, 2.0, 0.9],
                          "outcome": ["", "rare", "rare"]})  # fmt: skip
    reference = screen_table(frame, **OPTIONS)
    got = screen_table(spark.createDataFrame(frame).repartition(2), **OPTIONS).toPandas()
    order = got.sort_values("scale").index
    same_table(reference.sort_values("scale").reset_index(drop=True),
               got.loc[order].reset_index(drop=True))  # fmt: skip


# --------------------------------------------------------------------------- command line
FOLDER = ROOT / "demo" / "published_results_parquet"
FLAGS = ["--confounder", "2", "2", "--threshold", "1.5"]


@pytest.mark.parametrize("engine", ["local", "dask", "spark"])
def test_cli_folder_equals_the_single_file(run, tmp_path, engine, request):
    if engine == "spark":
        request.getfixturevalue("spark")  # skips without Java; the command reuses the session
    single = tmp_path / "single.csv"
    assert run("screen", ROOT / "demo" / "published_results.csv", *FLAGS,
               "--output", single).exit_code == 0  # fmt: skip
    out = tmp_path / f"{engine}.csv"
    res = run("screen", FOLDER, "--engine", engine, *FLAGS, "--output", out)
    assert res.exit_code == 0, res.stderr
    assert out.read_bytes() == single.read_bytes()
    if engine != "local":  # Spark packs small files into fewer partitions
        assert re.search(r"^(\d+) of \1 partitions screened$", res.stderr, re.M)


def test_cli_engine_errors(run, tmp_path, monkeypatch):
    res = run("screen", ROOT / "demo" / "published_results.csv", "--engine", "dask")
    assert res.exit_code == 2
    last = res.stderr.strip().splitlines()[-1]
    assert "--engine dask reads Parquet (a file or a dataset folder)" in last
    empty = tmp_path / "empty"
    empty.mkdir()
    res = run("screen", empty)
    assert res.exit_code == 2 and "holds no Parquet files" in res.stderr
    import importlib.util

    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec",
                        lambda name, *a: None if name == "dask" else real(name, *a))  # fmt: skip
    res = run("screen", FOLDER, "--engine", "dask")
    assert res.exit_code == 2
    assert "needs dask, which is not installed: pip install 'sensitivity[dask]'" in res.stderr
