"""What the clustering rules share: the rule record, the element context, scipy's metric names.

A clustering rule (one module each: ``_cluster_graph``, ``_cluster_single``,
``_cluster_element``; scikit-learn clusterers in ``_cluster_estimator``) is a
function ``labels(pts, ctx)`` of the element's point rows and an
:class:`ElementContext`, entered in the table
:data:`lenswork.graph._cluster.CLUSTERERS` as a :class:`ClusterRule`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["SCIPY_METRICS", "ClusterRule", "ElementContext"]

#: The workspace's metric names as ``scipy.spatial.distance`` names them.
SCIPY_METRICS = {"euclidean": "euclidean", "manhattan": "cityblock", "chebyshev": "chebyshev",
                 "cosine": "cosine"}


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
