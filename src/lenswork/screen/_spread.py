"""Spread: does a lens column spread the points over its range?

A cover of a lens is a row of equal-length intervals over its min-max range
(Mapper, 2007). If a few outliers stretch the range, or ties pile many points
onto one value, most points fall into one interval and the graph has nothing
to show there. The spread score asks how evenly the points fill that range:

* ``entropy``: Shannon entropy of a histogram with B equal bins over the
  min-max range, divided by its maximum ``log B`` (Cover and Thomas,
  *Elements of Information Theory*, 2006, ch. 2). It is 1 when every bin holds
  the same share of points, and close to 0 when one bin holds nearly all of
  them: an outlier that stretches the range crushes the rest into the first
  bins and the entropy drops, so outliers are already punished here.
* ``largest_tie``: the share of points that sit on the single most repeated
  value (0 when no value repeats, 1 for a constant). A histogram cannot see
  inside a bin: half the points on one value still leaves the other bins
  full. No cover can split a tie, so the score is multiplied by
  ``1 - largest_tie``.

``spread = entropy * (1 - largest_tie)``, in [0, 1]. A cover laid on the
ranks of a lens instead (equal-count intervals) is even by construction; the
score then still flags ties, which ranks cannot split either, and says how far
the raw scale is from even. Two more figures are
reported to explain a low score, but do not enter it (they would count the
same fault twice): ``tied``, the share of points whose value occurs more than
once, and ``outliers``, the share of the min-max range left to the extreme 2 %
of points, ``1 - (q99 - q1) / (max - min)`` (0.02 for a uniform lens, about
0.3 for a Gaussian sample of a few thousand, near 1 when one point sits far
out). All of these are invariant under ``v -> a v + b`` with ``a != 0``: a
value within 1e-9 of the range from an interior bin edge counts half in each
bin beside it, so integer-valued lenses, whose values often sit on edges, score
the same in either direction. With fewer than 5 points per bin on average the
histogram takes fewer bins (at least 2).

References
----------
.. [1] T. M. Cover and J. A. Thomas, "Elements of Information Theory",
   2nd ed., Wiley, 2006.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._errors import ParameterError, warn_caller
from .._validation import check_int

__all__ = [
    "SpreadScore",
    "effective_bins",
    "histogram_entropy",
    "non_finite_score",
    "rank_sorted",
    "spread_from_sorted",
    "spread_score",
    "status_text",
]

#: Tail share on each side for the outlier-dominance figure (q1 .. q99).
_OUTLIER_TAIL = 0.01
#: At least this many points per histogram bin on average, else fewer bins.
_MIN_PER_BIN = 5
#: Values this close to an interior bin edge (relative to the range) count half on each side.
_EDGE_TOL = 1e-9


@dataclass(frozen=True)
class SpreadScore:
    """How well one lens column spreads the points over its range.

    Attributes
    ----------
    spread : float
        ``entropy * (1 - largest_tie)``, in [0, 1]; 0 for a constant or
        non-finite column.
    entropy : float
        Histogram entropy over the min-max range divided by ``log(bins)``.
    tied : float
        Share of points whose value occurs more than once.
    largest_tie : float
        Share of points on the most repeated value (0 if no value repeats).
    outliers : float
        ``1 - (q99 - q1) / (max - min)``: share of the range left to the extreme
        2 % of points (NaN for a constant or non-finite column).
    bins : int
        Histogram bins used.
    status : {"ok", "constant", "non-finite"}

    Examples
    --------
    >>> s = spread_score(np.r_[np.zeros(50), np.arange(50.0)])
    >>> s.status, s.largest_tie, round(s.tied, 2)
    ('ok', 0.51, 0.51)
    """

    spread: float
    entropy: float
    tied: float
    largest_tie: float
    outliers: float
    bins: int
    status: str = "ok"


def effective_bins(bins, n):
    """``bins``, or fewer when there are under ``_MIN_PER_BIN`` points per bin (at least 2)."""
    return int(max(2, min(bins, n // _MIN_PER_BIN)))


def rank_sorted(v):
    """Average ranks (1-based, ties averaged), the sorted values and the tie-group sizes.

    One argsort serves everything: the ranks for Spearman's rho, the sorted
    values for the histogram and quantiles, the group sizes for the ties.
    """
    n = v.shape[0]
    order = np.argsort(v)
    s = v[order]
    new = np.empty(n, dtype=bool)
    new[0] = True
    np.not_equal(s[1:], s[:-1], out=new[1:])
    starts = np.flatnonzero(new)
    counts = np.diff(np.append(starts, n))
    avg = starts + (counts + 1) / 2.0
    ranks = np.empty(n, dtype=np.float64)
    if counts.size == n:  # no ties: rank = position + 1
        ranks[order] = np.arange(1, n + 1, dtype=np.float64)
    else:
        ranks[order] = np.repeat(avg, counts)
    return ranks, s, counts


def _sorted_quantile(s, q):
    """numpy's default ("linear") quantile of an already sorted array."""
    pos = q * (s.shape[0] - 1)
    lo = int(math.floor(pos))
    hi = min(lo + 1, s.shape[0] - 1)
    return s[lo] + (pos - lo) * (s[hi] - s[lo])


def spread_from_sorted(s, counts, bins):
    """SpreadScore of a finite column from its sorted values and tie-group sizes."""
    n = s.shape[0]
    b = effective_bins(bins, n)
    lo, hi = s[0], s[-1]
    largest = int(counts.max())
    tied = 1.0 - float(np.count_nonzero(counts == 1)) / n
    if not hi > lo:
        return SpreadScore(0.0, 0.0, 1.0, 1.0, math.nan, b, "constant")
    hist = _sorted_histogram(s, b)
    entropy = _entropy(hist) / math.log(b)
    largest_tie = largest / n if largest > 1 else 0.0
    span = _sorted_quantile(s, 1 - _OUTLIER_TAIL) - _sorted_quantile(s, _OUTLIER_TAIL)
    outliers = min(1.0, max(0.0, 1.0 - float(span) / float(hi - lo)))
    entropy = min(1.0, max(0.0, entropy))
    return SpreadScore(
        entropy * (1.0 - largest_tie), entropy, tied, float(largest_tie), outliers, b, "ok"
    )


def _sorted_histogram(s, bins):
    """Counts of the equal-bin histogram over [min, max] from sorted values, O(bins log n).

    Bin i holds ``edge_i <= v < edge_(i+1)`` (the last bin also the maximum),
    edges from ``np.linspace(min, max, bins + 1)``, as ``np.histogram``; except
    that a value within ``_EDGE_TOL * (max - min)`` of an interior edge counts
    half in each bin beside it. Integer-valued lenses often put many points
    exactly on an edge; splitting them keeps the counts unchanged when the
    lens is negated or rescaled (which moves the edges by rounding only).
    Counts may therefore be halves.
    """
    inner = np.linspace(s[0], s[-1], bins + 1)[1:-1]
    tol = _EDGE_TOL * (s[-1] - s[0])
    below = np.searchsorted(s, inner - tol, side="left")
    upto = np.searchsorted(s, inner + tol, side="right")
    cum = 0.5 * (below + upto)
    return np.diff(np.concatenate(([0.0], cum, [float(s.shape[0])])))


def _entropy(counts):
    """Shannon entropy (nats) of a histogram given by its counts."""
    counts = np.asarray(counts, dtype=np.float64)
    p = counts[counts > 0] / counts.sum()
    return float(-(p * np.log(p)).sum())


def _as_column(values, what):
    v = np.asarray(values, dtype=np.float64)
    if v.ndim != 1:
        raise ParameterError(
            f"{what} must be 1-D (one value per row); got shape {v.shape}. "
            f"Pass one column at a time."
        )
    if v.shape[0] < 2:
        raise ParameterError(f"{what} needs at least 2 values; got {v.shape[0]}.")
    return v


def histogram_entropy(values, bins=20):
    """Shannon entropy (nats) of the equal-bin histogram over the min-max range.

    Parameters
    ----------
    values : array-like of shape (n_samples,)
        Finite values.
    bins : int, default=20

    Returns
    -------
    float
        ``H = -sum_i p_i log p_i`` with ``p_i`` the share of values in bin i;
        between 0 (all in one bin, or a constant) and ``log(bins)``.

    Raises
    ------
    ParameterError
        If ``bins < 1`` or a value is NaN or infinite.

    Notes
    -----
    The bins are those of ``np.histogram(values, bins)``, counted on the sorted
    values with ``2 bins`` binary searches, O(n log n) for the sort; a value
    within 1e-9 of the range from an interior edge counts half in each of the
    two bins beside it, so that the entropy does not depend on the direction
    of the lens or on the rounding of the edges. The plug-in
    estimate is biased low by about ``(bins - 1) / (2 n)`` (Miller 1955).

    References
    ----------
    .. [1] T. M. Cover and J. A. Thomas, "Elements of Information Theory", 2006, eq. 2.1.

    Examples
    --------
    >>> round(histogram_entropy(np.arange(1000.0), bins=10) / math.log(10), 6)
    1.0
    >>> histogram_entropy(np.r_[np.zeros(99), 1.0], bins=10) < 0.1
    True
    """
    bins = check_int("bins", bins, lo=1, context="histogram_entropy")
    v = _as_column(values, "histogram_entropy's values")
    if not np.isfinite(v).all():
        raise ParameterError(
            "histogram_entropy got NaN or infinite values; expected finite numbers. "
            "Drop or fill the missing values first."
        )
    s = np.sort(v)
    if not s[-1] > s[0]:
        return 0.0
    return _entropy(_sorted_histogram(s, bins))


def spread_score(values, *, bins=20):
    """Spread score of one lens column: does it spread the points over its range?

    Parameters
    ----------
    values : array-like of shape (n_samples,)
    bins : int, default=20
        Histogram bins over the min-max range; fewer are used when there are
        under 5 points per bin on average (at least 2). 20 is finer than the
        10-15 intervals a cover usually takes, so a lens that fills the
        histogram also fills the cover.

    Returns
    -------
    SpreadScore

    Warns
    -----
    LensworkWarning
        For a constant column or one holding NaN / infinite values (spread 0).

    Notes
    -----
    ``spread = (H / log B) * (1 - largest_tie)`` with ``H`` the entropy of the
    B-bin histogram on the min-max scale (Cover and Thomas 2006) and
    ``largest_tie`` the share of points on the most repeated value. Reasoning:
    outliers that stretch the range push most points into few bins and lower
    ``H`` by themselves; ties hidden inside one bin do not, and no cover can
    split them, hence the second factor. ``tied`` and ``outliers`` are reported
    as explanations only (see the module docstring). Every figure is invariant
    under ``v -> a v + b`` for ``a != 0`` (a negative ``a`` mirrors the
    histogram). Cost: one sort, O(n log n).

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> round(spread_score(rng.uniform(size=10_000)).spread, 2)
    1.0
    >>> squashed = np.r_[rng.normal(size=999), 1000.0]   # one far outlier
    >>> s = spread_score(squashed)
    >>> s.spread < 0.05, s.outliers > 0.99
    (True, True)
    """
    bins = check_int("bins", bins, lo=1, context="spread_score")
    v = _as_column(values, "spread_score's values")
    score = _spread_of(v, bins)
    if score.status != "ok":
        warn_caller(
            f"The lens column is {status_text(score.status)}: spread 0."
        )
    return score


def non_finite_score(bins, n):
    """The SpreadScore of a column of ``n`` values holding NaN or infinities: spread 0."""
    return SpreadScore(0.0, 0.0, math.nan, math.nan, math.nan, effective_bins(bins, n),
                       "non-finite")


def _spread_of(v, bins):
    if not np.isfinite(v).all():
        return non_finite_score(bins, v.shape[0])
    _, s, counts = rank_sorted(v)
    return spread_from_sorted(s, counts, bins)


def status_text(status):
    """A column status other than "ok" in words, for warnings and the ranking table."""
    return {"constant": "constant", "non-finite": "not finite (NaN or infinite values)"}[status]
