"""The cover of the lens range: uniform overlapping intervals, one family per lens.

For one lens with values ``v`` on the cover scale, ``N`` intervals of length
``L`` and overlap fraction ``p`` are laid with step ``s = L (1 - p)`` so that the
first starts at ``min v`` and the last ends at ``max v``::

    L = (max v - min v) / (1 + (N - 1)(1 - p)),      interval i = [min v + i s, min v + i s + L)

A point belongs to interval ``i`` when ``i s <= v - min v < i s + L``. Dividing
by ``s`` (``t = (v - min v) / s``, ``r = L / s = 1 / (1 - p)``) turns this into
``i <= t < i + r``, so the intervals holding ``v`` are the integers in
``(t - r, t]``: ``first = floor(t - r) + 1`` and ``last = floor(t)``, clipped to
``[0, N - 1]``. That is O(1) per point and per lens, with no search over the
intervals. The last interval is closed at the top so the maximum belongs to it;
since ``r >= 1`` every point lies in at least one interval. With ``p <= 1/2`` we
have ``r <= 2`` and no point lies in three intervals; with ``p > 1/2`` some do.

Two or more lenses give the product cover: the elements are tuples of interval
indices, one per lens, and a point lies in every tuple drawn from its per-lens
ranges.
"""

from __future__ import annotations

import numbers
import warnings

import numpy as np

from .._errors import LensworkWarning, ParameterError
from .._validation import check_array, check_choice, check_float, check_int
from ..normalize import normalize

__all__ = ["COVER_SCALES", "Cover"]

#: Scales on which the intervals are laid: raw lens values, or ranks (equal-count intervals).
COVER_SCALES = ("rank", "raw")


def _per_lens(name, value, m, check):
    """One cleaned value per lens: a scalar is repeated, a sequence must have length m."""
    if isinstance(value, (str, numbers.Number)):
        return [check(name, value)] * m
    try:
        items = list(value)
    except TypeError:
        return [check(name, value)] * m
    if len(items) != m:
        raise ParameterError(
            f"The {name!r} parameter of Cover has {len(items)} values for {m} lens column(s). "
            f"Give one value, or one per lens column."
        )
    return [check(name, v) for v in items]


def _interval_ranges(t, n_intervals, r):
    """First and last interval index for values ``t`` in step units (see module notes)."""
    last = np.floor(t)
    first = np.floor(t - r) + 1.0
    top = n_intervals - 1
    last = np.minimum(last, top).astype(np.int64)
    first = np.clip(first, 0, top).astype(np.int64)
    return first, last


class Cover:
    """Uniform overlapping intervals over each lens, and their product.

    Parameters
    ----------
    intervals : int or sequence of int, default=10
        Number of intervals per lens (one value for all lenses, or one per lens).
    overlap : float or sequence of float, default=0.3
        Overlap fraction ``p`` in [0, 1): each interval shares a fraction ``p``
        of its length with the next. ``p = 0`` is a partition (no two elements
        share a point).
    scale : {"rank", "raw"}, default="rank"
        ``"rank"`` lays the intervals on the ranks ``(rank - 1/2) / n`` of the
        values, so each interval holds about the same number of points (ties
        share their average rank); ``"raw"`` lays them on the values themselves.

    Attributes
    ----------
    values_ : ndarray of shape (n_samples, n_lenses)
        The values on the cover scale.
    shape_ : tuple of int
        Intervals per lens; the cover has ``prod(shape_)`` elements.
    first_, last_ : ndarray of shape (n_samples, n_lenses), int64
        First and last interval holding each point, per lens.
    start_, length_, step_ : ndarray of shape (n_lenses,)
        Start of the first interval, interval length ``L`` and step ``s`` per lens.

    Notes
    -----
    See the module notes for the formulas. Cost: O(n m) for the ranges after
    the rank transform (O(n log n) per lens when ``scale="rank"``); the
    point-element incidence has one entry per (point, element) pair.

    References
    ----------
    .. [1] M. Carrière, B. Michel and S. Oudot, "Statistical analysis and
       parameter selection for Mapper", JMLR 19, 2018 (the cover by a resolution
       and a gain, i.e. interval count and overlap fraction).

    Examples
    --------
    >>> cover = Cover(intervals=4, overlap=0.25, scale="raw").fit(np.linspace(0, 1, 11))
    >>> cover.bounds(0).round(3).tolist()
    [[0.0, 0.308], [0.231, 0.538], [0.462, 0.769], [0.692, 1.0]]
    >>> cover.first_[:, 0].tolist(), cover.last_[:, 0].tolist()
    ([0, 0, 0, 0, 1, 1, 2, 2, 3, 3, 3], [0, 0, 0, 1, 1, 2, 2, 3, 3, 3, 3])
    """

    def __init__(self, intervals=10, overlap=0.3, scale="rank"):
        self.intervals = intervals
        self.overlap = overlap
        self.scale = scale

    def _check_params(self, m):
        intervals = _per_lens(
            "intervals", self.intervals, m,
            lambda name, v: check_int(name, v, lo=1, context="Cover"),
        )
        overlap = _per_lens(
            "overlap", self.overlap, m,
            lambda name, v: check_float(name, v, lo=0.0, hi=1.0, hi_open=True, context="Cover"),
        )
        scale = check_choice("scale", self.scale, COVER_SCALES, context="Cover")
        return intervals, overlap, scale

    def fit(self, values, names=None):
        """Lay the intervals over ``values`` and find each point's interval ranges.

        Parameters
        ----------
        values : array-like of shape (n_samples,) or (n_samples, n_lenses)
            Finite lens values (already normalised where a column records it).
        names : list of str, optional
            Lens names, used in warnings and errors.

        Returns
        -------
        self
        """
        names = list(names) if names is not None else None
        V = check_array(
            values, "Cover.fit", names=names, label="the lens array given to the cover",
            advice="Drop those rows or fill the lens first.",
        )
        n, m = V.shape
        names = names if names is not None else [f"lens {j + 1}" for j in range(m)]
        intervals, overlap, scale = self._check_params(m)
        if scale == "rank":
            U = np.column_stack([normalize(V[:, j], "rank") for j in range(m)])
        else:
            U = V
        start = U.min(axis=0)
        span = U.max(axis=0) - start
        first = np.empty((n, m), dtype=np.int64)
        last = np.empty((n, m), dtype=np.int64)
        length = np.empty(m)
        step = np.empty(m)
        for j in range(m):
            N, p = intervals[j], overlap[j]
            width = span[j]
            if width == 0:
                warnings.warn(
                    f"Lens {names[j]!r} is constant: its cover has one non-empty element. "
                    f"Choose a lens that varies over the data.",
                    LensworkWarning, stacklevel=3,
                )
                width = 1.0
            length[j] = width / (1.0 + (N - 1) * (1.0 - p))
            step[j] = length[j] * (1.0 - p)
            t = (U[:, j] - start[j]) / step[j]
            first[:, j], last[:, j] = _interval_ranges(t, N, 1.0 / (1.0 - p))
        self.values_ = U
        self.names_ = names
        self.shape_ = tuple(intervals)
        self.overlap_ = tuple(overlap)
        self.scale_ = scale
        self.start_ = start
        self.length_ = length
        self.step_ = step
        self.first_ = first
        self.last_ = last
        return self

    @property
    def n_elements(self):
        """Number of elements of the (product) cover, empty ones included."""
        return int(np.prod(self.shape_))

    def bounds(self, lens=0):
        """``[start, end)`` of every interval of one lens, on the cover scale.

        Returns
        -------
        ndarray of shape (n_intervals, 2)
        """
        j = check_int("lens", lens, lo=0, hi=len(self.shape_) - 1, context="Cover.bounds")
        i = np.arange(self.shape_[j])
        lo = self.start_[j] + i * self.step_[j]
        return np.column_stack([lo, lo + self.length_[j]])

    def element_index(self, flat):
        """Tuples of interval indices for flat element numbers (C order over lenses)."""
        idx = np.unravel_index(np.asarray(flat, dtype=np.int64), self.shape_)
        return np.column_stack(idx) if np.ndim(flat) else tuple(int(i) for i in idx)

    def incidence(self, order=None):
        """Every (point, element) pair, grouped by element.

        Parameters
        ----------
        order : ndarray of shape (n_samples,), optional
            A key ordering the points inside each element (default: row order;
            ties in the key are broken by row).

        Returns
        -------
        rows : ndarray of int64
            Point (row position) of each pair.
        elements : ndarray of int64
            Flat element number of each pair, non-decreasing.

        Examples
        --------
        >>> cover = Cover(intervals=2, overlap=0.5, scale="raw").fit([0.0, 0.4, 0.6, 1.0])
        >>> rows, elements = cover.incidence()
        >>> rows.tolist(), elements.tolist()
        ([0, 1, 2, 1, 2, 3], [0, 0, 0, 1, 1, 1])
        """
        n, m = self.first_.shape
        rows = np.arange(n, dtype=np.int64)
        flat = np.zeros(n, dtype=np.int64)
        for j in range(m):
            count = self.last_[:, j] - self.first_[:, j] + 1
            count = count[rows]
            base = flat * self.shape_[j] + self.first_[rows, j]
            new_rows, new_flat = [], []
            for o in range(int(count.max())):
                sel = np.flatnonzero(count > o)
                new_rows.append(rows[sel])
                new_flat.append(base[sel] + o)
            rows = np.concatenate(new_rows)
            flat = np.concatenate(new_flat)
        if order is not None:  # enumerate points in key order; a stable sort keeps it per element
            rank = np.empty(n, dtype=np.int64)
            rank[np.argsort(np.asarray(order), kind="stable")] = np.arange(n)
            perm = np.argsort(flat * n + rank[rows])
        else:
            perm = np.argsort(flat * n + rows)
        return rows[perm], flat[perm]

    def params(self):
        """JSON-ready description of the fitted cover."""
        return {
            "intervals": list(self.shape_), "overlap": list(self.overlap_), "scale": self.scale_,
            "start": self.start_.tolist(), "length": self.length_.tolist(),
            "step": self.step_.tolist(),
        }
