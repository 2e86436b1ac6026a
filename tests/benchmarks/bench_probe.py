"""Benchmark: the structure probe over a 5 x 4 cover grid, once the neighbour graph exists.

Data: a noisy torus (R = 3, r = 1) in 3-d, so the exact kd-tree neighbour graph
builds without pynndescent at any n. For n = 1e4, 3e4, 1e5 (``--quick``: 1e4,
2e4) it prints, separately:

* the neighbour graph (k = 15, scikit-learn kd-tree), built once per workspace;
* the structure probe of one lens column (the height across the hole axis) over
  a 5 x 4 grid of (intervals, overlap): 20 graph builds plus one for the data's
  own components;
* the stability map of the same lens over the default 8 x 5 grid;

with peak traced memory, the probe's ratio to the scikit-learn neighbour
graph build in the same run (there is no reference implementation of the probe
itself), and the n-scaling exponent between the two largest sizes. The
target: the probe under 30 s at 1e5 rows.

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_probe.py [--quick]
"""

from __future__ import annotations

import math

import numpy as np
from _util import measure, print_table, quick_flag, timed, torus

from lenswork import LensColumn, Workspace, stability_map, structure_scores

GRID_INTERVALS = (6, 8, 10, 12, 14)
GRID_OVERLAPS = (0.2, 0.3, 0.4, 0.5)


def run(quick=False):
    rng = np.random.default_rng(20261202)
    sizes = [10_000, 20_000] if quick else [10_000, 30_000, 100_000]
    Workspace(torus(500, rng, noise=0.05)).neighbors(15)  # import scikit-learn before timing
    rows, probe_t = [], {}
    for n in sizes:
        X = torus(n, rng, noise=0.05)
        lens = LensColumn("height", X[:, 0])
        # timings without tracemalloc (it slows Python code down); memory in a second run
        ws = Workspace(X, random_state=0)
        g, t_nn = timed(ws.neighbors, 15)
        probe, t_probe = timed(structure_scores, [lens], ws, interval_counts=GRID_INTERVALS,
                                overlaps=GRID_OVERLAPS)
        smap, t_map = timed(stability_map, lens, ws)
        probe_t[n] = t_probe
        ws2 = Workspace(X, random_state=0)
        ws2.neighbors(15)
        _, _, peak, rss = measure(structure_scores, [lens], ws2, interval_counts=GRID_INTERVALS,
                                  overlaps=GRID_OVERLAPS)
        s = probe["height"]
        rows.append({
            "n": n, "d": 3, "knn_s": t_nn, "knn_method": g.info.get("algorithm", g.method),
            "probe_5x4_s": t_probe, "per_build_s": t_probe / 21,
            "probe/knn": t_probe / t_nn, "map_8x5_s": t_map,
            "probe_peak_MiB": peak, "maxrss_MiB": rss,
            "loops_mode": s["loops"], "loops_agree": s["loops_agreement"],
            "default_loops": int(smap.counts["loops"][smap.default_cell]),
        })
    print_table(rows)
    a, b = sizes[-2], sizes[-1]
    print(f"probe n-scaling exponent between n={a} and n={b}: "
          f"{math.log(probe_t[b] / probe_t[a]) / math.log(b / a):.2f}")
    if not quick:
        verdict = "meets" if probe_t[sizes[-1]] < 30 else "MISSES"
        print(f"probe at n={sizes[-1]}: {probe_t[sizes[-1]]:.2f} s ({verdict} the 30 s target)")
    return rows


if __name__ == "__main__":
    run(quick_flag(__doc__))
