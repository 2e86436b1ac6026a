"""The graph layer's imports run one way: checked on the source with ``ast``.

Function-level imports count as much as module-level ones for cycles (a cycle
broken by a late import is still a cycle in the design; tests/test_imports.py).
A result's protocol methods (``write``, ``plot``...) import their writer or plot
inside the method, so a data object's module imports neither at module level.
Reference: Python's own ``ast`` module reads the source; no project code is
imported to find the imports.
"""

import ast
from pathlib import Path

import pytest

SRC = Path(__file__).resolve().parents[1] / "src" / "lenswork"


def imported_modules(path, module_level=False):
    """Absolute module names a file imports (relative imports resolved), every level
    (or only the module's own top-level statements)."""
    parts = list(path.relative_to(SRC.parent).with_suffix("").parts)
    package = parts[:-1]  # the package a relative import starts from (also for __init__)
    out = set()
    tree = ast.parse(path.read_text())
    for node in (tree.body if module_level else ast.walk(tree)):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - node.level + 1]
                module = ".".join(base + ([node.module] if node.module else []))
            else:
                module = node.module or ""
            out.add(module)
            out.update(f"{module}.{a.name}" for a in node.names)
        elif isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
    return out


@pytest.mark.parametrize("path", sorted((SRC / "graph").glob("*.py")), ids=lambda p: p.name)
def test_graph_never_imports_plots_or_result_modules(path):
    mods = imported_modules(path)
    upward = {"lenswork.probe", "lenswork.bootstrap", "lenswork.compare", "lenswork.contrast",
              "lenswork.cli", "lenswork.report"}
    assert not {m for m in mods if any(m == u or m.startswith(u + ".") for u in upward)}
    # the plots only inside a result method (LensGraph.plot / write), never at module level
    assert not any(m.startswith("lenswork.plot") for m in imported_modules(path, True))


def test_the_data_object_imports_neither_its_writers_nor_its_plots():
    mods = imported_modules(SRC / "graph" / "_lensgraph.py", module_level=True)
    assert "lenswork.graph.io" not in mods
    assert not any(m.startswith("lenswork.plot") for m in mods)


def test_the_plots_never_import_the_graph_package():
    # LensGraph.plot imports plot._graph inside the method; the plot reads the graph
    # duck-typed (graph.layout, graph.layout_method), so no cycle closes
    for path in (SRC / "plot").glob("*.py"):
        mods = imported_modules(path)
        assert not any(m == "lenswork.graph" or m.startswith("lenswork.graph.")
                       for m in mods), path.name


@pytest.mark.parametrize("name", ["probe.py", "stability.py", "bootstrap.py", "suggest.py",
                                  "compare.py",
                                  "contrast/_result.py"])
def test_results_import_no_plots_and_no_private_names(name):
    path = SRC / name
    mods = imported_modules(path, module_level=True)
    assert not any(m.startswith("lenswork.plot") for m in mods)
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.ImportFrom) and node.level:
            private = [a.name for a in node.names
                       if a.name.startswith("_") and a.name != "__version__"]
            # private *modules* (_json, _io, _progress, graph._features...) are fine; private
            # names taken from another module are not (house rule, DEVELOPERS.md)
            if node.module is not None:
                assert not private, (name, node.module, private)


def test_one_auto_layout_rule():
    # the plots ask the graph for the rule (LensGraph.layout_method -> graph._layout.auto_layout)
    # instead of restating it
    for name in ("_graph.py", "_columns.py"):
        text = (SRC / "plot" / name).read_text()
        assert '"spring")' not in text and '"level" if' not in text, name
    assert "graph.layout_method(" in (SRC / "plot" / "_graph.py").read_text()
    assert "auto_layout(" in (SRC / "graph" / "_lensgraph.py").read_text()
