"""Benchmark: the graph builder (cover + clusters + nerve) on the shared neighbour graph.

Prints, for 3-d Gaussian data (the exact kd-tree builds the neighbour graph at any n, so
no pynndescent is involved) at n = 1e4, 1e5, 1e6, one lens (the first coordinate), 20
intervals and 30 % overlap:

* the neighbour-graph time (once per workspace, reported separately);
* the one-off per-(workspace, k, cut-off) pieces: the cut-off and the cut neighbour lists;
* each step of a warm build: cover, clusters, nerve, node statistics, summary counts,
  and build_graph end to end; with the ratio of the clusters step against a plain scipy
  baseline in the same run (per element: ``A[idx][:, idx]`` of the sparse k-NN matrix,
  then ``scipy.sparse.csgraph.connected_components``);
* peak memory of one build (tracemalloc) and the process's max RSS;
* a sweep of 20 graphs over a 5 x 4 grid of (intervals x overlap) at n = 1e5 (the use
  the graph builder is sized for: under 30 s in total once the neighbour graph exists).

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_graph.py [--quick]
"""

from __future__ import annotations

import time
import warnings

import numpy as np
from _util import measure, print_table, quick_flag, timed

from lenswork import LensworkWarning, Workspace
from lenswork.graph import (
    Cover,
    GraphSettings,
    build_graph,
    membership_matrix,
    neighbor_cutoff,
    nerve_edges,
)
from lenswork.graph._build import node_statistics
from lenswork.graph._cluster import cluster_elements
from lenswork.graph._cutoff import cut_indices


def _baseline_clusters(ws, rows, elements, k, cutoff):
    """Per element: induced subgraph by sparse fancy indexing, then connected_components."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components

    A = ws.neighbors(k).to_sparse(symmetric=False)
    A.data[A.data > cutoff] = 0
    A.eliminate_zeros()
    A = sp.csr_matrix(A)
    total = 0
    for e in np.unique(elements):
        idx = rows[elements == e]
        n_comp, _ = connected_components(A[idx][:, idx], directed=True, connection="weak")
        total += n_comp
    return total


def run_size(n, rng, intervals=20, overlap=0.3, k=15):
    X = rng.normal(size=(n, 3))
    lens = X[:, 0]
    ws = Workspace(X)
    _, t_knn = timed(ws.neighbors, k)
    cutoff, t_cut = timed(neighbor_cutoff, ws, k)
    _, t_cutidx = timed(cut_indices, ws, k, "euclidean", cutoff)
    cover, t_fit = timed(Cover(intervals=intervals, overlap=overlap).fit, lens)
    (rows, elements), t_inc = timed(cover.incidence, order=cover.values_[:, 0])
    result, t_cl = timed(cluster_elements, ws, rows, elements, GraphSettings(k=k, random_state=0))
    V = result.node_element.size

    def nerve():
        M = membership_matrix(result.rows, result.nodes, n, V)
        return M, nerve_edges(M)

    (M, _), t_nerve = timed(nerve)
    _, t_stats = timed(node_statistics, M, {"lens": lens})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        g, t_build = timed(build_graph, lens, ws, intervals=intervals, overlap=overlap, k=k)
        _, t_build2 = timed(build_graph, lens, ws, intervals=intervals, overlap=overlap, k=k)
        _, secs_mem, peak, rss = measure(build_graph, lens, ws, intervals=intervals,
                                         overlap=overlap, k=k)
    _, t_summary = timed(lambda: g.summary().loops)
    _, t_base = timed(_baseline_clusters, ws, rows, elements, k, cutoff)
    core = t_fit + t_inc + t_cl + t_nerve
    return {
        "n": n, "knn_graph_s": t_knn, "cutoff_s": t_cut, "cut_lists_s": t_cutidx,
        "cover_s": t_fit + t_inc, "clusters_s": t_cl, "nerve_s": t_nerve,
        "cover+clusters+nerve_s": core, "node_stats_s": t_stats, "summary_s": t_summary,
        "build_graph_s": min(t_build, t_build2),
        "baseline_clusters_s": t_base, "clusters_speedup": t_base / t_cl,
        "nodes": g.n_nodes, "edges": g.n_edges, "unassigned": int(g.unassigned.size),
        "peak_MiB": peak, "maxrss_MiB": rss,
    }


def run_sweep(n, rng, k=15):
    X = rng.normal(size=(n, 3))
    ws = Workspace(X)
    _, t_knn = timed(ws.neighbors, k)
    start = time.perf_counter()
    count = 0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        for intervals in (6, 10, 14, 18, 22):
            for overlap in (0.1, 0.25, 0.4, 0.55):
                g = build_graph(X[:, 0], ws, intervals=intervals, overlap=overlap, k=k)
                g.summary()
                count += 1
    total = time.perf_counter() - start
    return {"n": n, "graphs": count, "knn_graph_s": t_knn, "sweep_total_s": total,
            "per_graph_s": total / count}


def run(quick=False):
    rng = np.random.default_rng(20261202)
    sizes = [10_000, 100_000] if quick else [10_000, 100_000, 1_000_000]
    rows = [run_size(n, rng) for n in sizes]
    print("cover + clusters + nerve, one lens, 20 intervals, 30 % overlap, k = 15, 3-d data")
    print_table(rows, ["n", "knn_graph_s", "cutoff_s", "cut_lists_s", "cover_s", "clusters_s",
                       "nerve_s", "cover+clusters+nerve_s", "node_stats_s", "summary_s",
                       "build_graph_s"])
    print()
    print("clusters step against the plain scipy baseline; graph size; memory of one build")
    print_table(rows, ["n", "clusters_s", "baseline_clusters_s", "clusters_speedup", "nodes",
                       "edges", "unassigned", "peak_MiB", "maxrss_MiB"])
    if len(rows) > 1:
        print()
        print("n-scaling of cover + clusters + nerve (seconds per 1e6 rows):",
              ", ".join(f"n={r['n']:.0e}: {r['cover+clusters+nerve_s'] / r['n'] * 1e6:.2f}"
                        for r in rows))
    print()
    print("sweep: 5 x 4 grid of (intervals x overlap), build_graph + summary per graph")
    print_table([run_sweep(20_000 if quick else 100_000, rng)])


if __name__ == "__main__":
    run(quick_flag(__doc__))
