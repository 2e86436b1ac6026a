"""Side-by-side figure of a view comparison.

One panel per view: the graph in its own layout (level layout for one lens),
nodes sized by their row count and coloured by the *other* view's lens (the
mean rank of that lens over the node's rows). Where the colours run smoothly
along a view, the two lenses order the rows alike there; a node whose colour
breaks from its neighbours holds rows the other view places far apart. The
last panel is the node correspondence of the first two views, ``M_a^T M_b``
divided by the size of each node of the first view: the share of its rows
that each node of the second view holds.
"""

from __future__ import annotations

import numpy as np
from matplotlib.colors import LinearSegmentedColormap
from matplotlib.ticker import MaxNLocator

from ..normalize import normalize
from ._style import ACCENT, INK, LENS_CMAP, MUTED, PAPER, plt, save, style

__all__: list[str] = []

_SHARE_CMAP = LinearSegmentedColormap.from_list(
    "lenswork_share", ["#f3f1ea", "#cfe3d3", "#8fbf9f", "#2b7a78", "#1f2d4a"]
)
_EDGE = "#b9b3a7"


def _short(text, width=28):
    return text if len(text) <= width else text[: width - 1] + "\u2026"


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


def _draw_view(ax, cmp, view, by):
    g = cmp.graphs[view]
    pos = np.asarray(g.layout(), dtype=np.float64)
    colour = _rank_colour(cmp, view, by)
    sizes = g.node_sizes.astype(np.float64)
    area = 10 + 150 * np.sqrt(sizes / max(sizes.max(), 1))
    if g.n_edges:
        e = g.edge_index
        widths = 0.5 + 2.0 * g.edge_jaccard
        for (a, b), w in zip(e, widths, strict=True):
            ax.plot(pos[[a, b], 0], pos[[a, b], 1], color=_EDGE, lw=w, zorder=1,
                    solid_capstyle="round")
    order = np.argsort(sizes)[::-1]  # small nodes on top
    sc = ax.scatter(pos[order, 0], pos[order, 1], s=area[order], c=colour[order], cmap=LENS_CMAP,
                    vmin=0, vmax=1, edgecolors=PAPER, linewidths=0.6, zorder=2,
                    plotnonfinite=True)
    s = cmp.summaries[view]
    ax.set_title(f"{_short(cmp.names[view])}: coloured by {_short(cmp.names[by], 22)}",
                 loc="left")
    word = "significant" if s.significance is not None else "no significance"
    dot = " \u00b7 "
    ax.text(0.0, -0.04, f"{word}: {s.headline(dot)}", transform=ax.transAxes,
            fontsize=6.5, color=INK, va="top")
    ax.text(0.0, -0.10,
            f"raw: {s.n_nodes} nodes \u00b7 {s.loops} cycles (b1) \u00b7 "
            f"{len(s.branch_points)} of degree \u2265 3 \u00b7 {s.n_flares} leaf chains",
            transform=ax.transAxes, fontsize=6.5, color=MUTED, va="top")
    ax.set_xticks([])
    ax.set_yticks([])
    for spine in ax.spines.values():
        spine.set_visible(False)
    if len(g.lens_columns) == 1:
        ax.set_ylabel(f"{_short(g.lens_columns[0], 24)} (node mean)", fontsize=7, color=MUTED)
    ax.margins(0.08)
    return sc


def _draw_correspondence(fig, ax, cax, cmp):
    C = cmp.correspondence(0, 1).toarray().astype(np.float64)
    sizes = np.maximum(cmp.graphs[0].node_sizes, 1)[:, None]
    share = C / sizes
    im = ax.imshow(share, cmap=_SHARE_CMAP, vmin=0, vmax=1, aspect="auto",
                   interpolation="nearest")
    ax.set_xlabel(f"nodes of {_short(cmp.names[1], 24)}")
    ax.set_ylabel(f"nodes of {_short(cmp.names[0], 24)}")
    ax.set_title(r"node correspondence $M_a^{T} M_b$ / node size", loc="left")
    for spine in ax.spines.values():
        spine.set_visible(False)
    ax.tick_params(length=0)
    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax.yaxis.set_major_locator(MaxNLocator(integer=True))
    bar = fig.colorbar(im, cax=cax)
    bar.set_label("share of the row node's rows", fontsize=7)
    bar.outline.set_visible(False)
    bar.ax.tick_params(labelsize=6)


def comparison_figure(cmp):
    """Draw a :class:`~lenswork.ViewComparison`; returns the figure."""
    V = len(cmp.names)
    with style():
        fig = plt.figure(figsize=(4.1 * V + 4.6, 4.7))
        grid = fig.add_gridspec(1, V + 4, width_ratios=[1.0] * V + [0.04, 0.22, 0.95, 0.04],
                                left=0.03, right=0.96, top=0.83, bottom=0.09, wspace=0.12)
        axes = [fig.add_subplot(grid[0, i]) for i in range(V)]
        sc = None
        for i in range(V):
            sc = _draw_view(axes[i], cmp, i, (i + 1) % V)
        bar = fig.colorbar(sc, cax=fig.add_subplot(grid[0, V]))
        bar.set_label("other view's lens: mean rank over the node's rows", fontsize=7)
        bar.outline.set_visible(False)
        bar.ax.tick_params(labelsize=6)
        _draw_correspondence(fig, fig.add_subplot(grid[0, V + 2]),
                             fig.add_subplot(grid[0, V + 3]), cmp)
        p = cmp.pairs[0]
        co_trivial = " (trivial)" if p.get("co_trivial") else ""
        fig.suptitle(
            f"{_short(p['a'], 30)} vs {_short(p['b'], 30)}:  co-membership ARI "
            f"{p['co_ari']:.2f}  \u00b7  pair Jaccard {p['co_jaccard']:.2f}{co_trivial}  "
            f"({p['co_rows']:,} rows)",
            x=0.01, ha="left", fontsize=10, fontweight="bold", color=INK)
        trivial = ", trivial: one block each" if p.get("trivial") else ""
        fig.text(0.01, 0.925,
                 f"{cmp.partition} partition: ARI {p['ari']:.2f} \u00b7 VI {p['vi']:.2f} nats "
                 f"({p['rows_compared']:,} rows{trivial})", fontsize=7.5, color=MUTED, ha="left")
        only = [f"{f['label']} only in {_short(p['a'], 24)}" for f in p["only_a"]]
        only += [f"{f['label']} only in {_short(p['b'], 24)}" for f in p["only_b"]]
        if len(only) > 6:
            only = [*only[:6], f"{len(only) - 6} more"]
        small = (f"  (small features in one view only, not listed: {p['small_only_a']} / "
                 f"{p['small_only_b']})")
        fig.text(0.01, 0.885, ("significant: " + "; ".join(only) if only else
                               "every significant feature of each view has a match in the other")
                 + small, fontsize=7.5, color=ACCENT if only else MUTED, ha="left")
    return fig


def comparison_sheet(cmp, paths):
    """Draw the comparison and write it to ``paths`` (PNG / SVG by ending); returns the paths."""
    fig = comparison_figure(cmp)
    return [save(fig, p) for p in paths]
