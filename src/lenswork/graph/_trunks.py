"""Trunks: the branches of a graph's function that the extended diagram gives no point.

In the extended persistence diagram (:mod:`lenswork.graph._persistence`) a
component's lowest and highest vertices are paired with each other, so the
branch holding a component's extreme is no ``"down"`` / ``"up"`` point even
when it is as long as the branch beside it. :func:`trunk_points` finds those
branches (each from the extreme to the first fork where a significant branch
meets it) and :func:`diagram_trunks` reads them with a diagram's thresholds
(:mod:`lenswork.graph._thresholds`).
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from .._validation import check_float
from ._persistence import check_vertex_function, elder_merges, find_root
from ._walk import neighbour_lists

__all__ = ["diagram_trunks", "trunk_points"]


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
            ru, rv = find_root(parent, v), find_root(parent, w)
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
        :func:`~lenswork.graph._thresholds.lens_persistence`).
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
    E, f = check_vertex_function(edges, values, n_nodes, "trunk_points")
    persistence = check_float("persistence", persistence, lo=0, context="trunk_points")
    V = f.size
    slack = np.zeros(V) if slack is None else np.asarray(slack, dtype=np.float64).reshape(-1)
    sizes = np.ones(V) if sizes is None else np.asarray(sizes, dtype=np.float64).reshape(-1)
    nb = neighbour_lists(V, E)
    up = np.lexsort((np.arange(V), f))
    out = []
    down_pairs, _ = elder_merges(up, nb, f)
    up_pairs, _ = elder_merges(up[::-1].copy(), nb, f)

    def strong(pairs):
        return [(a, b) for a, b in pairs if abs(f[a] - f[b]) > persistence + slack[a] + slack[b]]

    for kind, order, sign, folds in (("up", up[::-1].copy(), 1.0, strong(down_pairs)),
                                     ("down", up, -1.0, strong(up_pairs))):
        for top, merge in sorted(_trunk_merges(order, nb, f, persistence, slack,
                                               sign, folds, sizes).items()):
            out.append((kind, int(top), int(merge)))
    return out



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
    >>> from lenswork.graph._persistence import extended_persistence
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
