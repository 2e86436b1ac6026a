"""Data columns on a graph's rows and nodes: cells read as numbers or levels, node statistics.

A column of a point cloud (a feature or a passthrough column) is read once:
numeric when every present cell is a number, else categorical (levels by
frequency, rare ones pooled as :data:`OTHER_LEVELS`); the tokens of
:data:`MISSING_TEXT` are missing. :func:`data_columns` gives the columns the
column contrast tests (:mod:`lenswork.contrast`); :func:`node_column_values`
gives a per-node statistic of one column, which the drawings colour by
(:mod:`lenswork.plot` is handed the values; it computes nothing) and the report
embeds. Feature columns are read in the table's own units
(:meth:`PointCloud.unscaled`: any ``scale=`` of the intake undone).

The graph is read duck-typed (``membership``, ``n_rows``, ``n_nodes``,
``row_ids``), so this module sits on the data layer, below the graph.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ._errors import InputError, ParameterError
from ._validation import check_choice
from .data import MISSING_TEXT as DATA_MISSING_TEXT
from .data import PointCloud

__all__ = [
    "MISSING_TEXT",
    "NODE_STATS",
    "OTHER_LEVELS",
    "DataColumn",
    "categorical_column",
    "cloud_of",
    "data_columns",
    "is_missing",
    "node_column_values",
    "numeric_or_none",
]

#: Node statistics of :func:`node_column_values` for numeric columns.
NODE_STATS = ("mean", "median", "min", "max", "std")
#: The level that pools a categorical column's rare levels.
OTHER_LEVELS = "(other levels)"
#: Text cells read as missing: the tokens lenswork.data reads as missing in a table, and "nan".
MISSING_TEXT = DATA_MISSING_TEXT | {"nan"}


def is_missing(value):
    """True for None, a float NaN, pandas' NA / NaT and the text of :data:`MISSING_TEXT`.

    Examples
    --------
    >>> is_missing(" NA "), is_missing(float("nan")), is_missing("0")
    (True, True, False)
    """
    if value is None:
        return True
    if isinstance(value, float) and math.isnan(value):
        return True
    if isinstance(value, str) and value.strip().lower() in MISSING_TEXT:
        return True
    return type(value).__name__ in ("NAType", "NaTType")


@dataclass
class DataColumn:
    """One data column as the contrast tests it: float64 values (NaN missing) or level codes.

    ``kind`` is "numeric" or "categorical" (``values`` are then int codes into
    ``levels``, -1 missing); ``note`` says why it is skipped or pooled.

    Examples
    --------
    >>> DataColumn("v", "feature", "numeric", np.array([1.0, np.nan])).kind
    'numeric'
    """

    name: str
    role: str  # "feature" or "passthrough"
    kind: str  # "numeric" or "categorical"
    values: np.ndarray  # float64 (NaN missing) or int codes (-1 missing)
    levels: tuple = ()
    note: str = ""
    sorted: object = None  # a stats.SortedColumn, made on first use


def numeric_or_none(col):
    """float64 values with NaN where missing, or None when a cell is not a number.

    Examples
    --------
    >>> numeric_or_none(np.array(["1", "NA", "2.5"], dtype=object)).tolist()
    [1.0, nan, 2.5]
    >>> numeric_or_none(np.array(["1", "b"], dtype=object)) is None
    True
    """
    arr = np.asarray(col)
    if arr.dtype.kind in "biuf":
        return arr.astype(np.float64)
    out = np.empty(arr.size, dtype=np.float64)
    for i, v in enumerate(arr.ravel()):
        if is_missing(v):
            out[i] = np.nan
            continue
        try:
            out[i] = float(v)
        except (TypeError, ValueError):
            return None
    return out


def categorical_column(name, role, col, max_levels, n_rows):
    """A categorical DataColumn: levels by frequency, more than ``max_levels`` pooled.

    A column with a level for half its rows or more is returned skipped (an
    identifier; ``note`` starts with "skipped").

    Examples
    --------
    >>> c = categorical_column("s", "passthrough", ["a", "b", "b", ""], 50, 4)
    >>> c.levels, c.values.tolist()
    (('b', 'a'), [1, 0, 0, -1])
    """
    cells = ["" if is_missing(v) else str(v) for v in np.asarray(col, dtype=object).ravel()]
    present = [c for c in cells if c]
    levels, counts = np.unique(np.array(present, dtype=object), return_counts=True) \
        if present else (np.array([], dtype=object), np.array([], dtype=np.int64))
    order = np.lexsort((levels.astype(str), -counts))
    levels, counts = [str(x) for x in levels[order]], counts[order]
    note = ""
    if len(levels) > max_levels:
        if len(levels) >= 0.5 * max(len(present), 1):
            return DataColumn(name, role, "categorical", np.full(n_rows, -1), tuple(levels),
                              note=f"skipped: {len(levels):,} levels in {len(present):,} rows "
                              f"(an identifier?); a chi-square test needs repeated levels")
        kept = levels[:max_levels - 1]
        note = (f"{len(levels):,} levels: the {max_levels - 1} most frequent kept, the other "
                f"{len(levels) - len(kept):,} pooled as {OTHER_LEVELS!r} "
                f"(raise max_levels to keep more)")
        levels = [*kept, OTHER_LEVELS]
    index = {lev: i for i, lev in enumerate(levels)}
    other = index.get(OTHER_LEVELS, -1)
    codes = np.array([-1 if not c else index.get(c, other) for c in cells], dtype=np.int64)
    return DataColumn(name, role, "categorical", codes, tuple(levels), note=note)


def data_columns(cloud, columns, categorical, max_levels):
    """The DataColumns of a cloud (features, then passthrough columns but the id) to test.

    ``columns`` picks some (by name), ``categorical`` names columns to read as
    levels even when their cells are numbers. Feature values are the cloud's
    ``X`` (after any intake scaling).

    Examples
    --------
    >>> cloud = PointCloud.from_array(np.array([[1.0], [2.0]]), feature_names=["v"])
    >>> [(c.name, c.kind) for c in data_columns(cloud, None, None, 50)]
    [('v', 'numeric')]
    """
    feats = list(cloud.feature_names)
    passthrough = [str(k) for k in cloud.passthrough if str(k) != cloud.id_name]
    every = feats + passthrough
    if columns is None:
        chosen = every
    else:
        chosen = [columns] if isinstance(columns, str) else [str(c) for c in columns]
        for c in chosen:
            if c not in every:
                raise ParameterError(
                    f"No data column {c!r}. Columns: {', '.join(every)}."
                )
        if not chosen:
            raise ParameterError("The 'columns' parameter is empty; give at least one column.")
    cats = set([categorical] if isinstance(categorical, str) else (categorical or ()))
    for c in cats:
        if c not in every:
            raise ParameterError(
                f"Column {c!r} named in 'categorical' is not a data column. Columns: "
                f"{', '.join(every)}."
            )
    out = []
    for name in dict.fromkeys(chosen):
        if name in feats:
            values = cloud.X[:, feats.index(name)]
            role = "feature"
        else:
            values = cloud.passthrough[name]
            role = "passthrough"
        numeric = None if name in cats else numeric_or_none(values)
        if numeric is None:
            out.append(categorical_column(name, role, values, max_levels, cloud.n))
        else:
            out.append(DataColumn(name, role, "numeric", numeric))
    return out


def cloud_of(data, graph, context="contrast_columns"):
    """The PointCloud of ``data`` (a cloud or a Workspace), checked against the graph's rows.

    Raises a ParameterError for another type and an InputError when the row
    count or the row ids differ from the graph's (ids compared as text too, so
    integer ids read back as text still match).

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork import LensGraph, PointCloud
    >>> g = LensGraph(sp.csr_matrix(np.ones((3, 1))), [[0]], [], [], {}, lens_columns=[])
    >>> cloud_of(PointCloud.from_array(np.zeros((3, 1))), g).n
    3
    """
    cloud = getattr(data, "cloud", data)
    if not isinstance(cloud, PointCloud):
        raise ParameterError(
            f"The 'data' parameter of {context} must be a PointCloud or a Workspace; got "
            f"{type(data).__name__}."
        )
    if cloud.n != graph.n_rows:
        raise InputError(
            f"The graph was built on {graph.n_rows:,} rows but the data has {cloud.n:,}; give the "
            f"point cloud the graph was built from."
        )
    if np.array_equal(np.asarray(graph.row_ids), np.asarray(cloud.ids)):
        return cloud
    ids_a = [str(x) for x in np.asarray(graph.row_ids).tolist()]
    ids_b = [str(x) for x in np.asarray(cloud.ids).tolist()]
    if ids_a != ids_b:  # ints read back as text still match
        first = next(i for i, (a, b) in enumerate(zip(ids_a, ids_b)) if a != b)
        raise InputError(
            f"The graph's row ids differ from the data's at row {first + 1} ({ids_a[first]!r} vs "
            f"{ids_b[first]!r}); give the point cloud the graph was built from."
        )
    return cloud


def node_column_values(graph, data, column, stat="mean", *, level=None):
    """A per-node statistic of any data column: mean, median, min, max, std, or share of a level.

    Parameters
    ----------
    graph : LensGraph
    data : PointCloud, Workspace, or array-like of shape (n_rows,)
        Where the column is found (a cloud's feature or passthrough column), or
        the row values themselves (then ``column`` only labels them). A feature
        column is read in the table's own units (:meth:`PointCloud.unscaled`:
        a ``scale="zscore"`` or ``"robust"`` intake undone).
    column : str
    stat : {"mean", "median", "min", "max", "std", "share"}, default="mean"
        ``"share"`` (the default for a categorical column) is the fraction of
        each node's members whose value is ``level``.
    level : str, optional
        The level for ``"share"``; default: the column's most frequent level.

    Returns
    -------
    values : ndarray of shape (n_nodes,)
    label : str
        For a colour bar: ``"vibration (node mean)"``, ``"share of state = clogging"``.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork import LensGraph, PointCloud
    >>> M = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 1]]))
    >>> g = LensGraph(M, [[0], [1]], [[0, 1]], [1], {"h": np.zeros((2, 3))}, lens_columns=["h"])
    >>> cloud = PointCloud.from_array(np.array([[1.0], [2.0], [6.0]]), feature_names=["v"],
    ...                               passthrough={"kind": np.array(["a", "b", "b"], dtype=object)})
    >>> node_column_values(g, cloud, "v")[0].tolist()
    [1.5, 4.0]
    >>> node_column_values(g, cloud, "kind", level="b")
    (array([0.5, 1. ]), 'share of kind = b')
    """
    if isinstance(data, PointCloud) or hasattr(data, "cloud"):
        cloud = cloud_of(data, graph, "node_column_values")
        names = [*cloud.feature_names, *(str(k) for k in cloud.passthrough)]
        if column not in names:
            raise ParameterError(f"No data column {column!r}. Columns: {', '.join(names)}.")
        values = cloud.unscaled(column) if column in cloud.feature_names \
            else cloud.passthrough[column]
    else:
        values = np.asarray(data)
        if values.shape != (graph.n_rows,):
            raise ParameterError(
                f"Row values for {column!r} must have shape ({graph.n_rows},); got "
                f"{values.shape}."
            )
    numeric = numeric_or_none(values)
    stat = str(stat).strip().lower()
    csc = sp.csc_matrix(graph.membership)
    if numeric is None or stat == "share":
        cells = np.array(["" if is_missing(v) else str(v) for v in
                          np.asarray(values, dtype=object)], dtype=object)
        present, counts = np.unique(cells[cells != ""], return_counts=True)
        if level is None:
            if present.size == 0:
                raise InputError(f"Column {column!r} has no values.")
            level = str(present[np.argmax(counts)])
        elif str(level) not in set(present.tolist()):
            shown = ", ".join(map(str, present[:20]))
            raise ParameterError(
                f"Column {column!r} has no level {level!r}. Levels: {shown}"
                f"{' ...' if present.size > 20 else ''}."
            )
        if stat not in ("mean", "share"):
            raise ParameterError(
                f"Column {column!r} is categorical: colour it by 'share' of a level, not {stat!r}."
            )
        hit = (cells == str(level)).astype(np.float64)
        known = (cells != "").astype(np.float64)
        num = np.asarray(csc.T @ hit).ravel()
        den = np.asarray(csc.T @ known).ravel()
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(den > 0, num / den, np.nan), f"share of {column} = {level}"
    stat = check_choice("stat", stat, NODE_STATS, context="node_column_values")
    out = np.full(graph.n_nodes, np.nan)
    for a in range(graph.n_nodes):
        v = numeric[csc.indices[csc.indptr[a]:csc.indptr[a + 1]]]
        v = v[np.isfinite(v)]
        if v.size:
            out[a] = getattr(np, stat)(v)
    return out, f"{column} (node {stat})"
