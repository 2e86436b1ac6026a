"""Node positions for drawing a LensGraph.

``"level"`` (one lens)
    The vertical position of a node is its mean lens value, so the drawing
    reads like the Reeb graph the Mapper graph approximates. Nodes of one
    cover element form a level (levels ordered by the element's position on
    the first lens, ``LensGraph.node_levels``: the interval, or the ball
    centre); their left-to-right order is chosen by barycentre sweeps (each
    node moves to the mean position of its neighbours in the levels already
    placed, downwards then upwards, keeping the order with the fewest edge
    crossings), then the horizontal positions are
    straightened towards the neighbours' mean with a spacing of at least 1.
``"lens"`` (two lenses)
    The two lens means of each node are its coordinates.
``"spring"``
    A force-directed layout (Fruchterman-Reingold forces, cooled steps)
    started from the spectral layout; any number of lenses. Components of
    more than 1,500 nodes keep their spectral layout (the forces cost O(V^2)).
``"spectral"``
    The two smallest non-trivial eigenvectors of each component's graph
    Laplacian ``L = D - A``.

Components are laid out one by one and placed side by side, largest first
(``"lens"`` keeps the lens coordinates as they are).
"""

from __future__ import annotations

import numpy as np
from scipy.sparse.csgraph import connected_components

from .._validation import check_choice
from ._walk import neighbour_lists

__all__ = ["LAYOUTS", "auto_layout", "graph_layout"]

LAYOUTS = ("auto", "level", "lens", "spring", "spectral")
_SPRING_MAX_NODES = 1500
_DENSE_MAX_NODES = 2000
_SWEEPS = 8


def auto_layout(n_lenses, n_nodes):
    """The layout ``"auto"`` stands for: the one rule, used by graph_layout and the plots.

    ``"level"`` for one lens, ``"lens"`` for two, ``"spring"`` above (``"spectral"``
    beyond 1,500 nodes, where the spring forces' O(V^2) steps get slow).

    Examples
    --------
    >>> auto_layout(1, 10), auto_layout(2, 10), auto_layout(3, 10), auto_layout(3, 5000)
    ('level', 'lens', 'spring', 'spectral')
    """
    if n_lenses == 1:
        return "level"
    if n_lenses == 2:
        return "lens"
    return "spring" if n_nodes <= _SPRING_MAX_NODES else "spectral"


def graph_layout(graph, method="auto", random_state=0):
    """Positions of the nodes of a LensGraph.

    Parameters
    ----------
    graph : LensGraph
    method : {"auto", "level", "lens", "spring", "spectral"}, default="auto"
        ``"auto"`` is ``"level"`` for one lens, ``"lens"`` for two, ``"spring"``
        above (``"spectral"`` beyond 1,500 nodes).
    random_state : int, default=0
        Seed of the tiny jitter that separates nodes the spring layout would
        otherwise start on top of each other.

    Returns
    -------
    ndarray of shape (n_nodes, 2)

    Notes
    -----
    Cost: level O(sweeps * E) plus the crossing counts; spring O(V^2) per step
    for 150 steps; spectral one dense eigendecomposition per component.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> M = sp.csr_matrix(np.eye(3, dtype=int))
    >>> stats = {"h": np.array([[0.0, 0, 0], [1.0, 1, 1], [2.0, 2, 2]])}
    >>> g = LensGraph(M, [[0], [1], [2]], [[0, 1], [1, 2]], [1, 1], stats, lens_columns=["h"])
    >>> graph_layout(g)[:, 1].tolist()
    [0.0, 1.0, 2.0]
    """
    method = check_choice("method", method, LAYOUTS, context="graph_layout")
    m = len(graph.lens_columns)
    if method == "auto":
        method = auto_layout(m, graph.n_nodes)
    V = graph.n_nodes
    if V == 0:
        return np.zeros((0, 2))
    if method == "lens":
        x = graph.node_stats[graph.lens_columns[0]][:, 0]
        y = graph.node_stats[graph.lens_columns[1]][:, 0] if m >= 2 else np.zeros(V)
        return np.column_stack([x, y])
    nb = neighbour_lists(V, graph.edge_index)
    A = graph.adjacency()
    n_comp, labels = connected_components(A, directed=False)
    comps = [np.flatnonzero(labels == c) for c in range(n_comp)]
    comps.sort(key=lambda c: (-c.size, c[0]))
    pos = np.zeros((V, 2))
    if method == "level":
        # the discrete level of a node: the rank of its element's first-lens position
        # (interval index, or ball centre), so nodes of one element share a level
        level = np.unique(graph.node_levels[:, 0], return_inverse=True)[1].ravel()
        y = graph.node_stats[graph.lens_columns[0]][:, 0]
        offset = 0.0
        for nodes in comps:
            x = _level_x(nodes, level, nb)
            pos[nodes, 0] = x - x.min() + offset
            pos[nodes, 1] = y[nodes]
            offset = pos[nodes, 0].max() + 1.5
        pos[:, 0] -= pos[:, 0].mean()
        return pos
    rng = np.random.default_rng(random_state)
    boxes = []
    for nodes in comps:
        sub = A[nodes][:, nodes]
        p = _spectral(sub)
        if method == "spring" and 2 < nodes.size <= _SPRING_MAX_NODES:
            p = _spring(sub.toarray(), p + 1e-3 * rng.standard_normal(p.shape))
        p = p - p.mean(axis=0)
        extent = np.abs(p).max()
        boxes.append(p / extent * np.sqrt(nodes.size) if extent > 0 else p)
    offset = 0.0
    for nodes, p in zip(comps, boxes):
        width = p[:, 0].max() - p[:, 0].min()
        pos[nodes] = p + [offset - p[:, 0].min(), 0.0]
        offset += width + 1.5
    pos -= pos.mean(axis=0)
    return pos


def _centred(order):
    return {v: i - (len(order) - 1) / 2.0 for i, v in enumerate(order)}


def _crossings(layers, pos, nb, level):
    """Edge crossings between every pair of levels joined by edges."""
    groups = {}
    for lvl in layers:
        for v in layers[lvl]:
            for w in nb[v]:
                if level[w] > lvl:
                    groups.setdefault((lvl, level[w]), []).append((pos[v], pos[w]))
    total = 0
    for pairs in groups.values():
        if len(pairs) < 2:
            continue
        p = np.asarray(pairs)
        da = p[:, 0][:, None] - p[:, 0][None, :]
        db = p[:, 1][:, None] - p[:, 1][None, :]
        total += int(np.count_nonzero(np.triu(da * db < 0, 1)))
    return total


def _level_x(nodes, level, nb):
    """Horizontal positions of one component's nodes (barycentre sweeps + straightening)."""
    levels = sorted({int(level[v]) for v in nodes})
    layers = {lvl: [int(v) for v in nodes if level[v] == lvl] for lvl in levels}
    pos = {}
    for lvl in levels:
        pos.update(_centred(layers[lvl]))
    best = (_crossings(layers, pos, nb, level), {k: list(v) for k, v in layers.items()})
    for _ in range(_SWEEPS):
        for direction in (1, -1):
            seq = levels[1:] if direction == 1 else levels[-2::-1]
            for lvl in seq:
                def key(v, lvl=lvl, direction=direction):
                    ref = [pos[w] for w in nb[v] if (level[w] - lvl) * direction < 0]
                    return (sum(ref) / len(ref) if ref else pos[v], pos[v])

                layers[lvl] = sorted(layers[lvl], key=key)
                pos.update(_centred(layers[lvl]))
            count = _crossings(layers, pos, nb, level)
            if count < best[0]:
                best = (count, {k: list(v) for k, v in layers.items()})
        if best[0] == 0:
            break
    layers = best[1]
    x = {}
    for lvl in levels:
        x.update(_centred(layers[lvl]))
    for _ in range(20):
        for lvl in levels:
            order = layers[lvl]
            want = np.array([np.mean([x[w] for w in nb[v]]) if nb[v] else x[v] for v in order])
            fwd = want.copy()
            for i in range(1, fwd.size):
                fwd[i] = max(fwd[i], fwd[i - 1] + 1.0)
            bwd = want.copy()
            for i in range(bwd.size - 2, -1, -1):
                bwd[i] = min(bwd[i], bwd[i + 1] - 1.0)
            for v, value in zip(order, (fwd + bwd) / 2.0):
                x[v] = float(value)
    return np.array([x[int(v)] for v in nodes])


def _spectral(A):
    """Two smallest non-trivial Laplacian eigenvectors of a sparse adjacency, signs fixed.

    Dense ``eigh`` up to :data:`_DENSE_MAX_NODES` nodes, shift-invert ``eigsh`` above.
    """
    import scipy.sparse as sp

    V = A.shape[0]
    if V == 1:
        return np.zeros((1, 2))
    if V == 2:
        return np.array([[-0.5, 0.0], [0.5, 0.0]])
    W = sp.csr_matrix((sp.csr_matrix(A) > 0).astype(np.float64))
    L = sp.diags(np.asarray(W.sum(axis=1)).ravel()) - W
    if V <= _DENSE_MAX_NODES:
        _, vecs = np.linalg.eigh(L.toarray())
    else:
        from scipy.sparse.linalg import eigsh

        v0 = np.cos(np.arange(V) + 1.0)  # fixed start vector: same graph, same layout
        vals, vecs = eigsh(L.tocsc(), k=3, sigma=-1e-3, which="LM", v0=v0)
        vecs = vecs[:, np.argsort(vals)]
    vecs = vecs[:, 1:3]
    if vecs.shape[1] == 1:
        vecs = np.column_stack([vecs[:, 0], np.zeros(V)])
    big = np.abs(vecs).argmax(axis=0)
    signs = np.sign(vecs[big, np.arange(2)])
    signs[signs == 0] = 1.0
    return vecs * signs


def _spring(A, pos, steps=150):
    """Fruchterman-Reingold forces with linear cooling, in numpy (O(V^2) per step)."""
    V = A.shape[0]
    W = (A > 0).astype(np.float64)
    pos = pos - pos.mean(axis=0)
    extent = np.abs(pos).max()
    pos = pos / extent if extent > 0 else pos
    k = np.sqrt(1.0 / V)
    temp = 0.1
    for step in range(steps):
        delta = pos[:, None, :] - pos[None, :, :]
        dist = np.sqrt((delta**2).sum(axis=-1))
        np.maximum(dist, 1e-4, out=dist)
        force = k * k / dist**2 - W * dist / k
        np.fill_diagonal(force, 0.0)
        disp = np.einsum("ij,ijk->ik", force, delta)
        length = np.sqrt((disp**2).sum(axis=1))
        np.maximum(length, 1e-9, out=length)
        pos = pos + disp / length[:, None] * np.minimum(length, temp)[:, None]
        temp = 0.1 * (1.0 - (step + 1) / steps) + 1e-3
    return pos
