"""The graph on partitions: rows routed to cover elements, elements clustered on workers.

1. Cover: intervals on the raw lens values (their global minimum and maximum
   from a reduction), laid out as :class:`lenswork.Cover` lays them
   (``L = span / (1 + (N - 1)(1 - p))``, ``s = L (1 - p)``); a value's
   intervals are ``first = floor(t - r) + 1 .. last = floor(t)``,
   ``t = (v - min) / s``, ``r = 1 / (1 - p)``, clipped to ``[0, N - 1]``.
2. Routing: each partition splits its rows by element; each element gathers
   its pieces from every partition (a shuffle by element id).
3. Each element is clustered on a worker by :func:`cluster_element`, a
   neighbour graph inside the element.
4. The nerve from the membership lists: ``M^T M`` (:func:`lenswork.graph.nerve_edges`).
"""

from __future__ import annotations

import math

import numpy as np

from .. import __version__
from .._errors import ParameterError
from .._validation import check_choice, check_float, check_int
from ..graph import LensGraph, membership_matrix, nerve_edges, node_statistics
from ._intake import require_dask

__all__ = ["ELEMENT_CUTOFFS", "cluster_element", "element_ranges", "partitioned_graph"]

#: Cut-off rules of :func:`cluster_element` (besides a number).
ELEMENT_CUTOFFS = ("auto", "none")
_GAP_BINS = 10


def _gap_cutoff(dist):
    """Lower edge of the first empty bin of log distances over [median, max] (inf if none)."""
    ld = np.log(dist[dist > 0])
    if ld.size == 0:
        return math.inf
    med, top = np.median(ld), ld.max()
    if top <= med:
        return math.inf
    counts, edges = np.histogram(ld, bins=_GAP_BINS, range=(med, top))
    empty = np.flatnonzero(counts == 0)
    return math.inf if empty.size == 0 else float(np.exp(edges[empty[0]]))


def cluster_element(X_element, rows, *, k=15, cutoff="auto", min_size=10, fragments="attach"):
    """Cluster the points of one cover element on a neighbour graph inside the element.

    Parameters
    ----------
    X_element : ndarray of shape (m, n_features)
        The element's points.
    rows : ndarray of shape (m,), int
        Their row positions (used to order the clusters and break ties).
    k : int, default=15
        Neighbours per point, among the element's points (Euclidean).
    cutoff : float or {"auto", "none"}, default="auto"
        Longest edge kept. ``"auto"``: the gap rule of the single-machine graph
        clusterer (lower edge of the first empty bin of 10 bins of the log
        neighbour distances between their median and maximum; infinity when no
        bin is empty), applied to this element's own neighbour distances.
    min_size : int, default=10
        Groups with fewer points are fragments.
    fragments : {"attach", "report"}, default="attach"
        ``"attach"``: each fragment joins the kept group holding the point
        nearest to it (exactly, over all kept points of the element), when
        that point lies within the cut-off; ``"report"``: fragments stay out.

    Returns
    -------
    labels : ndarray of shape (m,), int64
        Cluster of each point, numbered 0.. in the order of their smallest
        row; -1 for points left out.
    report : dict
        ``groups``, ``fragment_groups``, ``attached_groups``,
        ``attached_points``, ``left_out_points``, ``cutoff``.

    Notes
    -----
    The connected components of the symmetric k-NN graph of the element
    (``scipy.sparse.csgraph.connected_components``), edges longer than the
    cut-off removed. The neighbour search is scikit-learn's exact one, O(m^2 d)
    at worst (brute force in high dimension), O(m k log m) with a tree in low
    dimension. A plain function of the element alone, so it runs on a worker
    and gives the same result in one process.

    Examples
    --------
    >>> X = np.concatenate([np.zeros((12, 1)), np.full((12, 1), 5.0)])
    >>> X = X + np.arange(24)[:, None] / 1e3
    >>> labels, report = cluster_element(X, np.arange(24), k=3)
    >>> np.bincount(labels).tolist(), report["groups"]
    ([12, 12], 2)
    """
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components
    from sklearn.neighbors import NearestNeighbors

    X = np.asarray(X_element, dtype=np.float64)
    rows = np.asarray(rows, dtype=np.int64)
    m = X.shape[0]
    report = {"groups": 0, "fragment_groups": 0, "attached_groups": 0, "attached_points": 0,
              "left_out_points": 0, "cutoff": None}
    if m == 0:
        return np.zeros(0, dtype=np.int64), report
    kk = min(k, m - 1)
    if kk >= 1:
        nn = NearestNeighbors(n_neighbors=kk + 1).fit(X)
        dist, idx = nn.kneighbors(X)
        dist, idx = dist[:, 1:], idx[:, 1:]
        if isinstance(cutoff, str):
            cut = _gap_cutoff(dist.ravel()) if cutoff == "auto" else math.inf
        else:
            cut = float(cutoff)
        keep = dist <= cut
        r = np.repeat(np.arange(m), kk)[keep.ravel()]
        c = idx.ravel()[keep.ravel()]
        A = sp.csr_matrix((np.ones(r.size), (r, c)), shape=(m, m))
        _, lab = connected_components(A, directed=True, connection="weak")
    else:
        cut = math.inf if not isinstance(cutoff, (int, float)) else float(cutoff)
        lab = np.zeros(m, dtype=np.int64)
    report["cutoff"] = None if math.isinf(cut) else cut
    sizes = np.bincount(lab)
    kept = sizes >= min_size
    report["groups"] = int(sizes.size)
    report["fragment_groups"] = int((~kept).sum())
    lab = lab.astype(np.int64)
    if fragments == "attach" and kept.any() and not kept.all():
        kp = np.flatnonzero(kept[lab])
        fp = np.flatnonzero(~kept[lab])
        nn = NearestNeighbors(n_neighbors=1).fit(X[kp])
        d1, i1 = nn.kneighbors(X[fp])
        d1, target = d1[:, 0], lab[kp[i1[:, 0]]]
        groups = lab[fp]
        # per fragment group: the nearest kept point of any of its points (ties: smaller label)
        order = np.lexsort((target, d1, groups))
        first = np.ones(order.size, dtype=bool)
        first[1:] = groups[order][1:] != groups[order][:-1]
        pick = order[first]
        ok = d1[pick] <= cut
        remap = np.arange(sizes.size)
        remap[groups[pick][ok]] = target[pick][ok]
        report["attached_groups"] = int(ok.sum())
        lab = remap[lab]
    in_node = kept[lab]
    report["left_out_points"] = int(m - in_node.sum())
    report["attached_points"] = int(in_node.sum() - sizes[kept].sum())
    first_row = np.full(sizes.size, np.iinfo(np.int64).max)
    np.minimum.at(first_row, lab[in_node], rows[in_node])
    kept_labels = np.flatnonzero(kept)
    order = kept_labels[np.argsort(first_row[kept_labels], kind="stable")]
    new = np.full(sizes.size, -1, dtype=np.int64)
    new[order] = np.arange(order.size)
    out = np.where(in_node, new[lab], -1)
    return out, report


def element_ranges(values, lo, hi, intervals, overlap):
    """First and last interval per row and lens on the raw scale (see module notes).

    Examples
    --------
    >>> first, last = element_ranges(np.linspace(0, 1, 11)[:, None], [0.0], [1.0], [4], [0.25])
    >>> first[:, 0].tolist(), last[:, 0].tolist()
    ([0, 0, 0, 0, 1, 1, 2, 2, 3, 3, 3], [0, 0, 0, 1, 1, 2, 2, 3, 3, 3, 3])
    """
    V = np.asarray(values, dtype=np.float64)
    first = np.empty(V.shape, dtype=np.int64)
    last = np.empty(V.shape, dtype=np.int64)
    for j in range(V.shape[1]):
        N, p = int(intervals[j]), float(overlap[j])
        span = hi[j] - lo[j] if hi[j] > lo[j] else 1.0
        length = span / (1.0 + (N - 1) * (1.0 - p))
        step = length * (1.0 - p)
        t = (V[:, j] - lo[j]) / step
        last[:, j] = np.minimum(np.floor(t), N - 1)
        first[:, j] = np.clip(np.floor(t - 1.0 / (1.0 - p)) + 1.0, 0, N - 1)
    return first, last


def _route(data, lens_part, offset, lo, hi, intervals, overlap):
    """Partition -> dict element -> (global rows, X rows)."""
    X = data[0]
    V = lens_part[0]
    first, last = element_ranges(V, lo, hi, intervals, overlap)
    n, m = V.shape
    rows = np.arange(n)
    flat = np.zeros(n, dtype=np.int64)
    for j in range(m):
        count = last[rows, j] - first[rows, j] + 1
        base = flat * intervals[j] + first[rows, j]
        nr, nf = [], []
        for o in range(int(count.max())):
            sel = np.flatnonzero(count > o)
            nr.append(rows[sel])
            nf.append(base[sel] + o)
        rows, flat = np.concatenate(nr), np.concatenate(nf)
    out = {}
    order = np.lexsort((rows, flat))
    rows, flat = rows[order], flat[order]
    bounds = np.flatnonzero(np.diff(flat)) + 1
    for r in np.split(np.arange(rows.size), bounds):
        if r.size:
            e = int(flat[r[0]])
            out[e] = (rows[r] + offset, X[rows[r]])
    return out


def _piece(routed, e):
    return routed.get(e)


def _element_task(e, k, cutoff, min_size, fragments, *pieces):
    pieces = [p for p in pieces if p is not None]
    if not pieces:
        return e, np.zeros(0, np.int64), np.zeros(0, np.int64), None
    rows = np.concatenate([p[0] for p in pieces])
    X = np.concatenate([p[1] for p in pieces])
    labels, report = cluster_element(X, rows, k=k, cutoff=cutoff, min_size=min_size,
                                     fragments=fragments)
    return e, rows, labels, report


def _ids(data):
    return data[1]


def _minmax(part):
    V = part[0]
    return V.min(axis=0), V.max(axis=0)


def partitioned_graph(lenses, *, intervals=10, overlap=0.3, k=15, cutoff="auto", min_size=10,
                      fragments="attach", compute=None):
    """Build the Mapper graph (Mapper, 2007) of lens columns on partitions.

    Parameters
    ----------
    lenses : PartitionedLenses
        Lens columns (from :func:`partitioned_lenses`); all are used.
    intervals, overlap : int / float or one per lens
        The cover, on the raw lens values (ranks need a global sort and are not
        offered here).
    k, cutoff, min_size, fragments
        As in :func:`cluster_element`.
    compute : callable, optional
        ``compute(list of delayed) -> list of results`` for the main step (the
        CLI passes one that shows Dask's progress); default ``dask.compute``.

    Returns
    -------
    LensGraph
        The same object as :func:`lenswork.build_graph` returns, made with the
        public constructor; ``params["clusterer"] == "element-knn"``.

    Notes
    -----
    Tasks: one pass for the lens minimum and maximum; per partition, the
    routing of its rows to elements; per element, the gather of its pieces
    and :func:`cluster_element`. The membership lists (one entry per row and
    node) come back to the client, where ``M^T M`` gives the edges:
    O(P) memory for P memberships.

    Examples
    --------
    >>> import dask.array as da
    >>> from lenswork.partitioned import open_partitioned, partitioned_lenses
    >>> rng = np.random.default_rng(0)
    >>> a = rng.uniform(0, 2 * np.pi, 600)
    >>> X = np.column_stack([np.cos(a), np.sin(a)]) + rng.normal(0, 0.02, (600, 2))
    >>> cloud = open_partitioned(da.from_array(X, chunks=(200, 2)))
    >>> g = partitioned_graph(partitioned_lenses(cloud, ["column:name=x0"]), intervals=8)
    >>> g.summary().loops
    1
    """
    dask = require_dask()
    cloud = lenses.cloud
    mlen = len(lenses.names)
    ctx = "partitioned_graph"
    ints = [check_int("intervals", v, lo=1, context=ctx)
            for v in (intervals if np.ndim(intervals) else [intervals] * mlen)]
    ovs = [check_float("overlap", v, lo=0.0, hi=1.0, hi_open=True, context=ctx)
           for v in (overlap if np.ndim(overlap) else [overlap] * mlen)]
    if len(ints) != mlen or len(ovs) != mlen:
        raise ParameterError(
            f"Give one 'intervals' and 'overlap' value, or one per lens column ({mlen})."
        )
    k = check_int("k", k, lo=1, context=ctx)
    min_size = check_int("min_size", min_size, lo=1, context=ctx)
    fragments = check_choice("fragments", fragments, ("attach", "report"), context=ctx)
    if isinstance(cutoff, str):
        cutoff = check_choice("cutoff", cutoff, ELEMENT_CUTOFFS, context=ctx)
    else:
        cutoff = check_float("cutoff", cutoff, lo=0.0, context=ctx)
    lens_parts = lenses.parts
    mm = dask.compute(*[dask.delayed(_minmax, pure=True)(p) for p in lens_parts])
    lo = np.min([a for a, _ in mm], axis=0)
    hi = np.max([b for _, b in mm], axis=0)
    data_parts = cloud.delayed_parts()
    route = dask.delayed(_route, pure=True)
    routed = [route(dp, lp, int(cloud.offsets[i]), lo, hi, ints, ovs)
              for i, (dp, lp) in enumerate(zip(data_parts, lens_parts))]
    n_el = int(np.prod(ints))
    piece = dask.delayed(_piece, pure=True)
    task = dask.delayed(_element_task, pure=True)
    tasks = [task(e, k, cutoff, min_size, fragments, *[piece(r, e) for r in routed])
             for e in range(n_el)]
    get_ids = dask.delayed(_ids, pure=True)
    compute = compute or (lambda items: list(dask.compute(*items)))
    np_ = len(data_parts)
    out = compute([*tasks, *lenses.parts, *[get_ids(dp) for dp in data_parts]])
    results, lens_values, ids = out[:n_el], out[n_el:n_el + np_], out[n_el + np_:]
    values = np.concatenate([lv[0] for lv in lens_values])
    n = cloud.n
    out_rows, out_nodes, node_element = [], [], []
    report = {"elements": 0, "groups": 0, "fragment_groups": 0, "attached_groups": 0,
              "attached_points": 0, "left_out_points": 0}
    cutoffs = []
    V = 0
    for e, rows, labels, rep in results:
        if rep is None:
            continue
        report["elements"] += 1
        for key in ("groups", "fragment_groups", "attached_groups", "attached_points",
                    "left_out_points"):
            report[key] += rep[key]
        cutoffs.append(rep["cutoff"])
        inn = labels >= 0
        if not inn.any():
            continue
        nn = int(labels.max()) + 1
        out_rows.append(rows[inn])
        out_nodes.append(labels[inn] + V)
        node_element.append(np.full(nn, e, dtype=np.int64))
        V += nn
    if V == 0:
        raise ParameterError(
            f"No cover element holds a group of at least min_size={min_size} points, so the "
            f"graph would be empty. Use a smaller min_size, fewer intervals or a larger cutoff."
        )
    M = membership_matrix(np.concatenate(out_rows), np.concatenate(out_nodes), n, V)
    edges, shared = nerve_edges(M)
    names = list(lenses.names)
    stats = node_statistics(M, dict(zip(names, values.T)))
    elements = np.column_stack(np.unravel_index(np.concatenate(node_element), ints))
    params = {
        "lens_columns": names,
        "cover": {"intervals": ints, "overlap": ovs, "scale": "raw", "start": lo.tolist(),
                  "span": (hi - lo).tolist()},
        "clusterer": "element-knn", "cutoff": cutoff, "min_size": min_size, "k": k,
        "metric": "euclidean", "fragments": fragments,
        "cutoff_used": [c for c in cutoffs if c is not None][:50],
        "partitions": cloud.n_partitions,
    }
    provenance = {
        "lenswork_version": __version__, "input": cloud.provenance, "n_rows": int(n),
        "excluded_rows": [{"row": int(r), "id": i if isinstance(i, (int, str)) else str(i),
                           "reason": why} for r, i, why in cloud.excluded],
        "lenses": lenses.provenance,
    }
    return LensGraph(
        M, elements, edges, shared, stats, lens_columns=names, row_ids=np.concatenate(ids),
        id_name=cloud.id_name, params=params, provenance=provenance, fragments=report,
    )
