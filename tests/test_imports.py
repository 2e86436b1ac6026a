"""Imports run one way: the package's import graph, read from the source.

The graph is built with :mod:`ast` from every module of ``src/lenswork``, with
module-level *and* function-level imports (a function-level import that closes
a cycle is still a cycle: it only moves the failure from import time to call
time). Relative imports are resolved, and ``from . import x`` points at the
submodule ``x`` when there is one. Importing ``a.b.c`` from outside ``a.b``
also runs ``a/__init__.py`` and ``a/b/__init__.py``, so such an import adds an
edge to those packages too (an import from inside a package does not: the
package is already being imported).

Two checks, both strict (no allowlist):

* no cycle between modules; each cycle is printed as ``a -> b (file:line) -> a``;
* no private name (one leading underscore, not a dunder) imported from another
  lenswork module. Importing public names from a private module is fine (the
  shared foundation ``from .._json import dumps``, the sibling modules of a
  package); a package ``__init__`` may import its own private submodules
  (``from . import _density`` registers a lens family), and anyone may import a
  foundation module (``from .. import _progress``).

And one run-time check: ``import lenswork`` loads neither matplotlib nor
networkx, and pandas only when a dependency outside lenswork loads it.
"""

from __future__ import annotations

import ast
import importlib.util
import json
import os
import subprocess
import sys
from collections import defaultdict, deque
from pathlib import Path

PACKAGE = "lenswork"
#: The shared foundation (DEVELOPERS.md, "Layers"): any module may import these.
FOUNDATION = {
    f"{PACKAGE}.{m}"
    for m in ("_errors", "_version", "_json", "_frame", "_validation", "_io", "_progress")
}


def _source_root():
    spec = importlib.util.find_spec(PACKAGE)
    return Path(next(iter(spec.submodule_search_locations)))


def _modules(root):
    """{module name: (path, is_package)} for every .py file under ``root``."""
    out = {}
    for path in sorted(root.rglob("*.py")):
        parts = list(path.relative_to(root).with_suffix("").parts)
        is_package = parts[-1] == "__init__"
        if is_package:
            parts = parts[:-1]
        out[".".join([PACKAGE, *parts])] = (path, is_package)
    return out


def _is_private(name):
    return name.startswith("_") and not (name.startswith("__") and name.endswith("__"))


class ImportGraph:
    """Edges ``importer -> imported`` between lenswork modules, with where they come from.

    Attributes
    ----------
    edges : dict of str -> dict of str -> list of str
        ``edges[a][b]`` lists the ``file:line`` places where ``a`` imports ``b``.
    private : list of str
        One line per import of a private name from another module.
    """

    def __init__(self, root):
        self.root = root
        self.modules = _modules(root)
        self.edges = defaultdict(lambda: defaultdict(list))
        self.private = []
        for name, (path, is_package) in self.modules.items():
            tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
            for node in ast.walk(tree):  # every import, at any depth
                if isinstance(node, ast.Import):
                    for alias in node.names:
                        self._plain_import(name, path, node.lineno, alias.name)
                elif isinstance(node, ast.ImportFrom):
                    self._from_import(name, path, is_package, node)

    def _where(self, path, line):
        return f"{path.relative_to(self.root.parent)}:{line}"

    def _edge(self, importer, target, path, line):
        if target == importer:
            return
        self.edges[importer][target].append(self._where(path, line))
        # importing a.b.c from outside a.b runs a.b's __init__ first
        parts = target.split(".")
        for k in range(2, len(parts)):
            parent = ".".join(parts[:k])
            inside = importer == parent or importer.startswith(parent + ".")
            if not inside and parent != importer:
                self.edges[importer][parent].append(self._where(path, line))

    def _existing(self, dotted):
        """The longest prefix of ``dotted`` that is a lenswork module."""
        parts = dotted.split(".")
        while parts and ".".join(parts) not in self.modules:
            parts.pop()
        return ".".join(parts) if parts else None

    def _plain_import(self, importer, path, line, dotted):
        if dotted == PACKAGE or dotted.startswith(PACKAGE + "."):
            target = self._existing(dotted)
            if target:
                self._edge(importer, target, path, line)

    def _from_import(self, importer, path, is_package, node):
        if node.level:
            package = importer.split(".") if is_package else importer.split(".")[:-1]
            base_parts = package[: len(package) - (node.level - 1)]
            if node.module:
                base_parts = [*base_parts, *node.module.split(".")]
            base = ".".join(base_parts)
        else:
            base = node.module or ""
        if not (base == PACKAGE or base.startswith(PACKAGE + ".")):
            return
        for alias in node.names:
            submodule = f"{base}.{alias.name}"
            if submodule in self.modules:  # `from . import x` with x a module
                self._edge(importer, submodule, path, node.lineno)
                own = is_package and base == importer
                if _is_private(alias.name) and not own and submodule not in FOUNDATION:
                    self.private.append(
                        f"{self._where(path, node.lineno)}: {importer} imports the private "
                        f"module {submodule}"
                    )
                continue
            target = self._existing(base)
            if target is None:
                continue
            self._edge(importer, target, path, node.lineno)
            if _is_private(alias.name) and alias.name != "*":
                self.private.append(
                    f"{self._where(path, node.lineno)}: {importer} imports the private name "
                    f"{alias.name!r} from {target}"
                )

    # ------------------------------------------------------------------ cycles
    def strongly_connected(self):
        """Strongly connected components with more than one module (Tarjan 1972)."""
        index, low, on_stack, stack, out = {}, {}, set(), [], []
        counter = [0]
        sys.setrecursionlimit(max(sys.getrecursionlimit(), 10_000))

        def visit(v):
            index[v] = low[v] = counter[0]
            counter[0] += 1
            stack.append(v)
            on_stack.add(v)
            for w in sorted(self.edges.get(v, ())):
                if w not in index:
                    visit(w)
                    low[v] = min(low[v], low[w])
                elif w in on_stack:
                    low[v] = min(low[v], index[w])
            if low[v] == index[v]:
                comp = []
                while True:
                    w = stack.pop()
                    on_stack.discard(w)
                    comp.append(w)
                    if w == v:
                        break
                if len(comp) > 1:
                    out.append(sorted(comp))

        for v in sorted(self.modules):
            if v not in index:
                visit(v)
        return out

    def _path(self, start, goal, allowed):
        """Shortest import path start -> ... -> goal inside ``allowed`` (BFS)."""
        prev = {start: None}
        queue = deque([start])
        while queue:
            v = queue.popleft()
            if v == goal:
                break
            for w in sorted(self.edges.get(v, ())):
                if w in allowed and w not in prev:
                    prev[w] = v
                    queue.append(w)
        path, v = [], goal
        while v is not None:
            path.append(v)
            v = prev[v]
        return path[::-1]

    def cycles(self):
        """One shortest cycle through every import edge that lies on a cycle, deduplicated."""
        found = {}
        for comp in self.strongly_connected():
            members = set(comp)
            for a in comp:
                for b in sorted(self.edges.get(a, ())):
                    if b not in members:
                        continue
                    loop = [a, *self._path(b, a, members)]  # a -> b -> ... -> a
                    body = loop[:-1]
                    k = body.index(min(body))
                    key = tuple(body[k:] + body[:k])
                    found.setdefault(key, key + (key[0],))
        return sorted(found.values())

    def describe(self, cycle):
        steps = [cycle[0]]
        for a, b in zip(cycle, cycle[1:]):
            steps.append(f"-> {b} ({self.edges[a][b][0]})")
        return " ".join(steps)


def _graph():
    return ImportGraph(_source_root())


# ---------------------------------------------------------------------- the checker itself
def _toy_package(tmp_path, files):
    root = tmp_path / PACKAGE
    for rel, text in files.items():
        p = root / rel
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_text(text, encoding="utf-8")
    return ImportGraph(root)


def test_checker_finds_function_level_cycle_and_private_names(tmp_path):
    # The checker is tested on a small package whose cycles and private imports
    # are known by construction (common practice: test the test on a known case).
    g = _toy_package(tmp_path, {
        "__init__.py": "from .a import f\n",
        "_json.py": "def dumps(x):\n    return x\n",
        "a.py": "from ._json import dumps\n\ndef f():\n    from .sub import g\n    return g\n",
        "sub/__init__.py": "from . import _impl\nfrom ._impl import g\n",
        "sub/_impl.py": "def g():\n    from ..a import _helper\n    return _helper\n",
        "b.py": "from . import _json\nfrom .sub import _impl\nimport lenswork.sub._impl\n",
    })
    assert [list(c) for c in g.cycles()] == [
        ["lenswork.a", "lenswork.sub", "lenswork.sub._impl", "lenswork.a"],
    ]
    assert len(g.private) == 2
    assert "private name '_helper' from lenswork.a" in g.private[1]
    assert "private module lenswork.sub._impl" in g.private[0]  # b.py; sub/__init__ may
    assert "lenswork.sub" in g.edges["lenswork.b"]  # via the package __init__


# ---------------------------------------------------------------------- the package
def test_no_import_cycles():
    g = _graph()
    cycles = g.cycles()
    text = "\n".join(f"  {g.describe(c)}" for c in cycles)
    assert not cycles, (
        f"{len(cycles)} import cycle(s) between lenswork modules (function-level imports "
        f"included); break each by moving the shared piece down a layer (DEVELOPERS.md, "
        f"'Layers'):\n{text}"
    )


def test_no_private_names_across_modules():
    g = _graph()
    text = "\n".join(f"  {line}" for line in sorted(g.private))
    assert not g.private, (
        f"{len(g.private)} import(s) of a private name from another lenswork module; make the "
        f"helper public in its module (no underscore, in __all__) or move it to a lower "
        f"module:\n{text}"
    )


def test_graph_sees_known_imports():
    # Sanity of the resolution on the real tree (facts of this source tree).
    g = _graph()
    assert "lenswork._errors" in g.edges["lenswork.data._cloud"]
    assert "lenswork.lenses._registry" in g.edges["lenswork.lenses._pca"]
    assert "lenswork.lenses._density" in g.edges["lenswork.lenses"]  # from . import _density


WATCHED = ("matplotlib", "networkx", "pandas")

_PROBE = r"""
import json, sys

WATCHED = {watched!r}
first = {{}}

class Spy:
    def find_spec(self, name, path=None, target=None):
        top = name.partition(".")[0]
        if top in WATCHED and top not in first:
            f = sys._getframe(1)
            while f is not None and (
                "importlib" in f.f_code.co_filename or f.f_code.co_filename.startswith("<")
            ):
                f = f.f_back
            first[top] = f.f_globals.get("__name__", "?") if f is not None else "?"
        return None

sys.meta_path.insert(0, Spy())
import lenswork
print(json.dumps({{"loaded": sorted(m for m in WATCHED if m in sys.modules),
                  "importer": first}}))
"""


def _run(code):
    env = dict(os.environ)
    env.pop("MPLBACKEND", None)
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env=env, timeout=300, check=False)
    assert done.returncode == 0, done.stderr
    return done.stdout


def test_import_lenswork_loads_no_optional_heavy_modules():
    found = json.loads(_run(_PROBE.format(watched=WATCHED)).strip().splitlines()[-1])
    assert "matplotlib" not in found["loaded"], found
    assert "networkx" not in found["loaded"], found
    # scikit-learn (a core dependency) loads pandas itself when pandas is installed
    # (sklearn/utils/fixes.py); what matters is that no lenswork module asks for it.
    by_us = {m: who for m, who in found["importer"].items()
             if who == PACKAGE or who.startswith(PACKAGE + ".")}
    assert not by_us, f"lenswork modules import {by_us} at import time"


def test_import_lenswork_works_without_pandas():
    # With pandas unimportable (sys.modules entry None: Python's documented way
    # to block an import), `import lenswork` must still succeed.
    code = ("import sys\nsys.modules['pandas'] = None\nimport lenswork\n"
            "print(lenswork.__version__)\n")
    assert _run(code).strip()
