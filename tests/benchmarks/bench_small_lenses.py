"""Benchmark: the PCA, DTM and k-NN distance lenses, against their references.

Three blocks, each at n = 1e4, 1e5, 1e6 (``--quick``: 1e4 and 3e4):

1. PCA, d = 20, 2 components: ``lenswork.pca_coordinates`` and the ``pca`` lens on
   a workspace against ``sklearn.decomposition.PCA(2).fit_transform`` (which
   picks its covariance solver here) in the same run. Times are the best of 5
   interleaved repeats; target: within 1.2x of scikit-learn.
2. DTM and k-NN distance, d = 3, once the shared graph exists: the graph
   (k = 15, exact kd-tree, about 25 s at 1e6) is built first and its time
   printed; then only the lens is timed (``dtm`` with mass = 16 / n, i.e.
   k = 16 points = the row and its 15 neighbours, and ``knn_distance`` with
   k = 10). Reference: the same formula as a numpy one-liner on the graph's
   distances. Target: < 1 s at 1e6.
3. PCA solver crossover, n = 2,000 and 20,000, m = 2, d = 300 ... 2000: covariance
   eigendecomposition against randomized SVD (why the solver switches at d > 500).

Peak memory is traced (tracemalloc) in a separate run of each case, so tracing
does not slow the timed runs.

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_small_lenses.py [--quick]
"""

from __future__ import annotations

import time

import numpy as np
from _util import measure, print_table, quick_flag
from sklearn.decomposition import PCA

from lenswork import Workspace, distance_to_measure, get_lens, knn_distance, pca_coordinates
from lenswork.lenses._pca import COVARIANCE_MAX_DIM


def _best(fns, repeats):
    """Best-of-``repeats`` seconds of each function, run interleaved."""
    best = [np.inf] * len(fns)
    for _ in range(repeats):
        for i, fn in enumerate(fns):
            start = time.perf_counter()
            fn()
            best[i] = min(best[i], time.perf_counter() - start)
    return best


def _peak(fn):
    return measure(fn)[2]


def _pca_case(X, rows):
    n, d = X.shape
    cloud = Workspace(X).cloud  # validated once; a new Workspace over it has empty caches
    lens = get_lens("pca")

    def ours():
        return pca_coordinates(X, components=2)

    def ref():
        return PCA(n_components=2).fit_transform(X)

    def on_workspace():
        return lens(Workspace(cloud), components=2)  # basis + projection, no cache hit

    t_ours, t_ref, t_lens = _best([ours, ref, on_workspace], repeats=5)
    a, b = ours(), ref()
    signs = np.sign((a * b).sum(axis=0))
    err = float(np.abs(a * signs - b).max())
    rows.append({"case": "pca_coordinates vs sklearn PCA", "n": n, "d": d,
                 "seconds": t_ours, "ref_seconds": t_ref, "ratio": t_ours / t_ref,
                 "max_abs_diff": err, "peak_MiB": _peak(ours), "ref_peak_MiB": _peak(ref)})
    rows.append({"case": "pca lens (workspace, uncached)", "n": n, "d": d,
                 "seconds": t_lens, "ref_seconds": t_ref, "ratio": t_lens / t_ref,
                 "peak_MiB": _peak(on_workspace)})


def _graph_case(X, rows):
    n, d = X.shape
    k_graph = 15
    ws = Workspace(X)
    g, t_graph, peak_graph, _ = measure(ws.neighbors, k_graph)
    rows.append({"case": "shared graph k=15 (kd-tree, built once)", "n": n, "d": d,
                 "seconds": t_graph, "peak_MiB": peak_graph})
    mass = (k_graph + 1) / n  # k = 16 points: the row itself and its 15 neighbours
    dtm, knn = get_lens("dtm"), get_lens("knn_distance")

    def dtm_lens():
        return dtm(ws, mass=mass)

    def dtm_fn():
        return distance_to_measure(X, mass=mass, graph=g)

    def dtm_ref():
        D = g.distances
        return np.sqrt((D**2).sum(axis=1) / (k_graph + 1))

    def knn_lens():
        return knn(ws, k=10)

    def knn_fn():
        return knn_distance(X, k=10, graph=g)

    def knn_ref():
        return g.distances[:, 9].copy()

    t = _best([dtm_lens, dtm_fn, dtm_ref, knn_lens, knn_fn, knn_ref], repeats=5)
    assert dtm_lens()[0].info["k"] == k_graph + 1
    diff = float(np.abs(dtm_lens()[0].values - dtm_ref()).max())
    rows.append({"case": "dtm lens (mass=16/n), graph cached", "n": n, "d": d,
                 "seconds": t[0], "ref_seconds": t[2], "ratio": t[0] / t[2],
                 "max_abs_diff": diff, "peak_MiB": _peak(dtm_lens),
                 "share_of_graph": t[0] / t_graph})
    rows.append({"case": "distance_to_measure(graph=g)", "n": n, "d": d,
                 "seconds": t[1], "ref_seconds": t[2], "ratio": t[1] / t[2],
                 "peak_MiB": _peak(dtm_fn)})
    rows.append({"case": "knn_distance lens (k=10), graph cached", "n": n, "d": d,
                 "seconds": t[3], "ref_seconds": t[5], "ratio": t[3] / t[5],
                 "peak_MiB": _peak(knn_lens), "share_of_graph": t[3] / t_graph})
    rows.append({"case": "knn_distance(graph=g)", "n": n, "d": d,
                 "seconds": t[4], "ref_seconds": t[5], "ratio": t[4] / t[5],
                 "peak_MiB": _peak(knn_fn)})


def _crossover_case(X, rows):
    n, d = X.shape

    def cov():
        return pca_coordinates(X, components=2, solver="covariance")

    def rnd():
        return pca_coordinates(X, components=2, solver="randomized")

    t_cov, t_rnd = _best([cov, rnd], repeats=3)
    rows.append({"case": "pca solver crossover", "n": n, "d": d,
                 "seconds": t_cov, "ref_seconds": t_rnd, "ratio": t_cov / t_rnd,
                 "auto": "covariance" if d <= COVARIANCE_MAX_DIM else "randomized"})


def run(quick=False):
    """Run the benchmark; returns a list of result dicts (one per printed row).

    In the crossover rows, ``seconds`` is the covariance solver and
    ``ref_seconds`` the randomized SVD.
    """
    rng = np.random.default_rng(20260301)
    sizes = [10_000, 30_000] if quick else [10_000, 100_000, 1_000_000]
    rows = []
    for n in sizes:
        _pca_case(rng.normal(size=(n, 20)) * np.linspace(3.0, 0.5, 20) + 5.0, rows)
    for n in sizes:
        _graph_case(rng.normal(size=(n, 3)), rows)
    for n in [2_000] if quick else [2_000, 20_000]:
        for d in [300, 600] if quick else [300, 500, 1000, 2000]:
            latent = rng.normal(size=(n, 10)) * np.linspace(5.0, 1.0, 10)
            X = latent @ rng.normal(size=(10, d)) + 0.5 * rng.normal(size=(n, d))
            _crossover_case(X, rows)
    return rows


if __name__ == "__main__":
    print_table(run(quick_flag(__doc__)))
