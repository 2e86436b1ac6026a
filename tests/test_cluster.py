"""Tests of the clustering step: components on the shared graph, cut-off rules, fragments."""

import warnings

import networkx as nx
import numpy as np
import pytest
from numpy.testing import assert_allclose
from sklearn.cluster import DBSCAN, KMeans
from sklearn.neighbors import NearestNeighbors

import lenswork.workspace as workspace_module
from lenswork import ParameterError, Workspace
from lenswork.graph import Cover, build_graph, neighbor_cutoff
from lenswork.graph._cutoff import cut_indices


def node_sets(graph):
    return {frozenset(n.members.tolist()) for n in graph.nodes}


def reference_knn(X, k):
    """k nearest neighbours (self excluded) from scikit-learn, as an outside reference."""
    dist, idx = NearestNeighbors(n_neighbors=k + 1).fit(X).kneighbors(X)
    return idx[:, 1:], dist[:, 1:]


def reference_components(X, lens, intervals, overlap, k, cutoff):
    """Per element: networkx components of the k-NN edges inside it no longer than cutoff."""
    idx, dist = reference_knn(X, k)
    cover = Cover(intervals=intervals, overlap=overlap, scale="balanced").fit(lens)  # default
    rows, elements = cover.incidence()
    out = {}
    for e in np.unique(elements):
        pts = set(rows[elements == e].tolist())
        G = nx.Graph()
        G.add_nodes_from(pts)
        for p in pts:
            for q, d in zip(idx[p], dist[p]):
                if q in pts and d <= cutoff:
                    G.add_edge(p, int(q))
        out[int(e)] = [frozenset(c) for c in nx.connected_components(G)]
    return out, idx, dist


def blobs(rng, n=600):
    centres = np.array([[0.0, 0.0], [3.0, 0.5], [6.0, -0.5]])
    X = centres[rng.integers(0, 3, n)] + rng.normal(0, 0.4, (n, 2))
    return X


@pytest.mark.parametrize("cutoff", [0.25, "none"])
def test_graph_clusters_are_networkx_components(cutoff):
    rng = np.random.default_rng(201)
    X = blobs(rng)
    ws = Workspace(X)
    g = build_graph(X[:, 0], ws, intervals=5, overlap=0.3, cutoff=cutoff, min_size=1,
                    fragments="report")
    c = np.inf if cutoff == "none" else cutoff
    ref, _, _ = reference_components(X, X[:, 0], 5, 0.3, 15, c)
    # networkx.connected_components on the induced k-NN graph (scikit-learn neighbours)
    want = {comp for comps in ref.values() for comp in comps}
    assert node_sets(g) == want
    assert g.unassigned.size == 0


def test_min_size_report_leaves_small_groups_out():
    rng = np.random.default_rng(202)
    X = blobs(rng)
    ws = Workspace(X)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        g = build_graph(X[:, 0], ws, intervals=5, overlap=0.3, cutoff=0.2, min_size=8,
                        fragments="report")
    ref, _, _ = reference_components(X, X[:, 0], 5, 0.3, 15, 0.2)
    kept = {comp for comps in ref.values() for comp in comps if len(comp) >= 8}
    assert node_sets(g) == kept
    covered = set().union(*kept)
    # rows in no kept group are reported, not silently dropped
    assert set(g.unassigned.tolist()) == set(range(len(X))) - covered
    small = sum(len(c) for comps in ref.values() for c in comps if len(c) < 8)
    assert g.fragments["left_out_points"] == small
    assert g.fragments["fragment_groups"] == sum(
        1 for comps in ref.values() for c in comps if len(c) < 8
    )


def test_attach_rule_matches_brute_force():
    rng = np.random.default_rng(203)
    X = rng.normal(size=(1500, 12))
    lens = np.linalg.norm(X, axis=1)  # 12-d shells: slices of the k-NN graph fragment a lot
    ws = Workspace(X)
    min_size, cutoff = 10, 3.5  # cuts about 2 % of the edges: some fragments attach, some not
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        g = build_graph(lens, ws, intervals=10, overlap=0.3, cutoff=cutoff, min_size=min_size)
    ref, idx, _ = reference_components(X, lens, 10, 0.3, 15, cutoff)
    want, rounds_used = set(), 0
    for comps in ref.values():
        kept = [c for c in comps if len(c) >= min_size]
        members = [set(c) for c in kept]
        waiting = [set(c) for c in comps if len(c) < min_size]
        for round_ in range(8):  # the documented rule, written out, round by round
            owner = {p: i for i, m in enumerate(members) for p in m}
            moves = []
            for frag in waiting:
                # nearest point of a kept cluster among the one- and two-hop neighbours of
                # the fragment's points, if within the cut-off
                best = (np.inf, None)
                for p in frag:
                    hops = set(idx[p].tolist()) | {int(q) for r in idx[p] for q in idx[r]}
                    for q in hops:
                        if q in owner:
                            d = float(np.linalg.norm(X[p] - X[q]))
                            if d <= cutoff and d < best[0]:
                                best = (d, owner[q])
                if best[1] is not None:
                    moves.append((frag, best[1]))
            if not moves:
                break
            rounds_used = max(rounds_used, round_ + 1)
            for frag, target in moves:  # all fragments of a round decided together
                members[target] |= frag
                waiting.remove(frag)
        want |= {frozenset(m) for m in members}
    # both outcomes of the rule occur, and later rounds attach more than the first alone
    # (39 more groups here), so the case is not vacuous
    assert 0 < g.fragments["attached_groups"] < g.fragments["fragment_groups"]
    assert rounds_used > 1
    assert node_sets(g) == want


def test_attach_gives_back_rows_that_report_loses():
    rng = np.random.default_rng(204)
    X = rng.normal(size=(2000, 15))
    ws = Workspace(X)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        report = build_graph(X[:, 0], ws, intervals=8, fragments="report")
    attach = build_graph(X[:, 0], ws, intervals=8, fragments="attach")
    assert report.unassigned.size > 0
    assert attach.unassigned.size < report.unassigned.size
    # nodes only grow: every node of the report graph is inside a node of the attach graph
    assert all(any(a <= b for b in node_sets(attach)) for a in node_sets(report))


def test_auto_cutoff_worked_example():
    # 0..29 and one outlier at 100, k = 2: distances 1 and 2, and 71, 72 for the outlier.
    # log d over [median 0, max log 72 = 4.277] in 10 bins of 0.4277: bin 0 holds log 1,
    # bin 1 holds log 2 = 0.693, bin 2 [0.855, 1.283) is empty -> cutoff exp(0.8553) = 2.352
    # (worked by hand from the rule in lenswork.graph._cluster)
    ws = Workspace(np.append(np.arange(30.0), 100.0)[:, None])
    assert_allclose(neighbor_cutoff(ws, k=2), np.exp(np.log(72.0) * 2 / 10), rtol=1e-12)


def test_auto_cutoff_keeps_everything_without_a_gap():
    rng = np.random.default_rng(205)
    ws = Workspace(rng.normal(size=(3000, 3)))
    # a smooth density has no empty bin in its log-distance tail: nothing is cut
    assert neighbor_cutoff(ws) == np.inf


def test_fence_cutoff_is_tukeys_fence():
    rng = np.random.default_rng(206)
    X = rng.normal(size=(800, 3))
    ws = Workspace(X)
    _, dist = reference_knn(X, 15)
    q1, q3 = np.percentile(np.log(dist), [25, 75])
    # Tukey 1977, upper fence Q3 + 1.5 IQR (on log distances); numpy.percentile as reference
    assert_allclose(neighbor_cutoff(ws, cutoff="fence"), np.exp(q3 + 1.5 * (q3 - q1)),
                    rtol=1e-10)
    assert neighbor_cutoff(ws, cutoff="none") == np.inf
    assert neighbor_cutoff(ws, cutoff="0.5") == 0.5


def test_bad_cutoff():
    ws = Workspace(np.random.default_rng(207).normal(size=(50, 2)))
    with pytest.raises(ParameterError, match=r"'cutoff' parameter of build_graph must be a float"):
        neighbor_cutoff(ws, cutoff="gap")
    with pytest.raises(ParameterError, match="'cutoff'"):
        neighbor_cutoff(ws, cutoff=-1.0)


def test_single_linkage_gap_rule_two_blobs():
    rng = np.random.default_rng(208)
    X = np.vstack([rng.normal(0, 0.05, (40, 2)), rng.normal(0, 0.05, (40, 2)) + [10.0, 0.0]])
    # merge heights: 78 below ~0.2 and one of ~10 -> bins 1..8 of 10 are empty, the first gap
    # separates the blobs (the gap rule proposed with Mapper, 2007)
    g = build_graph(X[:, 1], X, intervals=1, clusterer="single", min_size=1)
    assert node_sets(g) == {frozenset(range(40)), frozenset(range(40, 80))}


def test_single_linkage_matches_scipy_cut():
    from scipy.cluster.hierarchy import fcluster, linkage

    rng = np.random.default_rng(209)
    X = blobs(rng, 300)
    g = build_graph(X[:, 0], X, intervals=3, overlap=0.2, clusterer="single", min_size=1,
                    fragments="report")
    cover = Cover(intervals=3, overlap=0.2, scale="balanced").fit(X[:, 0])  # the default
    rows, elements = cover.incidence()
    want = set()
    for e in range(3):
        pts = rows[elements == e]
        Z = linkage(X[pts], "single")
        h = Z[:, 2]
        counts, edges = np.histogram(h, bins=10, range=(h.min(), h.max()))
        empty = np.flatnonzero(counts == 0)
        labels = (np.zeros(pts.size, int) if empty.size == 0
                  else fcluster(Z, edges[empty[0]], criterion="distance"))
        want |= {frozenset(pts[labels == c].tolist()) for c in np.unique(labels)}
    # scipy.cluster.hierarchy linkage + fcluster at the first empty bin, as reference
    assert node_sets(g) == want


def test_sklearn_clusterer_dbscan_noise_is_reported():
    rng = np.random.default_rng(210)
    X = np.vstack([blobs(rng, 300), rng.uniform(-8, 14, (15, 2))])
    est = DBSCAN(eps=0.5, min_samples=5)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        g = build_graph(X[:, 0], X, intervals=1, clusterer=est, min_size=1, fragments="report")
    labels = DBSCAN(eps=0.5, min_samples=5).fit_predict(X)  # scikit-learn as reference
    want = {frozenset(np.flatnonzero(labels == c).tolist()) for c in set(labels) - {-1}}
    noise = set(np.flatnonzero(labels == -1).tolist())
    # each noise point is its own one-point group: kept only when min_size = 1 ...
    assert node_sets(g) == want | {frozenset([p]) for p in noise}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        g2 = build_graph(X[:, 0], X, intervals=1, clusterer=est, min_size=2, fragments="report")
    # ... and reported as rows in no node otherwise
    assert node_sets(g2) == want
    assert set(g2.unassigned.tolist()) == noise
    assert g2.params["clusterer"]["estimator"] == "DBSCAN"


def test_sklearn_clusterer_gets_the_seed():
    rng = np.random.default_rng(211)
    X = blobs(rng, 400)
    est = KMeans(n_clusters=2, n_init=2)  # random_state unset: build_graph supplies its seed
    a = build_graph(X[:, 0], X, intervals=3, clusterer=est, random_state=5)
    b = build_graph(X[:, 0], X, intervals=3, clusterer=est, random_state=5)
    assert a == b
    assert est.random_state is None  # the estimator given is left untouched (cloned)


def test_one_shared_neighbour_graph(monkeypatch):
    calls = []
    original = workspace_module.neighbor_graph

    def counting(*args, **kwargs):
        calls.append(kwargs.get("k", args[1] if len(args) > 1 else None))
        return original(*args, **kwargs)

    monkeypatch.setattr(workspace_module, "neighbor_graph", counting)
    rng = np.random.default_rng(212)
    X = rng.normal(size=(500, 3))
    ws = Workspace(X)
    for intervals, overlap in [(5, 0.2), (8, 0.3), (12, 0.5)]:
        build_graph(X[:, 0], ws, intervals=intervals, overlap=overlap)
    assert len(calls) == 1  # every graph reads the workspace's cached neighbour graph
    c = neighbor_cutoff(ws)
    assert cut_indices(ws, 15, "euclidean", c) is cut_indices(ws, 15, "euclidean", c)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"clusterer": "kmeans"}, r"'clusterer' parameter of build_graph must be a str among"),
        ({"clusterer": object()}, "a scikit-learn clusterer with fit_predict"),
        ({"min_size": 0}, r"'min_size' parameter of build_graph must be an int in \[1, inf\)"),
        ({"fragments": "drop"}, r"'fragments' parameter of build_graph must be a str among"),
        ({"min_size": 10_000}, "No cover element holds a group of at least min_size=10000"),
    ],
)
def test_bad_clustering_parameters(kwargs, match):
    rng = np.random.default_rng(213)
    X = rng.normal(size=(200, 2))
    with pytest.raises(ParameterError, match=match):
        build_graph(X[:, 0], X, **kwargs)


def test_single_linkage_refuses_huge_elements(monkeypatch):
    import lenswork.graph._cluster_single as cluster_module

    monkeypatch.setattr(cluster_module, "SINGLE_MAX_POINTS", 50)
    rng = np.random.default_rng(214)
    X = rng.normal(size=(200, 2))
    with pytest.raises(ParameterError, match="has 200 points \\(limit 50\\)"):
        build_graph(X[:, 0], X, intervals=1, clusterer="single")
