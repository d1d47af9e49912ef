"""A CSV for `make bench`: ROWS rows of an outcome, a treatment, 26 numeric covariates and
4 text categories (3, 5, 6 and 8 levels; 46 design columns in all). Invented numbers."""

import sys

import numpy as np
import pandas as pd

rows, out = int(sys.argv[1]), sys.argv[2]
rng = np.random.default_rng(0)
step = 250_000  # written in pieces, so making the file stays small too
for start in range(0, rows, step):
    n = min(step, rows - start)
    x = rng.normal(size=(n, 26))
    cats = {f"g{i}": rng.choice([f"L{j}" for j in range(k)], n) for i, k in enumerate([3, 5, 6, 8])}
    t = x @ np.linspace(-0.2, 0.2, 26) + rng.normal(size=n)
    y = 0.3 * t + x @ np.linspace(0.2, -0.1, 26) + rng.normal(size=n)
    frame = pd.DataFrame(x.round(5), columns=[f"x{i}" for i in range(1, 27)])
    frame = frame.assign(**cats, t=t.round(5), y=y.round(5))
    frame.to_csv(out, index=False, header=start == 0, mode="w" if start == 0 else "a")
