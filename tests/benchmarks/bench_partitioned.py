"""Benchmark: lens columns and the graph of an n x 20 Parquet dataset on a LocalCluster.

Run: flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_partitioned.py [--quick]
     [--sizes 1000000,10000000]

The data (a noisy 3-d manifold embedded in 20 dimensions, seeded) is written by
partition of 100,000 rows to a temporary directory and removed afterwards.
Worker memory limits are set below the data's size, so the work is out of core.
Prints wall time per step, the peak worker memory and the scaling between sizes.
"""

from __future__ import annotations

import argparse
import shutil
import tempfile
import time
from pathlib import Path

import numpy as np

PART_ROWS = 100_000
D = 20


def make_data(n, directory, seed=0):
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = np.random.default_rng(seed)
    basis = np.linalg.qr(rng.normal(size=(D, 3)))[0]
    for i, start in enumerate(range(0, n, PART_ROWS)):
        m = min(PART_ROWS, n - start)
        t = rng.uniform(0, 2 * np.pi, (m, 3))
        Y = np.column_stack([np.cos(t[:, 0]) * (2 + np.cos(t[:, 1])),
                             np.sin(t[:, 0]) * (2 + np.cos(t[:, 1])), t[:, 2]])
        X = Y @ basis.T + rng.normal(0, 0.05, (m, D))
        pq.write_table(pa.table({f"x{j}": X[:, j] for j in range(D)}),
                       directory / f"part-{i:05d}.parquet")


def peak_memory(client):
    info = client.run(lambda dask_worker: dask_worker.monitor.range_query(start=0)["memory"])
    return max(max(v) if len(v) else 0 for v in info.values())


def run(n, workers, limit):
    import distributed

    from lenswork.partitioned import open_partitioned, partitioned_graph, partitioned_lenses

    tmp = Path(tempfile.mkdtemp(prefix="lenswork-bench-"))
    try:
        t0 = time.perf_counter()
        make_data(n, tmp)
        t_gen = time.perf_counter() - t0
        with distributed.Client(n_workers=workers, threads_per_worker=1, memory_limit=limit,
                                dashboard_address=None) as client:
            times = {"generate": t_gen}
            t0 = time.perf_counter()
            cloud = open_partitioned(tmp)
            times["intake (validate, checksum, moments)"] = time.perf_counter() - t0
            t0 = time.perf_counter()
            lens = partitioned_lenses(cloud, ["pca:components=1", "eccentricity", "dtm:mass=0.01"],
                                      landmarks=500)
            lens.write(tmp / "lenses")
            times["lenses pca + ecc + dtm (write)"] = time.perf_counter() - t0
            t0 = time.perf_counter()
            one = partitioned_lenses(cloud, ["pca:components=1"])
            g = partitioned_graph(one, intervals=max(10, n // 20_000), overlap=0.2, k=10)
            times["graph"] = time.perf_counter() - t0
            peak = peak_memory(client)
        print(f"n = {n:,} x {D} ({n * D * 8 / 1e9:.2f} GB float64), {cloud.n_partitions} "
              f"partitions, {workers} workers x {limit}; graph {g.n_nodes} nodes, "
              f"{g.n_edges} edges")
        for key, v in times.items():
            print(f"  {key:<40s} {v:8.1f} s")
        print(f"  peak worker memory {peak / 1e9:.2f} GB")
        return times
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="a 1e5 smoke run")
    ap.add_argument("--sizes", default="1000000,10000000")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--memory-limit", default="600MB")
    args = ap.parse_args()
    sizes = [100_000] if args.quick else [int(s) for s in args.sizes.split(",")]
    results = {n: run(n, args.workers, args.memory_limit) for n in sizes}
    if len(sizes) > 1:
        a, b = sizes[0], sizes[-1]
        for key in results[a]:
            print(f"scaling {a:,} -> {b:,} ({b / a:.0f}x rows): {key}: "
                  f"{results[b][key] / results[a][key]:.1f}x")


if __name__ == "__main__":
    main()
