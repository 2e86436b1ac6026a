"""The edge-length cut-off of the clustering rules: rules by name, resolved to a number.

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
"""

from __future__ import annotations

import numpy as np

from .._errors import ParameterError
from .._validation import check_float

__all__ = [
    "CUTOFF_GAP_BINS",
    "CUTOFF_RULES",
    "CUTOFF_WORDS",
    "check_cutoff",
    "cut_indices",
    "neighbor_cutoff",
]

#: Cut-off rules by name (a non-negative number is accepted too).
CUTOFF_WORDS = ("auto", "fence", "none")
#: Bins of the cut-off gap rule (log distances between their median and maximum).
CUTOFF_GAP_BINS = 10


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


#: Cut-off rules by name: ``rule(distances) -> float`` ("none" is infinity, handled by callers).
CUTOFF_RULES = {"auto": _gap_cutoff, "fence": _fence_cutoff}


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
        rule = CUTOFF_RULES[cutoff]
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


def cut_indices(workspace, k, metric, cutoff):
    """(n, k) neighbour indices with edges longer than ``cutoff`` replaced by self loops."""

    def compute():
        graph = workspace.neighbors(k, metric)
        dtype = np.int32 if graph.n < 2**31 - 1 else np.int64
        if cutoff >= graph.distances.max():
            return graph.indices.astype(dtype)
        self_idx = np.arange(graph.n, dtype=dtype)[:, None]
        return np.where(graph.distances <= cutoff, graph.indices.astype(dtype), self_idx)

    return workspace.cached(("graph_cut_indices", metric, k, float(cutoff)), compute)
