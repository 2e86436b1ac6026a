"""Partition agreement: lenswork's ARI against scikit-learn's, and Benjamini-Hochberg against scipy.

Run: ``flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_partitions.py [--quick]``.

* ``adjusted_rand_index`` (``lenswork.partitions``: one sparse contingency table,
  exact integer sums) against ``sklearn.metrics.adjusted_rand_score`` (which
  builds its own sparse contingency table with
  ``sklearn.metrics.cluster.contingency_matrix(sparse=True)``), on random labels
  and on two node partitions that mostly agree, n = 1e4 .. 1e7: seconds, peak
  traced memory, the ratio, and the largest difference of the values.
* ``benjamini_hochberg`` (``lenswork.stats``, which calls
  ``scipy.stats.false_discovery_control`` on the finite p-values) against the
  step-up formula written out here (Benjamini and Hochberg 1995), m = 1e2 .. 1e6.
"""

from __future__ import annotations

import numpy as np
from _util import measure, print_table, quick_flag
from scipy.stats import false_discovery_control
from sklearn.metrics import adjusted_rand_score

from lenswork.partitions import adjusted_rand_index
from lenswork.stats import benjamini_hochberg


def _step_up(p):
    """The Benjamini-Hochberg step-up q-values, written out (JRSS B 57, 1995)."""
    m = p.size
    order = np.argsort(p, kind="stable")
    scaled = p[order] * m / np.arange(1, m + 1)
    q = np.minimum(np.minimum.accumulate(scaled[::-1])[::-1], 1.0)
    out = np.empty(m)
    out[order] = q
    return out


def main():
    quick = quick_flag(__doc__)
    sizes = [10_000, 100_000] if quick else [10_000, 100_000, 1_000_000, 10_000_000]
    rng = np.random.default_rng(20)
    rows = []
    for n in sizes:
        for name, k in (("random, 100 labels", 100), ("close, n/50 labels", max(2, n // 50))):
            a = rng.integers(0, k, n)
            b = a.copy() if name.startswith("close") else rng.integers(0, k, n)
            if name.startswith("close"):
                flip = rng.random(n) < 0.1
                b[flip] = rng.integers(0, k, int(flip.sum()))
            ours, t_ours, m_ours, _ = measure(adjusted_rand_index, a, b)
            ref, t_ref, m_ref, _ = measure(adjusted_rand_score, a, b)
            rows.append({"n": f"{n:.0e}", "labels": name, "lenswork s": t_ours,
                         "sklearn s": t_ref, "ratio": t_ours / t_ref,
                         "lenswork MiB": m_ours, "sklearn MiB": m_ref,
                         "|diff|": abs(ours - ref)})
    print("adjusted Rand index: lenswork.partitions vs sklearn.metrics.adjusted_rand_score")
    print_table(rows)
    rows = []
    for m in ([100, 10_000] if quick else [100, 10_000, 1_000_000]):
        p = rng.uniform(0, 1, m) ** 4
        q, t_ours, _, _ = measure(benjamini_hochberg, p)
        ref, t_ref, _, _ = measure(_step_up, p)
        direct, t_scipy, _, _ = measure(false_discovery_control, p, method="bh")
        rows.append({"m": f"{m:.0e}", "lenswork s": t_ours, "formula s": t_ref,
                     "scipy s": t_scipy, "max |q - formula|": float(np.abs(q - ref).max()),
                     "max |q - scipy|": float(np.abs(q - direct).max())})
    print("\nBenjamini-Hochberg: lenswork.stats (scipy inside) vs the step-up formula")
    print_table(rows)


if __name__ == "__main__":
    main()
