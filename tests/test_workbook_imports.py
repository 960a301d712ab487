"""The workbook package's imports run one way: no circle between its modules (lazy imports
inside functions included) and no module importing another module's private (``_``) names.
Read from the source with the standard library's ast (common practice, no source)."""

import ast
import os

import portflux.workbook as W

HERE = os.path.dirname(W.__file__)


def _imports():
    graph, private = {}, []
    for name in sorted(os.listdir(HERE)):
        if not name.endswith(".py"):
            continue
        mod = name[:-3]
        tree = ast.parse(open(os.path.join(HERE, name), encoding="utf-8").read())
        deps = set()
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and node.level == 1:
                target = node.module or ""
                if target:
                    deps.add(target.split(".")[0])
                else:
                    deps.update(a.name for a in node.names)
                private += [(mod, node.module, a.name) for a in node.names
                            if a.name.startswith("_") and a.name != "__version__"]
            elif isinstance(node, ast.ImportFrom) and node.level == 2:
                private += [(mod, node.module, a.name) for a in node.names
                            if a.name.startswith("_") and a.name != "__version__"]
        graph[mod] = deps & {n[:-3] for n in os.listdir(HERE) if n.endswith(".py")}
    return graph, private


def test_no_module_imports_a_private_name():
    _, private = _imports()
    assert private == []


def test_no_import_circle_inside_the_workbook_package():
    graph, _ = _imports()
    state = {}

    def visit(m, path):
        if state.get(m) == "done":
            return
        assert state.get(m) != "open", " -> ".join(path + [m])
        state[m] = "open"
        for d in sorted(graph.get(m, ())):
            if d != "__init__":
                visit(d, path + [m])
        state[m] = "done"

    for m in graph:
        visit(m, [])
    # the drawing helpers sit below the cases, the report sheet and the assembly
    assert graph["drawing"] == set()
    assert "template" not in graph["cases"] | graph["cases_closures"] | graph["report_sheet"]
