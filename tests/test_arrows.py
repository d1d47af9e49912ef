"""Arrows point one way (../shared/ARCHITECTURE.md, issue 18): an ast scan of every import.

The families are found from the folders, so a new one is checked without an edit here. The
rules: `common/` imports nothing of ours but itself; `output/` imports only `common/` and
itself (no family, not even lazily); a family's computing modules (`core`, `result` and their
helpers) never import `output/`, any presentation module, `adapters/`, `commands/`, the
screen, pandas, or a file; presentation modules (`present`, `figures`, `report`) never import
another family's presentation; `adapters/` never import `output/` or `commands/`; `cli.py`
imports only `commands/` and `common/`. The self-test plants a wrong arrow in every layer.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "sensitivity"
#: Folders of the package that are layers, not method families.
LAYERS = frozenset({"adapters", "commands", "common", "output", "screen"})
#: A family's modules that present (they may import `output/`).
PRESENTING = frozenset({"present", "figures", "report"})
#: A family's modules that face data (pandas, a fitting library), like `adapters/`.
DATA_FACING = frozenset({"data", "fit", "fitting", "learners"})
#: Costly libraries that a computing module may import only inside a function.
HEAVY = ("matplotlib", "click", "statsmodels", "pyarrow", "polars", "orjson", "sklearn")
#: Libraries a computing module never imports, even inside a function.
NEVER_IN_CORE = ("pandas", "matplotlib", "click")
#: Calls that read or write a file.
FILE_CALLS = frozenset({"open", "read_text", "write_text", "read_bytes", "write_bytes",
                        "loadtxt", "savetxt", "genfromtxt"})  # fmt: skip


def families() -> list[str]:
    return sorted(
        p.name
        for p in PACKAGE.iterdir()
        if p.is_dir() and (p / "__init__.py").is_file() and p.name not in LAYERS
    )


def layer_of(module: str) -> str | None:
    """The layer of a dotted module inside the package (None outside it)."""
    parts = module.split(".")
    if parts[0] != "sensitivity" or len(parts) < 2:
        return None
    top = parts[1]
    if top in LAYERS:
        return top
    if top in families():
        leaf = parts[2] if len(parts) > 2 else "__init__"
        if leaf in PRESENTING:
            return "present"
        if leaf in DATA_FACING:
            return "adapters"
        return "family-init" if leaf == "__init__" else "core"
    return "root"


def imports(path: Path, text: str | None = None):
    """(module imported, at module level?, line) for every import in a file, resolved."""
    rel = path.relative_to(ROOT).with_suffix("")
    here = ".".join(rel.parts)
    package = here if path.name == "__init__.py" else here.rpartition(".")[0]
    tree = ast.parse(text if text is not None else path.read_text(encoding="utf-8"))
    top = {id(n) for n in tree.body}
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                yield alias.name, id(node) in top, node.lineno
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - node.level + 1]
                module = ".".join(base + ([node.module] if node.module else []))
            else:
                module = node.module or ""
            names = [f"{module}.{a.name}" for a in node.names] if not node.module else [module]
            for name in names:
                yield name, id(node) in top, node.lineno


def file_calls(text: str):
    """Lines of calls that read or write a file."""
    for node in ast.walk(ast.parse(text)):
        if isinstance(node, ast.Call):
            func = node.func
            name = func.id if isinstance(func, ast.Name) else getattr(func, "attr", None)
            if name in FILE_CALLS:
                yield node.lineno


def wrong_arrows(planted: dict[Path, str] | None = None) -> list[str]:
    """Every import that points the wrong way, as 'file:line why'."""
    planted = planted or {}
    bad = []
    for path in sorted([*PACKAGE.rglob("*.py"), ROOT / "cli.py"]):
        text = planted.get(path, path.read_text(encoding="utf-8"))
        rel = path.relative_to(ROOT)
        if path.name == "cli.py":
            here = "cli"
        else:
            here = layer_of(".".join(rel.with_suffix("").parts)) or "root"
        family = rel.parts[1] if len(rel.parts) > 2 else None
        for module, at_top, line in imports(path, text):
            where = f"{rel}:{line}"
            first = module.split(".")[0]
            target = layer_of(module)
            if here == "core":
                if first in NEVER_IN_CORE:
                    bad.append(f"{where} a computing module imports {first}")
                elif at_top and first in HEAVY:
                    bad.append(f"{where} imports {first} at module level")
                if target in ("output", "present", "adapters", "commands", "screen", "root"):
                    bad.append(f"{where} a computing module imports {module}")
            if here == "common" and target not in (None, "common"):
                bad.append(f"{where} common/ imports {module}")
            if here == "output" and target not in (None, "common", "output"):
                bad.append(f"{where} output/ imports {module}")
            if here == "present" and target == "present" and module.split(".")[1] != family:
                bad.append(f"{where} imports another family's presentation {module}")
            if here == "present" and target in ("adapters", "commands", "root"):
                bad.append(f"{where} a presentation module imports {module}")
            if here == "adapters" and target in ("output", "present", "commands", "root"):
                bad.append(f"{where} adapters/ import {module}")
            if here == "screen" and target in ("commands", "root"):
                bad.append(f"{where} the screen imports {module}")
            if here == "cli" and target not in (None, "commands", "common"):
                bad.append(f"{where} cli.py imports {module}")
        if here == "core":
            bad += [f"{rel}:{line} a computing module touches a file" for line in
                    file_calls(text)]  # fmt: skip
    return bad


def test_the_families_are_found_from_the_folders():
    found = families()
    for name in ("evalues", "partial_r2", "tipping", "matched", "stability", "impact",
                 "simulate"):  # fmt: skip
        assert name in found


def test_imports_point_one_way():
    assert wrong_arrows() == []


def test_no_package_file_is_over_500_lines():
    long = {
        str(p.relative_to(ROOT)): n
        for p in PACKAGE.rglob("*.py")
        if (n := len(p.read_text(encoding="utf-8").splitlines())) > 500
    }
    assert long == {}


PLANTS = [
    ("common/results.py", "\nfrom ..evalues import core\n", "common/ imports"),
    ("common/checks.py", "\ndef f():\n    from ..output import document\n", "common/ imports"),
    ("output/document.py", "\ndef f():\n    import sensitivity.matched.core\n", "output/ imports"),
    ("output/report.py", "\nfrom ..adapters import files\n", "output/ imports"),
    ("evalues/core.py", "\nfrom ..output import tables\n", "computing module imports"),
    ("matched/result.py", "\ndef f():\n    import pandas\n", "imports pandas"),
    ("stability/core.py", "\nimport statsmodels.api\n", "at module level"),
    ("impact/core.py", "\ndef f(p):\n    return open(p)\n", "touches a file"),
    ("simulate/result.py", "\nfrom .present import document\n", "computing module imports"),
    ("tipping/present.py", "\nfrom ..evalues.present import sentence\n", "another family"),
    ("partial_r2/figures.py", "\nfrom ..tipping.figures import x\n", "another family"),
    ("adapters/files.py", "\nfrom ..output import tables\n", "adapters/ import"),
    ("screen/core.py", "\nfrom ..commands import _options\n", "the screen imports"),
    ("../cli.py", "\nimport sensitivity.evalues.core\n", "cli.py imports"),
]


@pytest.mark.parametrize("where, line, why", PLANTS, ids=[p[0] for p in PLANTS])
def test_the_arrow_check_catches_a_planted_wrong_arrow_in_every_layer(where, line, why):
    path = (PACKAGE / where).resolve()
    text = path.read_text(encoding="utf-8") + line
    found = [a for a in wrong_arrows({path: text}) if why in a]
    assert found, f"a wrong arrow planted in {where} went unnoticed"


def test_every_layer_has_a_plant():
    planted = {layer_of("sensitivity." + p[0].removesuffix(".py").replace("/", ".")) for p in
               PLANTS if not p[0].startswith("..")}  # fmt: skip
    assert planted >= {"common", "output", "core", "present", "adapters", "screen"}
