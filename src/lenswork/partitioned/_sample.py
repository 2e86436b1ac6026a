"""A seeded uniform sample of rows drawn across partitions, as an in-memory PointCloud."""

from __future__ import annotations

import numpy as np

from .._validation import check_int, check_random_state
from ..data import PointCloud
from ..lenses._common import sample_keys
from ._intake import require_dask, tree_reduce

__all__ = ["keyed_sample", "sample_positions", "sample_cloud"]


def sample_positions(n, size, random_state=0):
    """Sorted global positions of a simple random sample of ``size`` of ``n`` rows.

    Deterministic given the seed and ``n``: ``rng.choice(n, size, replace=False)``.

    Examples
    --------
    >>> sample_positions(10, 3, random_state=0).tolist() == sorted(
    ...     np.random.default_rng(0).choice(10, 3, replace=False).tolist())
    True
    """
    size = check_int("size", size, lo=1, context="sample_cloud")
    rng = check_random_state(random_state)
    if size >= n:
        return np.arange(n, dtype=np.int64)
    return np.sort(rng.choice(n, size, replace=False)).astype(np.int64)


def _take(part, local):
    X, ids, rows, _ = part
    return X[local], ids[local], rows[local]


def sample_cloud(cloud, size, *, random_state=0):
    """A uniform sample of exactly ``size`` rows across all partitions, in memory.

    Parameters
    ----------
    cloud : PartitionedCloud
    size : int
        Rows in the sample (all rows when ``size >= cloud.n``).
    random_state : int, default=0

    Returns
    -------
    PointCloud
        The sampled rows in their global order, with ``provenance["sample"]``
        (size, seed, rule) beside the partitioned input's provenance, and
        ``provenance["sample_positions"]`` (the 0-based global positions). Run
        :func:`lenswork.screen` on it, then the chosen lenses on all partitions.

    Notes
    -----
    The positions are drawn on the client (``rng.choice(n, size,
    replace=False)``) and routed to their partitions; each partition returns
    only its sampled rows, so the sample is the same for the same seed and
    partitioning, whatever the scheduler. Cost: one read of the partitions
    holding sampled rows.

    Examples
    --------
    >>> import dask.array as da
    >>> from lenswork.partitioned import open_partitioned
    >>> cloud = open_partitioned(da.from_array(np.arange(40.0).reshape(20, 2), chunks=(6, 2)))
    >>> s = sample_cloud(cloud, 5, random_state=1)
    >>> s.X.shape, s.provenance["sample"]["size"]
    ((5, 2), 5)
    """
    dask = require_dask()
    pos = sample_positions(cloud.n, size, random_state)
    parts = cloud.delayed_parts()
    bounds = np.append(cloud.offsets, cloud.n)
    take = dask.delayed(_take, pure=True)
    pieces = []
    for i, part in enumerate(parts):
        lo, hi = np.searchsorted(pos, bounds[i:i + 2])
        if hi > lo:
            pieces.append(take(part, pos[lo:hi] - cloud.offsets[i]))
    out = dask.compute(*pieces)
    prov = dict(cloud.provenance)
    prov["sample"] = {
        "size": int(pos.size), "of_rows": int(cloud.n),
        "random_state": random_state if isinstance(random_state, (int, type(None))) else None,
        "rule": "simple random sample of global row positions, rng.choice(n, size, "
        "replace=False) with numpy's default_rng(seed)",
    }
    prov["sample_positions"] = pos
    return PointCloud(
        X=np.ascontiguousarray(np.concatenate([o[0] for o in out])),
        feature_names=cloud.feature_names, ids=np.concatenate([o[1] for o in out]),
        id_name=cloud.id_name, passthrough={},
        row_numbers=np.concatenate([o[2] for o in out]), excluded=(), provenance=prov,
    )


def _smallest_keys(part, offset, w, scale, shift, m):
    X = part[0]
    key = sample_keys(X, w, scale, shift)
    pos = offset + np.arange(X.shape[0], dtype=np.int64)
    keep = np.lexsort((pos, key))[:m]
    return key[keep], pos[keep], X[keep]


def _merge_smallest(m):
    def merge(a, b):
        key, pos, X = (np.concatenate([u, v]) for u, v in zip(a, b))
        keep = np.lexsort((pos, key))[:m]
        return key[keep], pos[keep], X[keep]
    return merge


def keyed_sample(cloud, size, *, random_state=0):
    """The rows :func:`lenswork.lenses._common.sample_rows` takes, drawn across partitions.

    The single machine's rule, so both paths estimate from the same rows: a
    seeded random projection ``s = X w`` of each row, keyed by ``s 1e6 / sd(s)
    + u`` modulo 1, and the ``size`` smallest keys kept (ties by position). The
    sd comes from the exact scatter of the intake; each partition returns its
    ``size`` smallest keys and a tree of pairwise merges keeps the smallest.

    Returns
    -------
    X : ndarray of shape (size, d)
        The rows, in global order.
    positions : ndarray of int64
        Their sorted 0-based global positions.

    Examples
    --------
    >>> import dask.array as da
    >>> from lenswork.partitioned import open_partitioned
    >>> from lenswork.lenses._common import sample_rows
    >>> X = np.random.default_rng(0).normal(size=(40, 3))
    >>> cloud = open_partitioned(da.from_array(X, chunks=(15, 3)))
    >>> S, pos = keyed_sample(cloud, 6, random_state=2)
    >>> pos.tolist() == sample_rows(X, 6, np.random.default_rng(2)).tolist()
    True
    """
    dask = require_dask()
    size = check_int("size", size, lo=1, context="keyed_sample")
    parts = cloud.delayed_parts()
    if size >= cloud.n:
        out = dask.compute(*[dask.delayed(_take, pure=True)(p, slice(None)) for p in parts])
        return (np.ascontiguousarray(np.concatenate([o[0] for o in out])),
                np.arange(cloud.n, dtype=np.int64))
    rng = check_random_state(random_state)
    w = rng.standard_normal(cloud.d)
    scale = float(np.sqrt(max(float(w @ cloud.scatter @ w) / cloud.n, 0.0)))
    shift = rng.random()
    piece = dask.delayed(_smallest_keys, pure=True)
    pieces = [piece(p, int(cloud.offsets[i]), w, scale, shift, size) for i, p in enumerate(parts)]
    _, pos, X = dask.compute(tree_reduce(pieces, dask.delayed(_merge_smallest(size), pure=True)))[0]
    order = np.argsort(pos)
    return np.ascontiguousarray(X[order]), pos[order]
