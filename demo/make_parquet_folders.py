"""The demo's two tables again as Parquet dataset folders (a few files each), as a register or
a claims warehouse would hold them: for `--engine dask|spark` and the local folder route.

Run from the project's root: python demo/make_parquet_folders.py
"""

from pathlib import Path

import pandas as pd

HERE = Path(__file__).resolve().parent

for name, parts in (("harbourside_bp", 4), ("published_results", 3)):
    frame = pd.read_csv(HERE / f"{name}.csv", dtype=None if name == "harbourside_bp" else str,
                        keep_default_na=name == "harbourside_bp")  # fmt: skip
    folder = HERE / f"{name}_parquet"
    folder.mkdir(exist_ok=True)
    for old in folder.glob("*.parquet"):
        old.unlink()
    step = -(-len(frame) // parts)
    for i in range(parts):
        piece = frame.iloc[i * step : (i + 1) * step]
        piece.to_parquet(folder / f"part-{i}.parquet", index=False)
