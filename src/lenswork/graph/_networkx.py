"""A LensGraph as a NetworkX graph, with the attributes of the GraphML file.

:func:`to_networkx` gives the ``networkx.Graph`` that reading the graph's
GraphML file (:func:`lenswork.graph.write_graphml`) with
``networkx.read_graphml`` gives, without the file:

nodes
    ``0 .. n_nodes - 1`` (the node ids of the LensGraph; the GraphML file
    names them ``n0, n1, ...``), each with ``size`` (int), ``element`` (str:
    the cover element id joined by commas), ``level`` (str, when the graph
    records element positions) and ``<column>_mean``, ``<column>_min``,
    ``<column>_max`` (float) for every lens and data column.
edges
    ``shared`` (int) and ``jaccard`` (float).
graph
    ``lens_columns``, ``params``, ``provenance`` and ``summary`` (the counts
    and the significant and small features, as in the GraphML file) as JSON
    text (so that ``networkx.write_graphml`` can write the graph again: GraphML
    has no dict type) and ``n_rows``, ``n_unassigned`` (int).

The graph is read duck-typed, through its public attributes only, so this
module imports nothing of the graph package and networkx is imported on the
first call (it is an optional dependency).
"""

from __future__ import annotations

import numpy as np

from .._errors import LensworkError
from .._json import dumps

__all__ = ["NODE_STATS", "import_networkx", "to_networkx"]

#: The per-node statistics of every lens and data column, in the order the GraphML has them.
NODE_STATS = ("mean", "min", "max")


def import_networkx(what="this"):
    """The networkx module, or a :class:`~lenswork.LensworkError` saying how to get it."""
    try:
        import networkx
    except ImportError:
        raise LensworkError(
            f"{what} needs networkx, which is not installed. Install it with "
            f"'pip install networkx', or write the graph with write_graphml and read the "
            f"file with any GraphML reader."
        ) from None
    return networkx


def _element_text(values, as_int):
    return ",".join(str(int(v)) if as_int else repr(float(v)) for v in values)


def to_networkx(graph):
    """The graph as a ``networkx.Graph`` with the node, edge and graph attributes of its GraphML.

    Parameters
    ----------
    graph : LensGraph
        Read through its public attributes (``node_sizes``, ``node_elements``,
        ``node_stats``, ``edge_index``, ...).

    Returns
    -------
    networkx.Graph
        Nodes ``0 .. n_nodes - 1``; the attributes are listed in the module
        notes. Equal, attribute for attribute, to ``networkx.read_graphml`` of
        the GraphML file with the nodes ``n<i>`` renamed ``i`` (and without the
        ``id`` the reader adds to every edge from the file's edge ids).

    Raises
    ------
    LensworkError
        networkx is not installed.

    Notes
    -----
    Cost: O(V (1 + 3 c) + E) attribute values for V nodes, E edges and c lens
    and data columns. Member rows are not attributes (GraphML has no list
    type); ``graph.members(i)`` gives them.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> M = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 1]]))
    >>> stats = {"h": np.array([[0.5, 0.0, 1.0], [1.5, 1.0, 2.0]])}
    >>> g = LensGraph(M, [[0], [1]], [[0, 1]], [1], stats, lens_columns=["h"])
    >>> G = to_networkx(g)
    >>> G.number_of_nodes(), G.nodes[1]["h_mean"], G.edges[0, 1]["shared"]
    (2, 1.5, 1)
    """
    nx = import_networkx("LensGraph.to_networkx")
    G = nx.Graph()
    G.graph.update({
        "lens_columns": dumps(list(graph.lens_columns), indent=None),
        "params": dumps(graph.params, indent=None, sort_keys=True),
        "provenance": dumps(graph.provenance, indent=None, sort_keys=True),
        "summary": dumps(graph.summary().record(), indent=None, sort_keys=True),
        "n_rows": int(graph.n_rows),
        "n_unassigned": int(np.asarray(graph.unassigned).size),
    })
    names = (*graph.lens_columns, *graph.data_columns)
    levels = getattr(graph, "node_levels", None)  # element positions, where the graph has them
    sizes = np.asarray(graph.node_sizes)
    elements = np.asarray(graph.node_elements)
    stats = {name: np.asarray(graph.node_stats[name], dtype=np.float64) for name in names}
    for a in range(graph.n_nodes):
        attrs = {"size": int(sizes[a]), "element": _element_text(elements[a], as_int=True)}
        if levels is not None:
            attrs["level"] = _element_text(np.asarray(levels)[a], as_int=False)
        for name in names:
            for j, stat in enumerate(NODE_STATS):
                attrs[f"{name}_{stat}"] = float(stats[name][a, j])
        G.add_node(a, **attrs)
    G.add_edges_from(
        (int(a), int(b), {"shared": int(s), "jaccard": float(w)})
        for (a, b), s, w in zip(np.asarray(graph.edge_index), np.asarray(graph.edge_shared),
                                np.asarray(graph.edge_jaccard))
    )
    return G
