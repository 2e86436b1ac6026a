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

Notebook and ecosystem methods attached here too: ``LensGraph.to_frame``
(:func:`lenswork.graph._tables.graph_frame`), ``LensGraph.to_networkx``
(:func:`lenswork.graph._networkx.to_networkx`), ``LensGraph._repr_html_``
(:func:`lenswork.graph._svg.graph_html`: a summary table and an inline SVG
drawing) and ``_repr_png_`` of StabilityMap, BootstrapResult and
ViewComparison (their ``plot()`` figure rendered to PNG bytes by matplotlib's
Agg canvas). pandas, networkx and matplotlib are imported on the first call.
"""

from __future__ import annotations

from .bootstrap import BootstrapResult
from .compare import ViewComparison
from .graph import LensGraph, write_graph_json, write_graphml, write_memberships
from .graph._networkx import to_networkx
from .graph._svg import graph_html
from .graph._tables import graph_frame
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


def _to_frame(self, what="nodes"):
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
    return graph_frame(self, what)


def _to_networkx(self):
    """The graph as a ``networkx.Graph`` with the node, edge and graph attributes of its GraphML.

    Nodes ``0 .. n_nodes - 1``; equal to ``networkx.read_graphml`` of
    :meth:`write_graphml`'s file with the nodes ``n<i>`` renamed ``i``. Needs
    networkx (a clear error when it is missing).
    """
    return to_networkx(self)


def _graph_repr_html(self):
    """Summary table and a small inline SVG drawing, for notebooks."""
    return graph_html(self)


LensGraph.write_graphml = _write_graphml
LensGraph.write_json = _write_json
LensGraph.write_memberships = _write_memberships
LensGraph.draw = _draw
LensGraph.to_frame = _to_frame
LensGraph.to_networkx = _to_networkx
LensGraph._repr_html_ = _graph_repr_html


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


def _png(self):
    """The ``plot()`` figure as PNG bytes (a notebook shows it); matplotlib's Agg canvas."""
    from .plot._style import png_bytes

    return png_bytes(self.plot())


StabilityMap._repr_png_ = _png
BootstrapResult._repr_png_ = _png
ViewComparison._repr_png_ = _png
