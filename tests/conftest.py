import csv
from pathlib import Path

import pytest
from click.testing import CliRunner

ROOT = Path(__file__).resolve().parent.parent
CASES = ROOT / "reference_cases"


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
