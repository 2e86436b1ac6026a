"""Walks over a graph's nodes and edges: neighbour lists, spanning forests, cycles, chains.

Plain functions over a graph's public surface (``adjacency()``, ``degrees``,
``edge_index``, ``membership``) shared by the summary's counts and features and
by the significance of features: neighbour lists, a BFS or ordered spanning
forest and the tree path between two nodes, one fundamental cycle per non-tree
edge, leaf-started chains, components by size, the distinct rows of a node
set, and the holes of the nerve's 2-skeleton.
"""

from __future__ import annotations

from collections import deque

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from ._nerve import nerve_triangles

__all__ = ["bfs_forest", "chains", "components_by_size", "fundamental_cycles", "neighbour_lists",
           "nerve_holes", "row_counter", "spanning_forest", "structure", "tree_path"]


def neighbour_lists(n_nodes, edges):
    """The neighbours of every node as lists, from an (n_edges, 2) edge array."""
    nb = [[] for _ in range(n_nodes)]
    for a, b in edges.tolist():
        nb[a].append(b)
        nb[b].append(a)
    return nb


def fundamental_cycles(nb, labels, n_comp):
    """One cycle per non-tree edge of a BFS spanning forest (roots: smallest node)."""
    V = len(nb)
    parent, depth = bfs_forest(nb)
    cycles = []
    seen = set()
    for u in range(V):
        for w in sorted(nb[u]):
            if w <= u or parent[w] == u or parent[u] == w or (u, w) in seen:
                continue
            seen.add((u, w))
            cycles.append(tree_path((parent, depth), u, w))
    return cycles


def chains(nb, deg):
    """Leaf-started chains: (nodes, end) with end a branch point, or a path to another leaf."""
    flares, paths = [], []
    for leaf in range(len(nb)):
        if deg[leaf] != 1:
            continue
        chain = [leaf]
        prev, cur = leaf, nb[leaf][0]
        while deg[cur] == 2:
            chain.append(cur)
            nxt = nb[cur][0] if nb[cur][0] != prev else nb[cur][1]
            prev, cur = cur, nxt
        if deg[cur] >= 3:
            flares.append((tuple(chain), cur))
        elif leaf < cur:  # deg[cur] == 1: the component is a path; record it once
            paths.append(tuple(chain + [cur]))
    return flares, paths


def structure(graph):
    """Components, degrees and neighbour lists (shared by the counts and the features)."""
    A = graph.adjacency()
    n_comp, labels = connected_components(A, directed=False)
    return int(n_comp), labels, graph.degrees, neighbour_lists(graph.n_nodes, graph.edge_index)


def row_counter(graph):
    """``rows_of(nodes)``: distinct rows in a set of nodes, O(their memberships)."""
    csc = sp.csc_matrix(graph.membership)
    stamp = np.empty(graph.n_rows, dtype=np.int64)

    def rows_of(nodes):
        parts = [csc.indices[csc.indptr[c]:csc.indptr[c + 1]] for c in nodes]
        if not parts:
            return 0
        idx = np.concatenate(parts)
        pos = np.arange(idx.size)
        stamp[idx] = pos  # a repeated row keeps one position: count each row once
        return int(np.count_nonzero(stamp[idx] == pos))

    return rows_of


def components_by_size(labels, n_comp):
    nodes = [np.flatnonzero(labels == c) for c in range(n_comp)]
    order = sorted(range(n_comp), key=lambda c: (-nodes[c].size, nodes[c][0]))
    return [nodes[c] for c in order]


def spanning_forest(E, order, V):
    """Parent and depth of every node in the spanning forest grown by adding edges in ``order``.

    Kruskal's rule: an edge joins the forest when its ends are in different
    trees; the forest is then rooted (breadth first, smallest node first).
    """
    parent = list(range(V))

    def find(a):
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    tree = [[] for _ in range(V)]
    for e in order.tolist():
        a, b = int(E[e, 0]), int(E[e, 1])
        ra, rb = find(a), find(b)
        if ra != rb:
            parent[ra] = rb
            tree[a].append(b)
            tree[b].append(a)
    return bfs_forest(tree)


def bfs_forest(nb):
    """Parent and depth of every node, breadth first from the smallest unseen node.

    Neighbours are visited in increasing order, so the forest is deterministic
    (in a tree it is the tree itself, rooted).
    """
    V = len(nb)
    up = [-1] * V
    depth = [-1] * V
    for root in range(V):
        if depth[root] >= 0:
            continue
        depth[root] = 0
        queue = deque([root])
        while queue:
            u = queue.popleft()
            for w in sorted(nb[u]):
                if depth[w] < 0:
                    depth[w], up[w] = depth[u] + 1, u
                    queue.append(w)
    return up, depth


def tree_path(forest, a, b):
    """Nodes of the forest path from ``a`` to ``b`` (the cycle closed by the edge a-b)."""
    up, depth = forest
    left, right = [a], [b]
    while depth[a] > depth[b]:
        a = up[a]
        left.append(a)
    while depth[b] > depth[a]:
        b = up[b]
        right.append(b)
    while a != b:
        a, b = up[a], up[b]
        left.append(a)
        right.append(b)
    return tuple(left + right[-2::-1])


#: Largest boundary matrix (edges x triangles) whose rank is computed densely.
_MAX_BOUNDARY = 4_000_000


def nerve_holes(graph, loops):
    """b1 of the nerve's 2-skeleton: loops minus the rank of the triangle boundary map."""
    if loops == 0:
        return 0
    tri, _ = nerve_triangles(graph.membership)
    if len(tri) == 0:
        return loops
    V = graph.n_nodes
    edges = np.sort(np.asarray(graph.edge_index, dtype=np.int64), axis=1)
    keys = edges[:, 0] * V + edges[:, 1]
    order = np.argsort(keys)
    if len(keys) * len(tri) > _MAX_BOUNDARY:
        return None
    D = np.zeros((len(keys), len(tri)))
    cols = np.arange(len(tri))
    # boundary of [i, j, h] = [j, h] - [i, h] + [i, j] (common practice, simplicial homology)
    for (a, b), sign in (((1, 2), 1.0), ((0, 2), -1.0), ((0, 1), 1.0)):
        e = order[np.searchsorted(keys, tri[:, a] * V + tri[:, b], sorter=order)]
        D[e, cols] = sign
    return int(loops - np.linalg.matrix_rank(D))
