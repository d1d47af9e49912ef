"""`make demo` runs the main job end to end on the bundled invented data (issue 11)."""

import os
import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_the_demo_runs(tmp_path):
    shutil.copytree(ROOT / "demo", tmp_path / "demo")
    env = dict(os.environ, PATH=f"{Path(sys.executable).parent}{os.pathsep}{os.environ['PATH']}")
    out = subprocess.run([sys.executable, str(tmp_path / "demo" / "demo.py")], cwd=tmp_path,
                         env=env, capture_output=True, text=True, timeout=300)  # fmt: skip
    assert out.returncode == 0, out.stderr[-2000:]
    assert (tmp_path / "demo-report" / "report.html").is_file()
    assert (tmp_path / "out" / "screened.csv").is_file()
    assert (tmp_path / "out" / "estimates-report" / "report.html").is_file()
    # the hidden confounder, known to the generating script, set against the bounds
    assert "adjusting for apnoea moves the estimate by" in " ".join(out.stdout.split())
    assert "E-value" in out.stdout
    # where it writes comes first, and each step's full output is in a file of its own
    assert "This demo writes into the current folder" in "\n".join(out.stdout.splitlines()[:6])
    assert len(list((tmp_path / "out" / "demo").iterdir())) == 6
    assert "Named confounders" in (tmp_path / "out" / "demo" / "2-partial-r2.md").read_text()
    assert len(out.stdout.splitlines()) < 150
