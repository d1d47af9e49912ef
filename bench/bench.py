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


def bench_startup() -> None:
    print("== One-number command start-up (issue 2)")
    cmd = [str(BIN / "sensitivity"), "evalue", "rr", "3.9", "--ci", "1.8", "8.7"]
    base = [sys.executable, "-c", "import numpy, click"]
    report(
        "sensitivity evalue rr 3.9 --ci 1.8 8.7",
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
    from sensitivity.regression import partial_r2_from_model

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
    import io
    import json

    import numpy as np
    from sensitivity.tables import columns_to_csv

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
    t_json = timed(lambda: json.dump(grid.to_dict(), io.StringIO()), repeats=1)
    print(f"  export of all 1,000,000 rows: CSV {t_csv:.2f} s, JSON {t_json:.2f} s")


SECTIONS = [bench_startup, bench_benchmarks, bench_tipping]

if __name__ == "__main__":
    for section in SECTIONS:
        section()
        print()
