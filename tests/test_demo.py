"""`make demo` runs the main job end to end on the bundled invented data (issue 11)."""

import os
import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


#: Libraries only the test and development extras install: `make demo` installs none of them,
#: so the demo runs with each of them made unimportable.
DEV_ONLY = ("lifelines", "linearmodels", "pyfixest", "openpyxl", "hypothesis", "mpmath",
            "pytest", "sklearn", "dask", "distributed", "pyspark")  # fmt: skip
BLOCK = f"""
import sys
class _Missing:
    def find_spec(self, name, path=None, target=None):
        if name.split(".")[0] in {DEV_ONLY!r}:
            raise ModuleNotFoundError(f"No module named {{name!r}}", name=name)
sys.meta_path.insert(0, _Missing())
"""


def test_make_demo_installs_the_runtime_dependencies_only():
    make = (ROOT / "Makefile").read_text()
    runtime = make.split("$(RUNTIME):", 1)[1].split("\n\n", 1)[0]
    assert "pip install --quiet -e ." in runtime and "[dev]" not in runtime
    assert "demo: $(RUNTIME)" in make and "test: $(DEV)" in make


def test_the_demo_runs(tmp_path):
    shutil.copytree(ROOT / "demo", tmp_path / "demo")
    (tmp_path / "block").mkdir()
    (tmp_path / "block" / "sitecustomize.py").write_text(BLOCK)
    env = dict(os.environ, PATH=f"{Path(sys.executable).parent}{os.pathsep}{os.environ['PATH']}")
    # without the extras (as `make demo` installs it), this checkout's package first
    env["PYTHONPATH"] = os.pathsep.join([str(tmp_path / "block"), str(ROOT)])
    blocked = subprocess.run([sys.executable, "-c", "import lifelines"], env=env,
                             capture_output=True, text=True)  # fmt: skip
    assert blocked.returncode != 0 and "No module named 'lifelines'" in blocked.stderr
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
