"""Covers of the lens range: the interface, the interval product cover and the ball cover.

Every cover is one entry of :data:`COVERS` (kind name -> class) and follows the
:class:`CoverBase` interface: ``fit(values, names)``; ``incidence(order)``, the
(row, element) pairs grouped by element; ``n_elements``; ``element_ids(flat)``,
an int array of shape (len, width) naming each element (the width is the
cover's own: one interval index per lens for the interval cover, one centre
number for the ball cover); ``labels(flat)`` for people; ``levels(flat)``, one
position per lens for the level layout and the files; ``params()`` for
provenance. Nothing downstream (clustering, nerve, files, layout, probe) reads
more than that.

Interval cover
--------------

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
ranges. The element count grows as ``intervals ** m``.

Ball cover
----------
:class:`BallCover` covers the lens values (each lens on the rank scale, or
divided by its range) by balls around a greedy net: a point becomes a centre
when no centre lies within the net spacing ``eps`` of it (points taken in
lexicographic order of their values), so the centres are ``eps`` apart and
every point lies within ``eps`` of one -- an ``eps``-net. With ``centres=c``
the net is instead grown by farthest-point insertion (Gonzalez 1985) until it
has ``c`` centres, and ``eps`` is the covering radius found. The balls have
radius ``eps / (1 - overlap)`` (the same ratio ``r = L / s`` as the interval
cover's length over step), so they cover every point and neighbouring balls
share points. The element count is the net's size, which follows the spread of
the values (about ``(1 / eps) ** d`` for values filling a d-dimensional set),
not ``intervals ** m``. Rows are assigned to balls by one
``scipy.spatial.cKDTree.query_ball_point`` call (no loop over rows x balls).
The nerve theorem (Borsuk 1948; see Hatcher, "Algebraic Topology", 2002,
Cor. 4G.3) says a good cover's nerve has the homotopy type of the covered
space; Mapper (2007) pulls such a cover back to the data and splits each
preimage into clusters.
"""

from __future__ import annotations

import numbers
from abc import ABC, abstractmethod

import numpy as np
from scipy.spatial import cKDTree

from .._errors import ParameterError, warn_caller
from .._validation import check_array, check_choice, check_float, check_int
from ..normalize import normalize

__all__ = ["COVERS", "COVER_SCALES", "BallCover", "Cover", "CoverBase", "IntervalCover"]

#: Scales on which the intervals are laid: raw lens values, or ranks (equal-count intervals).
COVER_SCALES = ("balanced", "rank", "raw")


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


class CoverBase(ABC):
    """The interface every cover follows (see the module notes).

    A subclass sets :attr:`kind` (its name in :data:`COVERS`), stores its
    parameters verbatim in ``__init__`` and implements :meth:`fit`,
    :meth:`incidence`, :attr:`n_elements`, :meth:`element_ids`,
    :meth:`labels`, :meth:`levels`, :meth:`params` and :meth:`get_params`.
    """

    #: Name of the cover kind in :data:`COVERS`.
    kind = ""

    @abstractmethod
    def fit(self, values, names=None):
        """Lay the cover over ``values`` (n_samples, n_lenses); returns self."""

    @abstractmethod
    def incidence(self, order=None):
        """Every (row, element) pair, grouped by flat element number: (rows, elements)."""

    @property
    @abstractmethod
    def n_elements(self):
        """Number of elements, empty ones included."""

    @abstractmethod
    def element_ids(self, flat):
        """Int array of shape (len(flat), width) naming each element."""

    @abstractmethod
    def labels(self, flat):
        """A short text per element, for people."""

    @abstractmethod
    def levels(self, flat):
        """Float array of shape (len(flat), n_lenses): the element's position per lens."""

    @abstractmethod
    def params(self):
        """JSON-ready description of the fitted cover, with ``"kind"``."""

    @abstractmethod
    def check_params(self):
        """Check the constructor parameters (ParameterError when one is bad); returns self."""

    def get_params(self):
        """The constructor parameters, as given."""
        return {name: getattr(self, name) for name in self._param_names}

    _param_names = ()

    def __eq__(self, other):
        """Covers are equal when they are of one class with equal parameters (fitted or not)."""
        if not isinstance(other, CoverBase):
            return NotImplemented
        return type(self) is type(other) and self.get_params() == other.get_params()

    def __hash__(self):
        return hash((type(self).__name__, repr(sorted(self.get_params().items()))))

    def __repr__(self):
        args = ", ".join(f"{k}={v!r}" for k, v in self.get_params().items())
        return f"{type(self).__name__}({args})"


def _order_pairs(rows, flat, n, order):
    """Sort (row, element) pairs by element, then by ``order`` (or row) inside each element."""
    if order is not None:  # enumerate points in key order; a stable sort keeps it per element
        rank = np.empty(n, dtype=np.int64)
        rank[np.argsort(np.asarray(order), kind="stable")] = np.arange(n)
        perm = np.argsort(flat * n + rank[rows])
    else:
        perm = np.argsort(flat * n + rows)
    return rows[perm], flat[perm]


def _checked_values(values, names, what):
    names = list(names) if names is not None else None
    V = check_array(
        values, f"{what}.fit", names=names, label="the lens array given to the cover",
        advice="Drop those rows or fill the lens first.",
    )
    names = names if names is not None else [f"lens {j + 1}" for j in range(V.shape[1])]
    return V, names


class Cover(CoverBase):
    """Uniform overlapping intervals over each lens, and their product (the interval cover).

    Also available as :class:`IntervalCover`; ``GraphSettings(cover="interval")``.

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

    kind = "interval"
    _param_names = ("intervals", "overlap", "scale")

    def __init__(self, intervals=10, overlap=0.3, scale="rank"):
        self.intervals = intervals
        self.overlap = overlap
        self.scale = scale

    def check_params(self):
        """Check the parameters that do not depend on the lens count; returns self.

        Examples
        --------
        >>> Cover(intervals=(5, 3)).check_params().intervals
        (5, 3)
        """
        m = 1
        for value in (self.intervals, self.overlap):
            if not isinstance(value, (str, numbers.Number)) and hasattr(value, "__len__"):
                m = max(m, len(value))
        for value in (self.intervals, self.overlap):  # a scalar stands for every lens
            if not isinstance(value, (str, numbers.Number)) and hasattr(value, "__len__") \
                    and len(value) != m:
                raise ParameterError(
                    f"Cover has {len(self.intervals)} interval counts and {len(self.overlap)} "
                    f"overlaps; give one value, or one per lens column, for both."
                )
        self._check_params(m)
        return self

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
        V, names = _checked_values(values, names, "Cover")
        n, m = V.shape
        intervals, overlap, scale = self._check_params(m)
        U = V if scale == "raw" else _scaled(V, scale)
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
                warn_caller(
                    f"Lens {names[j]!r} is constant: its cover has one non-empty element. "
                    f"Choose a lens that varies over the data."
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
        return _order_pairs(rows, flat, n, order)

    def element_ids(self, flat):
        """Interval index per lens of each element: int64 array of shape (len(flat), n_lenses)."""
        flat = np.atleast_1d(np.asarray(flat, dtype=np.int64))
        return np.column_stack(np.unravel_index(flat, self.shape_)).reshape(flat.size, -1)

    def labels(self, flat):
        """``"interval 2 x 5"``-style text per element (1-based interval numbers)."""
        return ["interval " + " x ".join(str(int(i) + 1) for i in row)
                for row in self.element_ids(flat)]

    def levels(self, flat):
        """Interval index per lens (as floats): the level of the level layout."""
        return self.element_ids(flat).astype(np.float64)

    def params(self):
        """JSON-ready description of the fitted cover."""
        return {
            "kind": self.kind, "intervals": list(self.shape_), "overlap": list(self.overlap_),
            "scale": self.scale_,
            "start": self.start_.tolist(), "length": self.length_.tolist(),
            "step": self.step_.tolist(),
        }


#: The interval product cover under its descriptive name.
IntervalCover = Cover


def _scaled(V, scale):
    """Each lens on ranks ``(rank - 1/2) / n``, divided by its range (constant lenses: 0), or
    the mean of the two (``"balanced"``; module notes)."""
    V = np.asarray(V, dtype=np.float64)
    span = V.max(axis=0) - V.min(axis=0)
    raw = (V - V.min(axis=0)) / np.where(span > 0, span, 1.0)
    if scale == "raw":
        return raw
    rank = np.column_stack([normalize(V[:, j], "rank") for j in range(V.shape[1])])
    return rank if scale == "rank" else 0.5 * (rank + raw)


def _greedy_net(U, eps):
    """Indices of an eps-net of the rows of U: each point taken in lexicographic order joins
    the centres when no centre is within ``eps`` (every point then lies within eps of one).

    One ball query per centre on a KD-tree of all points: O(n log n + pairs found).
    """
    n = U.shape[0]
    tree = cKDTree(U)
    order = np.lexsort(U.T[::-1])
    covered = np.zeros(n, dtype=bool)
    centres = []
    for i in order:
        if covered[i]:
            continue
        centres.append(int(i))
        covered[tree.query_ball_point(U[i], eps)] = True
    return np.asarray(centres, dtype=np.int64)


def _farthest_points(U, count):
    """Farthest-point insertion (Gonzalez 1985): ``count`` centres and the covering radius.

    Starts at the lexicographically smallest point; O(n m) per centre.
    """
    n = U.shape[0]
    first = int(np.lexsort(U.T[::-1])[0])
    centres = [first]
    dist = np.sqrt(((U - U[first]) ** 2).sum(axis=1))
    for _ in range(min(count, n) - 1):
        nxt = int(np.argmax(dist))
        if dist[nxt] == 0:
            break
        centres.append(nxt)
        np.minimum(dist, np.sqrt(((U - U[nxt]) ** 2).sum(axis=1)), out=dist)
    return np.asarray(centres, dtype=np.int64), float(dist.max())


class BallCover(CoverBase):
    """Overlapping balls around a greedy net of the (rank-normalised) lens values.

    Parameters
    ----------
    radius : float in (0, 1], default=0.1
        Net spacing ``eps`` on the cover scale (the values lie in [0, 1] per
        lens): every point is within ``eps`` of a centre and centres are at
        least ``eps`` apart. Ignored when ``centres`` is given.
    centres : int, optional
        Grow the net by farthest-point insertion to this many centres instead
        (``eps`` is then the covering radius found).
    overlap : float in [0, 1), default=0.3
        Balls have radius ``eps / (1 - overlap)``.
    scale : {"rank", "raw"}, default="rank"
        ``"rank"``: each lens on its ranks ``(rank - 1/2) / n``; ``"raw"``: each
        lens minus its minimum, divided by its range (shape kept, units made
        comparable).

    Attributes
    ----------
    values_ : ndarray of shape (n_samples, n_lenses)
        The values on the cover scale.
    centres_ : ndarray of shape (n_centres, n_lenses)
        Ball centres on the cover scale (data points).
    centre_rows_ : ndarray of int64
        Row of each centre.
    eps_, ball_radius_ : float
        Net spacing and ball radius.

    Notes
    -----
    Meant for two or more lenses. On one lens a net of spacing ``eps`` with
    balls of radius ``eps / (1 - overlap)`` is an interval cover whose overlap
    fraction is ``1 - (1 - overlap) / 2 >= 1/2``, so three balls share points
    and the graph's cycle count ``E - V + C`` counts filled triangles; read the
    summary's ``holes`` (the nerve with its triangles) instead, as for any
    cover of two or more lenses.

    Cost: the net O(n log n + pairs within eps) (or O(n m c) for ``centres=c``),
    the assignment one KD-tree ball query per centre, O(n log n + P) for P
    (point, ball) pairs.

    References
    ----------
    .. [1] T. F. Gonzalez, "Clustering to minimize the maximum intercluster
       distance", Theoretical Computer Science 38, 1985 (farthest-point insertion).

    Examples
    --------
    >>> t = np.linspace(0, 2 * np.pi, 400, endpoint=False)
    >>> cover = BallCover(radius=0.2, scale="raw").fit(np.column_stack([np.cos(t), np.sin(t)]))
    >>> cover.n_elements, cover.eps_
    (15, 0.2)
    >>> rows, elements = cover.incidence()
    >>> bool(np.isin(np.arange(400), rows).all()), cover.element_ids([3]).tolist()
    (True, [[3]])
    """

    kind = "ball"
    _param_names = ("radius", "centres", "overlap", "scale")

    def __init__(self, radius=0.1, centres=None, overlap=0.3, scale="rank"):
        self.radius = radius
        self.centres = centres
        self.overlap = overlap
        self.scale = scale

    def check_params(self):
        """Check the parameters; returns self.

        Examples
        --------
        >>> BallCover(radius=0.2).check_params().radius
        0.2
        """
        self._check_params()
        return self

    def _check_params(self):
        radius = check_float("radius", self.radius, lo=0.0, hi=1.0, lo_open=True,
                             context="BallCover")
        centres = None if self.centres is None else check_int(
            "centres", self.centres, lo=1, context="BallCover")
        overlap = check_float("overlap", self.overlap, lo=0.0, hi=1.0, hi_open=True,
                              context="BallCover")
        scale = check_choice("scale", self.scale, COVER_SCALES, context="BallCover")
        return radius, centres, overlap, scale

    def fit(self, values, names=None):
        """Find the net over ``values`` and each ball's points.

        Parameters
        ----------
        values : array-like of shape (n_samples,) or (n_samples, n_lenses)
        names : list of str, optional

        Returns
        -------
        self
        """
        V, names = _checked_values(values, names, "BallCover")
        radius, centres, overlap, scale = self._check_params()
        for j in np.flatnonzero(V.max(axis=0) == V.min(axis=0)):
            warn_caller(
                f"Lens {names[j]!r} is constant: it does not separate the balls. Choose a lens "
                f"that varies over the data."
            )
        U = _scaled(V, scale)
        if centres is None:
            rows = _greedy_net(U, radius)
            eps = radius
        else:
            rows, eps = _farthest_points(U, centres)
            eps = max(eps, 1e-12)
        self.values_ = U
        self.names_ = names
        self.scale_ = scale
        self.overlap_ = overlap
        self.eps_ = float(eps)
        # the factor 1 + 1e-9 keeps a point at exactly eps inside despite rounding
        self.ball_radius_ = float(eps / (1.0 - overlap) * (1.0 + 1e-9))
        self.centre_rows_ = rows
        self.centres_ = U[rows]
        return self

    @property
    def n_elements(self):
        """Number of balls (net centres)."""
        return int(self.centre_rows_.size)

    def incidence(self, order=None):
        """Every (point, ball) pair, grouped by ball (see :meth:`Cover.incidence`)."""
        tree = cKDTree(self.values_)
        found = tree.query_ball_point(self.centres_, self.ball_radius_)
        lengths = np.fromiter((len(f) for f in found), dtype=np.int64, count=len(found))
        rows = np.concatenate([np.asarray(f, dtype=np.int64) for f in found])
        flat = np.repeat(np.arange(len(found), dtype=np.int64), lengths)
        return _order_pairs(rows, flat, self.values_.shape[0], order)

    def element_ids(self, flat):
        """Centre number of each ball: int64 array of shape (len(flat), 1)."""
        return np.atleast_1d(np.asarray(flat, dtype=np.int64)).reshape(-1, 1)

    def labels(self, flat):
        """``"ball 4 at (0.25, 0.5)"``-style text (1-based number, centre on the cover scale)."""
        out = []
        for b in self.element_ids(flat)[:, 0]:
            where = ", ".join(f"{v:.3g}" for v in self.centres_[b])
            out.append(f"ball {int(b) + 1} at ({where})")
        return out

    def levels(self, flat):
        """Centre of each ball on the cover scale, shape (len(flat), n_lenses)."""
        return self.centres_[self.element_ids(flat)[:, 0]].astype(np.float64)

    def params(self):
        """JSON-ready description of the fitted cover."""
        return {
            "kind": self.kind, "radius": self.radius if self.centres is None else None,
            "centres": self.centres, "overlap": self.overlap_, "scale": self.scale_,
            "eps": self.eps_, "ball_radius": self.ball_radius_, "n_balls": self.n_elements,
        }


#: Cover kinds by name: one table for validation, dispatch, the CLI and the docs.
COVERS = {"interval": Cover, "ball": BallCover}
