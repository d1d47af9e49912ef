"""A CSV for `make bench`'s E-value-from-data section: ROWS rows of a 0/1 treatment `t`, a
0/1 outcome `d`, a count outcome `k`, 26 numeric covariates and 4 text categories (3, 5, 6
and 8 levels; 46 design columns). Invented numbers."""

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
    t = rng.binomial(1, 1 / (1 + np.exp(-(x @ np.linspace(-0.2, 0.2, 26)))))
    eta = -1.0 + 0.3 * t + x @ np.linspace(0.1, -0.1, 26)
    d = rng.binomial(1, 1 / (1 + np.exp(-eta)))
    k = rng.poisson(np.exp(eta))
    frame = pd.DataFrame(x.round(5), columns=[f"x{i}" for i in range(1, 27)])
    frame = frame.assign(**cats, t=t, d=d, k=k)
    frame.to_csv(out, index=False, header=start == 0, mode="w" if start == 0 else "a")
