"""The element clusterer (landmarks included) and the clusterer="auto" rule of build_graph."""

import warnings

import numpy as np
import pytest
from scipy.sparse.csgraph import connected_components
from sklearn.datasets import make_blobs, make_circles
from sklearn.neighbors import NearestNeighbors, kneighbors_graph

import lenswork.graph._settings as settings_module
from lenswork import ParameterError, Workspace
from lenswork.compare import adjusted_rand_index
from lenswork.graph import Cover, GraphSettings, build_graph
from lenswork.graph._build import lens_jitter
from lenswork.graph._cluster_element import cluster_element, landmark_priority


def _reference_components(X, k, cutoff=np.inf):
    """Weak components of scikit-learn's k-NN graph (self excluded), edges > cutoff dropped."""
    A = kneighbors_graph(X, k, mode="distance", include_self=False)
    A.data[A.data > cutoff] = 0
    A.eliminate_zeros()
    return connected_components(A, directed=True, connection="weak")[1]


def _same_partition(a, b):
    # adjusted Rand index 1 exactly for the same partition (Hubert and Arabie 1985)
    return adjusted_rand_index(a, b) == 1.0 and np.unique(a).size == np.unique(b).size


@pytest.mark.parametrize("d", [3, 9])  # kd-tree below 7 columns, brute force above
@pytest.mark.parametrize("cutoff", ["none", 1.2])
def test_element_components_are_those_of_sklearn_knn_graph(d, cutoff):
    # scikit-learn's kneighbors_graph and scipy's connected_components, built by hand
    X, _ = make_blobs(400, n_features=d, centers=4, cluster_std=0.6, random_state=3)
    labels, report = cluster_element(X, np.arange(400), k=6, cutoff=cutoff, min_size=1,
                                     fragments="report")
    ref = _reference_components(X, 6, np.inf if cutoff == "none" else cutoff)
    assert _same_partition(labels, ref)
    assert report["landmarks"] == 0 and report["groups"] == np.unique(ref).size


def test_landmark_element_matches_its_definition():
    # more points than landmarks in 8 columns: the landmarks' own k-NN graph gives the groups,
    # every other point takes the group of its nearest landmark (both from scikit-learn here)
    X, _ = make_blobs(900, n_features=8, centers=3, cluster_std=0.5, random_state=11)
    rows = np.arange(5000, 5900)
    labels, report = cluster_element(X, rows, k=8, cutoff="none", min_size=1,
                                     fragments="report", landmarks=150)
    assert report["landmarks"] == 150
    lm = np.sort(np.argsort(landmark_priority(rows), kind="stable")[:150])
    lm_lab = _reference_components(X[lm], 8)
    nearest = NearestNeighbors(n_neighbors=1).fit(X[lm]).kneighbors(X, return_distance=False)
    ref = lm_lab[nearest[:, 0]]
    assert _same_partition(labels, ref) and np.unique(ref).size == 3
    # the whole element searched exactly gives the same three blobs
    whole, rep = cluster_element(X, rows, k=8, cutoff="none", min_size=1, fragments="report",
                                 landmarks=0)
    assert rep["landmarks"] == 0 and _same_partition(whole, labels)


def test_landmark_element_with_one_group_and_a_finite_cutoff():
    # one blob and a far outlier: with a finite cut-off the outlier is a group of its own,
    # left out as a fragment; with no cut-off the landmarks form one group and every point
    # joins it (no search needed)
    rng = np.random.default_rng(5)
    X = np.vstack([rng.normal(size=(600, 8)), np.full((1, 8), 40.0)])
    rows = np.arange(601)
    far = 600
    labels, rep = cluster_element(X, rows, k=10, cutoff=5.0, min_size=5, fragments="report",
                                  landmarks=100)
    outlier_is_landmark = far in np.argsort(landmark_priority(rows), kind="stable")[:100]
    assert labels[far] == -1 and rep["left_out_points"] == 1 and not outlier_is_landmark
    assert (labels[:far] == 0).all()
    labels, rep = cluster_element(X, rows, k=10, cutoff="none", min_size=5, landmarks=100)
    assert (labels == 0).all() and rep["landmarks"] == 100


def test_landmark_priority_is_splitmix64():
    # the splitmix64 finaliser of Steele, Lea and Flood (OOPSLA 2014); its first output from
    # state 0 (row 0 here) is 0xE220A8397B1DCDAF in the reference code (from memory)
    assert int(landmark_priority(np.array([0]))[0]) == 0xE220A8397B1DCDAF
    p = landmark_priority(np.arange(100_000))
    assert np.unique(p).size == 100_000
    # roughly uniform: a quarter of the rows in each quarter of the range (binomial sd 137)
    counts = np.bincount((p >> np.uint64(62)).astype(np.int64), minlength=4)
    assert np.abs(counts - 25_000).max() < 5 * 137


def test_bad_landmarks():
    with pytest.raises(ParameterError, match="'landmarks' parameter of cluster_element"):
        cluster_element(np.zeros((5, 8)), np.arange(5), landmarks=1)


def _circles(n, extra, seed):
    X, _ = make_circles(n, noise=0.03, factor=0.5, random_state=seed)
    rng = np.random.default_rng(seed)
    return np.column_stack([X, rng.normal(0, 0.01, (n, extra))])


@pytest.mark.parametrize("n", [3000, 60_000])
def test_two_circles_on_either_side_of_the_threshold(n):
    # scikit-learn's make_circles: two circles, so two components with one loop each
    # (a circle's Mapper graph over a height lens is a cycle, Mapper 2007). 3,000 rows: the
    # shared-graph rule; 60,000 rows in 8 columns: the element rule, with landmarks in the
    # elements of more than 1,000 points (ELEMENT_LANDMARKS)
    X = _circles(n, 6, 0)
    g = build_graph(X[:, 0], Workspace(X), intervals=8)
    expected = "graph" if n <= settings_module.AUTO_GRAPH_MAX_ROWS else "element-knn"
    assert g.params["clusterer"] == expected
    assert g.provenance["auto_settings"]["clusterer"] == expected
    assert g.provenance["graph_settings"]["clusterer"] == expected
    s = g.summary()
    assert (s.n_components, s.loops) == (2, 2)
    assert all(c.rows > 0.3 * n for c in s.features_of("component"))
    if expected == "element-knn":
        assert g.fragments["landmark_elements"] > 0 and "neighbor_graph" not in g.provenance
        assert g.params["lens_jitter_rows"] == 1000
        assert "clusterer element-knn (auto)" in s.text()


def test_noisy_circle_has_one_loop_above_the_threshold():
    rng = np.random.default_rng(8)
    a = rng.uniform(0, 2 * np.pi, 55_000)
    X = np.column_stack([np.cos(a), np.sin(a), rng.normal(0, 0.08, (55_000, 6))])
    X[:, :2] += rng.normal(0, 0.08, (55_000, 2))
    g = build_graph(X[:, 0], Workspace(X))
    s = g.summary()
    assert g.params["clusterer"] == "element-knn"
    assert (s.n_components, s.loops, s.significant_holes) == (1, 1, 1)
    again = build_graph(X[:, 0], Workspace(X))  # same input and seed: the same graph
    assert (again.membership != g.membership).nnz == 0


def test_auto_reads_the_shared_graph_when_the_workspace_has_it(monkeypatch):
    monkeypatch.setattr(settings_module, "AUTO_GRAPH_MAX_ROWS", 100)
    X = _circles(400, 0, 2)
    ws = Workspace(X)
    s = GraphSettings()
    assert s.resolve(400, 1).clusterer == "element-knn"
    assert s.resolve(400, 1, workspace=ws).clusterer == "element-knn"
    ws.neighbors(15)
    assert s.resolve(400, 1, workspace=ws).clusterer == "graph"
    assert s.replace(k=31).resolve(400, 1, workspace=ws).clusterer == "element-knn"
    g = build_graph(X[:, 0], ws, intervals=6)
    assert g.params["clusterer"] == "graph" and "neighbor_graph" in g.provenance
    assert s.replace(clusterer="single").resolve(400, 1).clusterer == "single"
    assert GraphSettings.from_dict(s.resolve(400, 1).to_dict()).clusterer == "element-knn"
    assert s.to_dict()["clusterer"] == "auto"


def test_sample_jitter_equals_the_shared_graph_jitter_on_small_data():
    # up to 1,000 rows the sample is every row, and both neighbour searches are exact
    X = _circles(800, 1, 4)
    ws = Workspace(X)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        a = build_graph(X[:, :2], ws, clusterer="graph", intervals=5)
        b = build_graph(X[:, :2], ws, clusterer="element-knn", intervals=5)
    assert "lens_jitter_rows" not in a.params and b.params["lens_jitter_rows"] == 800
    np.testing.assert_allclose(a.params["lens_jitter"], b.params["lens_jitter"], rtol=1e-12)
    # and by hand, with scikit-learn's exact neighbours
    idx = NearestNeighbors(n_neighbors=16).fit(X).kneighbors(X, return_distance=False)[:, 1:]
    values = Cover(intervals=5, scale="balanced").fit(X[:, :2], ["x0", "x1"]).values_
    np.testing.assert_allclose(b.params["lens_jitter"], lens_jitter(values, idx), rtol=1e-12)
