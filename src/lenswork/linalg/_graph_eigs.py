"""Eigenvectors of a graph Laplacian: the one solver of the Laplacian lenses.

:func:`laplacian_eigs` returns the first ``m`` non-trivial solutions of
``(D - W) x = lambda B x`` for a symmetric weighted graph ``W`` and a mass
``B`` (the degrees: the normalised, random-walk problem; or 1: the
combinatorial Laplacian), per connected component. It works on the symmetric
form ``A = B^-1/2 (D - W) B^-1/2``.

On low-dimensional manifolds the wanted eigenvalues lie within 1e-5..1e-6 of 0
and of each other, and Krylov solvers without a preconditioner need thousands
of products. Here, after a reverse Cuthill-McKee reordering (cache locality: a
block product at 1e6 rows became 7x faster):

1. The graph is coarsened by aggregation (:mod:`lenswork.linalg._multigrid`)
   until at most 500 vertices remain.
2. The coarsest problem is solved densely and its eigenvectors, copied to all
   points through the aggregates, start a block LOBPCG iteration
   (:func:`~lenswork.linalg.block_lobpcg`, Knyazev 2001) on the finest graph,
   with the trivial vector ``B^1/2 1`` as a constraint and ``max(4, m // 2)``
   extra block vectors, widened in steps of 4 (to at most m + 12) while the
   coarse spectrum shows a cluster across the block's edge (the next coarse
   eigenvalue within 25% of the m-th).
3. The preconditioner is one V-cycle of (smoothed) aggregation over the same
   aggregates (:class:`~lenswork.linalg.AggregationPreconditioner`); on
   expander-like graphs whose m-th coarse eigenvalue is above 0.1, LOBPCG runs
   without one (``info["preconditioner"]`` says which).

Iteration stops when every wanted vector has ``||A u - theta u|| <= tol *
theta`` (``||u|| = 1``), checked on exact products. The default ``tol = 1e-3``
is set by clustered spectra: on 20-d Gaussian data (1e5 points, eigenvalues
0.2481-0.2496) it gave |corr| >= 0.99995 with a converged reference,
``tol = 1e-2`` only 0.997 and ``tol = 1e-1`` unrelated vectors; on 2-D
manifolds even ``tol = 1e-1`` gave |corr| = 1.000000. Components of at most
1,000 vertices are solved densely with :func:`scipy.linalg.eigh`. Dense work
runs on one BLAS thread: its products are tall and thin (n x 3b), and on the
loaded 2-core machine a threaded BLAS ran them 13-36x slower; one thread also
keeps results bit-for-bit reproducible.

A graph with several connected components is solved per component: its own
first ``m`` non-trivial vectors, centred and scaled within it; a component
with fewer than ``m + 2`` vertices gets 0.
"""

from __future__ import annotations

import time

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components, reverse_cuthill_mckee

from .._errors import warn_caller
from ._lobpcg import block_lobpcg, symmetric_part
from ._multigrid import (
    COARSE_DENSE_MAX,
    SMOOTH_MAX_DEGREE,
    AggregationPreconditioner,
    graph_hierarchy,
)

__all__ = [
    "DENSE_MAX",
    "EXTRA_MAX",
    "PLAIN_MIN_EIGENVALUE",
    "component_eigenvalues",
    "laplacian_eigs",
    "one_blas_thread",
    "symmetric_operator",
]

#: Components up to this many vertices are solved densely.
DENSE_MAX = 1000
#: No preconditioner on expander-like graphs whose m-th coarse eigenvalue exceeds this.
PLAIN_MIN_EIGENVALUE = 0.1
#: Most extra block vectors (beyond m) LOBPCG may carry on clustered spectra.
EXTRA_MAX = 12


def _fix_signs(V):
    """Make the largest-magnitude entry of each column positive (in place)."""
    if V.shape[0] == 0:
        return V
    pick = np.argmax(np.abs(V), axis=0)
    signs = np.sign(V[pick, np.arange(V.shape[1])])
    signs[signs == 0] = 1.0
    V *= signs
    return V


def symmetric_operator(W, b):
    """``A = B^-1/2 (D - W) B^-1/2`` (CSR) for weights W and a positive mass b."""
    deg = np.asarray(W.sum(axis=1)).ravel()
    r = 1.0 / np.sqrt(b)
    rows = np.repeat(np.arange(W.shape[0]), np.diff(W.indptr))
    S = sp.csr_matrix((W.data * r[rows] * r[W.indices], W.indices, W.indptr), shape=W.shape)
    return (sp.diags(deg / b) - S).tocsr(), deg


def _dense_eigs(A, t, m):
    """Smallest m non-trivial eigenpairs of a small A (trivial vector t shifted away)."""
    Ad = A.toarray()
    shift = 2.0 * float(np.abs(Ad).sum(axis=1).max()) + 1.0
    Ad += shift * np.outer(t, t)
    theta, U = sla.eigh(symmetric_part(Ad), subset_by_index=[0, m - 1])
    res = np.linalg.norm(A @ U - U * theta, axis=0)
    return theta, U, res


def _component_eigs(W, b, m, rng, tol, max_iter):
    """First m non-trivial eigenpairs of one connected graph.

    Returns (x, theta, residuals, info) with x the mass-orthonormal random-walk
    vectors (``x = B^-1/2 u``, ``sum_i b_i x_i^2 = 1``).
    """
    n = W.shape[0]
    sb = np.sqrt(b)
    if n <= DENSE_MAX:
        A, _ = symmetric_operator(W, b)
        theta, U, res = _dense_eigs(A, sb / np.linalg.norm(sb), m)
        info = {"method": "dense", "iterations": 0, "converged": True, "levels": [n]}
        return U / sb[:, None], theta, res, info
    nb = min(m + max(4, m // 2), n - 2)
    perm = reverse_cuthill_mckee(W, symmetric_mode=True)
    W = W[perm][:, perm].tocsr()
    b, sb = b[perm], sb[perm]
    A, deg = symmetric_operator(W, b)
    graphs, masses, aggs = graph_hierarchy(W, b, nb, rng)
    # Start: eigenvectors of the coarsest graph, copied down through the aggregates.
    Wc, bc = graphs[-1], masses[-1]
    if nb + 2 <= Wc.shape[0] <= COARSE_DENSE_MAX:
        Ac, _ = symmetric_operator(Wc, bc)
        sbc = np.sqrt(bc)
        most = min(m + EXTRA_MAX, Wc.shape[0] - 2, n - 2)
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
    mesh_like = len(graphs) > 1 and graphs[1].nnz / graphs[1].shape[0] <= SMOOTH_MAX_DEGREE
    if not mesh_like and theta_c is not None and theta_c[m - 1] > PLAIN_MIN_EIGENVALUE:
        precond, smoothed, kind = np.array, 0, "none"
    else:
        precond = AggregationPreconditioner(A, sb, graphs, aggs, rng)
        smoothed = precond.smoothed_levels
        kind = "smoothed aggregation" if smoothed else "aggregation"
    # ||A|| <= 2 max(deg / b) (Gershgorin); residuals below ~1e-13 ||A|| are rounding.
    floor = 1e-13 * max(2.0 * float(np.max(deg / b)), 1.0)
    theta, U, res, iters, converged = block_lobpcg(
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


def _half_weight_points(x, b):
    """Per column: the fewest points holding half of ``sum_i b_i x_i^2`` (a spread measure)."""
    out = []
    for j in range(x.shape[1]):
        c = np.cumsum(np.sort(b * x[:, j] ** 2)[::-1])
        out.append(int(np.searchsorted(c, 0.5 * c[-1]) + 1) if c[-1] > 0 else 0)
    return out


def _warn(message):
    warn_caller(message)


def laplacian_eigs(W, m, *, mass="degree", rng, tol=1e-3, max_iter=200, warn=_warn):
    """Laplacian eigenvectors of a symmetric weighted graph W, per connected component.

    Parameters
    ----------
    W : sparse (n, n) symmetric, non-negative
    m : int
    mass : {"degree", "uniform"}
        ``"degree"``: the normalised (random-walk) problem ``(D - W) x = lambda D x``;
        ``"uniform"``: the combinatorial Laplacian ``(D - W) x = lambda x``.
    rng : numpy Generator
        Draws the aggregation seeds (and a random start block when needed).
    tol : float, default=1e-3
        Stop when each residual ``||A u - theta u||`` is at most ``tol * theta``.
    max_iter : int, default=200
        LOBPCG iterations at most (a warning says when they ran out).
    warn : callable, default: a :class:`~lenswork.LensworkWarning`
        Called with the message of a soft problem (disconnected graph, vectors
        concentrated on few points, no convergence).

    Returns
    -------
    coords : ndarray (n, m)
        Per component: centred (mass-weighted mean 0), mass-weighted mean square 1,
        largest-magnitude entry positive.
    info : dict
        ``eigenvalues``, ``residuals`` (of the largest component), ``iterations``,
        ``method`` (``"dense"`` or ``"multilevel"``), ``levels``, ``converged``,
        ``max_residual``, ``graph_components``, ``component_sizes``, ...

    Examples
    --------
    >>> import numpy as np, scipy.sparse as sp
    >>> i = np.arange(9)
    >>> path = sp.csr_matrix((np.ones(9), (i, i + 1)), shape=(10, 10))
    >>> x, info = laplacian_eigs(path + path.T, 1, mass="uniform", rng=np.random.default_rng(0))
    >>> bool(np.isclose(info["eigenvalues"][0], 2 - 2 * np.cos(np.pi / 10)))  # Chung 1997
    True
    """
    with one_blas_thread():
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


def one_blas_thread():
    """BLAS on one thread inside the solver (a context manager).

    Its dense products are tall and thin (n x 3b). Measured on the 2 shared
    cores with other jobs running: an (n x 24)^T (n x 24) product at n = 1e5
    took 0.23-0.64 s on the threaded BLAS and 0.018 s on one thread. One
    thread also keeps results bit-for-bit reproducible.
    """
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1, user_api="blas")


def component_eigenvalues(W, coords):
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
