"""Benchmark: the ball cover against the interval product cover on several lenses.

For a noisy curve and a noisy surface in 3 lens dimensions (the lenses are the sample's
coordinates) at n = 1e4, 1e5 (and 1e6 without --quick), prints the element count, the
(point, element) pairs and the seconds of fit + incidence for

* the interval product cover, 10 intervals per lens (10 ** 3 = 1,000 elements);
* the ball cover at its default spacing (radius 0.1 on the rank scale),

and build_graph end to end for both on the same workspace (the neighbour graph is
computed once, before the timings), with the ball / interval ratio in the same run.

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_ball_cover.py [--quick]
"""

from __future__ import annotations

import warnings

import numpy as np
from _util import print_table, quick_flag, timed

from lenswork import LensworkWarning, Workspace, build_graph
from lenswork.graph import BallCover, IntervalCover


def curve(n, rng):
    t = rng.uniform(0, 4 * np.pi, n)
    return np.column_stack([np.cos(t), np.sin(t), t / (4 * np.pi)]) + rng.normal(0, 0.02, (n, 3))


def surface(n, rng):
    u, v = rng.uniform(0, 1, (2, n))
    return np.column_stack([u, v, np.sin(3 * u) * v]) + rng.normal(0, 0.02, (n, 3))


def cover_time(cover, X):
    def run():
        c = cover.fit(X)
        return c, c.incidence(order=c.values_[:, 0])

    (c, (rows, _)), secs = timed(run)
    return c.n_elements, rows.size, secs


def main():
    quick = quick_flag(__doc__)
    sizes = (10_000, 100_000) if quick else (10_000, 100_000, 1_000_000)
    rng = np.random.default_rng(8)
    out = []
    warnings.simplefilter("ignore", LensworkWarning)
    for shape, make in (("curve", curve), ("surface", surface)):
        for n in sizes:
            X = make(n, rng)
            ws = Workspace(X)
            ws.neighbors(15)
            e_i, p_i, t_i = cover_time(IntervalCover(intervals=10), X)
            e_b, p_b, t_b = cover_time(BallCover(), X)
            _, g_i = timed(build_graph, X, ws, intervals=10)
            _, g_b = timed(build_graph, X, ws, cover="ball")
            out.append({"shape": shape, "n": n, "interval_elements": e_i, "ball_elements": e_b,
                        "interval_pairs": p_i, "ball_pairs": p_b,
                        "interval_cover_s": t_i, "ball_cover_s": t_b,
                        "interval_graph_s": g_i, "ball_graph_s": g_b,
                        "graph_ratio_ball_over_interval": g_b / g_i})
    print_table(out, list(out[0]))


if __name__ == "__main__":
    main()
