"""The screen's figure sheet: one card per candidate lens, the correlation map, the ranking.

Layout, top to bottom:

* a title line (rows, features, what was chosen and why the selection stopped);
* one *card* per candidate, in rank order, titled with its rank, name and
  (with the structure probe) its significant loops and branches, never the
  raw cycle counts; then a histogram of the lens over its
  min-max range, with the bins the spread score counts (what a cover sees),
  above the data's first two principal coordinates coloured by the lens's
  rank (so one outlier cannot wash the colours out). Chosen lenses carry the
  accent colour in their title, bars and frame;
* the Spearman correlation map in rank order, the chosen block outlined, and
  beside it the merit and pair merit of every candidate with the reason it was
  or was not taken.

Every figure on the sheet is one of the ranking table's (the cards show its
robust spread, ``r.spread``); no label is cut short: long names get a smaller
font and long reasons a second line. The scatter colours carry the lens's
rank, read on the colour bar in the title line.
"""

from __future__ import annotations

import math
import textwrap

import numpy as np

from .._io import atomic_path
from ..normalize import normalize
from ._style import ACCENT, CORR_CMAP, GRID, INK, LENS_CMAP, MUTED, PAPER, plt, save, style

__all__ = ["screen_figure", "screen_sheet"]

#: Cards per row of the sheet.
_COLS = 6
#: Points drawn in each scatter panel (a fixed random subset when there are more).
_MAX_POINTS = 4000
_NAN_COLOUR = "#d5d2cb"


def screen_sheet(result, paths):
    """Draw the figure sheet of a :class:`~lenswork.ScreenResult` and write it to ``paths``.

    Parameters
    ----------
    result : ScreenResult
    paths : list of str or Path
        Output files; the format comes from each ending (``.png``, ``.svg``).
        Each is written atomically.

    Returns
    -------
    list of Path
    """
    fig = screen_figure(result)
    out = []
    for p in paths:
        path = save(fig, p)
        if path.suffix.lower() == ".png":
            _palette_png(path)
        out.append(path)
    return out


def screen_figure(result):
    """The figure sheet of a :class:`~lenswork.ScreenResult` as a matplotlib Figure.

    Examples
    --------
    >>> import numpy as np
    >>> from lenswork import LensColumn, LensTable, PointCloud, screen
    >>> cloud = PointCloud.from_array(np.random.default_rng(0).normal(size=(200, 2)))
    >>> table = LensTable([LensColumn("a", cloud.X[:, 0]), LensColumn("b", cloud.X[:, 1])],
    ...                   cloud)
    >>> fig = screen_figure(screen(table, count=1, probe=False))
    >>> len(fig.axes) > 2
    True
    >>> plt.close(fig)
    """
    return _draw(result)


def _palette_png(path):
    """Rewrite a PNG with a 256-colour palette (about a third of the size), atomically.

    The sheet has a few thousand coloured points per card; a palette keeps the
    file small enough to commit and to show in a README.
    """
    from PIL import Image, PngImagePlugin

    with Image.open(path) as im:
        small = im.convert("RGB").quantize(
            colors=256, method=Image.Quantize.FASTOCTREE, dither=Image.Dither.NONE
        )
    info = PngImagePlugin.PngInfo()
    info.add_text("Software", "lenswork")
    with atomic_path(path) as tmp:
        small.save(tmp, format="PNG", optimize=True, pnginfo=info)


def _fit(text, width, size, smallest=4.0):
    """A font size at which ``text`` fits ``width`` characters of size ``size`` (never cut)."""
    return max(smallest, size * min(1.0, width / max(len(text), 1)))


def _pair_formula(result):
    if result.pairing == "preservation":
        joint = ("joint merit with #1" if result.probe is not None
                 else "\u221a(merit \u00d7 merit of #1)")
        return (f"pair merit = R_NX \u00d7 {joint} (narrow bar; #1 and #2: their pair's)")
    return "pair merit = merit \u00d7 (1 \u2212 max |\u03c1| to those chosen before) (narrow bar)"


def _draw(result):
    rows = result.rows()
    m = len(rows)
    order = [result.names.index(r["column"]) for r in rows]
    ncols = min(_COLS, m)
    nrows = math.ceil(m / ncols)
    bottom_h = max(4.2, 0.24 * m + 1.4)
    card_h = 2.45
    width = max(12.5, 2.1 * ncols)
    height = 0.9 + nrows * card_h + bottom_h
    xy, pick = _points(result)
    with style():
        fig = plt.figure(figsize=(width, height))
        outer = fig.add_gridspec(
            3, 1, height_ratios=[0.55, nrows * card_h, bottom_h], hspace=0.12,
            left=0.04, right=0.98, top=0.985, bottom=0.03,
        )
        _title(fig.add_subplot(outer[0]), result)
        # per card row: histogram, scatter, spacer (room for the next row's titles)
        cards = outer[1].subgridspec(3 * nrows, ncols, height_ratios=[0.42, 1.0, 0.27] * nrows,
                                     hspace=0.12, wspace=0.16)
        for pos, (row, j) in enumerate(zip(rows, order, strict=True)):
            r, c = divmod(pos, ncols)
            _card(fig.add_subplot(cards[3 * r, c]), fig.add_subplot(cards[3 * r + 1, c]),
                  result, row, j, xy, pick)
        low = outer[2].subgridspec(1, 2, width_ratios=[1.15, 1.0], wspace=0.42)
        _heatmap(fig, fig.add_subplot(low[0]), result, rows, order)
        _ranking(fig.add_subplot(low[1]), result, rows)
    return fig


def _points(result):
    xy = result.embedding
    n = xy.shape[0]
    if n <= _MAX_POINTS:
        return xy, np.arange(n)
    seed = result.lenses.random_state
    rng = np.random.default_rng(seed if isinstance(seed, int) else 0)
    pick = np.sort(rng.choice(n, size=_MAX_POINTS, replace=False))
    return xy[pick], pick


def _title(ax, result):
    ax.axis("off")
    cloud = result.cloud
    chosen = ", ".join(result.selected) if result.selected else "nothing"
    head = ax.text(0, 0.62, "Lens screen", fontsize=13, fontweight="bold", color=INK,
                   transform=ax.transAxes, va="baseline")
    # each piece starts where the previous one ends (annotate relative to its bounding box)
    info = ax.annotate(
        f"   {cloud.n:,} rows \u00d7 {cloud.d} features  \u00b7  {len(result.names)} candidate "
        f"columns  \u00b7  chosen:  ", xy=(1, 0), xycoords=head, va="bottom", fontsize=9,
        color=MUTED,
    )
    ax.annotate(chosen, xy=(1, 0), xycoords=info, va="bottom", fontsize=9, color=ACCENT,
                fontweight="bold")
    ax.text(0, 0.18,
            f"Stopped: {result.stop_text}.  Histograms: the lens over its min-max range "
            f"({result.bins} bins).  Scatter: the data's first two principal coordinates.  "
            f"r.spread: robust spread.",
            fontsize=7.5, color=MUTED, transform=ax.transAxes, va="center")
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import Normalize

    cax = ax.inset_axes([0.80, 0.52, 0.18, 0.14])
    bar = ax.figure.colorbar(ScalarMappable(Normalize(0.0, 1.0), LENS_CMAP), cax=cax,
                             orientation="horizontal", ticks=[0.0, 0.5, 1.0])
    cax.xaxis.set_label_position("top")
    bar.set_label("scatter colour: the lens's rank (0 lowest, 1 highest)", fontsize=6.5,
                  color=MUTED)
    bar.outline.set_visible(False)
    bar.ax.tick_params(labelsize=6)


def _card(ax_h, ax_s, result, row, j, xy, pick):
    chosen = row["selected"]
    colour = ACCENT if chosen else MUTED
    values = np.asarray(result.lenses.columns[j].values, dtype=np.float64)
    ok = bool(result.usable[j])
    # title: rank and name, then the figures behind the score
    title = f"#{row['rank']}  {row['column']}"
    ax_h.set_title(title, loc="left", fontsize=_fit(title, 25, 8),
                   color=ACCENT if chosen else INK, pad=19 if _significant_text(row) else 11)
    if row["partner"] is None:
        partner = "no partner"
    else:
        partner = f"|\u03c1| {abs(row['partner_rho']):.2f} with {row['partner']}"
    spread = row.get("robust_spread", math.nan)
    line = f"r.spread {spread:.2f} \u00b7 {partner}"
    below = ax_h.text(0, 1.04, line, fontsize=_fit(line, 40, 6), color=MUTED,
                      transform=ax_h.transAxes, va="bottom")
    structure = _significant_text(row)
    if structure:  # the probe's significant counts; its raw counts stay in the table
        ax_h.annotate(structure, xy=(0.0, 1.0), xycoords=below, xytext=(0, 1),
                      textcoords="offset points", va="bottom", fontsize=6, color=INK)
    for ax in (ax_h, ax_s):
        ax.set_xticks([])
        ax.set_yticks([])
    for side in ("left", "bottom"):
        ax_h.spines[side].set_color(GRID)
    if ok:
        ax_h.hist(values, bins=result.bins, range=(values.min(), values.max()),
                  color=colour, alpha=0.9 if chosen else 0.6, linewidth=0)
        ax_h.set_xlim(values.min(), values.max())
        colours = normalize(values, "rank")[pick]
        ax_s.scatter(xy[:, 0], xy[:, 1], c=colours, cmap=LENS_CMAP, vmin=0, vmax=1, s=2.5,
                     linewidths=0, rasterized=True)
    else:
        ax_h.text(0.5, 0.4, result.status[j], ha="center", va="center", fontsize=7,
                  color=MUTED, transform=ax_h.transAxes)
        ax_s.scatter(xy[:, 0], xy[:, 1], c=_NAN_COLOUR, s=2.5, linewidths=0, rasterized=True)
    ax_s.set_aspect("equal", adjustable="datalim")
    for spine in ax_s.spines.values():
        spine.set_visible(True)
        spine.set_color(ACCENT if chosen else GRID)
        spine.set_linewidth(1.8 if chosen else 0.8)


def _significant_text(row):
    """``significant: 1 loop, 2 branches``: the structure probe's counts of a lens (or "").

    The most frequent significant counts over the probe's cover grid (``lenswork.probe``).
    """
    loops, branches = row.get("significant_loops"), row.get("significant_branches")
    if not all(isinstance(v, (int, np.integer)) for v in (loops, branches)):
        return ""
    return (f"significant: {loops} loop{'' if loops == 1 else 's'}, {branches} "
            f"branch{'' if branches == 1 else 'es'}")


def _heatmap(fig, ax, result, rows, order):
    C = result.correlation[np.ix_(order, order)]
    m = len(order)
    cmap = CORR_CMAP.with_extremes(bad=_NAN_COLOUR)
    im = ax.imshow(np.ma.masked_invalid(C), cmap=cmap, vmin=-1, vmax=1, interpolation="nearest")
    labels = [r["column"] for r in rows]
    size = min(_fit(t, 22, 6.5) for t in labels)
    ax.set_xticks(range(m), labels, rotation=60, ha="right", rotation_mode="anchor", fontsize=size)
    ax.set_yticks(range(m), labels, fontsize=size)
    for tick_x, tick_y, r in zip(ax.get_xticklabels(), ax.get_yticklabels(), rows, strict=True):
        for t in (tick_x, tick_y):
            if r["selected"]:
                t.set_color(ACCENT)
                t.set_fontweight("bold")
            else:
                t.set_color(INK)
    if m <= 24:
        for a in range(m):
            for b in range(m):
                v = C[a, b]
                if a == b or not np.isfinite(v):
                    continue
                text = f"{abs(v):.2f}".lstrip("0") if abs(v) < 0.995 else "1"
                ax.text(b, a, ("\u2212" if v < 0 and text != ".00" else "") + text,
                        ha="center", va="center", fontsize=4.8,
                        color=PAPER if abs(v) > 0.6 else INK)
    k = len(result.selected)
    if k:
        ax.add_patch(plt.Rectangle((-0.5, -0.5), k, k, fill=False, edgecolor=ACCENT,
                                   linewidth=2.2, clip_on=False))
    ax.set_title(f"Spearman \u03c1 between candidates (rank order; chosen block outlined; "
                 f"ceiling |\u03c1| \u2264 {result.ceiling:.2f})", loc="left", fontsize=8)
    for spine in ax.spines.values():
        spine.set_visible(False)
    ax.tick_params(length=0)
    bar = fig.colorbar(im, ax=ax, fraction=0.035, pad=0.02)
    bar.set_label("\u03c1", fontsize=7)
    bar.outline.set_visible(False)
    bar.ax.tick_params(labelsize=6)


def _ranking(ax, result, rows):
    m = len(rows)
    y = np.arange(m)
    merit = np.array([r["merit"] for r in rows])
    pair = np.array([r["pair_merit"] for r in rows])
    chosen = np.array([r["selected"] for r in rows])
    ax.barh(y, merit, height=0.72, color=GRID, linewidth=0, label="merit")
    ax.barh(y, pair, height=0.42, color=np.where(chosen, ACCENT, MUTED), linewidth=0,
            label="pair merit")
    labels = [f"#{r['rank']} {r['column']}" for r in rows]
    ax.set_yticks(y, labels, fontsize=min(_fit(t, 26, 6.5) for t in labels))
    for t, r in zip(ax.get_yticklabels(), rows, strict=True):
        t.set_color(ACCENT if r["selected"] else INK)
        if r["selected"]:
            t.set_fontweight("bold")
    ax.invert_yaxis()
    ax.set_xlim(0, 2.35)  # bars on [0, 1], the reasons to their right
    ax.set_xticks([0, 0.5, 1.0])
    ax.set_ylim(m - 0.5, -0.5)
    ax.set_xlabel(f"merit (wide bar) and {_pair_formula(result)}", fontsize=7)
    ax.tick_params(axis="y", length=0)
    for yi, r in zip(y, rows, strict=True):
        ax.text(1.04, yi, "\n".join(textwrap.wrap(r["reason"], 58)), fontsize=5.4,
                va="center", linespacing=1.0, color=ACCENT if r["selected"] else MUTED)
    ax.set_title("Ranking and reasons", loc="left", fontsize=8)
    ax.grid(axis="x", color=GRID, linewidth=0.6)
    ax.spines["bottom"].set_bounds(0, 1)
    ax.set_axisbelow(True)
