"""The ``"element-knn"`` clustering rule: a neighbour graph built inside each element alone.

A neighbour graph built inside each element from the element's points alone
(:func:`cluster_element`): components of its k-NN graph, the cut-off rule
(:mod:`lenswork.graph._cutoff`) applied to the element's own neighbour
distances, each fragment attached to the kept group of the exactly nearest
kept point. It reads nothing outside the element, so the partitioned graph
(:mod:`lenswork.partitioned`), which clusters each element on a worker, gives
the same nodes with it as :func:`lenswork.build_graph` does here. In more
than 6 dimensions an element of more than :data:`ELEMENT_LANDMARKS` points is
clustered on that many landmark points, the others joining the group of
their nearest landmark: O(L m d) instead of O(m^2 d).
"""

from __future__ import annotations

import numpy as np

from .._validation import check_int
from ..workspace import exact_algorithm
from ._cluster_common import SCIPY_METRICS
from ._cutoff import CUTOFF_RULES, check_cutoff

__all__ = [
    "ELEMENT_DENSE_MAX",
    "ELEMENT_LANDMARKS",
    "ELEMENT_WORKING_MEMORY",
    "cluster_element",
    "element_knn_rule",
    "landmark_priority",
]

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
    D = cdist(X, X, metric=SCIPY_METRICS[metric])
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
        cut = CUTOFF_RULES[cutoff](dist) if cutoff != "none" else float("inf")
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


def element_knn_rule(pts, ctx):
    """:func:`cluster_element` of the element's points ``pts`` in row order, with its report.

    A ``whole_element`` rule: returns ``(labels with -1 for points left out,
    report)``, ``min_size`` and the fragment rule applied.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from lenswork.graph._cluster_common import ElementContext
    >>> X = np.concatenate([np.zeros((12, 1)), np.full((12, 1), 5.0)])
    >>> X = X + np.arange(24)[:, None] / 1e3
    >>> st = SimpleNamespace(k=3, cutoff="auto", min_size=10, fragments="attach",
    ...                      metric="euclidean")
    >>> labels, report = element_knn_rule(np.arange(24), ElementContext(X, None, None, st, 0))
    >>> np.bincount(labels).tolist()
    [12, 12]
    """
    st = ctx.settings
    order = np.argsort(pts, kind="stable")  # row order: the same input as on partitions
    labels, report = cluster_element(ctx.X[pts[order]], pts[order], k=st.k, cutoff=st.cutoff,
                                     min_size=st.min_size, fragments=st.fragments,
                                     metric=st.metric)
    out = np.empty_like(labels)
    out[order] = labels
    return out, report
