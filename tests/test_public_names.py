"""Issue 19, second re-check: every public name stays what it is after the package's own
folders are imported. `sensitivity.simulate` is both a folder and the public function; once
the folder was imported (the command line, a report, a test), the name on the package was the
module, and `sensitivity.simulate(...)` raised "'module' object is not callable"."""

from __future__ import annotations

import subprocess
import sys
import textwrap


def test_every_public_name_is_callable_or_a_class_after_every_folder_is_imported():
    code = textwrap.dedent("""
        import importlib, pkgutil, types
        import sensitivity
        for info in pkgutil.iter_modules(sensitivity.__path__):
            if info.ispkg:
                importlib.import_module(f"sensitivity.{info.name}.core"
                                        if info.name == "simulate" else f"sensitivity.{info.name}")
        bad = []
        for name in sensitivity.__dir__():
            if name.startswith("_"):
                continue
            value = getattr(sensitivity, name)
            if isinstance(value, types.ModuleType) and not callable(value):
                bad.append(name)
        assert not bad, bad
        r = sensitivity.simulate("rr", 2.0, (1.5, 3.0), prevalence_treated="fixed:0.5",
                                 prevalence_control="fixed:0.2", outcome_effect="fixed:2",
                                 draws=500, seed=1)
        assert type(r).__name__ == "SimulationResult"
        print("ok")
    """)
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=300)  # fmt: skip
    assert done.stdout.strip() == "ok", done.stderr[-2000:]
