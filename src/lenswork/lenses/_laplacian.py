"""Laplacian eigenmaps: the first non-trivial eigenvectors of a k-NN graph Laplacian.

The lens reads the shared k-nearest-neighbour graph, weights its edges, makes
it symmetric (an edge is kept when either end lists the other) and returns the
first ``m`` non-trivial eigenvectors of the normalised Laplacian
``L = I - S``, ``S = D^-1/2 W D^-1/2``, as *random-walk* coordinates
``x = D^-1/2 u`` (the solutions of ``(D - W) x = lambda D x``), which is also
what :class:`sklearn.manifold.SpectralEmbedding` returns.

Edge weights
------------
``"heat"``
    ``w_ij = exp(-d_ij^2 / sigma^2)`` with one global ``sigma``: the median of
    the positive neighbour distances of the graph (the heat kernel of Belkin
    and Niyogi 2003 with ``t = sigma^2``).
``"self_tuning"``
    ``w_ij = exp(-d_ij^2 / (sigma_i sigma_j))``, ``sigma_i`` the distance from
    point i to its 7th neighbour, or to its k-th when k < 7 (Zelnik-Manor and
    Perona 2004). A ``sigma_i`` of 0 (seven exact duplicates) is raised to the
    smallest positive one.

Weights below 1e-10 are dropped (heat: edges longer than 4.8 sigma): such a
link would be numerically singular, so the point is treated as detached.

One global sigma suits data of even density. Where density falls off (the
tails of a Gaussian blob) the heat weights link the sparse points only weakly,
and the first vectors single out a few of them; the lens then warns
(``half_weight_points`` in the info counts the points holding half of each
vector's weight) and ``weights="self_tuning"`` is the remedy. Measured on a 3-D
Gaussian, 1e5 points, k = 15: heat weights put half of each of the 4 vectors on
2 points; self-tuning weights on 14,000-19,000.

The solver
----------
On low-dimensional manifolds the wanted eigenvalues of ``L`` lie within
1e-5..1e-6 of 0 and of each other, and Krylov solvers without a preconditioner
need thousands of products. Here, after a reverse Cuthill-McKee reordering
(cache locality: a block product at 1e6 rows became 7x faster):

1. The graph is coarsened by aggregation: random seeds (one in 8 vertices,
   drawn from ``random_state``); every vertex joins the seed nearest in hops
   along *strong* edges (weight at least 1% of the largest at either end, the
   strength of connection of algebraic multigrid), found by
   :func:`scipy.sparse.csgraph.dijkstra` with ``min_only``; a strongly linked
   group without a seed gets its own. The aggregates' graph is ``P^T W P``;
   coarsening repeats until at most 500 vertices remain.
2. The coarsest problem is solved densely and its eigenvectors, copied to all
   points through the aggregates, start a block LOBPCG iteration
   (Knyazev 2001) on the finest graph, with the trivial vector ``D^1/2 1`` as a
   constraint and ``max(4, m // 2)`` extra block vectors, widened in steps of 4
   (to at most m + 12) while the coarse spectrum shows a cluster across the
   block's edge (the next coarse eigenvalue within 25% of the m-th).
3. The preconditioner is one V-cycle of smoothed aggregation (Vanek, Mandel
   and Brezina 1996) over the same aggregates, with one damped-Jacobi sweep
   before and after each coarse correction. Prolongations are smoothed while
   the aggregates' graph has at most 32 entries per row (2-D and 3-D
   manifolds: 7-17); on high-dimensional, expander-like data (20-d Gaussian:
   90-140) a smoothed coarse operator would be nearly dense, and there the
   eigenvalues sit far from 0, so the hierarchy is left unsmoothed; when the
   m-th coarse eigenvalue is above 0.1 as well, LOBPCG runs without a
   preconditioner (``info["preconditioner"]`` says which).

Iteration stops when every wanted vector has ``||S u - mu u|| <= tol * lambda``
(``lambda = 1 - mu``, ``||u|| = 1``), checked on exact products. The default
``tol = 1e-3`` is set by clustered spectra: on 20-d Gaussian data (1e5 points,
eigenvalues 0.2481-0.2496) it gave |corr| >= 0.99995 with a converged
reference, ``tol = 1e-2`` only 0.997 and ``tol = 1e-1`` unrelated vectors; on
2-D manifolds even ``tol = 1e-1`` gave |corr| = 1.000000. Components of at most
1,000 vertices are solved densely with :func:`scipy.linalg.eigh`. Dense work
runs on one BLAS thread: its products are tall and thin (n x 3b), and on the
loaded 2-core machine a threaded BLAS ran them 13-36x slower; one thread also
keeps results bit-for-bit reproducible.

Measured (tests/benchmarks/bench_laplacian.py, 2 shared cores, 4 vectors,
k = 15): against :class:`sklearn.manifold.SpectralEmbedding` on 5,000 x 20
Gaussian data, graph included, 0.15 s against 8.9 s (57x), |corr| >= 0.999999
on the same affinity. Once the neighbour graph exists, at n = 1e6: noisy swiss
roll 27 s (16 iterations, largest residual 3.9e-9, lambda_1 = 1.6e-6), noisy
torus 35 s (20 iterations), both about 2.6 GB traced at the peak of the solve;
20-d Gaussian 67 s (21 iterations, 16 block vectors, 3.9 GB).

Disconnected graphs
-------------------
A graph with several connected components raises a
:class:`~lenswork.LensworkWarning` and each component is embedded on its own:
its own first ``m`` non-trivial vectors, centred and scaled within the
component. A component with fewer than ``m + 2`` points has fewer than ``m``
non-trivial vectors; its points get 0 (the centre of every coordinate). The
eigenvalues and residuals reported are those of the largest component
(``max_residual`` covers all).
"""

from __future__ import annotations

import time
from functools import partial

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components, dijkstra, reverse_cuthill_mckee
from sklearn.base import BaseEstimator, TransformerMixin

from .._errors import InputError, ParameterError, warn_caller
from .._validation import (
    check_array,
    check_choice,
    check_float,
    check_int,
    check_random_state,
    seed_of,
)
from ..workspace import knn_matrix, neighbor_graph
from ._common import LensOutputMixin, check_input
from ._extend import nystrom_extend
from ._registry import LensPart, Param, register_lens

__all__ = ["LaplacianLens", "laplacian_eigenmaps"]

#: Edge-weight rules (one table: validation and dispatch).
WEIGHTS = ("heat", "self_tuning")
#: Neighbour whose distance is sigma_i in the self-tuning rule (Zelnik-Manor and Perona 2004).
_SELF_TUNING_NEIGHBOR = 7
#: Edge weights below this are dropped (detached rather than numerically singular).
_MIN_WEIGHT = 1e-10
#: Modes: all rows, or a landmark sample with the Nystrom extension.
MODES = ("auto", "exact", "sample")
#: "auto" solves every row up to this many rows, and samples above.
EXACT_MAX_ROWS = 200_000
#: Default number of landmarks of the sample mode.
LANDMARKS = 20_000
#: Fewest landmarks accepted.
MIN_LANDMARKS = 100
#: One landmark in this many is held out to estimate the extension error.
HOLDOUT = 5
#: Components up to this many vertices are solved densely.
_DENSE_MAX = 1000
#: Coarsening stops once a level has at most this many vertices.
_COARSEST = 500
#: Largest coarsest level solved exactly (dense) in the preconditioner.
_COARSE_DENSE_MAX = 3000
#: No preconditioner on expander-like graphs whose m-th coarse eigenvalue exceeds this.
_PLAIN_MIN_EIGENVALUE = 0.1
#: Most extra block vectors (beyond m) LOBPCG may carry on clustered spectra.
_EXTRA_MAX = 12
#: Vertices per aggregate (one random seed in this many vertices).
_RATIO = 8
#: An edge is strong (may join an aggregate) when its weight is at least this share of
#: the largest edge weight at either end.
_STRONG = 0.01
#: Prolongations are smoothed while the aggregates' graph has at most this many
#: entries per row (2-D and 3-D manifolds: 7-17; 20-d Gaussian data: 90-140).
_SMOOTH_MAX_DEGREE = 32


# ------------------------------------------------------------------ weights
def _local_sigma(dist, floor=None):
    """Self-tuning scales: each row's distance to its 7th neighbour (k-th when k < 7).

    Zero or non-finite scales are raised to ``floor`` (default: the smallest
    positive one); returns ``(sigma, floor)``.
    """
    j = min(_SELF_TUNING_NEIGHBOR, dist.shape[1]) - 1
    s = dist[:, j].copy()
    good = np.isfinite(s) & (s > 0)
    if floor is None:
        floor = float(s[good].min()) if good.any() else 1.0
    s[~good] = floor
    return s, floor


def _affinity(graph, weights):
    """Symmetric weighted adjacency (CSR, zero diagonal) of a NeighborGraph, and its info."""
    idx = np.asarray(graph.indices)
    dist = np.asarray(graph.distances, dtype=np.float64)
    n, k = idx.shape
    positive = dist[np.isfinite(dist) & (dist > 0)]
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):
        if weights == "heat":
            sigma = float(np.median(positive)) if positive.size else 1.0
            w = np.exp(-((dist / sigma) ** 2))
            info = {"sigma": sigma, "sigma_rule": "median positive neighbour distance"}
        else:
            s, _ = _local_sigma(dist)
            j = min(_SELF_TUNING_NEIGHBOR, k) - 1
            w = np.exp(-(dist**2) / (s[:, None] * s[np.clip(idx, 0, n - 1)]))
            info = {
                "sigma_neighbor": j + 1,
                "sigma_median": float(np.median(s)),
                "sigma_min": float(s.min()),
                "sigma_max": float(s.max()),
            }
    keep = (w >= _MIN_WEIGHT) & (idx >= 0) & (idx != np.arange(n)[:, None])
    W = knn_matrix(idx, w, keep)
    info["dropped_edges"] = int((w < _MIN_WEIGHT).sum())  # edges under the weight floor
    return W, info


# ------------------------------------------------------------------ small linear algebra
def _svqb_basis(V, drop=1e-12):
    """Matrix M with ``V @ M`` orthonormal (columns of V that are dependent are dropped)."""
    G = V.T @ V
    d = np.sqrt(np.abs(np.diag(G)))
    d[d == 0] = 1.0
    Gs = G / d[:, None] / d[None, :]
    w, Q = np.linalg.eigh((Gs + Gs.T) * 0.5)
    keep = w > drop * max(w[-1], 0.0)
    return (Q[:, keep] / np.sqrt(w[keep])) / d[:, None]


def _fix_signs(V):
    """Make the largest-magnitude entry of each column positive (in place)."""
    if V.shape[0] == 0:
        return V
    pick = np.argmax(np.abs(V), axis=0)
    signs = np.sign(V[pick, np.arange(V.shape[1])])
    signs[signs == 0] = 1.0
    V *= signs
    return V


def _sym_operator(W, b):
    """``A = B^-1/2 (D - W) B^-1/2`` (CSR) for weights W and a positive mass b."""
    deg = np.asarray(W.sum(axis=1)).ravel()
    r = 1.0 / np.sqrt(b)
    rows = np.repeat(np.arange(W.shape[0]), np.diff(W.indptr))
    S = sp.csr_matrix((W.data * r[rows] * r[W.indices], W.indices, W.indptr), shape=W.shape)
    return (sp.diags(deg / b) - S).tocsr(), deg


# ------------------------------------------------------------------ LOBPCG
def _lobpcg(A, U0, precond, Y, m, tol, floor, max_iter, rng):
    """Block LOBPCG for the smallest eigenpairs of A on the complement of span(Y).

    The search space is [X, W, P] with W the preconditioned residuals and P
    the previous update orthogonalised against X (the orthogonal basis of
    Hetmaniuk and Lehoucq 2006); [W, P] is projected off X and orthonormalised
    through its Gram matrix (SVQB, near-dependent directions dropped), so each
    step costs one block product with A, one preconditioner call and about
    30 n b^2 multiply-adds of dense work. Converged when the first ``m`` residuals
    satisfy ``||A u - theta u|| <= max(tol * theta, floor)``, checked on exact
    products. Returns (theta, U, residuals, updates, converged).
    """
    n, nb = U0.shape

    def project(V, work=None):
        coef = Y.T @ V
        V -= np.multiply(Y, coef, out=work) if work is not None else Y * coef
        return V

    def done(theta, res):
        return bool(np.all(res[:m] <= np.maximum(tol * np.abs(theta[:m]), floor)))

    X = project(np.array(U0, dtype=np.float64))
    X = X @ _svqb_basis(X)
    if X.shape[1] < nb:  # a degenerate start: fill it up with random directions
        extra = project(rng.standard_normal((n, nb - X.shape[1])))
        extra -= X @ (X.T @ extra)
        X = np.hstack([X, extra @ _svqb_basis(extra)])
        X = X @ _svqb_basis(X)
    AX = A @ X
    theta, C = np.linalg.eigh(_sym(X.T @ AX))
    X, AX = X @ C, AX @ C
    # Work arrays are allocated once: a fresh (n, b) temporary per operation costs as
    # much in page faults as the operation itself at n = 1e6.
    P = AP = None
    R, T = np.empty((n, nb)), np.empty((n, nb))
    spare = [np.empty((n, nb)) for _ in range(4)]
    Qbuf, AQbuf, Tq = (np.empty((n, 2 * nb)) for _ in range(3))
    converged = False
    updates = 0
    while True:
        np.multiply(X, theta, out=R)
        np.subtract(AX, R, out=R)
        res = np.linalg.norm(R, axis=0)
        if done(theta, res):
            AX = A @ X  # the running AX drifts; confirm on exact products
            theta = np.einsum("ij,ij->j", X, AX)
            np.multiply(X, theta, out=R)
            np.subtract(AX, R, out=R)
            res = np.linalg.norm(R, axis=0)
            if done(theta, res):
                converged = True
                break
        if updates == max_iter:
            break
        updates += 1
        Wv = project(precond(R), T)
        np.matmul(X, X.T @ Wv, out=T)
        Wv -= T
        norms = np.linalg.norm(Wv, axis=0)
        norms[norms == 0] = 1.0
        Wv /= norms
        q = nb if P is None else 2 * nb
        Q, AQ, Tqv = Qbuf[:, :q], AQbuf[:, :q], Tq[:, :q]
        Q[:, :nb] = Wv
        AQ[:, :nb] = A @ Wv
        if P is not None:
            Q[:, nb:] = P
            AQ[:, nb:] = AP
        XQ = X.T @ Q
        Q -= np.matmul(X, XQ, out=Tqv)
        AQ -= np.matmul(AX, XQ, out=Tqv)
        M = _svqb_basis(Q, drop=1e-8)
        r = M.shape[1]
        if r == 0:  # no new direction left: nothing more to gain
            break
        H = np.empty((nb + r, nb + r))
        H[:nb, :nb] = np.diag(theta)
        off = M.T @ (Q.T @ AX)
        H[nb:, :nb] = off
        H[:nb, nb:] = off.T
        H[nb:, nb:] = M.T @ (Q.T @ AQ) @ M
        theta_all, V = np.linalg.eigh(_sym(H))
        theta, V = theta_all[:nb], V[:, :nb]
        VX, VQ = V[:nb], V[nb:]
        E = VQ.T @ VQ
        CQ, DQ, ZX = M @ VQ, M @ (VQ - VQ @ E), -VX @ E
        new = []
        for base, rest, cx, cq in ((X, Q, VX, CQ), (AX, AQ, VX, CQ), (X, Q, ZX, DQ),
                                   (AX, AQ, ZX, DQ)):
            out = spare.pop()
            np.matmul(base, cx, out=out)
            out += np.matmul(rest, cq, out=T)
            new.append(out)
        spare += [X, AX] + ([P, AP] if P is not None else [np.empty((n, nb)) for _ in range(2)])
        X, AX, P, AP = new
        if np.abs(X.T @ X - np.eye(nb)).max() > 1e-10:  # restore orthonormality
            Mx = _svqb_basis(X)
            if Mx.shape[1] < nb:  # the block lost rank: stop here, the final check decides
                break
            X, AX = X @ Mx, AX @ Mx
            theta, C = np.linalg.eigh(_sym(X.T @ AX))
            X, AX = X @ C, AX @ C
    if not converged:
        AX = A @ X
        theta = np.einsum("ij,ij->j", X, AX)
        res = np.linalg.norm(AX - X * theta, axis=0)
        converged = done(theta, res)
    order = np.argsort(theta, kind="stable")
    return theta[order], X[:, order], res[order], updates, converged


def _sym(G):
    return (G + G.T) * 0.5


# ------------------------------------------------------------------ multilevel pieces
def _strong_edges(W):
    """Pattern of the strong edges: weight >= _STRONG * the largest edge weight at either end."""
    n = W.shape[0]
    rows = np.repeat(np.arange(n), np.diff(W.indptr))
    off = W.indices != rows
    filled = np.diff(W.indptr) > 0
    wmax = np.zeros(n)
    wmax[filled] = np.maximum.reduceat(np.where(off, W.data, 0.0), W.indptr[:-1][filled])
    keep = off & (W.data >= _STRONG * np.maximum(wmax[rows], wmax[W.indices]))
    return sp.csr_matrix(
        (np.ones(int(keep.sum())), (rows[keep], W.indices[keep])), shape=W.shape
    )


def _aggregate(W, rng):
    """Aggregate vertices around random seeds, each joining the hop-nearest seed.

    Hops follow strong edges only (classical strength of connection in algebraic
    multigrid), so a weakly attached vertex or clump is not merged into its
    neighbours: every group of strongly connected vertices without a seed gets
    one, and becomes its own aggregate. Returns (agg, coarse graph P^T W P).
    """
    n = W.shape[0]
    Ws = _strong_edges(W)
    seeds = rng.choice(n, size=max(n // _RATIO, 1), replace=False)
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


def _graph_hierarchy(W, b, nb, rng):
    """Aggregation maps and coarse graphs down to at most _COARSEST vertices.

    Coarsening also stops when a level would keep more than half of the
    vertices (many weakly attached vertices) or fall below 4 block sizes.
    """
    graphs, masses, aggs = [W], [b], []
    smallest = max(4 * nb, 16)
    while graphs[-1].shape[0] > _COARSEST and graphs[-1].shape[0] // _RATIO >= smallest:
        agg, Wc = _aggregate(graphs[-1], rng)
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


class _Preconditioner:
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
            smooth = smoothed_levels == lvl and graphs[lvl + 1].nnz / nc <= _SMOOTH_MAX_DEGREE
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
        if Ac.shape[0] <= _COARSE_DENSE_MAX:
            tn = t / np.linalg.norm(t)
            shift = float(np.abs(Ac).sum(axis=1).max()) + 1e-300
            ev, V = np.linalg.eigh(_sym(Ac.toarray()) + shift * np.outer(tn, tn))
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


# ------------------------------------------------------------------ one connected component
def _dense_eigs(A, t, m):
    """Smallest m non-trivial eigenpairs of a small A (trivial vector t shifted away)."""
    Ad = A.toarray()
    shift = 2.0 * float(np.abs(Ad).sum(axis=1).max()) + 1.0
    Ad += shift * np.outer(t, t)
    theta, U = sla.eigh(_sym(Ad), subset_by_index=[0, m - 1])
    res = np.linalg.norm(A @ U - U * theta, axis=0)
    return theta, U, res


def _component_eigs(W, b, m, rng, tol, max_iter):
    """First m non-trivial eigenpairs of one connected graph.

    Returns (x, theta, residuals, info) with x the mass-orthonormal random-walk
    vectors (``x = B^-1/2 u``, ``sum_i b_i x_i^2 = 1``).
    """
    n = W.shape[0]
    sb = np.sqrt(b)
    if n <= _DENSE_MAX:
        A, _ = _sym_operator(W, b)
        theta, U, res = _dense_eigs(A, sb / np.linalg.norm(sb), m)
        info = {"method": "dense", "iterations": 0, "converged": True, "levels": [n]}
        return U / sb[:, None], theta, res, info
    nb = min(m + max(4, m // 2), n - 2)
    perm = reverse_cuthill_mckee(W, symmetric_mode=True)
    W = W[perm][:, perm].tocsr()
    b, sb = b[perm], sb[perm]
    A, deg = _sym_operator(W, b)
    graphs, masses, aggs = _graph_hierarchy(W, b, nb, rng)
    # Start: eigenvectors of the coarsest graph, copied down through the aggregates.
    Wc, bc = graphs[-1], masses[-1]
    if nb + 2 <= Wc.shape[0] <= _COARSE_DENSE_MAX:
        Ac, _ = _sym_operator(Wc, bc)
        sbc = np.sqrt(bc)
        most = min(m + _EXTRA_MAX, Wc.shape[0] - 2, n - 2)
        theta_c, Uc, _ = _dense_eigs(Ac, sbc / np.linalg.norm(sbc), most)
        # A cluster of eigenvalues across the block's edge slows LOBPCG down (20-d
        # Gaussian data: 34 iterations with m + 4 vectors, 12 with m + 12): widen the
        # block while the next coarse value is within 25% of the m-th.
        while nb + 4 <= most and theta_c[nb] < 1.25 * theta_c[m - 1]:
            nb += 4
        Xs = Uc[:, :nb] / sbc[:, None]
        for agg in reversed(aggs):
            Xs = Xs[agg]
        U0 = Xs * sb[:, None]
    else:
        theta_c = None
        U0 = rng.standard_normal((n, nb))
    # Expander-like graphs (the first aggregates' graph is dense) whose coarse spectrum
    # sits well away from 0 need no preconditioner: there a V-cycle costs about four
    # block products and saves too few iterations (1e6 x 20 Gaussian data: 13
    # iterations with it, 20 without, 92 s against 86 s), and its set-up is skipped.
    mesh_like = len(graphs) > 1 and graphs[1].nnz / graphs[1].shape[0] <= _SMOOTH_MAX_DEGREE
    if not mesh_like and theta_c is not None and theta_c[m - 1] > _PLAIN_MIN_EIGENVALUE:
        precond, smoothed, kind = np.array, 0, "none"
    else:
        precond = _Preconditioner(A, sb, graphs, aggs, rng)
        smoothed = precond.smoothed_levels
        kind = "smoothed aggregation" if smoothed else "aggregation"
    # ||A|| <= 2 max(deg / b) (Gershgorin); residuals below ~1e-13 ||A|| are rounding.
    floor = 1e-13 * max(2.0 * float(np.max(deg / b)), 1.0)
    theta, U, res, iters, converged = _lobpcg(
        A, U0, precond, (sb / np.linalg.norm(sb))[:, None], m, tol, floor, max_iter, rng
    )
    x = np.empty((n, m))
    x[perm] = U[:, :m] / sb[:, None]
    info = {
        "method": "multilevel",
        "iterations": int(iters),
        "converged": bool(converged),
        "levels": [int(g.shape[0]) for g in graphs],
        "preconditioner": kind,
        "smoothed_levels": int(smoothed),
        "block_size": int(nb),
    }
    return x, theta[:m], res[:m], info


# ------------------------------------------------------------------ the worker
def _half_weight_points(x, b):
    """Per column: the fewest points holding half of ``sum_i b_i x_i^2`` (a spread measure)."""
    out = []
    for j in range(x.shape[1]):
        c = np.cumsum(np.sort(b * x[:, j] ** 2)[::-1])
        out.append(int(np.searchsorted(c, 0.5 * c[-1]) + 1) if c[-1] > 0 else 0)
    return out


def _warn(message):
    warn_caller(message)


def _laplacian_eigs(W, m, *, mass="degree", rng, tol=1e-3, max_iter=200, warn=_warn):
    """Laplacian eigenvectors of a symmetric weighted graph W (the one private worker).

    Parameters
    ----------
    W : sparse (n, n) symmetric, non-negative
    m : int
    mass : {"degree", "uniform"}
        ``"degree"``: the normalised (random-walk) problem ``(D - W) x = lambda D x``;
        ``"uniform"``: the combinatorial Laplacian ``(D - W) x = lambda x``.
    rng : numpy Generator

    Returns
    -------
    coords : ndarray (n, m)
        Per component: centred (mass-weighted mean 0), mass-weighted mean square 1,
        largest-magnitude entry positive.
    info : dict
    """
    with _one_blas_thread():
        return _eigs_per_component(W, m, mass, rng, tol, max_iter, warn)


def _eigs_per_component(W, m, mass, rng, tol, max_iter, warn):
    start = time.perf_counter()
    W = sp.csr_matrix(W)
    if W.dtype != np.float64:
        W = W.astype(np.float64)
    diagonal = W.diagonal()
    if diagonal.any() or not np.all(W.data):  # work on a copy; the caller's W stays as it was
        W = (W - sp.diags(diagonal)).tocsr()
        W.eliminate_zeros()
    n = W.shape[0]
    deg = np.asarray(W.sum(axis=1)).ravel()
    b_all = deg if mass == "degree" else np.ones(n)
    ncomp, labels = connected_components(W, directed=False)
    sizes = np.bincount(labels, minlength=ncomp)
    order = np.argsort(-sizes, kind="stable")
    coords = np.zeros((n, m))
    if ncomp > 1:
        shown = ", ".join(str(int(s)) for s in sizes[order[:5]]) + (", ..." if ncomp > 5 else "")
        small = int((sizes < m + 2).sum())
        warn(
            f"The neighbour graph is not connected: {ncomp} components (sizes {shown}). "
            f"Each component is embedded on its own (its own first {m} Laplacian vectors, "
            f"centred and scaled within it)"
            + (f"; {small} component(s) with fewer than {m + 2} points get 0" if small else "")
            + ". A larger k, or weights='self_tuning' for data of uneven density, joins them."
        )
    rows_of = np.argsort(labels, kind="stable")
    bounds = np.concatenate([[0], np.cumsum(sizes)])
    info = {}
    worst = 0.0
    all_converged = True
    if ncomp > 1:
        Wp = W[rows_of][:, rows_of].tocsr()
    for rank, c in enumerate(order):
        if sizes[c] < m + 2:
            continue
        rows = rows_of[bounds[c]:bounds[c + 1]]
        if ncomp == 1:
            Wc, bc = W, b_all
        else:
            Wc = Wp[bounds[c]:bounds[c + 1], bounds[c]:bounds[c + 1]].tocsr()
            bc = b_all[rows]
        x, theta, res, cinfo = _component_eigs(Wc, bc, m, rng, tol, max_iter)
        x *= np.sqrt(bc.sum())
        x -= (bc @ x) / bc.sum()  # remove rounding drift along the trivial vector
        coords[rows] = _fix_signs(x)
        worst = max(worst, float(res.max()))
        all_converged &= cinfo["converged"]
        if rank == 0:
            info.update(cinfo)
            info["eigenvalues"] = [float(v) for v in theta]
            info["residuals"] = [float(v) for v in res]
            half = _half_weight_points(coords[rows], bc)
            info["half_weight_points"] = half
            few = [j for j, h in enumerate(half) if rows.size >= 200 and h < 0.01 * rows.size]
            if few:
                j = few[0]
                warn(
                    f"Laplacian vector(s) {', '.join(str(i + 1) for i in few)} are concentrated "
                    f"on few points (half the weight of vector {j + 1} on {half[j]} of "
                    f"{rows.size} points, eigenvalue {theta[j]:.2g}): they single out a few "
                    f"points that the graph links only weakly to the rest, which makes a poor "
                    f"lens. weights='self_tuning' or a larger k usually spreads them."
                )
    if not info:  # every component too small
        info = {"method": "none", "iterations": 0, "converged": True, "levels": [],
                "eigenvalues": [], "residuals": []}
    info["converged"] = bool(all_converged)
    info["max_residual"] = worst
    info["graph_components"] = int(ncomp)
    info["component_sizes"] = [int(s) for s in sizes[order[:10]]]
    info["tol"] = float(tol)
    info["seconds"] = round(time.perf_counter() - start, 3)
    if not all_converged:
        warn(
            f"The Laplacian eigensolver stopped after {max_iter} iterations before every "
            f"residual fell below tol={tol:g} times its eigenvalue (largest residual "
            f"{worst:.2e}); the vectors may be inaccurate. Raise max_iter or tol."
        )
    return coords, info


def _embed(graph, m, weights, rng, tol, max_iter, warn=_warn):
    """Affinity of a NeighborGraph, then its Laplacian eigenvectors: (coords, info, W)."""
    W, winfo = _affinity(graph, weights)
    coords, info = _laplacian_eigs(W, m, rng=rng, tol=tol, max_iter=max_iter, warn=warn)
    info = dict(info, weights=weights, k=int(graph.k), **winfo)
    return coords, info, W


def _check_params(components, k, weights, tol, max_iter, mode, landmarks, context):
    components = check_int("components", components, lo=1, context=context)
    k = check_int("k", k, lo=1, context=context)
    weights = check_choice("weights", weights, WEIGHTS, context=context)
    tol = check_float("tol", tol, lo=0, hi=1, lo_open=True, hi_open=True, context=context)
    max_iter = check_int("max_iter", max_iter, lo=1, context=context)
    mode = check_choice("mode", mode, MODES, context=context)
    landmarks = check_int("landmarks", landmarks, lo=MIN_LANDMARKS, context=context)
    return components, k, weights, tol, max_iter, mode, landmarks


def _require_rows(n, components, k, context):
    needed = max(components + 2, k + 1)
    if n < needed:
        raise InputError(
            f"{context} with components={components} and k={k} needs at least {needed} rows; "
            f"the data has {n}. Use fewer components, a smaller k or more rows."
        )


def _resolve_mode(mode, n, landmarks):
    """The mode that runs for ``n`` rows, and the rule that chose it (a sentence)."""
    if mode == "auto":
        if n <= EXACT_MAX_ROWS:
            return "exact", f"auto: exact up to {EXACT_MAX_ROWS:,} rows (n = {n:,})"
        mode, rule = "sample", f"auto: sample above {EXACT_MAX_ROWS:,} rows (n = {n:,})"
    else:
        rule = f"mode={mode}"
    if mode == "sample" and landmarks >= n:
        return "exact", rule + f"; landmarks={landmarks:,} >= n, so every row is solved"
    return mode, rule


# ------------------------------------------------------------------ the Nystrom extension
def _nearest(fit_X, Z):
    """Index of the nearest row of ``fit_X`` for each row of ``Z`` (exact, scikit-learn)."""
    from sklearn.neighbors import NearestNeighbors

    return NearestNeighbors(n_neighbors=1).fit(fit_X).kneighbors(Z)[1][:, 0]


def _extend(fit_X, coords, labels, lambdas, Z, *, k, weights, sigma, nearest=None):
    """Nystrom extension of ``coords`` (on ``fit_X``) to the rows ``Z``.

    :func:`~lenswork.lenses._extend.nystrom_extend` takes one eigenvalue per
    column; on a graph of several components each component has its own, so
    there the weighted means come from ``nystrom_extend`` with eigenvalue 0 and
    are divided by ``1 - lambda`` of the component of each row's nearest fitted
    row (``nearest``, found here when not given).
    """
    lam = np.clip(lambdas, 0.0, None)
    if lam.shape[0] == 1 and np.all(lam < 1.0):
        return nystrom_extend(fit_X, coords, lam[0], Z, k=k, weights=weights, sigma=sigma)
    mean = nystrom_extend(
        fit_X, coords, np.zeros(coords.shape[1]), Z, k=k, weights=weights, sigma=sigma
    )
    if nearest is None:
        nearest = _nearest(fit_X, Z)
    mu = 1.0 - lam[labels[nearest]]
    mu[mu == 0.0] = 1.0  # lambda = 1 exactly: no finite extension; keep the weighted mean
    return mean / mu


def _agreement(ext, ref):
    """Per column: |corr(ext_j, ref_j)| and the R^2 of ref_j on all columns of ext (+ 1)."""
    m = ref.shape[1]
    corr = []
    for j in range(m):
        a, b = ext[:, j] - ext[:, j].mean(), ref[:, j] - ref[:, j].mean()
        den = np.linalg.norm(a) * np.linalg.norm(b)
        corr.append(float(abs(a @ b) / den) if den > 0 else 0.0)
    A = np.c_[np.ones(ext.shape[0]), ext]
    coef, *_ = np.linalg.lstsq(A, ref, rcond=None)
    resid = ((ref - A @ coef) ** 2).sum(axis=0)
    total = ((ref - ref.mean(axis=0)) ** 2).sum(axis=0)
    r2 = [float(1.0 - r / t) if t > 0 else 0.0 for r, t in zip(resid, total)]
    return corr, r2


def _scaled_error(corr, h, share):
    """Estimated ``1 - |corr|`` of a sample-mode vector with the exact one, from the held-out one.

    To first order an eigenvector's sampling error is a mean of one influence
    term per landmark. Then the solve on the kept share ``1 - h`` differs from
    the solve on all landmarks by ``h`` times (mean over kept - mean over
    held-out), of variance ``h / (1 - h)`` times that of the landmark solve's
    own error; and the landmark solve differs from the all-rows solve by a
    variance ``1 - share`` times its own (``share`` = landmarks / rows). As
    ``1 - |corr|`` is half a squared distance, the held-out figure is scaled by
    ``(1 - h) / h * (1 - share)`` (4 (1 - share) for h = 1/5), at most 1.
    """
    return float(min(1.0, (1.0 - corr) * (1.0 - h) / h * (1.0 - share)))


# ------------------------------------------------------------------ exact and sample fits
def _solve_rows(X, m, k, weights, tol, max_iter, rng, seed, warn, graph=None):
    """Eigenvectors of the k-NN graph of the rows X; returns (coords, info, state).

    ``state = (X, coords, labels, lambdas)`` is what the Nystrom extension needs.
    """
    if graph is None:
        graph = neighbor_graph(X, k, random_state=seed)
    coords, info, W = _embed(graph, m, weights, rng, tol, max_iter, warn)
    info["neighbor_seconds"] = graph.info.get("seconds")
    info["neighbor_method"] = graph.method
    labels, lambdas = _component_eigenvalues(W, coords)
    return coords, info, (X, coords, labels, lambdas)


def _sample_fit(X, m, k, weights, tol, max_iter, rng, seed, landmarks, warn):
    """Sample mode: solve on ``landmarks`` seeded rows, extend to the rest (module notes)."""
    start = time.perf_counter()
    n = X.shape[0]
    held = landmarks // HOLDOUT
    needed = max(m + 2, k + 1)
    if landmarks - held < needed:
        least = needed
        while least - least // HOLDOUT < needed:
            least += 1
        raise ParameterError(
            f"The sample mode of the Laplacian lens with components={m} and k={k} needs "
            f"landmarks >= {least} (a fifth is held out to estimate the extension error); "
            f"got landmarks={landmarks}."
        )
    rows = np.sort(rng.choice(n, size=landmarks, replace=False))
    XL = X[rows]
    coords_l, info, state = _solve_rows(XL, m, k, weights, tol, max_iter, rng, seed, warn)
    solved = time.perf_counter()
    rest = np.ones(n, dtype=bool)
    rest[rows] = False
    coords = np.empty((n, m))
    coords[rows] = coords_l
    sigma = info.get("sigma")
    coords[rest] = _extend(*state, X[rest], k=k, weights=weights, sigma=sigma)
    extended = time.perf_counter()
    # Extension error: solve again on four fifths of the landmarks, extend to the held-out
    # fifth and compare with the values the full landmark solve gave those rows.
    order = rng.permutation(landmarks)
    hold, keep = np.sort(order[:held]), np.sort(order[held:])
    _, sub_info, sub_state = _solve_rows(
        XL[keep], m, k, weights, tol, max_iter, rng, seed, warn=lambda message: None
    )
    ext = _extend(*sub_state, XL[hold], k=k, weights=weights, sigma=sub_info.get("sigma"))
    corr, r2 = _agreement(ext, coords_l[hold])
    errors = [_scaled_error(c, held / landmarks, landmarks / n) for c in corr]
    info.update(
        mode="sample",
        landmarks=int(landmarks),
        landmark_rule=f"min(n, landmarks) = {landmarks:,} of {n:,} rows, drawn uniformly "
                      f"without replacement with random_state",
        extension_holdout=int(held),
        extension_holdout_abs_corr=corr,
        extension_r2=r2,
        extension_errors=errors,
        extension_error=max(errors),
        landmark_solve_seconds=round(solved - start, 3),
        extension_seconds=round(extended - solved, 3),
        error_estimate_seconds=round(time.perf_counter() - extended, 3),
    )
    return coords, info, state


def _fit(X, components, k, weights, tol, max_iter, mode, landmarks, random_state, context,
         warn=_warn, graph_of=None):
    """Exact or sample fit of the rows X: (coords, info, state for the extension).

    ``graph_of(k)`` gives the neighbour graph of all rows (a Workspace's shared
    one) for the exact mode; by default it is built here.
    """
    _require_rows(X.shape[0], components, k, context)
    rng = check_random_state(random_state)
    seed = seed_of(random_state)
    resolved, rule = _resolve_mode(mode, X.shape[0], landmarks)
    if resolved == "exact":
        graph = graph_of(k) if graph_of is not None else None
        coords, info, state = _solve_rows(
            X, components, k, weights, tol, max_iter, rng, seed, warn, graph=graph
        )
        info.update(mode="exact", landmarks=int(X.shape[0]), extension_error=0.0)
    else:
        coords, info, state = _sample_fit(
            X, components, k, weights, tol, max_iter, rng, seed, landmarks, warn
        )
    info["mode_rule"] = rule
    return coords, info, state


# ------------------------------------------------------------------ public surface
def laplacian_eigenmaps(
    X, components=2, *, k=15, weights="heat", tol=1e-3, max_iter=200, mode="auto",
    landmarks=LANDMARKS, random_state=0, return_info=False,
):
    """Laplacian-eigenmap coordinates of the rows of ``X``.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
    components : int, default=2
        Number m of non-trivial eigenvectors (output columns).
    k : int, default=15
        Neighbours per point in the k-NN graph (built with
        :func:`lenswork.neighbor_graph`, exact or approximate by size).
    weights : {"heat", "self_tuning"}, default="heat"
        Edge weights; see the module notes.
    tol : float in (0, 1), default=1e-3
        Stop when each residual ``||S u - mu u||`` is at most ``tol`` times its
        eigenvalue ``lambda = 1 - mu``.
    max_iter : int, default=200
        LOBPCG iterations at most (a warning says when they ran out).
    mode : {"auto", "exact", "sample"}, default="auto"
        ``"exact"`` solves on the graph of all rows; ``"sample"`` solves on
        ``landmarks`` seeded rows and extends to the others by the Nystrom
        formula (Bengio et al. 2004); ``"auto"`` is exact up to 200,000 rows,
        sample above. With ``landmarks >= n_samples`` sample is exact.
    landmarks : int, default=20000
        Rows of the sample mode (at least 100).
    random_state : int, default=0
        Seed of the landmarks, of the aggregation and of the approximate
        neighbour graph.
    return_info : bool, default=False
        Also return a dict with ``eigenvalues`` (of ``I - S``), ``residuals``,
        ``iterations``, ``method``, ``levels``, ``sigma``, ``graph_components``,
        ``mode``, ``mode_rule``, ``landmarks``, ``extension_error`` (0 in exact
        mode); in sample mode also ``extension_errors`` (per vector),
        ``extension_holdout_abs_corr``, ``extension_r2`` and ``landmark_rule``.

    Returns
    -------
    coords : ndarray of shape (n_samples, components)
        Random-walk coordinates ``D^-1/2 u``, scaled to a degree-weighted mean
        square of 1 (``sum_i d_i x_i^2 = sum_i d_i``) with degree-weighted mean 0;
        the largest-magnitude entry of each column is positive. In sample mode
        these hold on the landmarks; the other rows carry their extension.
    info : dict
        Only with ``return_info=True``.

    Raises
    ------
    ParameterError
        For a parameter out of range, or too few landmarks for ``k``.
    InputError
        For non-finite data or fewer than ``max(components + 2, k + 1)`` rows.

    Notes
    -----
    The first ``m`` non-trivial solutions of ``(D - W) x = lambda D x``, the
    smallest of the normalised Laplacian ``I - D^-1/2 W D^-1/2`` (Belkin and
    Niyogi 2003; Chung 1997). Cost once the graph exists: O(n k) to weight,
    reorder and coarsen the graph, then 10-25 LOBPCG iterations, each one
    block product and one V-cycle, O(n k b), plus O(n b^2) dense work for a
    block of b = m + 4 or more vectors (1e6 rows in 27-35 s on 2-D manifolds,
    see the module notes). A disconnected graph is embedded per component.
    The sample mode, its cost and its error estimate: see the module notes.

    References
    ----------
    .. [1] M. Belkin and P. Niyogi, "Laplacian eigenmaps for dimensionality
       reduction and data representation", Neural Computation 15, 2003.
    .. [2] L. Zelnik-Manor and P. Perona, "Self-tuning spectral clustering",
       NIPS 2004.
    .. [3] A. V. Knyazev, "Toward the optimal preconditioned eigensolver:
       locally optimal block preconditioned conjugate gradient method",
       SIAM J. Sci. Comput. 23, 2001.
    .. [4] P. Vanek, J. Mandel and M. Brezina, "Algebraic multigrid by smoothed
       aggregation for second and fourth order elliptic problems",
       Computing 56, 1996.
    .. [5] Y. Bengio, J.-F. Paiement, P. Vincent, O. Delalleau, N. Le Roux and
       M. Ouimet, "Out-of-sample extensions for LLE, Isomap, MDS, Eigenmaps,
       and spectral clustering", NIPS 2004.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.linspace(0.0, 1.0, 300)
    >>> X = np.c_[t, np.sin(3 * t)]
    >>> coords, info = laplacian_eigenmaps(X, components=2, k=10, return_info=True)
    >>> coords.shape, info["graph_components"], info["mode"]
    ((300, 2), 1, 'exact')
    >>> bool(np.all(np.diff(coords[:, 0]) < 0) or np.all(np.diff(coords[:, 0]) > 0))
    True

    The sample mode on 4,000 points of a 3 x 1 rectangle, solved on 1,000 of
    them; its first vector is close to cos(pi u / 3):

    >>> rng = np.random.default_rng(0)
    >>> X = np.c_[rng.uniform(0, 3, 4000), rng.uniform(0, 1, 4000)]
    >>> coords, info = laplacian_eigenmaps(X, 1, k=10, mode="sample", landmarks=1000,
    ...                                    return_info=True)
    >>> coords.shape, info["mode"], info["landmarks"], bool(info["extension_error"] < 0.01)
    ((4000, 1), 'sample', 1000, True)
    >>> bool(abs(np.corrcoef(coords[:, 0], np.cos(np.pi * X[:, 0] / 3))[0, 1]) > 0.99)
    True
    """
    context = "laplacian_eigenmaps"
    params = _check_params(components, k, weights, tol, max_iter, mode, landmarks, context)
    X = check_array(X, context)
    coords, info, _ = _fit(X, *params, random_state, context)
    return (coords, info) if return_info else coords


def _one_blas_thread():
    """BLAS on one thread inside the solver (a context manager).

    Its dense products are tall and thin (n x 3b). Measured on the 2 shared
    cores with other jobs running: an (n x 24)^T (n x 24) product at n = 1e5
    took 0.23-0.64 s on the threaded BLAS and 0.018 s on one thread. One
    thread also keeps results bit-for-bit reproducible.
    """
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1, user_api="blas")


def _component_eigenvalues(W, coords):
    """Per connected component and column, the Rayleigh quotient ``x^T (D - W) x / x^T D x``.

    For a converged eigenvector of ``(D - W) x = lambda D x`` restricted to a
    component this is its eigenvalue; columns that are 0 on a component (too
    few points) get 0. Returns ``(labels, lambdas)``, lambdas of shape
    (n_components, m).
    """
    ncomp, labels = connected_components(W, directed=False)
    deg = np.asarray(W.sum(axis=1)).ravel()
    Wx = W @ coords
    lambdas = np.zeros((ncomp, coords.shape[1]))
    for j in range(coords.shape[1]):
        x = coords[:, j]
        num = np.bincount(labels, weights=x * (deg * x - Wx[:, j]), minlength=ncomp)
        den = np.bincount(labels, weights=deg * x * x, minlength=ncomp)
        np.divide(num, den, out=lambdas[:, j], where=den > 0)
    return labels, lambdas


class LaplacianLens(LensOutputMixin, TransformerMixin, BaseEstimator):
    """Laplacian eigenmaps as a scikit-learn transformer, with a Nystrom extension to new rows.

    Parameters
    ----------
    components : int, default=2
    k : int, default=15
    weights : {"heat", "self_tuning"}, default="heat"
    tol : float, default=1e-3
    max_iter : int, default=200
    mode : {"auto", "exact", "sample"}, default="auto"
        Solve on all rows, or on ``landmarks`` seeded rows with the Nystrom
        extension to the rest; ``"auto"``: exact up to 200,000 rows.
    landmarks : int, default=20000
    random_state : int, default=0
        See :func:`laplacian_eigenmaps`.

    Attributes
    ----------
    embedding_ : ndarray of shape (n_samples, components)
        The coordinates :func:`laplacian_eigenmaps` returns.
    eigenvalues_ : ndarray of shape (components,)
        Eigenvalues of ``I - D^-1/2 W D^-1/2`` (of the largest component).
    residuals_ : ndarray of shape (components,)
        ``||S u - mu u||`` of each unit eigenvector.
    info_ : dict
        Solver details (see :func:`laplacian_eigenmaps`): ``mode`` says which
        mode ran, ``extension_error`` the estimated error of the sample mode.
    n_iter_ : int
        LOBPCG iterations on the largest graph component; 1 when it was small
        enough (at most 1,000 points) to be solved directly in one dense solve.
    n_features_in_ : int
    feature_names_in_ : ndarray of str
        Column names of a DataFrame given to ``fit`` (only then).

    Notes
    -----
    ``fit_transform(X)`` equals :func:`laplacian_eigenmaps` on ``X``.
    ``transform(Y)`` extends the coordinates of the solved rows (all fitted
    rows in exact mode, the landmarks in sample mode) to new rows by the
    Nystrom formula for Laplacian eigenmaps (Bengio et al. 2004), with
    :func:`~lenswork.lenses._extend.nystrom_extend`: with the k nearest solved
    rows ``x_j`` of ``y`` and the fit's edge weights ``w_j`` (heat:
    ``exp(-d_j^2 / sigma^2)``; self-tuning: ``exp(-d_j^2 / (sigma_y sigma_j))``,
    ``sigma_y`` the distance from ``y`` to its 7th nearest solved row),

    ``f(y) = sum_j w_j f(x_j) / ((1 - lambda) sum_j w_j)``,

    ``lambda`` the eigenvalue of the column on the graph component of the
    nearest solved row. This is the eigen-equation ``P f = (1 - lambda) f`` of
    the random walk ``P = D^-1 W`` read at a new point. A row of ``Y``
    identical to a solved row gets its solved coordinates, so
    ``transform(X)`` gives back ``fit_transform(X)`` on the fitted rows
    (exactly in exact mode; to rounding in sample mode, where the other rows
    are themselves extensions). Cost of ``transform``: exact k-neighbour
    searches over the solved rows plus O(k m) per row. The output columns are
    named ``laplacian_1, laplacian_2, ...`` (``get_feature_names_out``), as the
    ``laplacian`` lens names them.

    References
    ----------
    .. [1] Y. Bengio, J.-F. Paiement, P. Vincent, O. Delalleau, N. Le Roux and
       M. Ouimet, "Out-of-sample extensions for LLE, Isomap, MDS, Eigenmaps,
       and spectral clustering", NIPS 2004.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(0)
    >>> angle = rng.uniform(0.0, 2.0 * np.pi, 400)
    >>> X = np.c_[np.cos(angle), np.sin(angle)] + 0.01 * rng.normal(size=(400, 2))
    >>> lens = LaplacianLens(components=2, k=10)
    >>> lens.fit_transform(X).shape
    (400, 2)
    >>> bool(lens.residuals_.max() < 1e-6), lens.info_["graph_components"]
    (True, 1)

    An evenly sampled circle embeds as a circle of radius sqrt(2) (cos and
    sin, scaled to mean square 1); new points on it land on that circle too:

    >>> a = np.arange(600) * (2.0 * np.pi / 600)
    >>> lens = LaplacianLens(components=2, k=10).fit(np.c_[np.cos(a), np.sin(a)])
    >>> new = lens.transform([[1.0, 0.0], [0.6, -0.8]])
    >>> np.round(np.hypot(new[:, 0], new[:, 1]) ** 2, 3).tolist()
    [2.0, 2.0]
    """

    def __init__(
        self, *, components=2, k=15, weights="heat", tol=1e-3, max_iter=200, mode="auto",
        landmarks=LANDMARKS, random_state=0,
    ):
        self.components = components
        self.k = k
        self.weights = weights
        self.tol = tol
        self.max_iter = max_iter
        self.mode = mode
        self.landmarks = landmarks
        self.random_state = random_state

    def fit(self, X, y=None):
        """Compute the embedding of ``X``; returns self."""
        from sklearn.neighbors import NearestNeighbors

        context = type(self).__name__
        params = _check_params(
            self.components, self.k, self.weights, self.tol, self.max_iter, self.mode,
            self.landmarks, context,
        )
        components, k = params[0], params[1]
        X = check_input(
            self, X, reset=True, min_rows=max(components + 2, k + 1),
            why=f"components + 2 and k + 1, with components={components}, k={k}",
        )
        coords, info, state = _fit(X, *params, self.random_state, context)
        self.embedding_ = coords
        self.eigenvalues_ = np.asarray(info["eigenvalues"])
        self.residuals_ = np.asarray(info["residuals"])
        self.info_ = info
        self.n_iter_ = max(int(info["iterations"]), 1)
        # What the Nystrom extension needs: the solved rows and their coordinates, the
        # eigenvalue of each column on each graph component.
        self._solved = state
        self._nn = NearestNeighbors(n_neighbors=1).fit(state[0])
        return self

    def _output_names(self):
        return [f"laplacian_{j + 1}" for j in range(self.embedding_.shape[1])]

    def transform(self, X):
        """Coordinates of the rows of ``X`` by the Nystrom extension, shape (n, components)."""
        X = check_input(self, X, reset=False)
        fit_X, coords, labels, lambdas = self._solved
        nearest = self._nn.kneighbors(X)[1][:, 0]
        out = _extend(
            fit_X, coords, labels, lambdas, X, k=self.info_["k"], weights=self.info_["weights"],
            sigma=self.info_.get("sigma"), nearest=nearest,
        )
        same = np.all(fit_X[nearest] == X, axis=1)
        out[same] = coords[nearest[same]]
        return out

    def fit_transform(self, X, y=None):
        """Compute the embedding of ``X`` and return it, shape (n_samples, components)."""
        return self.fit(X).embedding_


@register_lens(
    "laplacian",
    summary="Laplacian eigenmaps: first non-trivial eigenvectors of the normalised k-NN "
    "graph Laplacian",
    cost="exact: O(n k) per LOBPCG iteration (about 10-30) once the neighbour graph exists; "
    "sample (auto above 200,000 rows): a solve on 20,000 landmarks, then an O(k) Nystrom "
    "extension per row",
    params=[
        Param("components", 2, partial(check_int, lo=1),
              "number of eigenvectors (columns laplacian_1, ...; laplacian_j does not depend on "
              "it, so it is not part of the column name)", tag=False),
        Param("k", 15, partial(check_int, lo=1), "neighbours per point in the graph"),
        Param(
            "weights", "heat", partial(check_choice, choices=WEIGHTS),
            "edge weights: heat (one global sigma) or self_tuning (local sigma_i)",
        ),
        Param("mode", "auto", partial(check_choice, choices=MODES),
              "exact (all rows), sample (landmarks + Nystrom extension, with its error "
              "estimated), or auto by size"),
        Param("landmarks", LANDMARKS, partial(check_int, lo=MIN_LANDMARKS),
              "rows solved in sample mode"),
    ],
    family="laplacian",
)
def _laplacian_lens(ws, *, components, k, weights, mode, landmarks):
    coords, info, _ = _fit(
        ws.X, components, k, weights, 1e-3, 200, mode, landmarks, ws.random_state,
        "The laplacian lens", warn=ws.warn, graph_of=ws.neighbors,
    )
    parts = []
    for j in range(components):
        part_info = dict(info, component=j + 1)
        if j < len(info["eigenvalues"]):
            part_info["eigenvalue"] = info["eigenvalues"][j]
            part_info["residual"] = info["residuals"][j]
        if info["mode"] == "sample":  # this column's own estimate
            part_info["extension_error"] = info["extension_errors"][j]
        parts.append(LensPart(coords[:, j], str(j + 1), part_info))
    return parts
