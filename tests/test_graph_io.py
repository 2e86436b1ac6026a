"""Tests of the graph files: GraphML (read back by networkx), JSON round trip, memberships CSV."""

import csv
import json
import warnings

import networkx as nx
import numpy as np
import pytest

from lenswork import InputError, LensColumn, LensTable, PointCloud, Workspace
from lenswork.graph import (
    build_graph,
    read_graph_json,
    read_lens_file,
    write_graph_json,
    write_graphml,
    write_memberships,
)


@pytest.fixture
def graph():
    rng = np.random.default_rng(601)
    X = np.vstack([rng.normal(size=(600, 6)), rng.normal(9, 0.05, (3, 6))])
    ids = np.array([f"r{i:04d}" for i in range(len(X))], dtype=object)
    cloud = PointCloud.from_array(X, feature_names=[f"f{j}" for j in range(6)], ids=ids)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the three far rows end in no node
        return build_graph({"height": X[:, 0], "dtm[mass=0.05]": X[:, 1]}, Workspace(cloud),
                           intervals=[5, 3], overlap=0.35, columns=["f2"], fragments="report")


def test_graphml_reads_back_in_networkx(graph, tmp_path):
    path = write_graphml(graph, tmp_path / "g.graphml")
    G = nx.read_graphml(path)  # networkx as the reference GraphML reader
    assert sorted(G.nodes) == sorted(f"n{a}" for a in range(graph.n_nodes))
    assert {frozenset(e) for e in G.edges} == {
        frozenset((f"n{a}", f"n{b}")) for a, b in graph.edge_index
    }
    for node in graph.nodes:
        attrs = G.nodes[f"n{node.id}"]
        assert attrs["size"] == node.size and isinstance(attrs["size"], int)
        assert attrs["element"] == ",".join(str(i) for i in node.element)
        for name in ("height", "dtm[mass=0.05]", "f2"):
            for stat in ("mean", "min", "max"):
                value = attrs[f"{name}_{stat}"]
                # repr() of a float is read back exactly (Python float round trip)
                assert isinstance(value, float) and value == node.stats[name][stat]
    for e in graph.edges:
        attrs = G.edges[f"n{e.source}", f"n{e.target}"]
        assert attrs["shared"] == e.shared and attrs["jaccard"] == e.jaccard
    assert G.graph["n_rows"] == graph.n_rows
    assert G.graph["n_unassigned"] == graph.unassigned.size > 0
    assert json.loads(G.graph["params"]) == graph.params
    assert not nx.is_directed(G)


def test_json_round_trip_is_equal(graph, tmp_path):
    path = write_graph_json(graph, tmp_path / "g.json")
    back = read_graph_json(path)
    assert back == graph
    assert back.unassigned.tolist() == graph.unassigned.tolist()
    assert list(back.row_ids) == list(graph.row_ids)
    assert back.summary().to_dict() == graph.summary().to_dict()
    doc = json.loads(path.read_text())  # plain JSON (the standard library as reader)
    assert doc["format"] == "lenswork-graph" and len(doc["membership"]) == graph.n_nodes


def test_json_equality_notices_a_change(graph, tmp_path):
    path = write_graph_json(graph, tmp_path / "g.json")
    doc = json.loads(path.read_text())
    doc["membership"][0] = doc["membership"][0][1:]
    path.write_text(json.dumps(doc))
    assert read_graph_json(path) != graph


def test_memberships_csv(graph, tmp_path):
    path = write_memberships(graph, tmp_path / "m.csv")
    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))  # the standard csv module as reader
    assert rows[0] == ["row", "node"]
    body = rows[1:]
    # one line per membership plus one per row in no node
    assert len(body) == graph.membership.nnz + graph.unassigned.size
    want = set()
    M = graph.membership.tocoo()
    for r, a in zip(M.row, M.col):
        want.add((graph.row_ids[r], str(a)))
    want |= {(graph.row_ids[r], "") for r in graph.unassigned}
    assert set(map(tuple, body)) == want
    assert [b[0] for b in body] == sorted(b[0] for b in body)  # row order


def test_writes_are_atomic(graph, tmp_path, monkeypatch):
    target = tmp_path / "g.graphml"
    target.write_text("old")

    def broken(*args, **kwargs):
        raise OSError("disk full")

    import xml.etree.ElementTree as ET

    monkeypatch.setattr(ET.ElementTree, "write", broken)
    with pytest.raises(OSError, match="disk full"):
        write_graphml(graph, target)
    # the old file is untouched and no temporary file is left behind
    assert target.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["g.graphml"]


def test_read_errors(tmp_path):
    with pytest.raises(InputError, match="No graph file"):
        read_graph_json(tmp_path / "none.json")
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    with pytest.raises(InputError, match="is not valid JSON"):
        read_graph_json(bad)
    other = tmp_path / "other.json"
    other.write_text(json.dumps({"format": "something"}))
    with pytest.raises(InputError, match="is not a lenswork graph file"):
        read_graph_json(other)
    cut = tmp_path / "cut.json"
    cut.write_text(json.dumps({"format": "lenswork-graph", "format_version": 1}))
    with pytest.raises(InputError, match="damaged or incomplete"):
        read_graph_json(cut)


def test_lens_file_round_trip_by_id(tmp_path):
    rng = np.random.default_rng(602)
    X = rng.normal(size=(50, 2))
    ids = np.array([f"s{i}" for i in range(50)], dtype=object)
    cloud = PointCloud.from_array(X, ids=ids)
    cols = [LensColumn("a", X[:, 0], lens="column", normalization="rank"),
            LensColumn("b", X[:, 1] ** 2, lens="custom", params={"p": 2})]
    path, _ = LensTable(cols, cloud).write(tmp_path / "lenses.csv")
    # the same rows in another order: matched by id, not by position
    perm = rng.permutation(50)
    other = PointCloud.from_array(X[perm], ids=ids[perm])
    back = read_lens_file(path, other)
    assert back.names == ["a", "b"]
    np.testing.assert_allclose(back["a"].values, X[perm, 0], rtol=0, atol=0)  # repr round trip
    assert back["a"].normalization == "rank" and back["b"].params == {"p": 2}
    only_b = read_lens_file(path, other, columns=["b"])
    assert only_b.names == ["b"]
    with pytest.raises(InputError, match="has no lens column 'c'"):
        read_lens_file(path, other, columns=["c"])
    stranger = PointCloud.from_array(X, ids=np.array([f"t{i}" for i in range(50)], dtype=object))
    with pytest.raises(InputError, match="Id t0 of the table is not in the lens file"):
        read_lens_file(path, stranger)
    (tmp_path / "lenses.csv.json").unlink()
    with pytest.raises(InputError, match="has no sidecar"):
        read_lens_file(path, other)
