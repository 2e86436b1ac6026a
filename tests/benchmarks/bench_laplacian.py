"""Benchmark of the Laplacian-eigenmap lens (lenswork.lenses._laplacian).

Run only under the shared lock (2 shared cores):

    flock /tmp/lenswork-bench.lock /work/venv/bin/python tests/benchmarks/bench_laplacian.py
    flock /tmp/lenswork-bench.lock /work/venv/bin/python tests/benchmarks/bench_laplacian.py --quick
    flock /tmp/lenswork-bench.lock /work/venv/bin/python tests/benchmarks/bench_laplacian.py \\
        --cases gauss20 --sizes 1000000     # the 20-d Gaussian at 1e6 (long: pynndescent)

What it measures
----------------
1. Against scikit-learn: ``sklearn.manifold.SpectralEmbedding`` (its default
   ``nearest_neighbors`` affinity and solver, 4 vectors, same k) against
   :func:`lenswork.laplacian_eigenmaps` on 20-d Gaussian data, both from the raw
   array (graph included), seconds and ratio. Agreement is checked with
   SpectralEmbedding on *our* affinity (``affinity="precomputed"``): |corr| per
   vector and the Rayleigh quotients of its vectors on our matrix.
2. n-scaling: the ``laplacian`` lens (4 vectors, k = 15, heat weights) through a
   Workspace on a noisy swiss roll and a noisy torus in 3-D (2-D manifolds: the
   clustered near-zero eigenvalues) and on 20-d Gaussian data, at n = 1e4, 1e5,
   1e6: neighbour-graph seconds (reported apart), eigen-solve seconds,
   iterations, largest residual ||S u - mu u||, eigenvalues, peak traced memory of
   the solve (tracemalloc) and the peak resident size of the process. Each case
   runs in a fresh process, so peaks do not mix.
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import time
import tracemalloc

import numpy as np

K = 15
M = 4
CASES = ("roll", "torus", "gauss20")
SIZES = (10_000, 100_000, 1_000_000)
QUICK_SIZES = (10_000,)
# The 20-d Gaussian at 1e6 needs a pynndescent graph of several minutes: opt in.
DEFAULT_SKIP = {("gauss20", 1_000_000)}


def _data(kind, n, seed=0):
    rng = np.random.default_rng(seed)
    if kind == "roll":
        from sklearn.datasets import make_swiss_roll

        X, _ = make_swiss_roll(n, noise=0.1, random_state=seed)
        return X
    if kind == "torus":
        a, b = rng.uniform(0, 2 * np.pi, (2, n))
        X = np.c_[(3 + np.cos(b)) * np.cos(a), (3 + np.cos(b)) * np.sin(a), np.sin(b)]
        return X + 0.05 * rng.normal(size=(n, 3))
    if kind == "gauss20":
        return rng.normal(size=(n, 20))
    raise ValueError(kind)


# ---------------------------------------------------------------- one case, in a child process
def _child(kind, n):
    import warnings

    from lenswork import Workspace, get_lens

    X = _data(kind, n)
    ws = Workspace(X, random_state=0)
    start = time.perf_counter()
    graph = ws.neighbors(K)
    graph_s = time.perf_counter() - start
    tracemalloc.start()
    start = time.perf_counter()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        cols = get_lens("laplacian")(ws, components=M, k=K)
    solve_s = time.perf_counter() - start
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    info = cols[0].info
    return {
        "case": kind, "n": n, "d": X.shape[1], "k": K, "m": M,
        "graph_method": graph.method, "graph_s": round(graph_s, 2), "solve_s": round(solve_s, 2),
        "iterations": info["iterations"], "method": info["method"], "levels": info["levels"],
        "smoothed_levels": info.get("smoothed_levels"), "converged": info["converged"],
        "max_residual": info["max_residual"], "eigenvalues": info["eigenvalues"],
        "residuals": info["residuals"], "components": info["graph_components"],
        "solve_peak_mb": round(peak / 2**20, 1),
        "process_peak_rss_mb": _peak_rss_mb(),
        "warnings": [str(w.message)[:120] for w in caught],
    }


def _peak_rss_mb():
    """Peak resident size of this process (VmHWM; ru_maxrss would carry the parent's over exec)."""
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return round(int(line.split()[1]) / 1024, 1)
    except OSError:
        pass
    return round(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, 1)


def _run_child(kind, n, timeout=900):
    out = subprocess.run(
        [sys.executable, __file__, "--child", kind, str(n)], capture_output=True, text=True,
        timeout=timeout, check=False,
    )
    if out.returncode != 0:
        return {"case": kind, "n": n, "error": out.stderr.strip().splitlines()[-1:]}
    return json.loads(out.stdout.strip().splitlines()[-1])


# ---------------------------------------------------------------- against scikit-learn
def _versus_sklearn(n, d=20):
    import warnings

    from sklearn.manifold import SpectralEmbedding

    from lenswork import laplacian_eigenmaps, neighbor_graph
    from lenswork.lenses._laplacian import _affinity

    X = np.random.default_rng(1).normal(size=(n, d))
    start = time.perf_counter()
    ours, info = laplacian_eigenmaps(X, M, k=K, return_info=True)
    ours_s = time.perf_counter() - start
    ref = SpectralEmbedding(n_components=M, affinity="nearest_neighbors", n_neighbors=K,
                            random_state=0)
    start = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref.fit_transform(X)
    sk_s = time.perf_counter() - start
    # Agreement on the same affinity (ours, precomputed).
    W, _ = _affinity(neighbor_graph(X, K), "heat")
    start = time.perf_counter()
    same = SpectralEmbedding(n_components=M, affinity="precomputed", random_state=0)
    theirs = same.fit_transform(W)
    sk_same_s = time.perf_counter() - start
    deg = np.asarray(W.sum(axis=1)).ravel()
    r = 1 / np.sqrt(deg)
    S = W.multiply(r[:, None]).multiply(r[None, :]).tocsr()
    quotients = []
    for j in range(M):
        u = np.sqrt(deg) * theirs[:, j]
        u /= np.linalg.norm(u)
        quotients.append(float(1 - u @ (S @ u)))
    corr = [float(abs(np.corrcoef(ours[:, j], theirs[:, j])[0, 1])) for j in range(M)]
    return {
        "case": "versus_sklearn", "n": n, "d": d, "k": K, "m": M,
        "ours_s": round(ours_s, 2), "sklearn_default_s": round(sk_s, 2),
        "ratio": round(sk_s / ours_s, 1), "sklearn_same_affinity_s": round(sk_same_s, 2),
        "abs_corr_same_affinity": [round(c, 6) for c in corr],
        "our_eigenvalues": info["eigenvalues"], "our_residuals": info["residuals"],
        "sklearn_rayleigh_quotients": quotients,
    }


# ---------------------------------------------------------------- driver
def run(quick=False, cases=CASES, sizes=None, versus_n=None):
    """Run the benchmark; returns a list of result dicts (also printed as tables)."""
    results = [_versus_sklearn(versus_n or (2000 if quick else 5000))]
    explicit = sizes is not None
    sizes = sizes or (QUICK_SIZES if quick else SIZES)
    for kind in cases:
        for n in sizes:
            if (kind, n) in DEFAULT_SKIP and not explicit:
                continue
            results.append(_run_child(kind, n))
    return results


def _print(results):
    vs = [r for r in results if r["case"] == "versus_sklearn"]
    for r in vs:
        print(f"\nversus sklearn SpectralEmbedding, n={r['n']}, d={r['d']}, k={r['k']}, "
              f"{r['m']} vectors (graph included in both)")
        print(f"  lenswork {r['ours_s']:.2f} s   sklearn (default) {r['sklearn_default_s']:.2f} s"
              f"   ratio {r['ratio']:.1f}x   sklearn on our affinity "
              f"{r['sklearn_same_affinity_s']:.2f} s")
        print(f"  |corr| per vector (same affinity): {r['abs_corr_same_affinity']}")
        print(f"  our eigenvalues      {np.round(r['our_eigenvalues'], 6).tolist()}")
        print(f"  sklearn's quotients  {np.round(r['sklearn_rayleigh_quotients'], 6).tolist()}")
        print(f"  our residuals        {[f'{x:.1e}' for x in r['our_residuals']]}")
    rows = [r for r in results if r["case"] != "versus_sklearn"]
    if not rows:
        return
    print(f"\nlaplacian lens, {M} vectors, k={K}, heat weights "
          f"(graph seconds apart; solve = everything after the graph)")
    head = (f"{'case':8s} {'n':>8s} {'graph':>7s} {'solve':>7s} {'iters':>5s} {'max res':>8s} "
            f"{'lambda_1':>9s} {'lambda_4':>9s} {'solveMB':>8s} {'rssMB':>7s}  levels")
    print(head)
    for r in rows:
        if "error" in r:
            print(f"{r['case']:8s} {r['n']:8d}  error: {r['error']}")
            continue
        lam = r["eigenvalues"]
        print(f"{r['case']:8s} {r['n']:8d} {r['graph_s']:7.2f} {r['solve_s']:7.2f} "
              f"{r['iterations']:5d} {r['max_residual']:8.1e} {lam[0]:9.2e} {lam[-1]:9.2e} "
              f"{r['solve_peak_mb']:8.0f} {r['process_peak_rss_mb']:7.0f}  {r['levels']}"
              + ("" if r["converged"] else "  NOT CONVERGED"))
        for w in r["warnings"]:
            print(f"{'':17s}warning: {w}")
    for kind in sorted({r["case"] for r in rows if "error" not in r}):
        pts = sorted((r["n"], r["solve_s"]) for r in rows if r["case"] == kind and "error" not in r)
        if len(pts) >= 2:
            slopes = [np.log(b[1] / a[1]) / np.log(b[0] / a[0]) for a, b in zip(pts, pts[1:])]
            print(f"  {kind}: solve-time exponent between sizes: {np.round(slopes, 2).tolist()}")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small smoke run")
    parser.add_argument("--cases", nargs="+", choices=CASES, default=list(CASES))
    parser.add_argument("--sizes", nargs="+", type=int, default=None)
    parser.add_argument("--versus-n", type=int, default=None,
                        help="rows for the sklearn comparison (default 5000; quick 2000)")
    parser.add_argument("--child", nargs=2, metavar=("CASE", "N"), help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        print(json.dumps(_child(args.child[0], int(args.child[1]))))
        return
    results = run(args.quick, cases=args.cases, sizes=args.sizes, versus_n=args.versus_n)
    _print(results)


if __name__ == "__main__":
    main()
