"""How the package is layered: the checks measure, mapsection.render draws and writes.

Structure tests of this project's own rules (no outside reference applies): the measuring
core imports without matplotlib, and no check module reaches for another's private names.
"""

from __future__ import annotations

import ast
import os
import subprocess
import sys
from pathlib import Path

import mapsection.checks

CHECKS = Path(mapsection.checks.__file__).parent
ROOT = CHECKS.parents[1]

BLOCKED = """
import importlib, pkgutil, sys
sys.modules["matplotlib"] = None  # any import of matplotlib now raises ImportError
import mapsection.checks
for m in pkgutil.iter_modules(mapsection.checks.__path__):
    importlib.import_module(f"mapsection.checks.{m.name}")
import mapsection.checking
sys.path.insert(0, "tests")
from conftest import homocline_draft as _draft  # a hand-made draft, measured without matplotlib
from mapsection.checks import key_figures, run_checks
assert key_figures(run_checks(_draft())).section == "T"
drawn = sorted(n for n in sys.modules if n.startswith(("mapsection.render", "PIL")))
assert not drawn, drawn
"""


def test_checks_import_without_matplotlib():
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    res = subprocess.run([sys.executable, "-c", BLOCKED], capture_output=True, text=True,
                         cwd=ROOT, env=env, check=False)
    assert res.returncode == 0, res.stderr


def test_no_check_module_imports_a_private_name():
    for path in sorted(CHECKS.glob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and node.level > 0:
                private = [a.name for a in node.names if a.name.startswith("_")]
                assert not private, f"{path.name} imports {private} from {node.module}"


def _imports(path: Path, module: str, modules: set[str]) -> set[str]:
    """The package's modules that a module imports (anywhere in it, but for type checking)."""
    package = module if path.name == "__init__.py" else module.rsplit(".", 1)[0]
    tree = ast.parse(path.read_text(encoding="utf-8"))
    typing_only = {id(n) for node in ast.walk(tree) if isinstance(node, ast.If)
                   and ast.unparse(node.test) in ("TYPE_CHECKING", "typing.TYPE_CHECKING")
                   for n in ast.walk(node)}
    out = set()
    for node in ast.walk(tree):
        if id(node) in typing_only:
            continue
        if isinstance(node, ast.ImportFrom):
            base = package.split(".")[: len(package.split(".")) - max(node.level - 1, 0)]
            target = ".".join(base + [node.module]) if node.level and node.module else (
                ".".join(base) if node.level else node.module or "")
            out |= {c for c in [target, *(f"{target}.{a.name}" for a in node.names)]
                    if c in modules}
        elif isinstance(node, ast.Import):
            out |= {a.name for a in node.names if a.name in modules}
    return out - {module}


def test_no_import_circle():
    files = {}
    for path in (ROOT / "mapsection").rglob("*.py"):
        name = ".".join(path.relative_to(ROOT).with_suffix("").parts)
        files[name.removesuffix(".__init__")] = path
    graph = {m: _imports(p, m, set(files)) for m, p in files.items()}
    # A module on a circle reaches itself: follow the imports from each one.
    for start in graph:
        seen, todo = set(), list(graph[start])
        while todo:
            m = todo.pop()
            if m == start:
                raise AssertionError(f"{start} imports itself through other modules")
            if m not in seen:
                seen.add(m)
                todo += graph[m]
