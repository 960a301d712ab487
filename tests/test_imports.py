"""The package's imports run one way: no circle, no upward import, no private name across modules.

The layers (DEVELOPERS.md, "Layer rules"; common practice, no source: a layered design whose
dependencies point one way) are :data:`LAYERS` below, the one statement of their order
(DEVELOPERS.md quotes it; ``tests/test_docs.py`` holds the quotation to it).

Every ``import`` in every module is read with :mod:`ast` (function-level imports included: a lazy
import still makes a dependency), resolved to a module of the package, and checked.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1] / "udf" / "portflux"

#: Layer of each top-level part of the package (lower may not import higher).
LAYERS = {"core": 0, "units": 1, "schema": 1, "excel": 1, "cautions": 1, "fluids": 1, "builder": 2,
          "propagate": 2, "api": 3, "cells": 3, "workbook": 4, "addins": 4, "demo": 4,
          "cli": 5, "bench": 5, "bench_engine": 5, "bench_addin": 5,
          "__main__": 5}


def module_name(path: Path) -> str:
    rel = path.relative_to(ROOT.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


MODULES = {module_name(p): p for p in sorted(ROOT.rglob("*.py"))}


def is_package(name: str) -> bool:
    return MODULES[name].name == "__init__.py"


def resolve(importer: str, node) -> list[tuple[str, str | None]]:
    """(module, imported name or None) pairs of the package that ``node`` imports."""
    out = []
    if isinstance(node, ast.Import):
        for a in node.names:
            if a.name.split(".")[0] == "portflux":
                out.append((a.name, None))
        return out
    if node.level:
        base = importer.split(".") if is_package(importer) else importer.split(".")[:-1]
        base = base[:len(base) - (node.level - 1)]
        mod = ".".join(base + ([node.module] if node.module else []))
    else:
        mod = node.module or ""
    if mod.split(".")[0] != "portflux":
        return out
    for a in node.names:
        sub = f"{mod}.{a.name}"
        if sub in MODULES:
            out.append((sub, None))             # a submodule
        else:
            out.append((mod, a.name))           # a name from a module
    return out


def edges():
    """(importer, imported module, imported name or None, line) for every package import."""
    found = []
    for name, path in MODULES.items():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                for mod, what in resolve(name, node):
                    found.append((name, mod, what, node.lineno))
    return found


EDGES = edges()


def layer(name: str):
    parts = name.split(".")
    return None if len(parts) < 2 else LAYERS.get(parts[1])


def part(name: str) -> str:
    parts = name.split(".")
    return parts[1] if len(parts) > 1 else ""


def test_every_part_of_the_package_has_a_layer():
    missing = sorted({part(n) for n in MODULES if n != "portflux" and layer(n) is None})
    assert not missing, f"give these parts a layer in LAYERS: {missing}"


def upward(keep):
    bad = []
    for a, b, _, line in EDGES:
        if "portflux" in (a, b) or not keep(a, b):
            continue                       # the package root only re-exports lazily
        if layer(b) > layer(a):
            bad.append(f"{a}:{line} imports {b} (layer {layer(a)} -> {layer(b)})")
    return bad


def cycles(keep):
    graph = {}
    for a, b, _, _ in EDGES:
        if a != b and "portflux" not in (a, b) and keep(a, b):
            graph.setdefault(a, set()).add(b)
    found, state = [], {}

    def visit(n, stack):
        state[n] = 1
        stack.append(n)
        for m in sorted(graph.get(n, ())):
            if state.get(m) == 1:
                found.append(" -> ".join(stack[stack.index(m):] + [m]))
            elif m not in state:
                visit(m, stack)
        stack.pop()
        state[n] = 2

    for n in sorted(graph):
        if n not in state:
            visit(n, [])
    return found


def is_parent(a: str, b: str) -> bool:
    """``a`` is a package and ``b`` one of its modules (a package may import its modules)."""
    return b.startswith(a + ".")


def private(keep):
    bad = []
    for a, b, what, line in EDGES:
        if not keep(a, b):
            continue
        if what is not None and what.startswith("_") and not what.startswith("__"):
            bad.append(f"{a}:{line} imports the private name {what} of {b}")
        # a private module is reached only from inside its own package
        for i, piece in enumerate(b.split(".")):
            owner = ".".join(b.split(".")[:i])
            if piece.startswith("_") and not piece.startswith("__") and not (
                    a == owner or a.startswith(owner + ".")):
                bad.append(f"{a}:{line} imports the private module {b}")
    return bad


def demo_imports_workbook(keep):
    return [f"{a}:{line} imports {b}" for a, b, _, line in EDGES
            if keep(a, b) and part(a) == "demo" and part(b) == "workbook"]


def everything(a, b):
    return True


def no_parent(keep):
    return lambda a, b: keep(a, b) and not is_parent(b, a)


RULES = {"upward import": upward, "import circle": lambda keep: cycles(no_parent(keep)),
         "private name": private, "demo importing workbook": demo_imports_workbook}


@pytest.mark.parametrize("rule", sorted(RULES))
def test_imports_follow_the_layers(rule):
    bad = RULES[rule](everything)
    assert not bad, f"{rule}:\n" + "\n".join(bad)


def test_the_walker_sees_the_imports_it_checks():
    # The checks above could pass by reading nothing; they read these known imports.
    pairs = {(a, b) for a, b, _, _ in EDGES}
    assert ("portflux.builder", "portflux.core") in pairs
    assert ("portflux.cells._inputs", "portflux.builder") in pairs
    assert ("portflux.core.model", "portflux.core.closures") in pairs
    assert len(MODULES) > 20
    # and a planted upward import and a planted circle would be found
    EDGES.append(("portflux.core.model", "portflux.api", None, 0))
    EDGES.append(("portflux.api", "portflux.core.model", None, 0))
    try:
        assert upward(everything)
        assert cycles(no_parent(everything))
    finally:
        del EDGES[-2:]


def test_the_sheet_drawing_helpers_sit_below_the_cases_the_report_and_the_assembly():
    def deps(mod):
        return {b for a, b, _, _ in EDGES if a == f"portflux.workbook.{mod}"
                and b.startswith("portflux.workbook.")}
    assert deps("drawing") == set()
    for mod in ("cases", "cases_closures", "report_sheet"):
        assert "portflux.workbook.template" not in deps(mod), mod
        assert "portflux.workbook.drawing" in deps(mod), mod
