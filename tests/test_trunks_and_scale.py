"""Trunks, per-node thresholds and the balanced cover scale, against closed forms.

References: Cohen-Steiner, Edelsbrunner and Harer, FoCM 2009 (extended persistence: a
component's minimum and maximum are paired with each other, so the branch holding the maximum
has no ordinary point); Pascucci, Cole-McLaughlin and Scorzelli 2004 (branch decomposition of a
merge tree; from memory); networkx (shortest paths, connected components) as the brute force.
"""

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

from lenswork import Workspace, build_graph
from lenswork.graph import Cover, GraphSettings, node_jitter
from lenswork.graph._persistence import extended_persistence
from lenswork.graph._settings import auto_scale
from lenswork.graph._structure_score import significance_total
from lenswork.graph._trunks import diagram_trunks, trunk_points


def _path(n, start=0):
    return [[start + i, start + i + 1] for i in range(n - 1)]


# --------------------------------------------------------------------------- trunks
@pytest.mark.parametrize("a, b", [(3.0, 2.0), (5.0, 4.0), (2.5, 2.0)])
def test_y_with_a_stem_has_one_up_point_and_one_trunk(a, b):
    # a fork at height 1 with a stem down to 0 and two arms up to a and b (a > b): the diagram
    # has the component (0, a) and one "up" point (b, 1) (the elder rule); the trunk is the arm
    # to a, from a down to the fork: persistence a - 1 (closed form)
    # vertices: 0 (stem, f=0), 1 (fork, f=1), 2 (arm a, f=a), 3 (arm b, f=b)
    E = [[0, 1], [1, 2], [1, 3]]
    f = [0.0, 1.0, a, b]
    d = extended_persistence(E, f)
    assert sorted(d.kind.tolist()) == ["component", "up"]
    assert trunk_points(E, f, 0.1) == [("up", 2, 1)]
    (kind, top, merge, value, _), = diagram_trunks(
        extended_persistence(E, f, threshold=0.05), E, f)
    assert (kind, top, merge) == ("up", 2, 1) and value == pytest.approx((a - 1) / a)


def test_no_trunk_without_a_significant_branch_or_a_body():
    E = _path(5)
    assert trunk_points(E, [0.0, 1, 2, 3, 4], 0.1) == []  # a path under its height: no fork
    # a V (minimum inside): the two ends are no tails of a body
    V = [[0, 1], [1, 2], [2, 3], [3, 4]]
    assert trunk_points(V, [2.0, 1.0, 0.0, 1.0, 2.5], 0.1) == []
    # a short arm (persistence 0.5 <= 1) ends no trunk
    assert trunk_points([[0, 1], [1, 2], [1, 3]], [0.0, 1.0, 3.0, 1.5], 1.0) == []


def test_a_fold_is_no_fork():
    # a path that doubles back (rise to 3, dip to 1, rise to 4) drawn with a spur at the dip, as
    # a Mapper graph draws a fold: the bump and the dip are branches, its ends no tails
    E = _path(6) + [[3, 6]]
    f = [0.0, 3.0, 1.5, 1.0, 2.0, 4.0, 0.8]   # vertex 6: a spur under the dip
    assert trunk_points(E, f, 0.5, sizes=[1, 1, 1, 1, 1, 1, 1]) == []


def test_a_ring_with_two_spikes_has_both_as_limbs():
    # a 12-cycle at heights 0.4..0.6 with two spikes of height 4 and 3 at vertices 0 and 2: the
    # diagram has one "up" point for the lower spike; the higher one is the trunk that the
    # lower meets on the ring at vertex 2, past which the ring goes on down (closed form; the
    # trunk, spike and ring above vertex 2, holds less than half the graph)
    n = 12
    ring = [[i, (i + 1) % n] for i in range(n)]
    f = [0.5 + 0.1 * np.cos(2 * np.pi * i / n) for i in range(n)]
    E = ring + [[0, 12], [12, 13], [2, 14], [14, 15]]
    f = f + [2.0, 4.0, 1.5, 3.0]
    d = extended_persistence(E, f, threshold=0.1)
    ups = d.nodes[(d.kind == "up") & d.significant]
    assert ups[:, 0].tolist() == [15]
    trunks = diagram_trunks(d, E, f)
    assert [(t[0], t[1]) for t in trunks] == [("up", 13)]
    meet = trunks[0][2]
    assert meet == 2 == int(ups[0, 1])  # both meet where the lower spike joins the ring
    assert trunks[0][3] == pytest.approx((4.0 - f[2]) / (4.0 - min(f)))
    # the total counts both spikes (weights 0.5 each) and the ring's loop (weight 1)
    loops = d.significance[(d.kind == "loop") & d.significant].sum()
    up = d.significance[(d.kind == "up") & d.significant].sum()
    assert significance_total(d, E, f) == pytest.approx(loops + 0.5 * up + 0.5 * trunks[0][3])


def test_a_tail_from_the_extreme_to_a_loop():
    # a 8-cycle (heights 0..1) with one path up to 3 from its top: no branch meets the path, so
    # the trunk runs from the maximum to the loop's top (closed form: span 3 - 1)
    n = 8
    ring = [[i, (i + 1) % n] for i in range(n)]
    h = [0.5 - 0.5 * np.cos(2 * np.pi * i / n) for i in range(n)]  # vertex 4 is the top, 1.0
    E = ring + [[4, 8], [8, 9], [9, 10]]
    f = h + [1.5, 2.2, 3.0]
    d = extended_persistence(E, f, threshold=0.2)
    (kind, top, end, value, _), = diagram_trunks(d, E, f)
    assert (kind, top, f[end]) == ("up", 10, 1.0) and value == pytest.approx(2.0 / 3.0)


# --------------------------------------------------------------------------- per-node jitter
def test_node_jitter_is_the_rms_over_each_nodes_rows_by_brute_force():
    rng = np.random.default_rng(4)
    U = rng.uniform(size=(60, 2))
    nn = rng.integers(0, 60, (60, 5))
    B = (rng.uniform(size=(60, 4)) < 0.4).astype(np.int8)
    B[B.sum(axis=1) == 0, 0] = 1  # every row in some node
    M = sp.csr_matrix(B)
    got = node_jitter(U, nn, M)
    for j in range(2):
        span = U[:, j].max() - U[:, j].min()
        for c in range(4):
            rows = M[:, c].nonzero()[0]
            want = np.sqrt(np.mean([(U[i, j] - U[nn[i], j]) ** 2 for i in rows])) / span
            assert got[j][c] == pytest.approx(want, rel=1e-12)


def test_per_point_thresholds_use_the_jitter_at_both_ends():
    t = np.linspace(0, 2 * np.pi, 600, endpoint=False)
    X = np.column_stack([np.cos(t), np.sin(t)])
    g = build_graph(X[:, 1], X, intervals=10, overlap=0.3)
    from lenswork.graph._thresholds import lens_persistence, resolution_threshold
    d = lens_persistence(g)
    local = np.asarray(g.params["node_jitter"][0])
    step = 0.7 / (1 + 9 * 0.7)
    want = resolution_threshold(10, 0.3) + (local[d.nodes[:, 0]] + local[d.nodes[:, 1]]) / step / 9
    np.testing.assert_allclose(d.thresholds, want, rtol=1e-12)


# --------------------------------------------------------------------------- balanced scale
def test_balanced_scale_is_the_mean_of_ranks_and_range_normalised_values():
    rng = np.random.default_rng(2)
    v = np.exp(rng.normal(size=500))  # heavy right tail
    u = Cover(intervals=10, scale="balanced").fit(v).values_[:, 0]
    rank = (np.argsort(np.argsort(v)) + 0.5) / v.size
    raw = (v - v.min()) / (v.max() - v.min())
    np.testing.assert_allclose(u, (rank + raw) / 2, atol=1e-12)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_balanced_intervals_hold_at_most_twice_the_rows_and_twice_the_values(seed):
    # closed form: u = (r + v) / 2 with r, v in [0, 1] increasing together, so an interval of
    # u-length L spans r-length and v-length at most 2 L
    rng = np.random.default_rng(seed)
    v = np.concatenate([rng.normal(0, 0.1, 900), rng.exponential(2.0, 100) + 0.5])
    N, p = 10, 0.3
    cover = Cover(intervals=N, overlap=p, scale="balanced").fit(v)
    rank_cover = Cover(intervals=N, overlap=p, scale="rank").fit(v)
    raw_len = Cover(intervals=N, overlap=p, scale="raw").fit(v).length_[0]
    equal_rows = max(np.bincount(rank_cover.incidence()[1]))
    rows, elements = cover.incidence()
    assert max(np.bincount(elements)) <= 2 * equal_rows + 2
    for e in range(N):
        vals = v[rows[elements == e]]
        if vals.size:
            assert vals.max() - vals.min() <= 2 * raw_len + 1e-9


def test_scale_auto_is_balanced_and_recorded():
    assert auto_scale(10) == "balanced" and GraphSettings().scale == "auto"
    rng = np.random.default_rng(0)
    X = rng.normal(size=(300, 3))
    g = build_graph(X[:, 0], Workspace(X))
    assert g.params["cover"]["scale"] == "balanced"
    assert g.provenance["auto_settings"]["scale"] == "balanced"
    assert g.provenance["graph_settings"]["scale"] == "balanced"


def test_trunk_spans_match_networkx_paths_on_random_trees():
    # on a tree the trunk's meeting vertex lies on the path from the maximum to the younger
    # branch's tip (networkx shortest path: the unique tree path)
    rng = np.random.default_rng(7)
    for _ in range(20):
        seed = int(rng.integers(1 << 30))
        T = nx.random_labeled_tree(30, seed=seed) if hasattr(nx, "random_labeled_tree") \
            else nx.random_tree(30, seed=seed)
        E = np.array(list(T.edges()), dtype=np.int64)
        f = rng.normal(size=30)
        d = extended_persistence(E, f, threshold=0.1)
        for kind, top, merge, _, _ in diagram_trunks(d, E, f):
            tips = d.nodes[(d.kind == kind) & d.significant & (d.nodes[:, 1] == merge), 0]
            assert any(merge in nx.shortest_path(T, top, int(t)) for t in tips) or tips.size == 0
