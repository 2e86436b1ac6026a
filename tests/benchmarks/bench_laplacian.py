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
3. Modes (``--modes``): the exact mode against the sample mode (20,000
   landmarks, Nystrom extension) on the swiss roll and the torus at 1e5 and 2e5
   rows (``--mode-sizes``; 1e6 is opt-in): the all-rows graph seconds, the exact
   solve after it, the sample mode in all (its own landmark graph, the solve,
   the extension, the held-out error estimate), their ratio, and the agreement:
   |corr| per vector and the R^2 of each exact vector on all sample vectors
   (the torus has pairs of near-equal eigenvalues, within which vectors may
   rotate), next to the sample mode's own error estimate. This sets the row
   threshold of ``mode="auto"``.

       flock /tmp/lenswork-bench.lock /work/venv/bin/python tests/benchmarks/bench_laplacian.py \\
           --modes --mode-sizes 100000 200000 1000000

4. Solvers (``--solvers``): the eigensolver alone, on one affinity per case
   (noisy swiss roll; 20-d Gaussian) at 1e4 and 1e5 rows (``--solver-sizes``),
   4 vectors: :func:`lenswork.linalg.laplacian_eigs` against
   :func:`scipy.sparse.linalg.lobpcg` (no preconditioner; and with our
   aggregation V-cycle as ``M``, which isolates the LOBPCG loop itself) and
   :func:`scipy.sparse.linalg.eigsh` (ARPACK on ``S``, ``which="LA"``), all on
   ``A = I - D^-1/2 W D^-1/2`` with the trivial vector as the constraint / one
   extra vector, the same relative target ``||A u - theta u|| <= 1e-3 theta``
   (scipy: absolute ``tol`` = 1e-3 times our smallest eigenvalue), 500 iterations
   at most (eigsh: 1e5 restarts), each in a fresh process with a 600 s limit.
   Reported: seconds, iterations, the largest relative residual measured the
   same way for all, the eigenvalues, |corr| with our vectors (up to sign) and
   peak traced memory.

       flock /tmp/lenswork-bench.lock /work/venv/bin/python tests/benchmarks/bench_laplacian.py \\
           --solvers
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


def _modes_child(kind, n):
    """Exact against sample mode on one data set (in a fresh process)."""
    import warnings

    from lenswork import Workspace, get_lens

    X = _data(kind, n)
    ws = Workspace(X, random_state=0)
    lens = get_lens("laplacian")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        start = time.perf_counter()
        ws.neighbors(K)
        graph_s = time.perf_counter() - start
        start = time.perf_counter()
        exact = lens(ws, components=M, k=K, mode="exact")
        exact_s = time.perf_counter() - start
        tracemalloc.start()
        start = time.perf_counter()
        sample = lens(ws, components=M, k=K, mode="sample")
        sample_s = time.perf_counter() - start
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
    E = np.column_stack([c.values for c in exact])
    S = np.column_stack([c.values for c in sample])
    corr = [float(abs(np.corrcoef(E[:, j], S[:, j])[0, 1])) for j in range(M)]
    A = np.c_[np.ones(n), S]
    coef, *_ = np.linalg.lstsq(A, E, rcond=None)
    resid = ((E - A @ coef) ** 2).sum(axis=0)
    r2 = (1.0 - resid / ((E - E.mean(axis=0)) ** 2).sum(axis=0)).tolist()
    info = sample[0].info
    return {
        "case": f"modes_{kind}", "n": n, "graph_s": round(graph_s, 2),
        "exact_s": round(exact_s, 2), "sample_s": round(sample_s, 2),
        "landmark_solve_s": info["landmark_solve_seconds"],
        "extension_s": info["extension_seconds"], "estimate_s": info["error_estimate_seconds"],
        "landmarks": info["landmarks"], "abs_corr": corr, "r2": r2,
        "estimated_error": info["extension_errors"],
        "exact_eigenvalues": exact[0].info["eigenvalues"],
        "sample_eigenvalues": info["eigenvalues"],
        "sample_peak_mb": round(peak / 2**20, 1), "process_peak_rss_mb": _peak_rss_mb(),
    }


# ---------------------------------------------------------------- solvers on one affinity
SOLVERS = ("lenswork", "scipy_lobpcg", "scipy_lobpcg_our_vcycle", "scipy_eigsh",
           "scipy_lobpcg_pyamg_sa")  # the last needs pyamg (not a dependency): skipped without
SOLVER_CASES = ("roll", "gauss20")
SOLVER_TOL = 1e-3


def _affinity_file(kind, n):
    return f"/tmp/lenswork-bench-affinity-{kind}-{n}.npz"


def _prepare_child(kind, n):
    """Build the k-NN graph and heat affinity once; save W (and our solution) for the solvers."""
    import scipy.sparse as sp

    from lenswork.lenses._affinity import knn_affinity
    from lenswork.workspace import neighbor_graph

    X = _data(kind, n)
    start = time.perf_counter()
    W, _ = knn_affinity(neighbor_graph(X, K, random_state=0), "heat")
    sp.save_npz(_affinity_file(kind, n), W.tocsr())
    return {"case": kind, "n": n, "graph_s": round(time.perf_counter() - start, 2)}


def _solver_child(kind, n, solver):
    """One solver on the saved affinity (in a fresh process): seconds, residuals, agreement."""
    import warnings

    import scipy.sparse as sp
    from scipy.sparse.linalg import LinearOperator, eigsh, lobpcg

    from lenswork.linalg import (
        AggregationPreconditioner,
        graph_hierarchy,
        laplacian_eigs,
        one_blas_thread,
        symmetric_operator,
    )

    W = sp.load_npz(_affinity_file(kind, n)).tocsr()
    deg = np.asarray(W.sum(axis=1)).ravel()
    A, _ = symmetric_operator(W, deg)
    t = np.sqrt(deg) / np.linalg.norm(np.sqrt(deg))
    ref = ours_min = None
    if solver != "lenswork":  # our solution (run first) gives the reference and the target
        ref = np.load(_affinity_file(kind, n) + ".ours.npy")
        ours_min = float(np.load(_affinity_file(kind, n) + ".ours_theta.npy").min())
    rng = np.random.default_rng(0)
    iters = None
    tracemalloc.start()
    start = time.perf_counter()
    with warnings.catch_warnings(), one_blas_thread():
        warnings.simplefilter("ignore")
        if solver == "lenswork":
            x, info = laplacian_eigs(W, M, rng=rng, tol=SOLVER_TOL, max_iter=500)
            U = x * np.sqrt(deg)[:, None]
            theta = np.array(info["eigenvalues"])
            iters = info["iterations"]
        elif solver in ("scipy_lobpcg", "scipy_lobpcg_our_vcycle"):
            nb = M + 4
            X0 = rng.standard_normal((n, nb))
            Mop = None
            if solver == "scipy_lobpcg_our_vcycle":
                graphs, _, aggs = graph_hierarchy(W, deg, nb, rng)
                pre = AggregationPreconditioner(A, np.sqrt(deg), graphs, aggs, rng)
                Mop = LinearOperator(A.shape, matvec=lambda v: pre(v.reshape(-1, 1)).ravel(),
                                     matmat=pre, dtype=np.float64)
            theta, U, hist = lobpcg(A, X0, M=Mop, Y=t[:, None], tol=SOLVER_TOL * ours_min,
                                    maxiter=500, largest=False, retResidualNormsHistory=True)
            iters = len(hist)
            order = np.argsort(theta)[:M]
            theta, U = theta[order], U[:, order]
        elif solver == "scipy_lobpcg_pyamg_sa":
            import pyamg

            nb = M + 4
            X0 = rng.standard_normal((n, nb))
            # smoothed aggregation on the singular A with its null vector as near-null space;
            # the V-cycle's input and output are projected off that vector (its coarsest
            # level is the null space itself, whose pseudo-inverse would blow it up)
            ml = pyamg.smoothed_aggregation_solver(A, B=t[:, None], symmetry="hermitian")

            def sa_cycle(R):
                R = np.asarray(R, dtype=np.float64).reshape(n, -1)
                R = R - np.outer(t, t @ R)
                Z = np.column_stack([ml.solve(R[:, j], maxiter=1, cycle="V", tol=1e-30)
                                     for j in range(R.shape[1])])
                return Z - np.outer(t, t @ Z)

            Mop = LinearOperator(A.shape, matvec=lambda v: sa_cycle(v).ravel(),
                                 matmat=sa_cycle, dtype=np.float64)
            theta, U, hist = lobpcg(A, X0, M=Mop, Y=t[:, None],
                                    tol=SOLVER_TOL * ours_min, maxiter=500, largest=False,
                                    retResidualNormsHistory=True)
            iters = len(hist)
            order = np.argsort(theta)[:M]
            theta, U = theta[order], U[:, order]
        else:
            S = sp.diags(np.ones(n)) - A
            mu, U = eigsh(S, k=M + 1, which="LA", tol=SOLVER_TOL * ours_min, maxiter=100_000,
                          v0=np.sqrt(deg))
            order = np.argsort(-mu)[1:]
            theta, U = 1.0 - mu[order], U[:, order]
    seconds = time.perf_counter() - start
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    U = U / np.linalg.norm(U, axis=0)
    theta_q = np.einsum("ij,ij->j", U, A @ U)
    rel = np.linalg.norm(A @ U - U * theta_q, axis=0) / np.abs(theta_q)
    if solver == "lenswork":
        np.save(_affinity_file(kind, n) + ".ours.npy", U)
        np.save(_affinity_file(kind, n) + ".ours_theta.npy", theta_q)
        corr = [1.0] * M
    else:
        corr = [float(abs(U[:, j] @ ref[:, j])) for j in range(M)]
    return {
        "case": kind, "n": n, "solver": solver, "seconds": round(seconds, 2),
        "iterations": iters, "max_rel_residual": float(rel.max()),
        "eigenvalues": theta_q.tolist(), "abs_corr_with_ours": corr,
        "peak_mb": round(peak / 2**20, 1), "process_peak_rss_mb": _peak_rss_mb(),
    }


def _run_solvers(sizes, solvers=SOLVERS, reuse=False):
    import importlib.util
    import os

    if importlib.util.find_spec("pyamg") is None:
        solvers = [s for s in solvers if "pyamg" not in s]
    rows = []
    for n in sizes:
        for kind in SOLVER_CASES:
            if reuse and os.path.exists(_affinity_file(kind, n) + ".ours.npy"):
                prep = {"case": kind, "n": n, "graph_s": float("nan")}  # from an earlier run
            else:
                prep = _run_child_args(["--prepare-child", kind, str(n)], kind, n, timeout=1800)
            print(json.dumps(prep), flush=True)
            if "error" in prep:
                continue
            for solver in solvers:
                row = _run_child_args(["--solver-child", kind, str(n), solver], kind, n,
                                      timeout=600)
                row.setdefault("solver", solver)
                row["graph_s"] = prep["graph_s"]
                rows.append(row)
                print(json.dumps(row), flush=True)
    _print_solvers(rows)


def _print_solvers(rows):
    print(f"\neigensolvers on one heat affinity, {M} vectors, k={K}, target "
          f"||A u - theta u|| <= {SOLVER_TOL:g} theta (seconds after the affinity)")
    print(f"{'case':8s} {'n':>7s} {'solver':24s} {'seconds':>8s} {'ratio':>6s} {'iters':>6s} "
          f"{'max rel res':>11s} {'lambda_1':>9s} {'min|corr|':>9s} {'peakMB':>7s}")
    base = {(r["case"], r["n"]): r["seconds"] for r in rows
            if r.get("solver") == "lenswork" and "error" not in r}
    for r in rows:
        if "error" in r:
            print(f"{r['case']:8s} {r['n']:7d} {r['solver']:24s}  error/timeout: {r['error']}")
            continue
        ratio = r["seconds"] / base[(r["case"], r["n"])] if (r["case"], r["n"]) in base else 0
        print(f"{r['case']:8s} {r['n']:7d} {r['solver']:24s} {r['seconds']:8.2f} {ratio:6.1f} "
              f"{str(r['iterations']):>6s} {r['max_rel_residual']:11.1e} "
              f"{r['eigenvalues'][0]:9.2e} {min(r['abs_corr_with_ours']):9.6f} "
              f"{r['peak_mb']:7.0f}")
    print("  ratio = seconds / lenswork seconds on the same affinity")


def _run_child_args(args, kind, n, timeout):
    try:
        out = subprocess.run([sys.executable, __file__, *args], capture_output=True, text=True,
                             timeout=timeout, check=False)
    except subprocess.TimeoutExpired:
        return {"case": kind, "n": n, "error": f"over {timeout} s"}
    if out.returncode != 0:
        return {"case": kind, "n": n, "error": out.stderr.strip().splitlines()[-1:]}
    return json.loads(out.stdout.strip().splitlines()[-1])


def _print_modes(rows):
    print(f"\nexact against sample mode, {M} vectors, k={K}, heat weights "
          f"(seconds; exact = solve after the shared graph; sample = everything)")
    print(f"{'case':12s} {'n':>8s} {'graph':>7s} {'exact':>7s} {'sample':>7s} "
          f"{'ratio*':>7s} {'ext':>6s}  1-|corr| per vector / estimate / 1-R^2")
    for r in rows:
        if "error" in r:
            print(f"{r['case']:12s} {r['n']:8d}  error: {r['error']}")
            continue
        ratio = (r["graph_s"] + r["exact_s"]) / r["sample_s"]
        gap = " ".join(f"{1 - c:.1e}" for c in r["abs_corr"])
        est = " ".join(f"{e:.1e}" for e in r["estimated_error"])
        r2 = " ".join(f"{1 - v:.1e}" for v in r["r2"])
        print(f"{r['case']:12s} {r['n']:8d} {r['graph_s']:7.2f} {r['exact_s']:7.2f} "
              f"{r['sample_s']:7.2f} {ratio:7.1f} {r['extension_s']:6.2f}  [{gap}] / [{est}] "
              f"/ [{r2}]  rss {r['process_peak_rss_mb']:.0f} MB")
    print("  * ratio = (graph + exact) / sample: the exact mode's cost when no other lens "
          "needs the all-rows graph")


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


def _run_child(kind, n, timeout=900, flag="--child"):
    out = subprocess.run(
        [sys.executable, __file__, flag, kind, str(n)], capture_output=True, text=True,
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
    from lenswork.lenses._affinity import knn_affinity

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
    W, _ = knn_affinity(neighbor_graph(X, K), "heat")
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
    parser.add_argument("--modes", action="store_true",
                        help="only the exact-against-sample comparison (roll, torus)")
    parser.add_argument("--mode-sizes", nargs="+", type=int, default=[100_000, 200_000])
    parser.add_argument("--solvers", action="store_true",
                        help="only the eigensolver comparison (ours, scipy lobpcg, eigsh)")
    parser.add_argument("--solver-sizes", nargs="+", type=int, default=[10_000, 100_000])
    parser.add_argument("--solver-names", nargs="+", choices=SOLVERS, default=list(SOLVERS),
                        help="solvers to run (lenswork first: it is the reference)")
    parser.add_argument("--reuse", action="store_true",
                        help="reuse the affinities and our solution saved by an earlier run")
    parser.add_argument("--prepare-child", nargs=2, help=argparse.SUPPRESS)
    parser.add_argument("--solver-child", nargs=3, help=argparse.SUPPRESS)
    parser.add_argument("--child", nargs=2, metavar=("CASE", "N"), help=argparse.SUPPRESS)
    parser.add_argument("--modes-child", nargs=2, metavar=("CASE", "N"), help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        print(json.dumps(_child(args.child[0], int(args.child[1]))))
        return
    if args.prepare_child:
        print(json.dumps(_prepare_child(args.prepare_child[0], int(args.prepare_child[1]))))
        return
    if args.solver_child:
        kind, n, solver = args.solver_child
        print(json.dumps(_solver_child(kind, int(n), solver)))
        return
    if args.solvers:
        _run_solvers(args.solver_sizes, args.solver_names, args.reuse)
        return
    if args.modes_child:
        print(json.dumps(_modes_child(args.modes_child[0], int(args.modes_child[1]))))
        return
    if args.modes:
        rows = []
        for n in args.mode_sizes:
            for kind in ("roll", "torus"):
                rows.append(_run_child(kind, n, timeout=1800, flag="--modes-child"))
                print(json.dumps(rows[-1]), flush=True)
        _print_modes(rows)
        return
    results = run(args.quick, cases=args.cases, sizes=args.sizes, versus_n=args.versus_n)
    _print(results)


if __name__ == "__main__":
    main()
