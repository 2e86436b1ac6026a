"""Block LOBPCG for the smallest eigenpairs of a symmetric matrix, with constraints.

The solver of :func:`lenswork.linalg.laplacian_eigs` (Knyazev 2001), written
for its case: a symmetric positive semi-definite sparse ``A`` of up to millions
of rows, a block of a few to about 30 vectors, a preconditioner that is a
block operator, and the trivial vectors ``Y`` held out as constraints. Why it
is kept rather than :func:`scipy.sparse.linalg.lobpcg`: see DEVELOPERS.md,
"The Laplacian eigensolver" (measured in tests/benchmarks/bench_laplacian.py).

References
----------
.. [1] A. V. Knyazev, "Toward the optimal preconditioned eigensolver: locally
   optimal block preconditioned conjugate gradient method", SIAM J. Sci.
   Comput. 23, 2001.
.. [2] U. Hetmaniuk and R. Lehoucq, "Basis selection in LOBPCG", J. Comput.
   Phys. 218, 2006.
"""

from __future__ import annotations

import numpy as np

__all__ = ["block_lobpcg", "svqb_basis", "symmetric_part"]


def svqb_basis(V, drop=1e-12):
    """Matrix M with ``V @ M`` orthonormal (columns of V that are dependent are dropped)."""
    G = V.T @ V
    d = np.sqrt(np.abs(np.diag(G)))
    d[d == 0] = 1.0
    Gs = G / d[:, None] / d[None, :]
    w, Q = np.linalg.eigh((Gs + Gs.T) * 0.5)
    keep = w > drop * max(w[-1], 0.0)
    return (Q[:, keep] / np.sqrt(w[keep])) / d[:, None]


def block_lobpcg(A, U0, precond, Y, m, tol, floor, max_iter, rng):
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
    X = X @ svqb_basis(X)
    if X.shape[1] < nb:  # a degenerate start: fill it up with random directions
        extra = project(rng.standard_normal((n, nb - X.shape[1])))
        extra -= X @ (X.T @ extra)
        X = np.hstack([X, extra @ svqb_basis(extra)])
        X = X @ svqb_basis(X)
    AX = A @ X
    theta, C = np.linalg.eigh(symmetric_part(X.T @ AX))
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
        M = svqb_basis(Q, drop=1e-8)
        r = M.shape[1]
        if r == 0:  # no new direction left: nothing more to gain
            break
        H = np.empty((nb + r, nb + r))
        H[:nb, :nb] = np.diag(theta)
        off = M.T @ (Q.T @ AX)
        H[nb:, :nb] = off
        H[:nb, nb:] = off.T
        H[nb:, nb:] = M.T @ (Q.T @ AQ) @ M
        theta_all, V = np.linalg.eigh(symmetric_part(H))
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
            Mx = svqb_basis(X)
            if Mx.shape[1] < nb:  # the block lost rank: stop here, the final check decides
                break
            X, AX = X @ Mx, AX @ Mx
            theta, C = np.linalg.eigh(symmetric_part(X.T @ AX))
            X, AX = X @ C, AX @ C
    if not converged:
        AX = A @ X
        theta = np.einsum("ij,ij->j", X, AX)
        res = np.linalg.norm(AX - X * theta, axis=0)
        converged = done(theta, res)
    order = np.argsort(theta, kind="stable")
    return theta[order], X[:, order], res[order], updates, converged


def symmetric_part(G):
    """``(G + G^T) / 2``: the symmetric part of a square matrix (rounding-safe eigh input)."""
    return (G + G.T) * 0.5
