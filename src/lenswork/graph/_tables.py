"""The nodes and the edges of a LensGraph as tables: the attributes of its GraphML file.

:func:`graph_columns` gives plain columns (name -> 1-d array) and
:func:`graph_frame` the pandas DataFrame that ``LensGraph.to_frame`` returns.
The columns are the GraphML attributes (:func:`lenswork.graph.write_graphml`),
with the same names and the same text forms:

nodes (index ``node``: 0 .. n_nodes - 1; the GraphML ids are ``n<node>``)
    ``size`` (int64), ``element`` (str, the cover element id joined by
    commas), ``level`` (str, the element's position per lens joined by
    commas), ``<column>_mean``, ``<column>_min``, ``<column>_max`` (float64)
    for every lens and data column, in that order.
edges (index ``edge``: 0 .. n_edges - 1; the GraphML ids are ``e<edge>``)
    ``source``, ``target`` (int64 node ids, source < target), ``shared``
    (int64) and ``jaccard`` (float64).

The graph is read duck-typed through its public attributes, so this module
does not import the LensGraph module; pandas is imported on the first call
(:func:`lenswork._frame.data_frame`).
"""

from __future__ import annotations

import numpy as np

from .._frame import data_frame
from .._validation import check_choice

__all__ = ["STATS", "TABLES", "graph_columns", "graph_frame"]

#: The tables a graph gives, in the order of ``to_frame(what=...)``.
TABLES = ("nodes", "edges")
#: The per-node statistics of every lens and data column, in the GraphML's order.
#: The statistics a graph keeps per node and column (LensGraph.node_stats columns).
STATS = ("mean", "min", "max")


def _joined(values, as_int):
    return ",".join(str(int(v)) if as_int else repr(float(v)) for v in values)


def graph_columns(graph, what="nodes"):
    """The node or edge attributes of ``graph`` as ``{name: 1-d array}``, in GraphML order.

    Parameters
    ----------
    graph : LensGraph
    what : {"nodes", "edges"}, default="nodes"

    Returns
    -------
    dict of str -> ndarray
        One entry per column (see the module notes), every array of length
        ``n_nodes`` (or ``n_edges``).

    Raises
    ------
    ParameterError
        ``what`` is neither "nodes" nor "edges".

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> M = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 1]]))
    >>> stats = {"h": np.array([[0.5, 0.0, 1.0], [1.5, 1.0, 2.0]])}
    >>> g = LensGraph(M, [[0], [1]], [[0, 1]], [1], stats, lens_columns=["h"])
    >>> list(graph_columns(g))
    ['size', 'element', 'level', 'h_mean', 'h_min', 'h_max']
    >>> graph_columns(g, "edges")["shared"].tolist()
    [1]
    """
    what = check_choice("what", what, TABLES, context="LensGraph.to_frame")
    if what == "edges":
        edges = np.asarray(graph.edge_index, dtype=np.int64).reshape(-1, 2)
        return {
            "source": edges[:, 0].copy(),
            "target": edges[:, 1].copy(),
            "shared": np.asarray(graph.edge_shared, dtype=np.int64).reshape(-1),
            "jaccard": np.asarray(graph.edge_jaccard, dtype=np.float64).reshape(-1),
        }
    V = int(graph.n_nodes)
    elements = np.asarray(graph.node_elements)
    levels = np.asarray(graph.node_levels, dtype=np.float64)
    text = np.empty(V, dtype=object)
    columns = {"size": np.asarray(graph.node_sizes, dtype=np.int64).reshape(V)}
    text[:] = [_joined(elements[a], as_int=True) for a in range(V)]
    columns["element"] = text.copy()
    text[:] = [_joined(levels[a], as_int=False) for a in range(V)]
    columns["level"] = text.copy()
    for name in (*graph.lens_columns, *graph.data_columns):
        stats = np.asarray(graph.node_stats[name], dtype=np.float64).reshape(V, len(STATS))
        for j, stat in enumerate(STATS):
            columns[f"{name}_{stat}"] = stats[:, j].copy()
    return columns


def graph_frame(graph, what="nodes"):
    """The node or edge table of ``graph`` as a pandas DataFrame (``LensGraph.to_frame``).

    Parameters
    ----------
    graph : LensGraph
    what : {"nodes", "edges"}, default="nodes"

    Returns
    -------
    pandas.DataFrame
        The columns of :func:`graph_columns`, indexed by ``node`` (or ``edge``).

    Raises
    ------
    LensworkError
        pandas is not installed.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> M = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 1]]))
    >>> stats = {"h": np.array([[0.5, 0.0, 1.0], [1.5, 1.0, 2.0]])}
    >>> g = LensGraph(M, [[0], [1]], [[0, 1]], [1], stats, lens_columns=["h"])
    >>> nodes = graph_frame(g)
    >>> nodes.shape, nodes.index.name, float(nodes.loc[1, "h_mean"])
    ((2, 6), 'node', 1.5)
    >>> graph_frame(g, "edges")[["source", "target"]].values.tolist()
    [[0, 1]]
    """
    columns = graph_columns(graph, what)
    n = len(next(iter(columns.values())))
    frame = data_frame(columns, index=np.arange(n), what=f"the {what} of a LensGraph")
    frame.index.name = "node" if what == "nodes" else "edge"
    return frame
