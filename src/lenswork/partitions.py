"""Partition and cover agreement: contingency table, ARI, variation of information, co-membership.

Plain arrays in, numbers out: labels (one per row) or row-node membership
matrices. :mod:`lenswork.compare` applies them to the views of a graph.

Agreement scores
----------------
Both are computed here from the contingency table ``n_ij`` (rows with label
``i`` in the first partition and ``j`` in the second), with ``a_i`` and
``b_j`` its row and column sums and ``n`` the total:

* adjusted Rand index (Hubert and Arabie 1985) [1]_::

      index    = sum_ij C(n_ij, 2)
      expected = sum_i C(a_i, 2) * sum_j C(b_j, 2) / C(n, 2)
      maximum  = (sum_i C(a_i, 2) + sum_j C(b_j, 2)) / 2
      ARI      = (index - expected) / (maximum - expected)

  1 for identical partitions (also in the degenerate case where both are
  one block or both all singletons), about 0 for independent ones, and
  possibly negative. Computed in exact integer arithmetic, then divided once.
* variation of information (Meilă 2007) [2]_, in nats::

      VI = H(A) + H(B) - 2 I(A; B) = 2 H(A, B) - H(A) - H(B)

  with ``H`` the Shannon entropy of the label shares. 0 for identical
  partitions, at most ``log n``; a metric on partitions.

Row co-membership (views as covers, not partitions)
---------------------------------------------------
Two connected graphs both induce the one-block component partition, so the
two scores above call them identical (ARI 1, VI 0) however different they
are; such pairs are flagged ``trivial``. The co-membership scores compare
what the nodes say instead: two rows are *together* in a view when they share
a node, with weight ``w(r, s)`` = the number of nodes they share (the entry of
``M M^T``). With ``C = M_a^T M_b`` (the node correspondence), ``G_a = M_a^T
M_a`` and ``G_b = M_b^T M_b``, every sum over the ``C(n, 2)`` row pairs comes
from node-level tables, never an ``n x n`` matrix::

    sum_{r<s} w_a w_b = sum_ij C(C_ij, 2)
    sum_{r<s} w_a     = sum_i  C(|node_i|, 2)
    sum_{r<s} w_a^2   = sum_ii' C(G_a[i, i'], 2)

(expand ``w_a(r, s) w_b(r, s) = sum_ij [r, s in node i of a][r, s in node j
of b]``). From these:

* co-membership ARI: the adjusted Rand index with the pair indicators
  replaced by the weights, ``(sum w_a w_b - E) / ((sum w_a^2 + sum w_b^2) / 2
  - E)`` with ``E = sum w_a sum w_b / C(n, 2)``; when every row is in one node
  of each view (partitions) the weights are 0/1 and this is exactly the ARI of
  the node partitions (Hubert and Arabie 1985);
* pair Jaccard: ``sum w_a w_b / (sum w_a^2 + sum w_b^2 - sum w_a w_b)`` (the
  Tanimoto form), for 0/1 weights the Jaccard index of the two sets of
  together pairs.

Both are computed over the rows assigned in both views of the pair, in exact
integer arithmetic.

References
----------
.. [1] L. Hubert and P. Arabie, "Comparing partitions", Journal of
   Classification 2, 193-218, 1985.
.. [2] M. Meilă, "Comparing clusterings—an information based distance",
   Journal of Multivariate Analysis 98, 873-895, 2007.
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp

from ._errors import InputError

__all__ = [
    "adjusted_rand_index",
    "co_membership",
    "contingency_table",
    "variation_of_information",
]


def _labels(labels, what):
    """``labels`` as a 1-D array of integer codes 0..k-1 (any hashable labels accepted)."""
    arr = np.asarray(labels)
    if arr.ndim != 1:
        raise InputError(
            f"The {what} labels must be a 1-D array with one label per row; got shape "
            f"{arr.shape}. Pass one label per row."
        )
    if arr.dtype.kind == "f" and not np.isfinite(arr).all():
        raise InputError(
            f"The {what} labels hold NaN or infinite values; expected one finite label per row. "
            f"Leave unassigned rows out before comparing."
        )
    try:
        _, codes = np.unique(arr, return_inverse=True)
    except TypeError:  # mixed types that numpy cannot sort: fall back to first-seen order
        seen = {}
        codes = np.fromiter((seen.setdefault(v, len(seen)) for v in arr.tolist()),
                            dtype=np.int64, count=arr.shape[0])
    return np.asarray(codes, dtype=np.int64).ravel()


def contingency_table(labels_a, labels_b):
    """The contingency table of two partitions of the same rows.

    Parameters
    ----------
    labels_a, labels_b : array-like of shape (n_samples,)
        One label per row (any hashable values; only equality matters).

    Returns
    -------
    scipy.sparse.csr_matrix of shape (k_a, k_b), int64
        ``[i, j]`` = number of rows with the i-th label of ``labels_a`` (in
        sorted order) and the j-th label of ``labels_b``.

    Raises
    ------
    InputError
        If the two label arrays differ in length, or are not 1-D.

    Notes
    -----
    Cost: O(n log n) (two ``np.unique`` calls and one sparse build).

    Examples
    --------
    >>> contingency_table([0, 0, 1, 1], ["x", "y", "y", "y"]).toarray().tolist()
    [[1, 1], [0, 2]]
    """
    a = _labels(labels_a, "first")
    b = _labels(labels_b, "second")
    if a.shape != b.shape:
        raise InputError(
            f"The two partitions cover different numbers of rows ({a.shape[0]} and "
            f"{b.shape[0]}); expected one label per row for the same rows in both."
        )
    ka = int(a.max()) + 1 if a.size else 0
    kb = int(b.max()) + 1 if b.size else 0
    ones = np.ones(a.shape[0], dtype=np.int64)
    table = sp.csr_matrix((ones, (a, b)), shape=(ka, kb), dtype=np.int64)
    table.sum_duplicates()
    return table


def _pairs(counts):
    """sum over counts of C(c, 2), as an exact Python int."""
    c = np.asarray(counts, dtype=np.int64)
    return int(np.sum(c * (c - 1) // 2, dtype=np.int64)) if c.size else 0


def adjusted_rand_index(labels_a, labels_b):
    """Adjusted Rand index of two partitions of the same rows (Hubert and Arabie 1985).

    Parameters
    ----------
    labels_a, labels_b : array-like of shape (n_samples,)

    Returns
    -------
    float
        1 for identical partitions (up to renaming the labels), about 0 for
        independent ones, negative when the agreement is below chance.

    Raises
    ------
    InputError
        If the label arrays differ in length or are empty.

    Notes
    -----
    From the contingency table ``n_ij`` with margins ``a_i``, ``b_j``::

        ARI = (sum C(n_ij,2) - E) / ((sum C(a_i,2) + sum C(b_j,2)) / 2 - E),
        E   = sum C(a_i,2) sum C(b_j,2) / C(n,2).

    Numerator and denominator are multiplied by ``2 C(n, 2)`` and kept as
    exact integers, so the only rounding is the final division. When the
    denominator is 0 (both partitions one block, or both all singletons) the
    partitions agree and 1.0 is returned. Cost O(n log n).

    References
    ----------
    .. [1] L. Hubert and P. Arabie, "Comparing partitions", Journal of
       Classification 2, 193-218, 1985.

    Examples
    --------
    >>> adjusted_rand_index([0, 0, 1, 1], [5, 5, 7, 7])
    1.0
    >>> adjusted_rand_index([0, 0, 1, 1], [0, 1, 0, 1])
    -0.5
    """
    table = contingency_table(labels_a, labels_b)
    n = int(table.sum())
    if n == 0:
        raise InputError("Cannot compare empty partitions; expected at least one row.")
    index = _pairs(table.data)
    sa = _pairs(np.asarray(table.sum(axis=1)).ravel())
    sb = _pairs(np.asarray(table.sum(axis=0)).ravel())
    cn = n * (n - 1) // 2
    numerator = 2 * (index * cn - sa * sb)
    denominator = (sa + sb) * cn - 2 * sa * sb
    if denominator == 0:
        return 1.0
    return numerator / denominator


def _entropy(counts, n):
    p = np.asarray(counts, dtype=np.float64)
    p = p[p > 0] / n
    return float(-np.sum(p * np.log(p)))


def variation_of_information(labels_a, labels_b, *, normalized=False):
    """Variation of information between two partitions of the same rows (Meilă 2007).

    Parameters
    ----------
    labels_a, labels_b : array-like of shape (n_samples,)
    normalized : bool, default=False
        Divide by ``log n`` (the largest value VI can take on ``n`` rows), giving
        a number in [0, 1].

    Returns
    -------
    float
        ``VI = H(A) + H(B) - 2 I(A; B)`` in nats; 0 for identical partitions.

    Raises
    ------
    InputError
        If the label arrays differ in length or are empty.

    Notes
    -----
    With joint shares ``p_ij = n_ij / n`` and margins ``p_i``, ``q_j``::

        VI = 2 H(A, B) - H(A) - H(B),   H(A, B) = -sum p_ij log p_ij.

    Cost O(n log n) for the contingency table, then O(nonzero cells).

    References
    ----------
    .. [1] M. Meilă, "Comparing clusterings—an information based distance",
       Journal of Multivariate Analysis 98, 873-895, 2007.

    Examples
    --------
    >>> variation_of_information([0, 0, 1, 1], [1, 1, 0, 0])
    0.0
    >>> round(variation_of_information([0, 0, 0, 0], [0, 0, 1, 1]), 6)  # log 2
    0.693147
    """
    table = contingency_table(labels_a, labels_b)
    n = int(table.sum())
    if n == 0:
        raise InputError("Cannot compare empty partitions; expected at least one row.")
    h_ab = _entropy(table.data, n)
    h_a = _entropy(np.asarray(table.sum(axis=1)).ravel(), n)
    h_b = _entropy(np.asarray(table.sum(axis=0)).ravel(), n)
    vi = max(2.0 * h_ab - h_a - h_b, 0.0)  # clip rounding below zero
    if normalized:
        return vi / math.log(n) if n > 1 else 0.0
    return vi


def _pair_sum(matrix):
    """sum over the entries c of a sparse integer matrix of C(c, 2)."""
    return _pairs(sp.csr_matrix(matrix).data)


def co_membership(membership_a, membership_b):
    """Agreement of two covers of the same rows on which row pairs share a node.

    Parameters
    ----------
    membership_a, membership_b : sparse or dense 0/1 matrix of shape (n_rows, nodes)
        Row-node memberships of two views over the same rows (rows may be in
        several nodes, or in none).

    Returns
    -------
    dict
        ``ari``: the co-membership adjusted Rand index; ``jaccard``: the pair
        Jaccard (Tanimoto) index; ``together_a`` / ``together_b``: ``sum w``,
        the row pairs sharing a node, each counted once per node they share;
        ``shared``: ``sum w_a w_b``; ``trivial``: each cover puts every pair
        together exactly once (one node holding every row) or no pair
        together, so the score says nothing. See the module notes.

    Raises
    ------
    InputError
        Memberships over different numbers of rows, or fewer than two rows.

    Notes
    -----
    Three sparse products of node-level size (``M_a^T M_b``, ``M_a^T M_a``,
    ``M_b^T M_b``); cost O(sum over rows of the products of their node counts),
    no ``n x n`` matrix.

    Examples
    --------
    >>> a = np.array([[1, 0], [1, 0], [0, 1], [0, 1]])     # partitions {01}{23} and {01}{23}
    >>> co_membership(a, a[:, ::-1])["ari"], co_membership(a, a)["jaccard"]
    (1.0, 1.0)
    >>> b = np.array([[1, 0], [0, 1], [1, 0], [0, 1]])     # {02}{13}
    >>> co_membership(a, b)["ari"], co_membership(a, b)["jaccard"]
    (-0.5, 0.0)
    """
    A = sp.csr_matrix(membership_a, dtype=np.int64)
    B = sp.csr_matrix(membership_b, dtype=np.int64)
    if A.shape[0] != B.shape[0]:
        raise InputError(
            f"The two covers hold different numbers of rows ({A.shape[0]} and {B.shape[0]}); "
            f"expected memberships of the same rows."
        )
    n = A.shape[0]
    if n < 2:
        raise InputError("Co-membership needs at least two rows; it compares row pairs.")
    shared = _pair_sum(A.T @ B)
    wa = _pairs(np.asarray(A.sum(axis=0)).ravel())
    wb = _pairs(np.asarray(B.sum(axis=0)).ravel())
    wa2 = _pair_sum(A.T @ A)
    wb2 = _pair_sum(B.T @ B)
    cn = n * (n - 1) // 2
    # ARI with weights, times 2 C(n, 2): numerator 2 (shared cn - wa wb),
    # denominator (wa2 + wb2) cn - 2 wa wb
    numerator = 2 * (shared * cn - wa * wb)
    denominator = (wa2 + wb2) * cn - 2 * wa * wb
    ari = 1.0 if denominator == 0 else numerator / denominator
    union = wa2 + wb2 - shared
    jaccard = 1.0 if union == 0 else shared / union
    trivial = all(w in (0, cn) and w2 == w for w, w2 in ((wa, wa2), (wb, wb2)))
    return {"ari": float(ari), "jaccard": float(jaccard), "together_a": wa, "together_b": wb,
            "shared": shared, "trivial": bool(trivial)}
