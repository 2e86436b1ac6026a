"""Edge weights of the Laplacian lens: a symmetric affinity over the shared k-NN graph.

The neighbour graph's edges are weighted and made symmetric (an edge is kept
when either end lists the other):

``"heat"``
    ``w_ij = exp(-max(d_ij - reach_i, 0)^2 / sigma^2)`` with one global
    ``sigma``, the median of the positive neighbour distances of the graph
    (the heat kernel of Belkin and Niyogi 2003 with ``t = sigma^2``), and
    ``reach_i = max(d_i1 - sigma, 0)``, ``d_i1`` the distance from row i to its
    nearest neighbour (:func:`heat_weights`). A row whose
    nearest neighbour lies within ``sigma`` (the bulk) keeps the plain heat
    kernel; a far row keeps its nearest edge at weight >= exp(-1) instead of
    hanging on an edge of weight 1e-20 or being cut off. One global ``sigma``
    assumes an even density; on heavy-tailed data (counts that are mostly 0)
    the far rows come off the graph and the lowest eigenvectors sit on them
    (eigenvalue 1e-10). The offset is the local-connectivity rule of McInnes,
    Healy and Melville (2018), applied only beyond the global scale.
``"self_tuning"``
    ``w_ij = exp(-d_ij^2 / (sigma_i sigma_j))``, ``sigma_i`` the distance from
    point i to its 7th neighbour, or to its k-th when k < 7 (Zelnik-Manor and
    Perona 2004). A ``sigma_i`` of 0 (seven exact duplicates) is raised to the
    smallest positive one.

Weights below 1e-10 are dropped (heat: edges longer than reach + 4.8 sigma): such a
link would be numerically singular, so the point is treated as detached. The
Nystrom extension (:mod:`lenswork.lenses._nystrom`) weights a new point's
links by the same rules and constants.

References
----------
.. [1] M. Belkin and P. Niyogi, "Laplacian eigenmaps for dimensionality
   reduction and data representation", Neural Computation 15, 2003.
.. [2] L. Zelnik-Manor and P. Perona, "Self-tuning spectral clustering", NIPS 2004.
.. [3] L. McInnes, J. Healy and J. Melville, "UMAP: uniform manifold approximation
   and projection for dimension reduction", arXiv:1802.03426, 2018 (local connectivity).
"""

from __future__ import annotations

import numpy as np

from ..workspace import knn_matrix

__all__ = ["MIN_WEIGHT", "SELF_TUNING_NEIGHBOR", "WEIGHTS", "heat_weights", "knn_affinity",
           "local_sigma"]

#: Edge-weight rules (one table: validation and dispatch).
WEIGHTS = ("heat", "self_tuning")
#: Neighbour whose distance is sigma_i in the self-tuning rule (Zelnik-Manor and Perona 2004).
SELF_TUNING_NEIGHBOR = 7
#: Edge weights below this are dropped (detached rather than numerically singular).
MIN_WEIGHT = 1e-10


def local_sigma(dist, floor=None):
    """Self-tuning scales: each row's distance to its 7th neighbour (k-th when k < 7).

    Zero or non-finite scales are raised to ``floor`` (default: the smallest
    positive one); returns ``(sigma, floor)``.
    """
    j = min(SELF_TUNING_NEIGHBOR, dist.shape[1]) - 1
    s = dist[:, j].copy()
    good = np.isfinite(s) & (s > 0)
    if floor is None:
        floor = float(s[good].min()) if good.any() else 1.0
    s[~good] = floor
    return s, floor


def heat_weights(dist, sigma):
    """Heat-kernel weights of rows' neighbour distances (nearest first), from each row's reach.

    ``exp(-max(d_ij - reach_i, 0)^2 / sigma^2)`` with ``reach_i = max(d_i1 - sigma, 0)``.
    """
    reach = np.maximum(np.nan_to_num(dist[:, :1], nan=0.0, posinf=0.0) - sigma, 0.0)
    return np.exp(-((np.maximum(dist - reach, 0.0) / sigma) ** 2))


def knn_affinity(graph, weights):
    """Symmetric weighted adjacency (CSR, zero diagonal) of a NeighborGraph, and its info."""
    idx = np.asarray(graph.indices)
    dist = np.asarray(graph.distances, dtype=np.float64)
    n, k = idx.shape
    positive = dist[np.isfinite(dist) & (dist > 0)]
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):
        if weights == "heat":
            sigma = float(np.median(positive)) if positive.size else 1.0
            w = heat_weights(dist, sigma)
            info = {"sigma": sigma, "sigma_rule": "median positive neighbour distance"}
        else:
            s, _ = local_sigma(dist)
            j = min(SELF_TUNING_NEIGHBOR, k) - 1
            w = np.exp(-(dist**2) / (s[:, None] * s[np.clip(idx, 0, n - 1)]))
            info = {
                "sigma_neighbor": j + 1,
                "sigma_median": float(np.median(s)),
                "sigma_min": float(s.min()),
                "sigma_max": float(s.max()),
            }
    keep = (w >= MIN_WEIGHT) & (idx >= 0) & (idx != np.arange(n)[:, None])
    W = knn_matrix(idx, w, keep)
    info["dropped_edges"] = int((w < MIN_WEIGHT).sum())  # edges under the weight floor
    return W, info

