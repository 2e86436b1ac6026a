"""Aggregation multigrid for graph Laplacians: the coarse hierarchy and one V-cycle.

The graph is coarsened by aggregation: random seeds (one in 8 vertices, drawn
from ``rng``); every vertex joins the seed nearest in hops along *strong*
edges (weight at least 1% of the largest at either end, the strength of
connection of algebraic multigrid), found by
:func:`scipy.sparse.csgraph.dijkstra` with ``min_only``; a strongly linked
group without a seed gets its own. The aggregates' graph is ``P^T W P``;
coarsening repeats until at most 500 vertices remain.

The preconditioner is one V-cycle of smoothed aggregation (Vanek, Mandel and
Brezina 1996) over the same aggregates, with one damped-Jacobi sweep before
and after each coarse correction. Prolongations are smoothed while the
aggregates' graph has at most 32 entries per row (2-D and 3-D manifolds:
7-17); on high-dimensional, expander-like data (20-d Gaussian: 90-140) a
smoothed coarse operator would be nearly dense, so the hierarchy is left
unsmoothed there. The coarsest level is inverted exactly on the complement of
its null vector (dense, up to 3,000 vertices), or smoothed by Jacobi sweeps.
The cycle runs in float32.

References
----------
.. [1] P. Vanek, J. Mandel and M. Brezina, "Algebraic multigrid by smoothed
   aggregation for second and fourth order elliptic problems", Computing 56, 1996.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components, dijkstra

from ._lobpcg import symmetric_part

__all__ = [
    "COARSEST",
    "COARSE_DENSE_MAX",
    "RATIO",
    "SMOOTH_MAX_DEGREE",
    "STRONG",
    "AggregationPreconditioner",
    "aggregate",
    "graph_hierarchy",
    "strong_edges",
]

#: Coarsening stops once a level has at most this many vertices.
COARSEST = 500
#: Largest coarsest level solved exactly (dense) in the preconditioner.
COARSE_DENSE_MAX = 3000
#: Vertices per aggregate (one random seed in this many vertices).
RATIO = 8
#: An edge is strong (may join an aggregate) when its weight is at least this share of
#: the largest edge weight at either end.
STRONG = 0.01
#: Prolongations are smoothed while the aggregates' graph has at most this many
#: entries per row (2-D and 3-D manifolds: 7-17; 20-d Gaussian data: 90-140).
SMOOTH_MAX_DEGREE = 32


def strong_edges(W):
    """Pattern of the strong edges: weight >= STRONG * the largest edge weight at either end."""
    n = W.shape[0]
    rows = np.repeat(np.arange(n), np.diff(W.indptr))
    off = W.indices != rows
    filled = np.diff(W.indptr) > 0
    wmax = np.zeros(n)
    wmax[filled] = np.maximum.reduceat(np.where(off, W.data, 0.0), W.indptr[:-1][filled])
    keep = off & (W.data >= STRONG * np.maximum(wmax[rows], wmax[W.indices]))
    return sp.csr_matrix(
        (np.ones(int(keep.sum())), (rows[keep], W.indices[keep])), shape=W.shape
    )


def aggregate(W, rng):
    """Aggregate vertices around random seeds, each joining the hop-nearest seed.

    Hops follow strong edges only (classical strength of connection in algebraic
    multigrid), so a weakly attached vertex or clump is not merged into its
    neighbours: every group of strongly connected vertices without a seed gets
    one, and becomes its own aggregate. Returns (agg, coarse graph P^T W P).
    """
    n = W.shape[0]
    Ws = strong_edges(W)
    seeds = rng.choice(n, size=max(n // RATIO, 1), replace=False)
    ns, label = connected_components(Ws, directed=False)
    seeded = np.zeros(ns, dtype=bool)
    seeded[label[seeds]] = True
    if not seeded.all():
        _, first = np.unique(label, return_index=True)
        seeds = np.concatenate([seeds, first[~seeded]])
    seeds = np.sort(seeds)
    _, _, sources = dijkstra(
        Ws, directed=False, indices=seeds, unweighted=True, min_only=True,
        return_predecessors=True,
    )
    agg = np.searchsorted(seeds, sources)
    nc = seeds.size
    coo = W.tocoo()
    Wc = sp.csr_matrix((coo.data, (agg[coo.row], agg[coo.col])), shape=(nc, nc))
    Wc.sum_duplicates()
    return agg, Wc


def graph_hierarchy(W, b, nb, rng):
    """Aggregation maps and coarse graphs down to at most COARSEST vertices.

    Coarsening also stops when a level would keep more than half of the
    vertices (many weakly attached vertices) or fall below 4 block sizes.
    """
    graphs, masses, aggs = [W], [b], []
    smallest = max(4 * nb, 16)
    while graphs[-1].shape[0] > COARSEST and graphs[-1].shape[0] // RATIO >= smallest:
        agg, Wc = aggregate(graphs[-1], rng)
        if Wc.shape[0] > graphs[-1].shape[0] // 2:
            break
        aggs.append(agg)
        graphs.append(Wc)
        masses.append(np.bincount(agg, weights=masses[-1], minlength=Wc.shape[0]))
    return graphs, masses, aggs


def _spectral_radius_bound(A, dinv, rng, graph_form):
    """Upper estimate of the spectral radius of D^-1 A (2 for graph Laplacians, Gershgorin)."""
    if graph_form:
        return 2.0
    x = rng.standard_normal(A.shape[0])
    lam = 2.0
    for _ in range(12):
        y = dinv * (A @ x)
        nrm = np.linalg.norm(y)
        if nrm == 0:
            break
        lam = nrm / np.linalg.norm(x)
        x = y / nrm
    return 1.1 * lam


class AggregationPreconditioner:
    """One smoothed-aggregation V-cycle for A (symmetric form), as a block operator."""

    def __init__(self, A, t, graphs, aggs, rng):
        self.ops, self.prolong, self.dinv, self.omega = [A], [], [], []
        smoothed_levels = 0
        graph_form = True
        for lvl, agg in enumerate(aggs):
            Al = self.ops[-1]
            nf, nc = Al.shape[0], graphs[lvl + 1].shape[0]
            dinv = 1.0 / Al.diagonal()
            omega = 4.0 / (3.0 * _spectral_radius_bound(Al, dinv, rng, graph_form))
            self.dinv.append(dinv)
            self.omega.append(omega)
            tc = np.sqrt(np.bincount(agg, weights=t * t, minlength=nc))
            T = sp.csr_matrix((t / tc[agg], (np.arange(nf), agg)), shape=(nf, nc))
            # Smooth while the graph of aggregates stays sparse (mesh-like data); on
            # expander-like data (aggregates with many neighbours) the smoothed coarse
            # operator would be nearly dense, so from there on the hierarchy is unsmoothed.
            smooth = smoothed_levels == lvl and graphs[lvl + 1].nnz / nc <= SMOOTH_MAX_DEGREE
            if smooth:
                P = (T - (sp.diags(omega * dinv) @ (Al @ T))).tocsr()
                smoothed_levels += 1
                graph_form = False
            else:
                P = T
            self.prolong.append((P, P.T.tocsr()))
            self.ops.append((P.T @ (Al @ P)).tocsr())
            t = tc
        # Coarsest level: exact inverse on the complement of its null vector t, from
        # (A + s t t^T)^-1 = A^+ + t t^T / s; too large a level gets Jacobi sweeps instead.
        Ac = self.ops[-1]
        self.coarse_dinv = 1.0 / Ac.diagonal()
        self.coarse = None
        if Ac.shape[0] <= COARSE_DENSE_MAX:
            tn = t / np.linalg.norm(t)
            shift = float(np.abs(Ac).sum(axis=1).max()) + 1e-300
            ev, V = np.linalg.eigh(symmetric_part(Ac.toarray()) + shift * np.outer(tn, tn))
            ev = np.maximum(ev, ev[-1] * 1e-14)
            self.coarse = (V / ev) @ V.T - np.outer(tn, tn) / shift
        self.smoothed_levels = smoothed_levels
        self._single()

    def __call__(self, R):
        # The cycle runs in float32 (half the memory traffic of the sparse products;
        # a preconditioner needs no more than a few digits); LOBPCG stays in float64.
        return self._cycle(0, np.asarray(R, dtype=np.float32)).astype(np.float64)

    def _single(self):
        """Keep float32 copies of every operator (after the float64 set-up)."""
        f32 = np.float32
        self.ops = [A.astype(f32) for A in self.ops]
        self.prolong = [(P.astype(f32), PT.astype(f32)) for P, PT in self.prolong]
        self.wdiag = [(w * d).astype(f32)[:, None] for w, d in zip(self.omega, self.dinv)]
        self.coarse_wdiag = (0.5 * self.coarse_dinv).astype(f32)[:, None]
        if self.coarse is not None:
            self.coarse = self.coarse.astype(f32)

    def _cycle(self, lvl, r):
        if lvl == len(self.prolong):
            if self.coarse is not None:
                return self.coarse @ r
            A, wd = self.ops[lvl], self.coarse_wdiag
            x = wd * r
            for _ in range(2):
                x += wd * (r - A @ x)
            return x
        A, wd = self.ops[lvl], self.wdiag[lvl]
        x = wd * r
        P, PT = self.prolong[lvl]
        x += P @ self._cycle(lvl + 1, PT @ (r - A @ x))
        x += wd * (r - A @ x)
        return x
