"""Benchmark: lens columns and the graph of an n x 20 Parquet dataset on a LocalCluster.

Run: flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_partitioned.py [--quick]
     [--sizes 1000000,10000000] [--memory-limit 600MB] [--save F.json] [--against F.json]

(``--save`` after a 1e6 run and ``--against`` in the 1e7 run print the scaling
without holding the shared lock for both sizes at once.)

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
#: Rows per interval of the graph's cover: elements of about 2,500 rows (overlap 0.2), so the
#: graph's work grows linearly with n (each element's exact k-NN search is O(m^2 d)).
ROWS_PER_INTERVAL = 2_000


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


def _worker_samples(dask_worker):
    mon = dask_worker.monitor.range_query(start=0)
    spill = {k: v for k, v in dask_worker.digests_total.items() if "disk" in str(k)}
    return list(mon["time"]), list(mon["memory"]), {str(k): float(v) for k, v in spill.items()}


def peak_memory(client, since):
    """Largest process memory (bytes) of any worker sampled after ``since`` (epoch seconds)."""
    info = client.run(_worker_samples)
    return max((m for t, mem, _ in info.values() for ti, m in zip(t, mem) if ti >= since),
               default=0)


def spilled(client):
    """Bytes written to disk by the workers' spill buffers (summed over workers)."""
    info = client.run(_worker_samples)
    total = 0.0
    for _, _, spill in info.values():
        total += sum(v for k, v in spill.items() if "disk-write" in k and "bytes" in k)
    return total


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
            times, peaks = {"generate (client, not on the cluster)": t_gen}, {}

            def step(name, fn):
                w0, t0 = time.time(), time.perf_counter()
                out = fn()
                times[name] = time.perf_counter() - t0
                peaks[name] = peak_memory(client, w0)
                return out

            cloud = step("intake (validate, checksum, moments)", lambda: open_partitioned(tmp))
            lens = partitioned_lenses(cloud, ["pca:components=1", "eccentricity",
                                              "dtm:mass=0.01"], landmarks=500)
            step("lenses pca + ecc + dtm (Parquet out)", lambda: lens.write(tmp / "lenses"))
            one = partitioned_lenses(cloud, ["pca:components=1"])
            intervals = max(10, n // ROWS_PER_INTERVAL)
            g = step("graph (pca_1 cover, element-knn)",
                     lambda: partitioned_graph(one, intervals=intervals, overlap=0.2, k=10))
            spill = spilled(client)
        print(f"n = {n:,} x {D} ({n * D * 8 / 1e9:.2f} GB float64), {cloud.n_partitions} "
              f"partitions, {workers} workers x {limit}; graph of {intervals} intervals: "
              f"{g.n_nodes} nodes, {g.n_edges} edges, {g.params['blocks']} element blocks")
        for key, v in times.items():
            peak = f"peak worker {peaks[key] / 1e6:6.0f} MB" if key in peaks else ""
            print(f"  {key:<40s} {v:8.1f} s   {peak}")
        print(f"  peak worker memory {max(peaks.values()) / 1e6:.0f} MB (limit {limit}); "
              f"spilled to disk {spill / 1e6:.0f} MB")
        return times
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def main():
    import json

    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="a 1e5 smoke run")
    ap.add_argument("--sizes", default="1000000,10000000")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--memory-limit", default="600MB")
    ap.add_argument("--save", default=None, help="write the times to this JSON file")
    ap.add_argument("--against", default=None,
                    help="a --save file of a smaller size: print the scaling to it")
    args = ap.parse_args()
    sizes = [100_000] if args.quick else [int(s) for s in args.sizes.split(",")]
    results = {n: run(n, args.workers, args.memory_limit) for n in sizes}
    if args.save:
        Path(args.save).write_text(json.dumps({str(n): t for n, t in results.items()}))
    if args.against:
        results.update({int(n): t for n, t in json.loads(Path(args.against).read_text()).items()})
    sizes = sorted(results)
    if len(sizes) > 1:
        a, b = sizes[0], sizes[-1]
        for key in results[a]:
            print(f"scaling {a:,} -> {b:,} ({b / a:.0f}x rows): {key}: "
                  f"{results[b][key] / results[a][key]:.1f}x")


if __name__ == "__main__":
    main()
