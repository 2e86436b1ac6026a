"""The shape of a LensGraph in a few numbers and a list of features.

=================  =========================================================
quantity           definition
=================  =========================================================
components ``C``   connected components of the node graph
loops ``b1``       first Betti number of the graph, ``E - V + C``: the number
                   of independent cycles
holes              first Betti number of the nerve with its triangles
                   (2-simplices: three nodes sharing a row), ``E - V + C -
                   rank(d2)``. Equal to the loops for a 1-D cover with
                   overlap <= 1/2 (no triangles); for a product cover of two
                   lenses, where four cells meet at every corner, the graph's
                   cycles are mostly filled triangles and the holes are the
                   loops that count
branch points      nodes of degree >= 3
flares             chains that start at a leaf (degree 1) and run through
                   degree-2 nodes up to a branch point
=================  =========================================================

Features are listed with the nodes they hold, the number of distinct rows
in them, and the range of every lens they span (the least node minimum to
the largest node maximum).

Significance
------------
Every loop, branch, flare and branch point of an interval-cover graph gets a
*significance*: how much of the lens range it spans, read from the extended
persistence diagram of each lens on the graph (Carrière and Oudot, FoCM 2018;
:func:`lenswork.graph._thresholds.lens_persistence`), as a share of the
range, and is *significant* when that share exceeds the cover's resolution
threshold (:func:`~lenswork.graph._thresholds.resolution_threshold`: more
than one interval once both ends' uncertainty is taken off):

* loops: the diagram's loop points (extended H1), each represented by the
  fundamental cycle of the edge that closed it in the ascending filtration;
  with several lenses, the lens certifying the most loops gives the list;
* branches: the diagram's ``down`` and ``up`` points -- a part of the graph
  hanging below or reaching above the rest, from its extreme node to the
  node where it joins (a bump of height h on a path is one of each, of
  persistence h);
* flares: the limb born at the flare's leaf; a flare whose leaf is the
  component's lowest or highest node (a trunk: the component's own extreme,
  which the diagram records as the component, not as a limb) gets 0 -- a Y
  under the height has one limb, its shorter upper arm;
* branch points: the third-largest lens span (as a share of the range) of the
  node's arms -- the parts of the graph reached from each of its neighbours
  without passing through it -- so a node is a significant branching when at
  least three directions from it span more than the resolution. Directions
  are counted near the node: neighbours joined through nodes whose level lies
  within the resolution threshold of the node's own are one direction (the
  level set just above or below a Reeb-graph node is what decides whether it
  branches; Carrière and Oudot 2018), so the extreme node of a thick loop,
  whose neighbours in a multi-lens cover join right beside it, is no branch
  point, while a fork's arms and a theta's strands stay apart. The value is
  also at most the largest significance of the limbs and loops with an end
  at the node, so that the nodes of a mesh of small loops (where every
  direction reaches everything) stay small: the fork of a Y, the junctions
  of a theta count; a loop node with a one-node spur does not.

With several lenses each feature takes the largest value over the lenses
(a feature is significant when one lens certifies it). Graphs of a ball
cover have no lens levels: no significance.

Holes of a multi-lens graph have no single lens to be measured along, so they
are held to the cover's scale instead: :func:`~lenswork.build_graph` also
builds the graphs of the same lenses with coarser covers -- interval counts
from the cover's ``N`` down to ``N / 2`` (``hole_scales`` of them) -- and a
hole counts as significant only when every one of those graphs has at least
as many holes (:attr:`GraphSummary.significant_holes` is the fewest holes
over the scales). A hole that is one missing cell, or a split of the rows
that one cell size makes, fills in once the elements are up to twice as
long; a hole of the data, wider than two elements, stays. The match is by
count, not by place: the k-th hole counts when every scale has k holes.
 Loops are reported as the fundamental cycles of
a breadth-first spanning tree (one per non-tree edge), so their number is
``b1``. A component that is one chain from leaf to leaf is also listed as a
``path``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from .._errors import ParameterError
from ._feature_list import graph_features, graph_limbs
from ._significance import BRANCH_RADIUS, significance_of  # noqa: F401  (BRANCH_RADIUS: tests)
from ._summary_text import (
    COUNT_WORDS,
    KIND_WORDS,
    count_text,
    cover_settings,
    feature_line,
    settings_text,
)
from ._walk import chains, components_by_size, nerve_holes, row_counter, structure

__all__ = ["GraphSummary", "summarize"]


@dataclass(frozen=True)
class GraphSummary:
    """Counts and features of a LensGraph (see the module notes for the definitions).

    The counts are computed at once, in O(V + E); the feature list (with the
    rows and lens range of every feature) is computed on first use of
    :attr:`features`, so sweeps that only need counts do not pay for it.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> M = sp.csr_matrix(np.eye(4, dtype=int))
    >>> ring = LensGraph(M, [[0], [1], [2], [3]], [[0, 1], [1, 2], [2, 3], [0, 3]], [1, 1, 1, 1],
    ...                  {"h": np.zeros((4, 3))}, lens_columns=["h"])
    >>> s = ring.summary()
    >>> s.n_components, s.loops, s.branch_points, s.n_flares
    (1, 1, (), 0)
    """

    n_rows: int
    n_nodes: int
    n_edges: int
    n_components: int
    loops: int
    holes: object
    branch_points: tuple
    n_flares: int
    n_unassigned: int
    component_sizes: tuple
    settings: dict = field(default_factory=dict, compare=False)
    _graph: object = field(default=None, repr=False, compare=False)

    @cached_property
    def features(self):
        """Every feature (components, loops, branch points, flares, paths) as GraphFeature.

        ``branch`` features are the branch *points* (nodes of degree >= 3).
        Loops, flares and branch points carry their significance (module
        notes); the diagram's branches are in :attr:`limbs`.
        """
        return graph_features(self._graph) if self._graph is not None else ()

    @cached_property
    def limbs(self):
        """The diagram's branches as ``limb`` features (module notes), by significance.

        A limb is a ``down`` or ``up`` point of a lens's extended persistence:
        a part of the graph hanging below or reaching above the rest, from its
        extreme node to the node where it joins (its two ``nodes``). Empty for a
        graph without lens levels.
        """
        if self._graph is None:
            return ()
        sig = significance_of(self._graph)
        return graph_limbs(self._graph, sig) if sig is not None else ()

    def _all(self):
        return (*self.features, *self.limbs)

    @property
    def significant_holes(self):
        """Holes that count (module notes): over cover scales for several lenses.

        One lens: the significant loops (its holes are its loops). Several
        lenses with an interval cover: the fewest holes over the graphs at the
        coarser scales that :func:`~lenswork.build_graph` built
        (``params["holes_over_scales"]``). None when not known (a ball cover,
        a nerve too large for its holes, or a graph built without the scales).
        """
        g = self._graph
        if g is None:
            return None
        if len(g.lens_columns) == 1:
            sig = self.significance
            return None if sig is None else sig["loops"][0]
        scales = (g.params or {}).get("holes_over_scales")
        return None if not scales else scales.get("significant")

    @cached_property
    def significance(self):
        """``{kind: (significant, all)}`` for loops, limbs, flares and branch points.

        None for a graph without lens levels (ball cover). Computed on first
        use: the extended persistence of every lens on the graph.

        Examples
        --------
        >>> from lenswork import build_graph
        >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
        >>> X = np.column_stack([np.cos(t), np.sin(t)])
        >>> build_graph(X[:, 1], X).summary().significance["loops"]
        (1, 1)
        """
        if self._graph is None or significance_of(self._graph) is None:
            return None
        out = {}
        for key, kind in (("loops", "loop"), ("limbs", "limb"), ("flares", "flare"),
                          ("branch_points", "branch")):
            feats = self.features_of(kind)
            out[key] = (sum(1 for f in feats if f.significant), len(feats))
        return out

    def significant_features(self, kind=None):
        """Significant loops, limbs, flares and branch points (of one ``kind``)."""
        return tuple(f for f in self._all() if f.significant
                     and (kind is None or f.kind == kind))

    def small_features(self, kind=None):
        """Loops, limbs, flares and branch points below the significance threshold."""
        return tuple(f for f in self._all() if f.significant is False
                     and (kind is None or f.kind == kind))

    @property
    def flares(self):
        """The flare features."""
        return tuple(f for f in self.features if f.kind == "flare")

    def features_of(self, kind):
        """Features of one kind (``"limb"``: :attr:`limbs`)."""
        return self.limbs if kind == "limb" else \
            tuple(f for f in self.features if f.kind == kind)

    # ------------------------------------------------------------ presentation
    @property
    def thresholds(self):
        """``{lens: significance threshold}`` of every lens (None without lens levels).

        The share of a lens's range a feature must exceed to be significant
        (:func:`~lenswork.graph._thresholds.resolution_threshold`); None for a
        lens whose threshold is infinite (one interval: nothing certified).
        """
        sig = significance_of(self._graph) if self._graph is not None else None
        if sig is None:
            return None
        return {name: (float(d.threshold) if math.isfinite(d.threshold) else None)
                for name, d in zip(self._graph.lens_columns, sig.diagrams, strict=False)}

    def needed(self, feature):
        """The significance ``feature`` had to exceed to count (None when not judged).

        A feature's significance is its largest over the lenses, and it is
        significant when one lens certifies it; so the value shown is the
        smallest lens threshold not below the feature's significance (for a
        small feature, a bar it missed in every lens that could certify it),
        else the smallest threshold. With one lens: that lens's threshold.
        A ``threshold`` attribute of the feature, when set, is used as is.

        Examples
        --------
        >>> from lenswork import build_graph
        >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
        >>> X = np.column_stack([np.cos(t), np.sin(t)])
        >>> s = build_graph(X[:, 1], X, intervals=10, overlap=0.3).summary()
        >>> loop = s.significant_features("loop")[0]
        >>> s.needed(loop) == s.thresholds["lens"], loop.significance > s.needed(loop)
        (True, True)
        """
        own = getattr(feature, "threshold", None)
        if own is not None:
            return float(own)
        if feature.significance is None or not self.thresholds:
            return None
        bars = sorted(t for t in self.thresholds.values() if t is not None)
        if not bars:
            return None
        return next((t for t in bars if t >= feature.significance), bars[0])

    def significant_counts(self):
        """The significant structure, in the order every output leads with it.

        Returns
        -------
        dict or None
            ``components`` (every component counts), ``loops`` (one lens) or
            ``holes`` (several lenses: :attr:`significant_holes`, None when
            not known), ``flares``, ``limbs`` and ``branch_points`` (the
            significant ones of :attr:`significance`). None for a graph
            without lens levels (a ball cover): nothing is judged.

        Examples
        --------
        >>> from lenswork import build_graph
        >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
        >>> X = np.column_stack([np.cos(t), np.sin(t)])
        >>> build_graph(X[:, 1], X).summary().significant_counts()
        {'components': 1, 'loops': 1, 'flares': 0, 'limbs': 0, 'branch_points': 0}
        """
        sig = self.significance
        if sig is None:
            return None
        out = {"components": self.n_components}
        if self._graph is not None and len(self._graph.lens_columns) > 1:
            out["holes"] = self.significant_holes
        else:
            out["loops"] = sig["loops"][0]
        out["flares"] = sig["flares"][0]
        out["limbs"] = sig["limbs"][0]
        out["branch_points"] = sig["branch_points"][0]
        return out

    def headline(self, sep=", "):
        """The significant counts in words: ``1 component, 1 loop, 2 flares, ...``.

        What the summary's first line, a drawing's title and a comparison's
        panels say, from :meth:`significant_counts`; for a graph without lens
        levels, the raw counts, named as such.

        Examples
        --------
        >>> from lenswork import build_graph
        >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
        >>> X = np.column_stack([np.cos(t), np.sin(t)])
        >>> build_graph(X[:, 1], X).summary().headline(" · ")
        '1 component · 1 loop · 0 flares · 0 limbs · 0 branch points'
        """
        counts = self.significant_counts()
        if counts is None:
            return sep.join([count_text(self.n_components, "component"),
                             count_text(self.loops, "loop") + " (raw)",
                             count_text(len(self.branch_points), "branch point") + " (raw)",
                             count_text(self.n_flares, "flare") + " (raw)"])
        return sep.join(count_text(v, COUNT_WORDS[k]) for k, v in counts.items())

    def raw_counts_text(self, sep=", "):
        """The raw cycle and degree counts in words (noise included)."""
        parts = [f"loops {self.loops} (b1 = E - V + C)"]
        if self.holes != self.loops:
            parts.append(f"holes {'not computed' if self.holes is None else self.holes} "
                         f"(b1 with the nerve's triangles)")
        parts += [f"branch points {len(self.branch_points)} (degree >= 3)",
                  f"flares {self.n_flares} (leaf chains)"]
        return sep.join(parts)

    def labelled(self):
        """``[(label, feature)]``: every feature and limb with its label ``kind:i``.

        ``i`` counts from 1 within the kind, in the order of :attr:`features`
        (then :attr:`limbs`); the labels ``lenswork contrast --feature`` takes
        and the comparison reports.
        """
        seen, out = {}, []
        for f in (*self.features, *self.limbs):
            seen[f.kind] = seen.get(f.kind, 0) + 1
            out.append((f"{f.kind}:{seen[f.kind]}", f))
        return out

    def tail_path(self, feature):
        """The nodes of a flare or limb from its tip to where it joins the graph.

        A flare: its chain, then the branch point it leads to. A limb: a
        shortest path (unweighted breadth-first search, scipy) from its tip
        (its first node, the extreme) to the node where it joins the rest
        (``attached_to``; a limb without one, its last node). Other kinds: their
        own nodes. What a drawing draws along; ``contrast`` takes a limb's rows
        from its region (its nodes).

        Examples
        --------
        >>> import scipy.sparse as sp
        >>> from lenswork.graph import LensGraph
        >>> M = sp.csr_matrix(np.eye(4, dtype=int))
        >>> g = LensGraph(M, [[0], [1], [2], [3]], [[0, 1], [1, 2], [1, 3]], [1, 1, 1],
        ...               {"h": np.zeros((4, 3))}, lens_columns=["h"])
        >>> s = g.summary()
        >>> [s.tail_path(f) for f in s.flares]
        [(0, 1), (2, 1), (3, 1)]
        """
        if feature.kind == "flare":
            return tuple(feature.nodes) + (
                () if feature.attached_to is None else (int(feature.attached_to),))
        if feature.kind != "limb" or self._graph is None:
            return tuple(feature.nodes)
        from scipy.sparse.csgraph import shortest_path

        tip = int(feature.nodes[0])
        join = int(feature.nodes[-1] if feature.attached_to is None else feature.attached_to)
        _, pred = shortest_path(self._graph.adjacency(), directed=False, unweighted=True,
                                indices=tip, return_predecessors=True)
        path, v = [join], join
        while v != tip and pred[v] >= 0:
            v = int(pred[v])
            path.append(v)
        return tuple(reversed(path))

    def to_dict(self):
        """JSON-ready form: the significant counts first, then the raw counts and features."""
        return {
            "significant_counts": self.significant_counts(),
            "thresholds": self.thresholds,
            "n_rows": self.n_rows, "n_nodes": self.n_nodes, "n_edges": self.n_edges,
            "n_components": self.n_components, "loops": self.loops, "holes": self.holes,
            "branch_points": list(self.branch_points), "n_flares": self.n_flares,
            "n_unassigned": self.n_unassigned, "component_sizes": list(self.component_sizes),
            "settings": dict(self.settings),
            "significant_holes": self.significant_holes,
            "significance": None if self.significance is None else {
                k: {"significant": a, "small": b - a} for k, (a, b) in self.significance.items()},
            "features": [self._feature_dict(lab, f) for lab, f in self.labelled()
                         if f.kind != "limb"],
            "limbs": [self._feature_dict(lab, f) for lab, f in self.labelled()
                      if f.kind == "limb"],
        }

    def _feature_dict(self, label, f):
        return {"label": label, **f.to_dict(), "threshold": self.needed(f)}

    def record(self):
        """The counts, settings and features, the significant apart from the small ones.

        What the graph files carry (JSON ``"summary"``, the GraphML graph
        attribute ``summary``): ``significant_counts`` (what the summary's
        first line says), ``thresholds`` (per lens), ``significant_features``
        and ``small_features`` (loops, limbs, flares and branch points above
        and below the threshold; each with its ``label`` and the ``threshold``
        it had to exceed); ``other_features`` the components and paths.
        """
        doc = self.to_dict()
        feats = doc.pop("features") + doc.pop("limbs")
        doc["headline"] = self.headline()
        doc["significant_features"] = [f for f in feats if f["significant"] is True]
        doc["small_features"] = [f for f in feats if f["significant"] is False]
        doc["other_features"] = [f for f in feats if f["significant"] is None]
        return doc

    def text(self, max_features=20):
        """A few lines for a terminal: the significant structure first, raw counts after.

        Line 1: the significant counts (:meth:`headline`); line 2: the raw
        cycle and degree counts, named as raw; then the graph's size, its
        settings, the thresholds, the significant features and a few of the
        small ones with the threshold each missed.
        """
        sig = self.significance
        small = [f for f in self._all() if f.significant is False]
        if sig is None:
            lines = [f"structure (no lens levels, so no significance): {self.headline()}"]
        else:
            lines = [f"significant: {self.headline()}"
                     + (f"  ({len(small)} small features below the threshold)" if small else "")]
        lines += [
            f"  raw cycle and degree counts (small features included): {self.raw_counts_text()}",
            f"  graph: {self.n_nodes} nodes, {self.n_edges} edges over {self.n_rows:,} rows "
            f"({self.n_unassigned:,} in no node)",
        ]
        if self.settings:
            lines.append("  " + settings_text(self.settings))
        scales = (self._graph.params or {}).get("holes_over_scales") \
            if self._graph is not None else None
        if scales:
            shown = ", ".join(
                f"{'x'.join(map(str, iv)) if isinstance(iv, (list, tuple)) else iv}: {h}"
                for iv, h in zip(scales["intervals"], scales["holes"]))
            hs = "unknown" if scales["significant"] is None else scales["significant"]
            lines.append(f"  significant holes {hs}: present at every cover scale down to "
                         f"half the intervals (intervals: holes  {shown})")
        bars = self.thresholds
        if bars:
            shown = ", ".join(f"{k} {'none (one interval)' if v is None else f'{v:.2f}'}"
                              for k, v in bars.items())
            lines.append(f"  threshold (share of the lens range a feature must span): {shown}")
        names = {id(f): lab for lab, f in self.labelled()}
        listed = [f for f in self._all() if f.significant is not False]
        for f in listed[:max_features]:
            lines.append(feature_line(f, self.needed(f), names.get(id(f))))
        if len(listed) > max_features:
            lines.append(f"  ... {len(listed) - max_features} more features")
        if small:
            kinds = {}
            for f in small:
                kinds[f.kind] = kinds.get(f.kind, 0) + 1
            counted = ", ".join(f"{KIND_WORDS[k]} {n}" for k, n in kinds.items())
            shown = sorted(small, key=lambda f: -f.significance)[:max(0, max_features // 4)]
            lines.append(f"  small features (below the threshold): {len(small)} ({counted})")
            lines.extend(feature_line(f, self.needed(f), names.get(id(f))) for f in shown)
            if len(small) > len(shown):
                lines.append(f"  ... {len(small) - len(shown)} more small features")
        return "\n".join(lines)

    def __str__(self):
        return self.text()

    def to_frame(self, what="features"):
        """A pandas DataFrame, one row per feature (limbs included), with its label and threshold.

        The ``significant_features``, ``small_features`` and ``other_features``
        of :meth:`record` in one table (``significant`` tells them apart).
        """
        from .._frame import records_frame
        from .._validation import check_choice

        check_choice("what", what, ("features",), context="GraphSummary.to_frame")
        rows = [self._feature_dict(lab, f) for lab, f in self.labelled()]
        return records_frame(rows, what="a graph summary")

    def write(self, directory, *, figures=True):
        """Write ``summary.json`` (:meth:`record`), ``summary.txt`` (and ``summary.png``).

        The figure is the graph drawing with its significant features marked
        (:meth:`plot`), drawn before the first file is written. Returns the paths.
        """
        from pathlib import Path

        from .._io import write_text
        from .._json import dumps

        out = Path(directory)
        if out.exists() and not out.is_dir():
            raise ParameterError(
                f"Output directory {str(out)!r} is a file; give a directory path."
            )
        fig = self.plot() if figures else None
        out.mkdir(parents=True, exist_ok=True)
        written = [out / "summary.json", out / "summary.txt"]
        write_text(written[0], dumps(self.record()) + "\n")
        write_text(written[1], self.text() + "\n")
        if fig is not None:
            from ..plot._style import save

            written.append(save(fig, out / "summary.png"))
        return written

    def plot(self, path=None, **kwargs):
        """The graph drawing with the significant features marked (:meth:`LensGraph.plot`)."""
        if self._graph is None:
            raise ParameterError("This summary holds no graph to draw; summarise a LensGraph.")
        return self._graph.plot(path, **kwargs)


def summarize(graph):
    """Summarise a LensGraph; see :class:`GraphSummary`.

    Notes
    -----
    Cost: O(V + E) for the counts and chains plus O(P) for the component row
    counts (P memberships); the features, computed on first use, add the
    length of the fundamental cycles and O(P) per feature.
    """
    V, E = graph.n_nodes, graph.n_edges
    n_comp, labels, deg, nb = structure(graph)
    rows_of = row_counter(graph)
    flares, _ = chains(nb, deg)
    loops = int(E - V + n_comp)
    return GraphSummary(
        n_rows=graph.n_rows, n_nodes=V, n_edges=E, n_components=n_comp,
        loops=loops, holes=nerve_holes(graph, loops),
        branch_points=tuple(int(v) for v in np.flatnonzero(deg >= 3)),
        n_flares=len(flares), n_unassigned=int(graph.unassigned.size),
        component_sizes=tuple(rows_of(nodes) for nodes in components_by_size(labels, n_comp)),
        settings=cover_settings(graph), _graph=graph,
    )
