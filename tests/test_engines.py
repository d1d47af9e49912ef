"""Partial-R² sensitivity on Spark and Dask (issue 25) against the one-machine route.

Reference: the one-pass route on the same rows held in one pandas frame
(`partial_r2_one_pass`, itself checked against statsmodels OLS refits in
tests/test_onepass.py), and a statsmodels OLS refit here as well. Data: the `fair` data
shipped with statsmodels (Fair 1978) and data generated here. Every number of the result must
agree to 1e-10 relative whatever the partitioning: partitions of any size, empty ones, a
categorical level met in one partition only, and in any order of combination.
"""

from __future__ import annotations

import functools
import warnings

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sensitivity.adapters.engines import (
    combine_all,
    dask_partition,
    finish,
    partial_r2_engine,
    tree,
)
from sensitivity.adapters.onepass import partial_r2_one_pass
from sensitivity.adapters.partials import combine, partition_factor
from sensitivity.adapters.statsmodels import partial_r2_from_model
from sensitivity.common.errors import InputError

FORMULA = "y ~ t + x1 + x2 + C(g) + C(k) + smoker"
OPTIONS = {"benchmarks": ["x1", "g"]}


def same(reference, got, rel=1e-10):
    """Every field of two results' JSON equal: numbers to `rel`, the rest exactly."""

    def walk(a, b, path):
        if isinstance(a, dict):
            assert set(a) == set(b), path
            for key in a:
                walk(a[key], b[key], f"{path}.{key}")
        elif isinstance(a, list):
            assert len(a) == len(b), path
            for i, (u, v) in enumerate(zip(a, b, strict=True)):
                walk(u, v, f"{path}[{i}]")
        elif isinstance(a, float) and isinstance(b, float):
            assert b == pytest.approx(a, rel=rel, abs=1e-300), path
        else:
            assert a == b, path

    walk(reference.to_dict(), got.to_dict(), "")


def invented(n: int = 600, seed: int = 4) -> pd.DataFrame:
    """Generated rows: numbers (one offset far from zero), text and integer categories, a
    true/false column, missing cells, and the level 'rare' in rows 50-54 only."""
    rng = np.random.default_rng(seed)
    g = rng.choice(["north", "south", "east"], n).astype(object)
    g[50:55] = "rare"
    g[7] = None
    x1 = rng.normal(size=n)
    x1[11] = np.nan
    t = 0.5 * x1 + rng.normal(size=n)
    k = rng.integers(1, 5, n)
    smoker = rng.random(n) < 0.3
    y = 120 + 0.3 * t + 0.25 * x1 + 0.2 * k + rng.normal(0, 2, n)
    y[13] = np.nan
    x2 = rng.normal(2000, 3, n)
    return pd.DataFrame({"y": y, "t": t, "x1": x1, "x2": x2, "g": g, "k": k, "smoker": smoker})


def pieces(frame: pd.DataFrame, sizes: list[int]) -> list[pd.DataFrame]:
    """The frame cut into consecutive pieces of these sizes (the last takes the rest)."""
    cuts = np.cumsum([0, *sizes])
    cuts = np.minimum(cuts, len(frame))
    out = [frame.iloc[a:b] for a, b in zip(cuts[:-1], cuts[1:], strict=True)]
    return [*out, frame.iloc[cuts[-1] :]]


SIZES = st.lists(st.sampled_from([0, 0, 1, 3, 40, 52, 120, 300]), min_size=0, max_size=6)


# --------------------------------------------------------------------------- the combine
def test_statsmodels_refit_agrees_with_the_reference():
    frame = invented()
    fit = smf.ols(FORMULA, data=frame).fit()
    reference = partial_r2_one_pass(frame, FORMULA, "t", **OPTIONS)
    assert reference.estimate == pytest.approx(fit.params["t"], rel=1e-8)
    assert reference.dof == fit.df_resid
    assert partial_r2_from_model(fit, "t").partial_r2 == pytest.approx(reference.partial_r2,
                                                                      rel=1e-8)  # fmt: skip


@settings(max_examples=40, deadline=None)
@given(sizes=SIZES, seed=st.integers(0, 2**16), order=st.randoms(use_true_random=False))
def test_any_partitioning_and_any_order_of_combines(sizes, seed, order):
    frame = invented(seed=seed % 7)
    reference = partial_r2_one_pass(frame, FORMULA, "t", **OPTIONS)
    parts = [dask_partition(p, FORMULA) for p in pieces(frame, sizes)]
    order.shuffle(parts)
    same(reference, finish(tree(parts, combine_all), FORMULA, "t", **OPTIONS))
    folded = functools.reduce(combine, parts[::-1])
    same(reference, finish(folded, FORMULA, "t", **OPTIONS))


@pytest.mark.parametrize("formula", [
    "affairs ~ rate_marriage + age + yrs_married + educ + C(religious) + C(occupation)",
    "affairs ~ 0 + rate_marriage + C(religious) + age",
])  # fmt: skip
def test_fair_data_sorted_so_levels_arrive_late(formula):
    fair = sm.datasets.fair.load_pandas().data.sort_values("religious", kind="stable")
    reference = partial_r2_one_pass(fair, formula, "rate_marriage", benchmarks=["age"])
    cuts = np.linspace(0, len(fair), 10).astype(int)
    bounds = zip(cuts[:-1], cuts[1:], strict=True)
    parts = [dask_partition(fair.iloc[a:b], formula) for a, b in bounds]
    got = finish(tree(parts, combine_all), formula, "rate_marriage", benchmarks=["age"])
    same(reference, got)


def test_a_level_met_in_one_partition_only():
    frame = invented()
    reference = partial_r2_one_pass(frame, FORMULA, "t", **OPTIONS)
    parts = pieces(frame, [50, 5, 0])  # rows 50-54, all the 'rare' ones, alone in one piece
    assert [("rare" in set(p.g)) for p in parts] == [False, True, False, False]
    partials = [dask_partition(p, FORMULA) for p in parts]
    assert [("C(g)" in q.levels and "rare" in q.levels["C(g)"]) for q in partials] == [
        False, True, False, False]  # fmt: skip
    for order in (partials, partials[::-1], [partials[1], partials[3], partials[0], partials[2]]):
        same(reference, finish(tree(list(order), combine_all), FORMULA, "t", **OPTIONS))
    assert "C(g)[T.rare]" in [c for cov in reference.to_dict()["covariates"]
                              for c in cov["columns"]]  # fmt: skip


def test_an_empty_partial_changes_nothing():
    frame = invented()
    empty = partition_factor([], FORMULA)
    whole = dask_partition(frame, FORMULA)
    for total in (combine(empty, whole), combine(whole, empty)):
        same(partial_r2_one_pass(frame, FORMULA, "t"), finish(total, FORMULA, "t"))


def test_errors_name_the_rule():
    frame = invented()
    with pytest.raises(InputError, match="only columns and C\\(column\\) terms"):
        dask_partition(frame, "y ~ t + np.log(x2)")
    with pytest.raises(InputError, match="no row has a value"):
        finish(partition_factor([], FORMULA), FORMULA, "t")
    text = frame.assign(x1=frame.x1.astype(str))
    a, b = dask_partition(frame.iloc[:100], FORMULA), dask_partition(text.iloc[100:], FORMULA)
    with pytest.raises(InputError, match="column 'x1' is read as number in one partition"):
        combine(a, b)


# --------------------------------------------------------------------------- Dask
dd = pytest.importorskip("dask.dataframe", reason="the dask extra is not installed")


def dask_frame(parts: list[pd.DataFrame]):
    import dask

    meta = parts[0].iloc[:0]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # dask's note on unknown divisions
        return dd.from_delayed([dask.delayed(p) for p in parts], meta=meta, verify_meta=False)


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(sizes=SIZES)
def test_dask_threads_equal_the_one_machine_route(sizes):
    frame = invented()
    reference = partial_r2_one_pass(frame, FORMULA, "t", **OPTIONS)
    ddf = dask_frame(pieces(frame, sizes))
    seen = []
    got = partial_r2_engine(ddf, FORMULA, "t", progress=lambda d, n: seen.append((d, n)),
                            **OPTIONS)  # fmt: skip
    same(reference, got)
    assert seen[-1] == (ddf.npartitions, ddf.npartitions)


def test_a_partition_column_of_mixed_types_is_one_line():
    frame = invented(100)
    frame["x1"] = frame["x1"].astype(object)
    frame.loc[3, "x1"] = "n/a"
    frame.loc[4, "x1"] = b"\x00"  # bytes among numbers and text: no Arrow type holds them
    with pytest.raises(InputError, match="a column the formula uses mixes types"):
        dask_partition(frame, FORMULA)


@pytest.fixture(scope="module")
def dask_cluster():
    distributed = pytest.importorskip("distributed")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the cluster's start-up notes (ports, resources)
        cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1,
                                           dashboard_address=":0", silence_logs=50)  # fmt: skip
        client = distributed.Client(cluster)
    yield client
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        client.close()
        cluster.close()


def test_dask_local_cluster_with_two_workers(dask_cluster):
    frame = invented(2000)
    reference = partial_r2_one_pass(frame, FORMULA, "t", **OPTIONS)
    ddf = dask_frame(pieces(frame, [0, 400, 52, 0, 900]))
    seen = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # large-graph notes
        got = partial_r2_engine(ddf, FORMULA, "t", progress=lambda d, n: seen.append(d),
                                **OPTIONS)  # fmt: skip
    same(reference, got)
    assert seen == list(range(1, ddf.npartitions + 1))


def test_parquet_folder_local_and_dask(tmp_path):
    frame = invented(1500)
    folder = tmp_path / "claims"
    folder.mkdir()
    for i, part in enumerate(pieces(frame, [500, 0, 700])):
        part.to_parquet(folder / f"part-{i}.parquet", index=False)
    reference = partial_r2_one_pass(frame, FORMULA, "t", **OPTIONS)
    same(reference, partial_r2_engine(folder, FORMULA, "t", **OPTIONS))
    same(reference, partial_r2_engine(str(folder), FORMULA, "t", engine="dask", **OPTIONS))
    # any formula on the local route over a folder (patsy's builder)
    patsy = "y ~ t + np.log(x2) + C(g)"
    same(partial_r2_one_pass(frame, patsy, "t"), partial_r2_engine(folder, patsy, "t"))
    with pytest.raises(InputError, match="`engine` must be one of local, dask, spark"):
        partial_r2_engine(folder, FORMULA, "t", engine="ray")
    frame.to_csv(tmp_path / "x.csv", index=False)
    with pytest.raises(InputError, match="reads Parquet"):
        partial_r2_engine(tmp_path / "x.csv", FORMULA, "t", engine="dask")


# --------------------------------------------------------------------------- Spark
SCHEMA = "y double, t double, x1 double, x2 double, g string, k long, smoker boolean"


def spark_frame(spark, parts: list[pd.DataFrame]):
    """A Spark DataFrame whose partition i holds exactly piece i's rows, in order."""
    rows = [
        [tuple(None if v is None else v for v in row) for row in p.itertuples(index=False)]
        for p in parts
    ]
    for piece in rows:
        for j, row in enumerate(piece):
            piece[j] = tuple(
                v.item() if isinstance(v, np.generic) else v for v in row
            )  # plain Python values for Spark
    rdd = spark.sparkContext.parallelize(range(len(rows)), len(rows))
    rdd = rdd.flatMap(lambda i: rows[i])
    return spark.createDataFrame(rdd, SCHEMA)


SLOW = [HealthCheck.too_slow, HealthCheck.function_scoped_fixture]


@settings(max_examples=4, deadline=None, suppress_health_check=SLOW)
@given(sizes=SIZES)
def test_spark_equals_the_one_machine_route(spark, sizes):
    frame = invented()
    reference = partial_r2_one_pass(frame, FORMULA, "t", **OPTIONS)
    sdf = spark_frame(spark, pieces(frame, sizes))
    parts = len(pieces(frame, sizes))
    assert sdf.rdd.getNumPartitions() == parts
    seen = []
    got = partial_r2_engine(sdf, FORMULA, "t", progress=lambda d, n: seen.append((d, n)),
                            **OPTIONS)  # fmt: skip
    same(reference, got)
    assert seen[-1] == (parts, parts)


def test_spark_reads_a_parquet_folder(spark, tmp_path):
    frame = invented(1200)
    folder = tmp_path / "registry"
    folder.mkdir()
    for i, part in enumerate(pieces(frame, [300, 52, 0, 500])):
        part.to_parquet(folder / f"part-{i}.parquet", index=False)
    reference = partial_r2_one_pass(frame, FORMULA, "t", **OPTIONS)
    same(reference, partial_r2_engine(str(folder), FORMULA, "t", engine="spark", **OPTIONS))
    text_outcome = spark.createDataFrame(frame.assign(y=frame.y.astype(str)).head(50))
    with pytest.raises(InputError, match="^`formula`: the outcome column 'y' must be numeric$"):
        partial_r2_engine(text_outcome, FORMULA, "t")  # raised on a worker, one line here
    with pytest.raises(InputError, match="the data are a spark DataFrame"):
        partial_r2_engine(spark.read.parquet(str(folder)), FORMULA, "t", engine="dask")


# --------------------------------------------------------------------------- command line
BP = "sbp ~ commute_min + age + female + smoker + C(shift) + bmi"


@pytest.mark.parametrize("engine", ["local", "dask", "spark"])
def test_cli_folder_equals_the_file(run, engine, request):
    import json

    from conftest import ROOT

    if engine == "spark":
        request.getfixturevalue("spark")  # skips without Java; the command reuses the session
    args = ["--formula", BP, "--treatment", "commute_min", "--benchmark", "smoker", "--format",
            "json"]  # fmt: skip
    single = run("partial-r2", "--data", ROOT / "demo" / "harbourside_bp.csv", *args)
    res = run("partial-r2", "--data", ROOT / "demo" / "harbourside_bp_parquet",
              "--engine", engine, *args)  # fmt: skip
    assert res.exit_code == 0, res.stderr
    a, b = json.loads(single.stdout), json.loads(res.stdout)
    assert b["estimate"] == pytest.approx(a["estimate"], rel=1e-10)
    assert b["robustness_value"] == pytest.approx(a["robustness_value"], rel=1e-10)
    assert [c["name"] for c in b["covariates"]] == [c["name"] for c in a["covariates"]]
    for u, v in zip(a["covariates"], b["covariates"], strict=True):
        assert v["r2_treatment"] == pytest.approx(u["r2_treatment"], rel=1e-10)
        assert v["r2_outcome"] == pytest.approx(u["r2_outcome"], rel=1e-10)
    if engine == "dask":
        assert "4 of 4 partitions" in res.stderr


def test_cli_engine_errors(run):
    res = run("partial-r2", "--estimate", "0.1", "--se", "0.03", "--dof", "500", "--engine",
              "dask")  # fmt: skip
    assert res.exit_code == 2 and "--engine applies to data input (--data)" in res.stderr
    res = run("partial-r2", "--data", "nowhere/", "--engine", "dask", "--formula", "y ~ t",
              "--treatment", "t")  # fmt: skip
    assert res.exit_code == 2 and "`--data`: not found: nowhere/" in res.stderr
    res = run("partial-r2", "--data", "nowhere.parquet", "--engine", "spark", "--formula",
              "y ~ t + np.log(x)", "--treatment", "t")  # fmt: skip
    assert res.exit_code == 2


def test_a_partition_where_a_text_column_is_all_missing():
    """Found by the partitioning property above: a one-row partition whose category is
    missing reaches Arrow as a null column (read as number), which was refused as a type
    change. It says nothing of the column's type; the answer equals the one-machine route."""
    frame = invented(seed=0)
    frame.loc[frame.index[7], "g"] = None
    reference = partial_r2_one_pass(frame, FORMULA, "t", **OPTIONS)
    parts = [dask_partition(p, FORMULA) for p in pieces(frame, [1, 3, 3, 1])]
    assert any(not q.kinds.get("C(g)") for q in parts)  # the all-missing piece knows no kind
    same(reference, finish(tree(parts, combine_all), FORMULA, "t", **OPTIONS))
