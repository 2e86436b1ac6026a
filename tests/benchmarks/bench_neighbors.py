"""Benchmark: the shared neighbour graph, exact scikit-learn vs pynndescent.

Prints, for d = 20 Gaussian data (the hard case for approximate search) and
n = 1e4, 1e5, 1e6: seconds, recall at k = 15 on 1,000 sampled rows, peak
memory, and the speed ratio against exact scikit-learn (brute force) in the
same run. pynndescent is compiled first on a small array and that one-off cost
is printed separately. Exact brute force at 1e6 x 20 would take about 40 min
here, so its time is extrapolated (O(n^2)) and marked as such. A second block
times the exact kd-tree path at low dimension (d = 3), which stays exact at any n.

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_neighbors.py [--quick]
"""

from __future__ import annotations

import time

import numpy as np
from _util import measure, print_table, quick_flag

from lenswork import neighbor_graph


def run(quick=False):
    rng = np.random.default_rng(20261201)
    rows = []
    start = time.perf_counter()
    neighbor_graph(rng.normal(size=(2000, 20)), k=15, method="approximate")
    rows.append({"case": "pynndescent compile (one-off per process)", "n": 2000, "d": 20,
                 "seconds": time.perf_counter() - start})
    sizes = [10_000, 30_000] if quick else [10_000, 100_000, 1_000_000]
    exact_t = {}
    for n in sizes:
        X = rng.normal(size=(n, 20))
        if n <= 100_000:
            g, t, peak, rss = measure(neighbor_graph, X, k=15, method="exact")
            exact_t[n] = t
            rows.append({"case": "exact sklearn brute", "n": n, "d": 20, "seconds": t,
                         "recall": 1.0, "peak_MiB": peak, "maxrss_MiB": rss})
        else:
            m = max(exact_t)
            exact_t[n] = exact_t[m] * (n / m) ** 2
            rows.append({"case": "exact sklearn brute (extrapolated n^2)", "n": n, "d": 20,
                         "seconds": exact_t[n]})
        g, t, peak, rss = measure(neighbor_graph, X, k=15, method="approximate", random_state=0)
        recall = g.recall(X, sample=1000)
        rows.append({"case": "pynndescent (lenswork settings)", "n": n, "d": 20, "seconds": t,
                     "recall": recall, "peak_MiB": peak, "maxrss_MiB": rss,
                     "speedup_vs_exact": exact_t[n] / t})
    for n in ([30_000] if quick else [100_000, 1_000_000]):
        X = rng.normal(size=(n, 3))
        g, t, peak, rss = measure(neighbor_graph, X, k=15, method="exact")
        rows.append({"case": "exact sklearn kd-tree", "n": n, "d": 3, "seconds": t,
                     "recall": 1.0, "peak_MiB": peak, "maxrss_MiB": rss})
    return rows


if __name__ == "__main__":
    print_table(run(quick_flag(__doc__)))
