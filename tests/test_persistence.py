"""Extended persistence of a function on a graph (lenswork.graph._persistence's public API).

References used below: Cohen-Steiner, Edelsbrunner and Harer, "Extending persistence using
Poincaré and Lefschetz duality", FoCM 2009 (the extended filtration and its pairing);
Edelsbrunner and Harer, "Computational Topology", AMS 2010, ch. VII (persistence from ranks by
inclusion-exclusion; the column reduction); Carrière and Oudot, FoCM 2018 (features of a
graph's lens as extended-persistence points).
"""

from collections import Counter

import networkx as nx
import numpy as np
import pytest

from lenswork import ParameterError, build_graph
from lenswork.graph._persistence import extended_persistence
from lenswork.graph._thresholds import lens_persistence, resolution_threshold


# --------------------------------------------------------------------------- references
def _random_graph(rng, V, p):
    G = nx.gnp_random_graph(V, p, seed=int(rng.integers(1 << 30)))
    return G, np.array(list(G.edges()), dtype=np.int64).reshape(-1, 2)


def _h0_by_ranks(G, f):
    """H0 pairs of the sublevel filtration from ranks at all thresholds (brute force).

    beta(s, t) = number of components of G_{<=t} holding a vertex of G_{<=s}
    (the rank of H0(G_s) -> H0(G_t)); the multiplicity of the point (a_i, a_j) is
    beta(a_i, a_{j-1}) - beta(a_i, a_j) - beta(a_{i-1}, a_{j-1}) + beta(a_{i-1}, a_j)
    (Edelsbrunner and Harer 2010, section VII.1, the persistence "k-triangle" lemma).
    Returns the multiset of finite pairs with birth < death.
    """
    levels = np.unique(f)

    def beta(i, j):
        if i < 0:
            return 0
        s, t = levels[i], levels[j]
        sub = G.subgraph([v for v in G if f[v] <= t])
        born = {v for v in G if f[v] <= s}
        return sum(1 for comp in nx.connected_components(sub) if comp & born)

    out = Counter()
    K = levels.size
    for i in range(K):
        for j in range(i + 1, K):
            mu = beta(i, j - 1) - beta(i, j) - beta(i - 1, j - 1) + beta(i - 1, j)
            if mu:
                out[(float(levels[i]), float(levels[j]))] += mu
    return out


def _extended_by_dense_reduction(E, f):
    """Every pair of the extended filtration by the standard dense Z/2 column reduction.

    Cohen-Steiner, Edelsbrunner and Harer 2009, section 3: the vertices and edges in
    increasing order (edge at the max of its ends), a cone apex, then the cones over the
    vertices and edges in decreasing order (cone edge at f(v), cone triangle at the min of
    its edge's ends). Written independently of the library (numpy boolean matrix, the
    algorithm of Edelsbrunner and Harer 2010, section VII.1). Returns Counters of loops
    (Ext1) as (low, high) pairs and upward branches (Rel1) as (saddle, max) pairs.
    """
    V = f.size
    asc = [(f[v], 0, v, ("v", v)) for v in range(V)]
    asc += [(max(f[a], f[b]), 1, i, ("e", i)) for i, (a, b) in enumerate(E)]
    asc.sort()
    desc = [(-f[v], 1, v, ("cv", v)) for v in range(V)]
    desc += [(-min(f[a], f[b]), 2, i, ("ce", i)) for i, (a, b) in enumerate(E)]
    desc.sort()
    simplices = [s[3] for s in asc] + [("apex", 0)] + [s[3] for s in desc]
    index = {s: k for k, s in enumerate(simplices)}
    n = len(simplices)
    D = np.zeros((n, n), dtype=bool)
    for k, (kind, i) in enumerate(simplices):
        if kind == "e":
            a, b = E[i]
            D[index[("v", a)], k] = D[index[("v", b)], k] = True
        elif kind == "cv":
            D[index[("apex", 0)], k] = D[index[("v", i)], k] = True
        elif kind == "ce":
            a, b = E[i]
            D[index[("e", i)], k] = True
            D[index[("cv", a)], k] = D[index[("cv", b)], k] = True
    low_of = {}
    loops, ups = Counter(), Counter()
    for k in range(n):
        while D[:, k].any():
            low = int(np.flatnonzero(D[:, k])[-1])
            if low not in low_of:
                break
            D[:, k] ^= D[:, low_of[low]]
        if not D[:, k].any():
            continue
        low = int(np.flatnonzero(D[:, k])[-1])
        low_of[low] = k
        kind, i = simplices[k]
        if kind != "ce":
            continue
        a, b = E[i]
        death = float(min(f[a], f[b]))
        lk, li = simplices[low]
        if lk == "e":
            x, y = E[li]
            loops[(death, float(max(f[x], f[y])))] += 1
        elif lk == "cv" and f[li] > death:
            ups[(death, float(f[li]))] += 1
    return loops, ups


def _points(d, kind):
    keep = d.kind == kind
    lo = np.minimum(d.birth, d.death)[keep]
    hi = np.maximum(d.birth, d.death)[keep]
    return Counter(zip(lo.tolist(), hi.tolist()))


# --------------------------------------------------------------------------- closed forms
@pytest.mark.parametrize("n", [4, 7, 30])
def test_circle_height_has_one_loop_spanning_the_range(n):
    # Cohen-Steiner et al. 2009, section 2: the circle under the height function has one
    # extended H1 point (min, max) and one extended H0 point (min, max), nothing else.
    rng = np.random.default_rng(11)
    t = np.sort(rng.uniform(0, 2 * np.pi, n))
    f = np.sin(t)
    E = [[i, (i + 1) % n] for i in range(n)]
    d = extended_persistence(E, f)
    assert d.counts() == {"component": (1, 1), "loop": (1, 1), "down": (0, 0), "up": (0, 0)}
    np.testing.assert_allclose(d.loops, [[f.min(), f.max(), 1.0]], atol=1e-12)


@pytest.mark.parametrize("h", [0.5, 1.0, 2.5])
def test_bump_on_a_path_gives_a_branch_of_its_height(h):
    # A path rising 0 .. 10 with a dip of depth h after a local max at 5: one downward branch
    # (born at the local min 5 - h, dies at 5 where it merges) and one upward branch (born at
    # the local max 5, dies at 5 - h); closed form, each of persistence h (from the elder rule,
    # Edelsbrunner and Harer 2010, section VII.1).
    f = np.array([0.0, 2.5, 5.0, 5.0 - h, 7.5, 10.0])
    E = [[i, i + 1] for i in range(5)]
    d = extended_persistence(E, f)
    assert _points(d, "down") == Counter({(5.0 - h, 5.0): 1})
    assert _points(d, "up") == Counter({(5.0 - h, 5.0): 1})
    assert _points(d, "component") == Counter({(0.0, 10.0): 1})
    np.testing.assert_allclose(d.persistence[d.kind == "down"], [h], rtol=1e-12)
    np.testing.assert_allclose(d.significance[d.kind == "up"], [h / 10.0], rtol=1e-12)


def test_y_tree_under_height_has_two_downward_branches():
    # A Y standing on its two feet (stem on top). Under the height function the feet at
    # heights 0 and -1 are two local minima that merge at the fork (height 1): the elder rule
    # pairs the younger minimum (0) with the fork, a downward branch of persistence 1; the older
    # (-1) is the component's minimum, the Ext0 point (-1, 3). Closed form by the elder rule
    # (Edelsbrunner and Harer 2010, VII.1).
    # vertices: 0 top of stem (3), 1 fork (1), 2..3 left foot chain (0.5, 0), 4..5 right (0.2, -1)
    f = np.array([3.0, 1.0, 0.5, 0.0, 0.2, -1.0])
    E = [[0, 1], [1, 2], [2, 3], [1, 4], [4, 5]]
    d = extended_persistence(E, f)
    assert _points(d, "down") == Counter({(0.0, 1.0): 1})
    assert _points(d, "component") == Counter({(-1.0, 3.0): 1})
    assert d.count("up") == 0 and d.count("loop") == 0
    # Upside down, the same Y is a stem with two upward branches: the lower tip pairs with the
    # fork (Rel1), the higher is the component's max (duality, Cohen-Steiner et al. 2009).
    d = extended_persistence(E, -f)
    assert _points(d, "up") == Counter({(-1.0, 0.0): 1})
    assert d.count("down") == 0


def test_figure_eight_under_height_has_two_loops():
    # Two circles stacked (an 8 standing up) under the height function: two extended H1 points,
    # the lower loop (0, 1) and the upper loop (1, 2), both meeting at the crossing height 1.
    # Closed form (Cohen-Steiner et al. 2009, each loop spans its circle's height range).
    f = np.array([1.0, 0.5, 0.0, 0.5, 1.5, 2.0, 1.5])
    E = [[0, 1], [1, 2], [2, 3], [3, 0], [0, 4], [4, 5], [5, 6], [6, 0]]
    d = extended_persistence(E, f)
    assert _points(d, "loop") == Counter({(0.0, 1.0): 1, (1.0, 2.0): 1})
    np.testing.assert_allclose(sorted(d.loops[:, 2]), [0.5, 0.5])


# --------------------------------------------------------------------------- references
@pytest.mark.parametrize("seed", range(6))
def test_h0_pairs_match_the_rank_brute_force(seed):
    rng = np.random.default_rng(5000 + seed)
    G, E = _random_graph(rng, 14, 0.18)
    f = rng.integers(0, 6, 14).astype(float)  # integer values: many ties
    d = extended_persistence(E, f, n_nodes=14)
    assert _points(d, "down") == _h0_by_ranks(G, f)
    up = Counter({(-b, -a): m for (a, b), m in _h0_by_ranks(G, -f).items()})
    assert _points(d, "up") == up


@pytest.mark.parametrize("seed", range(8))
def test_loops_match_a_dense_reduction_and_the_cycle_rank(seed):
    rng = np.random.default_rng(7100 + seed)
    V = int(rng.integers(5, 16))
    G, E = _random_graph(rng, V, 0.3)
    f = rng.normal(size=V) if seed % 2 else rng.integers(0, 4, V).astype(float)
    d = extended_persistence(E, f, n_nodes=V)
    loops, ups = _extended_by_dense_reduction(E.tolist(), f)
    assert _points(d, "loop") == loops
    assert _points(d, "up") == ups
    # networkx: the cycle rank E - V + C is the number of extended H1 points
    b1 = G.number_of_edges() - V + nx.number_connected_components(G)
    assert d.count("loop") == b1
    assert d.count("component") == nx.number_connected_components(G)


def test_loops_keep_their_persistence_under_negation():
    # Extended persistence duality (Cohen-Steiner et al. 2009, section 4): the Ext1 points of
    # -f are those of f reflected, so the multiset of loop spans is the same.
    rng = np.random.default_rng(909)
    _, E = _random_graph(rng, 25, 0.15)
    f = rng.normal(size=25)
    a = extended_persistence(E, f, n_nodes=25)
    b = extended_persistence(E, -f, n_nodes=25)
    np.testing.assert_allclose(np.sort(a.persistence[a.kind == "loop"]),
                               np.sort(b.persistence[b.kind == "loop"]), atol=1e-12)


def test_significance_and_threshold():
    f = np.array([0.0, 2.0, 1.0, 4.0])
    d = extended_persistence([[0, 1], [1, 2], [2, 3]], f, threshold=0.3)
    # persistence / range: the bump of height 1 over range 4 has significance 0.25 < 0.3
    np.testing.assert_allclose(d.significance[d.kind == "down"], [0.25])
    assert d.count("down", significant=True) == 0 and d.count("component", significant=True) == 1
    flat = extended_persistence([[0, 1]], [1.0, 1.0])
    assert flat.range == 0.0 and flat.significance.tolist() == [0.0]


def test_resolution_threshold_closed_form():
    # 2 L over the midpoint span (N - 1) L (1 - p): 2 / ((N - 1)(1 - p)) (module notes)
    assert resolution_threshold(10, 0.3) == pytest.approx(2 / (9 * 0.7))
    assert resolution_threshold(5, 0.0) == pytest.approx(0.5)
    assert resolution_threshold(1, 0.2) == float("inf")


def test_lens_persistence_on_a_mapper_graph_of_a_circle():
    # The height function on a circle: the Reeb graph is a circle, one loop over the whole range
    # (Carrière and Oudot 2018); the Mapper graph's loop spans every interval.
    rng = np.random.default_rng(31)
    t = rng.uniform(0, 2 * np.pi, 800)
    X = np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.02, (800, 2))
    g = build_graph(X[:, 1], X, intervals=10, overlap=0.3)
    d = lens_persistence(g)
    assert d.count("loop") == g.summary().loops
    assert d.count("loop", significant=True) == 1
    assert d.loops[:, 2].max() == pytest.approx(1.0)
    assert lens_persistence(g, jitter=0.0).threshold == pytest.approx(
        resolution_threshold(10, 0.3))
    # by default the graph's own jitter: overall for the threshold, per end node for a point
    delta = g.params["lens_jitter"][0]
    assert d.threshold == pytest.approx(resolution_threshold(10, 0.3, jitter=delta))
    assert d.thresholds is not None and (d.thresholds >= resolution_threshold(10, 0.3)).all()
    assert lens_persistence(g, g.lens_columns[0]).counts() == d.counts()


def test_errors():
    with pytest.raises(ParameterError, match="NaN or infinite value at vertex 1"):
        extended_persistence([[0, 1]], [0.0, np.nan])
    with pytest.raises(ParameterError, match="outside 0..1"):
        extended_persistence([[0, 2]], [0.0, 1.0])
    with pytest.raises(ParameterError, match="self-loop at edge 0"):
        extended_persistence([[1, 1]], [0.0, 1.0])
    with pytest.raises(ParameterError, match="3 vertex values for 4 vertices"):
        extended_persistence([], [0.0, 1.0, 2.0], n_nodes=4)
    rng = np.random.default_rng(2)
    X = rng.normal(size=(200, 2))
    g = build_graph(X[:, 0], X, intervals=4)
    with pytest.raises(ParameterError, match="no lens 'nope'"):
        lens_persistence(g, "nope")


def test_structure_significance_counts_significant_features_only():
    from lenswork.graph._structure_score import structure_significance

    ring = extended_persistence([[i, (i + 1) % 6] for i in range(6)],
                                [0.0, 1, 2, 3, 2, 1], threshold=0.3)
    # one loop of significance 1: T = 1, floor + (1 - floor)(1 - 1/2) = 0.625 (closed form)
    assert structure_significance(ring) == pytest.approx(0.625)
    # a bump of significance 0.25 below the threshold 0.3 counts for nothing: the floor
    bump = extended_persistence([[0, 1], [1, 2], [2, 3]], [0.0, 2.0, 1.0, 4.0], threshold=0.3)
    assert structure_significance(bump) == pytest.approx(0.25)
    # the median over cover settings: two of three diagrams without the loop
    assert structure_significance([ring, bump, bump]) == pytest.approx(0.25)
    with pytest.raises(ParameterError, match="No diagram point kind 'hole'"):
        structure_significance(ring, weights={"hole": 1.0})
