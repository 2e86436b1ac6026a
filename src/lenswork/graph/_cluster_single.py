"""The ``"single"`` clustering rule: single linkage cut at the first gap of its merge heights.

Single linkage on the element's points (``scipy.cluster.hierarchy``), cut at
the first gap of the histogram of merge distances, the rule proposed with
Mapper (2007). O(m^2) memory per element: small data only
(:data:`SINGLE_MAX_POINTS`).
"""

from __future__ import annotations

import numpy as np

from .._errors import ParameterError
from ._cluster_common import SCIPY_METRICS

__all__ = ["SINGLE_MAX_POINTS", "single_rule"]

#: Largest element the single-linkage clusterer accepts (it holds all pairwise distances).
SINGLE_MAX_POINTS = 20_000


def _gap_labels(Xe, metric, bins):
    """Single linkage cut at the first empty bin of the merge-distance histogram."""
    from scipy.cluster.hierarchy import fcluster, linkage

    m = Xe.shape[0]
    if m < 3:
        return np.zeros(m, dtype=np.int64)
    Z = linkage(Xe, method="single", metric=SCIPY_METRICS[metric])
    heights = Z[:, 2]
    lo, hi = heights.min(), heights.max()
    if hi <= lo:
        return np.zeros(m, dtype=np.int64)
    counts, edges = np.histogram(heights, bins=bins, range=(lo, hi))
    empty = np.flatnonzero(counts == 0)
    if empty.size == 0:
        return np.zeros(m, dtype=np.int64)
    labels = fcluster(Z, t=edges[empty[0]], criterion="distance")
    return labels.astype(np.int64) - 1


def single_rule(pts, ctx):
    """Labels of the element's points ``pts`` by the gap rule on single linkage.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from lenswork.graph._cluster_common import ElementContext
    >>> X = np.array([[0.0], [0.1], [0.2], [5.0], [5.1], [5.2]])
    >>> st = SimpleNamespace(metric="euclidean", gap_bins=10)
    >>> single_rule(np.arange(6), ElementContext(X, None, None, st, 0)).tolist()
    [0, 0, 0, 1, 1, 1]
    """
    if pts.size > SINGLE_MAX_POINTS:
        raise ParameterError(
            f"clusterer='single' holds every pairwise distance of an element; cover "
            f"element {ctx.element} has {pts.size:,} points (limit {SINGLE_MAX_POINTS:,}). Use "
            f"clusterer='graph' or more intervals."
        )
    return _gap_labels(ctx.X[pts], ctx.settings.metric, ctx.settings.gap_bins)
