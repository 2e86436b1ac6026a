"""Screening: rank candidate lenses by spread and redundancy, keep a small non-redundant set.

A lens is worth covering when it *spreads* the points over its range and when
it says something the other chosen lenses do not. The screen measures both
and picks greedily.

Spread
------
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

Redundancy
----------
Two lenses that order the points the same way give the same cover up to a
reparametrisation, so redundancy is measured by Spearman's rank correlation
rho: average ranks (ties averaged), centred, scaled to unit length, and all
pairs from one matrix product ``Z Z^T`` (O(n m log n) for the ranks plus
O(n m^2) for the product; no loop over pairs). A monotone transform of a lens
(``exp``, ``log``, a rescaling) has ``|rho| = 1`` with it. The same product
against *reference* columns (a label, a measured quantity) shows which lens
tracks which variable.

Selection
---------
Each candidate gets a ``merit``: the weighted geometric mean of named score
columns (by default ``spread`` alone, ``weights={"spread": 1.0}``); a zero in
any weighted score gives merit 0. Greedy selection then repeatedly takes the
candidate with the largest ``gain = merit * (1 - max |rho| to the lenses
already taken)`` among those whose ``max |rho|`` is at most the ceiling, and
stops at ``count`` lenses, or when every remaining candidate is above the
ceiling, or when none is left with merit > 0. A later score column (for
example one from probing the graph each lens gives) enters by adding it to
:attr:`ScreenResult.scores` and to the weights, see :meth:`ScreenResult.rescore`.

Bad input
---------
A candidate column that is constant, or holds any NaN or infinity, gets
spread 0, a :class:`~lenswork.LensworkWarning` naming it, and is never
selected (registry lenses never hold NaN; an all-NaN column is treated the
same way rather than stopping the whole screen). Its correlations are NaN.
Asking for more lenses than there are usable candidates warns and selects the
usable ones. A reference column that is not numeric raises
:class:`~lenswork.ParameterError` naming it.

References
----------
.. [1] T. M. Cover and J. A. Thomas, "Elements of Information Theory",
   2nd ed., Wiley, 2006.
.. [2] C. Spearman, "The proof and measurement of association between two
   things", American Journal of Psychology 15, 1904.
.. [3] M. Carriere, B. Michel and S. Oudot, "Statistical analysis and
   parameter selection for Mapper", JMLR 19, 2018.
"""

from __future__ import annotations

import contextlib
import csv
import io
import json
import math
import numbers
import os
import shutil
import tempfile
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from . import _progress
from ._errors import InputError, LensworkError, LensworkWarning, ParameterError
from ._io import write_text
from ._validation import check_float, check_int
from .data import PointCloud
from .table import FORMATS, LensTable
from .workspace import Workspace

__all__ = [
    "DEFAULT_WEIGHTS",
    "ScreenResult",
    "Selection",
    "SpreadScore",
    "default_candidates",
    "histogram_entropy",
    "screen",
    "select_lenses",
    "spearman_matrix",
    "spread_score",
]

#: Score columns that enter the merit, and their weights (weighted geometric mean).
DEFAULT_WEIGHTS = {"spread": 1.0}
#: Tail share on each side for the outlier-dominance figure (q1 .. q99).
_OUTLIER_TAIL = 0.01
#: At least this many points per histogram bin on average, else fewer bins.
_MIN_PER_BIN = 5
#: Threads ranking columns at once (numpy sorts release the GIL), from this many values on.
_MAX_THREADS = 4
_THREADS_FROM = 2_000_000
#: Values this close to an interior bin edge (relative to the range) count half on each side.
_EDGE_TOL = 1e-9


# --------------------------------------------------------------------------- spread
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


def _effective_bins(bins, n):
    """``bins``, or fewer when there are under ``_MIN_PER_BIN`` points per bin (at least 2)."""
    return int(max(2, min(bins, n // _MIN_PER_BIN)))


def _rank_sorted(v):
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


def _spread_from_sorted(s, counts, bins):
    """SpreadScore of a finite column from its sorted values and tie-group sizes."""
    n = s.shape[0]
    b = _effective_bins(bins, n)
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
        warnings.warn(
            f"The lens column is {_status_text(score.status)}: spread 0.", LensworkWarning,
            stacklevel=2,
        )
    return score


def _spread_of(v, bins):
    if not np.isfinite(v).all():
        return SpreadScore(0.0, 0.0, math.nan, math.nan, math.nan,
                           _effective_bins(bins, v.shape[0]), "non-finite")
    _, s, counts = _rank_sorted(v)
    return _spread_from_sorted(s, counts, bins)


def _status_text(status):
    return {"constant": "constant", "non-finite": "not finite (NaN or infinite values)"}[status]


# --------------------------------------------------------------------------- redundancy
def _unit_ranks(columns):
    """(m, n) rows of centred average ranks scaled to unit length; NaN rows for constants."""
    columns = list(columns)
    n = columns[0].shape[0]
    Z = np.empty((len(columns), n), dtype=np.float64)
    for j, v in enumerate(columns):
        ranks = _rank_sorted(v)[0]
        _unit_row(ranks, Z[j])
    return Z


def _unit_row(ranks, out):
    """Centre average ranks (their mean is (n + 1) / 2 exactly) and scale to unit length."""
    n = ranks.shape[0]
    np.subtract(ranks, (n + 1) / 2.0, out=out)
    norm = math.sqrt(float(out @ out))
    if norm == 0.0:
        out.fill(np.nan)
    else:
        out /= norm


def _corr_from_unit(Za, Zb=None):
    """Spearman matrix from unit rank rows: one BLAS product, clipped to [-1, 1]."""
    C = Za @ (Za if Zb is None else Zb).T
    np.clip(C, -1.0, 1.0, out=C)
    if Zb is None:
        ok = np.isfinite(Za[:, 0]) if Za.shape[1] else np.zeros(Za.shape[0], bool)
        idx = np.flatnonzero(ok)
        C[idx, idx] = 1.0
    return C


def _matrix_columns(A, what):
    A = np.asarray(A, dtype=np.float64)
    if A.ndim == 1:
        A = A[:, None]
    if A.ndim != 2:
        raise ParameterError(
            f"{what} must be 2-D, of shape (n_samples, n_columns); got {A.ndim}-D."
        )
    if A.shape[0] < 2:
        raise ParameterError(
            f"{what} needs at least 2 rows for a rank correlation; got {A.shape[0]}."
        )
    bad = np.flatnonzero(~np.isfinite(A).all(axis=0))
    if bad.size:
        raise ParameterError(
            f"{what} column {int(bad[0])} holds NaN or infinite values; expected finite numbers. "
            f"Drop or fill the missing values first."
        )
    return [np.ascontiguousarray(A[:, j]) for j in range(A.shape[1])]


def spearman_matrix(A, B=None):
    """Spearman rank correlations between the columns of ``A`` (and of ``B``).

    Parameters
    ----------
    A : array-like of shape (n_samples, m)
        Columns are the variables (as ``scipy.stats.spearmanr(A)``).
    B : array-like of shape (n_samples, p), optional
        Reference columns; when given, the (m, p) cross matrix is returned.

    Returns
    -------
    ndarray of shape (m, m) or (m, p)
        rho in [-1, 1]; rows and columns of constant columns are NaN (rho is
        undefined there), with a :class:`~lenswork.LensworkWarning`.

    Raises
    ------
    ParameterError
        If a column holds NaN or infinite values, or the row counts differ.

    Notes
    -----
    Each column is replaced by its average ranks r (ties get the mean of the
    ranks they span), centred by (n + 1) / 2 and scaled to unit length:
    ``z = (r - (n + 1)/2) / ||r - (n + 1)/2||``. Then ``rho = Z^T Z`` (the
    Pearson correlation of the ranks, i.e. Spearman's rho with the tie
    correction) for all pairs in one BLAS product. Cost O(n m log n + n m^2).

    References
    ----------
    .. [1] C. Spearman, "The proof and measurement of association between two things", 1904.

    Examples
    --------
    >>> rho = spearman_matrix(np.array([[1, 5], [2, 6], [3, 7], [4, 8], [5, 7]]))
    >>> round(float(rho[0, 1]), 6)
    0.820783
    >>> x = np.arange(10.0)
    >>> spearman_matrix(np.c_[x, np.exp(x)], -x).round(6).ravel().tolist()
    [-1.0, -1.0]
    """
    cols = _matrix_columns(A, "spearman_matrix's A")
    Za = _unit_ranks(cols)
    Zb = None
    if B is not None:
        bcols = _matrix_columns(B, "spearman_matrix's B")
        if bcols[0].shape[0] != cols[0].shape[0]:
            raise ParameterError(
                f"spearman_matrix's A has {cols[0].shape[0]} rows and B has "
                f"{bcols[0].shape[0]}; expected the same rows in both."
            )
        Zb = _unit_ranks(bcols)
    constant = [j for j in range(Za.shape[0]) if not np.isfinite(Za[j, 0])]
    if Zb is not None:
        constant += [f"B{j}" for j in range(Zb.shape[0]) if not np.isfinite(Zb[j, 0])]
    if constant:
        warnings.warn(
            f"Constant column(s) {constant}: their rank correlations are undefined (NaN).",
            LensworkWarning, stacklevel=2,
        )
    return _corr_from_unit(Za, Zb)


# --------------------------------------------------------------------------- selection
@dataclass(frozen=True)
class Selection:
    """Result of :func:`select_lenses`.

    Attributes
    ----------
    indices : tuple of int
        Chosen candidates, in the order they were taken.
    gains : tuple of float
        ``merit * (1 - max |rho| to those taken before)`` at the moment each was taken.
    stop : {"count", "ceiling", "candidates"}
        Why selection stopped: the count was reached; every remaining usable
        candidate has ``|rho|`` above the ceiling with a chosen one; or no
        usable candidate with merit > 0 was left.

    Examples
    --------
    >>> sel = select_lenses(np.eye(3), [0.2, 0.9, 0.5], count=3)
    >>> sel.indices, sel.stop
    ((1, 2, 0), 'count')
    """

    indices: tuple
    gains: tuple
    stop: str


def select_lenses(correlation, merit, *, count=2, ceiling=0.8, usable=None):
    """Greedy non-redundant selection: best merit, discounted by redundancy.

    Parameters
    ----------
    correlation : array-like of shape (m, m)
        Rank correlations between the candidates (NaN entries count as 0 for
        the discount; mark such candidates unusable).
    merit : array-like of shape (m,)
        Non-negative merit of each candidate (e.g. its spread score).
    count : int, default=2
        Lenses to take at most.
    ceiling : float in (0, 1], default=0.8
        Never take a candidate whose ``|rho|`` with a chosen one exceeds this.
    usable : array-like of bool, shape (m,), optional
        Candidates that may be taken (default: all). Candidates with merit 0
        are never taken.

    Returns
    -------
    Selection

    Notes
    -----
    Step t takes ``argmax_j merit_j * (1 - max_{i in S} |rho_ij|)`` over the
    usable, untaken j with ``max_{i in S} |rho_ij| <= ceiling`` and merit > 0
    (S the lenses taken so far; the max over an empty S is 0, so the first
    pick is the best merit). Equal gains go to the earlier candidate, so the
    result is deterministic. Cost O(count m).

    Examples
    --------
    >>> rho = np.array([[1.0, 0.95, 0.1], [0.95, 1.0, 0.2], [0.1, 0.2, 1.0]])
    >>> sel = select_lenses(rho, [0.9, 0.8, 0.5], count=2, ceiling=0.8)
    >>> sel.indices, sel.stop
    ((0, 2), 'count')
    """
    merit = np.asarray(merit, dtype=np.float64)
    m = merit.shape[0]
    R = np.asarray(correlation, dtype=np.float64)
    if R.shape != (m, m):
        raise ParameterError(
            f"select_lenses got a correlation matrix of shape {R.shape} for {m} merits; "
            f"expected ({m}, {m})."
        )
    if merit.ndim != 1 or (np.isfinite(merit) & (merit >= 0)).sum() != m:
        raise ParameterError(
            "select_lenses expects merits as a 1-D array of finite numbers >= 0."
        )
    count = check_int("count", count, lo=1, context="select_lenses")
    ceiling = check_float("ceiling", ceiling, lo=0, hi=1, lo_open=True, context="select_lenses")
    ok = np.ones(m, dtype=bool) if usable is None else np.asarray(usable, dtype=bool).copy()
    ok &= merit > 0
    absr = np.nan_to_num(np.abs(R), nan=0.0)
    worst = np.zeros(m)  # max |rho| to the chosen set
    chosen, gains = [], []
    stop = "count"
    while len(chosen) < count:
        open_ = ok & (worst <= ceiling)
        if not open_.any():
            stop = "ceiling" if ok.any() else "candidates"
            break
        gain = np.where(open_, merit * (1.0 - worst), -np.inf)
        j = int(np.argmax(gain))
        chosen.append(j)
        gains.append(float(gain[j]))
        ok[j] = False
        worst = np.maximum(worst, absr[:, j])
    return Selection(tuple(chosen), tuple(gains), stop)


def _merit(scores, weights):
    """Weighted geometric mean of the named score columns (each in [0, 1])."""
    total = sum(weights.values())
    m = len(next(iter(scores.values())))
    log_sum = np.zeros(m)
    zero = np.zeros(m, dtype=bool)
    for name, w in weights.items():
        if w == 0:
            continue
        s = np.asarray(scores[name], dtype=np.float64)
        s = np.where(np.isfinite(s), s, 0.0)
        zero |= s <= 0
        with np.errstate(divide="ignore"):
            log_sum += w * np.log(np.where(s > 0, s, 1.0))
    merit = np.exp(log_sum / total)
    merit[zero] = 0.0
    return merit


def _check_weights(weights, scores):
    weights = dict(DEFAULT_WEIGHTS if weights is None else weights)
    if not weights:
        raise ParameterError(
            "The 'weights' parameter of screen is empty; expected at least one score column, "
            "e.g. {'spread': 1.0}."
        )
    for name, w in weights.items():
        if name not in scores:
            raise ParameterError(
                f"The 'weights' parameter of screen names score column {name!r}, which does "
                f"not exist. Score columns: {', '.join(scores)}."
            )
        check_float(f"weights[{name!r}]", w, lo=0, context="screen")
    if sum(weights.values()) <= 0:
        raise ParameterError("The 'weights' of screen sum to 0; give one a positive weight.")
    return {k: float(v) for k, v in weights.items()}


# --------------------------------------------------------------------------- candidates
def _scott_scale(X):
    """Scott's rule factor n^(-1/(d+4)) times the root-mean feature variance."""
    n, d = X.shape
    sigma = float(np.sqrt(np.mean(X.var(axis=0))))
    return n ** (-1.0 / (d + 4)) * (sigma if sigma > 0 else 1.0)


def default_candidates(data):
    """The default candidate set of the screen, as ``(lens name, params)`` pairs.

    Parameters
    ----------
    data : PointCloud, Workspace or array-like of shape (n_samples, n_features)

    Returns
    -------
    list of (str, dict)

    Notes
    -----
    Every lens family with parameters a practitioner would try first:

    - ``pca``, 3 components (fewer when there are fewer features);
    - ``laplacian``, 3 components, k = 15;
    - ``density`` at Scott's rule and at a bandwidth twice Scott's factor
      (``2 n^(-1/(d+4)) sigma``, sigma the root-mean feature variance): a local
      and a smoother view;
    - ``eccentricity`` with p = 1, 2 and inf;
    - ``dtm`` at two masses: k about 1 % of the rows (5 to 30 points) and 5 %
      (at least twice as many, at most 100 points): mass 0.01 and 0.05 from
      500 to 2,000 rows, 0.01 and 0.0333 at 3,000;
    - ``knn_distance``, k = 10;
    - ``geodesic_eccentricity``, p = 2 (distances along the neighbour graph).

    Raw data columns (the ``column`` lens) are not in the default set; add them
    with ``extra=["column:name=..."]``.

    Examples
    --------
    >>> specs = default_candidates(np.random.default_rng(0).normal(size=(500, 2)))
    >>> specs[0], len(specs)
    (('pca', {'components': 2}), 11)
    """
    if isinstance(data, (Workspace, PointCloud)):
        X = data.X
    else:
        X = np.asarray(data, dtype=np.float64)
        X = X[:, None] if X.ndim == 1 else X
    n, d = X.shape
    broad = float(f"{2.0 * _scott_scale(X):.3g}")
    # DTM: k = ceil(mass n) points; the local one about 1 % of the rows (5 to 30 points), the
    # broad one 5 % (at least twice the local mass, at most 100 points, the dtm lens's cap).
    # Masses are rounded (3 significant digits) in the direction that keeps k inside.
    if 0.01 * n < 5:
        local = min(1.0, _round_up(5 / n))
    else:
        local = 0.01 if 0.01 * n <= 30 else _round_down(30 / n)
    wide = min(1.0, max(0.05, 2 * local))
    if wide * n > 100:
        wide = _round_down(100 / n)
    dtm = [("dtm", {} if local == 0.01 else {"mass": local})]
    if wide > local:
        dtm.append(("dtm", {"mass": wide}))
    return [
        ("pca", {"components": min(3, d)}),
        ("laplacian", {"components": 3}),
        ("density", {}),
        ("density", {"bandwidth": broad}),
        ("eccentricity", {"p": 1}),
        ("eccentricity", {}),
        ("eccentricity", {"p": "inf"}),
        *dtm,
        ("knn_distance", {}),
        ("geodesic_eccentricity", {}),
    ]


def _round_down(x, digits=3):
    """``x`` rounded down to ``digits`` significant digits."""
    scale = 10.0 ** (digits - 1 - math.floor(math.log10(x)))
    return math.floor(x * scale) / scale


def _round_up(x, digits=3):
    """``x`` rounded up to ``digits`` significant digits."""
    scale = 10.0 ** (digits - 1 - math.floor(math.log10(x)))
    return math.ceil(round(x * scale, 9)) / scale


def _spec_label(name, params):
    if not params:
        return name
    return name + ":" + ",".join(f"{k}={v}" for k, v in params.items())


def _parse_spec(item):
    from .lenses import parse_lens

    if isinstance(item, str):
        return parse_lens(item)
    try:
        name, params = item
    except (TypeError, ValueError):
        raise ParameterError(
            f"Cannot read lens {item!r}; expected a name, a spec like 'dtm:mass=0.05' or a "
            f"(name, params) pair."
        ) from None
    return str(name), dict(params or {})


def _compute_candidates(ws, specs, *, strict):
    """Compute lens columns; with ``strict=False`` a failing lens warns and is skipped."""
    from .lenses import get_lens, lens_names

    columns, skipped, seen = [], [], set()
    known = set(lens_names())
    for i, (name, params) in enumerate(specs, 1):
        label = _spec_label(name, params)
        if not strict and name not in known:
            skipped.append({"lens": label, "reason": "not registered"})
            warnings.warn(
                f"Default lens {name!r} is not registered here; screening without it.",
                LensworkWarning, stacklevel=3,
            )
            continue
        spec = get_lens(name)
        try:
            with _progress.step(f"lens {i}/{len(specs)}: {label}"):
                cols = spec(ws, **params)
        except LensworkError as err:
            if strict:
                raise
            skipped.append({"lens": label, "reason": str(err)})
            warnings.warn(
                f"Default lens {label!r} was skipped: {err}", LensworkWarning, stacklevel=3
            )
            continue
        for col in cols:
            if col.name in seen:  # the same column asked twice (e.g. a default repeated)
                continue
            seen.add(col.name)
            columns.append(col)
    return columns, skipped


# --------------------------------------------------------------------------- references
def _reference_values(cloud, name):
    """A feature or passthrough column of ``cloud`` as float64 (NaN where missing)."""
    if name in cloud.feature_names:
        return cloud.X[:, list(cloud.feature_names).index(name)].astype(np.float64)
    if name not in cloud.passthrough:
        avail = [*cloud.feature_names, *cloud.passthrough]
        raise ParameterError(
            f"Reference column {name!r} is not in the data. Expected a feature or passthrough "
            f"column: {', '.join(map(str, avail))}."
        )
    raw = np.asarray(cloud.passthrough[name])
    if raw.dtype.kind in "biuf":
        return raw.astype(np.float64)
    out = np.empty(raw.shape[0], dtype=np.float64)
    for i, v in enumerate(raw):
        if v is None or (isinstance(v, str) and not v.strip()):
            out[i] = np.nan
            continue
        if isinstance(v, (bool, np.bool_)):
            out[i] = float(v)
            continue
        if isinstance(v, numbers.Real):
            out[i] = float(v)
            continue
        try:
            out[i] = float(str(v).strip())
        except ValueError:
            raise ParameterError(
                f"Reference column {name!r} is not numeric: row {int(cloud.row_numbers[i])} "
                f"holds {v!r}. Rank correlation needs numbers; pick a numeric column or encode "
                f"the labels as numbers."
            ) from None
    return out


def _reference_correlations(columns, refs, usable, Z):
    """(m, p) Spearman matrix of candidates against references, each on its finite rows.

    ``Z`` holds the candidates' unit rank rows over all rows; a reference with
    missing values is compared on its finite rows only, which needs the
    candidates ranked again on those rows.
    """
    m = len(columns)
    out = np.full((m, len(refs)), np.nan)
    idx = np.flatnonzero(usable)
    for k, (name, r) in enumerate(refs.items()):
        keep = np.isfinite(r)
        if keep.sum() < 3:
            warnings.warn(
                f"Reference column {name!r} has fewer than 3 finite values; its correlations "
                f"are NaN.", LensworkWarning, stacklevel=3,
            )
            continue
        if np.ptp(r[keep]) == 0:
            warnings.warn(
                f"Reference column {name!r} is constant; its correlations are NaN.",
                LensworkWarning, stacklevel=3,
            )
            continue
        if not idx.size:
            continue
        zr = np.empty(int(keep.sum()))
        _unit_row(_rank_sorted(r[keep])[0], zr)
        if keep.all():
            out[idx, k] = np.clip(Z[idx] @ zr, -1.0, 1.0)
        else:
            Zk = _unit_ranks([columns[j][keep] for j in idx])
            out[idx, k] = np.clip(np.nan_to_num(Zk, nan=0.0) @ zr, -1.0, 1.0)
            out[idx[~np.isfinite(Zk[:, 0])], k] = np.nan  # constant on these rows
    return out


# --------------------------------------------------------------------------- result
class ScreenResult:
    """Everything a screen found: scores, correlations, the selection and the lens columns.

    Hand it straight to the graph builder: :meth:`to_lens_table` gives the
    chosen columns.

    Attributes
    ----------
    lenses : LensTable
        Every candidate column, in candidate order.
    names : list of str
        Candidate column names.
    scores : dict of str -> ndarray of shape (m,)
        Score and diagnosis columns: ``spread``, ``entropy``, ``tied``,
        ``largest_tie``, ``outliers`` (and any added by :meth:`rescore`).
    weights : dict of str -> float
        Score columns entering the merit and their weights.
    merit : ndarray of shape (m,)
        Weighted geometric mean of the weighted score columns.
    correlation : ndarray of shape (m, m)
        Spearman rho between candidates (NaN for unusable ones).
    reference_names : list of str
    reference_correlation : ndarray of shape (m, p)
        Spearman rho of each candidate with each reference column.
    usable : ndarray of bool, shape (m,)
        False for constant or non-finite columns.
    selection : Selection
    selected : list of str
        Chosen column names, in the order taken.
    count, ceiling, bins : int, float, int
    skipped : list of dict
        Default lenses that could not be computed here, with the reason.

    Examples
    --------
    >>> from lenswork import LensColumn, LensTable, PointCloud
    >>> rng = np.random.default_rng(1)
    >>> cloud = PointCloud.from_array(rng.normal(size=(300, 2)))
    >>> table = LensTable([LensColumn("a", cloud.X[:, 0]), LensColumn("b", cloud.X[:, 1])],
    ...                   cloud)
    >>> result = screen(table, count=1)
    >>> result.to_lens_table().names == result.selected, len(result.rows())
    (True, 2)
    >>> probe = result.rescore(scores={"structure": [0.1, 1.0]},
    ...                        weights={"spread": 1, "structure": 1})
    >>> probe.selected
    ['b']
    """

    def __init__(self, lenses, scores, correlation, *, usable, weights, count, ceiling, bins,
                 reference_names=(), reference_correlation=None, skipped=(), status=None):
        self.lenses = lenses
        self.names = lenses.names
        self.scores = {k: np.asarray(v, dtype=np.float64) for k, v in scores.items()}
        self.correlation = correlation
        self.usable = np.asarray(usable, dtype=bool)
        self.status = list(status) if status is not None else ["ok"] * len(self.names)
        self.weights = _check_weights(weights, self.scores)
        self.count = count
        self.ceiling = ceiling
        self.bins = bins
        self.reference_names = list(reference_names)
        m = len(self.names)
        self.reference_correlation = (
            np.empty((m, 0)) if reference_correlation is None else reference_correlation
        )
        self.skipped = list(skipped)
        self.merit = _merit(self.scores, self.weights)
        self.merit[~self.usable] = 0.0
        self.selection = select_lenses(
            correlation, self.merit, count=count, ceiling=ceiling, usable=self.usable
        )
        self.selected = [self.names[j] for j in self.selection.indices]
        self._embedding = None
        self.probe = None  # a StructureProbe when the screen ran one

    # ---------------------------------------------------------------- API
    def to_lens_table(self):
        """The chosen lens columns as a LensTable, in the order they were taken.

        Raises
        ------
        ParameterError
            If nothing was selected (every candidate constant or non-finite).
        """
        if not self.selected:
            raise ParameterError(
                "The screen selected no lens: every candidate is constant or non-finite. "
                "Check the input data or add other lenses."
            )
        return self.lenses.select(self.selected)

    def rescore(self, *, scores=None, weights=None, count=None, ceiling=None):
        """A new result with added score columns / weights / count / ceiling; same lenses.

        Parameters
        ----------
        scores : dict of str -> array-like of shape (m,), optional
            Extra score columns in [0, 1] (higher is better), e.g. a structure
            probe; they join :attr:`scores` and the table.
        weights : dict of str -> float, optional
            Weights of the score columns in the merit (default: the current ones).
        count, ceiling : optional
            New selection limits (default: the current ones).

        Returns
        -------
        ScreenResult
        """
        new_scores = dict(self.scores)
        m = len(self.names)
        for name, vals in (scores or {}).items():
            v = np.asarray(vals, dtype=np.float64)
            if v.shape != (m,):
                raise ParameterError(
                    f"Score column {name!r} has shape {v.shape}; expected ({m},), one value per "
                    f"candidate in the order of ScreenResult.names."
                )
            finite = v[np.isfinite(v)]
            if finite.size and (finite.min() < 0 or finite.max() > 1):
                raise ParameterError(
                    f"Score column {name!r} must hold values in [0, 1] (higher is better); got "
                    f"values in [{finite.min():.3g}, {finite.max():.3g}]. Rescale it first."
                )
            new_scores[name] = v
        out = ScreenResult(
            self.lenses, new_scores, self.correlation, usable=self.usable,
            weights=self.weights if weights is None else weights,
            count=self.count if count is None else check_int("count", count, lo=1,
                                                              context="rescore"),
            ceiling=self.ceiling if ceiling is None else check_float(
                "ceiling", ceiling, lo=0, hi=1, lo_open=True, context="rescore"),
            bins=self.bins, reference_names=self.reference_names,
            reference_correlation=self.reference_correlation, skipped=self.skipped,
            status=self.status,
        )
        out._embedding = self._embedding
        out.probe = self.probe
        return out

    @property
    def cloud(self):
        """The PointCloud the lenses were computed on."""
        return self.lenses.cloud

    @property
    def embedding(self):
        """First two principal coordinates of the data (n, 2), for the figure sheet."""
        if self._embedding is None:
            self._embedding = _principal_coordinates(self.cloud.X)
        return self._embedding

    def partners(self):
        """For each candidate: (name, rho) of the most correlated other candidate."""
        m = len(self.names)
        out = []
        absr = np.abs(self.correlation)
        for j in range(m):
            row = absr[j].copy()
            row[j] = np.nan
            if m < 2 or not np.isfinite(row).any():
                out.append((None, math.nan))
                continue
            i = int(np.nanargmax(row))
            out.append((self.names[i], float(self.correlation[j, i])))
        return out

    def rows(self):
        """The ranking table as a list of dicts (rank order: chosen first, in pick order)."""
        m = len(self.names)
        sel = list(self.selection.indices)
        absr = np.nan_to_num(np.abs(self.correlation), nan=0.0)
        partners = self.partners()
        gain = np.zeros(m)
        nearest = [(None, math.nan)] * m
        for t, j in enumerate(sel):
            gain[j] = self.selection.gains[t]
            before = sel[:t]
            if before:
                i = before[int(np.argmax(absr[j, before]))]
                nearest[j] = (self.names[i], float(self.correlation[j, i]))
        rest = [j for j in range(m) if j not in sel]
        for j in rest:
            if sel:
                i = sel[int(np.argmax(absr[j, sel]))]
                nearest[j] = (self.names[i], float(self.correlation[j, i]))
                gain[j] = self.merit[j] * (1.0 - absr[j, i])
            else:
                gain[j] = self.merit[j]

        def category(j):
            if not self.usable[j] or self.merit[j] <= 0:
                return 2
            return 1 if abs(nearest[j][1]) > self.ceiling else 0

        rest.sort(key=lambda j: (category(j), -gain[j], -self.merit[j], j))
        rows = []
        for rank, j in enumerate(sel + rest, 1):
            col = self.lenses.columns[j]
            row = {
                "rank": rank, "column": col.name, "lens": col.lens, "params": col.params,
                "selected": j in sel, "merit": float(self.merit[j]), "gain": float(gain[j]),
            }
            for name, vals in self.scores.items():
                row[name] = float(vals[j])
            if self.probe is not None:
                found = self.probe.get(col.name, {})
                for key in PROBE_COUNTS:
                    row[key] = found.get(key)
            row["partner"] = partners[j][0]
            row["partner_rho"] = partners[j][1]
            row["nearest_selected"] = nearest[j][0]
            row["nearest_selected_rho"] = nearest[j][1]
            for k, ref in enumerate(self.reference_names):
                row[f"rho[{ref}]"] = float(self.reference_correlation[j, k])
            row["reason"] = self._reason(j, sel, nearest[j], gain[j])
            rows.append(row)
        return rows

    def _reason(self, j, sel, nearest, gain):
        if self.status[j] != "ok":
            return f"{_status_text(self.status[j])}: spread 0, never selected"
        if j in sel:
            t = sel.index(j)
            if t == 0:
                return f"selected #1: highest merit ({self.merit[j]:.2f})"
            return (f"selected #{t + 1}: gain {gain:.2f}, |rho| {abs(nearest[1]):.2f} to "
                    f"{nearest[0]}")
        if self.merit[j] <= 0:
            return "merit 0: never selected"
        if nearest[0] is not None and abs(nearest[1]) > self.ceiling:
            return (f"redundant: |rho| {abs(nearest[1]):.2f} with {nearest[0]} (selected) > "
                    f"ceiling {self.ceiling:.2f}")
        if len(sel) >= self.count:
            return f"not needed: count {self.count} reached (gain {gain:.2f})"
        return f"not selected (gain {gain:.2f})"

    @property
    def stop_text(self):
        """Why the selection stopped, in words."""
        return {
            "count": f"count {self.count} reached",
            "ceiling": f"every other candidate has |rho| > {self.ceiling:.2f} with a chosen lens",
            "candidates": "no other usable candidate",
        }[self.selection.stop]

    def to_dict(self):
        """JSON-ready description: settings, ranking, correlation matrices, provenance."""
        from . import __version__

        return _json_clean({
            "lenswork_version": __version__,
            "kind": "lens screen",
            "settings": {
                "count": self.count, "ceiling": self.ceiling, "bins": self.bins,
                "weights": self.weights, "references": self.reference_names,
                "random_state": self.lenses.random_state,
            },
            "selected": self.selected,
            "stop": self.selection.stop,
            "stop_text": self.stop_text,
            "ranking": self.rows(),
            "correlation": {"columns": self.names, "spearman": self.correlation.tolist()},
            "reference_correlation": {
                "columns": self.names, "references": self.reference_names,
                "spearman": self.reference_correlation.tolist(),
            },
            "skipped_lenses": self.skipped,
            "input": self.cloud.provenance,
            "n_rows_used": int(self.cloud.n),
        })

    def to_csv_text(self):
        """The ranking table as CSV text (params as JSON, missing values empty)."""
        rows = self.rows()
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        header = list(rows[0]) if rows else []
        w.writerow(header)
        for r in rows:
            w.writerow([_csv_cell(r[h]) for h in header])
        return buf.getvalue()

    def format_table(self, max_rows=None):
        """The ranking as an aligned text table for the terminal."""
        rows = self.rows()[:max_rows]
        refs = self.reference_names[:3]
        probed = self.probe is not None
        header = ["rank", "lens column", "spread", *(["structure", "L/F/B"] if probed else []),
                  "merit", "gain", "partner (rho)", *[f"rho[{r}]" for r in refs], "status"]
        body = []
        for r in rows:
            partner = "-" if r["partner"] is None else f"{r['partner']} ({r['partner_rho']:+.2f})"
            extra = []
            if probed:
                counts = [r.get(key) for key in PROBE_COUNTS]
                extra = [_num(r["structure"]),
                         "-" if counts[0] is None else "/".join(str(c) for c in counts)]
            body.append([
                str(r["rank"]), r["column"], _num(r["spread"]), *extra, _num(r["merit"]),
                _num(r["gain"]), partner, *[_num(r[f"rho[{x}]"], signed=True) for x in refs],
                r["reason"],
            ])
        widths = [max(len(h), *(len(b[i]) for b in body)) if body else len(h)
                  for i, h in enumerate(header)]
        shift = 2 if probed else 0
        right = {0, 2, 3, 4, *range(2, 5 + shift), *range(6 + shift, 6 + shift + len(refs))}

        def line(cells):
            out = [c.rjust(w) if i in right else c.ljust(w)
                   for i, (c, w) in enumerate(zip(cells, widths, strict=True))]
            return "  ".join(out).rstrip()

        lines = [line(header), line(["-" * w for w in widths])]
        lines += [line(b) for b in body]
        return "\n".join(lines)

    def summary(self):
        """Two lines: what was screened, what was kept and why it stopped."""
        n_use = int(self.usable.sum())
        head = (f"Screened {len(self.names)} candidate columns ({n_use} usable) on "
                f"{self.cloud.n} rows x {self.cloud.d} features.")
        chosen = ", ".join(self.selected) if self.selected else "nothing"
        return (f"{head}\nSelected: {chosen} (stopped: {self.stop_text}; "
                f"ceiling {self.ceiling:.2f}).")

    def write(self, directory, *, figures=True, lens_format="csv"):
        """Write the ranking (CSV, JSON), the chosen lens columns and the figure sheet.

        Parameters
        ----------
        directory : str or Path
            Created if missing. Files: ``ranking.csv``, ``ranking.json``,
            ``lenses.<format>`` with its ``.json`` sidecar, and with ``figures``
            ``sheet.png`` and ``sheet.svg``.
        figures : bool, default=True
        lens_format : {"csv", "parquet", "npy"}, default="csv"

        Returns
        -------
        dict of str -> Path

        Notes
        -----
        All files are first written (each atomically) into a hidden staging
        directory inside ``directory`` and moved into place only when every
        one of them is complete, so a failure leaves no partial output behind
        (a directory created for this call is removed again).
        """
        from ._validation import check_choice

        lens_format = check_choice("lens_format", lens_format, FORMATS, context="write")
        table = self.to_lens_table()  # raises before anything is written
        directory = Path(directory)
        created = not directory.exists()
        if directory.exists() and not directory.is_dir():
            raise ParameterError(
                f"Output directory {str(directory)!r} is a file; give a directory path."
            )
        directory.mkdir(parents=True, exist_ok=True)
        staging = Path(tempfile.mkdtemp(prefix=".lenswork-screen-", dir=directory))
        try:
            with _progress.step("writing ranking and lens columns"):
                write_text(staging / "ranking.csv", self.to_csv_text())
                write_text(staging / "ranking.json",
                           json.dumps(self.to_dict(), indent=2) + "\n")
                table.write(staging / f"lenses.{lens_format}")
            if figures:
                from .plot._sheet import screen_sheet

                with _progress.step("figure sheet (PNG, SVG)"):
                    screen_sheet(self, [staging / "sheet.png", staging / "sheet.svg"])
            names = sorted(p.name for p in staging.iterdir() if not p.name.startswith("."))
            for name in names:
                os.replace(staging / name, directory / name)
        except BaseException:
            shutil.rmtree(staging, ignore_errors=True)
            if created:
                with contextlib.suppress(OSError):
                    directory.rmdir()
            raise
        shutil.rmtree(staging, ignore_errors=True)
        return {name: directory / name for name in names}

    def __repr__(self):
        return (f"ScreenResult({len(self.names)} candidates, selected={self.selected}, "
                f"stop={self.selection.stop!r})")


def _num(v, signed=False):
    if v is None or not np.isfinite(v):
        return "-"
    return f"{v:+.2f}" if signed else f"{v:.2f}"


def _csv_cell(v):
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return "" if not math.isfinite(v) else repr(v)
    if isinstance(v, dict):
        return json.dumps(v, sort_keys=True)
    return v


def _json_clean(obj):
    """NaN / inf -> None, numpy scalars -> Python (JSON has no NaN)."""
    if isinstance(obj, dict):
        return {str(k): _json_clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_json_clean(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _json_clean(obj.tolist())
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    return obj


def _principal_coordinates(X, components=2):
    """Scores on the top principal axes (covariance eigenvectors), signs fixed."""
    X = np.asarray(X, dtype=np.float64)
    Xc = X - X.mean(axis=0)
    n, d = Xc.shape
    cov = (Xc.T @ Xc) / max(n - 1, 1)
    w, V = np.linalg.eigh(cov)
    V = V[:, ::-1][:, :min(components, d)]
    big = np.argmax(np.abs(V), axis=0)
    V = V * np.sign(V[big, np.arange(V.shape[1])])
    out = np.zeros((n, components))
    out[:, :V.shape[1]] = Xc @ V
    return out


# --------------------------------------------------------------------------- entry point
def _score_columns(table, bins):
    """Spread figures and unit rank rows of every column of a LensTable (one sort each).

    Columns are independent, and numpy's sorts release the GIL, so large tables
    are ranked on a few threads; the result does not depend on the thread count.
    """
    m, n = len(table), table.cloud.n
    keys = ("spread", "entropy", "tied", "largest_tie", "outliers")
    Z = np.empty((m, n), dtype=np.float64)

    def one(j):
        v = np.asarray(table.columns[j].values, dtype=np.float64)
        if not np.isfinite(v).all():
            Z[j].fill(np.nan)
            return SpreadScore(0.0, 0.0, math.nan, math.nan, math.nan,
                               _effective_bins(bins, n), "non-finite")
        ranks, srt, counts = _rank_sorted(v)
        _unit_row(ranks, Z[j])
        return _spread_from_sorted(srt, counts, bins)

    workers = min(_MAX_THREADS, os.cpu_count() or 1, m)
    if workers > 1 and n * m >= _THREADS_FROM:
        from concurrent.futures import ThreadPoolExecutor

        with ThreadPoolExecutor(workers) as pool:
            found = list(pool.map(one, range(m)))
    else:
        found = [one(j) for j in range(m)]
    scores = {k: np.array([getattr(s, k) for s in found], dtype=np.float64) for k in keys}
    return scores, [s.status for s in found], Z


def screen(data, lenses=None, *, extra=(), count=2, ceiling=0.8, references=(), bins=20,
           weights=None, probe=True, random_state=None):
    """Compute candidate lenses, rank them by spread and redundancy, select a few.

    Parameters
    ----------
    data : PointCloud, Workspace, LensTable, DataFrame or array-like (n_samples, n_features)
        The data. A LensTable is screened as it is (its columns are the
        candidates, nothing is computed); a DataFrame is read with
        :func:`~lenswork.load_table` (numeric columns are features, the others
        passthrough).
    lenses : list of str or (str, dict), optional
        Candidate lenses (registry names or specs like ``"dtm:mass=0.05"``).
        Default: :func:`default_candidates`, where a lens that cannot be
        computed on this data warns and is skipped.
    extra : list of str or (str, dict), default=()
        Lenses added to the candidates; errors in these are raised.
    count : int, default=2
        Lenses to select at most (two lenses give the usual 2-D cover).
    ceiling : float in (0, 1], default=0.8
        Never select two lenses with ``|rho|`` above this (at 0.8 two
        orderings share 64 % of their rank variance).
    references : list of str or dict of str -> array-like, default=()
        Reference columns: names of feature or passthrough columns of the
        PointCloud, or arrays (one value per row). NaN / empty values are left
        out pairwise.
    bins : int, default=20
        Histogram bins of the spread score.
    weights : dict of str -> float, optional
        Score columns in the merit (default ``{"spread": 1.0, "structure": 1.0}``
        with the probe, ``{"spread": 1.0}`` without).
    probe : bool, default=True
        Run the structure probe (:func:`lenswork.probe.structure_scores`): build
        each usable candidate's graph over a small grid of covers on the shared
        neighbour graph and add the scores ``structure``, ``revealed`` and
        ``stability`` to the table (and the feature counts ``loops``,
        ``flares``, ``branch_points``). The default merit then weighs spread and
        structure equally.
    random_state : int, optional
        Seed of the lenses (default: the workspace's, or 0).

    Returns
    -------
    ScreenResult

    Raises
    ------
    ParameterError
        Bad count, ceiling, bins, lens spec or reference column (a non-numeric
        reference names the column and the first bad row).
    InputError
        Fewer than 3 rows, or no candidate column at all.

    Warns
    -----
    LensworkWarning
        A constant or non-finite candidate (spread 0, never selected); a default
        lens that could not be computed (skipped); ``count`` larger than the
        number of usable candidates (all usable ones are selected).

    Notes
    -----
    Cost beyond the lenses: one sort per candidate, O(n m log n), and one
    (m, n) x (n, m) product, O(n m^2), with the columns ranked on a few
    threads. Measured at 1e6 rows and 40 candidates: 2.0 s (best of 3; 3.3 s
    median on a busy 2-core machine), 125 times faster than a loop over
    ``scipy.stats.spearmanr`` pairs and 6 times faster than one
    ``scipy.stats.spearmanr`` call on the whole matrix
    (tests/benchmarks/bench_screen.py). See the module docstring for the
    scores and the selection rule.

    Examples
    --------
    >>> from lenswork import LensColumn, LensTable, PointCloud
    >>> rng = np.random.default_rng(0)
    >>> cloud = PointCloud.from_array(rng.normal(size=(500, 2)))
    >>> x, y = cloud.X[:, 0], cloud.X[:, 1]
    >>> table = LensTable([LensColumn("x", x), LensColumn("exp_x", np.exp(x)),
    ...                    LensColumn("y", y)], cloud)
    >>> result = screen(table, count=2)
    >>> result.selected
    ['x', 'y']
    >>> round(float(result.correlation[0, 1]), 6)
    1.0
    """
    count = check_int("count", count, lo=1, context="screen")
    ceiling = check_float("ceiling", ceiling, lo=0, hi=1, lo_open=True, context="screen")
    bins = check_int("bins", bins, lo=2, context="screen")
    skipped = []
    if isinstance(data, LensTable):
        if lenses is not None or extra:
            raise ParameterError(
                "screen got a LensTable and lens specs; a LensTable is screened as it is. "
                "Pass the PointCloud or Workspace to compute lenses."
            )
        table = data
        if random_state is not None and random_state != table.random_state:
            table = LensTable(table.columns, table.cloud, random_state=random_state)
        refs = _collect_references(table.cloud, references)
    else:
        if isinstance(data, Workspace):
            ws = data
            if random_state is not None and random_state != ws.random_state:
                raise ParameterError(
                    f"screen got random_state={random_state!r} and a Workspace with "
                    f"random_state={ws.random_state!r}; expected one seed. Drop random_state "
                    f"or build the Workspace with it."
                )
        else:
            if hasattr(data, "columns") and not isinstance(data, np.ndarray):  # a DataFrame
                from .data import load_table

                data = load_table(data)
            ws = Workspace(data, random_state=0 if random_state is None else random_state)
        if ws.n < 3:
            raise InputError(f"A screen needs at least 3 rows; the data has {ws.n}.")
        refs = _collect_references(ws.cloud, references)  # check them before the lenses
        specs_default = default_candidates(ws) if lenses is None else []
        specs_given = [_parse_spec(s) for s in (lenses or [])]
        specs_extra = [_parse_spec(s) for s in extra]
        from .lenses import get_lens

        for name, params in specs_given + specs_extra:  # unknown names / bad values: fail fast
            get_lens(name).resolve(params)
        cols_d, skipped = _compute_candidates(ws, specs_default, strict=False)
        cols_g, _ = _compute_candidates(ws, specs_given + specs_extra, strict=True)
        seen = {c.name for c in cols_d}
        columns = cols_d + [c for c in cols_g if c.name not in seen]
        table = LensTable(columns, ws.cloud, random_state=ws.random_state)
    cloud = table.cloud
    if cloud.n < 3:
        raise InputError(f"A screen needs at least 3 rows; the data has {cloud.n}.")
    if len(table) == 0:
        raise InputError(
            "The screen has no candidate lens column. Give lenses (e.g. lenses=['pca']) or "
            "check the warnings about skipped lenses."
        )
    for col in table.columns:
        if np.shape(col.values) != (cloud.n,):
            raise InputError(
                f"Lens column {col.name!r} has shape {np.shape(col.values)}; expected "
                f"({cloud.n},), one value per row."
            )
    with _progress.step(f"ranking {len(table)} columns: spread and rank correlation"):
        scores, status, Z = _score_columns(table, bins)
        usable = np.array([s == "ok" for s in status])
        ok = np.flatnonzero(usable)
        corr = np.full((len(table), len(table)), np.nan)
        if ok.size:
            corr[np.ix_(ok, ok)] = _corr_from_unit(Z[ok])
        ref_corr = _reference_correlations(
            [np.asarray(c.values, dtype=np.float64) for c in table.columns], refs, usable, Z
        )
        del Z
    for j, s in enumerate(status):
        if s != "ok":
            warnings.warn(
                f"Lens column {table.names[j]!r} is {_status_text(s)}: spread 0, it is never "
                f"selected.", LensworkWarning, stacklevel=2,
            )
    n_ok = int(np.count_nonzero(usable & (scores["spread"] > 0)))
    if count > n_ok:
        warnings.warn(
            f"Asked for {count} lenses but only {n_ok} candidate column(s) are usable; "
            f"selecting at most {n_ok}.", LensworkWarning, stacklevel=2,
        )
    with _progress.step("selection"):
        result = ScreenResult(
            table, scores, corr, usable=usable,
            weights=weights if weights is None or not probe else {"spread": 1.0},
            count=count, ceiling=ceiling, bins=bins, reference_names=list(refs),
            reference_correlation=ref_corr, skipped=skipped, status=status,
        )
    if probe and usable.any():
        if isinstance(data, LensTable):
            ws = Workspace(table.cloud, random_state=table.random_state)
        result = _with_structure(result, ws, weights)
    return result


#: Probe scores added to the screen's table (all in [0, 1]) and the counts shown beside them.
PROBE_SCORES = ("structure", "revealed", "stability")
PROBE_COUNTS = ("loops", "flares", "branch_points")


def _with_structure(result, ws, weights):
    """Run the structure probe on the usable candidates and fold it into the merit."""
    from .probe import structure_scores

    names = [n for n, ok in zip(result.names, result.usable) if ok]
    found = structure_scores(result.lenses.select(names), ws)  # reports its own progress
    m = len(result.names)
    scores = {}
    for key in PROBE_SCORES:
        col = np.full(m, np.nan)
        for j, name in enumerate(result.names):
            if name in found:
                col[j] = found[name][key]
        scores[key] = col
    out = result.rescore(
        scores=scores, weights=weights or {"spread": 1.0, "structure": 1.0}
    )
    out.probe = found
    return out


def _collect_references(cloud, references):
    if isinstance(references, str):
        references = [r.strip() for r in references.split(",") if r.strip()]
    out = {}
    if isinstance(references, dict):
        for name, vals in references.items():
            v = np.asarray(vals)
            if v.shape != (cloud.n,):
                raise ParameterError(
                    f"Reference column {name!r} has shape {v.shape}; expected ({cloud.n},), "
                    f"one value per row."
                )
            if v.dtype.kind not in "biuf":
                raise ParameterError(
                    f"Reference column {name!r} is not numeric (dtype {v.dtype}); rank "
                    f"correlation needs numbers. Encode the labels as numbers first."
                )
            out[str(name)] = v.astype(np.float64)
        return out
    for name in references:
        out[str(name)] = _reference_values(cloud, str(name))
    return out
