"""Notebook display: ``_repr_html_`` of a screen result and a graph, ``_repr_png_`` of figures.

The HTML is parsed with the standard library's :mod:`html.parser` (and the
SVG with :mod:`xml.etree.ElementTree`, as a browser's XML parser would), the
PNG is checked against the PNG specification (W3C / ISO 15948: the 8-byte
signature, then the IHDR chunk with width and height) and decoded by
matplotlib's image reader. Counts are checked against networkx computed on
the same graph.
"""

from __future__ import annotations

import io
import struct
import warnings
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

import numpy as np
import pytest
from sklearn.datasets import load_iris

from lenswork import (
    LensColumn,
    LensTable,
    PointCloud,
    Workspace,
    bootstrap_graph,
    compare_views,
    screen,
    stability_map,
)
from lenswork.graph import build_graph

nx = pytest.importorskip("networkx")


class Tree(HTMLParser):
    """Start tags with their attributes, table rows as lists of cell texts, raw SVG spans."""

    def __init__(self, text):
        super().__init__(convert_charrefs=True)
        self.tags, self.rows, self.captions = [], [], []
        self._row = self._cell = self._caption = None
        self._section = None
        self.feed(text)
        self.close()

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        if tag in ("thead", "tbody"):
            self._section = tag
        elif tag == "tr":
            self._row = {"section": self._section, "class": dict(attrs).get("class"), "cells": []}
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []
        elif tag == "caption":
            self._caption = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row["cells"].append("".join(self._cell).strip())
            self._cell = None
        elif tag == "tr" and self._row is not None:
            self.rows.append(self._row)
            self._row = None
        elif tag == "caption":
            self.captions.append("".join(self._caption))
            self._caption = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)
        if self._caption is not None:
            self._caption.append(data)

    def count(self, tag):
        return sum(1 for t, _ in self.tags if t == tag)


@pytest.fixture(scope="module")
def iris_screen():
    X = load_iris().data  # scikit-learn's bundled copy of Fisher's iris data
    cloud = PointCloud.from_array(X, feature_names=["sl", "sw", "pl", "pw"])
    table = LensTable([LensColumn("petal <length>", X[:, 2]), LensColumn("sepal", X[:, 0]),
                       LensColumn("width", X[:, 1]), LensColumn("petal_w", X[:, 3])], cloud)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return screen(table, count=2)


@pytest.fixture(scope="module")
def circle():
    rng = np.random.default_rng(1403)
    t = rng.uniform(0, 2 * np.pi, 400)
    X = np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.03, (400, 2))
    return X, Workspace(X)


def test_screen_result_html_has_one_row_per_candidate_chosen_marked(iris_screen):
    res = iris_screen
    tree = Tree(res._repr_html_())
    head = [r for r in tree.rows if r["section"] == "thead"]
    body = [r for r in tree.rows if r["section"] == "tbody"]
    assert len(head) == 1 and head[0]["cells"][:3] == ["rank", "lens column", "chosen"]
    assert len(body) == len(res.names) == 4
    col = head[0]["cells"].index("lens column")
    # Rows in rank order, names as text (the "<" of a name is escaped, not a tag).
    assert [r["cells"][col] for r in body] == [r["column"] for r in res.rows()]
    assert "petal <length>" in [r["cells"][col] for r in body]
    assert tree.count("length") == 0
    chosen = [r for r in body if r["class"] == "chosen"]
    assert [r["cells"][col] for r in chosen] == res.selected and len(chosen) == 2
    marks = [r["cells"][head[0]["cells"].index("chosen")] for r in body]
    assert marks[:2] == ["\u2713 #1", "\u2713 #2"] and set(marks[2:]) == {""}
    assert all(len(r["cells"]) == len(head[0]["cells"]) for r in body)
    assert "4 candidates" in tree.captions[0] and "chosen 2" in tree.captions[0]


def test_graph_html_has_the_summary_and_an_svg_drawing(circle):
    X, ws = circle
    g = build_graph(X[:, 0], ws, intervals=8, overlap=0.3)
    text = g._repr_html_()
    tree = Tree(text)
    summary = {r["cells"][0]: r["cells"][1] for r in tree.rows}
    G = g.to_networkx()
    # networkx on the same graph as the reference for the summary figures.
    assert summary["nodes"] == str(G.number_of_nodes()) and summary["edges"] == str(
        G.number_of_edges())
    assert summary["components"] == str(nx.number_connected_components(G))
    assert summary["loops (raw, E - V + C)"] == str(len(nx.cycle_basis(G))) == "1"  # a circle
    assert summary["rows"] == "400" and summary["lens columns"] == "lens"
    # the significant structure leads, as in the printed summary
    assert tree.rows[0]["cells"] == ["significant", g.summary().headline()]
    assert summary["significant"].startswith("1 component, 1 loop")
    # One <svg> with a circle per node and a line per edge.
    assert tree.count("svg") == 1
    assert tree.count("circle") == g.n_nodes and tree.count("line") == g.n_edges
    start, end = text.index("<svg"), text.index("</svg>") + len("</svg>")
    svg = ET.fromstring(text[start:end])  # well-formed XML in the SVG namespace
    ns = "{http://www.w3.org/2000/svg}"
    assert svg.tag == f"{ns}svg"
    titles = [c.find(f"{ns}title").text for c in svg.iter(f"{ns}circle")]
    sizes = g.to_frame()["size"].tolist()
    assert [t.split(",")[0] for t in titles] == [
        f"node {a}: {s} rows" for a, s in enumerate(sizes)]
    # Circle areas grow with the member count: radius 3 + 11 sqrt(size / max size).
    radii = np.array([float(c.get("r")) for c in svg.iter(f"{ns}circle")])
    expected = 3 + 11 * np.sqrt(np.array(sizes) / max(sizes))
    np.testing.assert_allclose(radii, expected, atol=0.05)  # written with one decimal


def _png_size(data):
    assert data[:8] == b"\x89PNG\r\n\x1a\n"  # the PNG signature (PNG spec, section 5.2)
    length, kind = struct.unpack(">I4s", data[8:16])
    assert kind == b"IHDR" and length == 13  # the first chunk is IHDR (section 11.2.2)
    return struct.unpack(">II", data[16:24])


def test_figure_results_render_to_png(circle):
    import matplotlib.image as mpimg
    import matplotlib.pyplot as plt

    X, ws = circle
    results = [
        stability_map(X[:, 0], ws, interval_counts=(6, 8), overlaps=(0.2, 0.4)),
        bootstrap_graph(X[:, 0], ws, resamples=4, random_state=1),
        compare_views({"x": X[:, 0], "y": X[:, 1]}, ws),
    ]
    before = set(plt.get_fignums())
    for res in results:
        data = res._repr_png_()
        width, height = _png_size(data)
        image = mpimg.imread(io.BytesIO(data), format="png")
        assert image.shape[:2] == (height, width) and width > 100 and height > 100
        assert np.ptp(image[..., :3]) > 0.2  # something is drawn, not a blank page
    assert set(plt.get_fignums()) == before  # every figure closed: a notebook shows it once


def test_the_readme_notebook_example_runs():
    # The README's "In a notebook" block, run as written (bare expressions are what a
    # notebook would display: their HTML / PNG forms are rendered here too).
    import re
    from pathlib import Path

    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    section = text.split("## In a notebook", 1)[1].split("\n## ", 1)[0]
    code = re.search(r"```python\n(.*?)```", section, re.S).group(1)
    ns = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        exec(compile(code, "README.md", "exec"), ns)
    result, graph = ns["result"], ns["graph"]
    assert ns["ranking"].shape[0] == len(result.names)
    assert len(ns["nodes"]) == graph.n_nodes == ns["G"].number_of_nodes()
    assert len(ns["edges"]) == graph.n_edges == ns["G"].number_of_edges()
    assert len(ns["cells"]) == 4 * 3
    assert list(ns["coords"].columns) == ["pca_1", "pca_2"]
    assert Tree(graph._repr_html_()).count("svg") == 1
    assert _png_size(ns["smap"]._repr_png_())[0] > 100
