"""Benchmarks of the Gaussian density lens (run under flock, see the helper rules).

    flock /tmp/lenswork-bench.lock /work/venv/bin/python tests/benchmarks/bench_density.py
    ... --quick    (small smoke run)

``run(quick=False)`` returns a list of result dicts; as a script it prints a table.
Reference: scipy.stats.gaussian_kde (same Scott bandwidth, full covariance).
"""

from __future__ import annotations

import time

import numpy as np
from _util import measure, print_records, quick_flag
from scipy.stats import gaussian_kde

from lenswork import gaussian_density


def _exact_vs_scipy(n, d, rng):
    X = rng.normal(size=(n, d))
    ref, t_ref, _, _ = measure(lambda: gaussian_kde(X.T)(X.T))
    rows = []
    for precision in ("float64", "float32"):
        ours, t, peak, _ = measure(
            lambda precision=precision: gaussian_density(
                X, mode="exact", log=False, precision=precision
            )
        )
        rel = np.abs(ours / ref - 1)
        rows.append({
            "bench": f"density exact {precision} vs gaussian_kde", "n": n, "d": d, "seconds": t,
            "ref_seconds": t_ref, "ratio": t_ref / t, "peak_mb": peak,
            "max_rel_err": float(rel.max()), "within_rtol_1e-6": bool(np.all(rel <= 1e-6)),
        })
    return rows


def _scalable(n, d, rng, precision="float64", check=200, bandwidth="scott", mode="auto"):
    X = rng.normal(size=(n, d))
    (values, info), t, peak, _ = measure(
        lambda: gaussian_density(X, mode=mode, precision=precision, bandwidth=bandwidth,
                                 return_info=True)
    )
    row = {
        "bench": f"density {mode} {precision} bw={bandwidth}", "n": n, "d": d, "seconds": t,
        "peak_mb": peak, "mode": info["mode"], "self_share_median": info["self_share_median"],
    }
    if info["mode"] == "scalable" and check:
        # exact reference at `check` random points: scipy gaussian_kde over all n points
        rows = np.random.default_rng(1).choice(n, size=check, replace=False)
        kde = gaussian_kde(X.T)
        if bandwidth != "scott":
            kde.set_bandwidth(bw_method=info["bandwidth_factor"])
        start = time.perf_counter()
        exact = kde.logpdf(X[rows].T)
        row["check_seconds"] = time.perf_counter() - start
        rel = np.abs(np.expm1(values[rows] - exact))
        se = info["rel_se"][rows]
        row.update(
            median_rel_err=float(np.median(rel)), p90_rel_err=float(np.quantile(rel, 0.9)),
            rel_se_median=info["rel_se_median"], within_3se=float(np.mean(rel <= 3 * se)),
            others_rel_se_median=info["others_rel_se_median"],
        )
        # the off-self part alone (f minus each point's own term): what makes the lens vary
        row.update(_others_error(X, rows, values, exact, info))
    return row


def _others_error(X, rows, values, exact, info):
    """Relative error of the off-self part sum_{j != i} K(x_i - x_j), from the two log-densities."""
    n, d = X.shape
    # own term in log units: log K(0) - log n, with K(0) = (2 pi)^(-d/2) det(H)^(-1/2)
    H = np.cov(X.T) * info["bandwidth_factor"] ** 2
    log_own = -0.5 * (d * np.log(2 * np.pi) + np.linalg.slogdet(H)[1]) - np.log(n)

    def others(logf):
        return np.log(np.maximum(np.expm1(logf - log_own), 1e-300))

    rel = np.abs(np.expm1(others(values[rows]) - others(exact)))
    return {"others_median_rel_err": float(np.median(rel))}


def run(quick=False):
    rng = np.random.default_rng(0)
    gaussian_density(rng.normal(size=(50, 3)))  # warm-up: one-off imports and thread pools
    results = []
    n_ref = 5_000 if quick else 30_000
    results.extend(_exact_vs_scipy(n_ref, 20, rng))
    sizes = (10_000, 60_000) if quick else (10_000, 100_000, 1_000_000)
    for n in sizes:
        results.append(_scalable(n, 20, rng, check=50 if quick else 200))
    if not quick:
        results.append(_scalable(1_000_000, 20, rng, precision="float32"))
        results.append(_scalable(100_000, 20, rng, bandwidth="cv"))
    return results


KEYS = ["bench", "n", "d", "mode", "seconds", "ref_seconds", "ratio", "peak_mb",
            "max_rel_err", "within_rtol_1e-6", "median_rel_err", "p90_rel_err",
            "rel_se_median", "within_3se", "self_share_median", "others_median_rel_err",
            "others_rel_se_median", "check_seconds"]


if __name__ == "__main__":
    print_records(run(quick=quick_flag(__doc__, "small smoke run")), KEYS)
