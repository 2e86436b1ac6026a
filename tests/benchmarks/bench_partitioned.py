"""Benchmark: lens columns and the graph of an n x 20 Parquet dataset on a LocalCluster.

Run: flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_partitioned.py [--quick]
     [--sizes 1000000,10000000] [--memory-limit 600MB] [--save F.json] [--against F.json]
     [--data DIR]
     flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_partitioned.py --accuracy
     [--sizes 20000,100000] [--landmarks 2000]

``--accuracy`` checks the estimated lenses instead of timing: on the same kind of
data (in memory, partitions of 10,000 rows, threaded scheduler), for a seeded
sample of 1,000 rows it computes the exact single-machine value (a full pass
over all n rows per sample row) and prints, per lens, Spearman's rho of the
partitioned values with it, the median actual error, the median stated error,
the share of rows whose actual error is within the stated error (about 0.68 for
a one-sd band; 1 for a hard bound), within 2 stated errors (about 0.95 for a
normal error) and within tail_factor_90 stated errors (about 0.90), as the
provenance states them.

(``--save`` after a 1e6 run and ``--against`` in the 1e7 run print the scaling
without holding the shared lock for both sizes at once. Generate the data
beforehand, outside the lock, with ``--generate-only``.)

The data (a noisy 3-d manifold embedded in 20 dimensions, seeded) is written by
partition of 100,000 rows to ``DIR/n<rows>`` (default ``/tmp/lw_bench_data``)
and kept: a later run with the same size and seed reuses it (a ``complete.json``
marker is written last). The lens columns go to a temporary directory.
Worker memory limits are set below the data's size, so the work is out of core.
Prints wall time per step, the peak worker memory and the scaling between sizes.
"""

from __future__ import annotations

import argparse
import json
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

    directory.mkdir(parents=True, exist_ok=True)
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
    (directory / "complete.json").write_text(json.dumps(_marker(n, seed)))


def _marker(n, seed):
    return {"n": n, "d": D, "seed": seed, "part_rows": PART_ROWS}


def dataset(n, root, seed=0):
    """The directory of the n-row dataset under ``root``, generated unless already complete."""
    directory = Path(root) / f"n{n}"
    marker = directory / "complete.json"
    if marker.exists() and json.loads(marker.read_text()) == _marker(n, seed):
        return directory, 0.0
    shutil.rmtree(directory, ignore_errors=True)
    t0 = time.perf_counter()
    make_data(n, directory, seed)
    return directory, time.perf_counter() - t0


def _array(n, seed=0):
    """The benchmark's data in memory (same construction as make_data)."""
    rng = np.random.default_rng(seed)
    basis = np.linalg.qr(rng.normal(size=(D, 3)))[0]
    t = rng.uniform(0, 2 * np.pi, (n, 3))
    Y = np.column_stack([np.cos(t[:, 0]) * (2 + np.cos(t[:, 1])),
                         np.sin(t[:, 0]) * (2 + np.cos(t[:, 1])), t[:, 2]])
    return Y @ basis.T + rng.normal(0, 0.05, (n, D))


def _exact_rows(X, rows, mass):
    """Exact single-machine values at ``rows``: eccentricity p=1, log density (Scott), dtm."""
    from scipy.special import logsumexp

    from lenswork.lenses._density import kernel_cholesky

    n, d = X.shape
    H = np.cov(X, rowvar=False) * n ** (-2.0 / (d + 4))
    Lc = kernel_cholesky(H, "scott")
    W = np.linalg.inv(Lc)
    Z = X @ W.T
    logc = -0.5 * d * np.log(2 * np.pi) - np.log(np.diag(Lc)).sum()
    # the DTM at the mass asked for (the single machine caps k at its shared graph and names
    # that column by the mass it used: another column)
    k = min(int(np.ceil(round(mass * n, 9))), n)
    xx, zz = (X * X).sum(1), (Z * Z).sum(1)
    ecc, dens, dtm = (np.empty(len(rows)) for _ in range(3))
    step = max(1, min(100, int(2e7 // n)))  # rows x n float64 blocks of at most 160 MB
    for a in range(0, len(rows), step):
        r = rows[a:a + step]
        D2 = np.maximum(xx[r, None] + xx[None, :] - 2.0 * X[r] @ X.T, 0.0)
        D2[np.arange(len(r)), r] = 0.0
        ecc[a:a + step] = np.sqrt(D2).mean(1)
        Z2 = np.maximum(zz[r, None] + zz[None, :] - 2.0 * Z[r] @ Z.T, 0.0)
        Z2[np.arange(len(r)), r] = 0.0
        dens[a:a + step] = logsumexp(-0.5 * Z2, axis=1) - np.log(n) + logc
        part = np.sort(np.partition(D2, k - 1, axis=1)[:, :k], axis=1)  # self first, at 0
        dtm[a:a + step] = np.sqrt(part.sum(1) / k)
    return {"eccentricity[p=1]": ecc, "density": dens, "dtm": dtm}


def accuracy(n, landmarks, mass=0.01, queries=1000):
    """Print rho and actual vs stated error of the partitioned estimates at ``n`` rows."""
    import dask
    import dask.array as da
    from scipy.stats import spearmanr

    from lenswork.partitioned import open_partitioned, partitioned_lenses

    X = _array(n)
    rows = np.sort(np.random.default_rng(1).choice(n, min(queries, n), replace=False))
    t0 = time.perf_counter()
    with dask.config.set(scheduler="threads"):
        cloud = open_partitioned(da.from_array(X, chunks=(10_000, D)))
        lens = partitioned_lenses(cloud, ["eccentricity:p=1", "density", f"dtm:mass={mass}"],
                                  landmarks=landmarks)
        values, errors = lens.compute()
    t_part = time.perf_counter() - t0
    t0 = time.perf_counter()
    truth = _exact_rows(X, rows, mass)
    t_exact = time.perf_counter() - t0
    print(f"n = {n:,} x {D}, landmarks {landmarks}: partitioned {t_part:.1f} s (all rows), "
          f"exact {t_exact:.1f} s ({len(rows)} rows)")
    print(f"  {'lens':<18s} {'rho':>6s} {'med |err|':>10s} {'med stated':>10s} "
          f"{'<=stated':>8s} {'<=2 stated':>10s} {'<=tail90':>8s}")
    out = {}
    for j, name in enumerate(lens.names):
        prov = lens.provenance[j]
        est = values[rows, j]
        stated = errors[rows, j] if np.isfinite(errors[rows, j]).all() else np.full(
            len(rows), float(prov.get("error_bound", np.nan)))
        err = np.abs(est - truth[name])
        rho = spearmanr(est, truth[name])[0]
        within1, within2 = np.mean(err <= stated), np.mean(err <= 2 * stated)
        tail = np.mean(err <= prov.get("tail_factor_90", np.nan) * stated)
        print(f"  {name:<18s} {rho:6.3f} {np.median(err):10.3g} {np.median(stated):10.3g} "
              f"{within1:8.2f} {within2:10.2f} {tail:8.2f}")
        out[name] = {"rho": float(rho), "median_error": float(np.median(err)),
                     "median_stated": float(np.median(stated)), "within_1": float(within1),
                     "within_2": float(within2), "within_tail_90": float(tail)}
    return out


def _worker_samples(dask_worker):
    mon = dask_worker.monitor.range_query(start=0)
    spill = {k: v for k, v in dask_worker.digests_total.items() if "disk" in str(k)}
    return list(mon["time"]), list(mon["memory"]), {str(k): float(v) for k, v in spill.items()}


def peak_memory(client, since):
    """Largest process memory (bytes) of any worker sampled after ``since`` (epoch seconds)."""
    info = client.run(_worker_samples)
    return max((m for t, mem, _ in info.values() for ti, m in zip(t, mem) if ti >= since),
               default=0)


def disk_bytes(client):
    """Bytes the workers wrote to disk, summed over workers: ``(spilled, p2p)``.

    ``spilled``: the spill buffer's writes (the memory monitor's and the
    target's); ``p2p``: the shards of Dask's P2P shuffle.
    """
    info = client.run(_worker_samples)
    spill = p2p = 0.0
    for _, _, digests in info.values():
        for k, v in digests.items():
            if "disk-write" in k and "bytes" in k:
                if "p2p" in k:
                    p2p += v
                else:
                    spill += v
    return spill, p2p


def run(n, workers, limit, root):
    from lenswork.partitioned import (
        open_partitioned,
        partitioned_graph,
        partitioned_lenses,
        start_client,
    )

    data, t_gen = dataset(n, root)
    tmp = Path(tempfile.mkdtemp(prefix="lenswork-bench-"))
    try:
        # the CLI's local cluster (one thread per worker, P2P buffers sized to the limit)
        with start_client("local", workers=workers, memory_limit=limit) as client:
            times, peaks, disks = {}, {}, {}

            def step(name, fn):
                d0 = disk_bytes(client)
                w0, t0 = time.time(), time.perf_counter()
                out = fn()
                times[name] = time.perf_counter() - t0
                peaks[name] = peak_memory(client, w0)
                disks[name] = [b - a for a, b in zip(d0, disk_bytes(client))]
                return out

            cloud = step("intake (validate, checksum, moments)", lambda: open_partitioned(data))
            lens = partitioned_lenses(cloud, ["pca:components=1", "eccentricity",
                                              "dtm:mass=0.01"], landmarks=500)
            step("lenses pca + ecc + dtm (Parquet out)", lambda: lens.write(tmp / "lenses"))
            one = partitioned_lenses(cloud, ["pca:components=1"])
            intervals = max(10, n // ROWS_PER_INTERVAL)
            g = step("graph (pca_1 cover, element-knn)",
                     lambda: partitioned_graph(one, intervals=intervals, overlap=0.2, k=10))
        gen = f"generated in {t_gen:.1f} s" if t_gen else "reused"
        print(f"data {data} ({gen}); n = {n:,} x {D} ({n * D * 8 / 1e9:.2f} GB float64), "
              f"{cloud.n_partitions} partitions, {workers} workers x {limit}; graph of "
              f"{intervals} intervals: {g.n_nodes} nodes, {g.n_edges} edges, "
              f"{g.params['blocks']} element blocks")
        for key, v in times.items():
            spill, p2p = disks[key]
            print(f"  {key:<40s} {v:8.1f} s   peak worker {peaks[key] / 1e6:4.0f} MB   "
                  f"spilled {spill / 1e6:6.0f} MB   P2P shards {p2p / 1e6:5.0f} MB")
        print(f"  peak worker memory {max(peaks.values()) / 1e6:.0f} MB (limit {limit}); "
              f"written to disk {sum(sum(d) for d in disks.values()) / 1e6:.0f} MB")
        return times
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="a 1e5 smoke run")
    ap.add_argument("--sizes", default="1000000,10000000")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--memory-limit", default="600MB")
    ap.add_argument("--save", default=None, help="write the times to this JSON file")
    ap.add_argument("--against", default=None,
                    help="a --save file of a smaller size: print the scaling to it")
    ap.add_argument("--data", default="/tmp/lw_bench_data",
                    help="where the generated datasets are kept and reused")
    ap.add_argument("--generate-only", action="store_true",
                    help="write the datasets (outside the lock) and stop")
    ap.add_argument("--accuracy", action="store_true",
                    help="rho and actual vs stated error of the estimated lenses, no timing")
    ap.add_argument("--landmarks", type=int, default=None,
                    help="--accuracy: landmarks (default: partitioned_lenses' default)")
    args = ap.parse_args()
    if args.accuracy:
        import inspect

        from lenswork.partitioned import partitioned_lenses

        default = inspect.signature(partitioned_lenses).parameters["landmarks"].default
        for n in ([20_000, 100_000] if args.sizes == ap.get_default("sizes")
                  else [int(s) for s in args.sizes.split(",")]):
            accuracy(n, args.landmarks or default)
        return
    sizes = [100_000] if args.quick else [int(s) for s in args.sizes.split(",")]
    if args.generate_only:
        for n in sizes:
            directory, t = dataset(n, args.data)
            print(f"{directory}: " + (f"generated in {t:.1f} s" if t else "already complete"))
        return
    results = {n: run(n, args.workers, args.memory_limit, args.data) for n in sizes}
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
