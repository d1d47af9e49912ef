"""Regenerate demo/published_results.csv: INVENTED "published" results for the screen demo.

An imaginary evidence review of shift work and metabolic outcomes: each row is a result as a
reviewer copied it, on mixed scales, some in tidy columns and some only as text, with the
mistakes real tables have (decimal commas, a truncated interval, "NR"). No number comes from
a real study.
"""

import csv
from pathlib import Path

import numpy as np

rng = np.random.default_rng(20261202)
rows = []
for i in range(1, 41):
    scale = ["hr", "or", "rr", "smd", "md"][i % 5]
    if scale in ("hr", "or", "rr"):
        est = float(np.exp(rng.normal(0.25, 0.2)))
        half = float(rng.uniform(0.08, 0.35))
        lo, up = est * np.exp(-half), est * np.exp(half)
        text = {
            "hr": f"HR {est:.2f} ({lo:.2f}-{up:.2f})",
            "or": f"aOR {est:.2f} (95% CI {lo:.2f} to {up:.2f})",
            "rr": f"{est:.2f} [{lo:.2f}, {up:.2f}]",
        }[scale]
        rows.append({"study": f"Study {i:02d}", "scale": scale, "estimate": f"{est:.2f}",
                     "lower": f"{lo:.2f}", "upper": f"{up:.2f}", "se": "", "dof": "", "sd": "",
                     "outcome": "rare" if scale != "or" or i % 2 else "common",
                     "result": text})  # fmt: skip
    else:
        est = float(rng.normal(0.2 if scale == "smd" else 1.5, 0.1))
        se = float(rng.uniform(0.04, 0.12)) * (1 if scale == "smd" else 5)
        rows.append({"study": f"Study {i:02d}", "scale": scale, "estimate": f"{est:.3f}",
                     "lower": "", "upper": "", "se": f"{se:.3f}",
                     "dof": "" if scale == "smd" else str(int(rng.integers(200, 3000))),
                     "sd": "" if scale == "smd" else f"{rng.uniform(8, 20):.1f}", "outcome": "",
                     "result": ""})  # fmt: skip
rows[3]["result"], rows[3]["estimate"] = "1,32 (1,05-1,66)", ""
rows[7]["result"], rows[7]["estimate"], rows[7]["lower"], rows[7]["upper"] = "NR", "", "", ""
rows[12]["result"], rows[12]["upper"] = "HR 1.21 (1.02-", ""
rows[18]["outcome"] = ""  # an odds ratio with no outcome frequency
with open(Path(__file__).with_name("published_results.csv"), "w", newline="") as fh:
    writer = csv.DictWriter(fh, fieldnames=list(rows[0]))
    writer.writeheader()
    writer.writerows(rows)
