"""Benchmarks of the eccentricity lenses (run under flock, see the helper rules).

    flock /tmp/lenswork-bench.lock /work/venv/bin/python tests/benchmarks/bench_eccentricity.py
    ... --quick    (small smoke run)

``run(quick=False)`` returns a list of result dicts; as a script it prints a table.
"""

from __future__ import annotations

import math

import numpy as np
from _util import measure, print_records, quick_flag
from scipy.spatial.distance import cdist

from lenswork import eccentricity, geodesic_eccentricity, neighbor_graph


def _cdist_eccentricity(X, p, block=2000):
    """Reference: chunked scipy cdist, (mean_y d^p)^(1/p) (max for p = inf)."""
    out = np.empty(len(X))
    for i in range(0, len(X), block):
        D = cdist(X[i:i + block], X)
        out[i:i + block] = D.max(axis=1) if math.isinf(p) else np.mean(D**p, axis=1) ** (1 / p)
    return out


def _versus_cdist(n, d, p, rng):
    X = rng.normal(size=(n, d))
    ref, t_ref, _, _ = measure(lambda: _cdist_eccentricity(X, p))
    ours, t, peak, _ = measure(lambda: eccentricity(X, p=p, mode="exact"))
    return {
        "bench": f"eccentricity p={p:g} vs cdist", "n": n, "d": d, "seconds": t,
        "ref_seconds": t_ref, "ratio": t_ref / t, "peak_mb": peak,
        "max_rel_err": float(np.max(np.abs(ours / ref - 1))),
    }


def _scaling(n, d, p, rng):
    X = rng.normal(size=(n, d))
    (values, info), t, peak, _ = measure(lambda: eccentricity(X, p=p, return_info=True))
    row = {"bench": f"eccentricity p={p:g} auto", "n": n, "d": d, "seconds": t, "peak_mb": peak,
           "mode": info["mode"]}
    if "rel_se_median" in info:
        row["rel_se_median"] = info["rel_se_median"]
    if "rel_gap_median" in info:
        row["rel_gap_median"] = info["rel_gap_median"]
    return row


def _geodesic(n, rng, landmarks=200, k=15):
    # a noisy 2-torus in 3-d: the workspace's exact kd-tree graph serves any n at d = 3
    u, v = rng.uniform(0, 2 * np.pi, (2, n))
    X = np.c_[(2 + np.cos(v)) * np.cos(u), (2 + np.cos(v)) * np.sin(u), np.sin(v)]
    X += rng.normal(scale=0.02, size=X.shape)
    graph, t_graph, _, _ = measure(lambda: neighbor_graph(X, k))
    (values, info), t, peak, _ = measure(
        lambda: geodesic_eccentricity(X, neighbors=graph, landmarks=landmarks, return_info=True)
    )
    return {
        "bench": f"geodesic_eccentricity p=2 landmarks={landmarks}", "n": n, "d": 3,
        "seconds": t, "graph_seconds": t_graph, "peak_mb": peak, "mode": info["mode"],
        "rel_se_median": info.get("rel_se_median"),
    }


def run(quick=False):
    rng = np.random.default_rng(0)
    eccentricity(rng.normal(size=(50, 3)), p=1, mode="exact")  # warm-up: imports, thread pools
    results = []
    n_ref = 5_000 if quick else 30_000
    results.append(_versus_cdist(n_ref, 20, 2.0, rng))
    results.append(_versus_cdist(n_ref, 20, 1.0, rng))
    sizes = (10_000, 30_000) if quick else (10_000, 100_000, 1_000_000)
    for n in sizes:
        for p in (2.0, 1.0, math.inf):
            results.append(_scaling(n, 20, p, rng))
    for n in ((10_000,) if quick else (10_000, 100_000, 1_000_000)):
        results.append(_geodesic(n, rng))
    return results


KEYS = ["bench", "n", "d", "mode", "seconds", "ref_seconds", "ratio", "graph_seconds",
            "peak_mb", "max_rel_err", "rel_se_median", "rel_gap_median"]


if __name__ == "__main__":
    print_records(run(quick=quick_flag(__doc__, "small smoke run")), KEYS)
