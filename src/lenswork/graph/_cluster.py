"""Clustering of each cover element's points: on the shared neighbour graph, or inside the element.

Three named rules and any scikit-learn clusterer; one table (:data:`CLUSTERERS`, name ->
:class:`ClusterRule`) for validation, dispatch and the CLI. The default
``clusterer="auto"`` is resolved per build (``auto_clusterer`` in ``_settings``):
``"graph"`` up to 50,000 rows or when the workspace already holds the shared
graph, ``"element-knn"`` above, where the shared graph would be an approximate
all-rows search (a 1e6 x 20 table: 480 s, most of a 557-s graph run).

``"graph"``
    The clusters of an element are the connected components of the shared
    k-nearest-neighbour graph restricted to the element: an edge is kept when
    both ends lie in the element and it is no longer than the cut-off. Cost
    O(k * points in the element) per element and one
    ``scipy.sparse.csgraph.connected_components`` call.
``"single"``
    Single linkage on the element's points (``scipy.cluster.hierarchy``), cut
    at the first gap of the histogram of merge distances, the rule proposed
    with Mapper (2007). O(m^2) memory per element: small data only.
``"element-knn"``
    A neighbour graph built inside each element from the element's points
    alone (:func:`cluster_element`): components of its k-NN graph, the
    cut-off rule applied to the element's own neighbour distances, each
    fragment attached to the kept group of the exactly nearest kept point.
    It reads nothing outside the element, so the partitioned graph
    (:mod:`lenswork.partitioned`), which clusters each element on a worker,
    gives the same nodes with it as :func:`lenswork.build_graph` does here.
    In more than 6 dimensions an element of more than :data:`ELEMENT_LANDMARKS`
    points is clustered on that many landmark points, the others joining the
    group of their nearest landmark: O(L m d) instead of O(m^2 d).
any object with ``fit_predict``
    A scikit-learn clusterer, cloned for each element; label -1 means noise.

The cut-off rule (``cutoff="auto"``) looks for a gap in the long tail of the
neighbour distances, in the spirit of the gap rule above: the logarithms of
the ``n k`` distances of the shared graph between their median and their
maximum are binned into 10 equal bins, and the cut-off is the lower edge of
the first empty bin; with no empty bin no edge is cut. So the cut-off only
acts when some edges are clearly longer than the rest -- the links of
isolated outliers -- and the neighbour graph, which adapts to the local
density, decides everything else. ``cutoff="fence"`` is Tukey's upper fence
``exp(Q3 + 1.5 (Q3 - Q1))`` of the log distances (it also cuts the sparse
tails of smooth densities), ``cutoff="none"`` keeps every edge and a number
sets the cut-off directly.

Small groups
    A group smaller than ``min_size`` is a *fragment*. Restricting a neighbour
    graph to a slice leaves many tiny fragments (mostly points whose neighbours
    all fall outside the slice), so with ``fragments="attach"`` (default) a
    fragment joins the kept cluster of the same element that holds the nearest
    point reached in one or two hops of the shared graph, provided that point
    lies within the cut-off (the distance is computed exactly from the data).
    The rule runs in rounds (at most :data:`ATTACH_ROUNDS`, all fragments of a
    round decided together): a fragment attached in one round belongs to its
    cluster in the next, so chains of fragments along a thin slice -- the level
    sets of a density lens are thin shells -- are carried in step by step.
    The cut-off bound keeps real outliers out while giving back the points
    that only lost their links when the slice cut them off (with the default
    cut-off, infinite unless the distances show a gap, any such point will do).
    Fragments with no such point, every fragment with ``fragments="report"``,
    and all groups of an element that has no group of ``min_size`` stay out of
    the element; the counts are reported in ``LensGraph.fragments``, and a row
    that ends in no node at all is listed in ``LensGraph.unassigned``.
    Measured on 50,000 Gaussian rows in 20 dimensions with 20 intervals: the
    slices left 5,164 fragment groups; 5,163 attached and no row ended in no
    node, where ``fragments="report"`` left 2,657 rows in no node. On the demo
    data with the density lens the rounds bring the rows in no node from 297 to
    187 of 3,000 (k = 15) and to 44 with k = 30: a larger k keeps thin slices
    connected.
"""

from __future__ import annotations

import numbers
from dataclasses import dataclass, field

import numpy as np

from .._errors import ParameterError
from .._validation import check_choice, check_float, check_int
from ..workspace import exact_algorithm

__all__ = [
    "CLUSTERERS",
    "CUTOFF_WORDS",
    "FRAGMENT_RULES",
    "ClusterRule",
    "ELEMENT_LANDMARKS",
    "ElementContext",
    "NodeCollector",
    "REPORT_COUNTS",
    "check_clusterer",
    "cluster_element",
    "check_cutoff",
    "cluster_elements",
    "clusterer_name",
    "landmark_priority",
    "neighbor_cutoff",
]

#: What happens to groups smaller than ``min_size``.
FRAGMENT_RULES = ("attach", "report")
#: Largest element the single-linkage clusterer accepts (it holds all pairwise distances).
SINGLE_MAX_POINTS = 20_000
#: Cut-off rules by name (a non-negative number is accepted too).
CUTOFF_WORDS = ("auto", "fence", "none")
#: Bins of the cut-off gap rule (log distances between their median and maximum).
CUTOFF_GAP_BINS = 10
_SCIPY_METRIC = {"euclidean": "euclidean", "manhattan": "cityblock", "chebyshev": "chebyshev",
                 "cosine": "cosine"}
_ATTACH_BLOCK = 4096
#: Rounds of the attach rule: a fragment attached in one round is part of its cluster in the
#: next, so fragments up to 2 * ATTACH_ROUNDS hops away from a kept cluster can join it.
ATTACH_ROUNDS = 8


def _log_distances(distances):
    d = np.asarray(distances, dtype=np.float64).ravel()
    return np.log(d[d > 0])


def _gap_cutoff(distances, bins=CUTOFF_GAP_BINS):
    """Lower edge of the first empty bin of log distances over [median, max]; inf if none."""
    ld = _log_distances(distances)
    if ld.size == 0:
        return float("inf")
    med, top = np.median(ld), ld.max()
    if top <= med:
        return float("inf")
    counts, edges = np.histogram(ld, bins=bins, range=(med, top))
    empty = np.flatnonzero(counts == 0)
    return float("inf") if empty.size == 0 else float(np.exp(edges[empty[0]]))


def _fence_cutoff(distances):
    """Tukey's upper fence of the log distances."""
    ld = _log_distances(distances)
    if ld.size == 0:
        return float("inf")
    q1, q3 = np.percentile(ld, [25.0, 75.0])
    return float(np.exp(q3 + 1.5 * (q3 - q1)))


_CUTOFF_RULES = {"auto": _gap_cutoff, "fence": _fence_cutoff}

#: Rows of a distance block of the element clusterer's neighbour search (scikit-learn's
#: ``working_memory`` in MiB): keeps a worker's memory small whatever the element's size.
ELEMENT_WORKING_MEMORY = 64
#: Largest element the element clusterer searches exhaustively in high dimension; a larger
#: element is clustered on this many landmark points (see :func:`cluster_element`). Measured
#: by tests/benchmarks/bench_graph_rules.py; see DEVELOPERS.md, "Clustering rules".
ELEMENT_LANDMARKS = 1000


def landmark_priority(rows):
    """A fixed pseudo-random 64-bit priority of each row position (the splitmix64 finaliser).

    The element clusterer takes the rows of smallest priority as an element's
    landmarks, so a row is a landmark in every large element it lies in, on a
    worker as in one process.

    References
    ----------
    .. [1] G. Steele, D. Lea and C. Flood, "Fast splittable pseudorandom number
       generators", OOPSLA 2014 (the splitmix64 mixing function).

    Examples
    --------
    >>> p = landmark_priority(np.arange(5))
    >>> p.dtype.name, bool(np.all(p == landmark_priority(np.arange(5))))
    ('uint64', True)
    """
    z = np.asarray(rows, dtype=np.int64).astype(np.uint64) + np.uint64(0x9E3779B97F4A7C15)
    z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return z ^ (z >> np.uint64(31))


def _element_search(X, metric):
    """Exact neighbour search of the element clusterer: the workspace's exact rule."""
    from sklearn.neighbors import NearestNeighbors

    algorithm = exact_algorithm(X.shape[1], metric)
    return NearestNeighbors(metric=metric, algorithm=algorithm), algorithm == "kd_tree"


#: Up to this many points (in brute-force dimension) the element's k-NN lists come from one
#: scipy ``cdist`` matrix, in this thread: scikit-learn's threaded search of so small a set
#: took 0.18 s against 0.027 s single-threaded for 2,000 x 20 points while other jobs ran, and
#: a 1e6-row build with 2,000 landmarks 70 s against 33 s (DEVELOPERS.md, "Clustering rules").
ELEMENT_DENSE_MAX = 2048


def _dense_knn(X, kk, metric):
    """Exact (distances, indices) of each point's kk nearest others, ascending, ties by index."""
    from scipy.spatial.distance import cdist

    m = X.shape[0]
    D = cdist(X, X, metric=_SCIPY_METRIC[metric])
    np.fill_diagonal(D, np.inf)
    part = np.argpartition(D, kk - 1, axis=1)[:, :kk]
    d = np.take_along_axis(D, part, axis=1)
    order = np.lexsort((part.ravel(), d.ravel(), np.repeat(np.arange(m), kk)))
    return d.ravel()[order].reshape(m, kk), part.ravel()[order].reshape(m, kk)


def _knn_components(X, k, cutoff, metric):
    """Weak components of the k-NN graph of X, edges above the cut-off removed: (labels, cut)."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components

    m = X.shape[0]
    kk = min(k, m - 1)
    if kk < 1:
        cut = float(cutoff) if not isinstance(cutoff, str) else float("inf")
        return np.zeros(m, dtype=np.int64), cut
    nn, tree = _element_search(X, metric)
    if not tree and m <= ELEMENT_DENSE_MAX:
        dist, idx = _dense_knn(X, kk, metric)
    else:
        dist, idx = nn.set_params(n_neighbors=kk + 1).fit(X).kneighbors(X)
        dist, idx = dist[:, 1:], idx[:, 1:]
    if isinstance(cutoff, str):
        cut = _CUTOFF_RULES[cutoff](dist) if cutoff != "none" else float("inf")
    else:
        cut = float(cutoff)
    keep = (dist <= cut).ravel()
    r = np.repeat(np.arange(m), kk)[keep]
    A = sp.csr_matrix((np.ones(r.size), (r, idx.ravel()[keep])), shape=(m, m))
    _, lab = connected_components(A, directed=True, connection="weak")
    return lab.astype(np.int64), cut


def cluster_element(X_element, rows, *, k=15, cutoff="auto", min_size=10, fragments="attach",
                    metric="euclidean", landmarks=None):
    """Cluster the points of one cover element on a neighbour graph inside the element.

    Parameters
    ----------
    X_element : ndarray of shape (m, n_features)
        The element's points.
    rows : ndarray of shape (m,), int
        Their row positions in the whole data (they order the clusters and pick
        the landmarks).
    k : int, default=15
        Neighbours per point, among the element's points.
    cutoff : float or {"auto", "fence", "none"}, default="auto"
        Longest edge kept; the rules of :func:`neighbor_cutoff` applied to this
        element's own ``m k`` neighbour distances.
    min_size : int, default=10
        Groups with fewer points are fragments.
    fragments : {"attach", "report"}, default="attach"
        ``"attach"``: each fragment joins the kept group holding the point
        nearest to it (exactly, over all kept points of the element -- over its
        kept landmarks for a landmark element; ties to the smaller group
        label), when that point lies within the cut-off; ``"report"``:
        fragments stay out.
    metric : {"euclidean", "manhattan", "chebyshev", "cosine"}, default="euclidean"
    landmarks : int, optional
        Where the exact search is brute force (more than
        :data:`lenswork.workspace.EXACT_MAX_DIM_TREE` dimensions, or cosine),
        an element of more points is clustered on this many landmarks: the
        k-NN graph of the landmarks alone gives the groups, and every other
        point joins the group of its exactly nearest landmark (a
        point farther from it than the cut-off is a group of its own).
        Default :data:`ELEMENT_LANDMARKS`; 0: always the whole element.

    Returns
    -------
    labels : ndarray of shape (m,), int64
        Cluster of each point, numbered 0.. in the order of their smallest
        row; -1 for points left out.
    report : dict
        ``groups``, ``fragment_groups``, ``attached_groups``,
        ``attached_points``, ``left_out_points``, ``cutoff`` (None when
        infinite), ``landmarks`` (0 when the whole element was searched).

    Notes
    -----
    The weakly connected components of the directed k-NN graph of the element
    (``scipy.sparse.csgraph.connected_components``), edges longer than the
    cut-off removed. The neighbour search is scikit-learn's exact one: a
    kd-tree in low dimension (O(m k log m)), brute force in blocks of
    :data:`ELEMENT_WORKING_MEMORY` MiB above (O(m^2 d) time). The landmarks
    bound the brute force to O(L^2 d + L m d) for L landmarks, and to
    O(L^2 d) when the landmarks form one group and the cut-off is infinite
    (every point then joins that group; no search). On a 1e6 x 20 table a
    10 x 10 cover of two PCA lenses has 93 elements of 17,700 points (median)
    to 74,000: 7.1e10 distance pairs searched whole, 7.1e7 on the landmarks
    (71 elements of more than 1,000 points).
    The landmarks are the ``L`` rows of smallest :func:`landmark_priority`, a
    fixed function of the row position. A plain function of the element alone:
    the same points in the same order give the same labels on a worker and in
    one process.

    Examples
    --------
    >>> X = np.concatenate([np.zeros((12, 1)), np.full((12, 1), 5.0)])
    >>> X = X + np.arange(24)[:, None] / 1e3
    >>> labels, report = cluster_element(X, np.arange(24), k=3)
    >>> np.bincount(labels).tolist(), report["groups"]
    ([12, 12], 2)
    """
    from sklearn import config_context

    X = np.asarray(X_element, dtype=np.float64)
    rows = np.asarray(rows, dtype=np.int64)
    m = X.shape[0]
    report = {"groups": 0, "fragment_groups": 0, "attached_groups": 0, "attached_points": 0,
              "left_out_points": 0, "cutoff": None, "landmarks": 0}
    if m == 0:
        return np.zeros(0, dtype=np.int64), report
    cutoff = check_cutoff(cutoff)
    landmarks = ELEMENT_LANDMARKS if landmarks is None else landmarks
    if landmarks != 0:
        landmarks = check_int("landmarks", landmarks, lo=2, context="cluster_element")
    with config_context(working_memory=ELEMENT_WORKING_MEMORY):
        nn, tree = _element_search(X[:1], metric)
        sampled = landmarks and m > landmarks and not tree
        if sampled:
            lm = np.sort(np.argsort(landmark_priority(rows), kind="stable")[:landmarks])
            lab_lm, cut = _knn_components(X[lm], k, cutoff, metric)
            lab = np.zeros(m, dtype=np.int64)
            if lab_lm.max() > 0 or np.isfinite(cut):  # else: one group, no search needed
                others = np.ones(m, dtype=bool)
                others[lm] = False
                others = np.flatnonzero(others)
                d1, i1 = nn.set_params(n_neighbors=1).fit(X[lm]).kneighbors(X[others])
                lab[lm] = lab_lm
                lab[others] = lab_lm[i1[:, 0]]
                far = others[d1[:, 0] > cut]  # too far from every landmark: a group of its own
                lab[far] = lab_lm.max() + 1 + np.arange(far.size)
                lab = np.unique(lab, return_inverse=True)[1].astype(np.int64)
            pool = np.zeros(m, dtype=bool)
            pool[lm] = True
            report["landmarks"] = int(landmarks)
        else:
            lab, cut = _knn_components(X, k, cutoff, metric)
            pool = np.ones(m, dtype=bool)
        report["cutoff"] = None if np.isinf(cut) else float(cut)
        sizes = np.bincount(lab)
        kept = sizes >= min_size
        report["groups"] = int(sizes.size)
        report["fragment_groups"] = int((~kept).sum())
        if fragments == "attach" and kept.any() and not kept.all():
            kp = np.flatnonzero(kept[lab] & pool)
            fp = np.flatnonzero(~kept[lab])
            if kp.size:
                d1, i1 = nn.set_params(n_neighbors=1).fit(X[kp]).kneighbors(X[fp])
                d1, target = d1[:, 0], lab[kp[i1[:, 0]]]
                groups = lab[fp]
                # per fragment group: the nearest kept point of any of its points (ties: smaller
                # label)
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
    return np.where(in_node, new[lab], -1), report


def neighbor_cutoff(workspace, k=15, cutoff="auto", metric="euclidean"):
    """The edge-length cut-off of the graph clusterer, resolved to a number.

    Parameters
    ----------
    workspace : Workspace
    k : int, default=15
        Neighbours per row of the shared graph.
    cutoff : float or {"auto", "fence", "none"}, default="auto"
        ``"auto"``: the gap rule (lower edge of the first empty bin among 10
        bins of the log neighbour distances between their median and their
        maximum; infinity when no bin is empty); ``"fence"``: Tukey's upper
        fence ``exp(Q3 + 1.5 IQR)`` of the log distances; ``"none"``:
        infinity (keep every edge); a non-negative number is returned as given.
    metric : str, default="euclidean"

    Returns
    -------
    float

    Notes
    -----
    Cost: one pass over the ``n k`` distances (a median and a histogram, or
    two percentiles), cached in the workspace under
    ``("graph_cutoff", rule, metric, k)``.

    References
    ----------
    .. [1] J. W. Tukey, "Exploratory Data Analysis", Addison-Wesley, 1977
       (the fences at 1.5 interquartile ranges).

    Examples
    --------
    >>> from lenswork import Workspace
    >>> ws = Workspace(np.append(np.arange(30.0), 100.0)[:, None])  # one outlier
    >>> round(neighbor_cutoff(ws, k=2), 2)  # edges of 1 and 2 kept, the outlier's 71, 72 cut
    2.35
    >>> neighbor_cutoff(ws, k=2, cutoff="none")
    inf
    """
    cutoff = check_cutoff(cutoff)
    if isinstance(cutoff, str):
        if cutoff == "none":
            return float("inf")
        graph = workspace.neighbors(k, metric)
        rule = _CUTOFF_RULES[cutoff]
        return workspace.cached(
            ("graph_cutoff", cutoff, graph.metric, graph.k), lambda: rule(graph.distances)
        )
    return cutoff


def check_cutoff(cutoff):
    """A cut-off rule name from :data:`CUTOFF_WORDS` or a non-negative float, else ParameterError.

    Examples
    --------
    >>> check_cutoff(" Fence "), check_cutoff("0.5")
    ('fence', 0.5)
    """
    if isinstance(cutoff, str) and cutoff.strip().lower() in CUTOFF_WORDS:
        return cutoff.strip().lower()
    try:
        return check_float("cutoff", cutoff, lo=0.0, context="build_graph")
    except ParameterError:
        raise ParameterError(
            f"The 'cutoff' parameter of build_graph must be a float in [0.0, inf) or a str among "
            f"{{'auto', 'fence', 'none'}}. Got {cutoff!r} instead."
        ) from None


def _cut_indices(workspace, k, metric, cutoff):
    """(n, k) neighbour indices with edges longer than ``cutoff`` replaced by self loops."""

    def compute():
        graph = workspace.neighbors(k, metric)
        dtype = np.int32 if graph.n < 2**31 - 1 else np.int64
        if cutoff >= graph.distances.max():
            return graph.indices.astype(dtype)
        self_idx = np.arange(graph.n, dtype=dtype)[:, None]
        return np.where(graph.distances <= cutoff, graph.indices.astype(dtype), self_idx)

    return workspace.cached(("graph_cut_indices", metric, k, float(cutoff)), compute)


@dataclass
class ClusterResult:
    """Nodes found in the cover elements.

    ``rows`` / ``nodes`` hold one entry per (row, node) membership;
    ``node_element`` the flat cover element of each node.
    """

    rows: np.ndarray
    nodes: np.ndarray
    node_element: np.ndarray
    cutoff: float
    report: dict = field(default_factory=dict)


def _pair_distances(A, B, metric):
    if metric == "euclidean":
        return np.sqrt(np.einsum("ij,ij->i", A - B, A - B))
    if metric == "manhattan":
        return np.abs(A - B).sum(axis=1)
    if metric == "chebyshev":
        return np.abs(A - B).max(axis=1)
    na = np.linalg.norm(A, axis=1)
    nb = np.linalg.norm(B, axis=1)
    denom = na * nb
    dots = np.einsum("ij,ij->i", A, B)
    with np.errstate(invalid="ignore", divide="ignore"):
        sim = np.where(denom > 0, dots / np.where(denom > 0, denom, 1.0), 0.0)
    return 1.0 - sim


def _attach(X, idx, pts, loc, lab, kept, frag_local, cutoff, metric):
    """Target label for each fragment group, -1 where no kept point is near enough.

    Returns an array over ``np.unique(lab[frag_local])`` order: (groups, targets).
    """
    groups = lab[frag_local]
    best_d = np.full(frag_local.size, np.inf)
    best_t = np.full(frag_local.size, -1, dtype=np.int64)
    for start in range(0, frag_local.size, _ATTACH_BLOCK):
        block = frag_local[start:start + _ATTACH_BLOCK]
        P = pts[block]
        hop1 = idx[P]
        cand = np.concatenate([hop1, idx[hop1].reshape(len(P), -1)], axis=1)
        lc = loc[cand]
        inside = lc >= 0
        ok = np.zeros_like(inside)
        ok[inside] = kept[lab[lc[inside]]]
        f, c = np.nonzero(ok)
        if f.size == 0:
            continue
        d = _pair_distances(X[P[f]], X[cand[f, c]], metric)
        near = d <= cutoff
        f, c, d = f[near], c[near], d[near]
        if f.size == 0:
            continue
        target = lab[lc[f, c]]
        order = np.lexsort((target, d, f))
        f, d, target = f[order], d[order], target[order]
        first = np.ones(f.size, dtype=bool)
        first[1:] = f[1:] != f[:-1]
        best_d[start + f[first]] = d[first]
        best_t[start + f[first]] = target[first]
    ug, inv = np.unique(groups, return_inverse=True)
    order = np.lexsort((best_t, best_d, inv))
    first = np.ones(order.size, dtype=bool)
    first[1:] = inv[order][1:] != inv[order][:-1]
    pick = order[first]
    targets = np.full(ug.size, -1, dtype=np.int64)
    targets[inv[pick]] = np.where(np.isfinite(best_d[pick]), best_t[pick], -1)
    return ug, targets


def _graph_labels(cut_idx, pts, loc):
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components

    m = pts.size
    lnb = loc[cut_idx[pts]]
    mask = lnb >= 0
    indptr = np.zeros(m + 1, dtype=np.int64)
    np.cumsum(np.count_nonzero(mask, axis=1), out=indptr[1:])
    ind = lnb[mask]
    # float64 weights: csgraph works in float64, and other types cost a sort on conversion.
    A = sp.csr_matrix((np.ones(ind.size), ind, indptr), shape=(m, m))
    _, lab = connected_components(A, directed=True, connection="weak")
    return lab.astype(np.int64)


def _gap_labels(Xe, metric, bins):
    """Single linkage cut at the first empty bin of the merge-distance histogram."""
    from scipy.cluster.hierarchy import fcluster, linkage

    m = Xe.shape[0]
    if m < 3:
        return np.zeros(m, dtype=np.int64)
    Z = linkage(Xe, method="single", metric=_SCIPY_METRIC[metric])
    heights = Z[:, 2]
    lo, hi = heights.min(), heights.max()
    if hi <= lo:
        return np.zeros(m, dtype=np.int64)
    counts, edges = np.histogram(heights, bins=bins, range=(lo, hi))
    empty = np.flatnonzero(counts == 0)
    if empty.size == 0:
        return np.zeros(m, dtype=np.int64)
    labels = fcluster(Z, t=edges[empty[0]], criterion="distance")
    return labels.astype(np.int64) - 1


def _estimator_labels(estimator, Xe, seed, element):
    from sklearn.base import clone

    est = clone(estimator)
    if "random_state" in est.get_params() and est.get_params()["random_state"] is None:
        est.set_params(random_state=seed)
    try:
        labels = np.asarray(est.fit_predict(Xe)).astype(np.int64)
    except (ValueError, TypeError) as err:
        raise ParameterError(
            f"The clusterer {type(estimator).__name__} failed on cover element {element} "
            f"({Xe.shape[0]} points): {err}. Choose parameters that fit small groups, or use "
            f"clusterer='graph'."
        ) from err
    noise = labels < 0
    if noise.any():  # every noise point is its own group (a fragment unless min_size=1)
        labels = labels.copy()
        labels[noise] = labels.max(initial=-1) + 1 + np.arange(noise.sum())
    return np.unique(labels, return_inverse=True)[1].astype(np.int64)


@dataclass(frozen=True)
class ClusterRule:
    """One named clustering rule: ``labels(pts, ctx)`` -> int64 labels 0..g-1 of the points.

    ``ctx`` is a :class:`ElementContext`; ``uses_cut_graph`` asks the caller to
    prepare ``ctx.cut_indices`` (the neighbour lists with edges above the
    cut-off removed). A ``whole_element`` rule needs neither the shared graph
    nor the caller's fragment rule (see the field).
    """

    labels: object
    uses_cut_graph: bool = False
    summary: str = ""
    #: ``labels`` applies ``min_size`` and the fragment rule itself and returns
    #: ``(labels with -1 for points left out, numbered by smallest row; report)``.
    whole_element: bool = False


@dataclass
class ElementContext:
    """What a clustering rule may read about the element it labels."""

    X: np.ndarray
    loc: np.ndarray
    cut_indices: np.ndarray | None
    settings: object
    element: int


def _graph_rule(pts, ctx):
    return _graph_labels(ctx.cut_indices, pts, ctx.loc)


def _single_rule(pts, ctx):
    if pts.size > SINGLE_MAX_POINTS:
        raise ParameterError(
            f"clusterer='single' holds every pairwise distance of an element; cover "
            f"element {ctx.element} has {pts.size:,} points (limit {SINGLE_MAX_POINTS:,}). Use "
            f"clusterer='graph' or more intervals."
        )
    return _gap_labels(ctx.X[pts], ctx.settings.metric, ctx.settings.gap_bins)


def _element_knn_rule(pts, ctx):
    st = ctx.settings
    order = np.argsort(pts, kind="stable")  # row order: the same input as on partitions
    labels, report = cluster_element(ctx.X[pts[order]], pts[order], k=st.k, cutoff=st.cutoff,
                                     min_size=st.min_size, fragments=st.fragments,
                                     metric=st.metric)
    out = np.empty_like(labels)
    out[order] = labels
    return out, report


#: Clustering rules by name: one table for validation, dispatch and the CLI's choices (an
#: object with ``fit_predict`` is accepted too, see :func:`check_clusterer`).
CLUSTERERS = {
    "graph": ClusterRule(_graph_rule, uses_cut_graph=True,
                         summary="components of the shared k-NN graph inside the element"),
    "single": ClusterRule(_single_rule,
                          summary="single linkage cut at the first empty histogram bin"),
    "element-knn": ClusterRule(_element_knn_rule, whole_element=True,
                               summary="components of a k-NN graph built inside the element "
                               "alone (the partitioned graph's rule)"),
}


def check_clusterer(clusterer):
    """Return a clusterer name from :data:`CLUSTERERS` or an object with ``fit_predict``."""
    if isinstance(clusterer, str):
        return check_choice("clusterer", clusterer, tuple(CLUSTERERS), context="build_graph")
    if callable(getattr(clusterer, "fit_predict", None)) and hasattr(clusterer, "get_params"):
        return clusterer
    raise ParameterError(
        f"The 'clusterer' parameter of build_graph must be a str among "
        f"{{{', '.join(repr(c) for c in CLUSTERERS)}}} or a scikit-learn clusterer with "
        f"fit_predict. Got {clusterer!r} instead."
    )


#: Counts of the fragment report that add up over the elements (see :class:`NodeCollector`).
REPORT_COUNTS = ("groups", "fragment_groups", "attached_groups", "attached_points",
                 "left_out_points")


class NodeCollector:
    """The nodes of the clustered cover elements, gathered one element at a time.

    Nodes are numbered in the order they are added; :attr:`report` sums the
    elements' fragment reports. Shared by :func:`cluster_elements` and the
    partitioned graph, which collects what its workers sent back.

    Examples
    --------
    >>> nodes = NodeCollector()
    >>> nodes.add(0, np.array([4, 5, 6]), np.array([0, 0, 1]), 2)
    >>> nodes.add(3, np.array([6, 7]), np.array([0, 0]), 1)
    >>> rows, node_ids, node_element = nodes.arrays(min_size=1)
    >>> node_ids.tolist(), node_element.tolist()
    ([0, 0, 1, 2, 2], [0, 0, 3])
    """

    def __init__(self):
        self.report = {"elements": 0, **dict.fromkeys(REPORT_COUNTS, 0), "landmark_elements": 0}
        self.n_nodes = 0
        self._rows, self._nodes, self._element = [], [], []

    def add_report(self, rep):
        """Add one element's report (a :func:`cluster_element` report)."""
        for key in REPORT_COUNTS:
            self.report[key] += rep[key]
        self.report["landmark_elements"] += int(rep.get("landmarks", 0) > 0)

    def add(self, element, rows, labels, count):
        """Add ``count`` nodes of ``element``: ``rows`` with their node ``labels`` in 0..count-1."""
        if count:
            self._rows.append(rows)
            self._nodes.append(np.asarray(labels, dtype=np.int64) + self.n_nodes)
            self._element.append(np.full(count, element, dtype=np.int64))
            self.n_nodes += count

    def arrays(self, min_size):
        """(rows, node ids, element of each node); a clear error when no node was made."""
        if self.n_nodes == 0:
            raise ParameterError(
                f"No cover element holds a group of at least min_size={min_size} points, so "
                f"the graph would be empty. Use a smaller min_size, fewer intervals or a larger "
                f"cutoff."
            )
        return (np.concatenate(self._rows), np.concatenate(self._nodes),
                np.concatenate(self._element))


def cluster_elements(workspace, rows, elements, settings, random_state=None):
    """Cluster the points of every cover element.

    Parameters
    ----------
    workspace : Workspace
    rows, elements : ndarray of int64
        The cover's (point, element) pairs, grouped by element
        (:meth:`Cover.incidence`).
    settings : GraphSettings
        Already validated (and resolved): ``clusterer``, ``cutoff``, ``k``,
        ``metric``, ``min_size``, ``fragments`` and ``gap_bins`` are read as
        they are.
    random_state : int or Generator, optional
        Seed given to scikit-learn clusterers whose ``random_state`` is unset
        (default ``settings.random_state``; build_graph passes the workspace's
        seed when that is None).

    Returns
    -------
    ClusterResult

    Notes
    -----
    Cost with the graph clusterer: O(k P) for P (point, element) pairs, plus
    O(F k^2 d) for F fragment points when attaching.
    """
    clusterer, cutoff, k = settings.clusterer, settings.cutoff, settings.k
    metric, min_size, fragments = settings.metric, settings.min_size, settings.fragments
    random_state = settings.random_state if random_state is None else random_state
    n = workspace.n
    X = workspace.X
    rule = CLUSTERERS[clusterer] if isinstance(clusterer, str) else None
    by_graph = rule is not None and rule.uses_cut_graph
    whole = rule is not None and rule.whole_element
    needs_graph = by_graph or (fragments == "attach" and not whole)
    cut = neighbor_cutoff(workspace, k, cutoff, metric) if needs_graph else float("nan")
    cut_idx = _cut_indices(workspace, k, metric, cut) if by_graph else None
    full_idx = None
    loc = np.full(n, -1, dtype=np.int32 if n < 2**31 - 1 else np.int64)
    bounds = np.flatnonzero(np.diff(elements)) + 1
    starts = np.concatenate([[0], bounds]) if elements.size else np.zeros(0, dtype=np.int64)
    stops = np.concatenate([bounds, [elements.size]]) if elements.size else starts
    collected = NodeCollector()
    report = collected.report
    for a, b in zip(starts, stops):
        element = int(elements[a])
        pts = rows[a:b]
        m = pts.size
        report["elements"] += 1
        if whole:  # the rule applies min_size and the fragment rule itself
            lab, rep = rule.labels(pts, ElementContext(X, loc, None, settings, element))
            collected.add_report(rep)
            in_node = lab >= 0
            collected.add(element, pts[in_node], lab[in_node], int(lab.max(initial=-1)) + 1)
            continue
        loc[pts] = np.arange(m, dtype=loc.dtype)
        try:
            if rule is not None:
                lab = rule.labels(pts, ElementContext(X, loc, cut_idx, settings, element))
            else:
                lab = _estimator_labels(clusterer, X[pts], random_state, element)
            sizes = np.bincount(lab)
            kept = sizes >= min_size
            report["groups"] += int(sizes.size)
            report["fragment_groups"] += int((~kept).sum())
            if fragments == "attach" and kept.any() and not kept.all():
                if full_idx is None:
                    full_idx = workspace.neighbors(k, metric).indices
                for _ in range(ATTACH_ROUNDS):  # attached points can carry others further
                    frag_local = np.flatnonzero(~kept[lab])
                    if frag_local.size == 0:
                        break
                    groups, targets = _attach(X, full_idx, pts, loc, lab, kept, frag_local,
                                              cut, metric)
                    joined = targets >= 0
                    if not joined.any():
                        break
                    report["attached_groups"] += int(joined.sum())
                    remap = np.arange(sizes.size)
                    remap[groups[joined]] = targets[joined]
                    lab = remap[lab]
        finally:
            loc[pts] = -1
        in_node = kept[lab]
        report["left_out_points"] += int(m - in_node.sum())
        report["attached_points"] += int(in_node.sum() - sizes[kept].sum())
        if not in_node.any():
            continue
        kp, kl = pts[in_node], lab[in_node]
        first_row = np.full(sizes.size, n, dtype=np.int64)
        np.minimum.at(first_row, kl, kp)
        kept_labels = np.flatnonzero(kept)
        order = kept_labels[np.argsort(first_row[kept_labels], kind="stable")]
        node_of = np.full(sizes.size, -1, dtype=np.int64)
        node_of[order] = np.arange(order.size)
        collected.add(element, kp, node_of[kl], order.size)
    out_rows, out_nodes, node_element = collected.arrays(min_size)
    return ClusterResult(rows=out_rows, nodes=out_nodes, node_element=node_element, cutoff=cut,
                         report=report)


def clusterer_name(clusterer):
    """A JSON-ready description of the clusterer for provenance."""
    if isinstance(clusterer, str):
        return clusterer
    params = {
        key: (v if isinstance(v, (str, bool, numbers.Number, type(None))) else repr(v))
        for key, v in sorted(clusterer.get_params(deep=False).items())
    }
    return {"estimator": type(clusterer).__name__, "params": params}
