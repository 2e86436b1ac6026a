"""The graph on partitions: rows routed to cover elements, elements clustered on workers.

1. Cover: intervals on the raw lens values (their global minimum and maximum
   from a reduction), laid out as :class:`lenswork.Cover` lays them
   (``L = span / (1 + (N - 1)(1 - p))``, ``s = L (1 - p)``); a value's
   intervals are ``first = floor(t - r) + 1 .. last = floor(t)``,
   ``t = (v - min) / s``, ``r = 1 / (1 - p)``, clipped to ``[0, N - 1]``.
2. Routing, by Dask's shuffle: each partition becomes a DataFrame of one
   line per (row, element) membership (:func:`memberships`: element id,
   global row, the row's features), and ``DataFrame.shuffle(element,
   shuffle_method="p2p")`` moves every line to the output partition of its
   element (hashed ids; ``"tasks"`` without a distributed client). The P2P
   shuffle is built for data larger than the workers' memory: shards are
   buffered (sized by :func:`p2p_buffers` on a local cluster) and written
   to each worker's local disk, and an output partition is read from disk
   once, when its clustering task runs. Measured against the earlier
   design (one task per partition returning one tuple of per-block dicts,
   read by ``getitem`` tasks): at 1e6 rows x 20 both take 10-13 s; at 1e7 x
   20 on 2 workers x 600 MB the tuples, spilled, were read back whole by
   every ``getitem`` (52 GB read back, stopped after 45 min), while the
   shuffle writes each membership line to disk once (2.4 GB of shards) and
   the graph finishes in about 2 min. One routing task per (partition,
   block) was not taken: it reads every partition once per block.
3. Each element is clustered on a worker by
   :func:`lenswork.graph.cluster_element`, a neighbour graph inside the
   element: the ``"element-knn"`` rule of :data:`lenswork.graph.CLUSTERERS`,
   so :func:`lenswork.build_graph` with that rule gives the same graph.
4. The nerve from the membership lists: ``M^T M`` (:func:`lenswork.graph.nerve_edges`).
"""

from __future__ import annotations

import numpy as np

from .. import __version__
from .._errors import ParameterError
from .._validation import check_choice, check_float, check_int
from ..graph import CUTOFF_WORDS, LensGraph, membership_matrix, nerve_edges, node_statistics
from ..graph._cluster import NodeCollector
from ..graph._cluster_element import cluster_element
from ._client import active_client, gather_each
from ._intake import require_dask

__all__ = ["ELEMENT_CUTOFFS", "cluster_element", "element_ranges", "memberships",
           "partitioned_graph"]

#: Cut-off rules of the element clusterer (besides a number).
ELEMENT_CUTOFFS = CUTOFF_WORDS
#: The clustering rule of the partitioned graph, a key of :data:`lenswork.graph.CLUSTERERS`.
CLUSTERER = "element-knn"
_ELEMENT, _ROW = "element", "row"


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


def memberships(values, lo, hi, intervals, overlap):
    """Every (row, element) pair of a block of rows: positions and flat element ids.

    Elements are numbered as :func:`numpy.ravel_multi_index` numbers the grid
    of intervals (the last lens fastest).

    Examples
    --------
    >>> rows, flat = memberships(np.array([[0.0], [0.5], [1.0]]), [0.0], [1.0], [2], [0.5])
    >>> rows.tolist(), flat.tolist()
    ([0, 1, 2, 1], [0, 0, 1, 1])
    """
    first, last = element_ranges(values, lo, hi, intervals, overlap)
    n, m = first.shape
    rows = np.arange(n)
    flat = np.zeros(n, dtype=np.int64)
    for j in range(m):
        count = last[rows, j] - first[rows, j] + 1
        base = flat * intervals[j] + first[rows, j]
        nr, nf = [], []
        for o in range(int(count.max(initial=0))):
            sel = np.flatnonzero(count > o)
            nr.append(rows[sel])
            nf.append(base[sel] + o)
        rows = np.concatenate(nr) if nr else rows[:0]
        flat = np.concatenate(nf) if nf else flat[:0]
    return rows, flat


def _explode(data, lens_part, offset, lo, hi, intervals, overlap, columns):
    """Partition -> a DataFrame of one line per membership: element, global row, X row."""
    import pandas as pd

    X = data[0]
    rows, flat = memberships(lens_part, lo, hi, intervals, overlap)
    frame = pd.DataFrame(X[rows], columns=columns, copy=False)  # pandas 3 copies by default
    frame.insert(0, _ROW, rows + offset)
    frame.insert(0, _ELEMENT, flat)
    return frame


def _cluster_block(frame, columns, options):
    """Cluster every element of one output partition of the shuffle, rows in row order."""
    e = frame[_ELEMENT].to_numpy(dtype=np.int64)
    r = frame[_ROW].to_numpy(dtype=np.int64)
    order = np.lexsort((r, e))
    e, r = e[order], r[order]
    X = frame[columns].to_numpy(dtype=np.float64)  # reordered per element, not as a whole
    results = []
    for sel in np.split(np.arange(e.size), np.flatnonzero(np.diff(e)) + 1):
        if sel.size:
            labels, report = cluster_element(X[order[sel]], r[sel], **options)
            inn = labels >= 0  # only the memberships travel back: rows and their node
            count = int(labels.max(initial=-1)) + 1
            results.append((int(e[sel[0]]), r[sel][inn], labels[inn].astype(np.int32), count,
                            report))
    return results


def _ids(data):
    return data[1]


def _values(part):
    return part[0]


def _minmax(V):
    return V.min(axis=0), V.max(axis=0)


def _from_settings(settings, mlen, n):
    """Graph options from a GraphSettings (an interval cover on raw values, element-knn)."""
    from ..graph import GraphSettings

    st = GraphSettings.coerce(settings)
    if st.cover_kind != "interval":
        raise ParameterError(
            f"The partitioned graph lays an interval cover; got cover={st.cover_kind!r}. Use "
            f"cover='interval'."
        )
    if st.scale not in ("raw", "auto"):  # "auto": raw values, the scale partitions allow
        raise ParameterError(
            f"The partitioned graph lays its intervals on raw lens values (a rank cover needs a "
            f"global sort); got scale={st.scale!r}. Use scale='raw'."
        )
    if st.clusterer not in (CLUSTERER, "auto"):  # "auto": the only rule without a shared graph
        raise ParameterError(
            f"The partitioned graph clusters each element on its own, by the {CLUSTERER!r} rule; "
            f"got clusterer={st.clusterer!r}. Use clusterer={CLUSTERER!r} (build_graph with the "
            f"same rule gives the same graph on one machine)."
        )
    st = st.replace(clusterer=CLUSTERER).resolve(n, mlen)
    return {"intervals": st.intervals, "overlap": st.overlap, "k": st.k, "cutoff": st.cutoff,
            "min_size": st.min_size, "fragments": st.fragments, "metric": st.metric}


def partitioned_graph(lenses, settings=None, *, intervals=10, overlap=0.3, k=15, cutoff="auto",
                      min_size=10, fragments="attach", metric="euclidean", blocks=None,
                      compute=None):
    """Build the Mapper graph (Mapper, 2007) of lens columns on partitions.

    Parameters
    ----------
    lenses : PartitionedLenses
        Lens columns (from :func:`partitioned_lenses`); all are used.
    settings : GraphSettings or dict, optional
        Read instead of the keywords below when given: it must ask for
        ``cover="interval"``, ``scale="raw"`` and ``clusterer="element-knn"``
        (or ``"auto"``, which resolves to it here).
    intervals, overlap : int / float or one per lens
        The cover, on the raw lens values (ranks need a global sort and are not
        offered here).
    k, cutoff, min_size, fragments, metric
        As in :func:`lenswork.graph.cluster_element` (the ``"element-knn"``
        clustering rule of :func:`lenswork.build_graph`).
    blocks : int, optional
        Output partitions of the shuffle by element, one clustering task each
        (default: one per input partition, at most one per element); elements
        are assigned to them by a hash of their id.
    compute : callable, optional
        ``compute(list of delayed) -> list of results`` for the main step (the
        CLI passes one that shows Dask's progress); default ``dask.compute``.

    Returns
    -------
    LensGraph
        The same object as :func:`lenswork.build_graph` returns, made with the
        public constructor; ``params["clusterer"] == "element-knn"``. Its
        nodes (as sets of rows) and edges equal those of ``build_graph(values,
        X, scale="raw", clusterer="element-knn", ...)`` on the same data.

    Notes
    -----
    Tasks: the lens values and row ids, persisted from one read of the
    partitions (held on the workers, spilled to disk when memory is short),
    and one pass for the values' minimum and maximum; per partition, its
    membership lines (a second read); the P2P shuffle by element; per output
    partition, :func:`cluster_element` on each element, its rows in row order
    (so ties resolve as on one machine). The membership lists (one entry per
    row and node) come back to the client one result at a time
    (:func:`gather_each`), where ``M^T M`` gives the edges: O(P) memory for
    P memberships.

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
    if settings is not None:
        opts = _from_settings(settings, mlen, cloud.n)
        intervals, overlap = opts.pop("intervals"), opts.pop("overlap")
        k, cutoff, min_size = opts["k"], opts["cutoff"], opts["min_size"]
        fragments, metric = opts["fragments"], opts["metric"]
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
    metric = check_choice("metric", metric, ("euclidean", "manhattan", "chebyshev", "cosine"),
                          context=ctx)
    if isinstance(cutoff, str):
        cutoff = check_choice("cutoff", cutoff, ELEMENT_CUTOFFS, context=ctx)
    else:
        cutoff = check_float("cutoff", cutoff, lo=0.0, context=ctx)
    n_el = int(np.prod(ints))
    data_parts = cloud.delayed_parts()
    np_ = len(data_parts)
    nb = min(n_el, np_) if blocks is None else check_int("blocks", blocks, lo=1, context=ctx)
    nb = min(nb, n_el)
    # the lens values (not their error columns) and the ids, held on the workers, from one read
    # of the partitions: the ids then need no second read, nor the rows held until the end
    get_ids = dask.delayed(_ids, pure=True)
    held = dask.persist(*[dask.delayed(_values, pure=True)(p) for p in lenses.parts],
                        *[get_ids(dp) for dp in data_parts])
    lens_parts, id_parts = list(held[:np_]), list(held[np_:])
    mm = dask.compute(*[dask.delayed(_minmax, pure=True)(p) for p in lens_parts])
    lo = np.min([a for a, _ in mm], axis=0)
    hi = np.max([b for _, b in mm], axis=0)
    import dask.dataframe as dd
    import pandas as pd

    columns = [f"x{j}" for j in range(cloud.d)]
    meta = pd.DataFrame({_ELEMENT: np.zeros(0, np.int64), _ROW: np.zeros(0, np.int64),
                         **{c: np.zeros(0, np.float64) for c in columns}})
    explode = dask.delayed(_explode, pure=True)
    frames = dd.from_delayed(
        [explode(dp, lp, int(cloud.offsets[i]), lo, hi, ints, ovs, columns)
         for i, (dp, lp) in enumerate(zip(data_parts, lens_parts))], meta=meta, verify_meta=False)
    client = active_client()
    # P2P on a distributed scheduler (shards on the workers' disks: out of core), else tasks
    routed = frames.shuffle(_ELEMENT, npartitions=nb,
                            shuffle_method="tasks" if client is None else "p2p")
    options = {"k": k, "cutoff": cutoff, "min_size": min_size, "fragments": fragments,
               "metric": metric}
    task = dask.delayed(_cluster_block, pure=True)
    tasks = [task(part, columns, options) for part in routed.to_delayed()]
    if compute is None:
        compute = ((lambda items: list(dask.compute(*items))) if client is None
                   else (lambda items: gather_each(client.compute(items))))
    out = compute([*tasks, *lens_parts, *id_parts])
    blocks_out, lens_values, ids = out[:nb], out[nb:nb + np_], out[nb + np_:]
    values = np.concatenate(lens_values)
    n = cloud.n
    collected = NodeCollector()
    report = collected.report
    cutoffs = []
    for e, rows, labels, count, rep in sorted((r for block in blocks_out for r in block),
                                              key=lambda r: r[0]):
        report["elements"] += 1
        collected.add_report(rep)
        cutoffs.append(rep["cutoff"])
        collected.add(e, rows, labels, count)
    out_rows, out_nodes, node_element = collected.arrays(min_size)
    M = membership_matrix(out_rows, out_nodes, n, collected.n_nodes)
    edges, shared = nerve_edges(M)
    names = list(lenses.names)
    stats = node_statistics(M, dict(zip(names, values.T)))
    elements = np.column_stack(np.unravel_index(node_element, ints))
    params = {
        "lens_columns": names,
        "cover": {"intervals": ints, "overlap": ovs, "scale": "raw", "start": lo.tolist(),
                  "span": (hi - lo).tolist()},
        "clusterer": CLUSTERER, "cutoff": cutoff, "min_size": min_size, "k": k,
        "metric": metric, "fragments": fragments,
        "cutoff_used": [c for c in cutoffs if c is not None][:50],
        "partitions": cloud.n_partitions, "blocks": nb,
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
