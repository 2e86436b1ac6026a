"""Convenience methods of LensGraph that live above it: its writers and its drawing.

The data object (:mod:`lenswork.graph._lensgraph`) imports neither its file
writers (:mod:`lenswork.graph.io`) nor its plots (:mod:`lenswork.plot`), so
imports run one way; the package root imports this module, which attaches
thin methods calling the free functions (as ``networkx.write_graphml(G, path)``
is a free function over the graph). ``graph.write_graphml(path)`` and
``write_graphml(graph, path)`` are the same call.
"""

from __future__ import annotations

from .graph import LensGraph, write_graph_json, write_graphml, write_memberships

__all__: list[str] = []


def _write_graphml(self, path):
    """Write GraphML (typed node and edge attributes) atomically; see :func:`write_graphml`."""
    return write_graphml(self, path)


def _write_json(self, path):
    """Write the JSON form (nodes, edges, membership, params, provenance) atomically."""
    return write_graph_json(self, path)


def _write_memberships(self, path):
    """Write a CSV of row id -> node, one line per membership, atomically."""
    return write_memberships(self, path)


def _draw(self, path=None, **kwargs):
    """Draw the graph (see :func:`lenswork.plot.draw_graph`); matplotlib is imported on first use."""
    from .plot._graph import draw_graph

    return draw_graph(self, path=path, **kwargs)


LensGraph.write_graphml = _write_graphml
LensGraph.write_json = _write_json
LensGraph.write_memberships = _write_memberships
LensGraph.draw = _draw
