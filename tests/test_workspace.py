"""The shared neighbour graph and the Workspace cache."""

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal
from sklearn.datasets import load_iris
from sklearn.metrics import pairwise_distances
from sklearn.neighbors import NearestNeighbors

from lenswork import InputError, ParameterError, Workspace, neighbor_graph


@pytest.mark.parametrize("metric", ["euclidean", "manhattan", "chebyshev", "cosine"])
def test_exact_graph_matches_sklearn_on_iris(metric):
    # Reference: scikit-learn NearestNeighbors on the bundled iris data. Iris has
    # duplicate rows, so neighbours are compared by distance (ties may swap indices).
    X = load_iris().data
    g = neighbor_graph(X, k=10, metric=metric, method="exact")
    nn = NearestNeighbors(n_neighbors=12, metric=metric, algorithm="brute").fit(X)
    dist, idx = nn.kneighbors(X)
    # sklearn returns the point itself (or an exact duplicate) at distance 0 first
    assert_allclose(g.distances, dist[:, 1:11], atol=1e-12)  # same distances to round-off
    assert not (g.indices == np.arange(len(X))[:, None]).any()  # self excluded
    # Index sets agree wherever the 10th and 11th neighbour are not tied.
    for i in np.flatnonzero(dist[:, 11] - dist[:, 10] > 1e-9):
        expected = set(idx[i, :12].tolist()) - {i}
        expected = {j for j in expected if np.linalg.norm(X[j] - X[i]) <= dist[i, 10] + 1e-12}
        if len(expected) == 10:
            assert set(g.indices[i].tolist()) == expected

def test_exact_graph_matches_brute_force_distances():
    # Reference: brute-force numpy distances written here.
    rng = np.random.default_rng(4821)
    X = rng.normal(size=(120, 4))
    g = neighbor_graph(X, k=7)
    D = np.sqrt(((X[:, None, :] - X[None, :, :]) ** 2).sum(-1))
    np.fill_diagonal(D, np.inf)
    assert_allclose(g.distances, np.sort(D, axis=1)[:, :7], rtol=1e-12)


def test_approximate_graph_recall_and_determinism(pynndescent_ready):
    rng = np.random.default_rng(77)
    X = rng.normal(size=(3000, 10))
    a = neighbor_graph(X, k=15, method="approximate", random_state=3)
    b = neighbor_graph(X, k=15, method="approximate", random_state=3)
    assert a.method == "approximate"
    assert_array_equal(a.indices, b.indices)  # same seed, same graph, bit for bit
    assert_array_equal(a.distances, b.distances)
    assert not (a.indices == np.arange(len(X))[:, None]).any()
    assert np.all(np.diff(a.distances, axis=1) >= 0)
    # recall against exact search (scikit-learn brute force as reference)
    assert a.recall(X, sample=500) >= 0.95


@pytest.mark.parametrize("metric", ["euclidean", "cosine"])
def test_hnsw_graph_recall_against_exact_and_determinism(metric):
    pytest.importorskip("faiss")  # optional extra lenswork[hnsw]
    rng = np.random.default_rng(31337)
    X = rng.normal(size=(3000, 12))
    a = neighbor_graph(X, k=15, metric=metric, method="hnsw")
    b = neighbor_graph(X, k=15, metric=metric, method="hnsw")
    assert a.method == "hnsw" and a.info["algorithm"] == "hnsw"
    assert_array_equal(a.indices, b.indices)  # one-thread insertion: the same graph every run
    assert not (a.indices == np.arange(len(X))[:, None]).any()
    assert np.all(np.diff(a.distances, axis=1) >= 0)
    # Reference: scikit-learn NearestNeighbors (brute force). tests/benchmarks/bench_backends.py
    # measured recall@15 0.984 for these settings on 1e5 x 20 Gaussian data, the hardest case
    # there; 0.95 leaves room for the smaller sample's noise.
    nn = NearestNeighbors(n_neighbors=16, metric=metric, algorithm="brute").fit(X)
    dist, idx = nn.kneighbors(X)
    hits = np.mean([len(set(a.indices[i]) & set(idx[i, 1:])) / 15 for i in range(len(X))])
    assert hits >= 0.95
    # found distances recomputed in float64: they equal scikit-learn's for the same pairs
    D = pairwise_distances(X[:50], X, metric=metric)  # scikit-learn as reference
    assert_allclose(a.distances[:50], np.take_along_axis(D, a.indices[:50], axis=1),
                    rtol=1e-10, atol=1e-12)


def test_hnsw_errors_name_the_fix(monkeypatch):
    X = np.random.default_rng(2).normal(size=(100, 3))
    if __import__("importlib").util.find_spec("faiss") is not None:
        with pytest.raises(ParameterError, match="supports metric 'euclidean' or 'cosine'"):
            neighbor_graph(X, k=5, metric="manhattan", method="hnsw")
    import sys

    monkeypatch.setitem(sys.modules, "faiss", None)  # as if the extra were not installed
    with pytest.raises(ParameterError, match=r"needs the optional package faiss-cpu"):
        neighbor_graph(X, k=5, method="hnsw")


def test_shared_k_caps_follow_the_settings():
    rng = np.random.default_rng(3)
    assert Workspace(rng.normal(size=(500, 3))).shared_k == 30
    assert Workspace(rng.normal(size=(20, 3))).shared_k == 19  # n - 1 when n is small
    ws = Workspace(rng.normal(size=(500, 3)), min_neighbors=50)
    assert ws.shared_k == 50 and ws.neighbors(ws.shared_k).k == 50


def test_auto_method_depends_on_size_and_dimension():
    rng = np.random.default_rng(5)
    assert neighbor_graph(rng.normal(size=(500, 20)), k=5).method == "exact"
    from lenswork.workspace import _choose_method

    assert _choose_method(10**6, 3, "euclidean") == "exact"  # kd-tree stays exact in low d
    assert _choose_method(10**6, 20, "euclidean") == "approximate"


def test_workspace_caches_and_slices():
    rng = np.random.default_rng(11)
    ws = Workspace(rng.normal(size=(200, 3)))
    g15 = ws.neighbors(15)
    assert ws.neighbors(15) is g15
    g5 = ws.neighbors(5)
    assert_array_equal(g5.indices, g15.indices[:, :5])
    assert g15.info["sliced_from"] == 30  # one build with min_neighbors=30, then slices
    built = [g for key, g in ws._cache.items() if key[0] == "knn" and "sliced_from" not in g.info]
    assert len(built) == 1


def test_to_sparse_is_symmetric():
    rng = np.random.default_rng(12)
    A = neighbor_graph(rng.normal(size=(80, 2)), k=4).to_sparse()
    assert (abs(A - A.T)).nnz == 0


def test_too_few_rows_for_k():
    with pytest.raises(InputError, match="k=15 needs at least 16 rows; the data has 10"):
        neighbor_graph(np.random.default_rng(0).normal(size=(10, 2)), k=15)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"k": 0}, "'k' parameter of neighbor_graph must be an int"),
        ({"metric": "hamming"}, "'metric' parameter of neighbor_graph must be a str among"),
        ({"method": "fast"}, "'method' parameter"),
    ],
)
def test_bad_parameters(kwargs, match):
    with pytest.raises(ParameterError, match=match):
        neighbor_graph(np.zeros((20, 2)) + np.arange(20)[:, None], **kwargs)


_THREADS_SCRIPT = """
import sys
import numpy as np
from lenswork import Workspace
from lenswork.lenses import compute_lenses

X = np.random.default_rng(2024).normal(size=(2500, 12))
ws = Workspace(X, neighbor_method="approximate", random_state=5)
table = compute_lenses(ws, ["knn_distance", "laplacian:components=2", "dtm:mass=0.01"])
np.save(sys.argv[1], table.values(normalized=False))
print(",".join(table.names))
"""


def test_approximate_lenses_equal_under_any_thread_count(tmp_path):
    # Same seed, same values whether numba runs 1 or 2 threads: the descent's update blocks
    # follow the thread count, so lenswork runs the descent on a fixed count.
    import os
    import subprocess
    import sys

    out = {}
    for threads in (1, 2):
        path = tmp_path / f"lens-{threads}.npy"
        env = dict(os.environ, NUMBA_NUM_THREADS=str(threads))
        run = subprocess.run([sys.executable, "-c", _THREADS_SCRIPT, str(path)], env=env,
                             capture_output=True, text=True, timeout=600)
        assert run.returncode == 0, run.stderr[-2000:]
        out[threads] = (run.stdout.strip(), np.load(path))
    assert out[1][0] == out[2][0] == "knn_distance,laplacian_1,laplacian_2,dtm"
    assert_array_equal(out[1][1], out[2][1])
