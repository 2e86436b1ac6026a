"""Tests of build_graph and LensGraph: known shapes, summary, statistics, layout, drawing."""

import warnings
import xml.etree.ElementTree as ET

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp
from _shapes import torus
from numpy.testing import assert_allclose
from sklearn.datasets import make_circles

from lenswork import (
    InputError,
    LensColumn,
    LensTable,
    LensworkWarning,
    ParameterError,
    PointCloud,
    Workspace,
)
from lenswork.graph import LensGraph, build_graph, graph_layout
from lenswork.plot._graph import draw_graph


# --------------------------------------------------------------------------- samples
def sphere(rng, n):
    """Uniform on the unit sphere: normalised Gaussian vectors (Muller 1959)."""
    X = rng.normal(size=(n, 3))
    return X / np.linalg.norm(X, axis=1, keepdims=True)


def to_networkx(graph):
    G = nx.Graph()
    G.add_nodes_from(range(graph.n_nodes))
    G.add_edges_from(graph.edge_index.tolist())
    return G


def b1_by_rank(graph):
    """E - rank of the oriented V x E incidence matrix (numpy.linalg.matrix_rank)."""
    V, E = graph.n_nodes, graph.n_edges
    B = np.zeros((V, E))
    for j, (a, b) in enumerate(graph.edge_index):
        B[a, j], B[b, j] = -1.0, 1.0
    return E - (np.linalg.matrix_rank(B) if E else 0)


def hand_graph(edges, n_nodes, lens=None):
    """A LensGraph from an edge list: node a holds rows {a} and one row per incident edge."""
    rows, cols = list(range(n_nodes)), list(range(n_nodes))
    for j, (a, b) in enumerate(edges):
        rows += [n_nodes + j, n_nodes + j]
        cols += [a, b]
    M = sp.csr_matrix((np.ones(len(rows)), (rows, cols)), shape=(n_nodes + len(edges), n_nodes))
    lens = np.arange(n_nodes, dtype=float) if lens is None else np.asarray(lens, dtype=float)
    stats = {"h": np.column_stack([lens, lens - 0.5, lens + 0.5])}
    return LensGraph(M, np.arange(n_nodes)[:, None], edges, [1] * len(edges), stats,
                     lens_columns=["h"])


# --------------------------------------------------------------------------- known shapes
@pytest.mark.parametrize("seed", range(10))
def test_torus_height_across_the_hole_is_a_circle(seed):
    rng = np.random.default_rng(4000 + seed)
    X = torus(2000, rng)
    # height lens = x, a coordinate in the plane of the ring: the level sets are one circle
    # near the ends and two circles across the hole, so the Reeb graph is a circle and
    # b1 = genus = 1 (Cole-McLaughlin et al. 2004, "Loops in Reeb graphs of 2-manifolds").
    # Default cover: 10 intervals, overlap 0.3, rank scale.
    s = build_graph(X[:, 0], Workspace(X)).summary()
    assert (s.n_components, s.loops) == (1, 1)


def test_make_circles_gives_two_loops():
    X, _ = make_circles(1000, noise=0.02, factor=0.5, random_state=0)
    # two circles, each with the x lens a circle Reeb graph: 2 components, b1 = 2
    # (Reeb graph of a height function on S^1 is S^1; scikit-learn make_circles)
    s = build_graph(X[:, 0], X).summary()
    assert (s.n_components, s.loops) == (2, 2)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_sphere_height_is_a_tree(seed):
    rng = np.random.default_rng(4100 + seed)
    X = sphere(rng, 2000)
    # a simply connected surface has a loop-free Reeb graph (Cole-McLaughlin et al. 2004);
    # the height function on S^2 gives a segment
    s = build_graph(X[:, 2], X).summary()
    assert (s.n_components, s.loops) == (1, 0)
    assert nx.is_tree(to_networkx(build_graph(X[:, 2], X)))  # networkx as reference


@pytest.mark.parametrize("case", ["torus", "circles", "two_lenses"])
def test_b1_two_ways(case):
    rng = np.random.default_rng(4200)
    if case == "torus":
        X = torus(1500, rng)
        g = build_graph(X[:, 0], X)
    elif case == "circles":
        X, _ = make_circles(800, noise=0.03, factor=0.5, random_state=1)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", LensworkWarning)  # a few rows in no node
            g = build_graph(X[:, 0], X, intervals=12)
    else:
        X = rng.normal(size=(1500, 2))
        g = build_graph(X, X, intervals=5, overlap=0.4)
    s = g.summary()
    # E - V + C against E - rank(incidence) (numpy.linalg.matrix_rank) and the size of a
    # cycle basis (networkx.cycle_basis)
    assert s.loops == b1_by_rank(g) == len(nx.cycle_basis(to_networkx(g)))
    assert s.n_components == nx.number_connected_components(to_networkx(g))
    assert len(s.features_of("loop")) == s.loops


def test_every_row_is_in_a_node_or_reported():
    rng = np.random.default_rng(4300)
    X = np.vstack([rng.normal(size=(1500, 10)), rng.normal(8, 0.1, (4, 10))])
    ws = Workspace(X)
    with pytest.warns(LensworkWarning, match="rows are in no node"):
        g = build_graph(X[:, 0], ws, intervals=8, fragments="report")
    row_sums = np.asarray(g.membership.sum(axis=1)).ravel()
    assert set(np.flatnonzero(row_sums == 0).tolist()) == set(g.unassigned.tolist())
    assert g.unassigned.size > 0
    assert row_sums.sum() == g.membership.nnz == g.node_sizes.sum()
    assert np.array_equal(g.unassigned_ids, ws.cloud.ids[g.unassigned])
    assert g.summary().n_unassigned == g.unassigned.size


def test_node_statistics_match_brute_force():
    rng = np.random.default_rng(4400)
    X = rng.normal(size=(700, 3))
    cloud = PointCloud.from_array(X, feature_names=["a", "b", "c"],
                                  passthrough={"temp": rng.uniform(10, 20, 700)})
    ws = Workspace(cloud)
    g = build_graph(X[:, 0], ws, intervals=6, columns=["b", "temp"])
    temp = cloud.passthrough["temp"]
    for node in g.nodes:
        m = node.members
        # numpy mean / min / max over each node's rows as reference; sums of a few hundred
        # floats in another order: 1e-12 relative
        for name, values in (("lens", X[:, 0]), ("b", X[:, 1]), ("temp", temp)):
            got = node.stats[name]
            assert_allclose([got["mean"], got["min"], got["max"]],
                            [values[m].mean(), values[m].min(), values[m].max()], rtol=1e-12)
        assert node.size == m.size
    assert g.data_columns == ("b", "temp")
    assert_allclose(g.node_values("b", "max"), [X[n.members, 1].max() for n in g.nodes])


@pytest.mark.filterwarnings("ignore::lenswork.LensworkWarning")
def test_lens_inputs_agree():
    rng = np.random.default_rng(4500)
    X = rng.normal(size=(500, 2))
    ws = Workspace(X)
    v = np.exp(X[:, 0])
    col = LensColumn("h", v, lens="custom", normalization="minmax")
    table = LensTable([col], ws.cloud)
    ref = build_graph((v - v.min()) / (v.max() - v.min()), ws, scale="raw")

    class Screened:  # anything with to_lens_table(), as a screening result has
        def to_lens_table(self):
            return table

    graphs = [
        build_graph(table, ws, scale="raw"),
        build_graph([col], ws, scale="raw"),
        build_graph(col, ws, scale="raw"),
        build_graph(Screened(), ws, scale="raw"),
    ]
    # the recorded normalisation is applied before the cover scale: same nodes and edges
    for g in graphs:
        assert np.array_equal(g.membership.indices, ref.membership.indices)
        assert np.array_equal(g.edge_index, ref.edge_index)
        assert g.lens_columns == ("h",)
    assert graphs[0].provenance["lenses"][0]["normalization"] == "minmax"
    two = build_graph({"p": X[:, 0], "q": X[:, 1]}, ws, intervals=4)
    assert two.lens_columns == ("p", "q") and two.node_elements.shape[1] == 2
    assert build_graph(X, ws, intervals=4).lens_columns == ("lens_1", "lens_2")
    # a registry spec is computed on the workspace: the column lens of x0 is X[:, 0] itself
    spec = build_graph("column:name=x0", ws, intervals=4)
    same = build_graph({"x0": X[:, 0]}, ws, intervals=4)
    assert spec.lens_columns == ("column_x0",)
    assert np.array_equal(spec.membership.indices, same.membership.indices)


def test_bad_inputs():
    rng = np.random.default_rng(4600)
    X = rng.normal(size=(100, 2))
    with pytest.raises(InputError, match="lenses have 99 rows but the workspace has 100"):
        build_graph(X[:99, 0], X)
    with pytest.raises(ParameterError, match="'lenses' argument of build_graph must be"):
        build_graph({"a"}, X)
    with pytest.raises(ParameterError, match="No data column 'zz'"):
        build_graph(X[:, 0], X, columns=["zz"])
    with pytest.raises(ParameterError, match="'metric' parameter of build_graph"):
        build_graph(X[:, 0], X, metric="hamming")
    cloud = PointCloud.from_array(X, passthrough={"tag": np.array(["a"] * 100, dtype=object)})
    with pytest.raises(ParameterError, match="'tag' is not numeric"):
        build_graph(X[:, 0], Workspace(cloud), columns=["tag"])


def test_deterministic_and_row_order_free():
    rng = np.random.default_rng(4700)
    X = torus(1200, rng)
    a = build_graph(X[:, 0], X)
    b = build_graph(X[:, 0], X)
    assert a == b
    perm = rng.permutation(len(X))
    c = build_graph(X[perm, 0], X[perm])
    # permuting the rows permutes the members and nothing else (a property check)
    back = {frozenset(perm[n.members].tolist()) for n in c.nodes}
    assert back == {frozenset(n.members.tolist()) for n in a.nodes}
    assert c.summary().loops == a.summary().loops


def test_params_and_provenance():
    rng = np.random.default_rng(4800)
    X = rng.normal(size=(300, 3))
    g = build_graph(X[:, 0], X, intervals=7, overlap=0.25, cutoff="fence")
    assert g.params["cover"]["intervals"] == [7]
    assert g.params["cover"]["overlap"] == [0.25]
    assert g.params["cutoff"] == "fence" and g.params["cutoff_used"] > 0
    assert g.provenance["neighbor_graph"]["k"] == 15
    assert "seconds" not in g.provenance["neighbor_graph"]["info"]  # same input, same file
    assert g.provenance["input"]["sha256"]


# --------------------------------------------------------------------------- summary
def test_summary_of_a_y_shape():
    #   0 - 1 - 2 - 3 - 4      (arm), 3 - 5 - 6 (arm), 3 - 7 (arm of one node)
    g = hand_graph([(0, 1), (1, 2), (2, 3), (3, 4), (3, 5), (5, 6), (3, 7)], 8)
    s = g.summary()
    # degrees by hand: node 3 has degree 4 -> the only branch point; three leaves 0, 6, 7
    # and 4 -> four flares ending at node 3
    assert s.branch_points == (3,)
    flares = {f.nodes: f.attached_to for f in s.flares}
    assert flares == {(0, 1, 2): 3, (4,): 3, (6, 5): 3, (7,): 3}
    assert (s.n_components, s.loops, s.n_flares) == (1, 0, 4)
    f = next(f for f in s.flares if f.nodes == (0, 1, 2))
    # rows: the 3 node rows plus the rows of edges (0,1), (1,2), (2,3) -> 3 + 3 = 6
    assert f.rows == 6
    assert f.lens_range["h"] == (-0.5, 2.5)


def test_summary_of_a_ring_with_a_tail_and_a_path():
    # ring 0-1-2-3-0 with tail 3-4-5; separate path 6-7-8; isolated node 9
    g = hand_graph([(0, 1), (1, 2), (2, 3), (0, 3), (3, 4), (4, 5), (6, 7), (7, 8)], 10)
    s = g.summary()
    assert (s.n_components, s.loops) == (3, 1)
    loop = s.features_of("loop")[0]
    assert set(loop.nodes) == {0, 1, 2, 3}
    G = to_networkx(g)
    # the reported loop is a cycle of the graph (networkx as reference)
    assert all(G.has_edge(a, b) for a, b in zip(loop.nodes, loop.nodes[1:] + loop.nodes[:1]))
    assert s.branch_points == (3,)
    assert {f.nodes for f in s.flares} == {(5, 4)}
    assert [f.nodes for f in s.features_of("path")] == [(6, 7, 8)]
    assert [len(f.nodes) for f in s.features_of("component")] == [6, 3, 1]
    assert s.component_sizes == tuple(f.rows for f in s.features_of("component"))
    text = s.text()
    # a hand-made graph has no cover, so no significance: the first line says so and every
    # count on it is named raw
    first = text.splitlines()[0]
    assert first.startswith("structure (no lens levels, so no significance): 3 components")
    assert "1 loop (raw)" in first and "raw cycle and degree counts" in text
    assert s.to_dict()["features"][0]["kind"] == "component"


# --------------------------------------------------------------------------- layout, drawing
def test_level_layout_reads_the_lens():
    rng = np.random.default_rng(4900)
    X = torus(1500, rng)
    g = build_graph(X[:, 0], X)
    pos = graph_layout(g)
    assert_allclose(pos[:, 1], g.node_values("lens"), rtol=0, atol=0)  # y = node lens mean
    for level in np.unique(g.node_elements[:, 0]):
        xs = np.sort(pos[g.node_elements[:, 0] == level, 0])
        assert np.all(np.diff(xs) >= 1 - 1e-9)  # nodes of one level at least 1 apart


def test_level_layout_has_no_crossings_on_a_tree():
    g = hand_graph([(0, 2), (1, 2), (2, 3), (3, 4), (3, 5)], 6, lens=[0, 0, 1, 2, 3, 3])
    g.node_elements[:] = np.array([0, 0, 1, 2, 3, 3])[:, None]
    pos = graph_layout(g, "level")
    segs = [(pos[a], pos[b]) for a, b in g.edge_index]

    def cross(p, q):
        (a, b), (c, d) = p, q
        o = lambda x, y, z: np.sign((y[0] - x[0]) * (z[1] - x[1]) - (y[1] - x[1]) * (z[0] - x[0]))  # noqa: E731
        return o(a, b, c) * o(a, b, d) < 0 and o(c, d, a) * o(c, d, b) < 0

    # a tree drawn by levels needs no crossing; segment test by orientation signs
    assert not any(cross(p, q) for i, p in enumerate(segs) for q in segs[i + 1:])


@pytest.mark.parametrize("method", ["lens", "spring", "spectral"])
def test_other_layouts(method):
    rng = np.random.default_rng(5000)
    X = rng.normal(size=(800, 2))
    g = build_graph(X, X, intervals=4)
    pos = graph_layout(g, method)
    assert pos.shape == (g.n_nodes, 2) and np.isfinite(pos).all()
    if method == "lens":
        assert_allclose(pos, np.column_stack([g.node_values("lens_1"), g.node_values("lens_2")]))
    assert np.array_equal(pos, graph_layout(g, method))  # deterministic


def test_draw_png_and_svg(tmp_path):
    rng = np.random.default_rng(5100)
    X = torus(1200, rng)
    g = build_graph(X[:, 0], X, columns=["x2"])
    png = draw_graph(g, tmp_path / "g.png", color="x2")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # the PNG signature (PNG spec 5.2)
    svg1 = draw_graph(g, tmp_path / "a.svg").read_bytes()
    svg2 = draw_graph(g, tmp_path / "b.svg").read_bytes()
    assert ET.fromstring(svg1).tag.endswith("svg")
    assert svg1 == svg2  # same graph, same file
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.svg", "b.svg", "g.png"]
    fig = g.draw(color="size", layout="spring", labels=True)
    assert len(fig.axes) == 2
    with pytest.raises(ParameterError, match="no node values for 'nope'"):
        draw_graph(g, color="nope")
    with pytest.raises(ParameterError, match="layout must have shape"):
        draw_graph(g, layout=np.zeros((2, 2)))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert "LensGraph(nodes=" in repr(g)


def test_holes_of_a_two_lens_cover_annulus_and_disk():
    # Nerve of a good cover of the annulus has b1 = 1, of the disk b1 = 0 (nerve theorem;
    # textbook fact: b1(annulus) = 1, b1(disk) = 0). The x and y lenses give a product
    # cover whose graph has many filled triangles, so graph cycles >> holes.
    rng = np.random.default_rng(2718)
    n = 4000
    theta = rng.uniform(0, 2 * np.pi, n)
    r_annulus = np.sqrt(rng.uniform(0.5**2, 1.0, n))  # uniform on the annulus 0.5 <= r <= 1
    r_disk = np.sqrt(rng.uniform(0, 1.0, n))  # uniform on the unit disk
    for r, expected in ((r_annulus, 1), (r_disk, 0)):
        X = np.column_stack([r * np.cos(theta), r * np.sin(theta)])
        s = build_graph(X, Workspace(X), intervals=6, overlap=0.3).summary()
        assert s.n_components == 1
        assert s.holes == expected
        assert s.loops >= s.holes  # graph cycles include the filled triangles


def test_holes_equal_loops_without_triangles():
    # A 1-D cover with overlap <= 1/2 has no three-way overlaps, so no triangles.
    rng = np.random.default_rng(99)
    t = rng.uniform(0, 2 * np.pi, 1500)
    X = np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.03, (1500, 2))
    s = build_graph(X[:, 0], Workspace(X), intervals=8, overlap=0.3).summary()
    assert s.holes == s.loops == 1
