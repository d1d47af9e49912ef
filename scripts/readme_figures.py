"""Draw the README's figures into docs/figures/ (invented numbers; see demo/README.md).

python scripts/readme_figures.py     # from the project's venv, after changing a figure
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
OUT = ROOT / "docs" / "figures"
FIGURES = {
    "evalue_poor_sleep.png": [
        "evalue", "OR 2.40 (95% CI 1.80-3.20)", "--outcome-frequency", "common",
        "--confounder", "1.5", "2", "--confounder", "3", "3",
    ],
    "partial_r2_commute.png": [
        "partial-r2", "--data", "demo/harbourside_bp.csv", "--formula",
        "sbp ~ commute_min + age + female + smoker + C(shift) + bmi", "--treatment",
        "commute_min", "--benchmark", "smoker", "--benchmark", "smoker:2", "--benchmark",
        "shift", "--benchmark", "shift:2", "--plot-mark", "0.08", "0.04",
    ],
    "tipping_night_shift.png": [
        "tipping", "--scale", "hr", "--estimate", "1.38", "--ci", "1.12", "1.70",
        "--outcome-frequency", "rare", "--prevalence-control", "0.25",
        "--prevalence-treated", "0.25:0.75:0.01", "--outcome-effect", "1:4:0.02",
    ],
}  # fmt: skip


def main() -> None:
    OUT.mkdir(parents=True, exist_ok=True)
    for name, args in FIGURES.items():
        cmd = [sys.executable, "-m", "sensitivity", *args, "--plot", str(OUT / name)]
        subprocess.run(cmd, cwd=ROOT, check=True, capture_output=True)
        print(f"wrote docs/figures/{name}")


if __name__ == "__main__":
    main()
