"""A cover suggestion from the data (Carrière, Michel and Oudot 2018): suggest_cover.

Cover suggestion
----------------
:func:`suggest_cover` follows the parameter selection of [1] as we read it
(from memory; check the paper before relying on the constants):

1. the scale ``delta`` is the mean, over ``batches`` random subsamples ``S``
   of size ``s = n / (log n) ** (1 + beta)``, of the Hausdorff distance
   ``d_H(X, S) = max_x min_{y in S} |x - y|``;
2. the resolution (interval length) of each lens ``f`` is
   ``r = max{|f(x) - f(y)| : |x - y| <= delta} / g`` with gain (overlap)
   ``g`` in (1/3, 1/2);
3. single-linkage clustering at scale ``delta``.

Here, step 2 is computed exactly (a radius search over all rows) on the raw
lens values by default (``scale="raw"``; with ``bootstrap_graph(...,
suggest=True)`` the graphs then use the raw scale too), the interval
length is turned into the largest interval count whose intervals are at
least ``r`` long, and step 3 becomes the graph clusterer's cut-off: edges of
the shared k-NN graph shorter than ``delta`` (single linkage restricted to
the k nearest neighbours, not the full delta-neighbourhood graph). The
guarantees of [1] assume their single-linkage clustering and a lens that is
Lipschitz on a sampled manifold; none is claimed for this variant.

References
----------
.. [1] M. Carriere, B. Michel and S. Oudot, "Statistical analysis and
   parameter selection for Mapper", Journal of Machine Learning Research 19,
   2018.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import _progress
from ._errors import InputError
from ._validation import check_choice, check_float, check_int, check_random_state
from .graph._features import as_workspace
from .graph._settings import GraphSettings
from .normalize import normalize
from .table import as_lens_table

__all__ = ["CoverSuggestion", "suggest_cover"]


@dataclass(frozen=True)
class CoverSuggestion:
    """Cover settings suggested from the data (see the module docstring).

    Attributes
    ----------
    intervals : int or list of int
        Interval count per lens column (an int for one column).
    overlap : float
        The gain ``g``.
    cutoff : float
        The scale ``delta``, as the clusterer's edge-length cut-off.
    delta : float
        Mean Hausdorff distance between the data and its subsamples.
    resolution : list of float
        Interval length per lens column on the cover's scale.
    subsample_size : int
    batches : int
    pairs : int
        Row pairs within ``delta`` that the resolution was taken over.
    scale : {"raw", "rank"}
        The scale the rule was applied on (the cover must use the same).

    Examples
    --------
    >>> s = CoverSuggestion(intervals=6, overlap=0.4, cutoff=0.2, delta=0.2, resolution=[0.3],
    ...                     subsample_size=50, batches=30, pairs=900)
    >>> s.settings()
    {'intervals': 6, 'overlap': 0.4, 'cutoff': 0.2, 'scale': 'raw'}
    """

    intervals: object
    overlap: float
    cutoff: float
    delta: float
    resolution: list
    subsample_size: int
    batches: int
    pairs: int
    scale: str = "raw"

    def settings(self):
        """Keyword arguments for :func:`lenswork.build_graph`."""
        return {"intervals": self.intervals, "overlap": self.overlap, "cutoff": self.cutoff,
                "scale": self.scale}

    def apply(self, settings=None):
        """``settings`` (default ``GraphSettings()``) with the suggested interval cover.

        Examples
        --------
        >>> s = CoverSuggestion(intervals=6, overlap=0.4, cutoff=0.2, delta=0.2,
        ...                     resolution=[0.3], subsample_size=50, batches=30, pairs=900)
        >>> g = s.apply(GraphSettings(k=10))
        >>> g.intervals, g.scale, g.k
        (6, 'raw', 10)
        """
        intervals = self.intervals if isinstance(self.intervals, int) else tuple(self.intervals)
        return GraphSettings.coerce(settings).replace(
            cover="interval", intervals=intervals, overlap=self.overlap, cutoff=self.cutoff,
            scale=self.scale)


def _algorithm(d, metric):
    """scikit-learn's tree for low dimension (cosine has no tree), brute force otherwise."""
    return "kd_tree" if d <= 6 and metric != "cosine" else "brute"


def _hausdorff_scale(X, size, batches, rng, metric="euclidean"):
    """Mean over batches of d_H(X, S) for random subsamples S of ``size`` rows."""
    from sklearn.neighbors import NearestNeighbors

    n, d = X.shape
    algorithm = _algorithm(d, metric)
    out = []
    for _ in range(batches):
        pick = rng.choice(n, size=size, replace=False)
        nn = NearestNeighbors(n_neighbors=1, algorithm=algorithm, metric=metric).fit(X[pick])
        dist, _ = nn.kneighbors(X)
        out.append(float(dist.max()))
    return float(np.mean(out))


def _max_lens_gap(X, F, radius, chunk=2048, metric="euclidean"):
    """Per column of F: max |F[a] - F[b]| over row pairs with |X[a] - X[b]| <= radius."""
    from sklearn.neighbors import NearestNeighbors

    n, d = X.shape
    nn = NearestNeighbors(radius=radius, algorithm=_algorithm(d, metric), metric=metric).fit(X)
    best = np.zeros(F.shape[1])
    pairs = 0
    for start in range(0, n, chunk):
        block = np.arange(start, min(start + chunk, n))
        neigh = nn.radius_neighbors(X[block], return_distance=False)
        lengths = np.fromiter((len(a) for a in neigh), dtype=np.int64, count=len(block))
        if lengths.sum() == 0:
            continue
        rows = np.repeat(block, lengths)
        cols = np.concatenate(neigh)
        pairs += int(lengths.sum())
        best = np.maximum(best, np.abs(F[rows] - F[cols]).max(axis=0))
    return best, (pairs - n) // 2  # every row finds itself; each pair is seen twice


def _count_for_length(length, span, gain):
    """Largest interval count N whose intervals (length span / (N - (N-1) g)) are >= length."""
    if length <= 0:
        return None
    if length >= span:
        return 1
    return max(1, math.floor((span / length - gain) / (1.0 - gain)))


def suggest_cover(lenses, workspace, *, settings=None, gain=0.4, batches=30, beta=0.1,
                  scale="raw", max_intervals=100, random_state=None):
    """Suggest intervals, overlap and cut-off from the data (after [1]; see the module docstring).

    Parameters
    ----------
    lenses : LensTable, LensColumn(s), array-like or registry spec(s)
    workspace : Workspace
    settings : GraphSettings or dict, optional
        The graph settings the suggestion is for: distances (the Hausdorff
        scale, the radius search) use its ``metric``, as the clusterer's cut-off
        will. :meth:`CoverSuggestion.apply` puts the suggestion into them.
    gain : float in (1/3, 1/2), default=0.4
        The overlap ``g`` (the range the guarantees of [1] ask for).
    batches : int, default=30
        Subsamples averaged in the Hausdorff scale.
    beta : float > 0, default=0.1
        Exponent in the subsample size ``n / (log n) ** (1 + beta)``.
    scale : {"raw", "rank"}, default="raw"
        The scale the rule is applied on and the cover is then laid on, as in
        :func:`lenswork.build_graph`: the lens values themselves (as in [1]), or
        ranks ``(rank - 1/2) / n``. Ranks stretch the lens where its values
        are dense, so the largest gap between close rows grows and the rule
        asks for far fewer intervals (on a noisy circle of 500 rows: 2 on ranks,
        too few for the loop, against 5 on raw values).
    max_intervals : int, default=100
        Upper bound on the suggested count.
    random_state : int, optional
        Seed of the subsamples (default: the workspace's).

    Returns
    -------
    CoverSuggestion

    Raises
    ------
    ParameterError
        Bad gain, batches, beta or scale.
    InputError
        Fewer than 10 rows.

    Notes
    -----
    Cost: ``batches`` nearest-neighbour queries of all n rows against s rows,
    then one radius search over all rows (O(n) tree queries plus the pairs
    within ``delta``).

    References
    ----------
    .. [1] M. Carriere, B. Michel and S. Oudot, "Statistical analysis and
       parameter selection for Mapper", JMLR 19, 2018.

    Examples
    --------
    >>> from lenswork import Workspace
    >>> t = np.linspace(0, 2 * np.pi, 400, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> s = suggest_cover(ws.X[:, 0], ws)
    >>> s.overlap, s.intervals >= 2, s.cutoff > 0
    (0.4, True, True)
    """
    settings = GraphSettings.coerce(settings)
    gain = check_float("gain", gain, lo=1 / 3, hi=0.5, lo_open=True, hi_open=True,
                       context="suggest_cover")
    batches = check_int("batches", batches, lo=1, context="suggest_cover")
    beta = check_float("beta", beta, lo=0, lo_open=True, context="suggest_cover")
    max_intervals = check_int("max_intervals", max_intervals, lo=1, context="suggest_cover")
    scale = check_choice("scale", scale, ("rank", "raw"), context="suggest_cover")
    workspace = as_workspace(workspace)
    cols = as_lens_table(lenses, workspace, what="suggest_cover").columns
    n = workspace.n
    if n < 10:
        raise InputError(f"suggest_cover needs at least 10 rows; the data has {n}. Use more rows.")
    rng = check_random_state(workspace.random_state if random_state is None else random_state)
    size = int(min(n - 1, max(2, math.ceil(n / math.log(n) ** (1 + beta)))))
    X = workspace.X
    with _progress.step(f"cover suggestion: Hausdorff scale over {batches} subsamples of {size}"):
        delta = _hausdorff_scale(X, size, batches, rng, settings.metric)
    F = np.column_stack([normalize(c.normalized(), "rank") if scale == "rank" else c.normalized()
                         for c in cols])
    with _progress.step(f"cover suggestion: lens gaps within delta={delta:.4g}"):
        gaps, pairs = _max_lens_gap(X, F, delta, metric=settings.metric)
    resolution = (gaps / gain).tolist()
    counts = []
    for j, r in enumerate(resolution):
        span = float(F[:, j].max() - F[:, j].min())
        c = _count_for_length(r, span, gain) if span > 0 else 1
        counts.append(int(min(max_intervals, c if c is not None else max_intervals)))
    return CoverSuggestion(
        intervals=counts[0] if len(counts) == 1 else counts, overlap=gain, cutoff=delta,
        delta=delta, resolution=resolution, subsample_size=size, batches=batches, pairs=pairs,
        scale=scale,
    )
