"""The significance of a graph's features: per-lens extended persistence mapped onto them.

:func:`significance_of` gives the graph's :class:`Significance` (cached on the
graph): the loops, limbs, flares and branch points with the share of the lens
range each spans and whether it passes the resolution threshold (the notes of
:mod:`lenswork.graph._summary`).
"""

from __future__ import annotations

import math
from functools import cached_property

import numpy as np

from .._errors import ParameterError
from ._persistence import ascending_edge_order
from ._thresholds import graph_diagrams
from ._trunks import diagram_trunks
from ._walk import spanning_forest, tree_path

__all__ = ["BRANCH_RADIUS", "Significance", "significance_of"]


class Significance:
    """The per-lens diagrams of a graph and the significance of its features (module notes)."""

    def __init__(self, graph, diagrams):
        self.graph = graph
        self.diagrams = diagrams
        self.levels = graph.node_elements.astype(np.float64)

    def _best(self, values):
        """(largest significance, significant in some lens) over per-lens (value, ok) pairs."""
        values = list(values)
        if not values:
            return 0.0, False
        return max(v for v, _ in values), any(ok for _, ok in values)

    def loops(self, nb):
        """(cycle, significance, significant) per loop, from the lens certifying the most."""
        best = max(range(len(self.diagrams)),
                   key=lambda j: (self.diagrams[j].count("loop", significant=True), -j))
        d = self.diagrams[best]
        E = np.asarray(self.graph.edge_index, dtype=np.int64).reshape(-1, 2)
        level = self.levels[:, best]
        order = ascending_edge_order(E, level)
        tree = spanning_forest(E, order, self.graph.n_nodes)
        keep = d.kind == "loop"
        out = []
        for i in np.flatnonzero(keep)[np.argsort(-d.significance[keep], kind="stable")]:
            a, b = (int(x) for x in E[int(d.edge[i])])
            out.append((tree_path(tree, a, b), float(d.significance[i]),
                        bool(d.significant[i])))
        return out

    @cached_property
    def trunks(self):
        """Per lens: (extreme node, merge node, significance, threshold) of each trunk."""
        E = np.asarray(self.graph.edge_index, dtype=np.int64).reshape(-1, 2)
        sizes = np.asarray(self.graph.membership.sum(axis=0)).ravel()
        return [[t[1:] for t in diagram_trunks(d, E, self.levels[:, j], sizes)]
                for j, d in enumerate(self.diagrams)]

    def limbs(self, nb):
        """(nodes, attached to, significance, significant) for every branch of every lens.

        The diagram's ``down`` and ``up`` points, and the trunks (a component's
        extreme down or up to where a significant branch joins it). A limb's
        nodes are its region: the nodes reached from its extreme through nodes
        beyond the level where it joins the rest (the extreme first); it is
        attached to the node where it joins. The same limb seen by several
        lenses (regions of node-set Jaccard index at least 1/2) is listed
        once, at its largest significance.
        """
        found = []
        for j, d in enumerate(self.diagrams):
            level = self.levels[:, j]
            ends = [(int(d.nodes[i, 0]), int(d.nodes[i, 1]), float(d.significance[i]),
                     bool(d.significant[i]))
                    for i in np.flatnonzero((d.kind == "down") | (d.kind == "up"))]
            ends += [(top, merge, value, value > thr) for top, merge, value, thr in self.trunks[j]]
            for top, merge, value, ok in ends:
                found.append((j, _region(nb, level, top, merge), merge, value, ok))
        found.sort(key=lambda t: (-t[3], t[0], t[1][0]))
        kept = []
        for j, region, merge, value, ok in found:
            nodes = set(region)
            same = next((k for k in kept if j not in k["lenses"]
                         and len(nodes & k["set"]) * 2 >= len(nodes | k["set"])), None)
            if same is None:
                kept.append({"lenses": {j}, "set": nodes, "region": region, "merge": merge,
                             "value": value, "ok": ok})
            else:  # the same limb under another lens: listed once, at the larger value
                same["lenses"].add(j)
                same["ok"] = same["ok"] or ok
        return [(k["region"], k["merge"], k["value"], k["ok"]) for k in kept]

    def at_node(self, v, nb):
        """Third-largest lens span of the exits at node ``v`` (module notes).

        For each lens: the ball is the part of the graph reached from ``v``
        through nodes whose level is within ``r`` of ``v``'s, the shell the
        nodes reached within ``2 r`` that are not in the ball, with ``r`` a
        share :data:`BRANCH_RADIUS` of the resolution threshold. Each
        component of the shell is an exit; its arm is the component of
        ``G - ball`` holding it, and its span runs from ``v``'s level to the
        arm's farthest level.
        """
        if len(nb[v]) < 3:
            return 0.0, False
        vals = []
        for j, d in enumerate(self.diagrams):
            if not (d.range > 0 and math.isfinite(d.threshold)):
                vals.append((0.0, False))
                continue
            lv = self.levels[:, j]
            spans = self._exit_spans(v, nb, lv, BRANCH_RADIUS * d.threshold * d.range)
            if len(spans) < 3:
                vals.append((0.0, False))
                continue
            value = float(sorted(spans, reverse=True)[2]) / d.range
            vals.append((value, value > d.threshold))
        return self._best(vals)

    @staticmethod
    def _exit_spans(v, nb, level, radius):
        """Lens span of the arm behind each exit of the ball of ``radius`` around ``v``."""
        lv = level[v]

        def reach(seeds, allowed):
            seen = set(seeds)
            frontier = list(seeds)
            while frontier:
                nxt = []
                for u in frontier:
                    for x in nb[u]:
                        if x not in seen and allowed(x):
                            seen.add(x)
                            nxt.append(x)
                frontier = nxt
            return seen

        ball = reach([v], lambda x: abs(level[x] - lv) <= radius)
        wide = reach([v], lambda x: abs(level[x] - lv) <= 2 * radius)
        shell = wide - ball
        exits, done = [], set()
        for u in sorted(shell):
            if u not in done:
                done |= reach([u], lambda x: x in shell)
                exits.append(u)
        if len(exits) < 3:  # no branching: the arms are not needed
            return []
        spans, arms = [], []  # exits in one component of G - ball share its arm: searched once
        for u in exits:
            arm = next((a for a in arms if u in a[0]), None)
            if arm is None:
                nodes = reach([u], lambda x: x not in ball)
                values = level[sorted(nodes)]
                arm = (nodes, max(values.max(), lv) - min(values.min(), lv))
                arms.append(arm)
            spans.append(arm[1])
        return spans

    def ends_at(self, v):
        """Largest significance of the limbs and loops with an end at node ``v``."""
        vals = []
        for j, d in enumerate(self.diagrams):
            hit = ((d.nodes[:, 0] == v) | (d.nodes[:, 1] == v)) & (d.kind != "component")
            vals += [(float(d.significance[i]), bool(d.significant[i]))
                     for i in np.flatnonzero(hit)]
            vals += [(value, value > thr) for top, merge, value, thr in self.trunks[j]
                     if v in (top, merge)]
        return self._best(vals)

    def branch(self, v, nb):
        """Smaller of the arm span and the largest feature ending at ``v`` (module notes)."""
        arm, arm_ok = self.at_node(v, nb)
        end, end_ok = self.ends_at(v)
        return min(arm, end), arm_ok and end_ok

    def flare(self, chain, end):
        """Significance of the limb or trunk born at the flare's leaf (module notes)."""
        leaf = chain[0]
        vals = []
        for j, d in enumerate(self.diagrams):
            born = np.flatnonzero(((d.kind == "down") | (d.kind == "up")) & (d.nodes[:, 0] == leaf))
            if born.size:
                i = int(born[np.argmax(d.significance[born])])
                vals.append((float(d.significance[i]), bool(d.significant[i])))
            vals += [(value, value > thr) for top, _, value, thr in self.trunks[j]
                     if top == leaf]
        return self._best(vals)


def _region(nb, level, extreme, merge):
    """The nodes reached from ``extreme`` through nodes strictly beyond ``merge``'s level (on
    ``extreme``'s side), the extreme first and the rest in increasing order."""
    sign = 1.0 if level[extreme] > level[merge] else -1.0
    cut = level[merge]
    seen, todo = {extreme}, [extreme]
    while todo:
        u = todo.pop()
        for w in nb[u]:
            if w not in seen and sign * (level[w] - cut) > 0:
                seen.add(w)
                todo.append(w)
    seen.discard(extreme)
    return (int(extreme), *sorted(int(x) for x in seen))


def significance_of(graph):
    """The graph's Significance (cached on the graph), or None without lens levels."""
    cached = getattr(graph, "_significance_cache", None)
    if cached is not None:
        return cached or None
    try:
        diagrams = graph_diagrams(graph)
    except (ParameterError, KeyError, IndexError, TypeError, ValueError):
        diagrams = None  # a hand-made graph whose parameters do not describe its cover
    result = Significance(graph, diagrams) if diagrams else False
    graph._significance_cache = result
    return result or None


#: Radius of the ball around a node whose exits are counted as its directions, as a share of
#: the resolution threshold: a quarter, the uncertainty of one end's level (the threshold
#: holds the uncertainty of both ends, twice over; see ``resolution_threshold``).
BRANCH_RADIUS = 0.25
