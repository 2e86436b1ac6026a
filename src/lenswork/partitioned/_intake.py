"""Partitioned intake: a Parquet dataset, a CSV glob or a dask collection, read by partition.

Every partition is read and validated on a worker by the single-machine
readers (:func:`lenswork.load_table` for a file, :func:`lenswork.load_block`
for a block of a dask collection), so a bad cell gets the message it would get
on one machine, prefixed by the partition: ``Partition 3 of 8: Column 'flow'
in '/data/part-2.parquet' has NaN at row 17; ...``. Files are numbered as
:func:`load_table` numbers them (header = row 1); blocks of a dask collection
by their row in the whole collection (first row = row 1).

One pass over the partitions (at :func:`open_partitioned`) counts the rows,
checksums each partition and gathers the mean and the scatter matrix by a tree
reduction; nothing else stays in memory, and later passes read the partitions
again.
"""

from __future__ import annotations

import glob
import hashlib
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .._errors import InputError, ParameterError
from .._validation import check_choice
from ..data import PointCloud, auto_standardise, load_block, load_table

__all__ = [
    "Part",
    "PartitionedCloud",
    "combine_moments",
    "load_partition",
    "open_partitioned",
    "partition_moments",
    "require_dask",
    "tree_reduce",
]

_FILE_SUFFIXES = (".parquet", ".pq", ".csv", ".tsv", ".txt")


def require_dask():
    try:
        import dask
        import dask.array
        import dask.dataframe
    except ImportError:
        raise ParameterError(
            "Partitioned data needs dask, an optional extra: install it with "
            "`pip install lenswork[dask]`."
        ) from None
    return dask


def partition_moments(X):
    """Count, mean and scatter matrix ``sum (x - mean)(x - mean)^T`` of one block.

    Examples
    --------
    >>> n, mean, M2 = partition_moments(np.array([[0.0, 1.0], [2.0, 3.0]]))
    >>> n, mean.tolist(), M2.tolist()
    (2, [1.0, 2.0], [[2.0, 2.0], [2.0, 2.0]])
    """
    X = np.asarray(X, dtype=np.float64)
    n = X.shape[0]
    if n == 0:
        return 0, np.zeros(X.shape[1]), np.zeros((X.shape[1], X.shape[1]))
    mean = X.mean(axis=0)
    Xc = X - mean
    return n, mean, Xc.T @ Xc


def combine_moments(a, b):
    """Merge two ``(count, mean, scatter)`` triples (Chan, Golub and LeVeque 1979).

    ``n = na + nb``, ``delta = mean_b - mean_a``,
    ``mean = mean_a + delta nb / n``,
    ``M2 = M2_a + M2_b + delta delta^T na nb / n``: the sums of x and x x^T of a
    tree reduction, kept centred so that no precision is lost to cancellation.

    References
    ----------
    .. [1] T. F. Chan, G. H. Golub and R. J. LeVeque, "Updating formulae and a
       pairwise algorithm for computing sample variances", Stanford CS report
       STAN-CS-79-773, 1979.

    Examples
    --------
    >>> X = np.arange(12.0).reshape(6, 2) ** 1.5
    >>> n, mean, M2 = combine_moments(partition_moments(X[:2]), partition_moments(X[2:]))
    >>> bool(np.allclose(M2, np.cov(X.T) * 5))
    True
    """
    na, ma, Sa = a
    nb, mb, Sb = b
    if na == 0:
        return b
    if nb == 0:
        return a
    n = na + nb
    delta = mb - ma
    return n, ma + delta * (nb / n), Sa + Sb + np.outer(delta, delta) * (na * nb / n)


def tree_reduce(items, combine):
    """Reduce a list pairwise (a balanced tree) with ``combine``; dask delayed or plain."""
    items = list(items)
    while len(items) > 1:
        nxt = [combine(items[i], items[i + 1]) for i in range(0, len(items) - 1, 2)]
        if len(items) % 2:
            nxt.append(items[-1])
        items = nxt
    return items[0]


@dataclass(frozen=True)
class Part:
    """How to read one partition: a file path, or a dask block (delayed)."""

    kind: str  # "file", "frame", "array"
    obj: object
    label: str
    first_row: int = 1


def _read_part(part, index, n_parts, features, id_column, invalid):
    """Read and validate one partition -> PointCloud (unscaled)."""
    prefix = f"Partition {index + 1} of {n_parts}: "
    try:
        if part.kind == "file":
            cloud = load_table(part.obj, features=features, id_column=id_column, scale=None,
                               invalid=invalid, min_rows=1)
        else:
            block = part.obj
            cloud = load_block(block, label=part.label, first_row=part.first_row,
                               features=features, id_column=id_column, invalid=invalid)
    except InputError as err:
        raise InputError(prefix + str(err)) from None
    return cloud


def load_partition(part, index, n_parts, features, id_column, invalid, scaling):
    """One partition as ``(X, ids, row_numbers, excluded)``, scaled with the global scaling."""
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # per-partition warnings are summarised once
        cloud = _read_part(part, index, n_parts, features, id_column, invalid)
    X = cloud.X
    if scaling is not None:
        X = (X - scaling[0]) / scaling[1]
    return X, cloud.ids, cloud.row_numbers, cloud.excluded


def _summary(part, index, n_parts, features, id_column, invalid):
    cloud = _read_part(part, index, n_parts, features, id_column, invalid)
    h = hashlib.sha256(np.ascontiguousarray(cloud.X).tobytes())
    ids = cloud.ids
    if ids.dtype.kind in "biuf":
        h.update(np.ascontiguousarray(ids).tobytes())
    else:
        h.update("\x1f".join(map(str, ids.tolist())).encode("utf-8", "backslashreplace"))
    return {
        "n": cloud.n, "features": list(cloud.feature_names), "id_name": cloud.id_name,
        "sha256": h.hexdigest(), "moments": partition_moments(cloud.X),
        "excluded": [(r.row, r.id, r.reason) for r in cloud.excluded],
        "ids": ids if id_column is not None else None,
        "lo": cloud.X.min(axis=0), "hi": cloud.X.max(axis=0),
    }


@dataclass(frozen=True, eq=False)
class PartitionedCloud:
    """Rows held in partitions: the PointCloud of data too large for one machine.

    Made by :func:`open_partitioned`. Holds no rows: every pass reads the
    partitions again on the workers (:meth:`delayed_parts`).

    Attributes
    ----------
    parts : tuple of Part
    feature_names : tuple of str
    id_name : str
    lengths : ndarray of int64
        Rows used per partition.
    offsets : ndarray of int64
        Global position (0-based) of each partition's first row.
    mean, scatter : ndarray
        Mean and ``sum (x - mean)(x - mean)^T`` of all rows (after scaling).
    lo, hi : ndarray
        Per-feature minimum and maximum (after scaling).
    provenance : dict
        ``source``, ``format``, ``partitions`` (label, rows, sha256 of each),
        ``sha256`` (of the partition checksums in order), ``scaling``...
    """

    parts: tuple
    feature_names: tuple
    id_name: str
    lengths: np.ndarray
    offsets: np.ndarray
    mean: np.ndarray
    scatter: np.ndarray
    lo: np.ndarray
    hi: np.ndarray
    options: dict
    scaling: tuple = None
    excluded: tuple = ()
    provenance: dict = field(default_factory=dict)

    @property
    def n(self):
        """Rows used, all partitions."""
        return int(self.lengths.sum())

    @property
    def d(self):
        """Feature columns."""
        return len(self.feature_names)

    @property
    def n_partitions(self):
        return len(self.parts)

    def delayed_parts(self):
        """One dask delayed ``(X, ids, row_numbers, excluded)`` per partition."""
        dask = require_dask()
        o = self.options
        load = dask.delayed(load_partition, pure=True)
        return [
            load(p, i, len(self.parts), o["features"], o["id_column"], o["invalid"],
                 self.scaling)
            for i, p in enumerate(self.parts)
        ]

    def to_point_cloud(self):
        """All rows in memory as a :class:`lenswork.PointCloud` (small data, tests)."""
        dask = require_dask()
        out = dask.compute(*self.delayed_parts())
        return PointCloud(
            X=np.ascontiguousarray(np.concatenate([o[0] for o in out])),
            feature_names=self.feature_names,
            ids=np.concatenate([o[1] for o in out]),
            id_name=self.id_name, passthrough={},
            row_numbers=np.concatenate([o[2] for o in out]),
            excluded=tuple(r for o in out for r in o[3]),
            provenance=dict(self.provenance),
        )


def _files(source):
    text = str(source)
    path = Path(text)
    if path.is_dir():
        files = sorted(
            str(p) for p in path.iterdir()
            if p.is_file() and p.suffix.lower() in _FILE_SUFFIXES and not p.name.startswith(".")
        )
        what = f"the directory '{path}'"
    else:
        files = sorted(glob.glob(text))
        what = f"the pattern '{text}'"
    if not files:
        raise InputError(
            f"No table files found in {what} (looked for {', '.join(_FILE_SUFFIXES)}). Check "
            f"the path, or give a glob such as 'data/part-*.parquet'."
        )
    kinds = {Path(f).suffix.lower() in (".parquet", ".pq") for f in files}
    if len(kinds) > 1:
        raise InputError(
            f"{what[0].upper()}{what[1:]} mixes Parquet and text files; give one kind of "
            f"partition (e.g. a glob ending in .parquet)."
        )
    fmt = "parquet" if kinds.pop() else "csv"
    return files, fmt


def _parts_of(source):
    """(parts, format, source label) for a path, glob or dask collection."""
    if isinstance(source, (str, os.PathLike)):
        files, fmt = _files(source)
        return [Part("file", f, f"'{f}'") for f in files], fmt, str(source)
    dask = require_dask()
    import dask.array as da
    import dask.dataframe as dd

    if isinstance(source, dd.DataFrame):
        lengths = source.map_partitions(len).compute()
        starts = np.concatenate([[1], 1 + np.cumsum(lengths)[:-1]]).astype(int)
        blocks = source.to_delayed()
        parts = [
            Part("frame", b, f"partition {i + 1} of the dask DataFrame (rows {s}-{s + m - 1})",
                 int(s))
            for i, (b, s, m) in enumerate(zip(blocks, starts, lengths))
        ]
        return parts, "dask-dataframe", "dask DataFrame"
    if isinstance(source, da.Array):
        if source.ndim == 1:
            source = source[:, None]
        if source.ndim != 2:
            raise InputError(
                f"The dask array has {source.ndim} dimensions; expected (n_samples, n_features)."
            )
        if any(np.isnan(c) for c in source.chunks[0]):
            source = source.compute_chunk_sizes()
        source = source.rechunk({1: -1})
        sizes = source.chunks[0]
        starts = np.concatenate([[1], 1 + np.cumsum(sizes)[:-1]]).astype(int)
        blocks = source.to_delayed().ravel()
        parts = [
            Part("array", b, f"block {i + 1} of the dask array (rows {s}-{s + m - 1})", int(s))
            for i, (b, s, m) in enumerate(zip(blocks, starts, sizes))
        ]
        return parts, "dask-array", "dask array"
    del dask
    raise ParameterError(
        f"open_partitioned reads a directory of Parquet/CSV files, a glob, a dask DataFrame "
        f"or a dask array; got a {type(source).__name__}."
    )


def open_partitioned(source, *, features=None, id_column=None, scale=None, invalid="error"):
    """Open partitioned data lazily, validating every partition once.

    Parameters
    ----------
    source : str, path-like, dask DataFrame or dask Array
        A directory of ``.parquet`` (or ``.csv``) files, one partition each, a
        glob (``"data/part-*.csv"``), a dask DataFrame (one partition each) or a
        2-D dask array (one block of rows each).
    features, id_column : optional
        As in :func:`lenswork.load_table`; the default features are those of the
        first partition, then required in every partition.
    scale : {None, "zscore", "auto"}, default=None
        ``"zscore"`` with the mean and standard deviation of all rows (from the
        tree reduction); ``"auto"`` as in :func:`lenswork.load_table`, on the
        global ranges (the CLI's default). The robust scaling needs global
        quantiles and is not offered here.
    invalid : {"error", "exclude"}, default="error"
        As in :func:`lenswork.load_table`; excluded rows are listed in
        ``PartitionedCloud.excluded`` as ``(row, id, reason)``.

    Returns
    -------
    PartitionedCloud

    Raises
    ------
    InputError
        A partition that :func:`load_table` would refuse (the message names the
        partition, the file or rows, the row and the column), partitions with
        different columns, or ids repeated across partitions.
    ParameterError
        Bad options, or dask missing.

    Notes
    -----
    One pass, one task per partition: read, validate, checksum (sha256 of the
    float64 features and the ids), and the count, mean and scatter matrix,
    merged by :func:`combine_moments` in a tree. With ``scale="zscore"`` the
    moments are rescaled exactly (``mean' = (mean - c) / s``,
    ``M2' = M2 / (s s^T)``).

    Examples
    --------
    >>> import dask.array as da
    >>> X = da.from_array(np.arange(20.0).reshape(10, 2) ** 1.5, chunks=(4, 2))
    >>> cloud = open_partitioned(X)
    >>> cloud.n, cloud.n_partitions, cloud.lengths.tolist()
    (10, 3, [4, 4, 2])
    """
    dask = require_dask()
    if scale is not None:
        scale = check_choice("scale", scale, ("zscore", "auto"), context="open_partitioned")
    invalid = check_choice("invalid", invalid, ("error", "exclude"), context="open_partitioned")
    parts, fmt, label = _parts_of(source)
    n_parts = len(parts)
    summarise = dask.delayed(_summary, pure=True)
    first = summarise(parts[0], 0, n_parts, features, id_column, invalid).compute()
    names = first["features"]
    rest = dask.compute(*[
        summarise(p, i, n_parts, names, id_column, invalid) for i, p in enumerate(parts)
        if i > 0
    ])
    summaries = [first, *rest]
    for i, s in enumerate(summaries):
        if s["features"] != names:
            raise InputError(
                f"Partition {i + 1} of {n_parts} has feature columns {s['features']}, partition "
                f"1 has {names}; every partition must hold the same columns."
            )
    n, mean, M2 = tree_reduce([s["moments"] for s in summaries], combine_moments)
    if n < 2:
        raise InputError(
            f"{label} has {n} usable row{'s' if n != 1 else ''} in {n_parts} partition"
            f"{'s' if n_parts != 1 else ''}; at least 2 are needed. Add rows."
        )
    if id_column is not None:
        ids = np.concatenate([s["ids"] for s in summaries])
        uniq, first_pos, counts = np.unique(ids, return_index=True, return_counts=True)
        if (counts > 1).any():
            dup = uniq[counts > 1][0]
            dup = dup.item() if isinstance(dup, np.generic) else dup
            where = [i + 1 for i, s in enumerate(summaries) if np.isin(dup, s["ids"])]
            raise InputError(
                f"Id {dup!r} appears in more than one row across partitions (partitions "
                f"{', '.join(map(str, where))}). Ids must be unique: fix the duplicates, or "
                f"leave id_column out."
            )
    lo = np.min([s["lo"] for s in summaries], axis=0)
    hi = np.max([s["hi"] for s in summaries], axis=0)
    scaling, scaling_info, rule = None, None, None
    if scale == "auto":
        scale, rule = auto_standardise(lo, hi, names, label)
    if scale == "zscore":
        sd = np.sqrt(np.diag(M2) / n)
        sd = np.where(sd > 0, sd, 1.0)
        scaling = (mean.copy(), sd)
        scaling_info = {
            "method": "zscore", "formula": "(x - mean) / std (ddof=0), over all partitions",
            "columns": {f: {"centre": float(c), "scale": float(s)}
                        for f, c, s in zip(names, mean, sd)},
        }
        M2 = M2 / np.outer(sd, sd)
        lo, hi = (lo - mean) / sd, (hi - mean) / sd
        mean = np.zeros_like(mean)
    lengths = np.array([s["n"] for s in summaries], dtype=np.int64)
    offsets = np.concatenate([[0], np.cumsum(lengths)[:-1]]).astype(np.int64)
    digest = hashlib.sha256("".join(s["sha256"] for s in summaries).encode()).hexdigest()
    excluded = tuple(e for s in summaries for e in s["excluded"])
    provenance = {
        "source": label, "format": fmt, "sha256": digest,
        "sha256_rule": "sha256 of the partition checksums in order; each partition: sha256 of "
        "its float64 features (before scaling) and ids",
        "partitions": [{"label": p.label, "rows": int(s["n"]), "sha256": s["sha256"]}
                       for p, s in zip(parts, summaries)],
        "n_rows_used": int(n), "n_rows_excluded": len(excluded), "features": list(names),
        "id_column": None if id_column is None else first["id_name"], "scaling": scaling_info,
        **({"scale_rule": rule} if rule is not None and scaling_info is None else {}),
        "invalid": invalid,
    }
    return PartitionedCloud(
        parts=tuple(parts), feature_names=tuple(names), id_name=first["id_name"],
        lengths=lengths, offsets=offsets, mean=mean, scatter=M2, lo=lo, hi=hi,
        options={"features": names, "id_column": id_column, "invalid": invalid},
        scaling=scaling, excluded=excluded, provenance=provenance,
    )
