"""The graph layer's imports run one way: checked on the source with ``ast``.

Function-level imports count as much as module-level ones (a cycle broken by a
late import is still a cycle in the design). Reference: Python's own ``ast``
module reads the source; no project code is imported to find the imports.
"""

import ast
from pathlib import Path

import pytest

SRC = Path(__file__).resolve().parents[1] / "src" / "lenswork"


def imported_modules(path):
    """Absolute module names a file imports (relative imports resolved), every level."""
    parts = list(path.relative_to(SRC.parent).with_suffix("").parts)
    package = parts[:-1]  # the package a relative import starts from (also for __init__)
    out = set()
    for node in ast.walk(ast.parse(path.read_text())):
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
    upward = {"lenswork.plot", "lenswork.probe", "lenswork.bootstrap", "lenswork.compare",
              "lenswork.cli", "lenswork._graph_methods"}
    assert not {m for m in mods if any(m == u or m.startswith(u + ".") for u in upward)}


def test_the_data_object_imports_neither_its_writers_nor_its_plots():
    mods = imported_modules(SRC / "graph" / "_lensgraph.py")
    assert "lenswork.graph.io" not in mods
    assert not any(m.startswith("lenswork.plot") for m in mods)


@pytest.mark.parametrize("name", ["probe.py", "bootstrap.py", "compare.py"])
def test_results_import_no_plots_and_no_private_names(name):
    path = SRC / name
    mods = imported_modules(path)
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
    # the plot asks graph._layout for the rule instead of restating it
    text = (SRC / "plot" / "_graph.py").read_text()
    assert "auto_layout(" in text and '"spring")' not in text
