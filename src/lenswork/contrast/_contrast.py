"""contrast_columns: each data column tested between a feature's rows and the rows against."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from .._errors import InputError, ParameterError
from .._validation import check_choice, check_float, check_int
from .._version import __version__
from ..columns import cloud_of, data_columns
from ..graph import LensGraph
from ..stats import SortedColumn, benjamini_hochberg, circular_rank_correlation, numeric_contrast
from ._features import against_rows, lens_array, position, resolve_features
from ._result import EFFECT_FLOOR, ColumnContrast, ContrastResult

__all__ = ["AGAINST", "contrast_columns"]

#: What a feature's rows can be set against.
AGAINST = ("rest", "neighbours")


def contrast_columns(graph, data, feature=None, *, nodes=None, rows=None, against="rest", hops=2,
                     columns=None, categorical=None, lenses=None, max_levels=50, alpha=0.05,
                     all_features=False):
    """Rank the data columns by how strongly they set a graph feature's rows apart.

    Parameters
    ----------
    graph : LensGraph
    data : PointCloud or Workspace
        The rows the graph was built on (same order and ids).
    feature : str, GraphFeature or list of them, optional
        ``"flare:2"`` (the second flare of ``graph.summary().features``; kinds
        component, loop, branch, flare, path, limb, 1-based within the kind,
        as :meth:`GraphSummary.labelled` names them), a kind (every feature of
        it, small ones too), ``"nodes:3,5,7"``, or a
        GraphFeature. Default: the components and the significant features of
        the summary (unless ``nodes`` or ``rows`` is given).
    nodes : sequence of int, optional
        A set of nodes to contrast (labelled ``nodes``).
    rows : bool mask of shape (n_rows,) or sequence of int, optional
        A set of rows (0-based positions) to contrast (labelled ``rows``).
    against : {"rest", "neighbours"}, default="rest"
        Every other row, or the rows of the nodes within ``hops`` hops of the
        feature that are not in it (for a set of rows, the other rows of the
        nodes they lie in count too).
    hops : int, default=2
    columns : list of str, optional
        Data columns to test (features and passthrough); default all.
    categorical : list of str, optional
        Columns to treat as categorical even when their values are numbers.
    lenses : LensTable or array-like of shape (n_rows,) or (n_rows, m), optional
        Row lens values; with them the position along a flare or path is the
        (SD-scaled) lens distance from its attachment node, which orders the
        rows of even a one-node flare. Without them: graph hops.
    max_levels : int, default=50
        A categorical column with more levels keeps the ``max_levels - 1`` most
        frequent and pools the others; one with a level for half its rows or
        more is skipped (an identifier).
    alpha : float, default=0.05
        False discovery rate of the Benjamini-Hochberg step-up (over every
        test of the call). A column is significant when its q-value is at
        most ``alpha`` and its effect reaches :data:`EFFECT_FLOOR`.
    all_features : bool, default=False
        Test every feature of the summary (small ones and paths too), not only
        the components and the significant features.

    Returns
    -------
    ContrastResult

    Raises
    ------
    ParameterError
        An unknown feature, node, column or option.
    InputError
        A named feature with no rows, with every row, or with no neighbouring
        rows; data that do not match the graph's rows.

    Notes
    -----
    Features and columns that cannot be tested are listed in
    ``result.skipped`` with the reason (a constant or all-missing column, a
    side with fewer than two values, an identifier-like column; when every
    feature of the summary is tested, a feature holding every row). Cost per
    feature and numeric column: one sort of the rows compared, O(n log n).

    Examples
    --------
    >>> from lenswork import PointCloud, build_graph
    >>> rng = np.random.default_rng(0)
    >>> t = rng.uniform(0, 1, 400)
    >>> X = np.column_stack([t, rng.normal(0, 0.05, 400), (t > 0.8) * 2.0])
    >>> cloud = PointCloud.from_array(X, feature_names=["t", "noise", "step"])
    >>> g = build_graph(X[:, 0], cloud, intervals=5, overlap=0.3, min_size=10)
    >>> res = contrast_columns(g, cloud, nodes=[g.n_nodes - 1])
    >>> sorted(res.top("nodes", 2)), bool(res.for_feature("nodes")[0].qvalue < 1e-6)
    (['step', 't'], True)
    """
    if not isinstance(graph, LensGraph):
        raise ParameterError(
            f"The 'graph' parameter of contrast_columns must be a LensGraph; got "
            f"{type(graph).__name__}."
        )
    against = check_choice("against", against, AGAINST, context="contrast_columns")
    hops = check_int("hops", hops, lo=1, context="contrast_columns")
    max_levels = check_int("max_levels", max_levels, lo=2, context="contrast_columns")
    alpha = check_float("alpha", alpha, lo=0, hi=1, lo_open=True, context="contrast_columns")
    cloud = cloud_of(data, graph)
    cols = data_columns(cloud, columns, categorical, max_levels)
    lens = lens_array(lenses, graph.n_rows)
    skipped, notes, raw, infos = [], [], [], []
    all_features = bool(all_features)
    feats, explicit, left_out = resolve_features(graph, feature, nodes, rows, all_features)
    if left_out and feature is None and nodes is None and rows is None:
        notes.append(f"{left_out} small features (below the significance threshold) and paths "
                     f"not tested; all_features=True (--all-features) tests them too")
    for c in cols:
        if c.note.startswith("skipped"):
            skipped.append({"feature": "", "column": c.name, "reason": c.note[9:]})
        elif c.note:
            notes.append(f"column {c.name!r}: {c.note}")
        elif c.kind == "numeric":
            finite = np.isfinite(c.values)
            if not finite.any():
                skipped.append({"feature": "", "column": c.name, "reason": "all values missing"})
                c.note = "skip"
            elif np.ptp(c.values[finite]) == 0:
                skipped.append({"feature": "", "column": c.name,
                                "reason": f"constant (every value {c.values[finite][0]:.6g})"})
                c.note = "skip"
            elif not finite.all():
                notes.append(f"column {c.name!r}: {int((~finite).sum()):,} missing values left "
                             f"out of its tests")
        if c.kind == "categorical" and not c.note.startswith("skipped"):
            used = set(np.unique(c.values[c.values >= 0]).tolist())
            if len(used) < 2:
                reason = "all values missing" if not used else \
                    f"constant (every value {c.levels[next(iter(used))]!r})"
                skipped.append({"feature": "", "column": c.name, "reason": reason})
                c.note = "skipped"
    cols = [c for c in cols if not c.note.startswith("skip")]
    if not cols:
        raise InputError(
            "No data column can be tested: every column is constant, missing or an identifier "
            "(see the notes above); give other columns."
        )
    for feat in feats:
        n_in = int(feat.inside.sum())
        other = against_rows(graph, feat, against, hops)
        n_out = int(other.sum())
        reason = None
        if n_in == 0:
            reason = "the feature has no rows"
        elif n_out == 0:
            reason = ("no neighbouring rows within "
                      f"{hops} hops (use against='rest' or more hops)" if against == "neighbours"
                      else "the feature holds every row: nothing to set it against")
        if reason:
            if explicit:
                raise InputError(f"Feature {feat.label!r}: {reason}.")
            skipped.append({"feature": feat.label, "column": "", "reason": reason})
            continue
        kind_pos, pos = position(graph, feat, lens)
        in_rows = np.flatnonzero(feat.inside)
        infos.append({"label": feat.label, "kind": feat.kind, "nodes": list(feat.nodes),
                      "n_rows": n_in, "n_against": n_out, "attached_to": feat.attached_to,
                      "position": kind_pos or "", "significance": feat.significance,
                      "significant": feat.significant, "threshold": feat.threshold})
        for c in cols:
            rec = _test_column(c, feat, other, in_rows, kind_pos, pos)
            if isinstance(rec, str):
                skipped.append({"feature": feat.label, "column": c.name, "reason": rec})
            else:
                raw.append(rec)
    if not infos:
        reasons = "; ".join(f"{s['feature']}: {s['reason']}" for s in skipped if s["feature"])
        hint = ("" if explicit else " Nothing significant is left to contrast: test the small "
                "features too with all_features=True (--all-features), or name rows with "
                "--rows / --rows-file.")
        raise InputError(f"No graph feature can be tested ({reasons}).{hint}")
    q = benjamini_hochberg([r["pvalue"] for r in raw]) if raw else np.array([])
    out = []
    for f in infos:
        mine = [(r, qq) for r, qq in zip(raw, q) if r["feature"] == f["label"]]
        mine.sort(key=lambda rq: (-rq[0]["effect"], rq[0]["pvalue"], rq[0]["column"]))
        for rank, (r, qq) in enumerate(mine, start=1):
            big = bool(r["effect"] >= EFFECT_FLOOR[r["type"]])
            out.append(ColumnContrast(rank=rank, qvalue=float(qq), large_enough=big,
                                      significant=bool(qq <= alpha) and big, **r))
    params = {"against": against, "hops": hops if against == "neighbours" else None,
              "alpha": alpha, "max_levels": max_levels, "correction": "Benjamini-Hochberg 1995",
              "family": len(raw), "effect_floor": dict(EFFECT_FLOOR),
              "effect_floor_source": "Romano et al. 2006 (|Cliff's delta| small); Cohen 1988 "
                                     "(Cramér's V / w small)",
              "all_features": all_features, "lenswork": __version__,
              "scaling": cloud.provenance.get("scaling"),
              "lenses": list(graph.lens_columns)}
    return ContrastResult(tuple(out), tuple(infos), tuple(skipped), tuple(notes), params,
                          graph=graph, cloud=cloud)



def _test_column(c, feat, other, in_rows, kind_pos, pos):
    """One (feature, column) comparison as a dict, or the reason it was skipped."""
    nan = float("nan")
    base = {"feature": feat.label, "kind": feat.kind, "column": c.name, "role": c.role,
            "type": c.kind}
    if c.kind == "numeric":
        finite = np.isfinite(c.values)
        n1, n2 = int((feat.inside & finite).sum()), int((other & finite).sum())
        if n1 < 2 or n2 < 2:
            return f"fewer than two values on one side ({n1} in, {n2} against)"
        both = c.values[(feat.inside | other) & finite]
        if both.min() == both.max():
            return "constant on the rows compared"
        if c.sorted is None:
            c.sorted = SortedColumn(c.values)
        n1, n2, delta, smd, ks, p, m_in, m_out = numeric_contrast(c.sorted, feat.inside, other)
        rec = dict(base, effect=abs(delta), cliffs_delta=delta, smd=smd, mean_in=m_in,
                   mean_out=m_out, level="", share_in=nan, share_out=nan, test="ks",
                   statistic=ks, pvalue=p, n_in=n1, n_out=n2)
        rec.update(_along(c.values[in_rows], kind_pos, pos, feat))
        return rec
    k_in, k_out = c.values[feat.inside], c.values[other]
    k_in, k_out = k_in[k_in >= 0], k_out[k_out >= 0]
    if k_in.size < 2 or k_out.size < 2:
        return f"fewer than two values on one side ({k_in.size} in, {k_out.size} against)"
    L = len(c.levels)
    table = np.vstack([np.bincount(k_in, minlength=L), np.bincount(k_out, minlength=L)])
    table = table[:, table.sum(axis=0) > 0]
    levels = [lev for lev, n in zip(c.levels, np.bincount(np.concatenate([k_in, k_out]),
                                                          minlength=L)) if n > 0]
    if table.shape[1] < 2:
        return "constant on the rows compared"
    chi2, p, _, _ = stats.chi2_contingency(table, correction=False)
    v = math.sqrt(chi2 / table.sum())
    share = table / table.sum(axis=1, keepdims=True)
    top = int(np.argmax(share[0] - share[1]))
    return dict(base, effect=v, cliffs_delta=nan, smd=nan, mean_in=nan, mean_out=nan,
                level=levels[top], share_in=float(share[0, top]), share_out=float(share[1, top]),
                test="chi2", statistic=float(chi2), pvalue=float(p), n_in=int(k_in.size),
                n_out=int(k_out.size), along="", along_r=nan, along_p=nan, along_peak_node=None)


def _along(values, kind_pos, pos, feat):
    nan = float("nan")
    empty = {"along": "", "along_r": nan, "along_p": nan, "along_peak_node": None}
    if kind_pos is None:
        return empty
    ok = np.isfinite(values)
    x, t = values[ok], pos[ok]
    if x.size < 3 or np.ptp(x) == 0 or np.ptp(t) == 0:
        return dict(empty, along="spearman" if kind_pos != "angle" else "circular")
    if kind_pos == "angle":
        r, p, peak = circular_rank_correlation(t, x)
        L = len(feat.nodes)
        node = feat.nodes[int(round(peak / (2 * np.pi) * L)) % L] if math.isfinite(peak) else None
        return {"along": "circular", "along_r": r, "along_p": p, "along_peak_node": node}
    res = stats.spearmanr(t, x)
    return {"along": "spearman", "along_r": float(res.statistic), "along_p": float(res.pvalue),
            "along_peak_node": None}
