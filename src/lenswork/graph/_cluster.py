"""Clustering of each cover element's points: the rule table and the loop over the elements.


Three named rules and any scikit-learn clusterer; one table (:data:`CLUSTERERS`, name ->
:class:`ClusterRule`) for validation, dispatch and the CLI. The default
``clusterer="auto"`` is resolved per build (``auto_clusterer`` in ``_settings``):
``"graph"`` up to 50,000 rows or when the workspace already holds the shared
graph, ``"element-knn"`` above, where the shared graph would be an approximate
all-rows search (a 1e6 x 20 table: 480 s, most of a 557-s graph run).

``"graph"`` (``_cluster_graph``)
    The clusters of an element are the connected components of the shared
    k-nearest-neighbour graph restricted to the element: an edge is kept when
    both ends lie in the element and it is no longer than the cut-off. Cost
    O(k * points in the element) per element and one
    ``scipy.sparse.csgraph.connected_components`` call.
``"single"`` (``_cluster_single``)
    Single linkage on the element's points (``scipy.cluster.hierarchy``), cut
    at the first gap of the histogram of merge distances, the rule proposed
    with Mapper (2007). O(m^2) memory per element: small data only.
``"element-knn"`` (``_cluster_element``)
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
any object with ``fit_predict`` (``_cluster_estimator``)
    A scikit-learn clusterer, cloned for each element; label -1 means noise.

The modules: ``_cluster_common`` (the rule record :class:`ClusterRule` and the
:class:`ElementContext` a rule reads), ``_cutoff`` (the edge-length cut-off
rules: ``cutoff="auto"``, ``"fence"``, ``"none"`` or a number), ``_fragments``
(groups smaller than ``min_size``: ``fragments="attach"`` or ``"report"``),
one module per rule family, and this one: :data:`CLUSTERERS`,
:func:`cluster_elements` (which prepares what a rule asks for, applies the
fragment rule, numbers the nodes) and :class:`NodeCollector`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .._errors import ParameterError
from .._validation import check_choice
from ._cluster_common import ClusterRule, ElementContext
from ._cluster_element import element_knn_rule
from ._cluster_estimator import estimator_labels
from ._cluster_graph import graph_rule
from ._cluster_single import single_rule
from ._cutoff import cut_indices, neighbor_cutoff
from ._fragments import ATTACH_ROUNDS, attach_fragments

__all__ = [
    "CLUSTERERS",
    "REPORT_COUNTS",
    "ClusterResult",
    "NodeCollector",
    "check_clusterer",
    "cluster_elements",
]


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


#: Clustering rules by name: one table for validation, dispatch and the CLI's choices (an
#: object with ``fit_predict`` is accepted too, see :func:`check_clusterer`).
CLUSTERERS = {
    "graph": ClusterRule(graph_rule, uses_cut_graph=True,
                         summary="components of the shared k-NN graph inside the element"),
    "single": ClusterRule(single_rule,
                          summary="single linkage cut at the first empty histogram bin"),
    "element-knn": ClusterRule(element_knn_rule, whole_element=True,
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
    cut_idx = cut_indices(workspace, k, metric, cut) if by_graph else None
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
                lab = estimator_labels(clusterer, X[pts], random_state, element)
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
                    groups, targets = attach_fragments(X, full_idx, pts, loc, lab, kept, frag_local,
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
