"""Significance of the features of a graph (summary, files, bootstrap recurrence).

References: Carrière and Oudot, "Structure and stability of the one-dimensional Mapper",
FoCM 2018 (a Mapper graph's features are the extended-persistence points of its lens, moved
by at most one cover step at each end); Cohen-Steiner, Edelsbrunner and Harer, FoCM 2009
(extended persistence; a circle under the height function has one loop point (min, max));
Edelsbrunner and Harer, "Computational Topology", AMS 2010, VII.1 (the elder rule: a dip of
depth h on a rising path is a downward and an upward branch of persistence h).
"""

import json

import numpy as np
import pytest
from _shapes import noisy_circle

from lenswork import Workspace, bootstrap_graph, build_graph
from lenswork.graph import write_graph_json
from lenswork.graph._thresholds import graph_diagrams


def y_tree(n, rng, noise=0.03):
    """Three unit arms from the origin at 90, 210 and 330 degrees, with Gaussian noise."""
    arm = rng.integers(0, 3, n)
    r = rng.uniform(0, 1, n)
    ang = np.deg2rad(np.array([90.0, 210.0, 330.0]))[arm]
    X = np.column_stack([r * np.cos(ang), r * np.sin(ang)])
    return X + rng.normal(0, noise, X.shape)


def bump_path(n, rng, h, noise=0.01):
    """A segment with a lens rising 0 .. 1, dipping to 1 - h, then rising to 2 (a bump)."""
    t = np.sort(rng.uniform(0, 1, n))
    X = np.column_stack([3 * t, np.zeros(n)]) + rng.normal(0, noise, (n, 2))
    f = np.where(t < 0.4, t / 0.4,
                 np.where(t < 0.6, 1 - h * (t - 0.4) / 0.2, 1 - h + (1 + h) * (t - 0.6) / 0.4))
    return X, f


def _step_share(graph):
    """One cover step as a share of the level range: 1 / (N - 1)."""
    return 1.0 / (graph.params["cover"]["intervals"][0] - 1)


@pytest.mark.parametrize("seed", [0, 1])
def test_circle_under_height_has_one_loop_spanning_the_whole_range(seed):
    # Cohen-Steiner et al. 2009: the height on a circle has one loop point (min, max), i.e.
    # significance 1; Carrière and Oudot 2018: the Mapper moves each end by <= one step.
    X = noisy_circle(800, np.random.default_rng(seed), noise=0.03)
    g = build_graph(X[:, 1], Workspace(X))
    s = g.summary()
    loops = s.features_of("loop")
    assert len(loops) == 1 and loops[0].significant
    assert loops[0].significance >= 1 - 2 * _step_share(g) - 1e-9
    assert s.significance["loops"] == (1, 1)
    assert not s.significant_features("limb")  # a circle has no branch


@pytest.mark.parametrize("h", [0.5, 0.8])
def test_bump_on_a_path_gives_branches_of_its_span(h):
    # elder rule (Edelsbrunner and Harer 2010, VII.1): the dip of depth h on a lens of range 2
    # gives a downward and an upward branch of persistence h, significance h / 2; on the raw
    # scale the Mapper's levels are the lens at the cover's resolution, so each end moves by
    # at most one step (Carrière and Oudot 2018).
    X, f = bump_path(800, np.random.default_rng(2), h)
    g = build_graph(f, Workspace(X), scale="raw", intervals=20)
    s = g.summary()
    limbs = s.significant_features("limb")
    assert len(limbs) == 2
    for limb in limbs:
        assert abs(limb.significance - h / 2) <= 2 * _step_share(g) + 1e-9
    assert not s.significant_features("loop")


def test_small_bump_is_small():
    # a dip narrower than the resolution threshold (two cover steps and the jitter) is not
    # significant: its limbs are listed as small, with a significance close to h / 2
    X, f = bump_path(800, np.random.default_rng(2), 0.1)
    g = build_graph(f, Workspace(X), scale="raw", intervals=20)
    s = g.summary()
    small = s.small_features("limb")
    assert len(small) == 2 and not s.significant_features("limb")
    assert all(abs(x.significance - 0.05) <= 2 * _step_share(g) for x in small)


@pytest.mark.filterwarnings("ignore:.*rows are in no node")
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_noisy_line_has_loops_but_no_significant_one(seed):
    # a segment under its own coordinate has a Reeb graph without cycle (b1 = 0): every loop a
    # fine cover of a jittered lens makes is noise, and must be below the threshold
    rng = np.random.default_rng(seed)
    t = rng.uniform(0, 4, 1000)
    X = np.column_stack([t, rng.normal(0, 0.3, (1000, 2))])
    g = build_graph(t + rng.normal(0, 0.3, 1000), Workspace(X), intervals=20, k=10, min_size=3,
                    scale="rank")  # the rank scale splits the jittered lens into many loops
    s = g.summary()
    assert s.loops >= 5  # the noise makes loops ...
    assert s.significance["loops"][0] == 0  # ... none of which is significant
    assert not s.significant_features("branch")


def test_y_under_height_has_two_feet_and_one_fork():
    # a Y with its stem up under the height: its Reeb graph is the Y; extended persistence has
    # the component and one downward branch (the younger foot, elder rule), which ends at the
    # fork, the one branch point; the elder foot holds the component's minimum, a trunk that
    # the younger foot meets at the fork (branch decomposition of the merge tree): both feet
    # are limbs and flares. The feet span a third of the height range: 20 intervals
    # (threshold about 0.15 + jitter) resolve them; 10 would not (0.32)
    X = y_tree(900, np.random.default_rng(1))
    g = build_graph(X[:, 1], Workspace(X), scale="raw", intervals=20)
    s = g.summary()
    assert s.loops == 0
    d = graph_diagrams(g)[0]
    assert d.count("down", significant=True) == 1  # the elder rule's one point
    limbs = s.significant_features("limb")
    assert len(limbs) == 2
    forks = s.significant_features("branch")
    assert len(forks) == 1
    assert all(limb.attached_to == forks[0].nodes[0] for limb in limbs)  # both at the fork
    assert len(s.significant_features("flare")) == 2
    assert all(f.attached_to == forks[0].nodes[0] for f in s.features_of("flare"))


@pytest.mark.filterwarnings("ignore:.*rows are in no node")
def test_summary_text_and_files_report_significant_apart_from_small(tmp_path):
    rng = np.random.default_rng(3)
    t = rng.uniform(0, 4, 1000)
    X = np.column_stack([t, rng.normal(0, 0.3, (1000, 2))])
    g = build_graph(t + rng.normal(0, 0.3, 1000), Workspace(X), intervals=20, k=10, min_size=3,
                    scale="rank")  # the rank scale splits the jittered lens into many loops
    s = g.summary()
    text = s.text()
    assert text.startswith(f"significant: {s.n_components} component") and "small features" in text
    assert ", 0 loops, " in text.splitlines()[0] and " needed  [" in text
    doc = json.loads(write_graph_json(g, tmp_path / "g.json").read_text())
    rec = doc["summary"]
    assert rec["significance"]["loops"] == {"significant": 0, "small": s.loops}
    assert len(rec["small_features"]) == len(s.small_features())
    assert all(f["significant"] is False for f in rec["small_features"])
    assert all(f["significant"] for f in rec["significant_features"])


def test_bootstrap_reports_how_often_each_significant_feature_recurs():
    X = noisy_circle(400, np.random.default_rng(4), noise=0.03)
    ws = Workspace(X)
    res = bootstrap_graph(X[:, 1], ws, resamples=8)
    rows = res.feature_recurrence()
    loops = [r for r in rows if r["kind"] == "loop"]
    assert len(loops) == 1 and loops[0]["recurrence"] >= 0.75
    assert res.significant_counts["loops"].shape == (8,)
    assert "recurs" in res.format_features()


# --------------------------------------------------------------------------- multi-lens holes
def _torus(seed, n=1500):
    from _shapes import torus

    return torus(n, np.random.default_rng(seed), noise=0.03)


@pytest.mark.parametrize("seed", [0, 1])
def test_torus_in_plane_coordinates_give_one_significant_hole(seed):
    # (x, y) maps the torus (R = 3, r = 1) onto the annulus 2 <= |(x, y)| <= 4; a cover of it
    # by elements up to twice the resolution has a nerve with one hole (nerve theorem,
    # Hatcher 2002, Cor. 4G.3). At the finest scale the two sheets (z > 0, z < 0) split the
    # cells and leave more holes; they fill in at the coarser scales.
    X = _torus(seed)
    g = build_graph(X[:, :2], Workspace(X))
    s = g.summary()
    scales = g.params["holes_over_scales"]
    assert s.significant_holes == 1 == min(scales["holes"])
    assert scales["holes"][0] == s.holes and len(scales["holes"]) == 4
    assert "significant holes 1" in s.text() and s.to_dict()["significant_holes"] == 1


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_three_armed_tree_has_no_significant_hole(seed):
    # a Y is contractible, so is every cover of it by convex pieces (nerve theorem): no hole
    X = y_tree(900, np.random.default_rng(seed))
    X = np.column_stack([X, np.random.default_rng(seed + 10).normal(0, 0.02, (900, 3))])
    g = build_graph(X[:, :2], Workspace(X))
    assert g.summary().significant_holes == 0


def test_two_circles_keep_both_holes_at_every_scale():
    # scikit-learn's make_circles: two circles, each with one hole at every cover scale
    from sklearn.datasets import make_circles

    X = make_circles(1000, noise=0.05, factor=0.5, random_state=0)[0]
    g = build_graph(X, Workspace(X))
    assert g.params["holes_over_scales"]["holes"] == [2, 2, 2, 2]
    assert g.summary().significant_holes == 2


def test_hole_scales_are_the_stated_rule():
    from lenswork import GraphSettings
    from lenswork.graph import hole_scale_settings

    for N, k in ((10, 4), (8, 5), (3, 4), (20, 3)):
        expected = []
        for c in np.linspace(1, 0.5, k)[1:]:  # N down to N / 2, repeats dropped
            v = max(1, int(round(N * c)))
            if v != N and v not in expected:
                expected.append(v)
        got = [c.intervals for c in hole_scale_settings(GraphSettings(intervals=N,
                                                                      hole_scales=k), 2)]
        assert got == expected
    assert hole_scale_settings(GraphSettings(intervals=10), 1) == []
    assert hole_scale_settings(GraphSettings(intervals=10, hole_scales=1), 2) == []
    X = _torus(0, 600)
    g = build_graph(X[:, :2], Workspace(X), hole_scales=1)
    assert "holes_over_scales" not in g.params and g.summary().significant_holes is None


def _exit_reference(graph, v, radius):
    """Third-largest exit span at v by networkx searches (the rule of _summary's notes)."""
    import networkx as nx

    G = nx.Graph(graph.edge_index.tolist())
    G.add_nodes_from(range(graph.n_nodes))
    lv = graph.node_elements[:, 0].astype(float)

    def ball(r):
        near = [u for u in G if abs(lv[u] - lv[v]) <= r]
        return nx.node_connected_component(G.subgraph(near), v)

    inner = ball(radius)
    shell = ball(2 * radius) - inner
    outside = G.subgraph([u for u in G if u not in inner])
    spans = []
    for piece in nx.connected_components(G.subgraph(shell)):
        arm = list(nx.node_connected_component(outside, next(iter(piece))))
        spans.append(max(lv[arm].max(), lv[v]) - min(lv[arm].min(), lv[v]))
    if len(spans) < 3:
        return 0.0
    spans.sort(reverse=True)
    return spans[2] / (graph.params["cover"]["intervals"][0] - 1)


def _theta(n, rng, noise=0.03):
    """A unit circle with its horizontal diameter: Reeb graph under x has two forks."""
    k = n // 4
    a = rng.uniform(0, 2 * np.pi, n - k)
    chord = np.column_stack([rng.uniform(-1, 1, k), np.zeros(k)])
    X = np.vstack([np.column_stack([np.cos(a), np.sin(a)]), chord])
    return X + rng.normal(0, noise, X.shape)


@pytest.mark.filterwarnings("ignore:.*rows are in no node")
def test_branch_point_exits_match_a_networkx_search():
    from lenswork.graph._summary import BRANCH_RADIUS

    rng = np.random.default_rng(5)
    t = rng.uniform(0, 4, 1000)
    X = np.column_stack([t, rng.normal(0, 0.3, (1000, 2))])
    Y = y_tree(900, np.random.default_rng(1))
    T = _theta(1200, np.random.default_rng(0))
    graphs = [
        build_graph(t + rng.normal(0, 0.3, 1000), Workspace(X), intervals=20, k=10, min_size=3),
        build_graph(Y[:, 1], Workspace(Y), scale="raw", intervals=20),
        build_graph(T[:, 0], Workspace(T), scale="raw", intervals=20),
    ]
    nonzero = 0
    for g in graphs:
        d = graph_diagrams(g)[0]
        for f in g.summary().features_of("branch"):
            v = f.nodes[0]
            hit = ((d.nodes[:, 0] == v) | (d.nodes[:, 1] == v)) & (d.kind != "component")
            end = float(d.significance[hit].max()) if hit.any() else 0.0
            # the stated rule: the smaller of the third-largest exit span and the largest
            # diagram point (loop or limb) with an end at the node
            ref = min(_exit_reference(g, v, BRANCH_RADIUS * d.threshold * d.range), end)
            assert f.significance == pytest.approx(ref, abs=1e-12)
            nonzero += ref > 0
    assert nonzero >= 3  # the Y's fork and the theta's two forks at least


def test_theta_under_x_has_two_significant_forks():
    # the theta's Reeb graph under x: two degree-3 nodes at x = -1 and x = 1 joined by three
    # arcs, so two loops (Cohen-Steiner, Edelsbrunner and Harer 2009: one extended pair per
    # independent cycle) and two branch points spanning the whole range
    for seed in range(3):
        T = _theta(1200, np.random.default_rng(seed))
        s = build_graph(T[:, 0], Workspace(T), scale="raw", intervals=20).summary()
        assert s.significance["loops"][0] == 2
        assert len(s.significant_features("branch")) == 2


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_circle_under_two_lenses_has_no_significant_branch_point(seed):
    # a circle's Reeb graph under either coordinate is a cycle with no branching
    # (Cohen-Steiner et al. 2009); the nodes of a two-lens cover at the loop's extremes
    # have three or more neighbours, which join right beside them, so none is significant
    X = noisy_circle(900, np.random.default_rng(seed), noise=0.05)
    s = build_graph(X, Workspace(X)).summary()
    assert s.significant_holes == 1
    assert len(s.branch_points) >= 3  # the cover does make nodes of degree >= 3 ...
    assert not s.significant_features("branch")  # ... none of which branches
