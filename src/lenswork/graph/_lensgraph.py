"""The LensGraph: nodes, edges and the membership of every row."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
import scipy.sparse as sp

from .._errors import ParameterError
from .._json import dumps, plain
from ._layout import auto_layout, graph_layout
from ._nerve import jaccard_weights, nerve_triangles
from ._summary import summarize
from ._tables import STATS

__all__ = ["GraphEdge", "GraphNode", "LensGraph"]


@dataclass(frozen=True, eq=False)
class GraphNode:
    """One node: a cluster of the rows of one cover element.

    Attributes
    ----------
    id : int
    element : tuple of int
        Id of the cover element the node came from (the cover's own: interval
        index per lens for the interval cover, the ball number for the ball cover).
    size : int
        Number of member rows.
    members : ndarray of int64
        Member row positions (0-based, in the workspace's row order).
    stats : dict of str -> dict
        ``{"mean": ..., "min": ..., "max": ...}`` of every lens column and every
        chosen data column over the members.
    """

    id: int
    element: tuple
    size: int
    members: np.ndarray
    stats: dict


@dataclass(frozen=True)
class GraphEdge:
    """One edge of the nerve: two nodes sharing ``shared`` rows; Jaccard weight."""

    source: int
    target: int
    shared: int
    jaccard: float


class LensGraph:
    """A Mapper-style graph (Mapper, 2007) built over the rows of one point cloud.

    Usually made by :func:`build_graph` or read by :func:`read_graph_json`.

    Parameters
    ----------
    membership : scipy.sparse matrix of shape (n_rows, n_nodes)
        ``1`` where a row belongs to a node.
    node_elements : array-like of shape (n_nodes, width), int
        Cover element id of each node (``Cover.element_ids``; the width is the
        cover's: one interval index per lens, or one ball number).
    edges : array-like of shape (n_edges, 2), int
        Node pairs ``a < b``.
    edge_shared : array-like of shape (n_edges,), int
        Rows shared by the two nodes of each edge.
    node_stats : dict of str -> array of shape (n_nodes, 3)
        Mean, min and max of each lens and data column per node.
    lens_columns, data_columns : sequence of str
        Which keys of ``node_stats`` are lenses and which are data columns.
    row_ids : array-like of shape (n_rows,), optional
    id_name : str, default="row"
    params, provenance, fragments : dict, optional
        How the graph was built; stored as plain JSON types.
    node_levels : array-like of shape (n_nodes, n_lenses), optional
        Position of each node's cover element per lens (``Cover.levels``):
        the level layout orders nodes by the first column. Default: the
        element ids themselves (interval indices).

    Attributes
    ----------
    membership : scipy.sparse.csr_matrix, int8
    node_elements, node_sizes : ndarray
    edge_index, edge_shared, edge_jaccard : ndarray
    nodes : tuple of GraphNode
    edges : tuple of GraphEdge
    unassigned : ndarray of int64
        Row positions that belong to no node (reported, never dropped silently).
    fragments : dict
        What the clustering did with groups below ``min_size``: ``elements``
        (non-empty cover elements), ``groups``, ``fragment_groups``,
        ``attached_groups``, ``attached_points`` and ``left_out_points``
        (point-element pairs in no node of that element).
    params, provenance : dict
        Build settings (cover, clusterer, cut-off requested and used, k...) and
        where the data and lenses came from.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> M = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 1], [0, 0]]))
    >>> g = LensGraph(M, [[0], [1]], [[0, 1]], [1], {"h": np.array([[0.5, 0, 1], [1.5, 1, 2]])},
    ...               lens_columns=["h"])
    >>> g.n_nodes, g.n_edges, g.unassigned.tolist(), round(g.edges[0].jaccard, 3)
    (2, 1, [3], 0.333)
    """

    def __init__(self, membership, node_elements, edges, edge_shared, node_stats, *,
                 lens_columns, data_columns=(), row_ids=None, id_name="row", params=None,
                 provenance=None, fragments=None, node_levels=None):
        M = sp.csr_matrix(membership, dtype=np.int8)
        M.sort_indices()
        self.membership = M
        n_rows, n_nodes = M.shape
        self.node_elements = np.asarray(node_elements, dtype=np.int64).reshape(n_nodes, -1)
        self.edge_index = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
        self.edge_shared = np.asarray(edge_shared, dtype=np.int64).reshape(-1)
        if self.edge_shared.size != self.edge_index.shape[0]:
            raise ParameterError(
                f"A LensGraph needs one shared count per edge; got {self.edge_shared.size} "
                f"counts for {self.edge_index.shape[0]} edges."
            )
        self.node_stats = {
            str(k): np.asarray(v, dtype=np.float64).reshape(n_nodes, 3)
            for k, v in node_stats.items()
        }
        self.lens_columns = tuple(lens_columns)
        self.data_columns = tuple(data_columns)
        missing = [c for c in (*self.lens_columns, *self.data_columns) if c not in self.node_stats]
        if missing:
            raise ParameterError(
                f"Column {missing[0]!r} has no node statistics; node_stats must hold every lens "
                f"and data column."
            )
        self.row_ids = np.arange(1, n_rows + 1) if row_ids is None else np.asarray(row_ids)
        if self.row_ids.shape != (n_rows,):
            raise ParameterError(
                f"A LensGraph needs one row id per membership row; got {self.row_ids.size} ids "
                f"for {n_rows} rows."
            )
        self.id_name = str(id_name)
        self.params = plain(dict(params or {}))
        self.provenance = plain(dict(provenance or {}))
        self.fragments = plain(dict(fragments or {}))
        self._levels = None if node_levels is None else \
            np.asarray(node_levels, dtype=np.float64).reshape(n_nodes, -1)
        self.node_sizes = np.asarray(M.sum(axis=0)).ravel().astype(np.int64)
        self.edge_jaccard = jaccard_weights(self.edge_index, self.edge_shared, self.node_sizes)
        self._summary = None

    # ---------------------------------------------------------------- counts
    @property
    def n_rows(self):
        """Number of rows the graph was built on."""
        return self.membership.shape[0]

    @property
    def n_nodes(self):
        return self.membership.shape[1]

    @property
    def n_edges(self):
        return self.edge_index.shape[0]

    @property
    def node_levels(self):
        """Position per lens of each node's cover element, shape (n_nodes, n_lenses) or the ids."""
        if self._levels is not None:
            return self._levels
        return self.node_elements.astype(np.float64)

    @cached_property
    def _csc(self):
        return self.membership.tocsc()

    @cached_property
    def unassigned(self):
        """Row positions (0-based) that belong to no node."""
        return np.flatnonzero(np.diff(self.membership.indptr) == 0).astype(np.int64)

    @property
    def unassigned_ids(self):
        """Row ids of :attr:`unassigned`."""
        return self.row_ids[self.unassigned]

    def members(self, node):
        """Member row positions (0-based) of one node."""
        node = int(node)
        if not 0 <= node < self.n_nodes:
            raise ParameterError(
                f"No node {node}: the graph has nodes 0 to {self.n_nodes - 1}."
            )
        csc = self._csc
        return csc.indices[csc.indptr[node]:csc.indptr[node + 1]].astype(np.int64)

    @cached_property
    def degrees(self):
        """Number of edges at each node."""
        return np.bincount(self.edge_index.ravel(), minlength=self.n_nodes).astype(np.int64)

    def adjacency(self):
        """The symmetric (n_nodes, n_nodes) adjacency matrix, shared counts as weights."""
        V = self.n_nodes
        e = self.edge_index
        A = sp.coo_matrix((self.edge_shared, (e[:, 0], e[:, 1])), shape=(V, V))
        return (A + A.T).tocsr()

    # ---------------------------------------------------------------- views
    @cached_property
    def nodes(self):
        """Every node as a :class:`GraphNode` (id order)."""
        csc = self._csc
        names = (*self.lens_columns, *self.data_columns)
        out = []
        for a in range(self.n_nodes):
            stats = {
                name: dict(zip(STATS, (float(x) for x in self.node_stats[name][a])))
                for name in names
            }
            out.append(GraphNode(
                id=a, element=tuple(int(i) for i in self.node_elements[a]),
                size=int(self.node_sizes[a]),
                members=csc.indices[csc.indptr[a]:csc.indptr[a + 1]].astype(np.int64),
                stats=stats,
            ))
        return tuple(out)

    @cached_property
    def edges(self):
        """Every edge as a :class:`GraphEdge` (sorted by node pair)."""
        return tuple(
            GraphEdge(int(a), int(b), int(s), float(j))
            for (a, b), s, j in zip(self.edge_index, self.edge_shared, self.edge_jaccard)
        )

    def node_values(self, name, stat="mean"):
        """Per-node values of a lens or data column (``stat``: mean, min, max), or ``"size"``."""
        if name == "size":
            return self.node_sizes.astype(np.float64)
        if name not in self.node_stats:
            valid = ", ".join(["size", *self.node_stats])
            raise ParameterError(
                f"The graph has no node values for {name!r}. Choose among: {valid}."
            )
        if stat not in STATS:
            raise ParameterError(
                f"The 'stat' parameter of node_values must be a str among "
                f"{{'mean', 'min', 'max'}}. Got {stat!r} instead."
            )
        return self.node_stats[name][:, STATS.index(stat)].copy()

    # ---------------------------------------------------------------- analysis
    def summary(self):
        """Components, loops, branch points, flares and a per-feature list (computed once).

        Returns
        -------
        GraphSummary
        """
        if self._summary is None:
            self._summary = summarize(self)
        return self._summary

    def triangles(self):
        """Triples of nodes sharing at least one row, and how many rows they share."""
        return nerve_triangles(self.membership)

    def layout(self, method="auto", random_state=0):
        """Node positions, shape (n_nodes, 2); see :func:`lenswork.graph.graph_layout`."""
        return graph_layout(self, method=method, random_state=random_state)

    def layout_method(self, method="auto"):
        """The layout a name stands for: ``"auto"`` resolved by :func:`auto_layout` (one rule)."""
        return auto_layout(len(self.lens_columns), self.n_nodes) if method == "auto" else method

    # ------------------------------------------------------------ the result protocol
    # text / to_dict / to_frame / write / plot, as every result object has them
    # (DEVELOPERS.md, "Result objects"). Writers, frames and plots are imported inside
    # the methods: this module imports none of them, and matplotlib, pandas and networkx
    # load on the first call only.
    def text(self, max_features=20):
        """The graph's summary for a terminal (:meth:`GraphSummary.text`)."""
        return self.summary().text(max_features=max_features)

    def to_dict(self):
        """The JSON form (nodes, edges, membership, params, provenance, summary) as a dict.

        What :meth:`write_json` writes; :func:`lenswork.graph.read_graph_json` reads it back.
        """
        from .io import graph_to_dict

        return graph_to_dict(self)

    def to_frame(self, what="nodes"):
        """The nodes (or edges) as a pandas DataFrame with the GraphML attributes as columns.

        Parameters
        ----------
        what : {"nodes", "edges"}, default="nodes"
            ``"nodes"``: index ``node``; ``size``, ``element``, ``level`` and
            ``<column>_mean`` / ``_min`` / ``_max`` for every lens and data column.
            ``"edges"``: index ``edge``; ``source``, ``target``, ``shared``,
            ``jaccard``. The names and text forms of :meth:`write_graphml`.

        Returns
        -------
        pandas.DataFrame

        Raises
        ------
        LensworkError
            pandas is not installed.
        ParameterError
            ``what`` is neither "nodes" nor "edges".
        """
        from ._tables import graph_frame

        return graph_frame(self, what)

    def write(self, directory, *, figures=True):
        """Write ``graph.graphml``, ``graph.json``, ``memberships.csv`` (and ``graph.png``).

        Every file is written atomically; the figure is drawn before the first
        file is written. Returns the list of paths.
        """
        from pathlib import Path

        out = Path(directory)
        out.mkdir(parents=True, exist_ok=True)
        fig = self.plot() if figures else None
        written = [self.write_graphml(out / "graph.graphml"), self.write_json(out / "graph.json"),
                   self.write_memberships(out / "memberships.csv")]
        if fig is not None:
            from ..plot._style import save

            written.append(save(fig, out / "graph.png"))
        return written

    def plot(self, path=None, **kwargs):
        """Draw the graph (see :func:`lenswork.plot.draw_graph`); imports matplotlib on first use.

        Returns the figure, or writes it to ``path`` (PNG or SVG by its ending).
        """
        from ..plot._graph import draw_graph

        return draw_graph(self, path=path, **kwargs)

    def draw(self, path=None, **kwargs):
        """The same as :meth:`plot` (the older name)."""
        return self.plot(path, **kwargs)

    def write_graphml(self, path):
        """Write GraphML (typed node and edge attributes) atomically; see :func:`write_graphml`."""
        from .io import write_graphml

        return write_graphml(self, path)

    def write_json(self, path):
        """Write the JSON form (nodes, edges, membership, params, provenance) atomically."""
        from .io import write_graph_json

        return write_graph_json(self, path)

    def write_memberships(self, path):
        """Write a CSV of row id -> node, one line per membership, atomically."""
        from .io import write_memberships

        return write_memberships(self, path)

    def to_networkx(self):
        """The graph as a ``networkx.Graph`` with the node, edge and graph attributes of GraphML.

        Nodes ``0 .. n_nodes - 1``; equal to ``networkx.read_graphml`` of
        :meth:`write_graphml`'s file with the nodes ``n<i>`` renamed ``i``. Needs
        networkx (a clear error when it is missing).
        """
        from ._networkx import to_networkx

        return to_networkx(self)

    def _repr_html_(self):
        """Summary table and a small inline SVG drawing, for notebooks."""
        from ._svg import graph_html

        return graph_html(self)

    # ---------------------------------------------------------------- identity
    def __eq__(self, other):
        if not isinstance(other, LensGraph):
            return NotImplemented
        a, b = self.membership, other.membership
        return (
            a.shape == b.shape
            and a.nnz == b.nnz
            and np.array_equal(a.indptr, b.indptr)
            and np.array_equal(a.indices, b.indices)
            and np.array_equal(self.node_elements, other.node_elements)
            and np.array_equal(self.node_levels, other.node_levels)
            and np.array_equal(self.edge_index, other.edge_index)
            and np.array_equal(self.edge_shared, other.edge_shared)
            and self.lens_columns == other.lens_columns
            and self.data_columns == other.data_columns
            and self.node_stats.keys() == other.node_stats.keys()
            and all(np.array_equal(v, other.node_stats[k]) for k, v in self.node_stats.items())
            and plain(list(self.row_ids)) == plain(list(other.row_ids))
            and self.id_name == other.id_name
            and dumps(self.params, sort_keys=True) == dumps(other.params, sort_keys=True)
            and dumps(self.provenance, sort_keys=True) == dumps(other.provenance, sort_keys=True)
            and dumps(self.fragments, sort_keys=True) == dumps(other.fragments, sort_keys=True)
        )

    __hash__ = None

    def __repr__(self):
        return (
            f"LensGraph(nodes={self.n_nodes}, edges={self.n_edges}, rows={self.n_rows}, "
            f"lenses={list(self.lens_columns)})"
        )
