"""Stability-map and bootstrap figures.

The stability map is one heat map per feature type (components, loops,
branch points, flares): rows are interval counts, columns are overlaps, and
each cell shows the count the graph at that cover setting has. The default
setting is boxed, and the cells that share its count and touch it (the
4-connected region around it) are outlined: a user picks cover settings inside
such a region, where the feature count does not hinge on the exact setting.

The bootstrap figure shows, per feature type, how often each count recurred
over the resampled graphs, the full-data count marked.
"""

from __future__ import annotations

import numpy as np
from matplotlib.colors import BoundaryNorm, LinearSegmentedColormap, ListedColormap

from ._style import ACCENT, GRID, INK, MUTED, PAPER, plt, save, style

__all__: list[str] = []

_TITLES = {
    "components": "components",
    "extra_components": "components beyond the data's",
    "loops": "loops (b1)",
    "branch_points": "branch points",
    "flares": "flares",
}


#: Counts run from paper to slate, so the amber region outline stands out on every cell.
_COUNT_CMAP = LinearSegmentedColormap.from_list(
    "lenswork_counts", ["#f3f1ea", "#cfe3d3", "#8fbf9f", "#2b7a78", "#1f2d4a"]
)


def _discrete(vmax):
    """A discrete colour map over counts 0..vmax (at least two levels)."""
    levels = max(int(vmax), 1) + 1
    colours = _COUNT_CMAP(np.linspace(0.0, 1.0, levels))
    return ListedColormap(colours), BoundaryNorm(np.arange(-0.5, levels + 0.5), levels)


def _text_colour(rgba):
    r, g, b = rgba[:3]
    return PAPER if 0.299 * r + 0.587 * g + 0.114 * b < 0.55 else INK


def _outline(ax, mask, colour, width):
    """Draw the boundary of the True cells of ``mask`` (image coordinates)."""
    p, q = mask.shape
    for i in range(p):
        for j in range(q):
            if not mask[i, j]:
                continue
            if i == 0 or not mask[i - 1, j]:
                ax.plot([j - 0.5, j + 0.5], [i - 0.5, i - 0.5], color=colour, lw=width,
                        solid_capstyle="projecting")
            if i == p - 1 or not mask[i + 1, j]:
                ax.plot([j - 0.5, j + 0.5], [i + 0.5, i + 0.5], color=colour, lw=width,
                        solid_capstyle="projecting")
            if j == 0 or not mask[i, j - 1]:
                ax.plot([j - 0.5, j - 0.5], [i - 0.5, i + 0.5], color=colour, lw=width,
                        solid_capstyle="projecting")
            if j == q - 1 or not mask[i, j + 1]:
                ax.plot([j + 0.5, j + 0.5], [i - 0.5, i + 0.5], color=colour, lw=width,
                        solid_capstyle="projecting")


def stability_figure(smap, features=None):
    """Draw a :class:`~lenswork.StabilityMap` as one heat map per feature type.

    Parameters
    ----------
    smap : StabilityMap
    features : list of str, optional
        Feature types to draw (default: every type in ``smap.features``).

    Returns
    -------
    matplotlib.figure.Figure
    """
    features = list(features or smap.features)
    p, q = len(smap.interval_counts), len(smap.overlaps)
    n_f = len(features)
    cell = 0.42
    width = max(2.6, 0.9 + q * cell) * n_f + 0.6
    height = 1.7 + p * cell
    default = smap.default_cell
    with style():
        fig, axes = plt.subplots(1, n_f, figsize=(width, height), squeeze=False)
        axes = axes[0]
        for ax, name in zip(axes, features, strict=True):
            counts = np.asarray(smap.counts[name])
            cmap, norm = _discrete(counts.max())
            ax.imshow(counts, cmap=cmap, norm=norm, interpolation="nearest", aspect="auto")
            for i in range(p):
                for j in range(q):
                    v = int(counts[i, j])
                    ax.text(j, i, str(v), ha="center", va="center", fontsize=7,
                            color=_text_colour(cmap(norm(v))))
            if default is not None:
                region = smap.region(name)
                _outline(ax, region, ACCENT, 2.4)
                i0, j0 = default
                for colour, lw, ls in ((PAPER, 2.6, "solid"), (INK, 1.4, (0, (2, 1.2)))):
                    ax.add_patch(plt.Rectangle((j0 - 0.42, i0 - 0.42), 0.84, 0.84, fill=False,
                                               edgecolor=colour, linewidth=lw, linestyle=ls))
            ax.set_xticks(range(q), [f"{o:g}" for o in smap.overlaps])
            ax.set_yticks(range(p), [str(int(v)) for v in smap.interval_counts])
            ax.set_xlabel("overlap")
            if ax is axes[0]:
                ax.set_ylabel("intervals per lens")
            ax.set_title(_TITLES.get(name, name), loc="left")
            ax.tick_params(length=0)
            for spine in ax.spines.values():
                spine.set_visible(False)
        note = (f"Stability map of {smap.lens}  \u00b7  {smap.n_rows:,} rows  \u00b7  "
                f"{p} \u00d7 {q} cover settings")
        fig.suptitle(note, x=0.01, ha="left", fontsize=10, fontweight="bold", color=INK)
        if default is not None:
            fig.text(0.01, 0.005,
                     "Dashed box: the default setting. Amber outline: the cells that share its "
                     "count and touch it (4-connected), a stable region to pick settings from.",
                     fontsize=7, color=MUTED, ha="left", va="bottom")
        fig.subplots_adjust(left=0.8 / width, right=1 - 0.15 / width, top=1 - 0.75 / height,
                            bottom=0.95 / height, wspace=0.9 / (0.9 + q * cell))
    return fig


def stability_sheet(smap, paths, features=None):
    """Draw the stability map and write it to ``paths`` (PNG / SVG by ending, atomically).

    Returns
    -------
    list of Path
    """
    fig = stability_figure(smap, features)
    return [save(fig, p) for p in paths]


def bootstrap_figure(result):
    """Bar charts: how often each feature count recurred over the resampled graphs.

    Parameters
    ----------
    result : BootstrapResult

    Returns
    -------
    matplotlib.figure.Figure
    """
    features = list(result.features)
    with style():
        fig, axes = plt.subplots(1, len(features), figsize=(2.4 * len(features) + 0.4, 2.6),
                                 squeeze=False)
        for ax, name in zip(axes[0], features, strict=True):
            values = np.asarray(result.counts[name])
            full = int(result.full_counts[name])
            lo = int(min(values.min(), full))
            hi = int(max(values.max(), full))
            xs = np.arange(lo, hi + 1)
            share = np.array([(values == x).mean() for x in xs])
            colours = [ACCENT if x == full else MUTED for x in xs]
            ax.bar(xs, share, color=colours, width=0.8, edgecolor=PAPER)
            for x, s in zip(xs, share, strict=True):
                if s > 0:
                    ax.text(x, s + 0.02, f"{s:.0%}", ha="center", va="bottom", fontsize=6.5,
                            color=INK)
            ax.set_ylim(0, 1.12)
            pad = max(0.7, (4 - xs.size) / 2)  # keep bars narrow when few counts occur
            ax.set_xlim(lo - pad, hi + pad)
            ax.set_xticks(xs)
            ax.set_title(_TITLES.get(name, name), loc="left")
            ax.grid(axis="y", color=GRID, lw=0.6)
            ax.set_axisbelow(True)
            ax.set_xlabel("count")
        axes[0][0].set_ylabel("share of resamples")
        fig.suptitle(
            f"Bootstrap of {result.lens_label}: {result.resamples} resamples "
            f"({result.scheme_text}); amber = full-data count", x=0.01, ha="left",
            fontsize=9, fontweight="bold", color=INK)
        fig.tight_layout(rect=(0, 0, 1, 0.9))
    return fig


def bootstrap_sheet(result, paths):
    """Draw the bootstrap figure and write it to ``paths``; returns the paths."""
    fig = bootstrap_figure(result)
    return [save(fig, p) for p in paths]
