"""Two-sample statistics of the column contrast, on plain arrays.

=============================  ==============================================
name                           what it computes
=============================  ==============================================
benjamini_hochberg             Benjamini-Hochberg (1995) step-up q-values,
                               NaN-aware (``scipy.stats.false_discovery_control``
                               on the finite p-values)
cliffs_delta                   Cliff's delta from the Mann-Whitney U
cramers_v                      Cramér's V of a contingency table (no correction)
circular_rank_correlation      rank circular-linear correlation (Mardia 1976)
SortedColumn                   one numeric column sorted once; U and the KS
                               distance of any two row sets in O(n)
numeric_contrast               Cliff's delta, the standardised mean difference
                               and the two-sample KS test of two row sets
=============================  ==============================================

The module knows nothing of graphs or tables: arrays in, numbers out.
:mod:`lenswork.contrast` applies it to the features of a graph.

References
----------
.. [1] Y. Benjamini and Y. Hochberg, "Controlling the false discovery rate: a
   practical and powerful approach to multiple testing", JRSS B 57, 1995.
.. [2] N. Cliff, "Dominance statistics: ordinal analyses to answer ordinal
   questions", Psychological Bulletin 114, 1993.
.. [3] H. Cramér, *Mathematical Methods of Statistics*, 1946.
.. [4] K. V. Mardia, "Linear-circular correlation coefficients and rhythmometry",
   Biometrika 63, 1976.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from ._errors import ParameterError

__all__ = [
    "KS_EXACT_MAX",
    "SortedColumn",
    "benjamini_hochberg",
    "circular_rank_correlation",
    "cliffs_delta",
    "cramers_v",
    "numeric_contrast",
]


def benjamini_hochberg(pvalues):
    """Benjamini-Hochberg (1995) step-up adjusted p-values (q-values).

    ``q_(i) = min_{j >= i} min(1, m p_(j) / j)`` over the sorted p-values; a
    hypothesis is rejected at false discovery rate ``alpha`` when its q-value is
    ``<= alpha``. Missing p-values (NaN) stay NaN and do not count in ``m``.

    Parameters
    ----------
    pvalues : array-like of float in [0, 1]

    Returns
    -------
    ndarray of float, same shape

    Notes
    -----
    The finite p-values go to ``scipy.stats.false_discovery_control(method="bh")``
    (O(m log m): one sort, one running minimum from the end); this function adds
    the NaN handling and lenswork's error. scipy's q-values equal the step-up
    formula above to 2e-16 (``tests/test_contrast.py``; ``bench_partitions.py``).

    References
    ----------
    .. [1] Y. Benjamini and Y. Hochberg, JRSS B 57, 1995.

    Examples
    --------
    >>> benjamini_hochberg([0.01, 0.04, 0.03, np.nan]).round(3).tolist()
    [0.03, 0.04, 0.04, nan]
    """
    p = np.asarray(pvalues, dtype=np.float64)
    out = np.full(p.shape, np.nan)
    flat = p.ravel()
    ok = np.flatnonzero(np.isfinite(flat))
    if ok.size == 0:
        return out
    if (flat[ok] < 0).any() or (flat[ok] > 1).any():
        raise ParameterError("p-values must lie in [0, 1]; got a value outside it.")
    res = out.ravel()
    res[ok] = stats.false_discovery_control(flat[ok], method="bh")
    return res.reshape(p.shape)


def cliffs_delta(x, y):
    """Cliff's delta, ``P(X > Y) - P(X < Y)``, from the Mann-Whitney U of the pooled ranks.

    Equal to the rank-biserial correlation ``2 U / (n_x n_y) - 1`` (ties count
    one half), in [-1, 1]: 1 when every x exceeds every y. Invariant under any
    increasing transformation of the values.

    Examples
    --------
    >>> float(cliffs_delta([3, 4, 5], [1, 2, 3]))
    0.8888888888888888
    """
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    n1, n2 = x.size, y.size
    ranks = stats.rankdata(np.concatenate([x, y]))
    u1 = ranks[:n1].sum() - n1 * (n1 + 1) / 2.0
    return 2.0 * u1 / (n1 * n2) - 1.0


def cramers_v(table):
    """Cramér's V of a contingency table: ``sqrt(chi2 / (n (min(r, c) - 1)))``, no correction.

    Examples
    --------
    >>> round(float(cramers_v([[10, 0], [0, 10]])), 3)
    1.0
    """
    table = np.asarray(table, dtype=np.float64)
    chi2 = stats.chi2_contingency(table, correction=False)[0]
    k = min(table.shape) - 1
    return math.sqrt(chi2 / (table.sum() * k)) if k > 0 else float("nan")


def circular_rank_correlation(angle, x):
    """Rank circular-linear correlation of ``x`` with an angle, and where ``x`` peaks.

    The multiple correlation of the ranks of ``x`` on ``cos(angle)`` and
    ``sin(angle)``: ``R^2 = (r_c^2 + r_s^2 - 2 r_c r_s r_cs) / (1 - r_cs^2)`` with
    ``r_c = corr(rank x, cos)``, ``r_s = corr(rank x, sin)``, ``r_cs = corr(cos,
    sin)`` (Mardia 1976, on ranks), in [0, 1] and independent of where the
    angle starts. ``n R^2`` is compared with the chi-square law on 2 degrees of
    freedom for the p-value (its large-sample null law, common practice for a
    regression on two terms).

    Returns
    -------
    r : float
    pvalue : float
    peak : float
        Angle (radians) at which the fitted ``a + b cos + c sin`` of the ranks
        is largest.

    Examples
    --------
    >>> angle = np.linspace(0, 2 * np.pi, 200, endpoint=False)
    >>> r, p, peak = circular_rank_correlation(angle, np.cos(angle - 1.0))
    >>> round(r, 3), bool(p < 1e-10), round(peak, 1)
    (0.993, True, 1.0)
    """
    angle = np.asarray(angle, dtype=np.float64)
    rx = stats.rankdata(np.asarray(x, dtype=np.float64))
    c, s = np.cos(angle), np.sin(angle)
    if np.ptp(rx) == 0 or np.ptp(c) == 0 and np.ptp(s) == 0:
        return float("nan"), float("nan"), float("nan")

    def corr(a, b):
        sa, sb = a.std(), b.std()
        return 0.0 if sa == 0 or sb == 0 else float(np.mean((a - a.mean()) * (b - b.mean())) /
                                                    (sa * sb))

    rc, rs, rcs = corr(rx, c), corr(rx, s), corr(c, s)
    r2 = (rc * rc + rs * rs - 2 * rc * rs * rcs) / max(1.0 - rcs * rcs, 1e-12)
    r2 = min(max(r2, 0.0), 1.0)
    design = np.column_stack([np.ones_like(c), c, s])
    coef = np.linalg.lstsq(design, rx, rcond=None)[0]
    peak = float(np.arctan2(coef[2], coef[1]) % (2 * np.pi))
    return math.sqrt(r2), float(stats.chi2.sf(angle.size * r2, 2)), peak


#: Largest ``n_in * n_out`` whose KS p-value is exact (``ks_2samp(method="exact")``); above it
#: Smirnov's asymptotic law (``method="asymp"``). The exact law costs up to 0.2 s a call at
#: 5,000 x 5,000 rows (measured, scipy 1.17) and differs from the asymptotic one by a few per
KS_EXACT_MAX = 1_000_000


class SortedColumn:
    """One numeric column sorted once; every comparison walks the sorted order in O(n).

    For rows ``inside`` and ``other`` (disjoint masks), the comparison keeps the
    sorted positions of their union (still sorted), so the Mann-Whitney U (sum of
    average ranks of the inside rows) and the Kolmogorov-Smirnov distance
    (largest gap between the two empirical distribution functions, read at the
    end of each block of tied values) need no further sort.
    """

    def __init__(self, values):
        self.values = values
        finite = np.flatnonzero(np.isfinite(values))
        self.order = finite[np.argsort(values[finite], kind="stable")]
        self.sorted = values[self.order]

    def compare(self, inside, other):
        keep = (inside | other)[self.order]
        v = self.sorted[keep]
        lab = inside[self.order][keep]
        n = v.size
        n1 = int(lab.sum())
        n2 = n - n1
        ends = np.flatnonzero(np.append(v[1:] != v[:-1], True))  # last index of each tie block
        starts = np.append(0, ends[:-1] + 1)
        block_rank = (starts + ends + 2) / 2.0  # average 1-based rank of each block
        block_of = np.repeat(np.arange(ends.size), ends - starts + 1)
        u1 = block_rank[block_of][lab].sum() - n1 * (n1 + 1) / 2.0
        cum = np.cumsum(lab)[ends]
        d = float(np.max(np.abs(cum / n1 - (ends + 1 - cum) / n2)))
        return n1, n2, 2.0 * u1 / (n1 * n2) - 1.0, d


def numeric_contrast(col, inside, other):
    """(n_in, n_out, Cliff's delta, SMD, KS distance, KS p-value, mean_in, mean_out)."""
    n1, n2, delta, d = col.compare(inside, other)
    x_in, x_out = col.values[inside], col.values[other]
    x_in, x_out = x_in[np.isfinite(x_in)], x_out[np.isfinite(x_out)]
    pooled = math.sqrt(((n1 - 1) * x_in.var(ddof=1) + (n2 - 1) * x_out.var(ddof=1)) /
                       max(n1 + n2 - 2, 1))
    diff = float(x_in.mean() - x_out.mean())
    smd = diff / pooled if pooled > 0 else (math.copysign(math.inf, diff) if diff else 0.0)
    if n1 * n2 <= KS_EXACT_MAX:
        ks = stats.ks_2samp(x_in, x_out, method="exact")
        d, p = float(ks.statistic), float(ks.pvalue)
    else:  # Smirnov's asymptotic law, the formula of ks_2samp(method="asymp")
        en = n1 * n2 / (n1 + n2)
        p = float(np.clip(stats.kstwo.sf(d, np.round(en)), 0.0, 1.0))
    return n1, n2, delta, smd, d, p, float(x_in.mean()), float(x_out.mean())
