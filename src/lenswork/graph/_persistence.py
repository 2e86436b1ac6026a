"""Extended persistence of a lens on a graph: how much of the lens range each feature spans.

A Mapper graph (Mapper, 2007) of one lens carries a function on its nodes:
the lens level of each node. Carrière and Oudot [1]_ read the graph's
features from the *extended persistence diagram* of that function
(Cohen-Steiner, Edelsbrunner and Harer [2]_): every feature is a pair of
lens values, and its persistence ``|death - birth|`` is the part of the lens
range it spans. Noise makes many short features; structure few long ones.

Diagram of a graph ``G = (V, E)`` with a function ``f`` on the vertices
------------------------------------------------------------------------
The sublevel filtration adds a vertex at ``f(v)`` and an edge at the max of
its ends; the superlevel filtration adds a vertex at ``f(v)`` and an edge at
the min of its ends, going down. Four kinds of points:

=============  ======================  ==========================================
kind           [2]_                    what it is
=============  ======================  ==========================================
``"down"``     ordinary H0 (Ord0)      a branch hanging down: born at a local
                                       minimum, dies at the saddle where it
                                       merges with an older branch (elder rule)
``"up"``       relative H1 (Rel1)      a branch reaching up: born at a local
                                       maximum, dies at the saddle where it
                                       joins a higher branch (superlevel H0)
``"component"``  extended H0 (Ext0)    one per connected component:
                                       ``(min f, max f)`` over the component
``"loop"``     extended H1 (Ext1)      one per independent cycle (b1 of them):
                                       ``(d, b)``, the highest level at which a
                                       representative cycle still has its lowest
                                       point and the lowest level at which one
                                       closes; a circle under the height function
                                       gives ``(min, max)``
=============  ======================  ==========================================

``"down"`` and ``"up"`` points of zero persistence (ties) are dropped;
``"component"`` and ``"loop"`` points are all kept, so their numbers are C
and ``b1 = E - V + C`` exactly.

Algorithms and cost
-------------------
H0 both ways and the components: union-find over the vertices in sorted
order (elder rule), O(E log E) for the sort and O(E alpha(V)) for the merges.
Loops: the cone construction of [2]_ (the graph, a cone apex, then the cone
over every vertex and edge in decreasing order); the columns of the cone
triangles are reduced over Z/2 (bit sets in Python integers) and a triangle
whose reduced column ends at an ordinary edge kills that edge's cycle: an
Ext1 point (birth = the edge's max, death = the triangle's edge min). The
same reduction also yields the ``"up"`` points (a column ending at a cone
edge), which the tests compare with the union-find ones. Each of the E
columns is reduced in at most O(V) additions of O((V + E) / 64) words:
O(E V (V + E) / 64) in the worst case, milliseconds for the tens to
hundreds of nodes of a Mapper graph.

The significance rule a Mapper graph's diagram is read with (the cover's
resolution threshold) is in :mod:`lenswork.graph._thresholds`; the branches
the diagram gives no point (a component's extremes) in
:mod:`lenswork.graph._trunks`; the structure score of the probe in
:mod:`lenswork.graph._structure_score`.

References
----------
.. [1] M. Carrière and S. Oudot, "Structure and stability of the
   one-dimensional Mapper", Foundations of Computational Mathematics 18, 2018.
.. [2] D. Cohen-Steiner, H. Edelsbrunner and J. Harer, "Extending persistence
   using Poincaré and Lefschetz duality", Foundations of Computational
   Mathematics 9, 2009.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._errors import ParameterError
from .._validation import check_float, check_int
from ._walk import neighbour_lists

__all__ = [
    "PERSISTENCE_KINDS",
    "PersistenceDiagram",
    "ascending_edge_order",
    "check_vertex_function",
    "elder_merges",
    "extended_persistence",
    "find_root",
    "make_diagram",
]

#: Kinds of diagram points, in the order they are listed.
PERSISTENCE_KINDS = ("component", "loop", "down", "up")


@dataclass(frozen=True, eq=False)
class PersistenceDiagram:
    """The extended persistence diagram of a function on a graph's vertices.

    Attributes
    ----------
    kind : ndarray of str, shape (k,)
        ``"component"``, ``"loop"``, ``"down"`` or ``"up"`` (see the module notes).
    birth, death : ndarray of shape (k,)
        Levels of the point, ``birth`` the first met in its filtration: for
        ``"down"`` the local minimum and the merge level; for ``"up"`` the local
        maximum and the merge level; for ``"component"`` min and max; for
        ``"loop"`` the level where the cycle closes (its lowest max) and the
        level of its lowest point (its highest min).
    nodes : ndarray of int64, shape (k, 2)
        The vertex at the birth level and the vertex at the death level.
    persistence : ndarray of shape (k,)
        ``|death - birth|``.
    significance : ndarray of shape (k,)
        ``persistence / range`` in [0, 1] (0 when the function is constant).
    range : float
        Span the significance is relative to.
    threshold : float
        Significance above which a point is significant (``inf``: none is), by
        the lens's overall jitter.
    edge : ndarray of int64, shape (k,), optional
        For a ``"loop"`` point: the edge whose arrival in the ascending
        filtration (:func:`ascending_edge_order`) closed the cycle; -1 for the
        other kinds. Its fundamental cycle in the spanning forest grown in that
        order represents the loop.
    thresholds : ndarray of shape (k,), optional
        Per point, the threshold from the jitter at its two end nodes (see
        :func:`~lenswork.graph._thresholds.lens_persistence`); when given it
        decides :attr:`significant`.
    node_slack : (float, ndarray), optional
        The base threshold (no jitter) and the jitter of every vertex in the
        units of the function, from which ``thresholds`` is made.

    Examples
    --------
    >>> d = extended_persistence([[0, 1], [1, 2], [2, 3], [3, 0]], [0.0, 1.0, 2.0, 1.0])
    >>> d.count("loop"), d.loops.round(2).tolist()
    (1, [[0.0, 2.0, 1.0]])
    """

    kind: np.ndarray
    birth: np.ndarray
    death: np.ndarray
    nodes: np.ndarray
    persistence: np.ndarray
    significance: np.ndarray
    range: float
    threshold: float
    edge: np.ndarray = None
    thresholds: np.ndarray = None
    node_slack: tuple = None

    @property
    def significant(self):
        """Boolean mask of the significant points (significance above their threshold)."""
        return self.significance > self.point_thresholds

    @property
    def point_thresholds(self):
        """The threshold of every point: ``thresholds`` when the ends' jitter is known (see
        :func:`~lenswork.graph._thresholds.lens_persistence`), else ``threshold`` for all.
        """
        if self.thresholds is None:
            return np.full(self.kind.size, self.threshold)
        return self.thresholds

    def _rows(self, kind):
        keep = self.kind == kind
        lo = np.minimum(self.birth, self.death)[keep]
        hi = np.maximum(self.birth, self.death)[keep]
        return np.column_stack([lo, hi, self.significance[keep]])

    @property
    def loops(self):
        """``(low, high, significance)`` of every loop, shape (b1, 3)."""
        return self._rows("loop")

    @property
    def branches(self):
        """``(low, high, significance)`` of every ``"down"`` and ``"up"`` branch."""
        return np.vstack([self._rows("down"), self._rows("up")])

    def count(self, kind=None, *, significant=False):
        """Number of points of one kind (all kinds with ``None``), optionally significant only."""
        if kind is not None and kind not in PERSISTENCE_KINDS:
            raise ParameterError(
                f"No diagram point kind {kind!r}; kinds are {', '.join(PERSISTENCE_KINDS)}."
            )
        keep = np.ones(self.kind.size, bool) if kind is None else self.kind == kind
        if significant:
            keep &= self.significant
        return int(np.count_nonzero(keep))

    def counts(self):
        """``{kind: (significant, all)}`` for every kind."""
        return {k: (self.count(k, significant=True), self.count(k)) for k in PERSISTENCE_KINDS}

    def to_dict(self):
        """JSON-ready form: settings and one record per point."""
        sig = self.significant
        thr = self.point_thresholds
        return {
            "range": float(self.range),
            "threshold": None if not math.isfinite(self.threshold) else float(self.threshold),
            "points": [
                {"kind": str(self.kind[i]), "birth": float(self.birth[i]),
                 "death": float(self.death[i]), "nodes": [int(a) for a in self.nodes[i]],
                 "persistence": float(self.persistence[i]),
                 "significance": float(self.significance[i]),
                 "threshold": float(thr[i]) if math.isfinite(thr[i]) else None,
                 "significant": bool(sig[i])}
                for i in range(self.kind.size)
            ],
        }

    def __repr__(self):
        parts = ", ".join(f"{k} {s}/{a}" for k, (s, a) in self.counts().items())
        return f"PersistenceDiagram(significant/all: {parts})"


# --------------------------------------------------------------------------- input
def check_vertex_function(edges, values, n_nodes, context):
    """``(E, f)``: the edges as an (m, 2) int64 array and the vertex values as float64, checked.

    A ParameterError (naming ``context``) for a value that is not finite, an
    edge naming a missing vertex, or a self-loop.

    Examples
    --------
    >>> E, f = check_vertex_function([[0, 1]], [0, 2], None, "example")
    >>> E.tolist(), f.tolist()
    ([[0, 1]], [0.0, 2.0])
    """
    f = np.asarray(values, dtype=np.float64).reshape(-1)
    V = f.size if n_nodes is None else check_int("n_nodes", n_nodes, lo=0, context=context)
    if f.size != V:
        raise ParameterError(
            f"{context} got {f.size} vertex values for {V} vertices; expected one value per "
            f"vertex."
        )
    if not np.isfinite(f).all():
        bad = int(np.flatnonzero(~np.isfinite(f))[0])
        raise ParameterError(
            f"{context} got a NaN or infinite value at vertex {bad}; expected finite values."
        )
    E = np.asarray(edges, dtype=np.int64).reshape(-1, 2) if len(edges) else np.zeros((0, 2),
                                                                                 np.int64)
    if E.size and (E.min() < 0 or E.max() >= V):
        raise ParameterError(
            f"{context} got an edge with a vertex outside 0..{V - 1}; expected vertex indices "
            f"of the {V} values."
        )
    if E.size and (E[:, 0] == E[:, 1]).any():
        i = int(np.flatnonzero(E[:, 0] == E[:, 1])[0])
        raise ParameterError(f"{context} got a self-loop at edge {i}; expected a simple graph.")
    return E, f



# --------------------------------------------------------------------------- H0
def find_root(parent, a):
    """Union-find root of ``a`` in the list ``parent``, compressing the path on the way.

    Examples
    --------
    >>> parent = [0, 0, 1]
    >>> find_root(parent, 2), parent
    (0, [0, 0, 0])
    """
    root = a
    while parent[root] != root:
        root = parent[root]
    while parent[a] != root:  # path compression
        parent[a], a = root, parent[a]
    return root


def elder_merges(order, nb, f):
    """Elder-rule union-find over vertices in ``order``: merge pairs and the component roots.

    Returns ``pairs`` (born vertex, death vertex) for every merge, and for each
    vertex the root's oldest vertex (the component's first vertex in ``order``).
    ``nb`` holds each vertex's neighbours (:func:`lenswork.graph._walk.neighbour_lists`).

    Examples
    --------
    >>> f = np.array([0.0, 2.0, 1.0])   # minima 0 and 2; (1, 1): a tie, dropped from diagrams
    >>> elder_merges(np.argsort(f), [[1], [0, 2], [1]], f)
    ([(1, 1), (2, 1)], [0, 0, 0])
    """
    V = f.size
    pos = np.empty(V, dtype=np.int64)
    pos[order] = np.arange(V)
    parent = list(range(V))
    oldest = list(range(V))  # per root: its first vertex in the order
    pairs = []
    for v in order.tolist():
        for u in nb[v]:
            if pos[u] > pos[v]:
                continue
            ru, rv = find_root(parent, u), find_root(parent, v)
            if ru == rv:
                continue
            old_u, old_v = oldest[ru], oldest[rv]
            if pos[old_u] < pos[old_v]:
                young, keep, gone = old_v, ru, rv
            else:
                young, keep, gone = old_u, rv, ru
            pairs.append((young, v))
            parent[gone] = keep
            oldest[keep] = min(old_u, old_v, key=lambda x: pos[x])
    roots = [oldest[find_root(parent, v)] for v in range(V)]
    return pairs, roots



# --------------------------------------------------------------------------- loops
def _cone_reduction(E, f, up_order):
    """Ext1 and Rel1 pairs from the reduced columns of the cone triangles (see module notes).

    Returns lists of (birth vertex, death vertex, edge) for the loops and of
    (max vertex, death vertex) for the upward branches.
    """
    V, m = f.size, E.shape[0]
    # ordinary part: edges ascending by (max f, then by their top vertex's rank in up_order)
    rank_up = np.empty(V, dtype=np.int64)
    rank_up[up_order] = np.arange(V)
    asc, top, low = _ascending(E, rank_up)
    asc_pos = np.empty(m, dtype=np.int64)
    asc_pos[asc] = np.arange(m)
    # relative part: cone edges w*v in decreasing order (the reverse of up_order); cone
    # triangles w*e in decreasing order of (min f, then the bottom vertex's rank reversed)
    cone_pos = m + (V - 1 - rank_up)  # bit position of the cone edge over each vertex
    tri = np.lexsort((-rank_up[top], -rank_up[low]))
    pivots = {}
    loops, ups = [], []
    for e in tri.tolist():
        a, b = int(E[e, 0]), int(E[e, 1])
        col = (1 << int(asc_pos[e])) | (1 << int(cone_pos[a])) | (1 << int(cone_pos[b]))
        while col:
            lo = col.bit_length() - 1
            other = pivots.get(lo)
            if other is None:
                break
            col ^= other
        if not col:
            continue
        lo = col.bit_length() - 1
        pivots[lo] = col
        death = int(low[e])
        if lo < m:
            edge = int(asc[lo])
            loops.append((int(top[edge]), death, edge))
        else:
            v = int(up_order[V - 1 - (lo - m)])
            ups.append((v, death))
    return loops, ups


def _ascending(E, rank_up):
    top = np.where(rank_up[E[:, 0]] > rank_up[E[:, 1]], E[:, 0], E[:, 1])
    low = np.where(top == E[:, 0], E[:, 1], E[:, 0])
    return np.lexsort((rank_up[low], rank_up[top])), top, low


def ascending_edge_order(edges, values):
    """Edge indices in the order the ascending filtration adds them (ties as in the diagram).

    An edge arrives at the larger value of its ends; ties are broken by the
    vertices' ranks in ascending ``(value, index)`` order, top vertex first.
    The edges that close a cycle in this order (the non-tree edges of the
    spanning forest grown in it) are exactly the ``edge`` entries of the
    diagram's loops (Cohen-Steiner, Edelsbrunner and Harer 2009: a positive
    edge of the sublevel filtration).

    Examples
    --------
    >>> ascending_edge_order([[0, 1], [1, 2], [0, 2]], [0.0, 2.0, 1.0]).tolist()
    [2, 0, 1]
    """
    E = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    f = np.asarray(values, dtype=np.float64).reshape(-1)
    up = np.lexsort((np.arange(f.size), f))
    rank_up = np.empty(f.size, dtype=np.int64)
    rank_up[up] = np.arange(f.size)
    return _ascending(E, rank_up)[0]


# --------------------------------------------------------------------------- diagram
def make_diagram(E, f, rng, threshold, slack=None):
    """The :class:`PersistenceDiagram` of checked edges ``E`` and values ``f``.

    ``rng`` is the span the significance is relative to, ``threshold`` the
    significance threshold, ``slack`` (optional) the base threshold and the
    jitter of every vertex in the units of ``f``, from which the per-point
    thresholds are made (see :func:`lenswork.graph._thresholds.lens_persistence`).
    :func:`extended_persistence` is the checked entry.

    Examples
    --------
    >>> d = make_diagram(np.array([[0, 1]]), np.array([0.0, 1.0]), 1.0, 0.5)
    >>> d.kind.tolist(), d.significance.tolist()
    (['component'], [1.0])
    """
    V = f.size
    nb = neighbour_lists(V, E)
    up = np.lexsort((np.arange(V), f))  # ascending (f, index)
    down = up[::-1].copy()
    kinds, births, deaths, nodes, edges = [], [], [], [], []

    def add(kind, bv, dv, edge=-1):
        kinds.append(kind)
        births.append(f[bv])
        deaths.append(f[dv])
        nodes.append((bv, dv))
        edges.append(edge)

    down_pairs, roots_min = elder_merges(up, nb, f)
    up_pairs, roots_max = elder_merges(down, nb, f)
    comps = {}
    for v in range(V):
        comps.setdefault(roots_min[v], roots_max[v])
    for lo_v, hi_v in sorted(comps.items(), key=lambda t: (f[t[0]], t[0])):
        add("component", lo_v, hi_v)
    loops, _ = _cone_reduction(E, f, up)
    for bv, dv, e in sorted(loops, key=lambda t: (f[t[1]] - f[t[0]], t[0])):
        add("loop", bv, dv, e)
    for bv, dv in down_pairs:
        if f[dv] > f[bv]:
            add("down", bv, dv)
    for bv, dv in up_pairs:
        if f[bv] > f[dv]:
            add("up", bv, dv)
    birth = np.asarray(births, dtype=np.float64)
    death = np.asarray(deaths, dtype=np.float64)
    pers = np.abs(death - birth)
    sig = np.clip(pers / rng, 0.0, 1.0) if rng > 0 else np.zeros_like(pers)
    ends = np.asarray(nodes, dtype=np.int64).reshape(-1, 2)
    thresholds = None
    if slack is not None:  # threshold = base + (jitter at each end) / range
        base, per_node = slack
        thresholds = base + (per_node[ends[:, 0]] + per_node[ends[:, 1]]) / rng \
            if rng > 0 else np.full(ends.shape[0], math.inf)
    return PersistenceDiagram(
        kind=np.asarray(kinds, dtype=object).astype(str) if kinds else np.zeros(0, dtype=str),
        birth=birth, death=death, nodes=ends,
        persistence=pers, significance=sig, range=float(rng), threshold=float(threshold),
        edge=np.asarray(edges, dtype=np.int64), thresholds=thresholds, node_slack=slack,
    )


def extended_persistence(edges, values, *, n_nodes=None, threshold=0.0):
    """Extended persistence diagram (dimensions 0 and 1) of a function on a graph's vertices.

    Parameters
    ----------
    edges : array-like of shape (n_edges, 2), int
        Vertex pairs (no self-loops; a repeated pair counts as two edges).
    values : array-like of shape (n_nodes,)
        The function on the vertices (finite).
    n_nodes : int, optional
        Number of vertices (default: ``len(values)``).
    threshold : float in [0, 1], default=0.0
        Significance above which a point counts as significant.

    Returns
    -------
    PersistenceDiagram
        Significance relative to ``max(values) - min(values)``.

    Raises
    ------
    ParameterError
        A value that is not finite, an edge naming a missing vertex, a self-loop.

    Notes
    -----
    Union-find for the branches and components, O(E log E); a Z/2 reduction of
    the cone triangles for the loops (Cohen-Steiner, Edelsbrunner and Harer
    2009). See the module notes.

    Examples
    --------
    >>> path = [[0, 1], [1, 2], [2, 3], [3, 4]]
    >>> d = extended_persistence(path, [0.0, 2.0, 1.0, 3.0, 4.0])   # a bump of height 1
    >>> d.kind.tolist(), d.persistence.tolist()
    (['component', 'down', 'up'], [4.0, 1.0, 1.0])
    """
    E, f = check_vertex_function(edges, values, n_nodes, "extended_persistence")
    threshold = check_float("threshold", threshold, lo=0, context="extended_persistence")
    rng = float(f.max() - f.min()) if f.size else 0.0
    return make_diagram(E, f, rng, threshold)
