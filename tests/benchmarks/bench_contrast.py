"""Benchmark: ranking data columns for graph features (lenswork.contrast_columns).

One graph over n rows (a noisy circle with a flare, 12 extra numeric columns and
one categorical column), every feature of its summary contrasted against the rest
of the rows, and against its neighbours. Reference in the same run: a plain loop
that calls ``scipy.stats.ks_2samp`` and ``scipy.stats.mannwhitneyu`` on the same
two groups of every (feature, numeric column) pair -- what a script would do by
hand (with the same exact / asymptotic KS choice). Prints seconds, peak traced memory
and the ratio.

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_contrast.py [--quick]
"""

from __future__ import annotations

import argparse

import numpy as np
import scipy.stats
from _util import measure, print_table, timed

from lenswork import PointCloud, Workspace, build_graph, contrast_columns
from lenswork.contrast import KS_EXACT_MAX


def make_cloud(n, rng):
    angle = rng.uniform(0, 2 * np.pi, n)
    flare = rng.uniform(size=n) < 0.1
    t = rng.beta(1, 1.6, n)
    base = np.column_stack([np.cos(angle), np.sin(angle)])
    base[flare] = np.column_stack([1 + 0.8 * t[flare], 0.5 * t[flare]])
    base += rng.normal(0, 0.03, base.shape)
    extra = base @ rng.normal(size=(2, 12)) + rng.normal(0, 0.5, (n, 12))
    extra[flare, :3] += 2 * t[flare, None]
    X = np.column_stack([base, extra])
    names = ["x", "y"] + [f"c{j}" for j in range(12)]
    kind = np.where(flare, "b", rng.choice(["a", "c", "d"], n)).astype(object)
    return PointCloud.from_array(X, feature_names=names, passthrough={"kind": kind})


def reference(graph, cloud, result):
    """ks_2samp + mannwhitneyu per (feature, numeric column), on the groups contrast used."""
    M = graph.membership.tocsc()
    for f in result.features:
        inside = np.asarray(M[:, f["nodes"]].sum(axis=1)).ravel() > 0
        for j in range(cloud.d):
            x, y = cloud.X[inside, j], cloud.X[~inside, j]
            method = "exact" if x.size * y.size <= KS_EXACT_MAX else "asymp"  # as contrast does
            scipy.stats.ks_2samp(x, y, method=method)
            scipy.stats.mannwhitneyu(x, y)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true")
    args = ap.parse_args()
    sizes = [10_000, 30_000] if args.quick else [10_000, 100_000, 1_000_000]
    rows = []
    for n in sizes:
        rng = np.random.default_rng(3030)
        cloud = make_cloud(n, rng)
        # the graph over the two shape columns (kd-tree neighbours); the contrast reads all 15
        shape = PointCloud.from_array(cloud.X[:, :2], feature_names=["x", "y"])
        graph, t_graph = timed(build_graph, cloud.X[:, 0],
                               Workspace(shape, random_state=0, neighbor_method="exact"),
                               intervals=12)
        ws = Workspace(cloud, random_state=0)
        res, sec, peak, _ = measure(contrast_columns, graph, ws)
        _, sec_nb = timed(contrast_columns, graph, ws, against="neighbours")
        _, ref = timed(reference, graph, cloud, res)
        rows.append({"n": n, "features": len(res.features), "tests": len(res.rows),
                     "graph s": round(t_graph, 2), "contrast s": round(sec, 2),
                     "neighbours s": round(sec_nb, 2), "scipy loop s": round(ref, 2),
                     "ratio": round(ref / sec, 2), "peak MiB": round(peak, 1)})
        print_table(rows[-1:])
    print()
    print_table(rows)


if __name__ == "__main__":
    main()
