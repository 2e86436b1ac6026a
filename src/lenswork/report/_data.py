"""The data a report page carries: one JSON document of node-level facts.

Everything the page shows is computed here, in Python, once; the page's
script only draws and looks things up. The document (``format``
``"lenswork-report"``, ``format_version`` 1) is described in DEVELOPERS.md,
"The report page".

Sizes follow the nodes, not the rows: per node its size, lens statistics,
the mean (or level shares) of every data column, its top contrast columns and
its members. Members are the one part that grows with the rows; they are
stored as delta-coded row positions (:func:`encode_members`), about one byte
per membership when nodes hold more than 1/128 of the rows.
"""

from __future__ import annotations

import base64
import dataclasses
import json
import math
import re
from pathlib import Path

import numpy as np

from .._errors import InputError, ParameterError
from .._json import plain
from .._validation import check_int
from .._version import __version__
from ..columns import MISSING_TEXT, node_column_values
from ..contrast import contrast_columns
from ..data import PointCloud
from ..graph import LensGraph, auto_layout, graph_layout, read_graph_json

__all__ = [
    "CONTRAST_ROWS",
    "FORMAT",
    "FORMAT_VERSION",
    "contrast_sample",
    "decode_members",
    "encode_members",
    "read_screen",
    "report_data",
]

FORMAT = "lenswork-report"
FORMAT_VERSION = 1
#: Most levels a categorical column may have to be offered for colouring (shares per level).
MAX_LEVELS = 30
#: Largest total length (characters) of row ids written into the page when they follow no
#: pattern; above it the page lists row positions only (and says so).
MAX_ID_TEXT = 1_500_000
#: Above this many rows the node and feature contrasts are computed on a seeded sample of this
#: many rows (the contrast's cost is O(n) per node and column: 170 s for 89 nodes x 21 columns
#: at 1e6 rows, measured by bench_report.py), every row of a node kept when the sample holds
#: fewer than MIN_NODE_ROWS of it.
CONTRAST_ROWS = 100_000
MIN_NODE_ROWS = 50
#: Screen ranking fields shown in the page's table, in order.
SCREEN_FIELDS = ("rank", "column", "merit", "robust_spread", "smoothness", "structure",
                 "significant_loops", "significant_branches", "preservation", "pair_merit")


# ---------------------------------------------------------------- members
def encode_members(rows):
    """Sorted row positions as delta-coded variable-length integers, in base64 text.

    The first value is the first position, each next one the gap to the
    previous position minus one (so consecutive rows cost one zero byte); each
    value is written as an unsigned LEB128 integer (7 bits a byte, the high bit
    set on every byte but the last) and the bytes as standard base64.

    Parameters
    ----------
    rows : array-like of int
        Row positions (0-based), any order; duplicates are an error.

    Returns
    -------
    str

    Examples
    --------
    >>> text = encode_members([0, 1, 2, 200, 5])
    >>> text
    'AAAAAsIB'
    >>> decode_members(text).tolist()
    [0, 1, 2, 5, 200]
    """
    rows = np.sort(np.asarray(rows, dtype=np.int64).ravel())
    if rows.size == 0:
        return ""
    if rows[0] < 0:
        raise ParameterError(f"Row positions must be 0 or more; got {int(rows[0])}.")
    gaps = np.diff(rows, prepend=-1) - 1
    gaps[0] = rows[0]
    if np.any(gaps < 0):
        dup = int(rows[np.flatnonzero(gaps < 0)[0]])
        raise ParameterError(f"Row position {dup} is listed twice.")
    # LEB128 over the whole array: one column of 7-bit groups per byte position
    width = max(1, math.ceil(int(gaps.max()).bit_length() / 7))
    groups = np.stack([(gaps >> (7 * b)) & 0x7F for b in range(width)], axis=1)
    nbytes = np.ones(gaps.size, dtype=np.int64)
    for b in range(1, width):
        nbytes += gaps >= (1 << (7 * b))
    cont = np.arange(width)[None, :] < (nbytes[:, None] - 1)
    keep = np.arange(width)[None, :] < nbytes[:, None]
    out = (groups | (cont.astype(np.int64) << 7))[keep].astype(np.uint8)
    return base64.b64encode(out.tobytes()).decode("ascii")


def decode_members(text):
    """Row positions from :func:`encode_members` text (the page's script does the same).

    Examples
    --------
    >>> decode_members(encode_members([7, 3, 4])).tolist()
    [3, 4, 7]
    """
    data = np.frombuffer(base64.b64decode(text), dtype=np.uint8)
    if data.size == 0:
        return np.zeros(0, dtype=np.int64)
    if data[-1] & 0x80:
        raise InputError("Member text ends inside a number; the report data is damaged.")
    ends = np.flatnonzero((data & 0x80) == 0)
    starts = np.concatenate([[0], ends[:-1] + 1])
    low = (data & 0x7F).astype(np.int64)
    shift = 7 * (np.arange(data.size) - np.repeat(starts, ends - starts + 1))
    values = np.add.reduceat(low << shift, starts)
    rows = np.cumsum(values + 1) - 1
    return rows.astype(np.int64)


# ---------------------------------------------------------------- ids
def id_encoding(ids):
    """How the page names rows: a pattern when the ids follow one, else the list or nothing.

    Returns ``{"kind": "position"}`` (ids are 1..n), ``{"kind": "pattern",
    "prefix", "width", "start", "step"}`` (``prefix`` + a zero-padded integer
    ``start + step * i``; a plain integer when prefix is empty and width 0),
    ``{"kind": "list", "ids": "id\\nid..."}`` or ``{"kind": "none"}`` (too many
    irregular ids: the page lists row positions).

    Examples
    --------
    >>> id_encoding(np.array(["PS-001", "PS-002", "PS-003"]))
    {'kind': 'pattern', 'prefix': 'PS-', 'width': 3, 'start': 1, 'step': 1}
    >>> id_encoding(np.array(["a", "b"]))["kind"]
    'list'
    """
    ids = np.asarray(ids)
    n = ids.size
    if n == 0:
        return {"kind": "none"}
    if ids.dtype.kind in "iu":
        step = int(ids[1] - ids[0]) if n > 1 else 1
        if np.array_equal(ids, ids[0] + step * np.arange(n)):
            return {"kind": "pattern", "prefix": "", "width": 0, "start": int(ids[0]),
                    "step": step}
    text = [str(x) for x in ids.tolist()]
    m = re.fullmatch(r"(.*?)(\d+)", text[0])
    if m and ids.dtype.kind not in "f":
        prefix, digits = m.group(1), m.group(2)
        width = len(digits) if digits.startswith("0") else 0
        start = int(digits)
        m2 = re.fullmatch(re.escape(prefix) + r"(\d+)", text[1]) if n > 1 else None
        step = int(m2.group(1)) - start if m2 else 1
        if step > 0:
            fmt = f"{{}}{{:0{width}d}}" if width else "{}{}"
            expected = [fmt.format(prefix, start + step * i) for i in range(n)]
            if expected == text:
                return {"kind": "pattern", "prefix": prefix, "width": width, "start": start,
                        "step": step}
    if sum(len(t) + 1 for t in text) <= MAX_ID_TEXT:
        return {"kind": "list", "ids": "\n".join(text)}
    return {"kind": "none"}


# ---------------------------------------------------------------- screen
def read_screen(source):
    """A screen as the page needs it: the ranking document and the sheet (PNG bytes or None).

    Parameters
    ----------
    source : ScreenResult, dict, str or Path
        A result, its ``to_dict()`` document, or a folder written by
        ``lenswork screen`` (``ranking.json`` and, when present, ``sheet.png``).

    Returns
    -------
    (dict, bytes or None)
    """
    if isinstance(source, dict):
        return source, None
    if isinstance(source, (str, Path)):
        folder = Path(source)
        path = folder / "ranking.json" if folder.is_dir() else folder
        if not path.exists():
            raise InputError(
                f"No screen ranking at {str(path)!r}; give the folder `lenswork screen` wrote "
                f"(it holds ranking.json)."
            )
        try:
            doc = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError) as err:
            raise InputError(f"Cannot read the screen ranking {str(path)!r}: {err}.") from None
        if "ranking" not in doc:
            raise InputError(f"{str(path)!r} is not a screen ranking (no 'ranking' list).")
        sheet = path.parent / "sheet.png"
        return doc, sheet.read_bytes() if sheet.exists() else None
    if hasattr(source, "to_dict") and hasattr(source, "selected"):
        import tempfile

        from ..plot import screen_sheet  # matplotlib on demand only

        with tempfile.TemporaryDirectory(prefix="lenswork-report-") as tmp:
            png = Path(tmp) / "sheet.png"
            screen_sheet(source, [png])
            return source.to_dict(), png.read_bytes()
    raise ParameterError(
        f"The 'screen' parameter must be a ScreenResult, its to_dict() document or a screen "
        f"folder; got {type(source).__name__}."
    )


def _screen_part(doc, sheet):
    rows = []
    for r in doc.get("ranking", []):
        row = {k: r.get(k) for k in SCREEN_FIELDS}
        row["selected"] = bool(r.get("selected"))
        row["reason"] = r.get("reason", "")
        row["lens"] = r.get("lens", "")
        rows.append(row)
    return {
        "selected": list(doc.get("selected", [])),
        "stop_text": doc.get("stop_text", ""),
        "pair_ties": [list(t.get("lenses", [])) for t in doc.get("pair_ties") or []],
        "data_notes": [v["text"] for v in (doc.get("data_notes") or {}).values()
                       if isinstance(v, dict) and v.get("text")],
        "settings": doc.get("settings", {}),
        "fields": list(SCREEN_FIELDS),
        "ranking": rows,
        "sheet": None if sheet is None else
        "data:image/png;base64," + base64.b64encode(sheet).decode("ascii"),
        "sample": doc.get("sample"),
    }


# ---------------------------------------------------------------- graph
def _as_graph(graph):
    if isinstance(graph, LensGraph):
        return graph
    if isinstance(graph, (str, Path)):
        path = Path(graph)
        if path.is_dir():
            path = path / "graph.json"
        if not path.exists():
            raise InputError(
                f"No graph file at {str(path)!r}; give the folder `lenswork graph` wrote (it holds "
                f"graph.json) or the graph.json file."
            )
        return read_graph_json(path)
    raise ParameterError(
        f"The 'graph' parameter must be a LensGraph, a graph.json file or a graph folder; got "
        f"{type(graph).__name__}."
    )


def _cloud(data):
    """The data's PointCloud; contrast_columns checks its rows against the graph's."""
    if data is None:
        return None
    cloud = getattr(data, "cloud", data)
    if not isinstance(cloud, PointCloud):
        raise ParameterError(
            f"The 'data' parameter must be a PointCloud or a Workspace; got "
            f"{type(data).__name__}."
        )
    return cloud


def _units(cloud):
    """name -> (centre, scale) undoing the cloud's scaling (identity when unscaled)."""
    scaling = (cloud.provenance or {}).get("scaling") or {}
    cols = scaling.get("columns") or {}
    return {name: (float(v.get("centre", 0.0)), float(v.get("scale", 1.0)))
            for name, v in cols.items()}, scaling.get("method")


def _round(values, digits=6):
    """Floats with ``digits`` significant digits (smaller JSON), NaN -> None."""
    out = []
    for v in np.asarray(values, dtype=np.float64).tolist():
        out.append(None if not math.isfinite(v) else float(f"{v:.{digits}g}"))
    return out


def _columns_part(graph, cloud):
    out = []
    for name in cloud.feature_names:  # node_column_values reads the table's own units
        mean, _ = node_column_values(graph, cloud, name, "mean")
        out.append({"name": name, "role": "feature", "type": "numeric",
                    "mean": _round(mean)})
    for name in (str(k) for k in cloud.passthrough):
        if name == cloud.id_name:
            continue
        mean, label = node_column_values(graph, cloud, name, "mean")
        if not label.startswith("share of "):  # numbers (read as text from a file, too)
            out.append({"name": name, "role": "passthrough", "type": "numeric",
                        "mean": _round(mean)})
            continue
        cells = np.array([str(v) for v in np.asarray(cloud.passthrough[name]).tolist()],
                         dtype=object)
        cells = cells[~np.isin(np.char.lower(cells.astype(str)), list(MISSING_TEXT | {""}))]
        levels, counts = np.unique(cells, return_counts=True)
        if levels.size > MAX_LEVELS or levels.size < 2:
            continue
        shares = {}
        for lev in levels[np.argsort(-counts, kind="stable")].tolist():
            share, _ = node_column_values(graph, cloud, name, "share", level=lev)
            shares[lev] = _round(share, 4)
        out.append({"name": name, "role": "passthrough", "type": "categorical",
                    "levels": list(shares), "share": shares})
    return out


def _contrast_row(r, units):
    c, s = units.get(r.column, (0.0, 1.0)) if r.role == "feature" else (0.0, 1.0)
    row = {"column": r.column, "type": r.type, "rank": r.rank, "effect": r.effect,
           "q": r.qvalue, "significant": r.significant}
    if r.type == "numeric":
        row.update(delta=r.cliffs_delta, smd=r.smd, mean_in=c + s * r.mean_in,
                   mean_out=c + s * r.mean_out)
    else:
        row.update(level=r.level, share_in=r.share_in, share_out=r.share_out)
    return {k: (round(v, 6) if isinstance(v, float) and math.isfinite(v) else v)
            for k, v in row.items()}


def contrast_sample(graph, cloud, max_rows=CONTRAST_ROWS, random_state=0):
    """The graph and rows the page's contrasts use: all of them, or a seeded sample.

    Above ``max_rows`` rows, ``max_rows`` rows drawn without replacement (seeded),
    plus every row of a node of which the sample holds fewer than
    ``MIN_NODE_ROWS``; the graph keeps its nodes and edges, with the sampled rows'
    memberships.

    Returns
    -------
    (LensGraph, PointCloud, ndarray of int or None)
        The rows kept (positions), or None when every row is used.

    Examples
    --------
    >>> from lenswork import PointCloud, build_graph
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(2000, 2))
    >>> cloud = PointCloud.from_array(X, feature_names=["a", "b"])
    >>> g = build_graph(X[:, 0], cloud, intervals=4)
    >>> sub, sub_cloud, rows = contrast_sample(g, cloud, max_rows=500)
    >>> sub.n_nodes == g.n_nodes, sub.n_rows == sub_cloud.n == rows.size >= 500
    (True, True)
    """
    n = graph.n_rows
    if max_rows is None or n <= max_rows:
        return graph, cloud, None
    rng = np.random.default_rng(random_state)
    keep = np.zeros(n, dtype=bool)
    keep[rng.choice(n, size=int(max_rows), replace=False)] = True
    csc = graph.membership.tocsc()
    held = np.asarray(csc[keep].sum(axis=0)).ravel()
    for v in np.flatnonzero(held < np.minimum(MIN_NODE_ROWS, graph.node_sizes)):
        keep[csc.indices[csc.indptr[v]:csc.indptr[v + 1]]] = True
    rows = np.flatnonzero(keep)
    sub = LensGraph(graph.membership[rows], graph.node_elements, graph.edge_index,
                    graph.edge_shared, graph.node_stats, lens_columns=graph.lens_columns,
                    data_columns=graph.data_columns, row_ids=graph.row_ids[rows],
                    id_name=graph.id_name, params=graph.params, provenance=graph.provenance,
                    fragments=graph.fragments, node_levels=graph.node_levels)
    sub_cloud = dataclasses.replace(
        cloud, X=np.ascontiguousarray(cloud.X[rows]), ids=cloud.ids[rows],
        passthrough={k: np.asarray(v)[rows] for k, v in cloud.passthrough.items()},
        row_numbers=np.asarray(cloud.row_numbers)[rows])
    return sub, sub_cloud, rows


def _contrasts(graph, cloud, features, units, top, alpha, max_rows, random_state):
    """Node and feature contrasts in one call (one Benjamini-Hochberg family)."""
    V = graph.n_nodes
    graph, cloud, kept = contrast_sample(graph, cloud, max_rows, random_state)
    sizes = graph.node_sizes
    labels = {}
    for v in range(V):
        if 0 < sizes[v] < graph.n_rows:
            labels.setdefault(f"nodes:{v}", None)
    for f in features:
        labels.setdefault("nodes:" + ",".join(map(str, sorted(set(f["nodes"])))), None)
    if not labels:
        return [[] for _ in range(V)], {}, None
    res = contrast_columns(graph, cloud, list(labels), against="rest", alpha=alpha)
    tables = {}
    for r in res.rows:
        tables.setdefault(r.feature, []).append(r)
    per_node = [[_contrast_row(r, units) for r in tables.get(f"nodes:{v}", [])[:top]]
                for v in range(V)]
    per_feature = {lab: [_contrast_row(r, units) for r in rows] for lab, rows in tables.items()}
    params = {"against": "rest", "alpha": alpha, "family": res.params.get("family"),
              "correction": res.params.get("correction"), "top": top,
              "rows": int(graph.n_rows), "sampled": kept is not None,
              "skipped": [dict(s) for s in res.skipped if s.get("column")][:20]}
    return per_node, per_feature, params


def _members_part(graph):
    csc = graph.membership.tocsc()
    return [encode_members(csc.indices[csc.indptr[v]:csc.indptr[v + 1]])
            for v in range(graph.n_nodes)]


def report_data(graph, data=None, *, screen=None, title=None, top=6, alpha=0.05,
                layout="auto", random_state=0, contrast_rows=CONTRAST_ROWS):
    """The JSON document a report page carries (see DEVELOPERS.md, "The report page").

    Parameters
    ----------
    graph : LensGraph, str or Path
        The graph, or a ``graph.json`` file or folder written by ``lenswork graph``.
    data : PointCloud or Workspace, optional
        The rows the graph was built on. With them the page colours nodes by
        any data column (in the table's units: a z-scored run is scaled back)
        and shows each node's contrast columns; without, lens columns only.
    screen : ScreenResult, dict, str or Path, optional
        A screen result, its document, or a folder written by ``lenswork screen``.
    title : str, optional
    top : int, default=6
        Contrast columns kept per node (every column is kept for a feature).
    alpha : float, default=0.05
        False discovery rate of the contrasts.
    layout : str, default="auto"
        Node layout (:func:`lenswork.graph.graph_layout`).
    random_state : int, default=0
        Seed of the layout and of the contrasts' row sample.
    contrast_rows : int or None, default=100_000
        Above this many rows the contrasts use a seeded sample
        (:func:`contrast_sample`; the page says so); None: every row.

    Returns
    -------
    dict
        Plain JSON values only (NaN and infinities are None).

    Examples
    --------
    >>> from lenswork import PointCloud, build_graph
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(300, 2))
    >>> cloud = PointCloud.from_array(X, feature_names=["a", "b"])
    >>> doc = report_data(build_graph(X[:, 0], cloud, intervals=4), cloud)
    >>> doc["format"], len(doc["graph"]["members"]) == doc["graph"]["n_nodes"]
    ('lenswork-report', True)
    """
    top = check_int("top", top, lo=1, context="report_data")
    if contrast_rows is not None:
        contrast_rows = check_int("contrast_rows", contrast_rows, lo=100, context="report_data")
    graph = _as_graph(graph)
    cloud = _cloud(data)
    pos = graph_layout(graph, layout, random_state=random_state) if graph.n_nodes else \
        np.zeros((0, 2))
    summary = graph.summary()
    features = []
    for f in summary.significant_features():
        features.append({"kind": f.kind, "nodes": [int(v) for v in f.nodes], "rows": f.rows,
                         "significance": f.significance,
                         "lens_range": {k: [a, b] for k, (a, b) in f.lens_range.items()},
                         "attached_to": f.attached_to})
    seen = {}
    for f in features:
        seen[f["kind"]] = seen.get(f["kind"], 0) + 1
        f["label"] = f"{f['kind']}:{seen[f['kind']]}"
    lens = {name: {"mean": _round(graph.node_stats[name][:, 0]),
                   "min": _round(graph.node_stats[name][:, 1]),
                   "max": _round(graph.node_stats[name][:, 2])} for name in graph.lens_columns}
    g = {
        "n_rows": graph.n_rows, "n_nodes": graph.n_nodes, "n_edges": graph.n_edges,
        "id_name": graph.id_name, "ids": id_encoding(graph.row_ids),
        "lens_columns": list(graph.lens_columns),
        "layout": {"method": auto_layout(len(graph.lens_columns), graph.n_nodes)
                   if layout == "auto" else layout, "x": _round(pos[:, 0]),
                   "y": _round(pos[:, 1])},
        "size": graph.node_sizes.tolist(), "lens": lens,
        "edges": {"source": graph.edge_index[:, 0].tolist(),
                  "target": graph.edge_index[:, 1].tolist(),
                  "shared": graph.edge_shared.tolist()},
        "members": _members_part(graph),
        "unassigned": int(graph.unassigned.size),
        "summary": summary.text(max_features=8),
        "significance": summary.to_dict().get("significance"),
        "n_small_features": len(summary.small_features()),
    }
    columns, per_node, contrast_params = [], [[] for _ in range(graph.n_nodes)], None
    scaling = None
    if cloud is not None:
        units, scaling = _units(cloud)
        columns = _columns_part(graph, cloud)
        per_node, per_feature, contrast_params = _contrasts(
            graph, cloud, features, units, top, alpha, contrast_rows, random_state)
        for f in features:
            key = "nodes:" + ",".join(map(str, sorted(set(f["nodes"]))))
            f["contrast"] = per_feature.get(key, [])
    screen_part = None
    if screen is not None:
        screen_part = _screen_part(*read_screen(screen))
    prov = graph.provenance or {}
    inp = dict(prov.get("input") or (cloud.provenance if cloud is not None else {}) or {})
    inp.pop("features", None)
    provenance = {
        "lenswork_version": __version__,
        "graph_built_by": prov.get("lenswork_version"),
        "input": inp,
        "seed": prov.get("random_state", graph.params.get("random_state")),
        "graph_settings": prov.get("graph_settings") or graph.params,
        "auto_settings": prov.get("auto_settings"),
        "lenses": prov.get("lenses"),
        "units": ("the table's own units (the run's z-scores scaled back)"
                  if scaling == "zscore" else "the table's own units (the run's robust "
                  "scaling undone)" if scaling else "the values as read"),
        "screen_settings": None if screen_part is None else screen_part["settings"],
    }
    return plain({
        "format": FORMAT, "format_version": FORMAT_VERSION,
        "title": title or f"lenswork report: {' x '.join(graph.lens_columns)}",
        "provenance": provenance,
        "screen": screen_part,
        "graph": g,
        "columns": columns,
        "node_contrast": per_node,
        "contrast": contrast_params,
        "features": features,
    })
