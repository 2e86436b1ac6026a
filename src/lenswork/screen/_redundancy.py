"""Redundancy: Spearman's rank correlation between lens columns, all pairs at once.

Two lenses that order the points the same way give the same cover up to a
reparametrisation, so redundancy is measured by Spearman's rank correlation
rho: average ranks (ties averaged), centred, scaled to unit length, and all
pairs from one matrix product ``Z Z^T`` (O(n m log n) for the ranks plus
O(n m^2) for the product; no loop over pairs). A monotone transform of a lens
(``exp``, ``log``, a rescaling) has ``|rho| = 1`` with it. The same product
against *reference* columns (a label, a measured quantity) shows which lens
tracks which variable.

References
----------
.. [1] C. Spearman, "The proof and measurement of association between two
   things", American Journal of Psychology 15, 1904.
"""

from __future__ import annotations

import math

import numpy as np

from .._errors import ParameterError, warn_caller
from ._spread import rank_sorted

__all__ = ["corr_from_unit", "reference_correlations", "spearman_matrix", "unit_ranks", "unit_row"]


def unit_ranks(columns):
    """(m, n) rows of centred average ranks scaled to unit length; NaN rows for constants."""
    columns = list(columns)
    n = columns[0].shape[0]
    Z = np.empty((len(columns), n), dtype=np.float64)
    for j, v in enumerate(columns):
        ranks = rank_sorted(v)[0]
        unit_row(ranks, Z[j])
    return Z


def unit_row(ranks, out):
    """Centre average ranks (their mean is (n + 1) / 2 exactly) and scale to unit length."""
    n = ranks.shape[0]
    np.subtract(ranks, (n + 1) / 2.0, out=out)
    norm = math.sqrt(float(out @ out))
    if norm == 0.0:
        out.fill(np.nan)
    else:
        out /= norm


def corr_from_unit(Za, Zb=None):
    """Spearman matrix from unit rank rows: one BLAS product, clipped to [-1, 1]."""
    C = Za @ (Za if Zb is None else Zb).T
    np.clip(C, -1.0, 1.0, out=C)
    if Zb is None:
        ok = np.isfinite(Za[:, 0]) if Za.shape[1] else np.zeros(Za.shape[0], bool)
        idx = np.flatnonzero(ok)
        C[idx, idx] = 1.0
    return C


def _matrix_columns(A, what):
    A = np.asarray(A, dtype=np.float64)
    if A.ndim == 1:
        A = A[:, None]
    if A.ndim != 2:
        raise ParameterError(
            f"{what} must be 2-D, of shape (n_samples, n_columns); got {A.ndim}-D."
        )
    if A.shape[0] < 2:
        raise ParameterError(
            f"{what} needs at least 2 rows for a rank correlation; got {A.shape[0]}."
        )
    bad = np.flatnonzero(~np.isfinite(A).all(axis=0))
    if bad.size:
        raise ParameterError(
            f"{what} column {int(bad[0])} holds NaN or infinite values; expected finite numbers. "
            f"Drop or fill the missing values first."
        )
    return [np.ascontiguousarray(A[:, j]) for j in range(A.shape[1])]


def spearman_matrix(A, B=None):
    """Spearman rank correlations between the columns of ``A`` (and of ``B``).

    Parameters
    ----------
    A : array-like of shape (n_samples, m)
        Columns are the variables (as ``scipy.stats.spearmanr(A)``).
    B : array-like of shape (n_samples, p), optional
        Reference columns; when given, the (m, p) cross matrix is returned.

    Returns
    -------
    ndarray of shape (m, m) or (m, p)
        rho in [-1, 1]; rows and columns of constant columns are NaN (rho is
        undefined there), with a :class:`~lenswork.LensworkWarning`.

    Raises
    ------
    ParameterError
        If a column holds NaN or infinite values, or the row counts differ.

    Notes
    -----
    Each column is replaced by its average ranks r (ties get the mean of the
    ranks they span), centred by (n + 1) / 2 and scaled to unit length:
    ``z = (r - (n + 1)/2) / ||r - (n + 1)/2||``. Then ``rho = Z^T Z`` (the
    Pearson correlation of the ranks, i.e. Spearman's rho with the tie
    correction) for all pairs in one BLAS product. Cost O(n m log n + n m^2).

    References
    ----------
    .. [1] C. Spearman, "The proof and measurement of association between two things", 1904.

    Examples
    --------
    >>> rho = spearman_matrix(np.array([[1, 5], [2, 6], [3, 7], [4, 8], [5, 7]]))
    >>> round(float(rho[0, 1]), 6)
    0.820783
    >>> x = np.arange(10.0)
    >>> spearman_matrix(np.c_[x, np.exp(x)], -x).round(6).ravel().tolist()
    [-1.0, -1.0]
    """
    cols = _matrix_columns(A, "spearman_matrix's A")
    Za = unit_ranks(cols)
    Zb = None
    if B is not None:
        bcols = _matrix_columns(B, "spearman_matrix's B")
        if bcols[0].shape[0] != cols[0].shape[0]:
            raise ParameterError(
                f"spearman_matrix's A has {cols[0].shape[0]} rows and B has "
                f"{bcols[0].shape[0]}; expected the same rows in both."
            )
        Zb = unit_ranks(bcols)
    constant = [j for j in range(Za.shape[0]) if not np.isfinite(Za[j, 0])]
    if Zb is not None:
        constant += [f"B{j}" for j in range(Zb.shape[0]) if not np.isfinite(Zb[j, 0])]
    if constant:
        warn_caller(
            f"Constant column(s) {constant}: their rank correlations are undefined (NaN)."
        )
    return corr_from_unit(Za, Zb)



def reference_correlations(columns, refs, usable, Z):
    """(m, p) Spearman matrix of candidates against references, each on its finite rows.

    ``Z`` holds the candidates' unit rank rows over all rows; a reference with
    missing values is compared on its finite rows only, which needs the
    candidates ranked again on those rows.
    """
    m = len(columns)
    out = np.full((m, len(refs)), np.nan)
    idx = np.flatnonzero(usable)
    for k, (name, r) in enumerate(refs.items()):
        keep = np.isfinite(r)
        if keep.sum() < 3:
            warn_caller(
                f"Reference column {name!r} has fewer than 3 finite values; its correlations "
                f"are NaN."
            )
            continue
        if np.ptp(r[keep]) == 0:
            warn_caller(
                f"Reference column {name!r} is constant; its correlations are NaN."
            )
            continue
        if not idx.size:
            continue
        zr = np.empty(int(keep.sum()))
        unit_row(rank_sorted(r[keep])[0], zr)
        if keep.all():
            out[idx, k] = np.clip(Z[idx] @ zr, -1.0, 1.0)
        else:
            Zk = unit_ranks([columns[j][keep] for j in idx])
            out[idx, k] = np.clip(np.nan_to_num(Zk, nan=0.0) @ zr, -1.0, 1.0)
            out[idx[~np.isfinite(Zk[:, 0])], k] = np.nan  # constant on these rows
    return out
