"""A Parquet dataset folder for `make bench`'s engine section: ROWS rows in PARTS files, of
an outcome, a treatment, 26 numeric covariates and 4 text categories (46 design columns, as
`make_regression_file.py`). Invented numbers. Usage: make_engine_folder.py ROWS PARTS FOLDER"""

import sys
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

rows, parts, folder = int(sys.argv[1]), int(sys.argv[2]), Path(sys.argv[3])
folder.mkdir(parents=True, exist_ok=True)
rng = np.random.default_rng(0)
per = -(-rows // parts)
step = 250_000  # each file written in row groups, so making the folder stays small too
for part in range(parts):
    n_part = min(per, rows - part * per)
    writer = None
    for start in range(0, n_part, step):
        n = min(step, n_part - start)
        x = rng.normal(size=(n, 26))
        cats = {f"g{i}": rng.choice(np.array([f"L{j}" for j in range(k)]), n)
                for i, k in enumerate([3, 5, 6, 8])}  # fmt: skip
        t = x @ np.linspace(-0.2, 0.2, 26) + rng.normal(size=n)
        y = 0.3 * t + x @ np.linspace(0.2, -0.1, 26) + rng.normal(size=n)
        columns = {f"x{i}": x[:, i - 1] for i in range(1, 27)} | cats | {"t": t, "y": y}
        table = pa.table(columns)
        if writer is None:
            writer = pq.ParquetWriter(folder / f"part-{part:03d}.parquet", table.schema)
        writer.write_table(table)
    if writer is not None:
        writer.close()
