"""Drawing of a LensGraph: nodes sized by rows, coloured by a lens or data column."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .._errors import ParameterError
from ._style import ACCENT, ACCENT_2, GRID, INK, LENS_CMAP, MUTED, PAPER, figure, save, style

__all__ = ["draw_graph"]

#: Node marker areas (points^2): smallest node and the extra area of the largest.
_NODE_AREA_MIN = 16.0
_NODE_AREA_SPAN = 340.0


def draw_graph(graph, path=None, *, color=None, stat="mean", layout="auto", ax=None, title=None,
               node_scale=1.0, labels=False, features=True, random_state=0, data=None,
               level=None, values=None, highlight=None, counts=True):
    """Draw a LensGraph in the house style; PNG or SVG by the file ending.

    Parameters
    ----------
    graph : LensGraph
    path : str or Path, optional
        Write the figure here (``.png`` or ``.svg``, atomically) and close it.
    color : str, optional
        Lens or data column whose node ``stat`` colours the nodes, or
        ``"size"``. Default: the first lens. With ``data``, any column of the
        point cloud (feature or passthrough, numeric or categorical).
    stat : {"mean", "min", "max"}, default="mean"
        With ``data`` also ``"median"``, ``"std"`` and ``"share"`` (the share of
        each node's rows whose value is ``level``; the default for a
        categorical column). See :func:`lenswork.contrast.node_column_values`.
    layout : {"auto", "level", "lens", "spring", "spectral"} or ndarray, default="auto"
        A layout name (see :func:`lenswork.graph.graph_layout`) or an array of
        shape (n_nodes, 2).
    ax : matplotlib Axes, optional
        Draw into this axes instead of a new figure.
    title : str, optional
    node_scale : float, default=1.0
        Multiplies every node area (area is proportional to the member count).
    labels : bool, default=False
        Write node ids beside the nodes.
    features : bool, default=True
        Mark the significant features of the graph summary, and only those
        (small features stay unmarked): the edges of a significant loop drawn
        over in the accent colour; the edges of a significant flare (up to its
        branch point) or limb (tip to join, a shortest path) in the second
        accent, its tip ringed; a significant branch point ringed in the
        accent. Each is labelled as the summary labels it (``flare:2``).
    random_state : int, default=0
        Passed to the layout.
    data : PointCloud or Workspace, optional
        The rows the graph was built on: ``color`` may then name any of its
        columns, the node statistic computed from the memberships.
    level : str, optional
        The level whose share colours the nodes (categorical ``color``).
    values : array-like of shape (n_nodes,), optional
        Per-node values to colour by (``color`` then only labels the colour
        bar); NaN nodes are drawn grey.
    highlight : sequence of int, optional
        Nodes to ring in the second accent colour (a feature's nodes).
    counts : bool, default=True
        Title the figure with the significant counts (the summary's first
        line, :meth:`GraphSummary.headline`) and write the raw cycle and
        degree counts under it.

    Returns
    -------
    matplotlib.figure.Figure, or Path when ``path`` is given

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> M = sp.csr_matrix(np.eye(3, dtype=int))
    >>> stats = {"h": np.array([[0.0, 0, 0], [1.0, 1, 1], [2.0, 2, 2]])}
    >>> g = LensGraph(M, [[0], [1], [2]], [[0, 1], [1, 2]], [1, 1], stats, lens_columns=["h"])
    >>> fig = draw_graph(g)
    >>> len(fig.axes)  # the graph and its colourbar
    2
    >>> from lenswork import PointCloud
    >>> cloud = PointCloud.from_array(np.array([[1.0], [2.0], [3.0]]), feature_names=["v"],
    ...                               passthrough={"kind": np.array(["a", "b", "b"], dtype=object)})
    >>> fig = draw_graph(g, color="kind", data=cloud, level="b", highlight=[2])
    >>> fig.axes[1].get_ylabel()
    'share of kind = b'
    """
    from matplotlib.collections import LineCollection

    values, bar_label, color = _colour_values(graph, color, stat, data, level, values)
    hl = np.asarray([int(v) for v in (() if highlight is None else highlight)], dtype=np.int64)
    bad = hl[(hl < 0) | (hl >= graph.n_nodes)]
    if bad.size:
        raise ParameterError(
            f"The 'highlight' nodes must lie in 0..{graph.n_nodes - 1}; got {int(bad[0])}."
        )
    method = layout if isinstance(layout, str) else "given"
    if isinstance(layout, str):  # the graph's own layout rule (graph/_layout.py)
        method = graph.layout_method(layout)
        pos = graph.layout(method=method, random_state=random_state)
    else:
        pos = np.asarray(layout, dtype=np.float64)
        if pos.shape != (graph.n_nodes, 2):
            raise ParameterError(
                f"A given layout must have shape ({graph.n_nodes}, 2), one position per node; "
                f"got {pos.shape}."
            )
    with style():
        if ax is None:
            fig, ax = figure(figsize=(6.4, 5.2))
        else:
            fig = ax.figure
        sizes = graph.node_sizes.astype(np.float64)
        top = sizes.max() if sizes.size else 1.0
        area = node_scale * (_NODE_AREA_MIN + _NODE_AREA_SPAN * sizes / top)
        if graph.n_edges:
            seg = pos[graph.edge_index]
            widths = 0.6 + 3.4 * graph.edge_jaccard
            ax.add_collection(LineCollection(seg, colors=MUTED, linewidths=widths, alpha=0.75,
                                             zorder=1, capstyle="round"))
        order = np.argsort(-sizes, kind="stable")  # small nodes drawn on top of large ones
        finite = np.isfinite(values)
        lo = values[finite].min() if finite.any() else 0.0
        hi = values[finite].max() if finite.any() else 1.0
        if bar_label.startswith("share of "):
            lo, hi = 0.0, 1.0
        if hi <= lo:
            lo, hi = lo - 0.5, hi + 0.5
        order = order[finite[order]]
        gone = np.flatnonzero(~finite)
        if gone.size:  # nodes with no value of the column: grey
            ax.scatter(pos[gone, 0], pos[gone, 1], s=area[gone], c=GRID, edgecolors=MUTED,
                       linewidths=0.5, zorder=2)
        points = ax.scatter(pos[order, 0], pos[order, 1], s=area[order], c=values[order],
                            cmap=LENS_CMAP, vmin=lo, vmax=hi, edgecolors=INK, linewidths=0.5,
                            zorder=2)
        if hl.size:
            ax.scatter(pos[hl, 0], pos[hl, 1], s=area[hl] * 2.4, facecolors="none",
                       edgecolors=ACCENT_2, linewidths=1.6, zorder=3)
        summary = graph.summary()
        if features:
            _mark_significant(ax, summary, pos, area)
        if labels:
            for a in range(graph.n_nodes):
                ax.annotate(str(a), pos[a], xytext=(4, 3), textcoords="offset points",
                            fontsize=6, color=INK, zorder=4)
        bar = fig.colorbar(points, ax=ax, fraction=0.045, pad=0.02)
        bar.set_label(bar_label)
        bar.outline.set_edgecolor(GRID)
        ax.margins(0.08)
        ax.autoscale_view()
        _axes_for(ax, graph, method)
        name = title or f"Mapper graph of {', '.join(graph.lens_columns)}"
        if counts:
            word = "significant" if summary.significance is not None else "no significance"
            ax.set_title(f"{name}\n{word}: {summary.headline(' · ')}", loc="left", pad=16)
            raw = " · ".join([
                _count(summary.n_nodes, "node"), _count(summary.n_edges, "edge"),
                f"raw: {_count(summary.loops, 'cycle')} (b1)",
                f"{_count(len(summary.branch_points), 'node')} of degree ≥ 3",
                _count(summary.n_flares, "leaf chain"),
                f"{summary.n_unassigned:,} rows in no node",
            ])
            ax.text(0.0, 1.012, raw, transform=ax.transAxes, ha="left", va="bottom",
                    fontsize=7, color=MUTED)
        else:
            ax.set_title(name, loc="left", pad=6)
        ax.set_facecolor(PAPER)
    if path is not None:
        return save(fig, Path(path))
    return fig


def _colour_values(graph, color, stat, data, level, values):
    """(per-node values, colour-bar label, colour name) for draw_graph."""
    if values is not None:
        values = np.asarray(values, dtype=np.float64).ravel()
        if values.shape != (graph.n_nodes,):
            raise ParameterError(
                f"The 'values' to colour by need one value per node ({graph.n_nodes}); got "
                f"{values.size}."
            )
        return values, str(color or "value"), color
    color = color or graph.lens_columns[0]
    in_graph = color == "size" or color in graph.node_stats
    if data is not None and (not in_graph or stat not in ("mean", "min", "max")
                             or level is not None):
        from ..columns import node_column_values

        values, label = node_column_values(graph, data, color, stat, level=level)
        return values, label, color
    if level is not None or stat not in ("mean", "min", "max"):
        raise ParameterError(
            f"Colouring by {stat!r} or by the share of a level needs the rows: pass data= (the "
            f"PointCloud or Workspace the graph was built on)."
        )
    values = graph.node_values(color, stat)
    return values, (f"{color}" if color == "size" else f"{color} (node {stat})"), color


def _mark_significant(ax, summary, pos, area):
    """Outline the significant loops, ring the tails and branch points, label each (legend)."""
    from matplotlib.collections import LineCollection
    from matplotlib.lines import Line2D

    keys, names = [], []
    labelled = [(lab, f) for lab, f in summary.labelled() if f.significant]
    loops = [f for _, f in labelled if f.kind == "loop"]
    if loops:
        seg = [pos[[f.nodes[i], f.nodes[(i + 1) % len(f.nodes)]]]
               for f in loops for i in range(len(f.nodes))]
        ax.add_collection(LineCollection(seg, colors=ACCENT, linewidths=4.5, alpha=0.55,
                                         zorder=1.5, capstyle="round"))
        keys.append(Line2D([], [], color=ACCENT, linewidth=4.5, alpha=0.55))
        names.append("significant hole" if len(summary.thresholds) > 1 else "significant loop")
    tails = [(lab, f) for lab, f in labelled if f.kind in ("flare", "limb")]
    if tails:
        paths = [summary.tail_path(f) for _, f in tails]
        seg = [pos[[a, b]] for p in paths for a, b in zip(p[:-1], p[1:], strict=True)]
        ax.add_collection(LineCollection(seg, colors=ACCENT_2, linewidths=4.5, alpha=0.45,
                                         zorder=1.5, capstyle="round"))
        ring = np.unique([f.nodes[0] for _, f in tails])
        ax.scatter(pos[ring, 0], pos[ring, 1], s=area[ring] * 2.4, facecolors="none",
                   edgecolors=ACCENT_2, linewidths=1.6, zorder=3)
        keys.append(Line2D([], [], color=ACCENT_2, linewidth=4.5, alpha=0.6, marker="o",
                           markersize=8, markerfacecolor="none", markeredgecolor=ACCENT_2,
                           markeredgewidth=1.6))
        names.append("significant flare / limb (tip ringed)")
    bps = [f.nodes[0] for _, f in labelled if f.kind == "branch"]
    if bps:
        ax.scatter(pos[bps, 0], pos[bps, 1], s=area[bps] * 1.9, facecolors="none",
                   edgecolors=ACCENT, linewidths=1.4, zorder=3)
        keys.append(Line2D([], [], linestyle="none", marker="o", markersize=7,
                           markerfacecolor="none", markeredgecolor=ACCENT, markeredgewidth=1.4))
        names.append("significant branch point")
    stacked = {}  # labels at one node are stacked, not overprinted
    for lab, f in labelled:
        at = f.nodes[0] if f.kind != "loop" else f.nodes[int(np.argmax(pos[list(f.nodes), 1]))]
        k = stacked[at] = stacked.get(at, -1) + 1
        gap = 0.5 * np.sqrt(area[at]) + 2.0  # beside the marker (and its ring), not on it
        ax.annotate(lab, pos[at], xytext=(gap, 2 + 9 * k), textcoords="offset points", fontsize=7,
                    color=ACCENT_2 if f.kind in ("flare", "limb") else ACCENT, zorder=5,
                    fontweight="bold")
    if keys:
        ax.legend(keys, names, loc="best", handletextpad=0.3, borderaxespad=0.2, fontsize=7)


def _count(n, word):
    return f"{n} {word}{'' if n == 1 else 's'}"


def _axes_for(ax, graph, method):
    """Axis dressing: the lens axis for level and lens layouts, none otherwise."""
    if method == "level":
        ax.set_ylabel(f"{graph.lens_columns[0]} (node mean)")
        ax.set_xticks([])
        ax.spines["bottom"].set_visible(False)
        ax.yaxis.grid(True, color=GRID, linewidth=0.6, zorder=0)
        ax.set_axisbelow(True)
    elif method == "lens" and len(graph.lens_columns) >= 2:
        ax.set_xlabel(f"{graph.lens_columns[0]} (node mean)")
        ax.set_ylabel(f"{graph.lens_columns[1]} (node mean)")
        ax.grid(True, color=GRID, linewidth=0.6, zorder=0)
        ax.set_axisbelow(True)
    else:
        ax.set_xticks([])
        ax.set_yticks([])
        for side in ("left", "bottom"):
            ax.spines[side].set_visible(False)
