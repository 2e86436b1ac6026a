"""Reduced judgement suite: significant features of shapes with a known Reeb graph.

The datasets are those of tests/benchmarks/bench_judgement.py (tests/_judgement_data.py). The
known b1 of each shape's Reeb graph: a closed curve 1, a torus 1 (its genus), two touching
circles 2, a tree 0, the sphere 0 (Carrière and Oudot, FoCM 2018, section 2; Edelsbrunner and
Harer, "Computational Topology", 2010, section VI.4); sliding windows of a periodic signal lie on
a closed curve (Perea and Harer, FoCM 2015). A Gaussian blob is contractible: every loop of its
Mapper graph comes from the clustering of noisy slices, none is structure.
"""

import warnings

import numpy as np
import pytest
import scipy.sparse as sp
from _judgement_data import (
    NOISE_COLUMN,
    build,
    circle_highd,
    figure_eight,
    iris,
    sliding_windows,
    sphere,
    torus,
    y_shape,
)

from lenswork import LensworkWarning, Workspace, build_graph, compute_lenses, screen
from lenswork.criteria import (
    heat_kernel_affinity,
    laplacian_score,
    neighbour_jitter,
    smoothness,
)
from lenswork.graph._thresholds import lens_persistence, resolution_threshold


def _diagram(builder, lens):
    case, cloud = build(builder, seed=0)
    ws = Workspace(cloud, random_state=0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        g = build_graph(lens(case.X), ws)  # build_graph's defaults: 10 intervals, overlap 0.3
    return case, g, lens_persistence(g)


@pytest.mark.parametrize("builder, lens", [
    (circle_highd, lambda X: X[:, 0]),       # height on a circle (+ 8 noise dims)
    (torus, lambda X: X[:, 0]),              # an in-plane coordinate on the torus
    (figure_eight, lambda X: X[:, 0]),       # across both loops of the 8
    (sliding_windows, lambda X: X[:, 0]),    # first window value: once round the curve
    (sphere, lambda X: X[:, 2]),             # height on the sphere
    (y_shape, lambda X: np.hypot(X[:, 0], X[:, 1])),  # distance from the fork
])
def test_shapes_show_their_known_b1_as_significant_loops(builder, lens):
    case, g, d = _diagram(builder, lens)
    assert d.count("loop") == g.summary().loops  # every loop of the graph is a diagram point
    assert d.count("loop", significant=True) == case.b1


def test_closed_curve_loop_spans_the_whole_range():
    _, _, d = _diagram(circle_highd, lambda X: X[:, 0])
    assert d.loops[:, 2].max() > 0.9


def test_tree_arms_are_significant_branches():
    # three arms rising from the fork under the distance to it: the highest tip is the
    # component's max, the other two are upward branches spanning (nearly) the whole range
    case, _, d = _diagram(y_shape, lambda X: np.hypot(X[:, 0], X[:, 1]))
    assert d.count("up", significant=True) == case.flares - 1
    assert d.count("down", significant=True) == 0


@pytest.mark.parametrize("seed", range(4))
def test_noise_cycles_of_a_blob_are_not_significant(seed):
    rng = np.random.default_rng(880 + seed)
    X = rng.normal(size=(1000, 10))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        g = build_graph(np.linalg.norm(X, axis=1), Workspace(X, random_state=0))
    d = lens_persistence(g)
    assert d.count("loop", significant=True) == 0
    assert d.count("down", significant=True) + d.count("up", significant=True) == 0


def test_pure_noise_lens_has_no_smoothness():
    # He, Cai and Niyogi 2005: a feature unrelated to the neighbour graph scores about 1
    case, cloud = build(circle_highd, seed=0)
    S = heat_kernel_affinity(Workspace(cloud, random_state=0), k=15)
    height, noise = smoothness(laplacian_score(
        np.c_[case.X[:, 0], cloud.passthrough["noise"]], S))
    assert height > 0.9 and noise < 0.1


def test_jitter_rule_drops_the_loops_of_a_jittery_lens_on_a_sphere():
    # The sphere is simply connected: the Reeb graph of any lens on it is a tree (b1 = 0). A
    # kernel density lens on a uniform sphere is sampling noise smoothed by the kernel: it
    # jitters between data neighbours by about one interval length, its slices are ragged, and
    # the clustering makes long loops. With the neighbour jitter in the threshold they do not
    # count; a smooth lens (the first principal coordinate) keeps its threshold near 2 L.
    case, cloud = build(sphere, seed=0)
    ws = Workspace(cloud, random_state=0)
    S = heat_kernel_affinity(ws, k=15)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        table = compute_lenses(ws, ["density", "pca:components=1"])
        for col in table.columns:
            v = np.asarray(col.values)
            g = build_graph(v, ws)
            jitter = neighbour_jitter(v, S)
            d = lens_persistence(g, jitter=jitter)
            assert d.threshold == pytest.approx(resolution_threshold(10, 0.3, jitter))
            assert d.count("loop", significant=True) == case.b1, col.name
    # the density lens is the jittery one: delta of the order of an interval length L = 1 / 7.3
    v = np.asarray(table["density"].values)
    assert neighbour_jitter(v, S) > 0.5 / 7.3


# ----------------------------------------------------------------------------- the screen itself
def _screened(builder):
    case, cloud = build(builder, seed=0)
    ws = Workspace(cloud, random_state=0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        result = screen(ws, extra=[f"column:name={NOISE_COLUMN}"])
    return case, ws, result


def _single_lens_order(result):
    """The screen's single-lens ranking: merit, then smoothness (as its table orders merit 0)."""
    follows = np.nan_to_num(result.scores["smoothness"], nan=0.0)
    m = len(result.names)
    return sorted(range(m), key=lambda j: (-result.merit[j], -follows[j], j))


def test_iris_chosen_pair_separates_the_species_and_noise_ranks_last():
    # scikit-learn's iris (Fisher 1936): 150 rows, three species. The measure of
    # tests/benchmarks/bench_judgement.py: balanced accuracy of scikit-learn's 15-nearest-neighbour
    # classifier, 5-fold stratified CV, on the ranks of a pair; the chosen pair must be in the top
    # quarter of all candidate pairs. (pca_1 + pca_2 reach 0.940 and the chosen pair 0.933: one
    # flower of 150, a binomial standard error of 0.02; the benchmark reports it.)
    from itertools import combinations

    from scipy.stats import rankdata
    from sklearn.model_selection import StratifiedKFold, cross_val_score
    from sklearn.neighbors import KNeighborsClassifier

    case, ws, result = _screened(iris)
    names = result.names
    R = np.column_stack([rankdata(result.lenses[c].values) for c in names])
    cv = StratifiedKFold(5, shuffle=True, random_state=0)

    def acc(pair):
        return cross_val_score(KNeighborsClassifier(15), R[:, list(pair)], case.labels, cv=cv,
                               scoring="balanced_accuracy").mean()

    pairs = {p: acc(p) for p in combinations(range(len(names)), 2)}
    chosen = tuple(sorted(names.index(c) for c in result.selected))
    assert len(chosen) == 2
    better = sum(v > pairs[chosen] + 1e-12 for v in pairs.values())
    assert better < len(pairs) // 4
    # a lens of pure noise (a passthrough column, not a feature) ranks last, with merit 0
    order = _single_lens_order(result)
    noise = names.index(f"column_{NOISE_COLUMN}")
    assert order[-1] == noise and result.merit[noise] == 0.0
    # 150 rows: the probe is not blind, its structure scores differ between lenses
    structure = result.scores["structure"][result.usable]
    assert np.unique(np.round(structure, 6)).size > 3


def test_circle_top_lens_shows_one_significant_loop_and_noise_ranks_last():
    # the unit circle (+ 8 noise dimensions): a closed curve, b1 = 1 for any generic lens
    # (Carrière and Oudot, FoCM 2018, section 2). The top lens's default graph must show exactly
    # one significant loop; the noise lens ranks last.
    from lenswork.criteria import heat_kernel_affinity

    case, ws, result = _screened(circle_highd)
    order = _single_lens_order(result)
    top = result.names[order[0]]
    g = build_graph(result.lenses.select([top]), ws)
    v = np.asarray(result.lenses[top].values, dtype=np.float64)
    d = lens_persistence(g, jitter=neighbour_jitter(v, heat_kernel_affinity(ws, k=15)))
    assert d.count("loop", significant=True) == case.b1
    assert result.names[order[-1]] == f"column_{NOISE_COLUMN}"
    # every selected lens follows the circle: smoothness well above a noise lens's 0
    for name in result.selected:
        assert result.scores["smoothness"][result.names.index(name)] > 0.5


def test_heat_weights_keep_far_rows_of_heavy_tailed_data_attached():
    # scikit-learn's bundled wine (z-scored) plus five far rows (a heavy tail, as counts that
    # are mostly 0 have): the heat kernel of Belkin and Niyogi (2003), exp(-d^2 / sigma^2)
    # with sigma the median neighbour distance, is unchanged for every row whose nearest
    # neighbour lies within sigma; a far row's distances are measured from its reach
    # d_1 - sigma (local connectivity, McInnes, Healy and Melville 2018), so its nearest edge
    # weighs exp(-1) (closed form) and the graph stays in one piece (scipy's
    # connected_components as the reference).
    from scipy.sparse.csgraph import connected_components
    from sklearn.datasets import load_wine
    from sklearn.neighbors import NearestNeighbors

    from lenswork.lenses import laplacian_eigenmaps
    from lenswork.lenses._affinity import knn_affinity

    X = load_wine().data
    X = (X - X.mean(axis=0)) / X.std(axis=0)
    far = X[:5] + np.diag([8.0, 10.0, 12.0, 14.0, 16.0, 0, 0, 0, 0, 0, 0, 0, 0])[:5]
    X = np.vstack([X, far])
    n, k = X.shape[0], 10
    ws = Workspace(X, random_state=0)
    graph = ws.neighbors(k)
    W, _ = knn_affinity(graph, "heat")
    dist, idx = NearestNeighbors(n_neighbors=k + 1).fit(X).kneighbors(X)
    dist, idx = dist[:, 1:], idx[:, 1:]
    sigma = np.median(dist[dist > 0])
    bulk = dist[:, 0] <= sigma
    assert bulk.sum() > 0.8 * n and not bulk[-5:].any()
    plain = np.exp(-((dist / sigma) ** 2))
    for i in np.flatnonzero(bulk)[:40]:
        for j, w in zip(idx[i], plain[i]):
            if w >= 1e-10:
                assert W[i, j] >= w - 1e-12  # symmetric: the larger of the two ends' weights
    for i in range(n - 5, n):
        assert W[i].max() == pytest.approx(np.exp(-1.0), rel=1e-9)
    assert connected_components(W, directed=False)[0] == 1
    # the plain heat kernel cuts the far rows off: the graph falls apart
    keep = plain >= 1e-10
    A = sp.csr_matrix((plain[keep], (np.repeat(np.arange(n), k)[keep.ravel()],
                                     idx[keep])), shape=(n, n))
    assert connected_components(A.maximum(A.T), directed=False)[0] > 1
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        _, info = laplacian_eigenmaps(X, components=2, k=k, return_info=True, random_state=0)
    assert info["graph_components"] == 1
    assert info["eigenvalues"][0] > 1e-6  # not an eigenvector sitting on a detached row
