"""Benchmark: lens columns and the graph of an n x 20 Parquet dataset on a LocalCluster.

Run: flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_partitioned.py [--quick]
     [--sizes 1000000,10000000] [--memory-limit 600MB] [--save F.json] [--against F.json]
     [--data DIR]
     flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_partitioned.py --accuracy
     [--sizes 20000,100000] [--landmarks 2000]
     flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_partitioned.py --estimates
     [--sizes 20000,100000,1000000] [--save F.json]

``--estimates``: per estimated lens (eccentricity p=1, density, dtm) on a 20-d
Gaussian mixture at each size, on a LocalCluster of 2 workers against the single
machine in the same run: Spearman's rho with the single machine's values and with
the exact values at 1,000 seeded rows, the stated error and the share of rows
within it, wall time, peak memory and the time ratio cluster / single machine.

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


def mixture(n, seed=0, k=8):
    """A 20-d Gaussian mixture: k seeded centres (sd 2), per-component scales 0.5 to 1.5."""
    rng = np.random.default_rng(seed)
    centres = rng.normal(0.0, 2.0, (k, D))
    scales = rng.uniform(0.5, 1.5, k)
    label = rng.integers(0, k, n)
    return centres[label] + rng.normal(size=(n, D)) * scales[label][:, None]


def _timed(fn):
    """(result, seconds, peak bytes numpy allocated) of fn() in this process (tracemalloc)."""
    import tracemalloc

    tracemalloc.start()
    t0 = time.perf_counter()
    out = fn()
    dt = time.perf_counter() - t0
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return out, dt, peak


def estimates(n, client, mass=0.01, queries=1000, part_rows=PART_ROWS):
    """Per estimated lens at n rows: rho and coverage against exact values, time and memory.

    The cluster path (the client's workers) against the single machine (this process,
    the same 2 cores) on the 20-d Gaussian mixture, both at their defaults. Returns rows
    of the printed table.
    """
    import dask.array as da
    from scipy.stats import spearmanr

    from lenswork.lenses import eccentricity, gaussian_density
    from lenswork.partitioned import open_partitioned, partitioned_lenses

    X = mixture(n)
    rows = np.sort(np.random.default_rng(12345).choice(n, min(queries, n), replace=False))
    specs = ["eccentricity:p=1", "density", f"dtm:mass={mass}"]
    cloud = open_partitioned(da.from_array(X, chunks=(min(part_rows, n), D)))
    timing = {}
    for spec in specs:  # one lens at a time: its own wall time and peak worker memory
        w0, t0 = time.time(), time.perf_counter()
        lens = partitioned_lenses(cloud, [spec])
        vals, errs = lens.compute()
        timing[spec] = (lens, vals[:, 0], errs[:, 0], time.perf_counter() - t0,
                        peak_memory(client, w0))
    single = {
        "eccentricity:p=1": _timed(lambda: eccentricity(X, p=1)),
        "density": _timed(lambda: gaussian_density(X, return_info=True)),
    }
    truth = _exact_rows(X, rows, mass)
    out = []
    for spec in specs:
        lens, v, e, t_c, mem_c = timing[spec]
        prov, name = lens.provenance[0], lens.names[0]
        exact = truth[name]
        err = np.abs(v[rows] - exact)
        stated = e[rows] if np.isfinite(e[rows]).all() else np.full(
            len(rows), float(prov.get("error_bound", 0.0)))
        row = {"n": n, "lens": name, "rho_exact": float(spearmanr(v[rows], exact)[0]),
               "stated_median": float(np.median(stated)) if not prov["exact"] else 0.0,
               "within_1": float(np.mean(err <= stated)) if not prov["exact"] else 1.0,
               "within_tail90": float(np.mean(err <= prov.get("tail_factor_90", np.nan)
                                              * stated)),
               "time_cluster": t_c, "peak_cluster_mb": mem_c / 1e6, "exact": prov["exact"]}
        if spec in single:
            res, t_s, mem_s = single[spec]
            sv = res[0] if isinstance(res, tuple) else res
            row.update(rho_single=float(spearmanr(v, sv)[0]),
                       rho_single_exact=float(spearmanr(sv[rows], exact)[0]),
                       time_single=t_s, peak_single_mb=mem_s / 1e6, ratio=t_c / t_s)
        out.append(row)
    return out


def print_estimates(table):
    print("Estimated lenses, cluster path vs single machine (20-d Gaussian mixture; rho over "
          "all rows vs the single machine, over 1,000 seeded rows vs the exact value):")
    print(f"  {'n':>9s} {'lens':<18s} {'rho sm':>6s} {'rho ex':>6s} {'sm ex':>6s} "
          f"{'stated':>8s} {'cover':>5s} {'cov90':>5s} {'time s':>7s} {'sm s':>6s} "
          f"{'ratio':>5s} {'peak MB':>7s} {'sm MB':>6s}")
    for r in table:
        dash = "     -"
        print(f"  {r['n']:9,d} {r['lens']:<18s} "
              f"{r['rho_single']:6.3f} " if "rho_single" in r else
              f"  {r['n']:9,d} {r['lens']:<18s} {dash} ", end="")
        print(f"{r['rho_exact']:6.3f} "
              + (f"{r['rho_single_exact']:6.3f} " if "rho_single" in r else dash + " ")
              + (f"{r['stated_median']:8.3g} {r['within_1']:5.2f} {r['within_tail90']:5.2f} "
                 if not r["exact"] else f"{'exact':>8s} {'-':>5s} {'-':>5s} ")
              + f"{r['time_cluster']:7.1f} "
              + (f"{r['time_single']:6.1f} {r['ratio']:5.2f} " if "rho_single" in r
                 else f"{'-':>6s} {'-':>5s} ")
              + f"{r['peak_cluster_mb']:7.0f} "
              + (f"{r['peak_single_mb']:6.0f}" if "rho_single" in r else f"{'-':>6s}"))
    print("  rho sm: cluster vs single machine; rho ex: cluster vs exact; sm ex: single machine "
          "vs exact; stated: median stated error; cover / cov90: share of rows within the "
          "stated error / tail_factor_90 times it (nominal 0.68 / 0.90; 1 for a hard bound); "
          "peak MB: largest worker / numpy allocations of the single machine. dtm: the exact "
          "value at the mass asked (the single machine caps k at its neighbour graph: another "
          "column)")


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
    ap.add_argument("--estimates", action="store_true",
                    help="the estimated lenses against the single machine at --sizes "
                    "(default 20000,100000,1000000) on a LocalCluster of --workers workers")
    args = ap.parse_args()
    if args.estimates:
        from lenswork.partitioned import start_client

        sizes = ([20_000, 100_000, 1_000_000] if args.sizes == ap.get_default("sizes")
                 else [int(s) for s in args.sizes.split(",")])
        table = []
        with start_client("local", workers=args.workers, memory_limit="6GB") as client:
            for n in sizes:
                table += estimates(n, client)
                print_estimates(table[-3:])
        print_estimates(table)
        if args.save:
            Path(args.save).write_text(json.dumps(table))
        return
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
