"""build_graph: cover the lens range, cluster every element, take the nerve."""

from __future__ import annotations

import warnings

import numpy as np

from .. import _progress
from .._errors import LensworkWarning, ParameterError
from .._validation import seed_of
from .._version import __version__
from ..table import as_lens_table
from ..workspace import Workspace
from ._cluster import CLUSTERERS, cluster_elements
from ._cluster_estimator import clusterer_name
from ._cover import CoverBase
from ._lensgraph import LensGraph
from ._nerve import membership_matrix, nerve_edges
from ._settings import GraphSettings, is_auto

__all__ = ["build_graph", "hole_scale_settings", "lens_jitter", "node_jitter",
           "node_statistics"]


#: Rows on which the lens jitter is measured when the build reads no shared neighbour graph
#: (their exact neighbours among all rows: O(JITTER_ROWS n d)).
JITTER_ROWS = 1000


def lens_jitter(values, neighbours, rows=None):
    """Root-mean-square lens difference between k-NN neighbours, per lens, as a share of its span.

    Parameters
    ----------
    values : ndarray of shape (n_rows, n_lenses)
        The lens values on the cover scale.
    neighbours : ndarray of int of shape (n_rows, k), or (len(rows), k)
        Each row's k nearest neighbours (of the given ``rows`` only).
    rows : ndarray of int, optional
        The rows whose neighbours are given (default: every row); the mean
        then runs over them alone (a sample).

    Returns
    -------
    list of float
        ``delta_j = sqrt(mean over (i, its neighbours l) of (u_ij - u_lj)^2) / span_j``
        (0 for a constant lens): the lens's jitter at the data's resolution,
        which widens the significance threshold of
        :func:`lenswork.graph._thresholds.resolution_threshold`. Unit weights
        over the shared k-NN graph (the heat-kernel version of the screen
        weighs close neighbours more).

    Examples
    --------
    >>> x = np.linspace(0, 1, 101)[:, None]
    >>> nn = np.column_stack([np.r_[1:101, 99], np.r_[1, 0:100]])   # the two neighbours
    >>> round(lens_jitter(x, nn)[0], 4)
    0.01
    """
    U = np.asarray(values, dtype=np.float64)
    idx = np.asarray(neighbours, dtype=np.int64)
    own = np.arange(U.shape[0]) if rows is None else np.asarray(rows, dtype=np.int64)
    out = []
    for j in range(U.shape[1]):
        u = U[:, j]
        span = float(u.max() - u.min()) if u.size else 0.0
        if span <= 0 or idx.size == 0:
            out.append(0.0)
            continue
        d2 = float(np.mean((u[own][:, None] - u[idx]) ** 2))
        out.append(float(np.sqrt(d2) / span))
    return out


def node_jitter(values, neighbours, membership, rows=None, fallback=None):
    """Per node and lens: the RMS lens difference between its member rows and their neighbours.

    Parameters
    ----------
    values : ndarray of shape (n_rows, n_lenses)
        The lens values on the cover scale.
    neighbours : ndarray of int of shape (n_rows, k), or (len(rows), k)
    membership : scipy.sparse matrix of shape (n_rows, n_nodes)
    rows : ndarray of int, optional
        The rows whose neighbours are given (default: every row).
    fallback : sequence of float, optional
        Per lens, the value of a node with none of ``rows`` (default 0).

    Returns
    -------
    list of list of float
        ``[lens][node]``: :func:`lens_jitter` restricted to the node's members
        (as a share of the lens's span), the local uncertainty of a feature
        end at that node (``lenswork.graph._thresholds``, module notes).

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> x = np.array([[0.0], [0.1], [0.9], [1.0]])
    >>> nn = np.array([[1], [0], [3], [2]])
    >>> M = sp.csr_matrix(np.array([[1, 0], [1, 0], [0, 1], [0, 1]]))
    >>> np.round(node_jitter(x, nn, M), 3).tolist()
    [[0.1, 0.1]]
    """
    U = np.asarray(values, dtype=np.float64)
    idx = np.asarray(neighbours, dtype=np.int64)
    own = np.arange(U.shape[0]) if rows is None else np.asarray(rows, dtype=np.int64)
    M = membership.tocsr()[own]
    counts = np.asarray(M.sum(axis=0)).ravel()
    out = []
    for j in range(U.shape[1]):
        u = U[:, j]
        span = float(u.max() - u.min()) if u.size else 0.0
        if span <= 0 or idx.size == 0:
            out.append([0.0] * M.shape[1])
            continue
        per_row = np.mean((u[own][:, None] - u[idx]) ** 2, axis=1)
        sums = np.asarray(M.T @ per_row).ravel()
        base = 0.0 if fallback is None else float(fallback[j]) * span
        rms = np.where(counts > 0, np.sqrt(sums / np.maximum(counts, 1)), base) / span
        out.append([float(x) for x in rms])
    return out


def _sample_neighbours(ws, k, metric):
    """(rows, their k exact neighbours among all rows) for a seeded sample of JITTER_ROWS rows.

    No all-rows neighbour graph: :meth:`Workspace.neighbors_of`, O(JITTER_ROWS n d).
    Cached in the workspace.
    """

    def compute():
        if ws.n <= JITTER_ROWS:
            rows = np.arange(ws.n)
        else:
            rng = np.random.default_rng(seed_of(ws.random_state))
            rows = np.sort(rng.choice(ws.n, JITTER_ROWS, replace=False))
        return rows, ws.neighbors_of(rows, k, metric)

    return ws.cached(("jitter_sample", metric, k, JITTER_ROWS), compute)


def _data_columns(cloud, columns, lens_names):
    """name -> values for the data columns whose node statistics are wanted."""
    if columns is None:
        return {}
    if isinstance(columns, str):
        columns = list(cloud.feature_names) if columns.strip().lower() == "all" else [columns]
    out = {}
    features = list(cloud.feature_names)
    for name in columns:
        name = str(name)
        if name in lens_names:
            raise ParameterError(
                f"Data column {name!r} has the name of a lens column; node statistics are kept "
                f"once per name. Leave it out of 'columns'."
            )
        if name in features:  # in the table's units: any intake scaling undone
            out[name] = cloud.unscaled(name)
        elif name in cloud.passthrough:
            try:
                values = np.asarray(cloud.passthrough[name], dtype=np.float64)
            except (TypeError, ValueError):
                raise ParameterError(
                    f"Column {name!r} is not numeric, so it has no node mean. Choose a numeric "
                    f"feature or passthrough column."
                ) from None
            if not np.isfinite(values).all():
                row = int(np.flatnonzero(~np.isfinite(values))[0])
                raise ParameterError(
                    f"Column {name!r} has a missing value at row {row + 1}; node statistics need "
                    f"finite values. Choose another column or fill it first."
                )
            out[name] = values
        else:
            import difflib

            known = [*features, *map(str, cloud.passthrough)]
            close = difflib.get_close_matches(name, known, n=1)
            hint = f" Did you mean {close[0]!r}?" if close else ""
            raise ParameterError(f"No data column {name!r}.{hint} Columns: {', '.join(known)}.")
    return out


def node_statistics(membership, columns):
    """Mean, min and max of each column over each node's members.

    Parameters
    ----------
    membership : scipy.sparse matrix of shape (n_rows, n_nodes)
        No empty node.
    columns : dict of str -> ndarray of shape (n_rows,)

    Returns
    -------
    dict of str -> ndarray of shape (n_nodes, 3)

    Notes
    -----
    Segment reductions (``np.add.reduceat`` and friends) over the members in
    column order: O(P) per column for P memberships.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> M = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 1]]))
    >>> node_statistics(M, {"v": np.array([1.0, 2.0, 6.0])})["v"].tolist()
    [[1.5, 1.0, 2.0], [4.0, 2.0, 6.0]]
    """
    csc = membership.tocsc()
    csc.sort_indices()
    starts = csc.indptr[:-1]
    sizes = np.diff(csc.indptr)
    out = {}
    for name, values in columns.items():
        vals = np.asarray(values, dtype=np.float64)[csc.indices]
        out[name] = np.column_stack([
            np.add.reduceat(vals, starts) / sizes,
            np.minimum.reduceat(vals, starts),
            np.maximum.reduceat(vals, starts),
        ])
    return out


def build_graph(lenses, workspace, settings=None, *, columns=None, **overrides):
    """Build a Mapper graph (Mapper, 2007) from lens columns on the shared neighbour graph.

    Parameters
    ----------
    lenses : LensTable, LensColumn or list of them, dict, array-like, str, or object
        Lens values of shape (n_samples,) or (n_samples, n_lenses). LensColumns
        are read with their recorded normalisation applied; an object with a
        ``to_lens_table()`` method (a screening result) is converted first;
        registry specs (``"pca"``, ``["dtm:mass=0.05", ...]``) are computed on
        the workspace (see :func:`lenswork.table.as_lens_table`).
    workspace : Workspace or array-like of shape (n_samples, n_features)
        The rows; its shared neighbour graph ``workspace.neighbors(k)`` does
        the clustering.
    settings : GraphSettings or dict, optional
        Every graph setting (default ``GraphSettings()``); the keywords below
        are overrides applied with ``settings.replace(...)``.
    columns : list of str or "all", optional
        Data columns (features, in the table's own units when the intake scaled
        them, or numeric passthrough) whose node mean, min and
        max are kept beside the lenses'.
    **overrides
        Any :class:`GraphSettings` field, for example:
    cover : {"interval", "ball"} or cover object, default="interval"
        See :class:`GraphSettings` and :data:`lenswork.graph.COVERS`.
    intervals : int, sequence of int or "auto", default="auto"
        Intervals per lens (see :class:`Cover`); ``"auto"`` follows the rows
        and the lens columns (see :class:`GraphSettings`).
    overlap : float or sequence of float, default=0.3
        Overlap fraction in [0, 1).
    scale : {"auto", "balanced", "rank", "raw"}, default="auto"
        Lay the intervals on ranks (equal-count), on the lens values, or on the
        mean of the two (``"balanced"``, what ``"auto"`` gives; see
        :class:`GraphSettings`).
    clusterer : {"auto", "graph", "single", "element-knn"} or estimator, default="auto"
        See :mod:`lenswork.graph._cluster`; ``"auto"``: ``"graph"`` up to 50,000
        rows or when ``workspace`` already holds its neighbour graph, else
        ``"element-knn"`` (:func:`lenswork.graph._settings.auto_clusterer`).
    cutoff : float or {"auto", "fence", "none"}, default="auto"
        Longest neighbour edge the graph clusterer keeps; ``"auto"`` cuts only
        at a gap in the tail of the neighbour distances (see
        :func:`neighbor_cutoff`).
    min_size : int or "auto", default="auto"
        Groups with fewer points are fragments. ``"auto"``: ``round((ln n) ** 1.1)``
        in [3, 10] (see :class:`GraphSettings`), 10 from about 3,000 rows on:
        below the neighbourhood size k = 15 and above the chance groups of 5-6
        points that restricting a 10-20-dimensional neighbour graph to a slice
        leaves (measured on Gaussian samples; with min_size = 5 they add false
        loops). Small tables get smaller values, so their elements keep nodes.
    k : int, default=15
        Neighbours per row of the shared graph.
    metric : {"euclidean", "manhattan", "chebyshev", "cosine"}, default="euclidean"
    fragments : {"attach", "report"}, default="attach"
        Attach each fragment to the nearest kept cluster of its element within
        two neighbour hops and the cut-off (in rounds, so chains of fragments
        follow), or leave it out and report it.
    gap_bins : int, default=10
        Histogram bins of the single-linkage gap rule.
    random_state : int, optional
        Seed for scikit-learn clusterers; default: the workspace's.
    hole_scales : int, default=4
        With two or more lenses and an interval cover, the graph is also built
        at ``hole_scales - 1`` coarser interval counts, evenly from ``N`` down to
        ``N / 2`` (:func:`hole_scale_settings`), and the holes of each are
        recorded in ``params["holes_over_scales"]``; the fewest is the number
        of significant holes (:attr:`GraphSummary.significant_holes`): a hole
        of one missing cell fills in at a coarser scale, a hole of the data
        does not. 1 builds this cover alone.

    Returns
    -------
    LensGraph

    Raises
    ------
    InputError
        Lens values of the wrong shape or with missing values.
    ParameterError
        A parameter out of range, or no group reaching ``min_size``.

    Notes
    -----
    Steps and cost, for n rows, P (point, element) pairs and V nodes:

    1. cover: ``first = floor(t - r) + 1, last = floor(t)`` per point and lens,
       O(n m) (O(n log n) for ranks); the ball cover: a greedy net and one
       KD-tree ball query per centre, O(n log n + P);
    2. clusters: per element, connected components of the shared neighbour
       graph restricted to the element and to edges <= cut-off, O(k P)
       (``"graph"``), or of a k-NN graph inside the element, O(L P d) with at
       most L = 1,000 landmarks per element (``"element-knn"``; then the lens
       jitter of the significance rule comes from 1,000 sampled rows' exact
       neighbours, O(1,000 n d));
    3. nerve: edges from the one sparse product ``M^T M``, O(sum of squared
       memberships per row);
    4. node statistics by segment reductions over the membership, O(P) per column.

    What depends only on (workspace, k, cut-off) -- the neighbour graph, the
    cut-off and the cut neighbour lists -- is cached in the workspace, so a
    sweep over covers pays for it once.

    References
    ----------
    .. [1] M. Carrière, B. Michel and S. Oudot, "Statistical analysis and
       parameter selection for Mapper", JMLR 19, 2018.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> angle = rng.uniform(0, 2 * np.pi, 600)
    >>> X = np.column_stack([np.cos(angle), np.sin(angle)]) + rng.normal(0, 0.02, (600, 2))
    >>> g = build_graph(X[:, 0], X, intervals=8, overlap=0.3)
    >>> s = g.summary()
    >>> s.n_components, s.loops
    (1, 1)
    """
    base = GraphSettings.coerce(settings)
    settings = base.replace(**overrides) if overrides else base
    ws = workspace if isinstance(workspace, Workspace) else Workspace(workspace)
    table = as_lens_table(lenses, ws, what="build_graph")
    auto = settings.auto_fields()
    settings = settings.resolve(ws.n, len(table.names), workspace=ws)
    graph = _build(table, ws, settings, columns, auto)
    scales = hole_scale_settings(settings, len(table.names))
    if scales:
        holes = []
        with _progress.step(f"graph: holes over {len(scales) + 1} cover scales"):
            previous = _progress.set_reporter(False)  # the scale builds report nothing
            try:
                for cell in scales:
                    try:
                        with warnings.catch_warnings():
                            warnings.simplefilter("ignore", LensworkWarning)
                            holes.append(_build(table, ws, cell, None, ()).summary().holes)
                    except ParameterError:  # no group reaches min_size here: no hole
                        holes.append(0)
            finally:
                _progress.restore(previous)
        own = graph.summary().holes
        counts = [own, *holes]
        graph.params["holes_over_scales"] = {
            "intervals": [list(iv) if isinstance(iv, tuple) else iv
                          for iv in (settings.intervals, *(c.intervals for c in scales))],
            "holes": counts,
            "significant": None if any(h is None for h in counts) else int(min(counts)),
        }
    return graph


def hole_scale_settings(settings, n_lenses):
    """The coarser covers a multi-lens graph's holes are checked against (see build_graph).

    ``settings.hole_scales - 1`` interval counts evenly from the cover's ``N``
    down to ``N / 2`` (per lens, rounded, at least 1, repeats dropped); empty
    for one lens, a ball cover or ``hole_scales = 1``.

    Examples
    --------
    >>> [c.intervals for c in hole_scale_settings(GraphSettings(intervals=10, min_size=5), 2)]
    [8, 7, 5]
    """
    if n_lenses < 2 or settings.hole_scales < 2 or settings.cover_kind != "interval" \
            or isinstance(settings.cover, CoverBase) or is_auto(settings.intervals):
        return []
    own = settings.intervals if isinstance(settings.intervals, tuple) \
        else (settings.intervals,) * n_lenses
    seen = {tuple(own)}
    out = []
    for c in np.linspace(1.0, 0.5, settings.hole_scales)[1:]:
        counts = tuple(max(1, int(round(N * c))) for N in own)
        if counts in seen:
            continue
        seen.add(counts)
        value = counts[0] if len(set(counts)) == 1 else counts
        out.append(settings.replace(intervals=value))
    return out


def _build(table, ws, settings, columns, auto):
    """One graph of resolved ``settings`` (build_graph without the hole scales)."""
    n = ws.n
    seed = ws.random_state if settings.random_state is None else settings.random_state
    names = table.names
    values = np.asarray(table.values(), dtype=np.float64)
    lens_prov = [c.provenance() for c in table]
    data = _data_columns(ws.cloud, columns, names)
    clusterer, k, metric = settings.clusterer, settings.k, settings.metric
    with _progress.step(f"graph: cover of {', '.join(names)}"):
        cover = settings.make_cover().fit(values, names)
        rows, elements = cover.incidence(order=cover.values_[:, 0])
    own = isinstance(clusterer, str) and CLUSTERERS[clusterer].whole_element  # no shared graph
    uses_graph = (isinstance(clusterer, str) and clusterer == "graph") \
        or (settings.fragments == "attach" and not own)
    if uses_graph:
        ws.neighbors(k, metric)  # computed (or found in the cache) outside the timed steps below
    with _progress.step(f"graph: clusters of {cover.n_elements} cover elements"):
        result = cluster_elements(ws, rows, elements, settings, seed)
    V = result.node_element.size
    with _progress.step(f"graph: nerve of {V} nodes"):
        M = membership_matrix(result.rows, result.nodes, n, V)
        edges, shared = nerve_edges(M)
        stats = node_statistics(M, {**dict(zip(names, values.T)), **data})
    used = result.cutoff
    cutoff, min_size = settings.cutoff, settings.min_size
    params = {
        "lens_columns": names,
        "cover": cover.params(),
        "clusterer": clusterer_name(clusterer),
        "cutoff": cutoff if isinstance(cutoff, str) else float(cutoff),
        "cutoff_used": None if (not np.isfinite(used)) else float(used),
        "min_size": min_size, "k": k, "metric": metric, "fragments": settings.fragments,
        "gap_bins": settings.gap_bins, "random_state": seed, "columns": list(data),
    }
    provenance = {
        "lenswork_version": __version__,
        "input": ws.cloud.provenance,
        "n_rows": int(n),
        "excluded_rows": [
            {"row": int(r.row), "id": r.id.item() if isinstance(r.id, np.generic) else r.id,
             "reason": r.reason}
            for r in ws.cloud.excluded
        ],
        "random_state": seed,
        "lenses": lens_prov,
        "graph_settings": settings.to_dict(),
        "auto_settings": {name: settings.to_dict()[name] for name in auto},
    }
    if uses_graph:
        g = ws.neighbors(k, metric)
        params["lens_jitter"] = lens_jitter(cover.values_, g.indices)
        params["node_jitter"] = node_jitter(cover.values_, g.indices, M)
        provenance["neighbor_graph"] = {
            "k": g.k, "metric": g.metric, "method": g.method,
            "info": {key: v for key, v in g.info.items() if key != "seconds"},
        }
    elif ws.n >= 2:  # no shared graph: the jitter on a sample of rows
        with _progress.step(f"graph: lens jitter on {min(ws.n, JITTER_ROWS):,} rows"):
            sample, nb = _sample_neighbours(ws, k, metric)
            params["lens_jitter"] = lens_jitter(cover.values_, nb, rows=sample)
            params["node_jitter"] = node_jitter(cover.values_, nb, M, rows=sample,
                                                fallback=params["lens_jitter"])
        params["lens_jitter_rows"] = int(sample.size)
    graph = LensGraph(
        M, cover.element_ids(result.node_element), edges, shared, stats,
        node_levels=cover.levels(result.node_element), lens_columns=names,
        data_columns=list(data), row_ids=ws.cloud.ids,
        id_name=ws.cloud.id_name, params=params, provenance=provenance, fragments=result.report,
    )
    lost = graph.unassigned.size
    if lost:
        advice = "a larger k (thin slices stay connected), a smaller min_size"
        if np.isfinite(used):
            advice += " or a larger cutoff"
        ws.warn(
            f"{lost:,} of {n:,} rows are in no node (fragments smaller than min_size={min_size} "
            f"with no kept cluster near them); they are listed in LensGraph.unassigned. Use "
            f"{advice} to keep them."
        )
    return graph

