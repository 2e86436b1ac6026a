"""Compare views: two or more Mapper graphs (Mapper, 2007) over the same rows.

A *view* is one graph of the data: one choice of lens (or lenses) and cover
settings. Views of the same rows can be compared without any geometry,
through the rows their nodes hold.

Node correspondence
-------------------
With membership matrices ``M_a`` (rows x nodes of view a, 0/1) and ``M_b``,
the product ``C = M_a^T M_b`` counts, for every pair of nodes (one per view),
the rows they share: ``C[i, j] = |rows(i) & rows(j)|``. One sparse product,
never a loop over node pairs.

Induced row partitions
----------------------
A graph induces a partition of the rows it covers. Two are offered:

* ``"component"`` (default): each row's label is the connected component of
  the graph that holds its nodes. All nodes of one row lie in one component,
  since two nodes sharing a row are joined by a nerve edge.
* ``"node"``: each row's label is its *first node*, the node of smallest index
  among the nodes that hold it (node order as the graph builder numbers them:
  cover element by cover element, then cluster by cluster). Finer, and
  sensitive to the cover.

Rows that a view leaves unassigned (in no node) have no label there; the
agreement scores are computed over the rows assigned in every view compared,
and the number of rows left out is reported.

Agreement scores
----------------
The adjusted Rand index, the variation of information and the row
co-membership scores of two views are computed by :mod:`lenswork.partitions`
(re-exported here), which holds their formulas. Two connected graphs both
induce the one-block component partition, so ARI and VI call them identical
however different they are; such pairs are flagged ``trivial`` and the
co-membership scores (which compare the row pairs that share a node) lead.

Features in one view and not the other
--------------------------------------
Each feature the graph summary lists (a loop, a flare, a limb, a branch
point, a component) is a set of nodes and so a set of rows. Only the
*significant* ones (above the summary's threshold; components always) are
compared as differences: a significant feature of view a is *matched* in
view b when b has a significant feature (or component) of the same type
whose rows have Jaccard index ``|A & B| / |A | B|`` with it of at least
``match`` (default 0.5); unmatched ones are reported per view, marked when a
small feature of b would match. Small features of a that no feature of b
matches are only counted (``small_only_a``): noise of one cover, not a
difference between the views. (The Jaccard index, not the overlap
coefficient ``|A & B| / min(|A|, |B|)``: with the latter a small spurious
loop inside the rows of a large real one would count as a match.)

Which agreement leads
---------------------
The co-membership ARI is the headline (first in the text, the figure's
title, :meth:`ViewComparison.agreement`'s default): the component partition
of two connected graphs is one block each, so its ARI is 1 however unlike
the views are.

References
----------
.. [1] L. Hubert and P. Arabie, "Comparing partitions", Journal of
   Classification 2, 193-218, 1985.
.. [2] M. Meilă, "Comparing clusterings—an information based distance",
   Journal of Multivariate Analysis 98, 873-895, 2007.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from ._errors import InputError, ParameterError
from ._io import MANIFEST, OutputSet, write_text
from ._json import dumps
from ._validation import check_choice, check_float
from ._version import __version__
from .graph import GraphSettings, build_graph
from .partitions import (
    adjusted_rand_index,
    co_membership,
    contingency_table,
    variation_of_information,
)
from .table import LensColumn, LensTable, as_lens_table

__all__ = [
    "FEATURE_KINDS",
    "PARTITIONS",
    "SCORES",
    "ViewComparison",
    "adjusted_rand_index",
    "co_membership",
    "compare_views",
    "contingency_table",
    "induced_partition",
    "node_components",
    "node_correspondence",
    "variation_of_information",
]


# --------------------------------------------------------------------------- graphs
PARTITIONS = ("component", "node")
#: Scores of :meth:`ViewComparison.agreement`.
SCORES = ("ari", "vi", "vi_normalized", "co_ari", "co_jaccard")


def node_components(graph):
    """Connected component of every node of a graph (labels 0..C-1, by smallest node)."""
    _, labels = connected_components(graph.adjacency(), directed=False)
    return labels.astype(np.int64)


def induced_partition(graph, how="component"):
    """The row partition a graph induces; -1 for rows in no node.

    Parameters
    ----------
    graph : LensGraph
    how : {"component", "node"}, default="component"
        ``"component"``: the connected component holding the row's nodes;
        ``"node"``: the row's first node (smallest node index holding it).

    Returns
    -------
    ndarray of shape (n_rows,), int64

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> M = sp.csr_matrix(np.array([[1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0, 1], [0, 0, 0]]))
    >>> g = LensGraph(M, [[0], [1], [2]], [[0, 1]], [1], {"h": np.zeros((3, 3))},
    ...               lens_columns=["h"])
    >>> induced_partition(g).tolist(), induced_partition(g, "node").tolist()
    ([0, 0, 0, 1, -1], [0, 0, 1, 2, -1])
    """
    how = check_choice("how", how, PARTITIONS, context="induced_partition")
    M = graph.membership
    counts = np.diff(M.indptr)
    first = np.full(M.shape[0], -1, dtype=np.int64)
    has = counts > 0
    first[has] = M.indices[M.indptr[:-1][has]]  # indices are sorted: the first is the smallest
    if how == "node":
        return first
    comp = node_components(graph)
    out = np.full(M.shape[0], -1, dtype=np.int64)
    out[has] = comp[first[has]]
    return out


def node_correspondence(graph_a, graph_b):
    """Rows shared by every pair of nodes of two graphs over the same rows: ``M_a^T M_b``.

    Parameters
    ----------
    graph_a, graph_b : LensGraph

    Returns
    -------
    scipy.sparse.csr_matrix of shape (nodes of a, nodes of b), int64

    Raises
    ------
    InputError
        If the graphs were built on different numbers of rows.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> Ma = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 1]]))
    >>> Mb = sp.csr_matrix(np.array([[1], [1], [1]]))
    >>> ga = LensGraph(Ma, [[0], [1]], [[0, 1]], [1], {"h": np.zeros((2, 3))}, lens_columns=["h"])
    >>> gb = LensGraph(Mb, [[0]], [], [], {"h": np.zeros((1, 3))}, lens_columns=["h"])
    >>> node_correspondence(ga, gb).toarray().tolist()
    [[2], [2]]
    """
    _same_rows([graph_a, graph_b], ["first", "second"])
    A = sp.csr_matrix(graph_a.membership, dtype=np.int64)
    B = sp.csr_matrix(graph_b.membership, dtype=np.int64)
    return (A.T @ B).tocsr()


def _same_rows(graphs, names):
    sizes = {g.n_rows for g in graphs}
    if len(sizes) > 1:
        detail = ", ".join(f"{nm}: {g.n_rows}" for nm, g in zip(names, graphs, strict=True))
        raise InputError(
            f"The views cover different numbers of rows ({detail}); a comparison needs graphs "
            f"built over the same rows. Build every view on the same workspace."
        )


def _jaccard(a, b):
    """Jaccard index |a & b| / |a | b| of two sorted arrays of distinct rows."""
    if a.size == 0 and b.size == 0:
        return 0.0
    inter = np.intersect1d(a, b, assume_unique=True).size
    return inter / (a.size + b.size - inter)


#: Unmatched features listed per view in the text summary (all of them go to the JSON).
_LIST_MAX = 8
#: Feature kinds compared between views (as the graph summary names them).
FEATURE_KINDS = ("component", "loop", "flare", "limb", "branch")


def _feature_rows(graph, summary):
    """(label, kind, sorted row array, feature, telling) for every compared feature.

    ``telling``: a component, a significant feature, or any feature of a graph
    without significance (a ball cover); the others are small.
    """
    M = sp.csc_matrix(graph.membership)
    out = []
    for label, f in summary.labelled():
        if f.kind not in FEATURE_KINDS:
            continue
        parts = [M.indices[M.indptr[v]:M.indptr[v + 1]] for v in f.nodes]
        rows = np.unique(np.concatenate(parts)) if parts else np.empty(0, dtype=np.int64)
        out.append((label, f.kind, rows.astype(np.int64), f, f.significant is not False))
    return out


def _unmatched(feats_a, feats_b, match):
    """(significant features of a unmatched in b, count of small ones unmatched).

    A significant feature (or component) of a is matched when b has a
    significant feature (or component) of the same kind whose rows have
    Jaccard index >= ``match`` with it; ``small_in_other`` says whether a
    small feature of b would match it. A small feature of a is counted when no
    feature of b, of any significance, matches it.
    """
    out, small = [], 0
    for label, kind, rows, f, telling in feats_a:
        scores = [(_jaccard(rows, r), t) for _, k, r, _, t in feats_b if k == kind]
        best = max((j for j, t in scores if t), default=0.0)
        if not telling:
            small += max((j for j, _ in scores), default=0.0) < match
            continue
        if best < match:
            out.append({"label": label, "kind": kind, "index": int(label.split(":")[1]) - 1,
                        "nodes": list(f.nodes), "rows": int(rows.size),
                        "significance": f.significance, "best_jaccard": float(best),
                        "small_in_other": any(j >= match for j, t in scores if not t)})
    return out, int(small)


def _node_means(graph, values):
    """Mean of ``values`` (one per row) over the rows of every node."""
    M = sp.csr_matrix(graph.membership, dtype=np.float64)
    sums = M.T @ values
    sizes = np.maximum(graph.node_sizes, 1)
    return sums / sizes


class ViewComparison:
    """Two or more views (graphs over the same rows) compared.

    Attributes
    ----------
    names : list of str
        View names.
    graphs : list of LensGraph
    lens_values : list of ndarray of shape (n_rows, m_i)
        The lens columns of each view (raw values), for colouring the other views.
    partition : {"component", "node"}
    labels : list of ndarray of shape (n_rows,)
        The induced partition of each view (-1: row in no node).
    compared : ndarray of bool, shape (n_rows,)
        Rows assigned in every view; the agreement scores use these.
    pairs : list of dict
        One per pair of views (a < b): ``a``, ``b``, ``ari``, ``vi``,
        ``vi_normalized``, ``rows_compared``, ``trivial`` (both induced
        partitions one block, or both all singletons: ARI and VI say nothing),
        ``co_ari`` and ``co_jaccard`` (row co-membership, over the ``co_rows``
        rows assigned in both views), ``co_trivial``, ``only_a`` / ``only_b``
        (significant features of one view not matched in the other, each with
        its summary ``label``), ``matched_a`` / ``matched_b`` (significant
        features matched) and ``small_only_a`` / ``small_only_b`` (small
        features no feature of the other view matches, counted apart).
    match : float
    summaries : list of GraphSummary

    Examples
    --------
    >>> from lenswork import Workspace
    >>> t = np.linspace(0, 2 * np.pi, 300, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> cmp = compare_views({"x": ws.X[:, 0], "y": ws.X[:, 1]}, ws, partition="node")
    >>> cmp.names, cmp.correspondence("x", "y").shape[0] == cmp.graphs[0].n_nodes
    (['x', 'y'], True)
    >>> cmp.agreement("vi").shape
    (2, 2)
    """

    def __init__(self, names, graphs, lens_values, *, partition="component", match=0.5):
        self.names = list(names)
        self.graphs = list(graphs)
        self.lens_values = [np.asarray(v, dtype=np.float64).reshape(self.graphs[0].n_rows, -1)
                            for v in lens_values]
        self.partition = partition
        self.match = float(match)
        self.labels = [induced_partition(g, partition) for g in self.graphs]
        self.compared = np.logical_and.reduce([lab >= 0 for lab in self.labels])
        self.summaries = [g.summary() for g in self.graphs]
        feats = [_feature_rows(g, s) for g, s in zip(self.graphs, self.summaries, strict=True)]
        self.pairs = []
        rows = self.compared
        for a in range(len(self.graphs)):
            for b in range(a + 1, len(self.graphs)):
                la, lb = self.labels[a][rows], self.labels[b][rows]
                only_a, small_a = _unmatched(feats[a], feats[b], self.match)
                only_b, small_b = _unmatched(feats[b], feats[a], self.match)
                both = (self.labels[a] >= 0) & (self.labels[b] >= 0)
                co = co_membership(self.graphs[a].membership[both],
                                   self.graphs[b].membership[both]) if both.sum() >= 2 \
                    else {"ari": float("nan"), "jaccard": float("nan"), "trivial": False}
                blocks = (np.unique(la).size, np.unique(lb).size)
                trivial = bool(la.size) and (blocks == (1, 1) or blocks == (la.size, la.size))
                self.pairs.append({
                    "a": self.names[a], "b": self.names[b],
                    "ari": adjusted_rand_index(la, lb) if la.size else float("nan"),
                    "vi": variation_of_information(la, lb) if la.size else float("nan"),
                    "vi_normalized": (variation_of_information(la, lb, normalized=True)
                                      if la.size else float("nan")),
                    "rows_compared": int(la.size),
                    "rows_left_out": int(rows.size - la.size),
                    "trivial": trivial,
                    "co_ari": co["ari"], "co_jaccard": co["jaccard"],
                    "co_trivial": co["trivial"],
                    "co_rows": int(both.sum()),
                    "only_a": only_a, "only_b": only_b,
                    "matched_a": sum(f[4] for f in feats[a]) - len(only_a),
                    "matched_b": sum(f[4] for f in feats[b]) - len(only_b),
                    "small_only_a": small_a, "small_only_b": small_b,
                })

    def _index(self, view):
        if isinstance(view, str):
            if view not in self.names:
                raise ParameterError(f"No view {view!r}; the views are: {', '.join(self.names)}.")
            return self.names.index(view)
        return int(view)

    def correspondence(self, a=0, b=1):
        """``M_a^T M_b``: rows shared by node i of view a and node j of view b."""
        return node_correspondence(self.graphs[self._index(a)], self.graphs[self._index(b)])

    def pair(self, a=0, b=1):
        """The comparison dict of views a and b (names or positions)."""
        ia, ib = sorted((self._index(a), self._index(b)))
        for p in self.pairs:
            if p["a"] == self.names[ia] and p["b"] == self.names[ib]:
                return p
        raise ParameterError("Compare two different views.")

    def agreement(self, score="co_ari"):
        """(V, V) matrix of one score between every pair of views (diagonal: identity value).

        ``score``: ``"co_ari"`` (default: the co-membership ARI, the telling
        one; module notes) or ``"co_jaccard"`` (row co-membership), ``"ari"``,
        ``"vi"``, ``"vi_normalized"`` (of the induced partitions).
        """
        score = check_choice("score", score, SCORES, context="ViewComparison.agreement")
        V = len(self.names)
        out = np.full((V, V), 0.0 if score.startswith("vi") else 1.0)
        for p in self.pairs:
            i, j = self.names.index(p["a"]), self.names.index(p["b"])
            out[i, j] = out[j, i] = p[score]
        return out

    def node_colour(self, view, by):
        """Node means of view ``by``'s first lens column over the nodes of ``view``."""
        g = self.graphs[self._index(view)]
        return _node_means(g, self.lens_values[self._index(by)][:, 0])

    def format_text(self):
        """The comparison in a few lines for a terminal, the telling agreement first.

        Per view: its significant structure, then its raw counts. Per pair: the
        co-membership agreement (which pairs of rows share a node in both
        views), then the induced partition's ARI and VI, the significant
        features found in one view only, and the count of small ones.
        """
        lines = []
        for name, s in zip(self.names, self.summaries, strict=True):
            word = "significant" if s.significance is not None else "no significance"
            lines.append(f"{name}: {word}: {s.headline()}  (raw: {s.n_nodes} nodes, "
                         f"{s.n_edges} edges, loops {s.loops}, branch points "
                         f"{len(s.branch_points)}, flares {s.n_flares})")
        for p in self.pairs:
            lines.append(
                f"{p['a']} vs {p['b']}: co-membership ARI {p['co_ari']:.3f}, pair Jaccard "
                f"{p['co_jaccard']:.3f} ({p['co_rows']:,} rows; pairs of rows sharing a node)"
                + (" (trivial: each view keeps every pair together)" if p["co_trivial"] else ""))
            trivial = (" -- trivial: both are one block (or all singletons), they cannot tell "
                       "the views apart") if p["trivial"] else ""
            lines.append(
                f"  {self.partition} partition ({p['rows_compared']:,} rows): ARI "
                f"{p['ari']:.3f}, VI {p['vi']:.3f} nats ({p['vi_normalized']:.3f} of log n)"
                f"{trivial}")
            for side, key in ((p["a"], "only_a"), (p["b"], "only_b")):
                if p[key]:
                    items = ", ".join(
                        f"{f['label']} ({f['rows']:,} rows"
                        + ("; small in the other view" if f["small_in_other"] else "") + ")"
                        for f in p[key][:_LIST_MAX])
                    more = len(p[key]) - _LIST_MAX
                    tail = f" and {more} more (see comparison.json)" if more > 0 else ""
                    lines.append(f"  significant only in {side}: {items}{tail}")
                else:
                    lines.append(f"  significant only in {side}: nothing (every significant "
                                 f"feature matched at Jaccard >= {self.match:g})")
            lines.append(f"  small features in one view only (below the significance "
                         f"threshold, not listed): {p['small_only_a']} in {p['a']}, "
                         f"{p['small_only_b']} in {p['b']}")
        return "\n".join(lines)

    def to_dict(self):
        """JSON-ready: views with their counts, pair scores, unmatched features, provenance.

        Each view carries its build ``params`` and, for graphs built by
        lenswork, its whole ``graph_settings`` (:meth:`GraphSettings.to_dict`).
        """
        views = []
        for name, g, s in zip(self.names, self.graphs, self.summaries, strict=True):
            views.append({"name": name, "lens_columns": list(g.lens_columns), "params": g.params,
                          "graph_settings": g.provenance.get("graph_settings"),
                          "nodes": s.n_nodes, "edges": s.n_edges, "components": s.n_components,
                          "significant": s.significant_counts(),
                          "loops": s.loops, "branch_points": len(s.branch_points),
                          "flares": s.n_flares, "unassigned": s.n_unassigned})
        pairs = [{k: (None if isinstance(v, float) and math.isnan(v) else v)
                  for k, v in p.items()} for p in self.pairs]
        return {"lenswork_version": __version__, "kind": "view comparison",
                "partition": self.partition, "match": self.match,
                "n_rows": int(self.graphs[0].n_rows), "views": views, "pairs": pairs}

    def write(self, directory, *, figures=True):
        """Write ``comparison.json``, one ``correspondence_<a>_<b>.csv`` per pair (and a figure).

        Each correspondence CSV lists the non-zero entries of ``M_a^T M_b``:
        ``node_a, node_b, shared_rows``. One output set
        (:class:`lenswork._io.OutputSet`): all files or none, manifest last.

        Returns
        -------
        dict of str -> Path
        """
        output = OutputSet(directory, command="compare")
        with output as stage:
            write_text(stage / "comparison.json", dumps(self.to_dict()) + "\n")
            for i in range(len(self.names)):
                for j in range(i + 1, len(self.names)):
                    C = self.correspondence(i, j).tocoo()
                    order = np.lexsort((C.col, C.row))
                    lines = ["node_a,node_b,shared_rows"]
                    lines += [f"{C.row[t]},{C.col[t]},{C.data[t]}" for t in order]
                    write_text(stage / f"correspondence_{i + 1}_{j + 1}.csv",
                               "\n".join(lines) + "\n")
            if figures:
                self.plot(stage / "comparison.png")
        return {p.name: p for p in output.written if p.name != MANIFEST}

    def text(self):
        """The comparison for a terminal (:meth:`format_text`, the older name)."""
        return self.format_text()

    def plot(self, paths=None):
        """Views side by side, each coloured by the next view's lens; write or return the figure.

        The plot module is imported here, on the first call (with matplotlib).
        """
        from .plot._compare import comparison_figure, comparison_sheet
        from .plot._style import as_paths

        if paths is None:
            return comparison_figure(self)
        return comparison_sheet(self, as_paths(paths))

    def _repr_png_(self):
        """The ``plot()`` figure as PNG bytes (a notebook shows it); matplotlib's Agg canvas."""
        from .plot._style import png_bytes

        return png_bytes(self.plot())

    def __repr__(self):
        p = self.pairs[0]
        return (f"ViewComparison({len(self.names)} views, co-membership "
                f"ARI[{p['a']}, {p['b']}] = {p['co_ari']:.3f})")

    def to_frame(self, what="pairs"):
        """A pandas DataFrame: one row per pair of views, or per view.

        The ``pairs`` (or ``views``) list of ``comparison.json``, one column per
        key; lists and dicts (``only_a``, ``only_b``, ``params``,
        ``graph_settings``) as JSON text. Needs pandas (a clear error without it).
        """
        from ._frame import records_frame
        from ._validation import check_choice

        what = check_choice("what", what, ("pairs", "views"), context="ViewComparison.to_frame")
        return records_frame(self.to_dict()[what], what="a ViewComparison")


def _view_name(view):
    """A name for a view from what it is built from (None when nothing names it)."""
    if hasattr(view, "lens_columns") and hasattr(view, "membership"):
        return " \u00d7 ".join(view.lens_columns)
    if isinstance(view, tuple) and len(view) == 2 and isinstance(view[1], GraphSettings):
        base = _view_name(view[0]) or "view"
        return f"{base} [{view[1].cover_kind} cover]"
    if isinstance(view, tuple) and len(view) == 2 and isinstance(view[1], dict):
        base = _view_name(view[0]) or "view"
        settings = ", ".join(f"{k}={v}" for k, v in view[1].items())
        return f"{base} [{settings}]" if settings else base
    if isinstance(view, str):
        return view
    if isinstance(view, LensColumn):
        return view.name
    if isinstance(view, LensTable):
        return " \u00d7 ".join(view.names)
    if isinstance(view, (list, tuple)) and view and all(isinstance(c, LensColumn) for c in view):
        return " \u00d7 ".join(c.name for c in view)
    return None


def _view_items(views):
    if isinstance(views, dict):
        return [(str(k), v) for k, v in views.items()]
    views = list(views)
    names = [_view_name(v) or f"view {i + 1}" for i, v in enumerate(views)]
    if len(set(names)) < len(names):
        names = [f"{nm} ({i + 1})" for i, nm in enumerate(names)]
    return list(zip(names, views, strict=True))


def compare_views(views, workspace=None, *, settings=None, partition="component", match=0.5,
                  **overrides):
    """Compare two or more views of the same rows.

    Parameters
    ----------
    views : list or dict of views
        Each view is a :class:`~lenswork.LensGraph` (already built), or a lens
        input that :func:`lenswork.build_graph` accepts (LensTable, LensColumn(s),
        array, registry spec string), built on ``workspace`` with ``settings``,
        or a pair ``(lens input, GraphSettings or dict of changes)`` to
        compare settings (a dict is applied to ``settings`` with ``replace``).
        A dict names the views; otherwise names come from the lens columns.
    workspace : Workspace, optional
        Needed when a view is not a built graph.
    partition : {"component", "node"}, default="component"
        The induced row partition (see the module docstring).
    match : float in (0, 1], default=0.5
        Jaccard index of the rows at which a feature counts as present in both
        views.
    settings : GraphSettings or dict, optional
        The graph settings of the views built here (default ``GraphSettings()``).
    **overrides
        Any :class:`~lenswork.GraphSettings` field, applied to ``settings``
        (validated once, before any view is built).

    Returns
    -------
    ViewComparison

    Raises
    ------
    ParameterError
        Fewer than two views, a view that is not a graph without a workspace,
        bad partition or match.
    InputError
        Views over different numbers of rows.

    Notes
    -----
    Cost per pair: one sparse product ``M_a^T M_b`` (O(sum over rows of nodes_a
    x nodes_b per row)), O(n log n) for the contingency table, and one
    intersection per pair of same-kind features.

    Examples
    --------
    >>> from lenswork import Workspace
    >>> t = np.linspace(0, 2 * np.pi, 400, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> cmp = compare_views({"x": ws.X[:, 0], "y": ws.X[:, 1]}, ws)
    >>> p = cmp.pair("x", "y")
    >>> p["ari"], p["vi"], p["only_a"]
    (1.0, 0.0, [])
    """
    partition = check_choice("partition", partition, PARTITIONS, context="compare_views")
    settings = GraphSettings.coerce(settings, **overrides)
    match = check_float("match", match, lo=0, hi=1, lo_open=True, context="compare_views")
    items = _view_items(views)
    if len(items) < 2:
        raise ParameterError(
            f"compare_views needs at least two views; got {len(items)}. Pass a list or dict of "
            f"graphs or lenses."
        )
    names, graphs, values = [], [], []
    for name, view in items:
        if hasattr(view, "membership") and hasattr(view, "lens_columns"):
            g = view
            lens_vals = _graph_lens_values(g)
        else:
            if workspace is None:
                raise ParameterError(
                    f"View {name!r} is not a built graph, so compare_views needs the workspace "
                    f"to build it: compare_views(views, workspace)."
                )
            lens, view_settings = view, settings
            if isinstance(view, tuple) and len(view) == 2 \
                    and isinstance(view[1], (dict, GraphSettings)):
                lens, changes = view
                view_settings = changes if isinstance(changes, GraphSettings) \
                    else settings.replace(**changes)
            cols = as_lens_table(lens, workspace, what="compare_views").columns
            if _bare_array(lens):  # name its columns after the view
                cols = [replace(c, name=str(name) if len(cols) == 1 else f"{name}_{j + 1}")
                        for j, c in enumerate(cols)]
            g = build_graph(cols, workspace, view_settings)
            lens_vals = np.column_stack([c.values for c in cols])
        names.append(str(name))
        graphs.append(g)
        values.append(lens_vals)
    _same_rows(graphs, names)
    return ViewComparison(names, graphs, values, partition=partition, match=match)


def _bare_array(lens):
    """True for lens values given as numbers (not columns, tables or registry specs)."""
    if isinstance(lens, (str, dict, LensColumn, LensTable)) or hasattr(lens, "to_lens_table"):
        return False
    if isinstance(lens, (list, tuple)):
        return not any(isinstance(c, (str, LensColumn)) for c in lens)
    return True


def _graph_lens_values(graph):
    """Per-row lens values of a built graph, recovered from its node means.

    A built graph keeps node statistics, not per-row lens values, so a row's
    value is the mean of the lens means of the nodes holding it (NaN for a row
    in no node). Used only to colour the other views' nodes.
    """
    M = sp.csr_matrix(graph.membership, dtype=np.float64)
    counts = np.maximum(np.diff(M.indptr), 1)
    cols = [graph.node_values(name) for name in graph.lens_columns]
    vals = np.column_stack([(M @ c) / counts for c in cols])
    vals[np.diff(M.indptr) == 0] = np.nan
    return vals
