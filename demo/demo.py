"""`make demo`: the main job on bundled, invented data; each command, then its key result.

The scenario is our own and the numbers are invented (see demo/README.md). The terminal shows
each command and the sentence it would paste into a paper; each step's full output (tables,
notes, cautions) goes to a file under out/demo/, figures to out/, and the manuscript folder
from the fitted models to demo-report/.
"""

import csv
import shlex
import subprocess
import sys
import textwrap
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
RULE = "-" * 92
WHERE = """\
This demo writes into the current folder:
  out/demo/      each step's full output (tables, notes, cautions), one file a step
  out/           the figures and the screened table
  out/estimates-report/, demo-report/   two manuscript folders (open report.html)
"""


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


def wrap(line: str) -> str:
    return textwrap.fill(line, 92, initial_indent="  ", subsequent_indent="  ")


def show(n: int, title: str, cmd: list[str], cautions: dict[str, int]) -> int:
    """Run one step from the project root; print the command and its key lines.

    A command with a paste-ready sentence runs with `--format markdown --output FILE`: the
    file holds the full result and the sentence comes on stderr (with the notes, which are
    gathered for the end). Other steps print their own short summary; their full output is
    kept in a file as well.
    """
    print(RULE)
    print(f"[{n}] {title}")
    full = ROOT / "out" / "demo" / f"{n}-{cmd[1].removeprefix('demo/').removesuffix('.py')}"
    print("$ " + shlex.join(cmd))
    paste = cmd[0] == "sensitivity" and cmd[1] in ("evalue", "partial-r2", "tipping")
    if paste:
        cmd = [*cmd, "--format", "markdown", "--output", str(full.with_suffix(".md"))]
    run = [sys.executable, *cmd[1:]] if cmd[0] == "python" else cmd
    out = subprocess.run(run, capture_output=True, text=True, cwd=ROOT)
    if out.returncode:
        sys.stdout.write(out.stdout)
        sys.stderr.write(out.stderr)
        return out.returncode
    if paste:
        for line in out.stderr.splitlines():
            if line.startswith("Note: "):
                cautions[line[6:]] = cautions.get(line[6:], 0) + 1
            elif line.strip() and not line.startswith("Wrote "):
                print(wrap(line))
        where = full.with_suffix(".md").relative_to(ROOT)
        print(f"  full output: {where} (the same command with --format markdown --output)")
        return 0
    full.with_suffix(".txt").write_text(out.stdout + out.stderr, encoding="utf-8")
    for line in (out.stdout + out.stderr).splitlines():
        if cmd[1] == "screen" and line.startswith("Read "):
            line = line.split(". ", 1)[0] + "."  # the counts; the file has the rest
        if line.strip():
            print(wrap(line) if len(line) > 92 else "  " + line)
    print(f"  full output: {full.with_suffix('.txt').relative_to(ROOT)}")
    return 0


def main() -> int:
    print("Harbourside Workers Cohort (invented data): how strong would a hidden confounder")
    print("have to be to explain each adjusted estimate away?\n")
    print(WHERE)
    (ROOT / "out" / "demo").mkdir(parents=True, exist_ok=True)
    with open(HERE / "cohort_estimates.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    # One estimate in full, with the reviewer's question (confounders as strong as known
    # ones); the report step below gives every row's E-value in one line each.
    first = rows[0]
    cmd = evalue_command(first) + ["--confounder", "1.5", "2", "--confounder", "3", "4"]
    steps = [(f"One estimate: {first['label']}", cmd)]
    steps.append(
        (
            "A regression coefficient: systolic blood pressure per daily commute minute (OLS):",
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
            "Tipping points: night-shift work and type 2 diabetes (hazard ratio, rare outcome):",
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
            "Every estimate of the cohort at once, as a manuscript's robustness section:",
            ["sensitivity", "report", "--estimates", "demo/cohort_estimates.csv",
             "--out", "out/estimates-report"],
        )
    )  # fmt: skip
    steps.append(
        (
            "From fitted models (Python), with a hidden confounder we know:",
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
    cautions: dict[str, int] = {}
    for n, (title, cmd) in enumerate(steps, 1):
        code = show(n, title, cmd, cautions)
        if code:
            return code
    print(RULE)
    print("Cautions that go with every result above (each step's file has its own notes too):")
    for line, count in cautions.items():
        if count > 1:
            print(textwrap.fill(line, 92, initial_indent="- ", subsequent_indent="  "))
    print(RULE)
    print("Where to look next:")
    print("  demo-report/report.html          the manuscript section from the fitted models")
    print("  out/estimates-report/report.html the same from the table of estimates")
    print("  out/partial_r2_contours.png, out/tipping_night_shift.png   the figures")
    print("  out/screened.csv                 the screened evidence review")
    print("  out/demo/                        each step's full output")
    return 0


if __name__ == "__main__":
    sys.exit(main())
