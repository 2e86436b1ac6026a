"""A small drawing of a LensGraph in plain SVG text, for notebooks (no matplotlib).

:func:`graph_svg` places the nodes by the graph's layout
(:func:`lenswork.graph.graph_layout`), draws every edge as a line (wider for a
larger Jaccard weight) and every node as a circle whose *area* grows with its
member count and whose colour is the node mean of the first lens on a
three-stop ramp (:data:`RAMP`, dark blue -> teal -> ochre; a node without a
finite mean is grey). Each circle carries a ``<title>`` (node id, rows, lens
mean) that a browser shows on hover. :func:`graph_html` puts a summary table
beside the drawing; it is what ``LensGraph._repr_html_`` shows.

The graph is read duck-typed through its public attributes, so this module
does not import the LensGraph module.
"""

from __future__ import annotations

import html

import numpy as np

from ._layout import graph_layout

__all__ = ["DRAW_MAX_NODES", "RAMP", "graph_html", "graph_svg", "ramp_colour"]

#: The colour ramp: (position in [0, 1], (r, g, b)); colours between stops are mixed linearly.
RAMP = ((0.0, (38, 52, 110)), (0.5, (36, 150, 140)), (1.0, (222, 170, 60)))
#: Colour of a node with no finite lens mean.
MISSING = "#b0b0b0"
#: Graphs with more nodes are summarised in HTML without a drawing (the layout gets slow).
DRAW_MAX_NODES = 2000
_SVG_NS = "http://www.w3.org/2000/svg"


def ramp_colour(t):
    """The ramp colour at ``t`` in [0, 1] as ``#rrggbb`` (clipped; NaN gives grey).

    Examples
    --------
    >>> ramp_colour(0.0), ramp_colour(0.5), ramp_colour(1.0), ramp_colour(float("nan"))
    ('#26346e', '#24968c', '#deaa3c', '#b0b0b0')
    """
    if not np.isfinite(t):
        return MISSING
    t = min(max(float(t), 0.0), 1.0)
    for (t0, c0), (t1, c1) in zip(RAMP, RAMP[1:]):
        if t <= t1:
            w = (t - t0) / (t1 - t0)
            rgb = [round(a + w * (b - a)) for a, b in zip(c0, c1)]
            return "#" + "".join(f"{v:02x}" for v in rgb)
    return "#" + "".join(f"{v:02x}" for v in RAMP[-1][1])


def _fmt(x):
    return f"{x:.1f}".rstrip("0").rstrip(".") if np.isfinite(x) else "0"


def graph_svg(graph, *, width=420, height=320, layout="auto", random_state=0):
    """An SVG drawing of the graph as text: circles for nodes, lines for edges.

    Parameters
    ----------
    graph : LensGraph
        Read through its public attributes (``node_sizes``, ``node_stats``,
        ``lens_columns``, ``edge_index``, ``edge_jaccard``, ``n_nodes``) and
        laid out with :func:`lenswork.graph.graph_layout`.
    width, height : int, default=420, 320
        Size of the drawing in pixels (the legend takes 28 more at the bottom).
    layout : {"auto", "level", "lens", "spring", "spectral"}, default="auto"
    random_state : int, default=0
        Passed to the layout.

    Returns
    -------
    str
        One ``<svg>`` element (SVG 1.1, well-formed XML) with one ``<circle>``
        per node, in node order, and one ``<line>`` per edge.

    Notes
    -----
    Node radius ``r = 3 + 11 sqrt(size / max size)`` pixels, so the area is
    about proportional to the member count. Colour: the node mean of the first
    lens, scaled to [0, 1] over the nodes, on :data:`RAMP`. Cost: the layout's
    (see :func:`graph_layout`) plus O(V + E) text.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> stats = {"h": np.array([[0.0, 0, 0], [1.0, 1, 1], [2.0, 2, 2]])}
    >>> g = LensGraph(sp.csr_matrix(np.eye(3, dtype=int)), [[0], [1], [2]], [[0, 1], [1, 2]],
    ...               [1, 1], stats, lens_columns=["h"])
    >>> svg = graph_svg(g)
    >>> svg.startswith("<svg"), svg.count("<circle "), svg.count("<line ")
    (True, 3, 2)
    """
    V = int(graph.n_nodes)
    sizes = np.asarray(graph.node_sizes, dtype=np.float64)
    lens = graph.lens_columns[0] if graph.lens_columns else None
    means = (np.asarray(graph.node_stats[lens], dtype=np.float64)[:, 0] if lens is not None
             else np.full(V, np.nan))
    pos = np.asarray(graph_layout(graph, method=layout, random_state=random_state),
                     dtype=np.float64).reshape(V, 2)
    r_min, r_max = 3.0, 14.0
    biggest = sizes.max() if V and sizes.max() > 0 else 1.0
    radius = r_min + (r_max - r_min) * np.sqrt(np.clip(sizes, 0, None) / biggest)
    margin = r_max + 2.0
    xy = np.zeros((V, 2))
    for axis, extent in ((0, width), (1, height)):
        p = pos[:, axis] if V else np.zeros(0)
        span = np.ptp(p) if p.size else 0.0
        room = extent - 2 * margin
        xy[:, axis] = (margin + room / 2 if span == 0 or not np.isfinite(span)
                       else margin + (p - p.min()) / span * room)
    xy[:, 1] = height - xy[:, 1]  # SVG's y runs down; larger lens values up
    finite = means[np.isfinite(means)]
    lo, hi = (finite.min(), finite.max()) if finite.size else (np.nan, np.nan)
    t = (means - lo) / (hi - lo) if finite.size and hi > lo else np.where(
        np.isfinite(means), 0.5, np.nan)
    total = height + 28
    parts = [f'<svg xmlns="{_SVG_NS}" width="{width}" height="{total}" '
             f'viewBox="0 0 {width} {total}" class="lenswork-graph">',
             '<g stroke="#8c8c8c" stroke-opacity="0.8">']
    jaccard = np.asarray(graph.edge_jaccard, dtype=np.float64)
    for (a, b), w in zip(np.asarray(graph.edge_index, dtype=np.int64), jaccard):
        stroke = 1.0 + 2.0 * (w if np.isfinite(w) else 0.0)
        parts.append(f'<line x1="{_fmt(xy[a, 0])}" y1="{_fmt(xy[a, 1])}" x2="{_fmt(xy[b, 0])}" '
                     f'y2="{_fmt(xy[b, 1])}" stroke-width="{stroke:.2f}"/>')
    parts.append('</g><g stroke="#ffffff" stroke-width="0.8">')
    for a in range(V):
        label = f"node {a}: {int(sizes[a])} rows"
        if lens is not None:
            label += f", {lens} mean {means[a]:.4g}"
        parts.append(f'<circle cx="{_fmt(xy[a, 0])}" cy="{_fmt(xy[a, 1])}" '
                     f'r="{radius[a]:.1f}" fill="{ramp_colour(t[a])}">'
                     f"<title>{html.escape(label)}</title></circle>")
    parts.append("</g>")
    if lens is not None and finite.size:
        stops = "".join(f'<stop offset="{p:g}" stop-color="{ramp_colour(p)}"/>'
                        for p, _ in RAMP)
        y0 = height + 8
        parts.append(
            f'<defs><linearGradient id="lenswork-ramp">{stops}</linearGradient></defs>'
            f'<rect x="{margin:.0f}" y="{y0}" width="80" height="8" '
            f'fill="url(#lenswork-ramp)"/>'
            f'<text x="{margin + 86:.0f}" y="{y0 + 8}" font-size="11" '
            f'font-family="sans-serif" fill="#444444">'
            f"{html.escape(f'{lens} node mean {lo:.3g} .. {hi:.3g}; size = rows')}</text>"
        )
    parts.append("</svg>")
    return "".join(parts)


def graph_html(graph, **kwargs):
    """A summary table and the SVG drawing side by side, as HTML (``LensGraph._repr_html_``).

    Parameters
    ----------
    graph : LensGraph
    **kwargs
        Passed to :func:`graph_svg`.

    Returns
    -------
    str
        A ``<div>`` with a ``<table>`` (the significant counts first, then
        rows, nodes, edges, rows in no node, components, raw loops, holes
        where they differ, raw branch points and flares, lens and data
        columns) and, up to :data:`DRAW_MAX_NODES` nodes, the ``<svg>``
        drawing.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> g = LensGraph(sp.csr_matrix(np.eye(2, dtype=int)), [[0], [1]], [[0, 1]], [1],
    ...               {"h": np.array([[0.0, 0, 0], [1.0, 1, 1]])}, lens_columns=["h"])
    >>> text = graph_html(g)
    >>> text.count("<tr>"), text.count("<circle")
    (11, 2)
    """
    s = graph.summary()
    rows = [
        ("significant" if s.significance is not None else "no significance", s.headline()),
        ("rows", f"{int(graph.n_rows):,}"),
        ("nodes", f"{int(graph.n_nodes):,}"),
        ("edges", f"{int(graph.n_edges):,}"),
        ("rows in no node", f"{int(s.n_unassigned):,}"),
        ("components", str(s.n_components)),
        ("loops (raw, E - V + C)", str(s.loops)),
    ]
    if s.holes != s.loops:
        rows.append(("holes (nerve b1)", "not computed" if s.holes is None else str(s.holes)))
    rows += [
        ("branch points (raw, degree >= 3)", str(len(s.branch_points))),
        ("flares (raw)", str(s.n_flares)),
        ("lens columns", ", ".join(graph.lens_columns) or "-"),
        ("data columns", ", ".join(graph.data_columns) or "-"),
    ]
    body = "".join(
        f'<tr><th style="text-align:left">{html.escape(k)}</th>'
        f'<td style="text-align:left">{html.escape(v)}</td></tr>'
        for k, v in rows
    )
    table = (f'<table class="lenswork-graph-summary"><caption>lenswork graph</caption>'
             f"<tbody>{body}</tbody></table>")
    if graph.n_nodes > DRAW_MAX_NODES:
        drawing = (f"<p>{int(graph.n_nodes):,} nodes: too many to draw inline (more than "
                   f"{DRAW_MAX_NODES:,}); use graph.draw().</p>")
    elif graph.n_nodes == 0:
        drawing = "<p>no nodes to draw</p>"
    else:
        drawing = graph_svg(graph, **kwargs)
    return (f'<div style="display:flex;gap:1.5em;align-items:flex-start">{table}'
            f"<div>{drawing}</div></div>")
