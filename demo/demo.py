"""`make demo`: the main job on bundled, invented data, printing each command before its output.

The scenario is our own and the numbers are invented (see demo/README.md). Figures go to out/.
"""

import csv
import shlex
import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
RULE = "=" * 92


def evalue_command(row: dict) -> list[str]:
    if row["lower"]:  # as a paper prints it: the scale, the estimate and its interval
        text = f"{row['scale'].upper()} {row['estimate']} (95% CI {row['lower']} to {row['upper']})"
        args = ["sensitivity", "evalue", text]
    else:
        args = ["sensitivity", "evalue", "--scale", row["scale"], "--estimate", row["estimate"]]
    for column in ("se", "sd", "contrast"):
        if row[column]:
            args += [f"--{column}", row[column]]
    if row["outcome"]:
        args += ["--outcome-frequency", row["outcome"]]
    return args


def show(title: str, cmd: list[str]) -> int:
    """Print the title and command, run it from the project root, pass its output through."""
    print(RULE)
    print(title)
    print("$ " + shlex.join(cmd) + "\n")
    run = [sys.executable, *cmd[1:]] if cmd[0] == "python" else cmd
    out = subprocess.run(run, capture_output=True, text=True, cwd=ROOT)
    sys.stdout.write(out.stdout)
    sys.stderr.write(out.stderr)
    print()
    return out.returncode


def main() -> int:
    (ROOT / "out").mkdir(exist_ok=True)
    with open(HERE / "cohort_estimates.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    print("Harbourside Workers Cohort (invented data): how strong would a hidden confounder")
    print("have to be to explain each adjusted estimate away?\n")
    steps = []
    for i, row in enumerate(rows, 1):
        cmd = evalue_command(row)
        if i == 1:  # the reviewer's question, once: confounders of known ones' strength
            cmd += ["--confounder", "1.5", "2", "--confounder", "3", "4"]
        steps.append((f"[{i}/{len(rows)}] {row['label']}", cmd))
    steps.append(
        (
            "Systolic blood pressure per daily commute minute (OLS on invented individual data):",
            [
                "sensitivity",
                "partial-r2",
                "--data",
                "demo/harbourside_bp.csv",
                "--formula",
                "sbp ~ commute_min + age + female + smoker + C(shift) + bmi",
                "--treatment",
                "commute_min",
                "--benchmark",
                "smoker",
                "--benchmark",
                "smoker:2",
                "--benchmark",
                "shift",
                "--benchmark",
                "shift:2",
                "--contrast",
                "10",
                "--plot",
                "out/partial_r2_contours.png",
            ],
        )
    )
    steps.append(
        (
            "Tipping points for night-shift work and type 2 diabetes (hazard ratio, rare outcome):",
            [
                "sensitivity",
                "tipping",
                "--scale",
                "hr",
                "--estimate",
                "1.38",
                "--ci",
                "1.12",
                "1.70",
                "--outcome-frequency",
                "rare",
                "--prevalence-control",
                "0.25",
                "--prevalence-treated",
                "0.25:0.75:0.05",
                "--outcome-effect",
                "1:4:0.1",
                "--plot",
                "out/tipping_night_shift.png",
            ],
        )
    )
    steps.append(
        (
            "The robustness section of the manuscript, for every estimate at once:",
            ["sensitivity", "report", "--estimates", "demo/cohort_estimates.csv",
             "--out", "out/estimates-report"],
        )
    )  # fmt: skip
    steps.append(
        (
            "From fitted models to the manuscript folder, with a hidden confounder we know "
            "(Python: three statsmodels fits on demo/harbourside_cohort.csv, then "
            "sensitivity.report):",
            ["python", "demo/hidden_confounder.py", "demo-report"],
        )
    )
    steps.append(
        (
            "Screening an (invented) evidence review of 40 published results:",
            ["sensitivity", "screen", "demo/published_results.csv", "--from-text", "result",
             "--confounder", "2", "2", "--output", "out/screened.csv"],
        )
    )  # fmt: skip
    for title, cmd in steps:
        code = show(title, cmd)
        if code:
            return code
    print("Figures written to out/: partial_r2_contours.png, tipping_night_shift.png")
    print("The report from the fitted models is in demo-report/: open demo-report/report.html;")
    print("the one from the table of estimates is in out/estimates-report/.")
    return 0


if __name__ == "__main__":
    sys.exit(main())
