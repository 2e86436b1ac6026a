"""Benchmark: the two clustering rules of build_graph, "graph" and "element-knn", side by side.

On the seeded loop-with-a-flare table of bench_scale.py (n x 20) with the lenses
pca_1 and pca_2 (computed once, on their own workspace, and passed as values),
each rule builds the default graph (auto cover, four hole scales) on a FRESH
workspace, so the "graph" rule pays for its neighbour graph of all rows. The
process builds one small pynndescent graph first, so its numba compilation
(25-55 s in a fresh process) is not counted here; quote it apart.

Printed per n: seconds, the process's peak RSS so far (VmHWM), nodes, edges,
components, loops, significant holes (the nerve's holes with --hole-scales 1),
rows in no node, and the agreement of each element-knn graph with the
graph-rule graph: the co-membership adjusted Rand index and pair Jaccard of
lenswork.compare.co_membership (Hubert and Arabie 1985 with node-sharing
weights), and the ARI of the node partitions
(lenswork.compare.induced_partition(how="node")). ``--landmarks`` runs the
element rule at several landmark counts (0: whole elements, exact).

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_graph_rules.py
      [--sizes 1e4,5e4,1e5] [--landmarks 0,1000,2000,4000] [--rules graph,element-knn]
      [--hole-scales 4]
"""

from __future__ import annotations

import argparse
import os
import sys
import time
import warnings
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from bench_scale import SEED, make_table  # noqa: E402


def _rss_peak():
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="1e4,5e4,1e5")
    parser.add_argument("--landmarks", default="2000",
                        help="landmark counts of the element rule (0: whole elements)")
    parser.add_argument("--rules", default="graph,element-knn")
    parser.add_argument("--hole-scales", type=int, default=4,
                        help="cover scales per graph (1: the cover alone, a quarter of the work)")
    args = parser.parse_args()

    import lenswork as lw
    from lenswork.compare import adjusted_rand_index, co_membership, induced_partition
    from lenswork.graph import _cluster_element

    print(f"lenswork from {Path(lw.__file__).parent}; {os.cpu_count()} cores, shared", flush=True)
    start = time.perf_counter()
    lw.neighbor_graph(np.random.default_rng(0).normal(size=(60_000, 4)), 5,
                      method="approximate")
    print(f"pynndescent warm-up (compilation) {time.perf_counter() - start:.1f} s", flush=True)
    rules = [r for r in args.rules.split(",") if r]
    marks = [int(float(x)) for x in args.landmarks.split(",") if x]
    header = (f"{'n':>8} {'rule':<22}{'seconds':>9}{'RSS MiB':>9}{'nodes':>7}{'edges':>7}"
              f"{'comp':>5}{'loops':>6}{'holes':>6}{'no node':>8}{'co-ARI':>8}{'co-Jacc':>8}"
              f"{'node ARI':>9}")
    print(header)
    for n in [int(float(s)) for s in args.sizes.split(",") if s]:
        X = make_table(n, np.random.default_rng([SEED, n]))
        lenses = np.asarray(lw.compute_lenses(lw.Workspace(X), ["pca"]).values())[:, :2]
        runs = [("graph", None)] if "graph" in rules else []
        runs += [("element-knn", m) for m in marks] if "element-knn" in rules else []
        ref = None
        for rule, mark in runs:
            if mark is not None:
                _cluster_element.ELEMENT_LANDMARKS = mark  # the default of cluster_element
            ws = lw.Workspace(X, random_state=0)
            t0 = time.perf_counter()
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                g = lw.build_graph(lenses, ws, clusterer=rule, hole_scales=args.hole_scales)
            secs = time.perf_counter() - t0
            s = g.summary()
            label = rule if mark is None else f"{rule} L={mark or 'all'}"
            if ref is None:
                ref = g
                agree = "" + " " * 25
            else:
                cm = co_membership(ref.membership, g.membership)
                pa, pb = induced_partition(ref, "node"), induced_partition(g, "node")
                both = (pa >= 0) & (pb >= 0)
                node_ari = adjusted_rand_index(pa[both], pb[both])
                agree = f"{cm['ari']:8.3f}{cm['jaccard']:8.3f}{node_ari:9.3f}"
            print(f"{n:>8,} {label:<22}{secs:9.2f}{_rss_peak():9.0f}{s.n_nodes:7d}"
                  f"{s.n_edges:7d}{s.n_components:5d}{s.loops:6d}"
                  f"{str(s.holes if s.significant_holes is None else s.significant_holes):>6}"
                  f"{s.n_unassigned:8d}{agree}", flush=True)


if __name__ == "__main__":
    main()
