"""The package layout follows the one-way data flow of the design notes.

Reads every module's imports with :mod:`ast` (no third-party tool) and fails when a
package imports one above it at module level, or when packages import each other in a
circle. Imports inside a function (a lazy import for a figure) are allowed.
"""

from __future__ import annotations

import ast
import importlib
from pathlib import Path

import pytest

import torqlog

ROOT = Path(__file__).resolve().parents[1] / "torqlog"

#: Rank of each stage package: a package may import packages of lower or equal rank.
#: ``errors`` and ``_version`` are the shared base every package may use.
RANK = {"errors": 0, "_version": 0, "io": 1, "signal": 2, "sizing": 3, "rotor": 3,
        "shaft": 4, "fleet": 5, "present": 6, "demo": 7, "cli": 8, "__main__": 9}


def _package_of(dotted: str) -> str | None:
    parts = dotted.split(".")
    if parts[0] != "torqlog":
        return None
    return parts[1] if len(parts) > 1 else ""


def module_level_imports(path: Path) -> set[str]:
    """Dotted torqlog modules imported at module level (not inside functions)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found: set[str] = set()
    for node in tree.body:
        stmts = [node]
        if isinstance(node, ast.If | ast.Try):  # guarded module-level imports count
            stmts = list(ast.walk(node))
        for s in stmts:
            if isinstance(s, ast.ImportFrom) and s.module and s.level == 0:
                if s.module == "torqlog":
                    found.update(f"torqlog.{a.name}" for a in s.names)
                else:
                    found.add(s.module)
            elif isinstance(s, ast.Import):
                found.update(a.name for a in s.names)
    return {m for m in found if m.startswith("torqlog")}


def _edges() -> list[tuple[str, str, str]]:
    edges = []
    for path in ROOT.rglob("*.py"):
        rel = path.relative_to(ROOT)
        src = rel.parts[0].removesuffix(".py")
        if src == "__init__":
            continue  # the top-level API loads lazily through __getattr__
        for mod in module_level_imports(path):
            dst = _package_of(mod)
            if dst:
                edges.append((src, dst, f"{rel} imports {mod}"))
    return edges


def test_every_package_is_ranked():
    pkgs = {p.name for p in ROOT.iterdir() if p.is_dir() and (p / "__init__.py").exists()}
    flat = {p.stem for p in ROOT.glob("*.py")} - {"__init__"}
    assert pkgs | flat <= set(RANK), sorted((pkgs | flat) - set(RANK))
    # the stage packages of the design notes, in flow order
    assert {"io", "signal", "sizing", "rotor", "shaft", "fleet", "present", "demo",
            "cli"} <= pkgs


def test_no_package_imports_one_above_it():
    upward = [why for src, dst, why in _edges() if RANK[dst] > RANK[src]]
    assert upward == []


def test_no_circles_between_packages():
    graph: dict[str, set[str]] = {}
    for src, dst, _ in _edges():
        if src != dst:
            graph.setdefault(src, set()).add(dst)

    def reaches(a: str, b: str, seen: set[str]) -> bool:
        for n in graph.get(a, ()):
            if n == b or (n not in seen and reaches(n, b, seen | {n})):
                return True
        return False

    circles = sorted(a for a in graph for b in graph[a] if reaches(b, a, {b}))
    assert circles == []


def test_the_checker_sees_an_upward_import(tmp_path):
    # The test above must be able to fail: a module-level import of a higher package.
    bad = tmp_path / "m.py"
    bad.write_text("import os\nfrom torqlog.present.plots import style\n"
                   "def f():\n    from torqlog.cli import cli\n")
    assert module_level_imports(bad) == {"torqlog.present.plots"}


@pytest.mark.parametrize("name", sorted(torqlog._API))
def test_public_api_is_one_import_away(name):
    module, _, attr = torqlog._API[name].partition(":")
    assert getattr(torqlog, name) is getattr(importlib.import_module(module), attr)
    assert name in torqlog.__all__


def test_unknown_public_name_is_an_attribute_error():
    with pytest.raises(AttributeError, match="has no attribute 'nonesuch'"):
        torqlog.nonesuch  # noqa: B018


def all_imports(path: Path) -> set[str]:
    """Dotted torqlog modules imported anywhere in a file, lazy imports included."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found: set[str] = set()
    for s in ast.walk(tree):
        if isinstance(s, ast.ImportFrom) and s.module and s.level == 0:
            if s.module.startswith("torqlog"):
                found.update(f"{s.module}.{a.name}" for a in s.names)
                found.add(s.module)
        elif isinstance(s, ast.Import):
            found.update(a.name for a in s.names)
    return {m for m in found if m.startswith("torqlog")}


def test_no_circles_between_modules_even_lazily():
    # A lazy import hides a circle from Python but not from a reader: two modules that
    # need each other belong together or share a smaller module.
    modules = {".".join(("torqlog",) + p.relative_to(ROOT).with_suffix("").parts): p
               for p in ROOT.rglob("*.py") if p.name != "__init__.py"}
    graph = {m: {d for d in all_imports(p) if d in modules and d != m}
             for m, p in modules.items()}

    def reaches(a: str, b: str, seen: set[str]) -> bool:
        return any(n == b or (n not in seen and reaches(n, b, seen | {n}))
                   for n in graph.get(a, ()))

    circles = sorted(f"{a} <-> {b}" for a in graph for b in graph[a] if reaches(b, a, {b}))
    assert circles == []


def test_the_lazy_checker_sees_an_import_inside_a_function(tmp_path):
    # The circle test above must be able to fail: it reads imports inside functions too.
    bad = tmp_path / "m.py"
    bad.write_text("def f():\n    from torqlog.signal.cycles import analyse_cycles\n")
    assert all_imports(bad) == {"torqlog.signal.cycles", "torqlog.signal.cycles.analyse_cycles"}
