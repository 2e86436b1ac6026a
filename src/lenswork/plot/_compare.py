"""Figure of a view comparison: every view, and every pair of views.

Views (top row)
    One panel per view, lettered A, B, C..., titled with its significant
    structure (the counts :meth:`GraphSummary.headline` gives, as the text
    output does); its raw cycle and degree counts stand under it, named raw.
    Nodes are sized by their row count and coloured by the *next* view's lens
    (the mean rank of that lens over the node's rows; the last view is
    coloured by the first). Where the colours run smoothly along a view, the
    two lenses order the rows alike there; a node whose colour breaks from its
    neighbours holds rows the other view places far apart.

    One lens: the level layout (:func:`lenswork.graph.graph_layout`), with the
    node's cover interval as its height (low to high), so every level is one
    row of the drawing and nodes of one level stand apart. Two lenses: the
    node means of the two lenses; several: the spring layout. Nodes closer
    than 2 % of the panel to another are fanned out on a small circle around
    their common place, so every node shows (the level layout needs none).

Pairs (beside the views for two, below them for more)
    One panel per pair of views: the node correspondence ``M_a^T M_b``
    divided by the size of each node of the first view (the share of its rows
    that each node of the second view holds), headed by the pair's row
    co-membership agreement (ARI and pair Jaccard, the telling score), then
    the induced partition's ARI and VI, the significant features found in
    one view only and the count of small ones, as ``ViewComparison.format_text``
    prints them.
"""

from __future__ import annotations

import textwrap

import numpy as np
from matplotlib.colors import LinearSegmentedColormap
from matplotlib.ticker import MaxNLocator

from ..normalize import normalize
from ._style import ACCENT, INK, LENS_CMAP, MUTED, plt, save, style

__all__: list[str] = []

_SHARE_CMAP = LinearSegmentedColormap.from_list(
    "lenswork_share", ["#f3f1ea", "#cfe3d3", "#8fbf9f", "#2b7a78", "#1f2d4a"]
)
_EDGE = "#b9b3a7"
#: Nodes closer than this share of the panel's range are fanned out.
_CLOSE = 0.02
#: Inches: view panel width and height, pair panel width and height.
_VIEW_W, _VIEW_H = 3.7, 3.2
_PAIR_W, _PAIR_H = 3.9, 2.6
#: Inches: the figure's title band, the band under a pair panel (its axis labels).
_FIG_HEAD, _PAIR_FOOT = 0.62, 0.5
_GAP, _BAR_W, _MARGIN = 0.45, 0.12, 0.25
#: Pair panels per row when they stand below the views.
_PAIR_COLS = 3


def _count(n, word):
    return f"{n} {word}{'' if n == 1 else 's'}"


def _letter(i):
    return chr(ord("A") + i) if i < 26 else f"V{i + 1}"


def _wrap(text, width_in, size, sep=" \u00b7 "):
    """``text`` in lines that fit ``width_in`` inches at font ``size`` (never cut short).

    Lines break at ``sep`` (the dot between counts) where they can, else at spaces.
    """
    chars = max(12, int(width_in * 72 / (0.52 * size)))
    lines = []
    for part in text.split(sep):
        if lines and len(lines[-1]) + len(sep) + len(part) <= chars:
            lines[-1] += sep + part
        else:
            lines.extend(textwrap.wrap(part, chars, break_on_hyphens=False) or [""])
    return "\n".join(lines)


def _rank_colour(cmp, view, by):
    """Node means of the rank of view ``by``'s first lens column over the rows of ``view``."""
    vals = cmp.lens_values[by][:, 0]
    ok = np.isfinite(vals)
    ranks = np.full(vals.shape, np.nan)
    if ok.any():
        ranks[ok] = normalize(vals[ok], "rank")
    g = cmp.graphs[view]
    import scipy.sparse as sp

    M = sp.csr_matrix(g.membership, dtype=np.float64)
    filled = np.where(ok, ranks, 0.0)
    sums = M.T @ filled
    counts = M.T @ ok.astype(np.float64)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(counts > 0, sums / np.maximum(counts, 1), np.nan)


def _fan_out(pos, close=_CLOSE, rounds=6):
    """Positions with near-coincident nodes spread on small circles (every node visible).

    Distances are measured in the panel's own scale (each axis divided by its
    range); nodes within ``close`` of each other are gathered (single linkage)
    and set on a circle around their mean, a group of ``k`` at least ``close``
    apart. Repeated while groups remain, at most ``rounds`` times.
    """
    pos = np.asarray(pos, dtype=np.float64).copy()
    if pos.shape[0] < 2:
        return pos
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components
    from scipy.spatial import cKDTree

    span = np.ptp(pos, axis=0)
    span[span <= 0] = 1.0
    unit = (pos - pos.min(axis=0)) / span
    for _ in range(rounds):
        pairs = cKDTree(unit).query_pairs(close, output_type="ndarray")
        if not len(pairs):
            break
        n = unit.shape[0]
        A = sp.coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
        _, group = connected_components(A, directed=False)
        for g in np.unique(group[np.unique(pairs)]):
            members = np.flatnonzero(group == g)
            k = members.size
            radius = 1.05 * close / (2 * np.sin(np.pi / k)) if k > 2 else 0.55 * close
            angle = np.pi / 2 + 2 * np.pi * np.arange(k) / k
            centre = unit[members].mean(axis=0)
            unit[members] = centre + radius * np.column_stack([np.cos(angle), np.sin(angle)])
    return unit * span + pos.min(axis=0)


def _view_positions(g):
    """(positions, y label, number of levels) of a view's nodes; see the module notes."""
    method = g.layout_method()
    pos = np.asarray(g.layout(method), dtype=np.float64)
    if method == "level" and g.n_nodes:
        level = np.unique(g.node_levels[:, 0], return_inverse=True)[1].ravel()
        pos[:, 1] = level
        return pos, f"cover interval of {g.lens_columns[0]} (low \u2192 high)", \
            int(level.max()) + 1
    return _fan_out(pos), None, None


def _draw_view(ax, cmp, view, by):
    g = cmp.graphs[view]
    pos, ylabel, levels = _view_positions(g)
    colour = _rank_colour(cmp, view, by)
    sizes = g.node_sizes.astype(np.float64)
    # marker diameter (points) no wider than the spacing of the levels / of the nodes
    room = _VIEW_H * 72 / max(levels or np.sqrt(max(g.n_nodes, 1)) * 1.6, 1)
    big = float(np.clip((0.9 if levels else 0.65) * room, 5.0, 14.0))
    small = min(3.0, big)
    diam = small + (big - small) * np.sqrt(sizes / max(sizes.max(), 1))
    if g.n_edges:
        from matplotlib.collections import LineCollection

        ax.add_collection(LineCollection(pos[g.edge_index], colors=_EDGE,
                                         linewidths=0.5 + 2.0 * g.edge_jaccard, zorder=1,
                                         capstyle="round"))
    order = np.argsort(sizes, kind="stable")[::-1]  # small nodes on top
    sc = ax.scatter(pos[order, 0], pos[order, 1], s=diam[order] ** 2, c=colour[order],
                    cmap=LENS_CMAP, vmin=0, vmax=1, edgecolors=INK, linewidths=0.4, zorder=2,
                    plotnonfinite=True)
    ax.set_xticks([])
    ax.set_yticks([])
    for spine in ax.spines.values():
        spine.set_visible(False)
    if ylabel:
        ax.set_ylabel(_wrap(ylabel, _VIEW_H, 7), fontsize=7, color=MUTED)
    ax.margins(0.06)
    ax.autoscale_view()
    return sc


def _stack(ax, lines):
    """Write ``[(text, colour, size, weight)]`` upwards from the top of ``ax``.

    Each text sits on the one below it (annotate relative to its box), so
    wrapped lines of any count never overprint each other.
    """
    anchor, coords, lift = (0.0, 1.0), "axes fraction", 3
    for text, colour, size, weight in lines:
        art = ax.annotate(text, xy=anchor, xycoords=coords, xytext=(0, lift),
                          textcoords="offset points", fontsize=size, color=colour,
                          fontweight=weight, va="bottom", ha="left", linespacing=1.15,
                          annotation_clip=False)
        anchor, coords, lift = (0.0, 1.0), art, 1.5


def _stack_height(lines):
    """Inches that :func:`_stack` needs for ``lines`` (plus a small margin)."""
    points = sum((text.count("\n") + 1) * size * 1.2 + 1.5 for text, _, size, _ in lines)
    return (points + 3) / 72 + 0.08


def _view_lines(cmp, view, width):
    """Title of a view panel, bottom up: its significant counts, then its letter and name."""
    s = cmp.summaries[view]
    word = "significant" if s.significance is not None else "no significance"
    dot = " \u00b7 "
    return [(_wrap(f"{word}: {s.headline(dot)}", width, 7.5), INK, 7.5, "normal"),
            (_wrap(f"{_letter(view)}  {cmp.names[view]}", width, 9), INK, 9, "bold")]


def _view_foot(cmp, view, by, width):
    """Under a view panel: its raw counts, named raw, and what colours it."""
    s = cmp.summaries[view]
    raw = (f"raw: {_count(s.n_nodes, 'node')} \u00b7 {_count(s.loops, 'cycle')} (b1) \u00b7 "
           f"{len(s.branch_points)} of degree \u2265 3 \u00b7 "
           f"{_count(s.n_flares, 'leaf chain')}")
    colour = f"colour: {_letter(by)}'s lens ({cmp.graphs[by].lens_columns[0]}), mean rank"
    lines = [_wrap(raw, width, 6.5), _wrap(colour, width, 6.5)]
    g = cmp.graphs[view]
    if g.layout_method() == "lens":
        lines.append(_wrap(f"x: {g.lens_columns[0]}, y: {g.lens_columns[1]} (node means; nodes "
                           f"within {_CLOSE:.0%} of each other fanned out)", width, 6.5))
    return "\n".join(lines)


def _pair_lines(cmp, p, a, b, width):
    """Header of a pair panel, bottom up; read top down it is format_text's order: the
    co-membership agreement, the induced partition's scores, the significant features in
    one view only, the count of small ones."""
    co = (f"{_letter(a)} vs {_letter(b)}: co-membership ARI {p['co_ari']:.2f} \u00b7 "
          f"pair Jaccard {p['co_jaccard']:.2f}" + (" (trivial)" if p.get("co_trivial") else ""))
    trivial = " (trivial: one block each)" if p.get("trivial") else ""
    only = [f"{f['label']} in {_letter(a)}" for f in p["only_a"]]
    only += [f"{f['label']} in {_letter(b)}" for f in p["only_b"]]
    if len(only) > 5:
        only = [*only[:5], f"{len(only) - 5} more (see comparison.json)"]
    lines = [
        (_wrap(co, width, 8.5), INK, 8.5, "bold"),
        (_wrap(f"{cmp.partition} partition: ARI {p['ari']:.2f} \u00b7 VI {p['vi']:.2f} nats "
               f"({p['rows_compared']:,} rows){trivial}", width, 7), MUTED, 7, "normal"),
        (_wrap("significant in one view only: " + ", ".join(only), width, 7), ACCENT, 7,
         "normal") if only else
        ("every significant feature matched in the other view", MUTED, 7, "normal"),
        (_wrap(f"small features in one view only (not listed): {p['small_only_a']} in "
               f"{_letter(a)}, {p['small_only_b']} in {_letter(b)}", width, 7), MUTED, 7,
         "normal"),
    ]
    return lines[::-1]


def _draw_pair(ax, cmp, a, b):
    C = cmp.correspondence(a, b).toarray().astype(np.float64)
    sizes = np.maximum(cmp.graphs[a].node_sizes, 1)[:, None]
    im = ax.imshow(C / sizes, cmap=_SHARE_CMAP, vmin=0, vmax=1, aspect="auto",
                   interpolation="nearest")
    ax.set_xlabel(f"nodes of {_letter(b)}", fontsize=7)
    ax.set_ylabel(f"nodes of {_letter(a)}", fontsize=7)
    for spine in ax.spines.values():
        spine.set_visible(False)
    ax.tick_params(length=0, labelsize=6)
    ax.xaxis.set_major_locator(MaxNLocator(nbins=6, integer=True))
    ax.yaxis.set_major_locator(MaxNLocator(nbins=6, integer=True))
    return im


def _bar(fig, mappable, rect, label):
    bar = fig.colorbar(mappable, cax=fig.add_axes(rect))
    bar.set_label(label, fontsize=7)
    bar.outline.set_visible(False)
    bar.ax.tick_params(labelsize=6)
    return bar


def _headline(cmp):
    """The figure's first line: the pair's agreement (two views), else its range over pairs."""
    if len(cmp.names) == 2:
        p = cmp.pairs[0]
        co_trivial = " (trivial)" if p.get("co_trivial") else ""
        return (f"{p['a']} vs {p['b']}:  co-membership ARI {p['co_ari']:.2f}  \u00b7  "
                f"pair Jaccard {p['co_jaccard']:.2f}{co_trivial}  ({p['co_rows']:,} rows)")
    scores = [(p["co_ari"], _letter(cmp.names.index(p["a"])), _letter(cmp.names.index(p["b"])))
              for p in cmp.pairs]
    known = [s for s in scores if np.isfinite(s[0])]
    if not known:
        return f"{len(cmp.names)} views of {cmp.graphs[0].n_rows:,} rows"
    lo, hi = min(known), max(known)
    return (f"{len(cmp.names)} views of {cmp.graphs[0].n_rows:,} rows:  co-membership ARI from "
            f"{lo[0]:.2f} ({lo[1]} vs {lo[2]}) to {hi[0]:.2f} ({hi[1]} vs {hi[2]})")


def comparison_figure(cmp):
    """Draw a :class:`~lenswork.ViewComparison`; returns the figure.

    Every view gets a panel and every pair of views a correspondence panel
    with its own header (module notes). Sizes are set in inches, so the
    panels keep their size whatever the number of views, and every header
    band is as tall as its wrapped lines.
    """
    V = len(cmp.names)
    pairs = [(cmp.names.index(p["a"]), cmp.names.index(p["b"]), p) for p in cmp.pairs]
    beside = len(pairs) == 1
    text_w = _VIEW_W - 0.2
    view_lines = [_view_lines(cmp, i, text_w) for i in range(V)]
    feet = [_view_foot(cmp, i, (i + 1) % V, text_w) for i in range(V)]
    pair_lines = [_pair_lines(cmp, p, a, b, _PAIR_W - 0.1) for a, b, p in pairs]
    view_head = max(_stack_height(lines) for lines in view_lines)
    view_foot = max(f.count("\n") + 1 for f in feet) * 6.5 * 1.2 / 72 + 0.12
    pair_cols = 1 if beside else min(_PAIR_COLS, len(pairs))
    pair_rows = -(-len(pairs) // pair_cols)
    pair_heads = [max(_stack_height(pair_lines[t])
                      for t in range(r * pair_cols, min((r + 1) * pair_cols, len(pairs))))
                  for r in range(pair_rows)]
    views_w = V * _VIEW_W + (V - 1) * _GAP + _GAP + _BAR_W + 0.55
    if beside:
        view_head = pair_heads[0] = max(view_head, pair_heads[0])  # panel tops aligned
        W = _MARGIN + views_w + 0.3 + _PAIR_W + _GAP / 2 + _BAR_W + 0.55 + _MARGIN
        H = _FIG_HEAD + view_head + max(_VIEW_H + view_foot, _PAIR_H + _PAIR_FOOT) + 0.1
        pair_tops = [_FIG_HEAD + view_head]
    else:
        pairs_w = pair_cols * _PAIR_W + (pair_cols - 1) * 0.75 + _GAP / 2 + _BAR_W + 0.55
        W = _MARGIN + max(views_w, pairs_w) + _MARGIN
        pair_tops, top = [], _FIG_HEAD + view_head + _VIEW_H + view_foot + 0.15
        for head in pair_heads:
            pair_tops.append(top + head)
            top += head + _PAIR_H + _PAIR_FOOT
        H = top + 0.1

    def rect(left, top, w, h):  # inches from the top-left corner -> figure fractions
        return [left / W, 1 - (top + h) / H, w / W, h / H]

    with style():
        fig = plt.figure(figsize=(W, H))
        sc = None
        for i in range(V):
            left = _MARGIN + 0.25 + i * (_VIEW_W + _GAP)
            ax = fig.add_axes(rect(left, _FIG_HEAD + view_head, _VIEW_W - 0.25, _VIEW_H))
            sc = _draw_view(ax, cmp, i, (i + 1) % V)
            _stack(ax, view_lines[i])
            ax.text(0.0, -0.02, feet[i], transform=ax.transAxes, fontsize=6.5, color=MUTED,
                    va="top", ha="left", linespacing=1.15)
        bar_left = _MARGIN + 0.25 + V * (_VIEW_W + _GAP) - _GAP / 2
        _bar(fig, sc, rect(bar_left, _FIG_HEAD + view_head, _BAR_W, _VIEW_H),
             _wrap("colour: the next view's lens, mean rank over the node's rows", _VIEW_H, 7))
        im = None
        for t, (a, b, _) in enumerate(pairs):
            r, c = divmod(t, pair_cols)
            left = (_MARGIN + views_w + 0.65) if beside else \
                (_MARGIN + 0.35 + c * (_PAIR_W + 0.75))
            ax = fig.add_axes(rect(left, pair_tops[r], _PAIR_W - 0.35, _PAIR_H))
            im = _draw_pair(ax, cmp, a, b)
            _stack(ax, pair_lines[t])
        bar_left = (_MARGIN + views_w + 0.3 + _PAIR_W + _GAP / 4) if beside else \
            (_MARGIN + 0.35 + pair_cols * (_PAIR_W + 0.75) - 0.75 + _GAP / 4)
        _bar(fig, im, rect(bar_left, pair_tops[0], _BAR_W, _PAIR_H),
             _wrap("share of the row node's rows held by the column node", _PAIR_H, 7))
        fig.suptitle(_headline(cmp), x=_MARGIN / W, y=1 - 0.12 / H, fontsize=10,
                     fontweight="bold", color=INK, ha="left", va="top")
        fig.text(_MARGIN / W, 1 - 0.40 / H,
                 f"{V} views of the same rows, lettered A\u2013{_letter(V - 1)}; per view its "
                 f"significant structure, per pair the row co-membership agreement and the "
                 f"node correspondence M_a\u1d40 M_b / node size",
                 fontsize=7.5, color=MUTED, ha="left", va="top")
    return fig


def comparison_sheet(cmp, paths):
    """Draw the comparison and write it to ``paths`` (PNG / SVG by ending); returns the paths."""
    fig = comparison_figure(cmp)
    return [save(fig, p) for p in paths]
