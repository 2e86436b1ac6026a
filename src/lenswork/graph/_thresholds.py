"""The cover's significance rule: which points of a Mapper graph's diagram are significant.

``significance = persistence / range``, in [0, 1], with ``range`` the span of
the node function. For a graph of one lens built with ``N`` intervals of
length ``L`` and overlap ``p`` (step ``s = L (1 - p)``), :func:`lens_persistence`
takes as node function the midpoint of the node's interval on the cover scale
(a discretisation of the lens at the cover's resolution, as in [1]_), so the
range is the span of the midpoints, ``(N - 1) s``, and 1 means "spans every
interval". A feature is *significant* when its persistence exceeds
``2 (L + delta)``, i.e. its significance exceeds
``2 (1 + delta / L) / ((N - 1)(1 - p))`` (0.32 at 10 intervals and overlap 0.3
for a lens with ``delta = 0``), where ``delta`` is the lens's own jitter at the
data's resolution: the root-mean-square difference of the lens (on the cover
scale, as a share of its range) between neighbours of the heat-kernel k-NN
graph, ``delta^2 = sum_ij S_ij (u_i - u_j)^2 / sum_ij S_ij`` (which is
``2 L_r var_D(u)`` with ``L_r`` the Laplacian score of He, Cai and Niyogi 2005;
``lenswork.criteria.neighbour_jitter``). The reasons:

1. Resolution (Carrière and Oudot [1]_): the Mapper's diagram is the Reeb
   graph's with the points inside the cover's staircases removed, i.e. a
   feature of the data that fits inside one interval (span below ``L``) leaves
   no trace, and one that shows carries the cover's discretisation. Whether a
   feature shorter than ``L`` exists is a property of the cover, not of the
   data.
2. Uncertainty of the two ends: every member of a node lies within ``L / 2``
   of its interval's midpoint, and where the clustering puts the boundary of
   a node depends on rows that are neighbours in the data but differ in the
   lens by about ``delta``. So each end of a feature is known to within
   ``L / 2 + delta``, and a feature measured at persistence ``P`` spans at
   least ``P - L - 2 delta`` of the lens in the data. Requiring that to exceed
   ``L`` certifies a feature the cover resolves.
3. What it rejects: a clustering split inside one cover element that
   rejoins in the next (a four-node cycle over three intervals, the commonest
   noise loop), and a spur of one or two nodes, measure ``2 s`` and ``s``,
   both below ``2 L`` for any overlap; a lens that jitters between neighbours
   by about an interval (``delta ~ L``: a noisy density or eccentricity) makes
   ragged interval preimages whose clusters split and rejoin over several
   intervals, and its threshold doubles accordingly. Splits that persist over
   several elements for a smooth lens are not told from structure by the
   cover alone: that is what resampling is for (recurrence under the
   bootstrap, Carrière, Michel and Oudot [3]_, whose confidence region for
   the diagram is likewise a band of a given width along the diagonal).

The rule has no constant tuned to any data: it is fixed by the cover and by the
lens's own Laplacian score.

The diagrams themselves (the extended persistence of a function on a graph)
are computed in :mod:`lenswork.graph._persistence`.

References
----------
.. [1] M. Carrière and S. Oudot, "Structure and stability of the
   one-dimensional Mapper", Foundations of Computational Mathematics 18, 2018.
.. [3] M. Carrière, B. Michel and S. Oudot, "Statistical analysis and
   parameter selection for Mapper", JMLR 19, 2018.
"""

from __future__ import annotations

import math

import numpy as np

from .._errors import ParameterError
from .._validation import check_float, check_int
from ._persistence import make_diagram

__all__ = ["graph_diagrams", "lens_persistence", "resolution_threshold"]


def resolution_threshold(intervals, overlap, jitter=0.0):
    """The significance threshold of a one-lens cover: ``2 (L + delta)`` over the midpoint span.

    Parameters
    ----------
    intervals : int
        Interval count ``N``.
    overlap : float in [0, 1)
        Overlap fraction ``p``.
    jitter : float >= 0, default=0.0
        ``delta``: the lens's root-mean-square difference between data
        neighbours, as a share of the cover scale's range
        (``lenswork.criteria.neighbour_jitter``).

    Returns
    -------
    float
        ``2 (L + delta) / ((N - 1) s)`` with ``L = 1 / (1 + (N - 1)(1 - p))`` and
        ``s = L (1 - p)`` (range 1), i.e. ``2 (1 + delta / L) / ((N - 1)(1 - p))``;
        ``inf`` for one interval (nothing can be certified).

    Notes
    -----
    A feature must span more than the resolution ``L`` after the uncertainty of
    both its ends is taken off; each end is a node whose level is known to
    ``L / 2`` (its interval) plus ``delta`` (where the lens puts the rows the
    clustering joins as neighbours). See the module notes; Carrière and Oudot
    2018.

    Examples
    --------
    >>> round(resolution_threshold(10, 0.3), 3), resolution_threshold(1, 0.3)
    (0.317, inf)
    >>> round(resolution_threshold(10, 0.3, jitter=1 / 7.3), 3)   # delta = L doubles it
    0.635
    """
    N = check_int("intervals", intervals, lo=1, context="resolution_threshold")
    p = check_float("overlap", overlap, lo=0, hi=1, hi_open=True, context="resolution_threshold")
    jitter = check_float("jitter", jitter, lo=0, context="resolution_threshold")
    if N == 1:
        return math.inf
    L = 1.0 / (1.0 + (N - 1) * (1.0 - p))
    return 2.0 * (1.0 + jitter / L) / ((N - 1) * (1.0 - p))


def lens_persistence(graph, lens=0, *, jitter=None):
    """Extended persistence of one lens on a LensGraph, with the cover's significance rule.

    Parameters
    ----------
    graph : LensGraph
        Built by :func:`~lenswork.build_graph` (its parameters record the cover).
    lens : int or str, default=0
        Which lens of the cover (index or column name).
    jitter : float >= 0, optional
        The lens's neighbour jitter ``delta`` on the cover scale, as a share of
        its range (``lenswork.criteria.neighbour_jitter``); it widens the
        threshold (see :func:`resolution_threshold`) of every point alike.
        Default: the graph's own record -- the jitter at each node
        (``params["node_jitter"]``, :func:`lenswork.graph.node_jitter`), so that
        a point's threshold is ``2 L + delta_a + delta_b`` with the jitter
        ``delta_a``, ``delta_b`` at its two end nodes (module notes), else the
        overall ``params["lens_jitter"]``, else 0.

    Returns
    -------
    PersistenceDiagram
        Node function: the midpoint of each node's interval of that lens, in
        units of the step ``s`` (interval ``i`` has level ``i``), so the
        significance is relative to the span ``N - 1`` of the levels, and the
        threshold is :func:`resolution_threshold` of the cover.

    Raises
    ------
    ParameterError
        An unknown lens, or a graph without its cover parameters.

    Examples
    --------
    >>> from lenswork import build_graph
    >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
    >>> X = np.column_stack([np.cos(t), np.sin(t)])
    >>> d = lens_persistence(build_graph(X[:, 1], X, intervals=10, overlap=0.3))
    >>> d.count("loop", significant=True), round(float(d.loops[0, 2]), 2)
    (1, 1.0)
    """
    names = list(graph.lens_columns)
    if isinstance(lens, str):
        if lens not in names:
            raise ParameterError(
                f"The graph has no lens {lens!r}; its lenses are {', '.join(names)}."
            )
        j = names.index(lens)
    else:
        j = check_int("lens", lens, lo=0, hi=len(names) - 1, context="lens_persistence")
    cover = graph.params.get("cover") if isinstance(graph.params, dict) else None
    if not cover or "intervals" not in cover or "overlap" not in cover:
        raise ParameterError(
            "lens_persistence needs the graph's cover parameters (intervals, overlap); this "
            "graph has none. Build it with lenswork.build_graph."
        )
    N = int(cover["intervals"][j])
    p = float(cover["overlap"][j])
    level = graph.node_elements[:, j].astype(np.float64)
    E = np.asarray(graph.edge_index, dtype=np.int64).reshape(-1, 2)
    params = graph.params if isinstance(graph.params, dict) else {}
    local = params.get("node_jitter") if jitter is None else None
    if jitter is None:
        overall = params.get("lens_jitter")
        jitter = float(overall[j]) if isinstance(overall, (list, tuple)) else float(overall or 0)
    threshold = resolution_threshold(N, p, jitter)
    slack = None
    if local is not None and N > 1 and len(local) > j and len(local[j]) == level.size:
        step = (1.0 - p) / (1.0 + (N - 1) * (1.0 - p))  # s = L (1 - p) on a range of 1
        slack = (resolution_threshold(N, p, 0.0), np.asarray(local[j], dtype=np.float64) / step)
    return make_diagram(E, level, float(N - 1), threshold, slack)


def graph_diagrams(graph, jitter=None):
    """:func:`lens_persistence` of every lens of an interval-cover graph (None otherwise).

    Parameters
    ----------
    graph : LensGraph
    jitter : float or sequence of float, optional
        The neighbour jitter of each lens (one value for all); default: the
        graph's own record, per node (``params["node_jitter"]``) or overall
        (``params["lens_jitter"]``), as :func:`lens_persistence` reads it.

    Returns
    -------
    list of PersistenceDiagram, one per lens column, or None
        None for a graph whose cover has no interval counts (a ball cover),
        which has no lens levels to compare.

    Examples
    --------
    >>> from lenswork import build_graph
    >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
    >>> X = np.column_stack([np.cos(t), np.sin(t)])
    >>> [d.count("loop", significant=True) for d in graph_diagrams(build_graph(X, X))]
    [1, 1]
    """
    cover = graph.params.get("cover") if isinstance(graph.params, dict) else None
    if not cover or "intervals" not in cover or "overlap" not in cover:
        return None
    m = len(graph.lens_columns)
    if jitter is None:
        return [lens_persistence(graph, j) for j in range(m)]
    jit = [float(jitter)] * m if np.ndim(jitter) == 0 else [float(j) for j in jitter]
    return [lens_persistence(graph, j, jitter=jit[j]) for j in range(m)]
