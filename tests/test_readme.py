"""The README's command examples print exactly what the README shows."""

import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "scripts"))
from readme_examples import README, blocks, run  # noqa: E402

EXAMPLES = blocks(README.read_text(encoding="utf-8"))


def test_readme_has_examples():
    assert len(EXAMPLES) >= 3


@pytest.mark.parametrize(
    "cmd, expected", [(c, o) for c, o, _ in EXAMPLES], ids=[c for c, _, _ in EXAMPLES]
)
def test_readme_example_output_is_current(cmd, expected):
    out = run(cmd)
    assert out.returncode == 0, out.stderr
    assert out.stdout == expected, "README drifted: run `python scripts/readme_examples.py`"


def test_readme_opens_with_the_job_then_the_two_commands():
    text = README.read_text(encoding="utf-8")
    assert text.index("make demo") < text.index("```console")
    assert "make test" in text
