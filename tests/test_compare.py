"""Tests of lenswork.compare: partition agreement scores, node correspondence, compare_views."""

import json
import math

import numpy as np
import pytest
import scipy.sparse as sp
from numpy.testing import assert_allclose
from sklearn.datasets import make_circles
from sklearn.metrics import adjusted_rand_score, mutual_info_score
from sklearn.metrics.cluster import contingency_matrix

from lenswork import (
    InputError,
    LensColumn,
    ParameterError,
    Workspace,
    adjusted_rand_index,
    compare_views,
    contingency_table,
    induced_partition,
    node_correspondence,
    variation_of_information,
)
from lenswork.compare import co_membership
from lenswork.graph import build_graph

# a few rows of the noisy test shapes end in no node; the graph builder warns about it
pytestmark = pytest.mark.filterwarnings("ignore:.*rows are in no node:lenswork.LensworkWarning")


def _entropy_direct(labels):
    """Shannon entropy (nats) of the label shares, by a loop over the labels."""
    labels = list(labels)
    n = len(labels)
    h = 0.0
    for value in set(labels):
        p = labels.count(value) / n
        h -= p * math.log(p)
    return h


def _vi_direct(a, b):
    """VI = H(A) + H(B) - 2 I(A; B) (Meila 2007, eq. 15), I from the joint shares by loops."""
    a, b = list(a), list(b)
    n = len(a)
    mutual = 0.0
    for x in set(a):
        for y in set(b):
            nxy = sum(1 for s, t in zip(a, b, strict=True) if s == x and t == y)
            if nxy:
                pxy = nxy / n
                mutual += pxy * math.log(pxy / ((a.count(x) / n) * (b.count(y) / n)))
    return _entropy_direct(a) + _entropy_direct(b) - 2 * mutual


# --------------------------------------------------------------------------- contingency
def test_contingency_matches_sklearn():
    rng = np.random.default_rng(101)
    a = rng.integers(0, 5, 300)
    b = rng.integers(0, 7, 300)
    # scikit-learn's contingency_matrix as reference (same sorted-label order)
    assert_allclose(contingency_table(a, b).toarray(), contingency_matrix(a, b), atol=0)
    assert sp.issparse(contingency_table(a, b))


def test_contingency_accepts_string_labels():
    rng = np.random.default_rng(102)
    a = rng.choice(["red", "green", "blue"], 50)
    b = rng.integers(0, 3, 50)
    table = contingency_table(a, b)
    assert table.sum() == 50
    assert_allclose(table.toarray(), contingency_matrix(a, b), atol=0)


def test_contingency_rejects_mismatched_lengths():
    with pytest.raises(InputError, match="different numbers of rows"):
        contingency_table([0, 1, 1], [0, 1])


def test_contingency_rejects_2d_labels():
    with pytest.raises(InputError, match="must be a 1-D array"):
        contingency_table(np.zeros((3, 2)), [0, 1, 2])


# --------------------------------------------------------------------------- ARI
@pytest.mark.parametrize("n", [2, 17, 400])
@pytest.mark.parametrize("ka,kb", [(1, 1), (1, 4), (3, 3), (6, 2), (40, 40)])
def test_ari_equals_sklearn(n, ka, kb):
    rng = np.random.default_rng(1000 + n + 10 * ka + kb)
    a = rng.integers(0, ka, n)
    b = rng.integers(0, kb, n)
    # scikit-learn's adjusted_rand_score as reference; both are exact rational
    # arithmetic up to the final division, so they agree to rounding
    assert_allclose(adjusted_rand_index(a, b), adjusted_rand_score(a, b), rtol=0, atol=1e-12)


def test_ari_of_a_refinement_matches_sklearn():
    rng = np.random.default_rng(103)
    a = rng.integers(0, 4, 500)
    b = a * 10 + rng.integers(0, 3, 500)  # b refines a
    assert_allclose(adjusted_rand_index(a, b), adjusted_rand_score(a, b), rtol=0, atol=1e-12)


def test_ari_worked_examples():
    # Worked examples from scikit-learn's adjusted_rand_score documentation
    assert adjusted_rand_index([0, 0, 1, 1], [1, 1, 0, 0]) == 1.0
    assert adjusted_rand_index([0, 0, 1, 1], [0, 1, 0, 1]) == -0.5
    assert_allclose(adjusted_rand_index([0, 0, 1, 2], [0, 0, 1, 1]), 0.5714285714285714,
                    rtol=1e-15)  # 4/7, from the same documentation
    # Degenerate: both one block, both all singletons -> 1 (agreement)
    assert adjusted_rand_index([3, 3, 3], [1, 1, 1]) == 1.0
    assert adjusted_rand_index([0, 1, 2], [5, 6, 7]) == 1.0


def test_ari_is_invariant_to_relabelling():
    rng = np.random.default_rng(104)
    a = rng.integers(0, 5, 200)
    b = rng.integers(0, 5, 200)
    perm = rng.permutation(5)
    # ARI depends on the partitions only, not the label names (Hubert and Arabie 1985)
    assert adjusted_rand_index(a, b) == adjusted_rand_index(perm[a], b)
    assert adjusted_rand_index(a, b) == adjusted_rand_index(b, a)


def test_ari_rejects_empty():
    with pytest.raises(InputError, match="empty partitions"):
        adjusted_rand_index([], [])


# --------------------------------------------------------------------------- VI
@pytest.mark.parametrize("ka,kb", [(1, 1), (2, 5), (4, 4), (9, 3)])
def test_vi_equals_direct_entropy_computation(ka, kb):
    rng = np.random.default_rng(200 + 10 * ka + kb)
    a = rng.integers(0, ka, 120)
    b = rng.integers(0, kb, 120)
    # direct loop over H(A) + H(B) - 2 I(A;B) (Meila 2007, eq. 15); float sums of a
    # few hundred terms, so 1e-12 absolute is ample
    assert_allclose(variation_of_information(a, b), _vi_direct(a, b), rtol=0, atol=1e-12)


def test_vi_against_sklearn_mutual_information():
    rng = np.random.default_rng(201)
    a = rng.integers(0, 6, 1000)
    b = (a + rng.integers(0, 2, 1000)) % 6
    from scipy.stats import entropy

    # scipy.stats.entropy and sklearn.metrics.mutual_info_score (nats) as references
    ref = (entropy(np.bincount(a)) + entropy(np.bincount(b)) - 2 * mutual_info_score(a, b))
    assert_allclose(variation_of_information(a, b), ref, rtol=0, atol=1e-12)


def test_vi_closed_forms():
    # One block against two equal halves: VI = log 2 (Meila 2007: VI(1, C) = H(C))
    assert_allclose(variation_of_information([0] * 8, [0] * 4 + [1] * 4), math.log(2),
                    rtol=1e-15)
    # One block against n singletons: VI = log n, the largest value on n rows (Meila 2007)
    n = 16
    assert_allclose(variation_of_information([0] * n, list(range(n))), math.log(n), rtol=1e-15)
    assert_allclose(variation_of_information([0] * n, list(range(n)), normalized=True), 1.0,
                    rtol=1e-15)
    assert variation_of_information([2, 2, 5, 5], [0, 0, 1, 1]) == 0.0


def test_vi_is_a_metric():
    rng = np.random.default_rng(202)
    # Meila 2007, Property 1: VI is a metric on partitions (triangle inequality, symmetry)
    for _ in range(20):
        a, b, c = (rng.integers(0, rng.integers(1, 6), 60) for _ in range(3))
        ab = variation_of_information(a, b)
        assert ab == pytest.approx(variation_of_information(b, a), abs=1e-12)
        assert ab <= variation_of_information(a, c) + variation_of_information(c, b) + 1e-12


# --------------------------------------------------------------------------- views
@pytest.fixture(scope="module")
def circles():
    # two concentric circles, scikit-learn's make_circles
    X, y = make_circles(n_samples=1200, noise=0.03, factor=0.5, random_state=41)
    return X, y, Workspace(X)


@pytest.mark.parametrize("partition", ["component", "node"])
def test_circles_x_and_y_views_agree_with_sklearn_ari(circles, partition):
    X, y, ws = circles
    cmp = compare_views({"x": X[:, 0], "y": X[:, 1]}, ws, partition=partition)
    la, lb = cmp.labels
    rows = cmp.compared
    pair = cmp.pair("x", "y")
    # scikit-learn's adjusted_rand_score on the same partitions, to 1e-12
    assert_allclose(pair["ari"], adjusted_rand_score(la[rows], lb[rows]), rtol=0, atol=1e-12)
    # VI against the direct entropy computation (Meila 2007, eq. 15)
    assert_allclose(pair["vi"], _vi_direct(la[rows], lb[rows]), rtol=0, atol=1e-12)
    assert pair["rows_compared"] == int(rows.sum())
    if partition == "component":
        # each view has the two circles as its two components, so the partitions agree
        # with each other and with make_circles' labels (sklearn ARI as reference)
        assert pair["ari"] == 1.0 and pair["vi"] == 0.0
        assert adjusted_rand_score(y[rows], la[rows]) == 1.0
        assert [s.loops for s in cmp.summaries] == [2, 2]


def _brute_partition(graph, how):
    """Row labels from the member lists, by loops (independent of the sparse code)."""
    import networkx as nx

    first = {}
    for node in range(graph.n_nodes):
        for row in graph.members(node):
            first.setdefault(int(row), node)
    if how == "node":
        return np.array([first.get(r, -1) for r in range(graph.n_rows)])
    G = nx.Graph()
    G.add_nodes_from(range(graph.n_nodes))
    G.add_edges_from(graph.edge_index.tolist())
    comp = {}
    for c, nodes in enumerate(sorted(nx.connected_components(G), key=min)):
        for v in nodes:
            comp[v] = c
    return np.array([comp[first[r]] if r in first else -1 for r in range(graph.n_rows)])


@pytest.mark.parametrize("how", ["component", "node"])
def test_induced_partition_matches_brute_force(circles, how):
    X, _, ws = circles
    g = build_graph(X[:, 0], ws, intervals=8)
    # networkx connected components and the member lists as reference (labels up to naming)
    got = induced_partition(g, how)
    ref = _brute_partition(g, how)
    assert np.array_equal(got < 0, ref < 0)
    assert adjusted_rand_index(got[got >= 0], ref[ref >= 0]) == 1.0


def test_node_correspondence_matches_member_intersections(circles):
    X, _, ws = circles
    ga = build_graph(X[:, 0], ws, intervals=6)
    gb = build_graph(X[:, 1], ws, intervals=7, overlap=0.4)
    C = node_correspondence(ga, gb)
    assert C.shape == (ga.n_nodes, gb.n_nodes) and sp.issparse(C)
    # brute force: |rows(i) & rows(j)| for every pair, by numpy set intersection
    ref = np.array([[np.intersect1d(ga.members(i), gb.members(j)).size
                     for j in range(gb.n_nodes)] for i in range(ga.n_nodes)])
    assert np.array_equal(C.toarray(), ref)


def test_features_in_one_view_only():
    rng = np.random.default_rng(42)
    t = rng.uniform(0, 2 * np.pi, 800)
    X = np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.03, (800, 2))
    ws = Workspace(X)
    col = LensColumn("x", X[:, 0])
    # two intervals cannot close a loop over a circle (two nodes, one edge)
    cmp = compare_views([col, (col, {"intervals": 2})], ws)
    pair = cmp.pair(0, 1)
    assert cmp.names == ["x", "x [intervals=2]"]
    assert cmp.summaries[0].loops == 1 and cmp.summaries[1].loops == 0
    # the loop of the fine view has no loop to match in the coarse view
    assert [f["kind"] for f in pair["only_a"]] == ["loop"]
    assert pair["only_a"][0]["best_jaccard"] == 0.0
    assert "significant only in x: loop:1 (800 rows)" in cmp.format_text()


def test_compare_settings_and_outputs(circles, tmp_path):
    X, _, ws = circles
    col = LensColumn("x", X[:, 0])
    views = {"coarse": (col, {"intervals": 5}), "fine": (col, {"intervals": 15}),
             "y": LensColumn("y", X[:, 1])}
    cmp = compare_views(views, ws)
    assert cmp.names == ["coarse", "fine", "y"] and len(cmp.pairs) == 3
    A = cmp.agreement("ari")
    assert_allclose(A, A.T, rtol=0) and np.all(np.diag(A) == 1.0)
    out = cmp.write(tmp_path / "cmp")
    assert sorted(out) == ["comparison.json", "comparison.png", "correspondence_1_2.csv",
                           "correspondence_1_3.csv", "correspondence_2_3.csv"]
    meta = json.loads(out["comparison.json"].read_text())
    assert [v["name"] for v in meta["views"]] == ["coarse", "fine", "y"]
    lines = out["correspondence_1_2.csv"].read_text().splitlines()
    C = cmp.correspondence("coarse", "fine")
    assert lines[0] == "node_a,node_b,shared_rows" and len(lines) == C.nnz + 1
    assert sum(int(x.split(",")[2]) for x in lines[1:]) == C.sum()
    assert out["comparison.png"].read_bytes()[:4] == b"\x89PNG"


def test_compare_prebuilt_graphs(circles):
    X, _, ws = circles
    ga, gb = build_graph(X[:, 0], ws), build_graph(X[:, 1], ws)
    cmp = compare_views([ga, gb])
    assert cmp.names == ["lens (1)", "lens (2)"]
    assert cmp.pair(0, 1)["ari"] == 1.0
    assert np.isfinite(cmp.node_colour(0, 1)).all()


@pytest.mark.filterwarnings("ignore::lenswork.LensworkWarning")  # rows in no node, small data
def test_compare_errors(circles):
    X, _, ws = circles
    with pytest.raises(ParameterError, match="at least two views"):
        compare_views([X[:, 0]], ws)
    with pytest.raises(ParameterError, match="needs the workspace"):
        compare_views([X[:, 0], X[:, 1]])
    with pytest.raises(ParameterError, match="'partition' parameter of compare_views"):
        compare_views([X[:, 0], X[:, 1]], ws, partition="cluster")
    small = Workspace(X[:300])
    with pytest.raises(InputError, match="different numbers of rows"):
        compare_views([build_graph(X[:, 0], ws), build_graph(X[:300, 0], small)])
    cmp = compare_views({"x": X[:, 0], "y": X[:, 1]}, ws)
    with pytest.raises(ParameterError, match="No view 'z'"):
        cmp.pair("x", "z")


def _hand_graph(node_rows, edges, n_rows):
    """A LensGraph from explicit member lists and edges (no cover involved)."""
    from lenswork.graph import LensGraph

    rows = np.concatenate([np.asarray(r) for r in node_rows])
    cols = np.concatenate([np.full(len(r), j) for j, r in enumerate(node_rows)])
    M = sp.csr_matrix((np.ones(rows.size, dtype=int), (rows, cols)),
                      shape=(n_rows, len(node_rows)))
    V = len(node_rows)
    return LensGraph(M, np.arange(V)[:, None], edges, [1] * len(edges),
                     {"h": np.zeros((V, 3))}, lens_columns=["h"])


def test_a_small_loop_does_not_match_a_large_one():
    # view a: one loop through all 100 rows; view b: a loop through rows 0..19 only,
    # the other rows on a path. Jaccard of the loops' rows = 20 / 100 (by hand), below 0.5
    ring = [range(0, 26), range(25, 51), range(50, 76), list(range(75, 100)) + [0]]
    a = _hand_graph(ring, [[0, 1], [1, 2], [2, 3], [0, 3]], 100)
    small = [range(0, 6), range(5, 11), range(10, 16), list(range(15, 20)) + [0]]
    b = _hand_graph([*small, range(20, 60), range(59, 100)],
                    [[0, 1], [1, 2], [2, 3], [0, 3], [4, 5]], 100)
    cmp = compare_views([a, b])
    pair = cmp.pair(0, 1)
    loops = [f for f in pair["only_a"] if f["kind"] == "loop"]
    assert len(loops) == 1 and loops[0]["best_jaccard"] == pytest.approx(20 / 100, abs=1e-12)
    # component partitions: a = one block, b = two blocks (rows 0..19 | 20..99);
    # ARI against scikit-learn on the same labels
    assert_allclose(pair["ari"], adjusted_rand_score(cmp.labels[0], cmp.labels[1]), atol=1e-12)


# --------------------------------------------------------------------------- co-membership
def _brute_co_membership(A, B):
    """Weights w(r, s) = nodes shared, by a loop over all row pairs; then the stated forms."""
    A, B = np.asarray(A, dtype=np.int64), np.asarray(B, dtype=np.int64)
    n = A.shape[0]
    wa = [int(A[r] @ A[s]) for r in range(n) for s in range(r + 1, n)]
    wb = [int(B[r] @ B[s]) for r in range(n) for s in range(r + 1, n)]
    wa, wb = np.array(wa, dtype=float), np.array(wb, dtype=float)
    P = n * (n - 1) / 2
    E = wa.sum() * wb.sum() / P
    ari = (wa @ wb - E) / ((wa @ wa + wb @ wb) / 2 - E)
    jac = (wa @ wb) / (wa @ wa + wb @ wb - wa @ wb)
    return ari, jac


def _one_hot(labels):
    labels = np.asarray(labels)
    return (labels[:, None] == np.unique(labels)[None, :]).astype(int)


@pytest.mark.parametrize("seed", range(4))
def test_co_membership_of_partitions_is_the_sklearn_ari(seed):
    # one node per row in each view: the weights are 0/1 pair indicators and the
    # co-membership ARI is the ARI of Hubert and Arabie 1985 (scikit-learn as reference)
    rng = np.random.default_rng(seed)
    a, b = rng.integers(0, 4, 60), rng.integers(0, 6, 60)
    b[:30] = a[:30]  # some agreement
    co = co_membership(_one_hot(a), _one_hot(b))
    assert_allclose(co["ari"], adjusted_rand_score(a, b), rtol=0, atol=1e-12)
    # pair Jaccard: together-pairs in both over together-pairs in either, counted directly
    same_a = a[:, None] == a[None, :]
    same_b = b[:, None] == b[None, :]
    upper = np.triu(np.ones((60, 60), bool), 1)
    both = (same_a & same_b & upper).sum()
    either = ((same_a | same_b) & upper).sum()
    assert_allclose(co["jaccard"], both / either, rtol=0, atol=1e-12)


@pytest.mark.parametrize("seed", range(4))
def test_co_membership_of_overlapping_covers_matches_a_pair_count(seed):
    # overlapping nodes and rows in no node: against the loop over all row pairs
    rng = np.random.default_rng(10 + seed)
    A = (rng.uniform(size=(40, 7)) < 0.25).astype(int)
    B = (rng.uniform(size=(40, 5)) < 0.35).astype(int)
    ari, jac = _brute_co_membership(A, B)
    co = co_membership(sp.csr_matrix(A), B)
    assert_allclose([co["ari"], co["jaccard"]], [ari, jac], rtol=0, atol=1e-12)
    assert co["shared"] == sum(int(A[r] @ A[s]) * int(B[r] @ B[s])
                               for r in range(40) for s in range(r + 1, 40))
    same = co_membership(A, A)
    assert same["ari"] == 1.0 and same["jaccard"] == 1.0


def test_co_membership_trivial_case_and_errors():
    one = np.ones((5, 1), dtype=int)
    co = co_membership(one, one)
    assert co["trivial"] and co["ari"] == 1.0
    assert not co_membership(one, _one_hot([0, 0, 1, 1, 2]))["trivial"]
    with pytest.raises(InputError, match="different numbers of rows"):
        co_membership(one, np.ones((4, 1)))
    with pytest.raises(InputError, match="at least two rows"):
        co_membership(np.ones((1, 1)), np.ones((1, 1)))


def test_connected_views_are_flagged_trivial_and_told_apart_by_co_membership():
    # a noisy circle under x, y and cos(3 t): every graph is one component (the circle is
    # connected), so the component ARI is 1 for every pair -- trivially. The co-membership
    # tells them apart: the nodes of cos(3 t) are arcs a third as long as those of x and y
    rng = np.random.default_rng(77)
    t = rng.uniform(0, 2 * np.pi, 900)
    X = np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.03, (900, 2))
    ws = Workspace(X)
    cmp = compare_views({"x": X[:, 0], "x again": X[:, 0].copy(), "y": X[:, 1],
                         "cos3": np.cos(3 * t)}, ws)
    assert [s.n_components for s in cmp.summaries] == [1, 1, 1, 1]
    same, near, far = cmp.pair("x", "x again"), cmp.pair("x", "y"), cmp.pair("x", "cos3")
    assert all(p["ari"] == 1.0 and p["trivial"] for p in (same, near, far))
    assert same["co_ari"] == 1.0 and same["co_jaccard"] == 1.0
    assert far["co_ari"] < near["co_ari"] < 1.0 and far["co_jaccard"] < near["co_jaccard"]
    text = cmp.format_text()
    # the telling agreement leads: co-membership first, the trivial partition after it
    pair_lines = [ln for ln in text.splitlines() if ln.startswith("x vs cos3")]
    assert pair_lines[0].startswith("x vs cos3: co-membership ARI")
    assert "trivial: both are one block" in text
    assert repr(cmp).startswith("ViewComparison(4 views, co-membership ARI")
    A = cmp.agreement("co_ari")
    assert_allclose(A, A.T, rtol=0) and np.all(np.diag(A) == 1.0)
    # the score from the graphs equals co_membership on the rows both views hold
    rows = (cmp.labels[0] >= 0) & (cmp.labels[3] >= 0)
    ref = co_membership(cmp.graphs[0].membership[rows], cmp.graphs[3].membership[rows])
    assert far["co_ari"] == ref["ari"]
    meta = cmp.to_dict()["pairs"]
    assert {"trivial", "co_ari", "co_jaccard"} <= set(meta[0])
