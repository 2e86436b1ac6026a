"""Which rows a contrast tests: graph features, named nodes or rows, what they are set against.

:func:`resolve_features` turns the ``feature`` / ``nodes`` / ``rows`` arguments of
:func:`~lenswork.contrast_columns` into :class:`ContrastFeature` row sets (a
limb's rows are its tail path without the join node); :func:`against_rows` gives
the rows each is set against; :func:`position` the order along a flare, limb or
path (lens distance or graph hops from the attachment node) or the angle around
a loop.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
from scipy.sparse.csgraph import dijkstra

from .._errors import InputError, ParameterError
from ..graph import GraphFeature

__all__ = ["FEATURE_KINDS", "ContrastFeature", "against_rows", "lens_array", "position",
           "resolve_features"]

#: Feature kinds of a graph summary, in the order they are listed.
FEATURE_KINDS = ("component", "loop", "branch", "flare", "path", "limb")


@dataclass(frozen=True)
class ContrastFeature:
    """A set of graph rows to contrast: a summary feature, named nodes or named rows."""

    label: str
    kind: str
    nodes: tuple
    inside: np.ndarray  # bool (n_rows,)
    attached_to: int | None = None
    significance: float | None = None
    significant: bool | None = None
    threshold: float | None = None


def _rows_of_nodes(graph, nodes):
    nodes = np.asarray(list(nodes), dtype=np.int64)
    if nodes.size == 0:
        return np.zeros(graph.n_rows, dtype=bool)
    return np.asarray(graph.membership[:, nodes].sum(axis=1)).ravel() > 0


def _check_nodes(graph, nodes, what):
    nodes = [int(v) for v in nodes]
    bad = [v for v in nodes if not 0 <= v < graph.n_nodes]
    if bad:
        raise ParameterError(
            f"{what} names node {bad[0]}, but the graph has nodes 0 to {graph.n_nodes - 1}."
        )
    return tuple(dict.fromkeys(nodes))


def _default_feature(f, all_features):
    """Tested unless named: components and significant features (every one with all_features)."""
    return all_features or f.kind == "component" or f.significant is True


def _from_summary(graph, f, label):
    s = graph.summary()
    nodes, joins = tuple(int(v) for v in f.nodes), f.attached_to
    if f.kind == "limb" and joins is None:  # its rows: the nodes from its tip up to the join
        path = s.tail_path(f)
        nodes, joins = path[:-1], path[-1]
    return ContrastFeature(label, f.kind, nodes, _rows_of_nodes(graph, nodes), joins,
                    f.significance, f.significant, s.needed(f))


def resolve_features(graph, feature, nodes, rows, all_features=False):
    """-> (list of ContrastFeature, explicit?, number of small features left out)."""
    labelled = graph.summary().labelled()
    left_out = sum(1 for _, f in labelled if not _default_feature(f, all_features))
    out = []
    if nodes is not None:
        nodes = _check_nodes(graph, nodes, "The 'nodes' parameter")
        out.append(ContrastFeature("nodes", "nodes", nodes, _rows_of_nodes(graph, nodes)))
    if rows is not None:
        arr = np.asarray(rows)
        if arr.dtype == bool:
            if arr.shape != (graph.n_rows,):
                raise ParameterError(
                    f"A boolean 'rows' mask needs one entry per graph row ({graph.n_rows}); "
                    f"got shape {arr.shape}."
                )
            inside = arr.copy()
        else:
            idx = np.asarray(arr, dtype=np.int64).ravel()
            bad = idx[(idx < 0) | (idx >= graph.n_rows)]
            if bad.size:
                raise ParameterError(
                    f"The 'rows' parameter names row position {int(bad[0])}; positions run from "
                    f"0 to {graph.n_rows - 1}."
                )
            inside = np.zeros(graph.n_rows, dtype=bool)
            inside[idx] = True
        touched = np.flatnonzero(np.asarray(graph.membership[inside].sum(axis=0)).ravel() > 0)
        out.append(ContrastFeature("rows", "rows", tuple(int(v) for v in touched), inside))
    if feature is None and not out:
        return [_from_summary(graph, f, lab) for lab, f in labelled
                if _default_feature(f, all_features)], False, left_out
    items = [] if feature is None else (
        list(feature) if isinstance(feature, (list, tuple)) else [feature])
    for item in items:
        if isinstance(item, GraphFeature):
            lab = next((lab for lab, f in labelled if f == item), f"{item.kind}")
            out.append(_from_summary(graph, item, lab))
            continue
        text = str(item).strip().lower()
        if text in FEATURE_KINDS:
            hits = [_from_summary(graph, f, lab) for lab, f in labelled if f.kind == text]
            if not hits:
                raise ParameterError(f"The graph has no {text} feature (feature {item!r}).")
            out += hits
            continue
        m = re.fullmatch(r"nodes\s*:\s*([\d\s,]+)", text)
        if m:
            ids = [int(x) for x in m.group(1).replace(" ", "").split(",") if x]
            ids = _check_nodes(graph, ids, f"Feature {item!r}")
            out.append(ContrastFeature(f"nodes:{','.join(map(str, ids))}", "nodes", ids,
                                _rows_of_nodes(graph, ids)))
            continue
        hit = next((f for lab, f in labelled if lab == text.replace(" ", "")), None)
        if hit is None:
            names = ", ".join(lab for lab, _ in labelled[:12])
            more = " ..." if len(labelled) > 12 else ""
            raise ParameterError(
                f"No graph feature {item!r}. Name one as kind:i (1-based within its kind) or "
                f"nodes:3,5,7, or give a kind ({', '.join(FEATURE_KINDS)}). This graph has: "
                f"{names}{more}."
            )
        out.append(_from_summary(graph, hit, text.replace(" ", "")))
    return out, True, 0


def against_rows(graph, feat, against, hops):
    if against == "rest":
        return ~feat.inside
    if not feat.nodes:
        return np.zeros(graph.n_rows, dtype=bool)
    dist = dijkstra(graph.adjacency(), directed=False, indices=list(feat.nodes),
                    unweighted=True, limit=hops + 0.5, min_only=True)
    own = set() if feat.kind == "rows" else set(feat.nodes)  # a row set: its nodes' other rows
    near = [v for v in np.flatnonzero(np.isfinite(dist)) if v not in own]
    return _rows_of_nodes(graph, near) & ~feat.inside


def lens_array(lenses, n_rows):
    if lenses is None:
        return None
    if hasattr(lenses, "values") and callable(lenses.values):
        arr = np.asarray(lenses.values(), dtype=np.float64)
    else:
        arr = np.asarray(lenses, dtype=np.float64)
    arr = arr.reshape(arr.shape[0], -1) if arr.ndim else arr
    if arr.ndim != 2 or arr.shape[0] != n_rows:
        raise ParameterError(
            f"The 'lenses' values must have one row per graph row ({n_rows}); got shape "
            f"{np.shape(arr)}."
        )
    if not np.isfinite(arr).all():
        raise InputError("The 'lenses' values have missing values; give finite lens values.")
    return arr


def position(graph, feat, lens):
    """Row position along a flare / path (float) or angle around a loop; None otherwise."""
    rows = np.flatnonzero(feat.inside)
    if feat.kind == "loop" and len(feat.nodes) >= 3:
        L = len(feat.nodes)
        ang = 2 * np.pi * np.arange(L) / L
        sub = graph.membership[rows][:, list(feat.nodes)].astype(np.float64)
        c, s = np.asarray(sub @ np.cos(ang)).ravel(), np.asarray(sub @ np.sin(ang)).ravel()
        return "angle", np.arctan2(s, c) % (2 * np.pi)
    if feat.kind not in ("flare", "limb", "path"):
        return None, None
    anchor = feat.attached_to if feat.kind in ("flare", "limb") else feat.nodes[0]
    if lens is not None:
        sd = lens.std(axis=0)
        sd[sd == 0] = 1.0
        centre = lens[graph.members(anchor)].mean(axis=0)
        return "lens distance", np.sqrt((((lens[rows] - centre) / sd) ** 2).sum(axis=1))
    dist = dijkstra(graph.adjacency(), directed=False, indices=anchor, unweighted=True)
    nodes = list(feat.nodes)
    sub = graph.membership[rows][:, nodes].astype(np.float64)
    return "hops", np.asarray(sub @ dist[nodes]).ravel() / np.asarray(sub.sum(axis=1)).ravel()
