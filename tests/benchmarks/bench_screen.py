"""Benchmark: ranking candidate lens columns (spread, smoothness, Spearman matrix, selection).

The lenses themselves are not timed here (each lens family has its own
benchmark): the columns are generated up front, put into a LensTable, and
``screen(table)`` ranks them. Reference in the same run: a loop over
``scipy.stats.spearmanr(x, y)`` for every pair of columns (what a script
without the one-product trick would do), and ``scipy.stats.spearmanr(A)`` on the
whole matrix (one call, ranks then corrcoef). At 1e6 rows the pair loop takes
several minutes, so by default it is timed on a sample of pairs and scaled to
all pairs (marked "extrapolated"); --full-reference times every pair.

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_screen.py [--quick]
"""

from __future__ import annotations

import argparse
import itertools
import time
import warnings

import numpy as np
import scipy.stats
from _util import measure, print_table

from lenswork import LensColumn, LensTable, LensworkWarning, PointCloud, screen


def make_columns(n, m, rng):
    """m lens-like columns on n rows: correlated families, ties, an outlier column, skew."""
    latent = rng.normal(size=(n, 4))
    cols = []
    for j in range(m):
        w = rng.normal(size=4)
        v = latent @ w + rng.normal(scale=0.3 + 0.1 * (j % 5), size=n)
        kind = j % 4
        if kind == 1:
            v = np.exp(v / 3)  # skewed, monotone map of a linear mix
        elif kind == 2:
            v = np.round(v, 1)  # many ties
        elif kind == 3 and j % 8 == 3:
            v[rng.integers(0, n, 5)] = 1e3  # a few far outliers
        cols.append(np.ascontiguousarray(v))
    return cols, latent


def table_of(cols, latent):
    # The cloud the columns come from: the screen's smoothness reads its neighbour graph.
    cloud = PointCloud.from_array(latent)
    return LensTable([LensColumn(f"c{j}", v) for j, v in enumerate(cols)], cloud)


def time_pairs(cols, pairs):
    start = time.perf_counter()
    out = {}
    for a, b in pairs:
        out[(a, b)] = scipy.stats.spearmanr(cols[a], cols[b]).statistic
    return out, time.perf_counter() - start


def run(quick=False, full_reference=False, m=40, repeat=3):
    rng = np.random.default_rng(20261202)
    sizes = [10_000, 100_000] if quick else [10_000, 100_000, 1_000_000]
    rows = []
    all_pairs = list(itertools.combinations(range(m), 2))
    for n in sizes:
        cols, latent = make_columns(n, m, rng)
        table = table_of(cols, latent)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", LensworkWarning)
            screen(table_of([c[:1000] for c in cols], latent[:1000]))  # warm-up (imports, BLAS threads)
            result, _, peak, rss = measure(screen, table, count=5)  # memory (tracemalloc on)
            times = []
            for _ in range(repeat):  # timing without tracemalloc; best of `repeat`
                start = time.perf_counter()
                screen(table, count=5)
                times.append(time.perf_counter() - start)
        secs, med = min(times), float(np.median(times))
        # reference 1: a loop over scipy.stats.spearmanr pairs
        if full_reference or n <= 100_000:
            pairs, label = all_pairs, "measured, all pairs"
        else:
            pick = rng.choice(len(all_pairs), size=40, replace=False)
            pairs, label = [all_pairs[i] for i in pick], "extrapolated from 40 pairs"
        ref, ref_secs = time_pairs(cols, pairs)
        ref_all = ref_secs * len(all_pairs) / len(pairs)
        err = max(abs(result.correlation[a, b] - r) for (a, b), r in ref.items())
        # reference 2: scipy.stats.spearmanr on the whole (n, m) matrix
        A = np.column_stack(cols)
        start = time.perf_counter()
        full = scipy.stats.spearmanr(A).statistic
        mat_secs = time.perf_counter() - start
        del A
        err_mat = float(np.max(np.abs(full - result.correlation)))
        rows.append({
            "n": n, "m": m, "screen_s": secs, "median_s": med, "peak_MiB": peak,
            "maxrss_MiB": rss,
            "scipy_pairs_s": ref_all, "pairs": label,
            "ratio_pairs": ref_all / secs, "scipy_matrix_s": mat_secs,
            "ratio_matrix": mat_secs / secs, "max_abs_diff": max(err, err_mat),
            "selected": ",".join(result.selected),
        })
    return rows


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes, a smoke run")
    parser.add_argument("--full-reference", action="store_true",
                        help="time every scipy pair at 1e6 rows too (several minutes)")
    parser.add_argument("--columns", type=int, default=40, help="candidate columns (default 40)")
    parser.add_argument("--repeat", type=int, default=3, help="timed runs of the screen (best)")
    args = parser.parse_args()
    out = run(args.quick, args.full_reference, args.columns, args.repeat)
    print_table(out, ["n", "m", "screen_s", "median_s", "peak_MiB", "maxrss_MiB", "scipy_pairs_s",
                      "ratio_pairs", "pairs", "scipy_matrix_s", "ratio_matrix", "max_abs_diff"])
    print("screen_s: best of --repeat runs; ratios use it. Reference times are single runs.")
    print("target: screen_s < 5 at n = 1e6, m = 40 (lenses not included)")
