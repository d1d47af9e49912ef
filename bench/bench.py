"""`make bench`: figures and ratios against a plain baseline. Nothing here is asserted.

Each section prints what it timed, the median, the baseline's median and their ratio next to
the goal the issue set. Run from the project's venv (`make bench`).
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

BIN = Path(sys.executable).parent
REPEATS = 21


def wall(cmd: list[str], repeats: int = REPEATS) -> float:
    """Median wall time of a whole command, in seconds (one warm-up run first)."""
    subprocess.run(cmd, check=True, capture_output=True)
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        subprocess.run(cmd, check=True, capture_output=True)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def timed(func, repeats: int = 5) -> float:
    """Median wall time of an in-process call, in seconds."""
    func()
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def report(label: str, value: float, baseline: float, baseline_label: str, goal: str) -> None:
    print(f"{label}: {value * 1e3:.1f} ms")
    print(f"  baseline ({baseline_label}): {baseline * 1e3:.1f} ms")
    print(f"  ratio: {value / baseline:.2f}  (goal: {goal})")


def compiled() -> None:
    """Our modules' bytecode written, as an installed package has it: where
    PYTHONDONTWRITEBYTECODE is set (as on the project's machines) every run would otherwise
    compile our modules anew (about 25 ms for a one-number command, 80 ms of CPU for the
    screen), which no user of an installed package pays."""
    root = Path(__file__).resolve().parent.parent
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(root / "sensitivity"),
                    str(root / "cli.py")], check=True)  # fmt: skip


def bench_startup() -> None:
    print("== One-number command start-up (issue 2)")
    compiled()
    cmd = [
        str(BIN / "sensitivity"),
        "evalue",
        "--scale",
        "rr",
        "--estimate",
        "3.9",
        "--ci",
        "1.8",
        "8.7",
    ]
    base = [sys.executable, "-c", "import numpy, click"]
    report(
        "sensitivity evalue --scale rr --estimate 3.9 --ci 1.8 8.7",
        wall(cmd),
        wall(base),
        'python -c "import numpy, click"',
        "at most 1.3",
    )


def _regression_data(n=200_000, k=30, seed=0):
    import numpy as np
    import pandas as pd

    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, k))
    t = X @ rng.normal(scale=0.2, size=k) + rng.normal(size=n)
    y = 0.3 * t + X @ rng.normal(scale=0.2, size=k) + rng.normal(size=n)
    frame = pd.DataFrame(X, columns=[f"x{i}" for i in range(1, k + 1)]).assign(t=t, y=y)
    return frame


def bench_benchmarks() -> None:
    print("== Benchmark table: 30 covariates, n = 200,000 (issue 3)")
    import numpy as np
    import statsmodels.api as sm

    from sensitivity.adapters.statsmodels import partial_r2_from_model

    frame = _regression_data()
    names = [c for c in frame.columns if c.startswith("x")]
    X = sm.add_constant(frame[["t", *names]])
    fit = sm.OLS(frame["y"], X).fit()

    def all_covariates():
        partial_r2_from_model(fit, "t", benchmarks=names)

    def one_benchmark():
        partial_r2_from_model(fit, "t", benchmarks=names[:1])

    def refit_per_covariate():
        # The plain way: drop each covariate in turn and refit both models (60 fits).
        Xt = X.drop(columns="t")
        ssr_y, ssr_t = fit.ssr, sm.OLS(frame["t"], Xt).fit().ssr
        out = []
        for name in names:
            ry = sm.OLS(frame["y"], X.drop(columns=name)).fit().ssr - ssr_y
            rt = sm.OLS(frame["t"], Xt.drop(columns=name)).fit().ssr - ssr_t
            out.append((rt, ry))
        return np.array(out)

    t_all, t_one = timed(all_covariates), timed(one_benchmark)
    t_refit = timed(refit_per_covariate, repeats=1)
    report("all 30 covariates benchmarked", t_all, t_one, "one benchmark", "at most 1.5")
    print(
        f"  refit-per-covariate baseline: {t_refit * 1e3:.0f} ms "
        f"({t_refit / t_all:.1f}x slower than the two-fit table)"
    )


def bench_tipping() -> None:
    print("== Tipping-point grid: 1000 x 1000 cells (issue 4)")

    import numpy as np

    from sensitivity.output.writers import columns_to_csv
    from sensitivity.tipping import binary_confounder_grid

    p1 = np.linspace(0, 1, 1000)
    gamma = np.linspace(1, 10, 1000)

    def vectorised():
        g = binary_confounder_grid(
            "rr",
            1.8,
            (1.2, 2.7),
            prevalence_treated=p1,
            prevalence_control=0.2,
            outcome_effect=gamma,
        )
        g.tipping_points()
        return g

    def plain_loop():
        # The baseline: the same formula cell by cell in Python (estimate and both limits).
        out = []
        for a in p1.tolist():
            for g in gamma.tolist():
                f = (1 + (g - 1) * 0.2) / (1 + (g - 1) * a)
                out.append((1.8 * f, 1.2 * f, 2.7 * f))
        return out

    t_vec = timed(vectorised)
    t_loop = timed(plain_loop, repeats=1)
    report("vectorised grid + tipping points", t_vec, t_loop, "plain Python loop", "well under 1 s")
    grid = vectorised()
    t_csv = timed(lambda: columns_to_csv(grid.columns()), repeats=1)
    print(f"  export of all 1,000,000 rows to CSV in-process: {t_csv:.2f} s")


GRID_ARGS = [
    "tipping", "--scale", "rr", "--estimate", "1.8", "--ci", "1.2", "2.7",
    "--prevalence-treated", "0.001:1:0.001", "--prevalence-control", "0.2",
    "--outcome-effect", "1.01:11:0.01",
]  # fmt: skip


def measured(cmd: list[str]) -> tuple[float, float]:
    """Wall time (s) and peak resident memory (MiB) of one child process, launched by a
    small helper (bench/measure.py) so that the bench's own size does not count."""
    helper = [sys.executable, str(Path(__file__).resolve().parent / "measure.py"), *cmd]
    out = subprocess.run(helper, check=True, capture_output=True, text=True).stdout.split()
    elapsed, peak_kib, status = float(out[0]), int(out[1]), int(out[2])
    if status:
        raise SystemExit(f"{cmd} failed with status {status}")
    return elapsed, peak_kib / 1024


def bench_export() -> None:
    print("== 1000 x 1000 tipping grid (1,000,000 rows) to JSON and CSV (issue 7)")
    import tempfile

    floor = str(Path(__file__).resolve().parent / "tipping_floor.py")
    with tempfile.TemporaryDirectory() as tmp:
        for fmt in ("json", "csv"):
            out = f"{tmp}/grid.{fmt}"
            cmds = {
                "ours": [str(BIN / "sensitivity"), *GRID_ARGS, "--format", fmt, "--output", out],
                "alone": [sys.executable, floor, fmt, f"{tmp}/alone.{fmt}"],
            }
            if fmt == "json":  # the floor of issue 26: the same rows' bytes
                cmds["rows"] = [*cmds["alone"], "rows"]
                cmds["rows"][-2] = f"{tmp}/rows.json"
            runs: dict[str, list] = {k: [] for k in cmds}
            for _ in range(3):  # alternate, medians
                for k, cmd in cmds.items():
                    runs[k].append(measured(cmd))
            t = {k: statistics.median(r[0] for r in v) for k, v in runs.items()}
            m = {k: statistics.median(r[1] for r in v) for k, v in runs.items()}
            size = {k: Path(c[-1] if k == "ours" else c[3]).stat().st_size / 1e6
                    for k, c in cmds.items()}  # fmt: skip
            lib = "orjson over the numpy columns" if fmt == "json" else "pyarrow write_csv"
            print(f"{fmt.upper()}: sensitivity tipping --format {fmt}: {t['ours']:.2f} s, "
                  f"{m['ours']:.0f} MiB, {size['ours']:.0f} MB")  # fmt: skip
            print(f"  baseline ({lib}, same columns, whole process): {t['alone']:.2f} s, "
                  f"{m['alone']:.0f} MiB, {size['alone']:.0f} MB")  # fmt: skip
            print(f"  ratio: time {t['ours'] / t['alone']:.2f}, "
                  f"memory {m['ours'] / m['alone']:.2f}")  # fmt: skip
            if fmt == "json":
                print(f"  floor (the same, writing the rows' fixed text beside the numbers: "
                      f"the file's size): {t['rows']:.2f} s, {m['rows']:.0f} MiB, "
                      f"{size['rows']:.0f} MB")  # fmt: skip
                print(f"  ratio to the floor: time {t['ours'] / t['rows']:.2f}, memory "
                      f"{m['ours'] / m['rows']:.2f}  (goal: at most 1.5)")  # fmt: skip


def bench_screen() -> None:
    print("== Screening published results: 1,000,000 and 4,000,000 rows of CSV (issue 10)")
    import tempfile

    here = Path(__file__).resolve().parent
    compiled()
    with tempfile.TemporaryDirectory() as tmp:
        peaks = []
        for rows in (1_000_000, 4_000_000):
            src = f"{tmp}/results_{rows}.csv"
            subprocess.run(
                [sys.executable, str(here / "make_screen_file.py"), str(rows), src], check=True
            )
            commands = {
                "ours": [str(BIN / "sensitivity"), "screen", src, "--output", f"{tmp}/ours.csv"],
                "loop": [sys.executable, str(here / "screen_loop.py"), src, f"{tmp}/loop.csv"],
                "floor": [sys.executable, str(here / "screen_floor.py"), src, f"{tmp}/floor.csv"],
            }
            repeats = 5 if rows == 1_000_000 else 1
            runs: dict[str, list] = {k: [] for k in commands}
            for _ in range(repeats):  # alternate, medians
                for key, cmd in commands.items():
                    runs[key].append(measured(cmd))
            t = {k: statistics.median(r[0] for r in v) for k, v in runs.items()}
            m = {k: statistics.median(r[1] for r in v) for k, v in runs.items()}
            peaks.append(m["ours"])
            print(f"{rows:,} rows: sensitivity screen {t['ours']:.2f} s, peak {m['ours']:.0f} MiB")
            print(f"  baseline (csv module + math, one row at a time): {t['loop']:.2f} s")
            print(f"  speed-up: {t['loop'] / t['ours']:.2f}x  (goal: at least 8x)")
            print(f"  reference, polars reading and writing the same shape with nothing "
                  f"computed (streaming engine): {t['floor']:.2f} s, {t['loop'] / t['floor']:.2f}x "
                  f"the loop, peak {m['floor']:.0f} MiB")  # fmt: skip
            print(f"  ratio to the floor: {t['ours'] / t['floor']:.2f}  (goal: at most 1.3)")
        print(f"peak memory 4M / 1M rows: {peaks[1] / peaks[0]:.2f}  (goal: within 1.2)")
        src = f"{tmp}/results_1000000.csv"
        subprocess.run([sys.executable, str(here / "make_screen_file.py"), "1000000", src],
                       check=True)  # fmt: skip
        for fmt in ("parquet", "json"):
            commands = {
                "ours": [str(BIN / "sensitivity"), "screen", src, "--output", f"{tmp}/o.{fmt}"],
                "floor": [sys.executable, str(here / "screen_floor.py"), src, f"{tmp}/f.{fmt}"],
            }
            runs = {k: [] for k in commands}
            for _ in range(3):  # alternate, medians
                for key, cmd in commands.items():
                    runs[key].append(measured(cmd))
            t = {k: statistics.median(r[0] for r in v) for k, v in runs.items()}
            m = {k: statistics.median(r[1] for r in v) for k, v in runs.items()}
            floor = "Parquet" if fmt == "parquet" else "NDJSON"
            print(f"1,000,000 rows to {fmt.upper()}: sensitivity screen {t['ours']:.2f} s, peak "
                  f"{m['ours']:.0f} MiB; floor (polars writing {floor}) {t['floor']:.2f} s, "
                  f"peak {m['floor']:.0f} MiB; ratio {t['ours'] / t['floor']:.2f}  "
                  "(goal: at most 1.5)")  # fmt: skip


def bench_simulate() -> None:
    print("== Probabilistic bias analysis: 1,000,000 draws (issue 13)")
    from sensitivity.simulate import simulate

    def run() -> None:
        simulate("rr", 1.8, (1.2, 2.7), prevalence_treated="uniform:0.3:0.6",
                 prevalence_control="beta:2:8", outcome_effect="lognormal:0.7:0.2",
                 draws=1_000_000, seed=3)  # fmt: skip

    def plain() -> None:
        import numpy as np

        rng = np.random.default_rng(3)
        p1, p0 = rng.uniform(0.3, 0.6, 1_000_000), rng.beta(2, 8, 1_000_000)
        g = rng.lognormal(0.7, 0.2, 1_000_000)
        np.percentile(1.8 / ((1 + (g - 1) * p1) / (1 + (g - 1) * p0)), [2.5, 50, 97.5])

    report("simulate, 1,000,000 draws", timed(run), timed(plain),
           "the same draws and formula in bare numpy", "well under a second")  # fmt: skip


def bench_matched() -> None:
    print("== Rosenbaum bounds: exact vs large-sample signed-rank bound, 11 Gammas (issue 12)")
    import numpy as np

    from sensitivity.matched import rosenbaum_bounds

    for pairs in (100, 440, 2_000, 10_000):
        d = np.random.default_rng(5).normal(0.3, 1, pairs).round(1)
        gamma = np.arange(1, 6.01, 0.5)

        def exact() -> None:
            rosenbaum_bounds(differences=d, gamma=gamma, method="exact")  # noqa: B023

        def normal() -> None:
            rosenbaum_bounds(differences=d, gamma=gamma, method="normal")  # noqa: B023

        report(f"exact bound, {pairs} pairs (with the Gamma at alpha)", timed(exact, 3),
               timed(normal, 3), "the large-sample bound on the same pairs",
               "exact fast at 10,000 pairs")  # fmt: skip
    _matched_commands()


def _matched_commands() -> None:
    """Issue 26's rows, whole commands: 10,000 pairs by the normal method against the
    start-up floor; 440 tied pairs exact against normal: the in-process section's pairs
    (rounded to 0.1: 29 distinct sizes), and pairs in whole units from -3 to 6 (7 sizes, the
    exact bound's hardest ties)."""
    import tempfile

    import numpy as np

    with tempfile.TemporaryDirectory() as tmp:
        rng = np.random.default_rng(12)
        many, tied, whole = (f"{tmp}/{name}.csv" for name in ("pairs", "tied", "whole"))
        np.savetxt(many, rng.normal(0.3, 1, 10_000).round(2), header="d", comments="")
        np.savetxt(tied, np.random.default_rng(5).normal(0.3, 1, 440).round(1), fmt="%.1f",
                   header="d", comments="")  # fmt: skip
        np.savetxt(whole, rng.integers(-3, 7, 440), fmt="%d", header="d", comments="")
        run = [str(BIN / "sensitivity"), "matched", "--differences", "d", "--gamma",
               "1:6:0.5", "--format", "json"]  # fmt: skip
        commands = {
            "normal_10000": [*run, "--data", many, "--method", "normal"],
            "floor": [sys.executable, "-c", "import numpy, click"],
            "exact_tied": [*run, "--data", tied, "--method", "exact"],
            "normal_tied": [*run, "--data", tied, "--method", "normal"],
            "exact_whole": [*run, "--data", whole, "--method", "exact"],
            "normal_whole": [*run, "--data", whole, "--method", "normal"],
        }
        runs: dict[str, list] = {}
        t, _ = _alternate(commands, 7, runs)
    print(f"sensitivity matched, 10,000 pairs, normal method (whole command): "
          f"{t['normal_10000']:.2f} s; start-up floor (import numpy, click) {t['floor']:.2f} s"
          f"  (goal: at most 0.4 s)")  # fmt: skip
    for key, label in (("tied", "440 pairs rounded to 0.1"), ("whole", "440 pairs in whole "
                                                              "units (7 sizes)")):  # fmt: skip
        print(
            f"sensitivity matched, {label}, exact: {t['exact_' + key]:.2f} s against the "
            f"normal method's {t['normal_' + key]:.2f} s: "
            f"{_round_ratios(runs, 'exact_' + key, 'normal_' + key)}  (goal: at most 1.5)"
        )


REGRESSION_FORMULA = "y ~ t + " + " + ".join(f"x{i}" for i in range(1, 27)) + \
    " + C(g0) + C(g1) + C(g2) + C(g3)"  # fmt: skip
GRAM_FLOOR = """
import sys, numpy as np, polars as pl
frame = pl.read_csv(sys.argv[1])
dummies = frame.select(pl.col("g0", "g1", "g2", "g3")).to_dummies(drop_first=True)
x = np.hstack([np.ones((frame.height, 1)), frame.drop("g0", "g1", "g2", "g3").to_numpy(),
               dummies.to_numpy().astype(float)])
gram = x.T @ x
"""


def _alternate(commands: dict[str, list[str]], repeats: int,
               runs: dict[str, list] | None = None) -> tuple[dict, dict]:  # fmt: skip
    """Median wall time (s) and peak memory (MiB) of each command, run in turn `repeats`
    times (alternating, so a change in the machine's load falls on all of them). `runs`, if
    given, receives each run's (wall, peak) by command, for ratios round by round."""
    runs = {key: [] for key in commands} if runs is None else runs
    for key in commands:
        runs.setdefault(key, [])
    for _ in range(repeats):
        for key, cmd in commands.items():
            runs[key].append(measured(cmd))
    t = {k: statistics.median(r[0] for r in v) for k, v in runs.items()}
    m = {k: statistics.median(r[1] for r in v) for k, v in runs.items()}
    return t, m


def _round_ratios(runs: dict[str, list], a: str, b: str) -> str:
    """The ratio a / b of wall times round by round (each round runs both in turn, so a
    change in a shared machine's load falls on both): median, min and max."""
    ratios = sorted(x[0] / y[0] for x, y in zip(runs[a], runs[b], strict=True))
    return f"{statistics.median(ratios):.2f} (rounds {ratios[0]:.2f} to {ratios[-1]:.2f})"


def bench_data_route() -> None:
    print("== partial-r2 and report from data: 30 covariates (46 design columns), 1e5 and 1e6 "
          "rows (issues 11, 26)")  # fmt: skip
    import tempfile

    here = Path(__file__).resolve().parent
    with tempfile.TemporaryDirectory() as tmp:
        peaks: dict[str, dict[int, float]] = {"ours": {}, "report": {}}
        for rows in (100_000, 1_000_000):
            src = f"{tmp}/data_{rows}.csv"
            subprocess.run(
                [sys.executable, str(here / "make_regression_file.py"), str(rows), src], check=True
            )
            data = ["--data", src, "--formula", REGRESSION_FORMULA, "--treatment", "t"]
            commands = {
                "ours": [str(BIN / "sensitivity"), "partial-r2", *data, "--format", "json"],
                "floor": [sys.executable, "-c", GRAM_FLOOR, src],
                "report": [str(BIN / "sensitivity"), "report", *data, "--model", "ols",
                           "--out", f"{tmp}/report"],
            }  # fmt: skip
            runs: dict[str, list] = {}
            t, m = _alternate(commands, 5 if rows == 1_000_000 else 3, runs)
            peaks["ours"][rows], peaks["report"][rows] = m["ours"], m["report"]
            print(f"{rows:,} rows: sensitivity partial-r2 --data {t['ours']:.2f} s, "
                  f"peak {m['ours']:.0f} MiB")  # fmt: skip
            print(f"  floor (polars reads the file whole, dummies, X'X; whole process): "
                  f"{t['floor']:.2f} s, {m['floor']:.0f} MiB")  # fmt: skip
            print(f"  ratio: {t['ours'] / t['floor']:.2f}  (goal: at most 1.5 at 1e6 rows)")
            print(f"  sensitivity report --data ... --model ols: {t['report']:.2f} s, "
                  f"peak {m['report']:.0f} MiB; ratio to partial-r2 --data alone: "
                  f"{_round_ratios(runs, 'report', 'ours')}  (goal: at most 1.5)")  # fmt: skip
        for key, label in (("ours", "partial-r2"), ("report", "report")):
            low, high = peaks[key][100_000], peaks[key][1_000_000]
            print(f"  {label} peak memory 1e5 -> 1e6 rows: {low:.0f} -> {high:.0f} MiB "
                  f"({high / low:.2f}x; goal: flat)")  # fmt: skip


GLM_COVARIATES = " + ".join(f"x{i}" for i in range(1, 27)) + " + C(g0) + C(g1) + C(g2) + C(g3)"


def bench_glm_route() -> None:
    print("== E-value from data, logistic and Poisson fits: 46 design columns, a 0/1 treatment "
          "(its overlap fitted too), 1e5 and 1e6 rows (issue 26)")  # fmt: skip
    import tempfile

    here = Path(__file__).resolve().parent
    with tempfile.TemporaryDirectory() as tmp:
        peaks: dict[str, dict[int, float]] = {"logit": {}, "poisson": {}}
        for rows in (100_000, 1_000_000):
            src = f"{tmp}/glm_{rows}.csv"
            subprocess.run(
                [sys.executable, str(here / "make_glm_file.py"), str(rows), src], check=True
            )
            for model, outcome in (("logit", "d"), ("poisson", "k")):
                commands = {
                    "ours": [str(BIN / "sensitivity"), "evalue", "--data", src, "--formula",
                             f"{outcome} ~ t + {GLM_COVARIATES}", "--treatment", "t",
                             "--model", model, "--format", "json"],
                    "floor": [sys.executable, str(here / "glm_floor.py"), src, outcome, model],
                }  # fmt: skip
                t, m = _alternate(commands, 3 if rows == 1_000_000 else 1)
                peaks[model][rows] = m["ours"]
                print(f"{rows:,} rows, {model}: sensitivity evalue --data {t['ours']:.2f} s, "
                      f"peak {m['ours']:.0f} MiB")  # fmt: skip
                print(f"  floor (polars reads the file whole, the design in numpy, one X'WX per "
                      f"Newton step): {t['floor']:.2f} s, {m['floor']:.0f} MiB")  # fmt: skip
                print(f"  ratio: {t['ours'] / t['floor']:.2f}  (goal: at most 2 at 1e6 rows)")
        for model, seen in peaks.items():
            low, high = seen[100_000], seen[1_000_000]
            print(f"  {model} peak memory 1e5 -> 1e6 rows: {low:.0f} -> {high:.0f} MiB "
                  f"({high / low:.2f}x; goal: flat)")  # fmt: skip


ENGINE_PEAK = """
import sys, tracemalloc
import pyarrow.parquet as pq
from sensitivity.adapters.partials import arrow_batches, partition_factor
from sensitivity.adapters.engines import wanted_columns
formula = sys.argv[2]
wanted = wanted_columns(formula)
tracemalloc.start()
batches = pq.ParquetFile(sys.argv[1]).iter_batches(batch_size=10_000, columns=wanted)
partition_factor(arrow_batches(batches, wanted), formula)
print(tracemalloc.get_traced_memory()[1])
"""


def bench_engines() -> None:
    """Spark and Dask against the one-machine route on one Parquet dataset folder. The default
    size is modest; SENSITIVITY_BENCH_ENGINE_ROWS=10000000 runs the issue's 10^7 rows (each
    engine then takes minutes on two cores)."""
    import os
    import tempfile

    rows = int(os.environ.get("SENSITIVITY_BENCH_ENGINE_ROWS", "1000000"))
    parts = 8
    print(f"== partial-r2 on engines: {rows:,} rows in {parts} Parquet files, 46 design "
          "columns (issue 25)")  # fmt: skip
    here = Path(__file__).resolve().parent
    with tempfile.TemporaryDirectory() as tmp:
        folder = f"{tmp}/claims"
        subprocess.run([sys.executable, str(here / "make_engine_folder.py"), str(rows),
                        str(parts), folder], check=True)  # fmt: skip
        times = {}
        for engine in ("local", "dask", "spark"):
            cmd = [sys.executable, "-m", "sensitivity", "partial-r2", "--data", folder,
                   "--engine", engine, "--formula", REGRESSION_FORMULA, "--treatment", "t",
                   "--format", "json"]  # fmt: skip
            t, m = measured(cmd)
            times[engine] = t
            print(
                f"--engine {engine}: {t:.2f} s, peak {m:.0f} MiB (largest process: the "
                "driver; Spark's JVM and Python workers are processes of their own)"
            )
        for engine in ("dask", "spark"):
            print(
                f"  {engine} / local: {times[engine] / times['local']:.2f}  (two cores here: "
                "the engines' gain is on many machines; their start-up is in these times)"
            )
        print(f"  local pass: {times['local'] / rows * 1e9:.0f} ns a row (start-up included)")
        # one partition's working memory, reading a file in batches as Spark hands them over
        small = f"{tmp}/small"
        subprocess.run([sys.executable, str(here / "make_engine_folder.py"),
                        str(rows // 32), "1", small], check=True)  # fmt: skip
        peaks = []
        for path in (f"{small}/part-000.parquet", f"{folder}/part-000.parquet"):
            out = subprocess.run([sys.executable, "-c", ENGINE_PEAK, path, REGRESSION_FORMULA],
                                 check=True, capture_output=True, text=True)  # fmt: skip
            peaks.append(int(out.stdout) / 2**20)
        print(
            f"  one partition's peak allocation, {rows // 32:,} -> {rows // parts:,} rows: "
            f"{peaks[0]:.1f} -> {peaks[1]:.1f} MiB ({peaks[1] / peaks[0]:.2f}x; goal: flat)"
        )
        # the reduction: one combine of two partials of 46 design columns
        import pyarrow.parquet as pq

        from sensitivity.adapters.engines import wanted_columns
        from sensitivity.adapters.partials import arrow_batches, combine, partition_factor

        wanted = wanted_columns(REGRESSION_FORMULA)
        batch = pq.ParquetFile(f"{small}/part-000.parquet").read(columns=wanted).to_batches()
        a = partition_factor(arrow_batches(batch, wanted), REGRESSION_FORMULA)
        pass_time = timed(lambda: partition_factor(arrow_batches(batch, wanted),
                                                   REGRESSION_FORMULA), 3)  # fmt: skip
        step = timed(lambda: combine(a, a), 21)
        print(f"  partition pass in-process: {pass_time / (rows // 32) * 1e9:.0f} ns a row; "
              f"one combine (p = {a.r.shape[1]}): {step * 1e6:.0f} µs; a partial travels as "
              f"{a.r.nbytes / 1024:.0f} KiB")  # fmt: skip


def bench_debiased() -> None:
    print("== Debiased ML: 100,000 rows, 20 covariates, 5 folds, default learners (issue 23)")
    import numpy as np
    import pandas as pd

    from sensitivity.debiased.fit import debiased_fit

    rng = np.random.default_rng(23)
    n, k = 100_000, 20
    x = rng.normal(size=(n, k))
    d = x[:, :5] @ rng.normal(0, 0.4, 5) + np.sin(x[:, 5]) + rng.normal(size=n)
    y = 0.3 * d + x[:, :8] @ rng.normal(0, 0.5, 8) + np.cos(x[:, 6]) + rng.normal(size=n)
    frame = pd.DataFrame(x, columns=[f"x{i}" for i in range(k)]).assign(y=y, d=d)
    covariates = [f"x{i}" for i in range(k)]
    start = time.perf_counter()
    fit = debiased_fit(frame, "d", "y", covariates, folds=5, seed=1)
    crossfit = time.perf_counter() - start
    grid = np.linspace(0, 0.5, 50)

    def sensitivity_step() -> None:
        fit.grid(grid, grid)  # the bounds over a 50 x 50 strength grid
        fit.bounds([(0.01, 0.01), (0.05, 0.1)])  # scenarios and both robustness values

    step = timed(sensitivity_step)
    print(f"  cross-fitting (2 nuisances x 5 folds, boosting): {crossfit:.2f} s")
    print(f"  sensitivity step (50 x 50 grid, robustness values): {step * 1e3:.2f} ms")
    print(f"  ratio: {step / crossfit:.5f}  (goal: under 0.05 of the cross-fitting)")


WEIGHTING_CHILD = """
import sys, numpy as np
n, resamples, mode = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
rng = np.random.default_rng(0)
x = rng.normal(size=(n, 4))
e = 1 / (1 + np.exp(-(x @ [0.5, -0.3, 0.2, 0.1])))
a = (rng.uniform(size=n) < e).astype(float)
y = x @ [1.0, 0.5, 0.0, 0.0] + 0.3 * a + rng.normal(size=n)
if mode == "floor":
    draws = np.random.default_rng(1)
    for _ in range(resamples):
        np.sort(y[draws.integers(0, n, n)])
else:
    from sensitivity.weighting import weighting_bounds
    given = {"propensity": e} if mode == "given" else {"covariates": np.c_[np.ones(n), x]}
    methods = ("sharp", "percentile") if mode == "sharp" else ("percentile",)
    weighting_bounds(y, a, lam=np.linspace(1, 2.8, 10), resamples=resamples, seed=1,
                     methods=methods, **given)
"""


def bench_weighting() -> None:
    print("== Weighted estimates under the marginal sensitivity model: 10 Λ (issue 22)")
    child = [sys.executable, "-c", WEIGHTING_CHILD]

    def median_of(cmd: list[str], runs: int = 1) -> tuple[float, float]:
        got = [measured(cmd) for _ in range(runs)]
        return statistics.median(g[0] for g in got), statistics.median(g[1] for g in got)

    t_f, m_f = median_of([*child, "100000", "500", "floor"])
    print(f"floor: numpy draws and sorts 500 resamples of 100,000 (whole process): "
          f"{t_f:.2f} s, peak {m_f:.0f} MiB")  # fmt: skip
    for mode, what in (("given", "propensities given"), ("refit", "propensity model refitted")):
        t_o, m_o = median_of([*child, "100000", "500", mode])
        print(f"box bounds, 100,000 units, 500 resamples, {what}: {t_o:.2f} s, "
              f"peak {m_o:.0f} MiB; ratio {t_o / t_f:.2f}  (goal: within 3x)")  # fmt: skip
    print("growth with the units (box bounds, propensities given, 100 resamples; in process,")
    print("start-up and data excluded):")
    import math

    import numpy as np

    from sensitivity.weighting import weighting_bounds

    times = {}
    for n in (10_000, 100_000, 1_000_000):
        rng = np.random.default_rng(0)
        x = rng.normal(size=(n, 4))
        e = 1 / (1 + np.exp(-(x @ [0.5, -0.3, 0.2, 0.1])))
        a = (rng.uniform(size=n) < e).astype(float)
        y = x @ [1.0, 0.5, 0.0, 0.0] + 0.3 * a + rng.normal(size=n)

        def ours() -> None:
            weighting_bounds(y, a, propensity=e, lam=np.linspace(1, 2.8, 10), resamples=100,  # noqa: B023
                             seed=1, methods=("percentile",))  # fmt: skip

        def floor() -> None:
            draws = np.random.default_rng(1)
            for _ in range(100):
                np.sort(y[draws.integers(0, n, n)])  # noqa: B023

        times[n] = timed(ours, 1)
        t_f = timed(floor, 1)
        print(f"  {n:>9,} units: {times[n]:.2f} s (floor {t_f:.2f} s, ratio {times[n] / t_f:.2f})")
    ratio = times[1_000_000] / times[10_000]
    nlogn = 1_000_000 * math.log(1_000_000) / (10_000 * math.log(10_000))
    print(f"  10^4 -> 10^6: time x{ratio:.0f}; n log n x{nlogn:.0f}  (goal: no faster growth)")
    t_s, m_s = median_of([*child, "10000", "100", "sharp"])
    print(f"sharp and box bounds, 10,000 units, 100 resamples (quantile models refitted): "
          f"{t_s:.2f} s, peak {m_s:.0f} MiB")  # fmt: skip


SECTIONS = [bench_startup, bench_benchmarks, bench_tipping, bench_export, bench_screen,
            bench_simulate, bench_matched, bench_data_route, bench_glm_route,
            bench_debiased, bench_weighting, bench_engines]  # fmt: skip

if __name__ == "__main__":
    chosen = sys.argv[1:]
    for section in SECTIONS:
        if chosen and not any(c in section.__name__ for c in chosen):
            continue
        section()
        print()
