"""The nerve of the clusters: membership matrix, edges and three-way overlaps.

With the membership matrix ``M`` (rows x nodes, ``M[i, a] = 1`` when row ``i``
belongs to node ``a``), the matrix ``C = M^T M`` counts the rows two nodes
share: ``C[a, b] = |a ∩ b|`` and ``C[a, a] = |a|``. The nerve's edges are the
non-zero entries above the diagonal, found with one sparse product; their
Jaccard weight is ``|a ∩ b| / (|a| + |b| - |a ∩ b|)``. A triangle (2-simplex of
the nerve) is a set of three nodes with at least one row in common.
"""

from __future__ import annotations

from itertools import combinations

import numpy as np
import scipy.sparse as sp

__all__ = ["membership_matrix", "nerve_edges", "nerve_triangles"]


def membership_matrix(rows, nodes, n_rows, n_nodes):
    """The (n_rows, n_nodes) CSR membership matrix (int8, sorted indices).

    Parameters
    ----------
    rows, nodes : array-like of int
        One entry per membership; a (row, node) pair may appear only once.
    n_rows, n_nodes : int

    Returns
    -------
    scipy.sparse.csr_matrix

    Examples
    --------
    >>> M = membership_matrix([0, 1, 1, 2], [0, 0, 1, 1], 3, 2)
    >>> M.toarray().tolist()
    [[1, 0], [1, 1], [0, 1]]
    """
    rows = np.asarray(rows, dtype=np.int64)
    nodes = np.asarray(nodes, dtype=np.int64)
    order = np.argsort(rows * max(int(n_nodes), 1) + nodes)
    indptr = np.zeros(n_rows + 1, dtype=np.int64)
    np.cumsum(np.bincount(rows, minlength=n_rows), out=indptr[1:])
    M = sp.csr_matrix(
        (np.ones(rows.size, dtype=np.int8), nodes[order], indptr), shape=(n_rows, n_nodes)
    )
    M.has_sorted_indices = True
    return M


def nerve_edges(M):
    """Edges of the nerve and the number of rows each edge's nodes share.

    Parameters
    ----------
    M : scipy.sparse matrix of shape (n_rows, n_nodes)

    Returns
    -------
    edges : ndarray of shape (n_edges, 2), int64
        Node pairs ``(a, b)`` with ``a < b``, sorted.
    shared : ndarray of shape (n_edges,), int64

    Notes
    -----
    One sparse product ``M^T M``: cost O(sum over rows of (nodes per row)^2).

    Examples
    --------
    >>> M = membership_matrix([0, 1, 1, 2, 2], [0, 0, 1, 1, 2], 3, 3)
    >>> edges, shared = nerve_edges(M)
    >>> edges.tolist(), shared.tolist()
    ([[0, 1], [1, 2]], [1, 1])
    """
    Mi = sp.csr_matrix(M, dtype=np.int64)
    C = sp.triu(Mi.T @ Mi, k=1).tocoo()
    keep = C.data > 0
    a, b, w = C.row[keep].astype(np.int64), C.col[keep].astype(np.int64), C.data[keep]
    order = np.lexsort((b, a))
    return np.column_stack([a[order], b[order]]).reshape(-1, 2), w[order].astype(np.int64)


def jaccard_weights(edges, shared, sizes):
    """``|a ∩ b| / (|a| + |b| - |a ∩ b|)`` for every edge."""
    edges = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    sizes = np.asarray(sizes, dtype=np.float64)
    union = sizes[edges[:, 0]] + sizes[edges[:, 1]] - shared
    return np.asarray(shared, dtype=np.float64) / union


def nerve_triangles(M):
    """Triples of nodes with at least one row in common (the nerve's 2-simplices).

    Parameters
    ----------
    M : scipy.sparse matrix of shape (n_rows, n_nodes)

    Returns
    -------
    triangles : ndarray of shape (n_triangles, 3), int64
        Sorted node triples, in lexicographic order.
    shared : ndarray of shape (n_triangles,), int64
        Rows common to the three nodes.

    Notes
    -----
    Only rows in three or more nodes contribute; a row in ``c`` nodes adds
    ``c choose 3`` triples. Cost O(sum over rows of (nodes per row)^3).

    Examples
    --------
    >>> M = membership_matrix([0, 0, 0, 1, 1], [0, 1, 2, 1, 2], 2, 3)
    >>> tri, shared = nerve_triangles(M)
    >>> tri.tolist(), shared.tolist()
    ([[0, 1, 2]], [1])
    """
    M = sp.csr_matrix(M)
    M.sort_indices()
    V = M.shape[1]
    deg = np.diff(M.indptr)
    keys = []
    for c in np.unique(deg[deg >= 3]):
        R = np.flatnonzero(deg == c)
        cols = M.indices[M.indptr[R][:, None] + np.arange(c)].astype(np.int64)
        for i, j, h in combinations(range(int(c)), 3):
            keys.append((cols[:, i] * V + cols[:, j]) * V + cols[:, h])  # V < 2e6: fits int64
    if not keys:
        return np.empty((0, 3), dtype=np.int64), np.empty(0, dtype=np.int64)
    uniq, counts = np.unique(np.concatenate(keys), return_counts=True)
    tri = np.column_stack([uniq // (V * V), (uniq // V) % V, uniq % V])
    return tri, counts.astype(np.int64)

