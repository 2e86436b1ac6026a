"""LensGraph.to_networkx and LensGraph.to_frame against networkx's own GraphML reader.

The reference is ``networkx.read_graphml`` (networkx's reader of the open
GraphML standard) applied to the file :meth:`LensGraph.write_graphml` writes:
the graph in memory must carry exactly what a user gets from the file.
"""

from __future__ import annotations

import json
import sys
import warnings

import numpy as np
import pytest

from lenswork import LensworkError, ParameterError, PointCloud, Workspace
from lenswork.graph import build_graph

nx = pytest.importorskip("networkx")


@pytest.fixture(scope="module")
def graph():
    # A noisy circle in 3-d with a far clump: a loop, rows in no node, two lens columns
    # (a product cover, so "element" and "level" have two entries) and a data column.
    rng = np.random.default_rng(1401)
    t = rng.uniform(0, 2 * np.pi, 500)
    X = np.column_stack([np.cos(t), np.sin(t), 0.1 * rng.normal(size=500)])
    X = np.vstack([X, rng.normal(8.0, 0.01, (3, 3))])
    cloud = PointCloud.from_array(X, feature_names=["x", "y", "z"],
                                  ids=[f"p{i:03d}" for i in range(len(X))])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the far rows end in no node
        return build_graph({"x": X[:, 0], "y": X[:, 1]}, Workspace(cloud), intervals=[6, 3],
                           overlap=0.3, columns=["z"])


@pytest.fixture(scope="module")
def from_file(graph, tmp_path_factory):
    path = graph.write_graphml(tmp_path_factory.mktemp("g") / "g.graphml")
    return nx.read_graphml(path)  # networkx as the reference reader


def _renamed(G):
    return nx.relabel_nodes(G, {f"n{a}": a for a in range(G.number_of_nodes())})


def test_round_trip_equals_read_graphml(graph, from_file):
    G = graph.to_networkx()
    ref = _renamed(from_file)
    assert graph.n_nodes > 5 and graph.n_edges > 5 and int(graph.unassigned.size) == 3
    # Nodes, edges and every attribute, value for value (networkx reads long as int,
    # double as float, string as str; repr(float) round-trips exactly, IEEE 754).
    assert sorted(G.nodes) == sorted(ref.nodes) == list(range(graph.n_nodes))
    assert {frozenset(e) for e in G.edges} == {frozenset(e) for e in ref.edges}
    for a in G.nodes:
        assert G.nodes[a] == ref.nodes[a], a
        assert {type(v) for v in G.nodes[a].values()} <= {int, float, str}
    for a, b in G.edges:
        got = G.edges[a, b]
        want = {k: v for k, v in ref.edges[a, b].items() if k != "id"}  # the file's edge id
        assert got == want, (a, b)
    # The reader adds empty "node_default" / "edge_default" dicts (the file's <default>s).
    assert G.graph == {k: v for k, v in ref.graph.items() if not k.endswith("_default")}
    # The file and the graph tell the same story as the LensGraph itself.
    assert json.loads(G.graph["lens_columns"]) == ["x", "y"]
    assert G.graph["n_unassigned"] == 3
    assert nx.number_connected_components(G) == graph.summary().n_components
    assert len(nx.cycle_basis(G)) == graph.summary().loops


def test_attribute_names_and_types_match_the_file(graph, from_file):
    node_keys = set(next(iter(from_file.nodes.values())))
    assert node_keys == {"size", "element", "level",
                         *(f"{c}_{s}" for c in ("x", "y", "z") for s in ("mean", "min", "max"))}
    G = graph.to_networkx()
    a = next(iter(G.nodes))
    assert isinstance(G.nodes[a]["size"], int) and isinstance(G.nodes[a]["z_mean"], float)
    assert len(G.nodes[a]["element"].split(",")) == 2  # one interval index per lens
    # write_graphml of the converted graph is readable again (no dict-typed attribute).
    again = nx.parse_graphml("".join(nx.generate_graphml(G)), node_type=int)
    assert dict(again.nodes(data=True)) == dict(G.nodes(data=True))
    assert {frozenset((u, v)): d for u, v, d in again.edges(data=True)} == {
        frozenset((u, v)): d for u, v, d in G.edges(data=True)}


def test_node_frame_equals_the_graphml_nodes(graph, from_file):
    nodes = graph.to_frame()
    ref = _renamed(from_file)
    assert nodes.shape == (graph.n_nodes, 3 + 3 * 3)
    assert nodes.index.name == "node" and list(nodes.index) == list(range(graph.n_nodes))
    # Columns: the GraphML node keys, in the file's key order.
    assert list(nodes.columns) == list(next(iter(from_file.nodes.values())))
    for a in range(graph.n_nodes):
        assert nodes.loc[a].to_dict() == ref.nodes[a]
    assert str(nodes["size"].dtype) == "int64" and str(nodes["x_mean"].dtype) == "float64"
    assert int(nodes["size"].sum()) == int(graph.membership.sum())


def test_edge_frame_equals_the_graphml_edges(graph, from_file):
    edges = graph.to_frame("edges")
    assert list(edges.columns) == ["source", "target", "shared", "jaccard"]
    assert edges.index.name == "edge" and len(edges) == graph.n_edges
    by_id = {d["id"]: (u, v, d) for u, v, d in from_file.edges(data=True)}
    for row in edges.itertuples():
        u, v, d = by_id[f"e{row.Index}"]
        assert {u, v} == {f"n{row.source}", f"n{row.target}"} and row.source < row.target
        assert row.shared == d["shared"] and row.jaccard == d["jaccard"]
    # Jaccard = shared / |A u B| (Jaccard 1912), from the node sizes in the same frame.
    sizes = graph.to_frame()["size"]
    union = sizes[edges["source"]].to_numpy() + sizes[edges["target"]].to_numpy() - edges["shared"]
    np.testing.assert_allclose(edges["jaccard"], edges["shared"] / union, rtol=1e-15)


def test_bad_table_name_and_missing_packages(graph, monkeypatch):
    with pytest.raises(ParameterError, match="'nodes', 'edges'"):
        graph.to_frame("rows")
    monkeypatch.setitem(sys.modules, "networkx", None)  # import networkx raises ImportError
    with pytest.raises(LensworkError, match="needs networkx.*pip install networkx"):
        graph.to_networkx()
    monkeypatch.setitem(sys.modules, "pandas", None)
    with pytest.raises(LensworkError, match="needs pandas.*pip install pandas"):
        graph.to_frame()
