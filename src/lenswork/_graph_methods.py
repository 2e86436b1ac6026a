"""Convenience methods that live above their data objects: writers and plots.

The data object (:mod:`lenswork.graph._lensgraph`) imports neither its file
writers (:mod:`lenswork.graph.io`) nor its plots (:mod:`lenswork.plot`), so
imports run one way; the package root imports this module, which attaches
thin methods calling the free functions (as ``networkx.write_graphml(G, path)``
is a free function over the graph). ``graph.write_graphml(path)`` and
``write_graphml(graph, path)`` are the same call. The same holds for the
``plot`` methods of StabilityMap, BootstrapResult and ViewComparison: the
result objects never import :mod:`lenswork.plot`; matplotlib is imported on
the first call.
"""

from __future__ import annotations

from .bootstrap import BootstrapResult
from .compare import ViewComparison
from .graph import LensGraph, write_graph_json, write_graphml, write_memberships
from .probe import StabilityMap

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
    """Draw the graph (see :func:`lenswork.plot.draw_graph`); imports matplotlib on first use."""
    from .plot._graph import draw_graph

    return draw_graph(self, path=path, **kwargs)


LensGraph.write_graphml = _write_graphml
LensGraph.write_json = _write_json
LensGraph.write_memberships = _write_memberships
LensGraph.draw = _draw


def _stability_plot(self, paths=None, features=None):
    """Draw one heat map per feature type; write to ``paths`` or return the figure."""
    from .plot._stability import stability_figure, stability_sheet
    from .plot._style import as_paths

    if paths is None:
        return stability_figure(self, features)
    return stability_sheet(self, as_paths(paths), features)


def _bootstrap_plot(self, paths=None):
    """Bar charts of the count distributions; write to ``paths`` or return the figure."""
    from .plot._stability import bootstrap_figure, bootstrap_sheet
    from .plot._style import as_paths

    if paths is None:
        return bootstrap_figure(self)
    return bootstrap_sheet(self, as_paths(paths))


def _comparison_plot(self, paths=None):
    """Views side by side, each coloured by the next view's lens; write or return the figure."""
    from .plot._compare import comparison_figure, comparison_sheet
    from .plot._style import as_paths

    if paths is None:
        return comparison_figure(self)
    return comparison_sheet(self, as_paths(paths))


StabilityMap.plot = _stability_plot
BootstrapResult.plot = _bootstrap_plot
ViewComparison.plot = _comparison_plot
