"""Small multiples: one graph drawing per data column, the nodes coloured by that column."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from .._errors import ParameterError
from ..columns import node_column_values
from ._graph import draw_graph
from ._style import MUTED, as_paths, figure, save, style

__all__ = ["column_multiples", "contrast_sheet"]


def column_multiples(graph, data, columns, *, stat="mean", levels=None, highlight=None,
                     captions=None, layout="auto", ncols=3, title=None, path=None,
                     random_state=0, values=None):
    """The graph drawn once per data column, its nodes coloured by that column.

    Parameters
    ----------
    graph : LensGraph
    data : PointCloud or Workspace
        The rows the graph was built on.
    columns : sequence of str
        Feature or passthrough columns, one panel each.
    stat : str, default="mean"
        Node statistic of numeric columns (see
        :func:`lenswork.contrast.node_column_values`); categorical columns are
        shown as the share of a level.
    levels : dict of str -> str, optional
        Level whose share colours a categorical column (default: its most
        frequent level).
    highlight : sequence of int, optional
        Nodes ringed in every panel (the feature's nodes).
    captions : dict of str -> str, optional
        A line under each panel's title (effect size, q-value...).
    layout : str or ndarray, default="auto"
        Computed once and shared by every panel.
    ncols : int, default=3
    title : str, optional
    path : str, Path or list of them, optional
        Write the sheet (``.png`` / ``.svg``, atomically) and close it.
    random_state : int, default=0
    values : dict of str -> (ndarray of shape (n_nodes,), str), optional
        The node values and colour-bar label of each column, computed by the
        caller (:func:`lenswork.columns.node_column_values`); then ``data`` is
        not read. Without it the values are computed here from ``data``.

    Returns
    -------
    matplotlib.figure.Figure, or the list of paths written

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork import LensGraph, PointCloud
    >>> M = sp.csr_matrix(np.eye(3, dtype=int))
    >>> g = LensGraph(M, [[0], [1], [2]], [[0, 1], [1, 2]], [1, 1], {"h": np.zeros((3, 3))},
    ...               lens_columns=["h"])
    >>> cloud = PointCloud.from_array(np.array([[1.0, 0.0], [2.0, 1.0], [3.0, 5.0]]),
    ...                               feature_names=["a", "b"])
    >>> fig = column_multiples(g, cloud, ["a", "b"], highlight=[2])
    >>> [ax.get_title(loc="left") for ax in fig.axes if ax.get_title(loc="left")]
    ['a', 'b']
    """
    columns = [str(c) for c in columns]
    if not columns:
        raise ParameterError("column_multiples needs at least one column to draw.")
    levels = dict(levels or {})
    captions = dict(captions or {})
    if isinstance(layout, str):  # "auto": the graph's one layout rule (graph/_layout.py)
        pos = graph.layout(method=layout, random_state=random_state)
    else:
        pos = np.asarray(layout, dtype=np.float64)
    given = dict(values or {})
    values = {}
    for c in columns:  # every value first: a bad column fails before any drawing
        values[c] = given[c] if c in given else node_column_values(
            graph, data, c, "share" if c in levels else stat, level=levels.get(c))
    ncols = max(1, min(int(ncols), len(columns)))
    nrows = math.ceil(len(columns) / ncols)
    with style():
        fig, axes = figure(nrows, ncols, figsize=(3.6 * ncols, 3.2 * nrows + 0.5), squeeze=False)
        for i, (ax, c) in enumerate(zip(axes.ravel(), columns)):
            vals, label = values[c]
            draw_graph(graph, ax=ax, color=label, values=vals, layout=pos, highlight=highlight,
                       features=False, counts=False, node_scale=0.55, title=c,
                       random_state=random_state)
            if i % ncols:
                ax.set_ylabel("")
            if c in captions:
                ax.text(0.0, -0.04, captions[c], transform=ax.transAxes, ha="left", va="top",
                        fontsize=7, color=MUTED)
        for ax in axes.ravel()[len(columns):]:
            ax.set_visible(False)
        if title:
            fig.suptitle(title, x=0.01, ha="left", fontsize=10, fontweight="bold")
        fig.tight_layout()
    if path is not None:
        return [save(fig, Path(p)) for p in as_paths(path)] if not isinstance(path, (str, Path)) \
            else save(fig, Path(path))
    return fig


def contrast_sheet(result, graph, data, feature, *, top=6, path=None, layout="auto", ncols=3,
                   random_state=0, values=None):
    """Small multiples of a feature's top columns from a :class:`~lenswork.ContrastResult`.

    Each panel is the graph coloured by one of the ``top`` best-ranked columns
    (a categorical one by the share of its most over-represented level), the
    feature's nodes ringed, and a caption with the effect size and q-value.
    ``values`` (column -> node values and label) skips the computing, as in
    :func:`column_multiples`.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork import LensGraph, PointCloud, contrast_columns
    >>> M = sp.csr_matrix(np.repeat(np.eye(3, dtype=int), 4, axis=0))
    >>> g = LensGraph(M, [[0], [1], [2]], [[0, 1], [1, 2]], [1, 1], {"h": np.zeros((3, 3))},
    ...               lens_columns=["h"])
    >>> x = np.arange(12.0)[:, None]
    >>> cloud = PointCloud.from_array(x, feature_names=["x"])
    >>> res = contrast_columns(g, cloud, nodes=[2])
    >>> fig = contrast_sheet(res, g, cloud, "nodes")
    >>> fig.axes[0].get_title(loc="left")
    'x'
    """
    rows = result.for_feature(feature)[:max(1, int(top))]
    if not rows:
        raise ParameterError(f"Feature {feature!r} has no tested column to draw.")
    info = next(f for f in result.features if f["label"] == feature)
    captions, levels = {}, {}
    for r in rows:
        if r.type == "categorical":
            levels[r.column] = r.level
            captions[r.column] = f"V {r.effect:.2f}, {r.level!r} {r.share_in:.0%} vs " \
                f"{r.share_out:.0%}, q {r.qvalue:.2g}"
        else:
            captions[r.column] = f"delta {r.cliffs_delta:+.2f}, d {r.smd:+.2f}, q {r.qvalue:.2g}"
    against = result.params.get("against", "rest")
    title = (f"{feature}: {info['n_rows']:,} rows vs {info['n_against']:,} ({against}); "
             f"nodes ringed; top {len(rows)} columns")
    return column_multiples(graph, data, [r.column for r in rows], levels=levels,
                            highlight=info["nodes"], captions=captions, layout=layout,
                            ncols=ncols, title=title, path=path, random_state=random_state,
                            values=values)
