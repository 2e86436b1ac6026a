"""Benchmark: the stability map's significant counts against the raw-count sweep it replaced.

Reference (same run, same process): the grid of raw feature counts alone,
``lenswork.probe.grid_counts(..., jitter=False)`` -- one graph build per cell
without its hole scales, what ``stability_map`` ran before it recorded each
cell's significant counts. Measured: ``stability_map`` itself, which adds per
cell the graph summary's significance (the extended persistence of every lens
on the graph) and, for several lenses, the builds at the coarser cover scales
that no cell of the grid already built.

Cases: the demo (3,000 rows) with one lens (laplacian_1) and two lenses
(pca_1 x pca_2) on the default 8 x 5 grid, as ``lenswork stability --demo``
runs them; then n-scaling on a noisy circle with a tail (one lens, x; two
lenses, x and y) at 2,000, 8,000 and 32,000 rows on a 4 x 2 grid. Prints
seconds (untraced), the ratio map / reference and the peak traced memory of each
(a second, traced run).

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_stability.py [--quick]
"""

from __future__ import annotations

import numpy as np
from _util import measure, print_table, quick_flag, timed

import lenswork as lw
from lenswork.demo import load_demo
from lenswork.graph._features import lens_label
from lenswork.probe import data_components, grid_counts, merged_settings
from lenswork.stability import MAP_INTERVALS, MAP_OVERLAPS, stability_map


def circle_with_tail(n, rng):
    t = rng.uniform(0, 2 * np.pi, n - n // 4)
    s = rng.uniform(0, 2, n // 4)
    X = np.vstack([np.column_stack([np.cos(t), np.sin(t)]), np.column_stack([1 + s, 0 * s])])
    return X + rng.normal(scale=0.03, size=X.shape)


def raw_sweep(table, ws, intervals, overlaps):
    """The map's former work: raw counts per cell (no significance, no hole scales)."""
    settings = merged_settings(None, None, {})
    cols = table.columns
    data_c = data_components(ws, cols, settings)
    return grid_counts(cols, ws, intervals, overlaps, settings, data_c, lens_label(cols))


def case(name, table, ws, intervals, overlaps):
    ws.neighbors(15)  # the shared graph and the data's components outside the timings
    raw_sweep(table, ws, intervals[:1], overlaps[:1])
    # seconds without tracing (tracemalloc slows the Python parts), then the traced peaks
    raw, t_raw = timed(raw_sweep, table, ws, intervals, overlaps)
    smap, t_map = timed(stability_map, table, ws, interval_counts=intervals, overlaps=overlaps)
    _, _, m_raw, _ = measure(raw_sweep, table, ws, intervals, overlaps)
    _, _, m_map, _ = measure(stability_map, table, ws, interval_counts=intervals,
                             overlaps=overlaps)
    assert all(np.array_equal(raw[k], smap.counts[k]) for k in ("loops", "flares", "nodes"))
    lead = "significant_holes" if len(table.columns) > 1 else "significant_loops"
    return {"case": name, "rows": ws.n, "cells": len(intervals) * len(overlaps),
            "raw_s": t_raw, "map_s": t_map, "ratio": t_map / t_raw,
            "raw_peak_MiB": m_raw, "map_peak_MiB": m_map,
            "lead_counts": sorted(set(smap.counts[lead].ravel().tolist()))}


def main():
    quick = quick_flag(__doc__)
    rows = []
    demo = lw.Workspace(load_demo(), random_state=0)
    grid = ((8, 10), (0.3,)) if quick else (MAP_INTERVALS, MAP_OVERLAPS)
    for spec in ("laplacian:components=1", "pca:components=2"):
        table = lw.compute_lenses(demo, [spec])
        rows.append(case(f"demo {spec}", table, demo, *grid))
        print_table(rows[-1:])
    sizes = (2000,) if quick else (2000, 8000, 32000)
    for n in sizes:
        X = circle_with_tail(n, np.random.default_rng([2026, n]))
        ws = lw.Workspace(X, random_state=0)
        for cols in ((0,), (0, 1)):
            table = lw.LensTable([lw.LensColumn(f"x{c}", X[:, c]) for c in cols], ws.cloud)
            rows.append(case(f"circle+tail {len(cols)} lens", table, ws, (6, 8, 10, 12),
                             (0.2, 0.4)))
            print_table(rows[-1:])
    print()
    print_table(rows)


if __name__ == "__main__":
    main()
