"""Stability-map and bootstrap figures.

The stability map is one heat map per feature type (components, then the
significant loops or holes, flares, limbs and branch points the graph
summary leads with, then the raw cycle and degree counts in grey): rows are
interval counts, columns are overlaps, and
each cell shows the count the graph at that cover setting has. The default
setting is boxed, and the cells that share its count and touch it (the
4-connected region around it) are outlined: a user picks cover settings inside
such a region, where the feature count does not hinge on the exact setting.

The bootstrap figure shows, per feature type, how often each count recurred
over the resampled graphs, the full-data count marked.
"""

from __future__ import annotations

import textwrap

import numpy as np
from matplotlib.colors import BoundaryNorm, LinearSegmentedColormap, ListedColormap

from ._style import ACCENT, GRID, INK, MUTED, PAPER, plt, save, style

__all__: list[str] = []

_TITLES = {
    "components": "components",
    "extra_components": "components beyond the data's",
    "significant_loops": "significant loops",
    "significant_holes": "significant holes",
    "significant_flares": "significant flares",
    "significant_limbs": "significant limbs",
    "significant_branch_points": "significant branch points",
    "significant_branches": "significant branches",
    "loops": "raw cycles (b1)",
    "branch_points": "raw nodes of degree \u2265 3",
    "flares": "raw leaf chains",
}
#: Stability-map counts judged significant, drawn first when a map holds them (the graph
#: summary's order; ``significant_branches`` is the structure probe's grid key).
_SIGNIFICANT_MAP = ("significant_loops", "significant_holes", "significant_flares",
                    "significant_limbs", "significant_branch_points", "significant_branches")
#: Bootstrap: the significant kinds (keys of BootstrapResult.significant_counts), the kind
#: names of its full_features, and their titles.
#: In the order the graph summary's headline gives them.
_SIGNIFICANT_KINDS = {"loops": ("loop", "significant loops"),
                      "flares": ("flare", "significant flares"),
                      "limbs": ("limb", "significant limbs"),
                      "branch_points": ("branch", "significant branch points")}
_WORDS = {"components": "component", "loops": "loop", "flares": "flare", "limbs": "limb",
          "branch_points": "branch point"}
#: Raw counts: a grey scale, so the significant panels lead.
_RAW_CMAP = LinearSegmentedColormap.from_list("lenswork_raw", ["#f3f1ea", "#c9c6bf", "#7d8a96"])


def _wrap(text, width_in, size):
    """``text`` in lines that fit ``width_in`` inches at font ``size`` (never cut short)."""
    return "\n".join(textwrap.wrap(text, max(20, int(width_in * 72 / (0.56 * size)))))


def _is_raw(name):
    return name in ("loops", "branch_points", "flares")


def _map_features(smap, features):
    """Feature panels of a stability map: components, any significant counts, then raw ones."""
    if features is not None:
        return list(features)
    names = list(smap.features)
    lead = [n for n in names if not _is_raw(n) and n not in _SIGNIFICANT_MAP]
    return lead + [k for k in _SIGNIFICANT_MAP if k in smap.counts] + \
        [n for n in names if _is_raw(n)]


#: Counts run from paper to slate, so the amber region outline stands out on every cell.
_COUNT_CMAP = LinearSegmentedColormap.from_list(
    "lenswork_counts", ["#f3f1ea", "#cfe3d3", "#8fbf9f", "#2b7a78", "#1f2d4a"]
)


def _discrete(vmax, raw=False):
    """A discrete colour map over counts 0..vmax (at least two levels); grey for raw counts."""
    levels = max(int(vmax), 1) + 1
    colours = (_RAW_CMAP if raw else _COUNT_CMAP)(np.linspace(0.0, 1.0, levels))
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
    features = _map_features(smap, features)
    p, q = len(smap.interval_counts), len(smap.overlaps)
    n_f = len(features)
    cell = 0.42
    width = max(2.6, 0.9 + q * cell) * n_f + 0.6
    default = smap.default_cell
    sig = [n for n in features if n in _SIGNIFICANT_MAP]
    head = ""
    if any(_is_raw(n) for n in features):
        head = _wrap(("Significant counts first; grey panels: " if sig else
                      "This map records no significance per cell: the grey panels are ")
                     + "raw cycle and degree counts, small features included (the significant "
                     "structure at one setting: lenswork graph).", width, 7)
    foot = "" if default is None else _wrap(
        "Dashed box: the default setting. Amber outline: the cells that share its count and "
        "touch it (4-connected), a stable region to pick settings from.", width, 7)
    title = _wrap(f"Stability map of {smap.lens}  \u00b7  {smap.n_rows:,} rows  \u00b7  "
                  f"{p} \u00d7 {q} cover settings", width, 10)
    lift = 0.17 * title.count("\n")  # the title's extra lines
    top = 0.6 + lift + (0.14 * (head.count("\n") + 1) if head else 0.0) + 0.3
    bottom = 0.75 + (0.14 * (foot.count("\n") + 1) if foot else 0.0)
    height = top + bottom + p * cell
    with style():
        fig, axes = plt.subplots(1, n_f, figsize=(width, height), squeeze=False)
        axes = axes[0]
        for ax, name in zip(axes, features, strict=True):
            counts = np.asarray(smap.counts[name])
            cmap, norm = _discrete(counts.max(), raw=_is_raw(name))
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
        fig.suptitle(title, x=0.01, y=1 - 0.1 / height, ha="left",
                     va="top", fontsize=10, fontweight="bold", color=INK)
        if head:
            fig.text(0.01, 1 - (0.42 + lift) / height, head, fontsize=7, color=MUTED, ha="left",
                     va="top", linespacing=1.2)
        if foot:
            fig.text(0.01, 0.005, foot, fontsize=7, color=MUTED, ha="left", va="bottom",
                     linespacing=1.2)
        fig.subplots_adjust(left=0.8 / width, right=1 - 0.15 / width, top=1 - top / height,
                            bottom=bottom / height, wspace=0.9 / (0.9 + q * cell))
    return fig


def stability_sheet(smap, paths, features=None):
    """Draw the stability map and write it to ``paths`` (PNG / SVG by ending, atomically).

    Returns
    -------
    list of Path
    """
    fig = stability_figure(smap, features)
    return [save(fig, p) for p in paths]


def _recurrence_bars(ax, values, full, title, colour, other):
    """Share of resamples per count (bars), the full-data count in ``colour``."""
    values = np.asarray(values)
    lo, hi = int(min(values.min(), full)), int(max(values.max(), full))
    xs = np.arange(lo, hi + 1)
    share = np.array([(values == x).mean() for x in xs])
    ax.bar(xs, share, color=[colour if x == full else other for x in xs], width=0.8,
           edgecolor=PAPER)
    for x, s in zip(xs, share, strict=True):
        if s > 0:
            ax.text(x, s + 0.02, f"{s:.0%}", ha="center", va="bottom", fontsize=6.5, color=INK)
    ax.set_ylim(0, 1.14)
    ax.set_yticks([0.0, 0.5, 1.0])
    pad = max(0.7, (4 - xs.size) / 2)  # keep bars narrow when few counts occur
    ax.set_xlim(lo - pad, hi + pad)
    ax.set_xticks(xs)
    ax.set_title(title, loc="left")
    ax.grid(axis="y", color=GRID, lw=0.6)
    ax.set_axisbelow(True)
    ax.set_xlabel("count")


def bootstrap_figure(result):
    """Bar charts: how often each feature count recurred over the resampled graphs.

    The top row leads with the significant structure: components, then the
    significant loops, limbs, flares and branch points of each resampled graph
    (``result.significant_counts``), the full-data graph's count in amber (the
    number of its significant features of that kind, ``result.full_features``).
    The bottom row, in grey, holds the raw cycle and degree counts (small
    features included). A result without significant counts (a ball cover)
    has only the components and the raw row, named raw.

    Parameters
    ----------
    result : BootstrapResult

    Returns
    -------
    matplotlib.figure.Figure
    """
    sig = [k for k in _SIGNIFICANT_KINDS if k in result.significant_counts]
    lead = [f for f in result.features if not _is_raw(f)]
    raw = [f for f in result.features if _is_raw(f)]
    top = lead + sig
    cols = max(len(top), len(raw), 1)
    full_sig = {k: sum(1 for f in result.full_features if f["kind"] == _SIGNIFICANT_KINDS[k][0])
                for k in sig}
    width = 2.3 * cols + 0.5
    with style():
        fig, axes = plt.subplots(2, cols, figsize=(width, 5.0), squeeze=False,
                                 gridspec_kw={"height_ratios": [1.0, 0.75]})
        for ax, name in zip(axes[0], top, strict=False):
            if name in sig:
                _recurrence_bars(ax, result.significant_counts[name], full_sig[name],
                                 _SIGNIFICANT_KINDS[name][1], ACCENT, MUTED)
            else:
                _recurrence_bars(ax, result.counts[name], int(result.full_counts[name]),
                                 _TITLES.get(name, name), ACCENT, MUTED)
        for ax, name in zip(axes[1], raw, strict=False):
            _recurrence_bars(ax, result.counts[name], int(result.full_counts[name]),
                             _TITLES.get(name, name), "#5f6b76", "#c9c6bf")
        for ax in [*axes[0][len(top):], *axes[1][len(raw):]]:
            ax.set_visible(False)
        axes[0][0].set_ylabel("share of resamples")
        axes[1][0].set_ylabel("share of resamples")
        if sig:
            full = {**{k: int(result.full_counts[k]) for k in lead if k in _WORDS}, **full_sig}
            counts = " \u00b7 ".join(f"{v} {_WORDS[k]}{'' if v == 1 else 's'}"
                                     for k, v in full.items())
            lead_line = f"full data, significant: {counts}"
        else:
            lead_line = "no significance recorded (a cover without lens levels)"
        fig.suptitle(_wrap(f"Bootstrap of {result.lens_label}: {lead_line}", width, 9.5),
                     x=0.01, y=0.99, ha="left", va="top", fontsize=9.5, fontweight="bold",
                     color=INK)
        fig.text(0.01, 0.905, _wrap(
            f"{result.resamples} resamples ({result.scheme_text}). Amber: the full-data "
            f"count. Top: components and significant features; grey, below: raw cycle and "
            f"degree counts, small features included.", width, 7), fontsize=7, color=MUTED,
            ha="left", va="top")
        fig.tight_layout(rect=(0, 0, 1, 0.87), h_pad=1.6)
    return fig


def bootstrap_sheet(result, paths):
    """Draw the bootstrap figure and write it to ``paths``; returns the paths."""
    fig = bootstrap_figure(result)
    return [save(fig, p) for p in paths]
