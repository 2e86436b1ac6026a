"""Helpers shared by the lens modules: row sampling, threaded row tiles, query checks.

* :func:`sample_rows` draws a simple random subsample keyed on the rows'
  own values, so a lens estimated from it does not depend on the row order.
* :func:`parallel_rows` runs a worker over blocks of rows on a few threads
  (BLAS at one thread each); :func:`zero_self` clears the self pairs of a
  tile of an all-pairs reduction. Tiles are ``TILE_ROWS x TILE_COLS``.
* :func:`check_query` checks the rows given to a fitted transformer's
  ``transform``.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from .._errors import InputError
from .._validation import check_array

__all__ = ["TILE_COLS", "TILE_ROWS", "check_query", "parallel_rows", "sample_rows", "zero_self"]

# Tile shape (rows x reference points) of the fused all-pairs reductions; 256 x 2048
# float64 = 4 MB, measured fastest at d = 20 among 64..1024 x 1024..30000
# (tests/benchmarks/bench_density.py).
TILE_ROWS = 256
TILE_COLS = 2048


def sample_rows(X, m, rng):
    """Sorted indices of a simple random subsample of ``m`` rows, chosen by row content.

    Each row gets a pseudo-random key computed from its own values (a seeded
    random projection, scaled up and reduced modulo 1), and the ``m`` rows with
    the smallest keys are taken. The subsample is uniform like
    ``rng.choice(n, m, replace=False)`` but does not depend on the row order, so
    permuting the rows permutes the lens values and changes nothing else.

    Examples
    --------
    >>> X = np.arange(20.0).reshape(10, 2)
    >>> a = sample_rows(X, 4, np.random.default_rng(0))
    >>> b = sample_rows(X[::-1], 4, np.random.default_rng(0))
    >>> a.size, sorted(X[a, 0].tolist()) == sorted(X[::-1][b, 0].tolist())
    (4, True)
    """
    n = X.shape[0]
    if m >= n:
        return np.arange(n)
    w = rng.standard_normal(X.shape[1])
    s = (X * w).sum(axis=1)
    scale = float(np.std(s)) or 1.0
    key = np.mod(s * (1e6 / scale) + rng.random(), 1.0)
    order = np.lexsort((np.arange(n), key))  # duplicate rows: ties are exchangeable anyway
    return np.sort(order[:m])


def _n_threads():
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cores = os.cpu_count() or 1
    return max(1, min(cores, 8))


def parallel_rows(work, n_rows, block=TILE_ROWS):
    """Run ``work(i0, i1)`` over blocks of rows on a few threads, BLAS at one thread each.

    ``work`` writes its results into rows ``i0:i1`` of arrays it owns, so the
    blocks never overlap; each row's arithmetic does not depend on the thread.

    Examples
    --------
    >>> out = np.zeros(1000)
    >>> def work(i0, i1):
    ...     out[i0:i1] = np.arange(i0, i1)
    >>> parallel_rows(work, 1000)
    >>> bool(np.array_equal(out, np.arange(1000)))
    True
    """
    starts = list(range(0, n_rows, block))
    threads = min(_n_threads(), len(starts))
    if threads <= 1:
        for i0 in starts:
            work(i0, min(i0 + block, n_rows))
        return
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"), ThreadPoolExecutor(threads) as pool:
        for _ in pool.map(lambda i0: work(i0, min(i0 + block, n_rows)), starts):
            pass


def zero_self(T, i0, i1, query_rows, ref_rows, j0, j1, value=0.0):
    """Set the tile entries that pair a query row with itself.

    The tile holds query rows ``i0:i1`` and reference columns ``j0:j1``;
    ``ref_rows`` (sorted) is the data index of each reference column and
    ``query_rows`` (sorted) that of each query row, ``None`` meaning 0..n-1.
    """
    cols = ref_rows[j0:j1]
    if query_rows is None:
        lo, hi = np.searchsorted(cols, (i0, i1))
        if hi > lo:
            T[cols[lo:hi] - i0, np.arange(lo, hi)] = value
        return
    _, qi, ci = np.intersect1d(query_rows[i0:i1], cols, assume_unique=True, return_indices=True)
    if qi.size:
        T[qi, ci] = value


def check_query(est, X, fitted):
    """The rows given to ``est.transform``, checked: ``est`` is fitted and has their width.

    ``fitted`` names an attribute that ``fit`` sets; ``est.n_features_in_`` is
    the number of feature columns it was fitted on.
    """
    name = type(est).__name__
    if not hasattr(est, fitted):
        from sklearn.exceptions import NotFittedError

        raise NotFittedError(f"This {name} is not fitted yet; call fit(X) first.")
    X = check_array(X, f"{name}.transform")
    if X.shape[1] != est.n_features_in_:
        raise InputError(
            f"{name}.transform got {X.shape[1]} feature columns; it was fitted on "
            f"{est.n_features_in_} features. Pass data with the same columns."
        )
    return X
