"""Tests of the ball cover: net properties, assignment against brute force, known shapes, files."""

import warnings

import networkx as nx
import numpy as np
import pytest
from _shapes import noisy_circle, torus
from _strict_json import strict_loads
from scipy.spatial.distance import cdist
from scipy.stats import rankdata
from sklearn.datasets import make_circles

from lenswork import (
    BallCover,
    GraphSettings,
    LensColumn,
    ParameterError,
    Workspace,
    bootstrap_graph,
    build_graph,
    compare_views,
    stability_map,
    structure_scores,
)
from lenswork.graph import (
    COVERS,
    CoverBase,
    IntervalCover,
    graph_layout,
    read_graph_json,
    write_graph_json,
    write_graphml,
    write_memberships,
)


def b1_with_triangles(graph, nodes):
    """b1 of the nerve's 2-skeleton restricted to ``nodes``: (E - rank d1) - rank d2.

    Simplicial homology over the reals with numpy.linalg.matrix_rank (the boundary
    maps d1: edges -> vertices and d2: triangles -> edges; Hatcher, "Algebraic
    Topology", 2002, section 2.1).
    """
    keep = set(int(a) for a in nodes)
    edges = [tuple(e) for e in graph.edge_index.tolist() if e[0] in keep and e[1] in keep]
    index = {e: j for j, e in enumerate(edges)}
    tri, _ = graph.triangles()
    tris = [tuple(t) for t in tri.tolist() if all(v in keep for v in t)]
    order = sorted(keep)
    pos = {v: i for i, v in enumerate(order)}
    d1 = np.zeros((len(order), len(edges)))
    for j, (a, b) in enumerate(edges):
        d1[pos[a], j], d1[pos[b], j] = -1.0, 1.0
    d2 = np.zeros((len(edges), len(tris)))
    for t, (a, b, c) in enumerate(tris):
        d2[index[(b, c)], t], d2[index[(a, c)], t], d2[index[(a, b)], t] = 1.0, -1.0, 1.0
    r1 = np.linalg.matrix_rank(d1) if edges else 0
    r2 = np.linalg.matrix_rank(d2) if tris else 0
    return len(edges) - r1 - r2


# --------------------------------------------------------------------------- the cover itself
def test_greedy_net_is_an_eps_net():
    rng = np.random.default_rng(9101)
    V = rng.uniform(size=(1500, 3))
    cover = BallCover(radius=0.15, scale="raw").fit(V)
    U, C = cover.values_, cover.centres_
    D = cdist(U, C)  # scipy's all-pairs distances as the reference
    # eps-net (e.g. Har-Peled, "Geometric Approximation Algorithms", 2011, ch. 4):
    # every point within eps of a centre, centres pairwise more than eps apart
    assert D.min(axis=1).max() <= 0.15 + 1e-12
    DC = cdist(C, C) + np.eye(len(C)) * 9
    assert DC.min() > 0.15


def test_raw_scale_is_the_range_and_rank_scale_the_ranks():
    rng = np.random.default_rng(9102)
    V = rng.normal(size=(300, 2)) * [1.0, 50.0]
    raw = BallCover(scale="raw").fit(V).values_
    assert np.allclose(raw, (V - V.min(0)) / (V.max(0) - V.min(0)))
    rank = BallCover().fit(V).values_
    # (rank - 1/2) / n with scipy.stats.rankdata as the reference
    assert np.allclose(rank, (rankdata(V, axis=0) - 0.5) / 300)


@pytest.mark.parametrize("overlap", [0.0, 0.3, 0.6])
def test_incidence_matches_brute_force(overlap):
    rng = np.random.default_rng(9103)
    V = rng.uniform(size=(800, 2))
    cover = BallCover(radius=0.12, overlap=overlap, scale="raw").fit(V)
    rows, elements = cover.incidence()
    got = {(int(r), int(e)) for r, e in zip(rows, elements)}
    # brute force: every (point, ball) pair within the ball radius (scipy cdist)
    R = 0.12 / (1 - overlap)
    D = cdist(cover.values_, cover.centres_)
    want = {(int(i), int(j)) for i, j in zip(*np.nonzero(D <= R * (1 + 1e-9)))}
    assert got == want
    assert np.all(np.diff(elements) >= 0)  # grouped by element
    assert np.unique(rows).size == 800  # every point in some ball


def test_target_count_of_centres_by_farthest_points():
    rng = np.random.default_rng(9104)
    V = rng.uniform(size=(1000, 2))
    cover = BallCover(centres=25, scale="raw").fit(V)
    assert cover.n_elements == 25
    D = cdist(cover.values_, cover.centres_)
    # the covering radius reported is the largest point-to-nearest-centre distance
    assert cover.eps_ == pytest.approx(D.min(axis=1).max(), rel=1e-12)
    # Gonzalez (1985): farthest-point centres are at least the covering radius apart
    DC = cdist(cover.centres_, cover.centres_) + np.eye(25) * 9
    assert DC.min() >= cover.eps_ - 1e-12


def test_element_count_follows_the_spread_not_intervals_to_the_m():
    rng = np.random.default_rng(9105)
    t = rng.uniform(0, 1, 3000)
    V = np.column_stack([t, t ** 2, np.sin(3 * t)])  # a curve in 3 lens dimensions
    balls = BallCover(radius=0.1, scale="raw").fit(V)
    boxes = IntervalCover(intervals=10).fit(V)
    # a 1-D curve of length ~ 2.3 (in the unit cube) needs about length / eps balls,
    # where the product cover has 10 ** 3 elements (common practice: covering numbers)
    assert boxes.n_elements == 1000
    assert balls.n_elements < 60


def test_cover_interface_and_table():
    assert set(COVERS) == {"interval", "ball"}
    for cls in COVERS.values():
        assert issubclass(cls, CoverBase) and COVERS[cls.kind] is cls
    cover = BallCover(radius=0.25, scale="raw").fit(np.linspace(0, 1, 50))
    ids = cover.element_ids([0, 2])
    assert ids.shape == (2, 1) and cover.levels([0]).shape == (1, 1)
    assert cover.labels([0])[0].startswith("ball 1 at (")
    assert cover.params()["kind"] == "ball" and cover.params()["n_balls"] == cover.n_elements
    with pytest.raises(ParameterError, match="'radius' parameter of BallCover"):
        BallCover(radius=0.0).fit(np.arange(10.0))
    with pytest.raises(ParameterError, match="'overlap' parameter of BallCover"):
        BallCover(overlap=1.0).fit(np.arange(10.0))
    with pytest.raises(TypeError):
        CoverBase()  # the interface is abstract


# --------------------------------------------------------------------------- known shapes
def test_torus_projection_has_one_hole():
    rng = np.random.default_rng(9106)
    X = torus(3000, rng)  # R = 3, r = 1, axis along z
    # The in-plane coordinates (x, y) = ((R + r cos v) cos u, (R + r cos v) sin u) map the
    # torus onto the annulus R - r <= |(x, y)| <= R + r (closed form: the radius is
    # R + r cos v). Each ball's preimage joins the upper and lower sheets where the ball
    # meets the rims, so the Mapper graph (Mapper, 2007) is the nerve of a cover of the
    # annulus, which by the nerve theorem (Hatcher 2002, Cor. 4G.3) has one hole.
    g = build_graph(X[:, :2], Workspace(X), cover="ball")
    s = g.summary()
    assert s.n_components == 1 and s.holes == 1
    assert g.node_elements.shape[1] == 1 and g.node_levels.shape == (g.n_nodes, 2)


def test_concentric_circles_give_two_components_with_one_hole_each():
    X, label = make_circles(3000, factor=0.5, noise=0.03, random_state=0)
    # scikit-learn make_circles: two circles, radius 1 and 0.5; with lenses = the two
    # coordinates every ball's preimage is an arc, so each circle's nerve is a cycle
    g = build_graph(X, Workspace(X), cover="ball")
    s = g.summary()
    assert s.n_components == 2 and s.holes == 2
    for comp in s.features_of("component"):
        rows = np.unique(np.concatenate([g.members(a) for a in comp.nodes]))
        assert np.unique(label[rows]).size == 1  # one circle per component
        assert b1_with_triangles(g, comp.nodes) == 1


def test_ball_cover_object_equals_the_kind_name():
    rng = np.random.default_rng(9107)
    X = noisy_circle(500, rng)
    ws = Workspace(X)
    a = build_graph(X, ws, cover="ball", radius=0.15, scale="rank")  # a cover object's default
    b = build_graph(X, ws, GraphSettings(cover=BallCover(radius=0.15)))
    assert a.n_nodes == b.n_nodes and (a.membership != b.membership).nnz == 0


# --------------------------------------------------------------------------- files, layouts
def test_ball_graph_files_round_trip(tmp_path):
    rng = np.random.default_rng(9108)
    X = noisy_circle(600, rng)
    g = build_graph(X, Workspace(X), cover="ball", radius=0.15)
    back = read_graph_json(write_graph_json(g, tmp_path / "g.json"))
    assert back == g and np.array_equal(back.node_levels, g.node_levels)
    doc = strict_loads((tmp_path / "g.json").read_text())
    assert doc["provenance"]["graph_settings"]["cover"] == "ball"
    assert doc["params"]["cover"]["kind"] == "ball"
    G = nx.read_graphml(write_graphml(g, tmp_path / "g.graphml"))  # networkx as reader
    for node in g.nodes:
        attrs = G.nodes[f"n{node.id}"]
        assert attrs["element"] == str(node.element[0])
        assert [float(v) for v in attrs["level"].split(",")] == g.node_levels[node.id].tolist()
    lines = write_memberships(g, tmp_path / "m.csv").read_text().split()
    assert len(lines) == 1 + g.membership.nnz  # every row is in a node here


def test_level_layout_and_drawing_with_the_ball_cover():
    rng = np.random.default_rng(9109)
    X = noisy_circle(500, rng)
    g = build_graph(X[:, 0], Workspace(X), cover="ball", radius=0.1)
    pos = graph_layout(g, "level")
    assert np.array_equal(pos[:, 1], g.node_values(g.lens_columns[0]))
    # nodes of one ball share a level and sit at least 1 apart
    for ball in np.unique(g.node_elements[:, 0]):
        xs = np.sort(pos[g.node_elements[:, 0] == ball, 0])
        assert np.all(np.diff(xs) >= 1 - 1e-9)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fig = g.draw()
    assert len(fig.axes) == 2


def test_sweeps_run_on_the_ball_cover():
    rng = np.random.default_rng(9110)
    X = noisy_circle(400, rng)
    ws = Workspace(X)
    settings = GraphSettings(cover="ball")
    lens = LensColumn("x", X[:, 0])
    smap = stability_map(lens, ws, settings=settings, interval_counts=(5, 10), overlaps=(0.3,))
    assert smap.default == (10, 0.3) and smap.default_cell == (1, 0)
    assert smap.settings["cover"] == "ball"
    for i, n_res in enumerate(smap.interval_counts):
        # each cell is the graph of the ball cover of spacing 1 / N (grid_settings);
        # its loops are the cycle rank, checked with networkx's cycle basis
        g = build_graph(lens, ws, settings, radius=1.0 / n_res, overlap=0.3)
        G = nx.Graph(g.edge_index.tolist())
        G.add_nodes_from(range(g.n_nodes))
        assert smap.counts["loops"][i, 0] == len(nx.cycle_basis(G))
        assert smap.counts["nodes"][i, 0] == g.n_nodes
    probe = structure_scores([lens], ws, settings=settings, interval_counts=(10,), overlaps=(0.3,))
    assert probe["x"]["loops"] == smap.counts["loops"][1, 0]
    assert probe.settings == settings.to_dict()
    res = bootstrap_graph(lens, ws, settings=settings, resamples=4)
    assert res.full_counts["loops"] == smap.counts["loops"][1, 0]
    assert res.settings["cover"] == "ball"
    cmp = compare_views({"interval": X[:, 0], "ball": (X, settings)}, ws)
    # both views hold the circle in one component: identical component partitions
    assert cmp.pair("interval", "ball")["ari"] == pytest.approx(1.0)
    assert cmp.graphs[1].summary().holes == 1
