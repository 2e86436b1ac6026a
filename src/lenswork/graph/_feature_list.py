"""The features of a graph (:class:`GraphFeature`): components, loops, branch points, flares,
limbs and paths, with their rows, lens spans and significance.

The walks that find them are in :mod:`lenswork.graph._walk`, their
significance in :mod:`lenswork.graph._significance`; the summary
(:mod:`lenswork.graph._summary`) lists them.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ._significance import significance_of
from ._walk import (
    chains,
    components_by_size,
    fundamental_cycles,
    neighbour_lists,
    row_counter,
    structure,
)

__all__ = ["GraphFeature", "graph_features", "graph_limbs"]



@dataclass(frozen=True)
class GraphFeature:
    """One feature of the graph.

    Attributes
    ----------
    kind : {"component", "loop", "branch", "flare", "path", "limb"}
    nodes : tuple of int
    rows : int
        Distinct rows in the feature's nodes.
    lens_range : dict of str -> (float, float)
        Range of each lens spanned by the feature's nodes.
    attached_to : int or None
        For a flare: the branch point it leads to.
    significance : float or None
        Share of the lens range the feature spans (module notes); None for
        components, paths and graphs without lens levels.
    significant : bool or None
        Significance above the cover's resolution threshold.
    """

    kind: str
    nodes: tuple
    rows: int
    lens_range: dict
    attached_to: int | None = None
    significance: float | None = None
    significant: bool | None = None

    def to_dict(self):
        """JSON-ready form."""
        return {
            "kind": self.kind, "nodes": list(self.nodes), "rows": self.rows,
            "lens_range": {k: [float(a), float(b)] for k, (a, b) in self.lens_range.items()},
            "attached_to": self.attached_to,
            "significance": None if self.significance is None else float(self.significance),
            "significant": self.significant,
        }


def graph_features(graph):
    """Every feature of a LensGraph: components, loops, branch points, flares, paths.

    With lens levels (an interval cover), loops, branch points and flares
    carry their significance (:mod:`lenswork.graph._significance`).

    Examples
    --------
    >>> from lenswork import build_graph
    >>> t = np.linspace(0, 2 * np.pi, 400, endpoint=False)
    >>> X = np.column_stack([np.cos(t), np.sin(t)])
    >>> sorted({f.kind for f in graph_features(build_graph(X[:, :1], X))})
    ['component', 'loop']
    """
    n_comp, labels, deg, nb = structure(graph)
    rows_of = row_counter(graph)

    def lens_range(nodes):
        idx = np.asarray(nodes, dtype=np.int64)
        return {
            name: (float(graph.node_stats[name][idx, 1].min()),
                   float(graph.node_stats[name][idx, 2].max()))
            for name in graph.lens_columns
        }

    def feature(kind, nodes, attached_to=None):
        nodes = tuple(int(x) for x in nodes)
        return GraphFeature(kind, nodes, rows_of(nodes), lens_range(nodes), attached_to)

    sig = significance_of(graph)
    features = [feature("component", nodes) for nodes in components_by_size(labels, n_comp)]
    flares, paths = chains(nb, deg)
    if sig is None:
        features += [feature("loop", cycle) for cycle in fundamental_cycles(nb, labels, n_comp)]
        features += [feature("branch", (int(v),)) for v in np.flatnonzero(deg >= 3)]
        features += [feature("flare", chain, attached_to=int(end)) for chain, end in flares]
    else:
        for cycle, value, ok in sig.loops(nb):
            features.append(replace(feature("loop", cycle), significance=value, significant=ok))
        for v in np.flatnonzero(deg >= 3):
            value, ok = sig.branch(int(v), nb)
            features.append(replace(feature("branch", (int(v),)), significance=value,
                                    significant=ok))
        for chain, end in flares:
            value, ok = sig.flare(chain, int(end))
            features.append(replace(feature("flare", chain, attached_to=int(end)),
                                    significance=value, significant=ok))
    features += [feature("path", chain) for chain in paths]
    return tuple(features)


def graph_limbs(graph, sig):
    """The limbs of a LensGraph (parts hanging off the rest), from its Significance ``sig``.

    Examples
    --------
    >>> from lenswork import build_graph
    >>> from lenswork.graph._significance import significance_of
    >>> x = np.linspace(0, 1, 300)[:, None]
    >>> g = build_graph(x, x)
    >>> graph_limbs(g, significance_of(g))
    ()
    """
    rows_of = row_counter(graph)
    nb = neighbour_lists(graph.n_nodes, graph.edge_index)
    out = []
    for nodes, merge, value, ok in sig.limbs(nb):
        idx = np.asarray(nodes, dtype=np.int64)
        spans = {name: (float(graph.node_stats[name][idx, 1].min()),
                        float(graph.node_stats[name][idx, 2].max()))
                 for name in graph.lens_columns}
        out.append(GraphFeature("limb", tuple(int(x) for x in nodes), rows_of(nodes), spans,
                                attached_to=int(merge), significance=value, significant=ok))
    return tuple(out)
