import csv
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner
from hypothesis import settings

# No example is held to a time limit: speed is measured by `make bench`, never asserted in a
# test, and a shared machine can make any one example slow (a 200 ms deadline failed a run).
settings.register_profile("sensitivity", deadline=None)
settings.load_profile("sensitivity")

ROOT = Path(__file__).resolve().parent.parent
CASES = ROOT / "reference_cases"


def help_examples(command: str) -> list[str]:
    """The examples in a command's --help (`command` may be "screen" or a group's words),
    each as printed, lines continued with a backslash joined."""
    from cli import cli

    text = CliRunner().invoke(cli, [*command.split(), "--help"], terminal_width=200).stdout
    lines, current = [], ""
    for raw in text.split("Examples:")[1].split("Options:")[0].splitlines():
        line = raw.strip()
        if not line:
            continue
        current = f"{current} {line}".strip()
        if current.endswith("\\"):
            current = current[:-1].strip()
            continue
        lines.append(current)
        current = ""
    return lines


def first_example(command: str) -> list[str]:
    """The first example in the command's --help, as arguments (after `sensitivity`)."""
    import shlex

    examples = help_examples(command)
    if not examples:
        raise AssertionError(f"{command} --help has no example")
    return shlex.split(examples[0])[1:]


def load_cases(*names):
    """Rows of reference CSVs, blanks as None, numbers as float where they parse."""
    rows = []
    for name in names:
        with open(CASES / name, newline="", encoding="utf-8") as fh:
            for row in csv.DictReader(fh):
                out = {}
                for key, value in row.items():
                    if value == "":
                        out[key] = None
                        continue
                    try:
                        out[key] = float(value)
                    except ValueError:
                        out[key] = value
                rows.append(out)
    return rows


@pytest.fixture
def run():
    """Invoke the CLI as a user would; returns click's Result (stdout and stderr apart)."""
    from cli import cli

    runner = CliRunner()

    def invoke(*args):
        return runner.invoke(cli, [str(a) for a in args], catch_exceptions=False)

    return invoke


@pytest.fixture(scope="session")
def spark():
    """One local Spark session (two cores) for every test that asks for it (issue 25)."""
    if shutil.which("java") is None:
        pytest.skip("Spark needs Java (17) on the PATH; none found")
    pytest.importorskip("pyspark", reason="the spark extra is not installed")
    import os
    import sys

    os.environ.setdefault("PYSPARK_PYTHON", sys.executable)
    from pyspark.sql import SparkSession

    session = (
        SparkSession.builder.master("local[2]").appName("sensitivity-tests")
        .config("spark.ui.enabled", "false").config("spark.ui.showConsoleProgress", "false")
        .config("spark.sql.shuffle.partitions", "2").getOrCreate()
    )  # fmt: skip
    session.sparkContext.setLogLevel("ERROR")
    yield session
    session.stop()
