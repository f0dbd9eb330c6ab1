"""The package's layers: imports point one way, down, and never in a circle.

Every ``import`` of a trainopt module (at module level or inside a function, since a lazy
import is still a dependency) is read with the standard library's :mod:`ast`; no module is
run. Two rules, from DEVELOPERS.md:

- no cycle among trainopt's modules;
- each layer (a sub-package, or ``errors``) imports only the layers listed for it in
  :data:`ALLOWED`; physics, machines and the case never import the solver.

The checker is shown to catch a planted cycle and a planted upward import on small packages
written to a temporary folder.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[2] / "trainopt"

BELOW_STATION = {"case", "dispatch", "machines", "physics", "errors"}
ALLOWED = {
    "errors": set(),
    "caution": set(),  # one constant, no imports: the shared caution every output prints
    "physics": {"errors"},
    "machines": {"physics", "errors"},
    "case": {"machines", "physics", "errors"},
    "dispatch": {"machines", "physics", "errors"},
    "station": BELOW_STATION,
    "studies": BELOW_STATION | {"station"},
    "report": BELOW_STATION | {"station", "studies"},
    # web: the local page and API, over every layer below the command line
    "web": BELOW_STATION | {"station", "studies", "report"},
    "cli": BELOW_STATION | {"station", "studies", "report", "web", "", "__main__"},
    "": {"case", "station", "studies", "errors"},  # trainopt/__init__.py: the public API
    "__main__": {"cli"},
}
for _layer in ALLOWED:  # the caution's wording may be printed by every layer
    if _layer != "caution":
        ALLOWED[_layer] = ALLOWED[_layer] | {"caution"}
"""Layer -> the layers it may import (its own is always allowed). ``""`` is the top package."""

NO_SOLVER = {"physics", "machines", "case"}
SOLVER_PACKAGES = {"pyomo", "highspy"}


def module_name(path: Path, root: Path) -> str:
    """Dotted module name of a file below ``root`` (the package folder)."""
    parts = list(path.relative_to(root.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def imports_of(path: Path, root: Path, modules: frozenset[str] = frozenset()) -> set[str]:
    """Every module name a file imports (absolute names; relative imports resolved).

    ``from pkg import name`` counts as an import of ``pkg.name`` where that is one of
    ``modules``, and of ``pkg`` otherwise.
    """
    name = module_name(path, root)
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                module = ".".join(base + ([node.module] if node.module else []))
            else:
                module = node.module or ""
            for alias in node.names:
                sub = f"{module}.{alias.name}"
                found.add(sub if sub in modules else module)
    return found


def import_graph(root: Path) -> dict[str, set[str]]:
    """Module -> the package's own modules it imports."""
    files = {module_name(p, root): p for p in root.rglob("*.py")}
    modules = frozenset(files)
    graph = {}
    for name, path in files.items():
        graph[name] = {m for m in imports_of(path, root, modules) if m in files and m != name}
    return graph


def third_party_imports(root: Path) -> dict[str, set[str]]:
    """Module -> top-level names of the outside packages it imports."""
    out = {}
    for path in root.rglob("*.py"):
        out[module_name(path, root)] = {m.split(".")[0] for m in imports_of(path, root)
                                        if m.split(".")[0] != root.name}
    return out


def cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected groups of more than one module (Tarjan's algorithm), sorted."""
    index, low, stack, on_stack, found = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph.get(v, ())):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            group = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                group.append(w)
                if w == v:
                    break
            if len(group) > 1:
                found.append(sorted(group))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return sorted(found)


def layer_of(module: str) -> str:
    """The layer of a module: its first name below the top package."""
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else ""


def upward_imports(graph: dict[str, set[str]], allowed: dict[str, set[str]]) -> list[str]:
    """Each import that leaves its layer for one not allowed to it, as a sentence."""
    bad = []
    for module, targets in sorted(graph.items()):
        here = layer_of(module)
        for target in sorted(targets):
            there = layer_of(target)
            if there != here and there not in allowed.get(here, set()):
                bad.append(f"{module} imports {target} (layer '{here}' may not import '{there}')")
    return bad


def write_package(root: Path, files: dict[str, str]) -> Path:
    """A small package for the planted checks: relative path -> source."""
    for rel, text in files.items():
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
    return root


def test_the_tree_has_no_import_cycle():
    assert cycles(import_graph(PACKAGE)) == []


def test_every_import_points_down_the_layers():
    assert upward_imports(import_graph(PACKAGE), ALLOWED) == []


def test_every_layer_is_a_listed_folder_with_a_docstring():
    layers = {p.name for p in PACKAGE.iterdir() if p.is_dir() and (p / "__init__.py").exists()}
    assert layers == set(ALLOWED) - {"", "__main__", "errors", "caution"}
    for layer in layers:
        doc = ast.get_docstring(ast.parse((PACKAGE / layer / "__init__.py").read_text()))
        assert doc, f"{layer}/__init__.py has no docstring"
        assert "May import" in doc, f"{layer}/__init__.py must say what it may import"


def test_physics_machines_and_case_never_import_the_solver():
    outside = third_party_imports(PACKAGE)
    bad = {m: sorted(s & SOLVER_PACKAGES) for m, s in outside.items()
           if layer_of(m) in NO_SOLVER and s & SOLVER_PACKAGES}
    assert bad == {}


def test_no_module_is_a_catch_all_or_too_long():
    for path in PACKAGE.rglob("*.py"):
        stem = path.stem
        assert not stem.endswith(("_support", "_io", "_misc", "_utils")), path
        assert stem not in {"misc", "utils", "helpers", "common"}, path
        lines = len(path.read_text(encoding="utf-8").splitlines())
        assert lines <= 560, f"{path.relative_to(PACKAGE)} has {lines} lines: split it by concept"


def test_a_planted_cycle_is_found(tmp_path):
    root = write_package(tmp_path / "pkg", {
        "__init__.py": "",
        "station/__init__.py": "",
        "station/a.py": "from pkg.station.b import f\n",
        "station/b.py": "def f():\n    from pkg.station import c\n",
        "station/c.py": "from . import a\n",
        "station/d.py": "import pkg.station.a\n",
    })
    assert cycles(import_graph(root)) == [["pkg.station.a", "pkg.station.b", "pkg.station.c"]]


def test_a_planted_upward_import_is_found(tmp_path):
    root = write_package(tmp_path / "pkg", {
        "__init__.py": "",
        "physics/__init__.py": "",
        "physics/gas.py": "import numpy\n\ndef f():\n    from pkg.dispatch import solve\n",
        "dispatch/__init__.py": "",
        "dispatch/solve.py": "from pkg.physics.gas import f\n",
        "cli/__init__.py": "",
        "cli/app.py": "from pkg.dispatch.solve import f\n",
        "station/__init__.py": "",
        "station/split.py": "from pkg.cli import app\n",
        "station/header.py": "from pkg.station import split\n",
    })
    found = upward_imports(import_graph(root), ALLOWED)
    assert found == [
        "pkg.physics.gas imports pkg.dispatch.solve (layer 'physics' may not import 'dispatch')",
        "pkg.station.split imports pkg.cli.app (layer 'station' may not import 'cli')",
    ]


@pytest.mark.parametrize(("source", "expected"), [
    ("import pyomo.environ as pyo\n", {"pyomo"}),
    ("from highspy import Highs\n", {"highspy"}),
    ("import numpy as np\n", {"numpy"}),
])
def test_solver_imports_are_seen(tmp_path, source, expected):
    root = write_package(tmp_path / "pkg", {"__init__.py": "", "physics/__init__.py": "",
                                            "physics/gas.py": source})
    assert third_party_imports(root)["pkg.physics.gas"] == expected
