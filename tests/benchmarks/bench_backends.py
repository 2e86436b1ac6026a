"""Benchmark: neighbour back ends for the shared graph, each in a fresh process.

Back ends: exact scikit-learn (brute force for d = 20, kd-tree for d = 3),
pynndescent (lenswork's settings), hnswlib (HNSW graph, built from its source
distribution: PyPI carries no wheel of it for every Python), faiss-cpu (HNSW
and IVF-flat indexes; PyPI carries wheels). Every run builds the graph the
Workspace builds (k = 30 neighbours besides self) over all rows, in a FRESH
subprocess, so the time includes the import and the first call (numba
compilation for pynndescent). Measured per run: import seconds, build seconds
(first call included), recall@15 and recall@30 against exact ground truth on
2,000 query rows (brute force, float64), peak RSS of the child (os.wait4), and a
digest of the (n, 31) index array; at 1e5 each approximate back end runs twice
with the same seed to check the graph is the same.

A second block measures numba's on-disk cache for pynndescent: a fresh
NUMBA_CACHE_DIR, a first and a second fresh process, and the default location.

Data: "gauss" (standard normal, the hard case), "manifold" (a torus surface
mapped into 20-d by a random orthonormal map, plus noise of sd 0.02 in every
coordinate), "gauss3" (1e6 x 3). The machine is shared: compare ratios against
pynndescent in the same run, not absolute seconds.

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_backends.py [--quick]
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

K = 30  # neighbours besides self: what the Workspace builds (min_neighbors = 30)
QUERIES = 2000
SEED = 20261202
HERE = Path(__file__).resolve().parent


# ---------------------------------------------------------------- data (child and parent)
def make_data(kind, n, d):
    """The benchmark table: seeded, regenerated identically in every process."""
    rng = np.random.default_rng([SEED, n, d, len(kind)])
    if kind in ("gauss", "gauss3"):
        return rng.normal(size=(n, d))
    if kind == "manifold":
        sys.path.insert(0, str(HERE.parent))
        from _shapes import torus

        T = torus(n, rng)  # 2-d surface in R^3
        Q, _ = np.linalg.qr(rng.normal(size=(d, 3)))  # orthonormal 3 -> d map
        return T @ Q.T + rng.normal(scale=0.02, size=(n, d))
    raise ValueError(kind)


def query_rows(n):
    return np.random.default_rng(SEED).choice(n, size=min(QUERIES, n), replace=False)


# ---------------------------------------------------------------- back ends (child side)
def build_exact(X, seed):
    from sklearn.neighbors import NearestNeighbors

    algorithm = "kd_tree" if X.shape[1] <= 6 else "brute"
    nn = NearestNeighbors(n_neighbors=K + 1, algorithm=algorithm).fit(X)
    return nn.kneighbors(X)[1]


def build_pynndescent(X, seed):
    import pynndescent

    index = pynndescent.NNDescent(X, n_neighbors=K + 1, metric="euclidean", random_state=seed,
                                  low_memory=True, compressed=False, n_jobs=-1, verbose=False)
    return index.neighbor_graph[0]


def _hnswlib(X, seed, threads):
    import hnswlib

    n, d = X.shape
    index = hnswlib.Index(space="l2", dim=d)
    index.init_index(max_elements=n, ef_construction=200, M=16, random_seed=seed)
    X32 = np.ascontiguousarray(X, dtype=np.float32)
    index.add_items(X32, np.arange(n), num_threads=threads)
    index.set_ef(2 * (K + 1))
    return index.knn_query(X32, k=K + 1, num_threads=threads)[0].astype(np.int64)


def build_hnswlib(X, seed):
    return _hnswlib(X, seed, -1)


def build_hnswlib_1thread(X, seed):
    return _hnswlib(X, seed, 1)


def build_faiss_hnsw(X, seed):
    import faiss

    n, d = X.shape
    X32 = np.ascontiguousarray(X, dtype=np.float32)
    index = faiss.IndexHNSWFlat(d, 16)
    index.hnsw.efConstruction = 200
    index.add(X32)
    index.hnsw.efSearch = 2 * (K + 1)
    return index.search(X32, K + 1)[1]


def build_faiss_ivf(X, seed):
    import faiss

    n, d = X.shape
    X32 = np.ascontiguousarray(X, dtype=np.float32)
    nlist = int(4 * np.sqrt(n))  # common practice: nlist ~ 4 sqrt(n), nprobe a few per cent
    quantizer = faiss.IndexFlatL2(d)
    index = faiss.IndexIVFFlat(quantizer, d, nlist)
    index.cp.seed = seed
    train = X32[np.random.default_rng(seed).choice(n, size=min(n, 64 * nlist), replace=False)]
    index.train(train)
    index.add(X32)
    index.nprobe = 16
    return index.search(X32, K + 1)[1]


BACKENDS = {
    "exact": build_exact,
    "pynndescent": build_pynndescent,
    "hnswlib": build_hnswlib,
    "hnswlib-1thread": build_hnswlib_1thread,
    "faiss-hnsw": build_faiss_hnsw,
    "faiss-ivf": build_faiss_ivf,
}
IMPORTS = {"exact": "sklearn.neighbors", "pynndescent": "pynndescent", "hnswlib": "hnswlib",
           "hnswlib-1thread": "hnswlib", "faiss-hnsw": "faiss", "faiss-ivf": "faiss"}


def peak_rss_mib():
    """This process's peak resident set (VmHWM), MiB.

    Not getrusage: Linux carries the parent's high-water mark into a child's
    ru_maxrss across fork and exec, VmHWM belongs to the new address space.
    """
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def child(spec, out_dir):
    import importlib

    X = make_data(spec["kind"], spec["n"], spec["d"])
    data_rss = peak_rss_mib()
    start = time.perf_counter()
    importlib.import_module(IMPORTS[spec["backend"]])
    t_import = time.perf_counter() - start
    idx = np.asarray(BACKENDS[spec["backend"]](X, spec["seed"]), dtype=np.int64)
    t_total = time.perf_counter() - start
    q = query_rows(spec["n"])
    np.save(Path(out_dir) / "found.npy", idx[q])
    digest = hashlib.sha256(np.ascontiguousarray(idx).tobytes()).hexdigest()[:16]
    print(json.dumps({"import_s": t_import, "build_s": t_total, "digest": digest,
                      "data_MiB": data_rss, "peak_MiB": peak_rss_mib()}))


def child_truth(spec, out_dir):
    """Exact float64 neighbours of the query rows by brute force (self excluded)."""
    X = make_data(spec["kind"], spec["n"], spec["d"])
    q = query_rows(spec["n"])
    sq = np.einsum("ij,ij->i", X, X)
    true = np.empty((len(q), K), dtype=np.int64)
    step = max(1, int(2e7 // spec["n"]))  # a (step, n) float64 block of about 160 MB
    for s in range(0, len(q), step):
        rows = q[s:s + step]
        D = sq[rows][:, None] + sq[None, :] - 2 * X[rows] @ X.T
        D[np.arange(len(rows)), rows] = np.inf
        part = np.argpartition(D, K, axis=1)[:, :K]
        order = np.argsort(np.take_along_axis(D, part, axis=1), axis=1)
        true[s:s + step] = np.take_along_axis(part, order, axis=1)
    np.save(Path(out_dir) / "truth.npy", true)
    print(json.dumps({}))


def child_numba(spec, out_dir):
    """First pynndescent call on a small array: mostly compilation (or cache loading)."""
    start = time.perf_counter()
    import numba
    import pynndescent

    t_import = time.perf_counter() - start
    X = np.random.default_rng(0).normal(size=(2000, 20))
    _ = pynndescent.NNDescent(X, n_neighbors=K + 1, random_state=0, low_memory=True,
                              compressed=False, n_jobs=-1).neighbor_graph
    where = numba.config.CACHE_DIR or "(beside the sources, __pycache__)"
    print(json.dumps({"import_s": t_import, "build_s": time.perf_counter() - start,
                      "cache_dir": where}))


# ---------------------------------------------------------------- parent
def run_child_rss(mode, spec, out_dir, env=None):
    """Run one child and return its record with its own peak RSS (os.wait4)."""
    cmd = [sys.executable, __file__, "--child", mode, json.dumps(spec), str(out_dir)]
    with tempfile.TemporaryFile("w+") as fout, tempfile.TemporaryFile("w+") as ferr:
        wall0 = time.perf_counter()
        proc = subprocess.Popen(cmd, stdout=fout, stderr=ferr, text=True, env=env)
        _, status, usage = os.wait4(proc.pid, 0)
        proc.returncode = os.waitstatus_to_exitcode(status)
        wall = time.perf_counter() - wall0
        fout.seek(0)
        ferr.seek(0)
        out, err = fout.read(), ferr.read()
    if proc.returncode != 0:
        lines = err.strip().splitlines()
        return {"error": lines[-1] if lines else f"exit {proc.returncode}", "wall_s": wall}
    rec = json.loads(out.strip().splitlines()[-1])
    rec["wall_s"] = wall
    rec.setdefault("peak_MiB", usage.ru_maxrss / 1024)
    return rec


def recall(found, truth, q, k):
    hits = 0
    for i, row in enumerate(q):
        f = [j for j in found[i] if j != row][:k]
        hits += len(set(f) & set(truth[i, :k].tolist()))
    return hits / (len(q) * k)


def installed(module):
    import importlib.util

    return importlib.util.find_spec(module) is not None


def bench_backends(cases, print_row):
    for kind, n, d, backends, repeat_n in cases:
        with tempfile.TemporaryDirectory() as tmp:
            spec = {"kind": kind, "n": n, "d": d, "seed": SEED}
            run_child_rss("truth", spec, tmp)
            truth = np.load(Path(tmp) / "truth.npy")
            q = query_rows(n)
            ref = None
            for b in backends:
                if not installed(IMPORTS[b].split(".")[0]):
                    print_row({"data": kind, "n": n, "d": d, "backend": b,
                               "note": "not installed"})
                    continue
                runs = 2 if (n <= repeat_n and b != "exact") else 1
                digests = []
                for _ in range(runs):
                    rec = run_child_rss("build", dict(spec, backend=b), tmp)
                    if "error" in rec:
                        break
                    digests.append(rec["digest"])
                row = {"data": kind, "n": n, "d": d, "backend": b}
                if "error" in rec:
                    row["note"] = rec["error"][:60]
                    print_row(row)
                    continue
                found = np.load(Path(tmp) / "found.npy")
                if b == "pynndescent":
                    ref = rec["build_s"]
                row.update(import_s=rec["import_s"], build_s=rec["build_s"],
                           recall15=recall(found, truth, q, 15),
                           recall30=recall(found, truth, q, 30),
                           peak_MiB=rec["peak_MiB"], data_MiB=rec["data_MiB"],
                           same_graph=("yes" if len(set(digests)) == 1 else "NO")
                           if runs == 2 else ("exact" if b == "exact" else "1 run"))
                if ref:
                    row["time/pynnd"] = rec["build_s"] / ref
                print_row(row)


def bench_numba(print_row):
    import pynndescent

    src = Path(pynndescent.__file__).parent
    print(f"pynndescent {pynndescent.__version__} at {src}")
    print(f"  {count_cached()}")
    with tempfile.TemporaryDirectory() as tmp, tempfile.TemporaryDirectory() as cache:
        for label, env in [("default location, process 1", None),
                           ("default location, process 2", None),
                           ("fresh NUMBA_CACHE_DIR, process 1", {"NUMBA_CACHE_DIR": cache}),
                           ("same NUMBA_CACHE_DIR, process 2", {"NUMBA_CACHE_DIR": cache}),
                           ("same NUMBA_CACHE_DIR, process 3", {"NUMBA_CACHE_DIR": cache})]:
            rec = run_child_rss("numba", {}, tmp, env=dict(os.environ, **env) if env else None)
            files = sum(1 for _ in Path(cache).rglob("*.nbi")) if env else None
            print_row({"numba cache": label, "import_s": rec.get("import_s"),
                       "first_call_s": rec.get("build_s"), "cache_dir": rec.get("cache_dir"),
                       "nbi_files": files, "note": rec.get("error", "")})


def count_cached():
    """How many of pynndescent's numba functions ask for the on-disk cache (cache=True)."""
    import importlib
    import pkgutil

    import pynndescent
    from numba.core.dispatcher import Dispatcher

    total = cached = 0
    uncached = []
    for info in pkgutil.iter_modules(pynndescent.__path__):
        mod = importlib.import_module(f"pynndescent.{info.name}")
        for name, obj in vars(mod).items():
            if isinstance(obj, Dispatcher) and obj.__module__ == mod.__name__:
                total += 1
                if type(obj._cache).__name__ == "NullCache":
                    uncached.append(f"{info.name}.{name}")
                else:
                    cached += 1
    hot = [u for u in uncached if u.startswith(("pynndescent_.", "utils.", "rp_trees."))]
    return (f"{cached} of {total} module-level numba functions have cache=True; uncached in the "
            f"build path: {', '.join(hot[:12])}{' ...' if len(hot) > 12 else ''}")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="1e4 and 3e4 rows, a smoke run")
    parser.add_argument("--child", nargs=3, help=argparse.SUPPRESS)
    parser.add_argument("--skip-numba", action="store_true", help="skip the numba cache block")
    parser.add_argument("--only", choices=["1e5", "1e6"], help="run one size block only")
    args = parser.parse_args()
    if args.child:
        mode, spec, out_dir = args.child
        {"build": child, "truth": child_truth, "numba": child_numba}[mode](json.loads(spec),
                                                                          out_dir)
        return
    cols = ["data", "n", "d", "backend", "import_s", "build_s", "time/pynnd", "recall15",
            "recall30", "peak_MiB", "data_MiB", "same_graph", "note"]

    def print_row(row):
        print("  ".join(f"{c}={_fmt(row[c])}" for c in cols if c in row)
              if "backend" in row else
              "  ".join(f"{c}={_fmt(v)}" for c, v in row.items() if v is not None), flush=True)

    every = ["pynndescent", "exact", "hnswlib", "hnswlib-1thread", "faiss-hnsw", "faiss-ivf"]
    big = ["pynndescent", "hnswlib", "faiss-hnsw"]  # IVF-flat: low recall at 1e5 x 20
    if args.quick:
        cases = [("gauss", 10_000, 20, every, 10**9), ("gauss3", 30_000, 3, every, 0)]
    else:
        cases = []
        if args.only in (None, "1e5"):
            cases += [("gauss", 100_000, 20, every, 10**9),
                      ("manifold", 100_000, 20, every, 10**9)]
        if args.only in (None, "1e6"):
            # exact brute force at 1e6 x 20 is ~2,000 s here (bench_neighbors.py): left out
            cases += [("gauss", 1_000_000, 20, big, 0), ("manifold", 1_000_000, 20, big, 0),
                      ("gauss3", 1_000_000, 3, ["pynndescent", "exact", "hnswlib",
                                                "faiss-hnsw"], 0)]
    if not args.skip_numba:
        bench_numba(print_row)
    bench_backends(cases, print_row)


def _fmt(v):
    return f"{v:.4g}" if isinstance(v, float) else str(v)


if __name__ == "__main__":
    main()
