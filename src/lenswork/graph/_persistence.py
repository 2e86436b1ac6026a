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

Significance and the threshold rule
-----------------------------------
``significance = persistence / range``, in [0, 1], with ``range`` the span of
the node function. For a graph of one lens built with ``N`` intervals of
length ``L`` and overlap ``p`` (step ``s = L (1 - p)``), :func:`lens_persistence`
takes as node function the midpoint of the node's interval on the cover scale
(a discretisation of the lens at the cover's resolution, as in [1]_), so the
range is the span of the midpoints, ``(N - 1) s``, and 1 means "spans every
interval". A feature is *significant* when its persistence exceeds
``2 (L + delta)``, i.e. its significance exceeds
``2 (1 + delta / L) / ((N - 1)(1 - p))`` (0.32 at 10 intervals and overlap 0.3
for a lens with ``delta = 0``), where ``delta`` is the lens's own jitter at the
data's resolution: the root-mean-square difference of the lens (on the cover
scale, as a share of its range) between neighbours of the heat-kernel k-NN
graph, ``delta^2 = sum_ij S_ij (u_i - u_j)^2 / sum_ij S_ij`` (which is
``2 L_r var_D(u)`` with ``L_r`` the Laplacian score of He, Cai and Niyogi 2005;
``lenswork.criteria.neighbour_jitter``). The reasons:

1. Resolution (Carrière and Oudot [1]_): the Mapper's diagram is the Reeb
   graph's with the points inside the cover's staircases removed, i.e. a
   feature of the data that fits inside one interval (span below ``L``) leaves
   no trace, and one that shows carries the cover's discretisation. Whether a
   feature shorter than ``L`` exists is a property of the cover, not of the
   data.
2. Uncertainty of the two ends: every member of a node lies within ``L / 2``
   of its interval's midpoint, and where the clustering puts the boundary of
   a node depends on rows that are neighbours in the data but differ in the
   lens by about ``delta``. So each end of a feature is known to within
   ``L / 2 + delta``, and a feature measured at persistence ``P`` spans at
   least ``P - L - 2 delta`` of the lens in the data. Requiring that to exceed
   ``L`` certifies a feature the cover resolves.
3. What it rejects: a clustering split inside one cover element that
   rejoins in the next (a four-node cycle over three intervals, the commonest
   noise loop), and a spur of one or two nodes, measure ``2 s`` and ``s``,
   both below ``2 L`` for any overlap; a lens that jitters between neighbours
   by about an interval (``delta ~ L``: a noisy density or eccentricity) makes
   ragged interval preimages whose clusters split and rejoin over several
   intervals, and its threshold doubles accordingly. Splits that persist over
   several elements for a smooth lens are not told from structure by the
   cover alone: that is what resampling is for (recurrence under the
   bootstrap, Carrière, Michel and Oudot [3]_, whose confidence region for
   the diagram is likewise a band of a given width along the diagonal).

The rule has no constant tuned to any data: it is fixed by the cover and by the
lens's own Laplacian score.

References
----------
.. [1] M. Carrière and S. Oudot, "Structure and stability of the
   one-dimensional Mapper", Foundations of Computational Mathematics 18, 2018.
.. [2] D. Cohen-Steiner, H. Edelsbrunner and J. Harer, "Extending persistence
   using Poincaré and Lefschetz duality", Foundations of Computational
   Mathematics 9, 2009.
.. [3] M. Carrière, B. Michel and S. Oudot, "Statistical analysis and
   parameter selection for Mapper", JMLR 19, 2018.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from .._errors import ParameterError
from .._validation import check_float, check_int
from ._walk import neighbour_lists

__all__ = [
    "PERSISTENCE_KINDS",
    "STRUCTURE_WEIGHTS",
    "PersistenceDiagram",
    "ascending_edge_order",
    "diagram_trunks",
    "extended_persistence",
    "graph_diagrams",
    "lens_persistence",
    "resolution_threshold",
    "significance_total",
    "structure_significance",
    "trunk_points",
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
        :func:`lens_persistence`); when given it decides :attr:`significant`.
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
        :func:`lens_persistence`), else ``threshold`` for all."""
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
def _check_graph(edges, values, n_nodes, context):
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
def _find(parent, a):
    root = a
    while parent[root] != root:
        root = parent[root]
    while parent[a] != root:  # path compression
        parent[a], a = root, parent[a]
    return root


def _h0(order, nb, f):
    """Elder-rule union-find over vertices in ``order``: merge pairs and the component roots.

    Returns ``pairs`` (born vertex, death vertex) for every merge, and for each
    vertex the root's oldest vertex (the component's first vertex in ``order``).
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
            ru, rv = _find(parent, u), _find(parent, v)
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
    roots = [oldest[_find(parent, v)] for v in range(V)]
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


def _beyond(v, nb, f, sign):
    """The vertices reached from ``v`` through vertices at or past its level in the sweep
    (below it when ``sign`` is 1), and whether one is strictly past it."""
    level = f[v]
    seen, todo, past = {v}, [v], False
    while todo:
        u = todo.pop()
        for w in nb[u]:
            ahead = sign * (level - f[w])
            if ahead >= 0 and w not in seen:
                past |= ahead > 0
                seen.add(w)
                todo.append(w)
    return seen, past


def _is_fork(v, nb, f, sign, folds, sizes, young_size):
    """Whether the graph goes on past ``v`` into a body: not into a fold -- a significant
    branch of the other direction whose extreme lies past ``v`` and whose merge lies before it
    (a path that doubles back, as a bump or a dip does, and which a Mapper graph draws with a
    spur) -- and into at least as much (by ``sizes``) as the branch that meets there."""
    reached, past = _beyond(v, nb, f, sign)
    if not past:
        return False
    for extreme, merge in folds:
        if extreme in reached and sign * (f[merge] - f[v]) > 0:
            return False
    reached.discard(v)
    return float(sum(sizes[u] for u in reached)) >= young_size


def _trunk_merges(order, nb, f, persistence, slack, sign, folds, sizes):
    """For each component, the first merge into its eldest branch of a branch of more than
    ``persistence`` (plus the ``slack`` of its two ends) at a fork: {eldest vertex: merge
    vertex} (union-find in ``order``, elder rule; ``sign`` 1 for a downward sweep, -1
    upward; ``folds``: the significant branches of the other direction, (extreme, merge))."""
    V = f.size
    pos = np.empty(V, dtype=np.int64)
    pos[order] = np.arange(V)
    parent = list(range(V))
    oldest = list(range(V))
    size = [float(x) for x in sizes]  # per root: the sizes of its component
    label = _component_labels(np.array([(a, b) for a in range(V) for b in nb[a] if a < b],
                                        dtype=np.int64).reshape(-1, 2), V)
    whole = np.bincount(label, weights=sizes, minlength=label.max() + 1 if V else 0)
    seen = np.zeros(V, dtype=bool)
    out = {}
    for v in order.tolist():
        seen[v] = True
        for w in nb[v]:
            if not seen[w]:
                continue
            ru, rv = _find(parent, v), _find(parent, w)
            if ru == rv:
                continue
            a, b = oldest[ru], oldest[rv]
            elder, young = (a, b) if pos[a] < pos[b] else (b, a)
            if elder not in out and abs(f[young] - f[v]) > persistence + slack[young] + slack[v]:
                young_size = size[ru if young == a else rv] - (sizes[v] if young == a else 0)
                elder_size = size[rv if young == a else ru]
                if 2 * elder_size <= whole[label[v]] \
                        and _is_fork(v, nb, f, sign, folds, sizes, young_size):
                    out[elder] = v  # the elder's first significant meeting at a fork
            keep, gone = (ru, rv) if elder == a else (rv, ru)
            parent[gone] = keep
            oldest[keep] = elder
            size[keep] += size[gone]
    return out


def trunk_points(edges, values, persistence, *, slack=None, sizes=None, n_nodes=None):
    """The branches the elder rule gives no diagram point: each component's extremes.

    In the extended diagram a component's lowest and highest vertices are paired
    with each other (the ``"component"`` point), so the branch that holds a
    component's maximum is no ``"up"`` point even when it is as long as the
    branch beside it (a Y under its height has two upper arms and one ``"up"``
    point). This returns, for the top and the bottom of every component, that
    branch down (up) to the first vertex where a branch of persistence above
    ``persistence`` joins it -- the decomposition of the merge tree into
    branches, each from its extreme to the saddle where it meets a longer one
    (Pascucci, Cole-McLaughlin and Scorzelli 2004, from memory), with short
    branches ignored. Only a fork counts: a vertex past which the graph goes
    on (it reaches a vertex further in the sweep), and not into a fold -- a
    significant branch of the other direction whose extreme lies past the
    vertex and which merges before it: two branches that meet at a local
    extreme, or where a Mapper graph draws a path doubling back with a spur,
    are a bump or a dip of one path, whose ends are no tails -- and the part
    the graph goes on into is at least as large (``sizes``: rows per node of a
    Mapper graph) as the branch that meets there, so the bottom of a V (a path
    under a function with its minimum inside) is no body two tails hang from;
    and the trunk holds at most half of its component (a tail hangs from a
    larger body: when the part above the meeting is most of the graph, that
    part is the body).
    A component with no such fork has no trunk point.

    Parameters
    ----------
    edges : array-like of shape (n_edges, 2), int
    values : array-like of shape (n_nodes,)
    persistence : float >= 0
        Branches of at most this persistence (in the units of ``values``) do not end a trunk.
    slack : array-like of shape (n_nodes,), optional
        Added per end: a branch from vertex ``a`` to ``b`` must exceed
        ``persistence + slack[a] + slack[b]`` (the per-point thresholds of
        :func:`lens_persistence`).
    sizes : array-like of shape (n_nodes,), optional
        Weight of each vertex (default 1): the rows of a Mapper graph's node.
    n_nodes : int, optional

    Returns
    -------
    list of (str, int, int)
        ``("up", top vertex, merge vertex)`` and ``("down", bottom vertex, merge
        vertex)``: the trunk spans ``|values[top] - values[merge]|``.

    Examples
    --------
    >>> Y = [[6, 0], [0, 1], [1, 2], [2, 3], [1, 4], [4, 5]]          # a fork at vertex 1
    >>> trunk_points(Y, [0.0, 1.0, 2.0, 3.0, 2.0, 2.5, -1.0], 0.5)   # arms to 3.0 and 2.5
    [('up', 3, 1)]
    """
    E, f = _check_graph(edges, values, n_nodes, "trunk_points")
    persistence = check_float("persistence", persistence, lo=0, context="trunk_points")
    V = f.size
    slack = np.zeros(V) if slack is None else np.asarray(slack, dtype=np.float64).reshape(-1)
    sizes = np.ones(V) if sizes is None else np.asarray(sizes, dtype=np.float64).reshape(-1)
    nb = neighbour_lists(V, E)
    up = np.lexsort((np.arange(V), f))
    out = []
    down_pairs, _ = _h0(up, nb, f)
    up_pairs, _ = _h0(up[::-1].copy(), nb, f)

    def strong(pairs):
        return [(a, b) for a, b in pairs if abs(f[a] - f[b]) > persistence + slack[a] + slack[b]]

    for kind, order, sign, folds in (("up", up[::-1].copy(), 1.0, strong(down_pairs)),
                                     ("down", up, -1.0, strong(up_pairs))):
        for top, merge in sorted(_trunk_merges(order, nb, f, persistence, slack,
                                               sign, folds, sizes).items()):
            out.append((kind, int(top), int(merge)))
    return out


# --------------------------------------------------------------------------- diagram
def _diagram(E, f, rng, threshold, slack=None):
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

    down_pairs, roots_min = _h0(up, nb, f)
    up_pairs, roots_max = _h0(down, nb, f)
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
    E, f = _check_graph(edges, values, n_nodes, "extended_persistence")
    threshold = check_float("threshold", threshold, lo=0, context="extended_persistence")
    rng = float(f.max() - f.min()) if f.size else 0.0
    return _diagram(E, f, rng, threshold)


def resolution_threshold(intervals, overlap, jitter=0.0):
    """The significance threshold of a one-lens cover: ``2 (L + delta)`` over the midpoint span.

    Parameters
    ----------
    intervals : int
        Interval count ``N``.
    overlap : float in [0, 1)
        Overlap fraction ``p``.
    jitter : float >= 0, default=0.0
        ``delta``: the lens's root-mean-square difference between data
        neighbours, as a share of the cover scale's range
        (``lenswork.criteria.neighbour_jitter``).

    Returns
    -------
    float
        ``2 (L + delta) / ((N - 1) s)`` with ``L = 1 / (1 + (N - 1)(1 - p))`` and
        ``s = L (1 - p)`` (range 1), i.e. ``2 (1 + delta / L) / ((N - 1)(1 - p))``;
        ``inf`` for one interval (nothing can be certified).

    Notes
    -----
    A feature must span more than the resolution ``L`` after the uncertainty of
    both its ends is taken off; each end is a node whose level is known to
    ``L / 2`` (its interval) plus ``delta`` (where the lens puts the rows the
    clustering joins as neighbours). See the module notes; Carrière and Oudot
    2018.

    Examples
    --------
    >>> round(resolution_threshold(10, 0.3), 3), resolution_threshold(1, 0.3)
    (0.317, inf)
    >>> round(resolution_threshold(10, 0.3, jitter=1 / 7.3), 3)   # delta = L doubles it
    0.635
    """
    N = check_int("intervals", intervals, lo=1, context="resolution_threshold")
    p = check_float("overlap", overlap, lo=0, hi=1, hi_open=True, context="resolution_threshold")
    jitter = check_float("jitter", jitter, lo=0, context="resolution_threshold")
    if N == 1:
        return math.inf
    L = 1.0 / (1.0 + (N - 1) * (1.0 - p))
    return 2.0 * (1.0 + jitter / L) / ((N - 1) * (1.0 - p))


def lens_persistence(graph, lens=0, *, jitter=None):
    """Extended persistence of one lens on a LensGraph, with the cover's significance rule.

    Parameters
    ----------
    graph : LensGraph
        Built by :func:`~lenswork.build_graph` (its parameters record the cover).
    lens : int or str, default=0
        Which lens of the cover (index or column name).
    jitter : float >= 0, optional
        The lens's neighbour jitter ``delta`` on the cover scale, as a share of
        its range (``lenswork.criteria.neighbour_jitter``); it widens the
        threshold (see :func:`resolution_threshold`) of every point alike.
        Default: the graph's own record -- the jitter at each node
        (``params["node_jitter"]``, :func:`lenswork.graph.node_jitter`), so that
        a point's threshold is ``2 L + delta_a + delta_b`` with the jitter
        ``delta_a``, ``delta_b`` at its two end nodes (module notes), else the
        overall ``params["lens_jitter"]``, else 0.

    Returns
    -------
    PersistenceDiagram
        Node function: the midpoint of each node's interval of that lens, in
        units of the step ``s`` (interval ``i`` has level ``i``), so the
        significance is relative to the span ``N - 1`` of the levels, and the
        threshold is :func:`resolution_threshold` of the cover.

    Raises
    ------
    ParameterError
        An unknown lens, or a graph without its cover parameters.

    Examples
    --------
    >>> from lenswork import build_graph
    >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
    >>> X = np.column_stack([np.cos(t), np.sin(t)])
    >>> d = lens_persistence(build_graph(X[:, 1], X, intervals=10, overlap=0.3))
    >>> d.count("loop", significant=True), round(float(d.loops[0, 2]), 2)
    (1, 1.0)
    """
    names = list(graph.lens_columns)
    if isinstance(lens, str):
        if lens not in names:
            raise ParameterError(
                f"The graph has no lens {lens!r}; its lenses are {', '.join(names)}."
            )
        j = names.index(lens)
    else:
        j = check_int("lens", lens, lo=0, hi=len(names) - 1, context="lens_persistence")
    cover = graph.params.get("cover") if isinstance(graph.params, dict) else None
    if not cover or "intervals" not in cover or "overlap" not in cover:
        raise ParameterError(
            "lens_persistence needs the graph's cover parameters (intervals, overlap); this "
            "graph has none. Build it with lenswork.build_graph."
        )
    N = int(cover["intervals"][j])
    p = float(cover["overlap"][j])
    level = graph.node_elements[:, j].astype(np.float64)
    E = np.asarray(graph.edge_index, dtype=np.int64).reshape(-1, 2)
    params = graph.params if isinstance(graph.params, dict) else {}
    local = params.get("node_jitter") if jitter is None else None
    if jitter is None:
        overall = params.get("lens_jitter")
        jitter = float(overall[j]) if isinstance(overall, (list, tuple)) else float(overall or 0)
    threshold = resolution_threshold(N, p, jitter)
    slack = None
    if local is not None and N > 1 and len(local) > j and len(local[j]) == level.size:
        step = (1.0 - p) / (1.0 + (N - 1) * (1.0 - p))  # s = L (1 - p) on a range of 1
        slack = (resolution_threshold(N, p, 0.0), np.asarray(local[j], dtype=np.float64) / step)
    return _diagram(E, level, float(N - 1), threshold, slack)


def graph_diagrams(graph, jitter=None):
    """:func:`lens_persistence` of every lens of an interval-cover graph (None otherwise).

    Parameters
    ----------
    graph : LensGraph
    jitter : float or sequence of float, optional
        The neighbour jitter of each lens (one value for all); default: the
        graph's own record, per node (``params["node_jitter"]``) or overall
        (``params["lens_jitter"]``), as :func:`lens_persistence` reads it.

    Returns
    -------
    list of PersistenceDiagram, one per lens column, or None
        None for a graph whose cover has no interval counts (a ball cover),
        which has no lens levels to compare.

    Examples
    --------
    >>> from lenswork import build_graph
    >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
    >>> X = np.column_stack([np.cos(t), np.sin(t)])
    >>> [d.count("loop", significant=True) for d in graph_diagrams(build_graph(X, X))]
    [1, 1]
    """
    cover = graph.params.get("cover") if isinstance(graph.params, dict) else None
    if not cover or "intervals" not in cover or "overlap" not in cover:
        return None
    m = len(graph.lens_columns)
    if jitter is None:
        return [lens_persistence(graph, j) for j in range(m)]
    jit = [float(jitter)] * m if np.ndim(jitter) == 0 else [float(j) for j in jitter]
    return [lens_persistence(graph, j, jitter=jit[j]) for j in range(m)]


def diagram_trunks(diagram, edges, values, sizes=None):
    """:func:`trunk_points` of a diagram's function, with the diagram's thresholds.

    Parameters
    ----------
    diagram : PersistenceDiagram
        The diagram of ``values`` on the graph ``edges`` (its thresholds, per
        end node when it has them, decide which branches end a trunk).
    edges : array-like of shape (n_edges, 2), int
    values : array-like of shape (n_nodes,)
    sizes : array-like of shape (n_nodes,), optional
        Rows per node (:func:`trunk_points`).

    Returns
    -------
    list of (str, int, int, float, float)
        ``(kind, extreme vertex, merge vertex, significance, threshold)`` per
        trunk: :func:`trunk_points` (a trunk ends where a significant branch
        meets it, so it is itself significant: its span is at least that
        branch's), and, for a component's extreme that no significant branch
        meets, the tail from it to the nearest end of a significant loop of its
        component (the loop's top for the maximum, its bottom for the minimum:
        where the loop's two arcs part), when that tail is itself significant.

    Examples
    --------
    >>> Y = [[6, 0], [0, 1], [1, 2], [2, 3], [1, 4], [4, 5]]
    >>> f = [0.0, 1.0, 2.0, 3.0, 2.0, 2.5, -1.0]
    >>> d = extended_persistence(Y, f, threshold=0.2)
    >>> [(k, a, b, round(v, 2)) for k, a, b, v, _ in diagram_trunks(d, Y, f)]
    [('up', 3, 1, 0.5)]
    """
    f = np.asarray(values, dtype=np.float64).reshape(-1)
    if not (diagram.range > 0 and math.isfinite(diagram.threshold)):
        return []
    if diagram.node_slack is None:
        base, slack = diagram.threshold, None
    else:
        base, slack = diagram.node_slack
    def threshold(a, b):
        return base if slack is None else base + (slack[a] + slack[b]) / diagram.range

    out, done = [], set()
    for kind, top, merge in trunk_points(edges, f, base * diagram.range, slack=slack,
                                         sizes=sizes, n_nodes=f.size):
        out.append((kind, top, merge, float(abs(f[top] - f[merge]) / diagram.range),
                    float(threshold(top, merge))))
        done.add(top)
    # a component's extreme that meets no significant branch but a significant loop: the tail
    # from the extreme to the loop's nearest end (its top for the maximum, its bottom for the
    # minimum), where the loop's two arcs part
    sig = diagram.significant
    comp = _component_labels(edges, f.size)
    for i in np.flatnonzero(diagram.kind == "component"):
        low, high = (int(x) for x in diagram.nodes[i])
        loops = [(int(diagram.nodes[k, 0]), int(diagram.nodes[k, 1]))
                 for k in np.flatnonzero((diagram.kind == "loop") & sig)
                 if comp[diagram.nodes[k, 0]] == comp[low]]
        if not loops:
            continue
        ends = (("up", high, max((c for c, _ in loops), key=lambda v: f[v])),
                ("down", low, min((b for _, b in loops), key=lambda v: f[v])))
        for kind, extreme, end in ends:
            value = float(abs(f[extreme] - f[end]) / diagram.range)
            if extreme not in done and value > threshold(extreme, end):
                out.append((kind, extreme, end, value, float(threshold(extreme, end))))
    return out


def _component_labels(edges, n):
    """Connected-component label of every vertex (scipy's connected_components)."""
    E = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    A = sp.coo_matrix((np.ones(len(E)), (E[:, 0], E[:, 1])), shape=(n, n))
    return connected_components(A, directed=False)[1]


def significance_total(diagram, edges, values, weights=None, sizes=None, trunks=None):
    """``T = sum w_kind * significance`` over the significant loops, branches and trunks.

    Parameters
    ----------
    diagram : PersistenceDiagram
    edges, values
        The graph and function of the diagram (for the trunks, :func:`diagram_trunks`).
    weights : dict of str -> float, optional
        Per kind (default :data:`STRUCTURE_WEIGHTS`); a trunk weighs as a branch
        of its direction (``"up"`` / ``"down"``).
    sizes : array-like of shape (n_nodes,), optional
        Rows per node (:func:`trunk_points`).
    trunks : list, optional
        :func:`diagram_trunks` of the diagram, when already computed.

    Returns
    -------
    float

    Examples
    --------
    >>> Y = [[6, 0], [0, 1], [1, 2], [2, 3], [1, 4], [4, 5]]
    >>> f = [0.0, 1.0, 2.0, 3.0, 2.0, 2.5, -1.0]
    >>> round(significance_total(extended_persistence(Y, f, threshold=0.2), Y, f), 3)
    0.438
    """
    w = dict(STRUCTURE_WEIGHTS if weights is None else weights)
    sig = diagram.significant
    total = sum(wk * float(diagram.significance[sig & (diagram.kind == k)].sum())
                for k, wk in w.items())
    total += sum(w.get(kind, 0.0) * value
                 for kind, _, _, value, thr in (diagram_trunks(diagram, edges, values, sizes)
                                                if trunks is None else trunks)
                 if value > thr)
    return float(total)


#: Weights of the feature kinds in :func:`structure_significance` (those of the structure
#: probe: a loop counts as much as two branches; a trunk as a branch).
STRUCTURE_WEIGHTS = {"loop": 1.0, "down": 0.5, "up": 0.5}


def structure_significance(diagrams, *, weights=None, floor=0.25):
    """A structure score from significant features only: noise features count for nothing.

    Parameters
    ----------
    diagrams : PersistenceDiagram or sequence of them
        One diagram per cover setting of the same lens (e.g. a small grid of
        interval counts and overlaps); the median of the per-diagram totals is used.
    weights : dict of str -> float, optional
        Weight per kind (default :data:`STRUCTURE_WEIGHTS`: loops 1, branches 0.5).
    floor : float in [0, 1), default=0.25
        Score of a lens with no significant feature (so that a lens revealing
        nothing can still be the right second lens in a geometric-mean merit).

    Returns
    -------
    float
        ``floor + (1 - floor) (1 - 2^-T)`` with ``T`` the median over the
        diagrams of ``sum w_kind * significance`` over the *significant*
        loops and branches. One loop spanning the whole range gives
        ``T = 1``, halfway between the floor and 1.

    Notes
    -----
    ``1 - 2^-T`` is the probe's saturating form (lenswork.probe), fed with
    significances instead of counts: a tangle of short noise loops adds 0, one
    loop over the whole range adds 1. The median over cover settings keeps a
    feature that one setting alone makes significant from counting.

    Examples
    --------
    >>> ring = extended_persistence([[0, 1], [1, 2], [2, 3], [3, 0]], [0.0, 1, 2, 1],
    ...                             threshold=0.3)
    >>> structure_significance(ring)
    0.625
    """
    if isinstance(diagrams, PersistenceDiagram):
        diagrams = [diagrams]
    diagrams = list(diagrams)
    if not diagrams:
        raise ParameterError("structure_significance needs at least one diagram.")
    w = dict(STRUCTURE_WEIGHTS if weights is None else weights)
    unknown = sorted(set(w) - set(PERSISTENCE_KINDS))
    if unknown:
        raise ParameterError(
            f"No diagram point kind {unknown[0]!r}; kinds are {', '.join(PERSISTENCE_KINDS)}."
        )
    floor = check_float("floor", floor, lo=0, hi=1, hi_open=True,
                        context="structure_significance")
    totals = []
    for d in diagrams:
        sig = d.significant
        totals.append(sum(wk * float(d.significance[sig & (d.kind == k)].sum())
                          for k, wk in w.items()))
    T = float(np.median(totals))
    return floor + (1.0 - floor) * (1.0 - 2.0 ** (-T))
