"""The ``"graph"`` clustering rule: components of the shared k-NN graph inside an element.

The clusters of an element are the connected components of the shared
k-nearest-neighbour graph restricted to the element: an edge is kept when
both ends lie in the element and it is no longer than the cut-off
(:func:`lenswork.graph._cutoff.cut_indices`). Cost O(k * points in the
element) per element and one ``scipy.sparse.csgraph.connected_components``
call.
"""

from __future__ import annotations

import numpy as np

__all__ = ["graph_rule"]


def _graph_labels(cut_idx, pts, loc):
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components

    m = pts.size
    lnb = loc[cut_idx[pts]]
    mask = lnb >= 0
    indptr = np.zeros(m + 1, dtype=np.int64)
    np.cumsum(np.count_nonzero(mask, axis=1), out=indptr[1:])
    ind = lnb[mask]
    # float64 weights: csgraph works in float64, and other types cost a sort on conversion.
    A = sp.csr_matrix((np.ones(ind.size), ind, indptr), shape=(m, m))
    _, lab = connected_components(A, directed=True, connection="weak")
    return lab.astype(np.int64)


def graph_rule(pts, ctx):
    """Labels of the element's points ``pts``: components of ``ctx.cut_indices`` inside it.

    Examples
    --------
    >>> from lenswork.graph._cluster_common import ElementContext
    >>> cut = np.array([[1], [0], [3], [2]])              # two pairs of neighbours
    >>> loc = np.arange(4, dtype=np.int32)
    >>> graph_rule(np.arange(4), ElementContext(None, loc, cut, None, 0)).tolist()
    [0, 0, 1, 1]
    """
    return _graph_labels(ctx.cut_indices, pts, ctx.loc)
