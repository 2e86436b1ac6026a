"""LensGraph files: GraphML, JSON and a CSV of row memberships.

Every write goes to a temporary name beside the target and is renamed on
success (:mod:`lenswork._io`), so a failure never leaves a half-written file.

GraphML
    The open GraphML standard, written with :mod:`xml.etree.ElementTree`.
    Nodes ``n0, n1, ...`` carry ``size`` (long), ``element`` (string, the
    cover element id joined by commas: the interval index per lens, or the
    ball number), ``level`` (string, the element's position per lens joined
    by commas) and ``<column>_mean``, ``<column>_min``, ``<column>_max``
    (double) for every lens and data column;
    edges carry ``shared`` (long) and ``jaccard`` (double); the graph carries
    ``lens_columns``, ``params``, ``provenance`` and ``summary`` as JSON
    strings and ``n_rows``, ``n_unassigned`` (long).
JSON
    ``{"format": "lenswork-graph", "format_version": 1, "id_name", "row_ids",
    "lens_columns", "data_columns", "nodes": [{"id", "element", "level", "size", "stats"}],
    "edges": [{"source", "target", "shared", "jaccard"}], "membership": [rows of
    node 0, rows of node 1, ...], "unassigned", "fragments", "params",
    "provenance", "summary"}``; rows are 0-based positions, ``row_ids[row]`` is
    the id. ``summary`` (:meth:`GraphSummary.record`) is written for readers,
    the same record as GraphML's ``summary``: first ``significant_counts`` and
    ``headline`` (what the printed summary's first line and the drawing's
    title say) and ``thresholds`` (per lens, the share of its range a feature
    must span); then the raw counts, the resolved settings, and the features
    with their ``label``, significance and the ``threshold`` each had to
    exceed, the ``significant_features`` apart from the ``small_features``.
    Reading ignores it (the graph recomputes its summary).
    :func:`lenswork.graph.read_graph_json` (in ``_read.py``) gives back an equal LensGraph.
CSV
    Header ``<id column>,node``; one line per (row, node) membership in row
    order, and one line with an empty node for every row in no node, so that
    no row is missing from the file.

Lens files
    :func:`read_lens_file` (the same as :meth:`lenswork.LensTable.read`) reads
    lens columns written by :meth:`lenswork.LensTable.write` (CSV, TSV or
    Parquet with the ``<file>.json`` sidecar, as the screen command writes its
    selection) and lines them up with the rows of a point cloud by row id.
"""

from __future__ import annotations

import csv
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np  # noqa: F401  (the doctests use np)

from .._io import atomic_path, safe_cell, write_text
from .._json import dumps, plain
from ..table import LensTable
from ._tables import STATS

__all__ = [
    "FORMAT",
    "FORMAT_VERSION",
    "STATS",
    "graph_to_dict",
    "read_lens_file",
    "write_graph_json",
    "write_graphml",
    "write_memberships",
]

FORMAT = "lenswork-graph"
FORMAT_VERSION = 1
_GRAPHML_NS = "http://graphml.graphdrawing.org/xmlns"
_XSI_NS = "http://www.w3.org/2001/XMLSchema-instance"
_SCHEMA = f"{_GRAPHML_NS} {_GRAPHML_NS}/1.0/graphml.xsd"


#: Characters XML 1.0 does not allow (ElementTree writes them as they are, which no XML
#: parser reads back): control characters but tab, newline and carriage return, lone
#: surrogates, U+FFFE and U+FFFF.
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")


def _xml_text(text):
    """``text`` with the characters XML 1.0 does not allow replaced by U+FFFD."""
    return _NOT_XML.sub("\ufffd", text)


def write_graphml(graph, path):
    """Write ``graph`` as GraphML with typed node, edge and graph attributes.

    Parameters
    ----------
    graph : LensGraph
    path : str or Path

    Returns
    -------
    Path

    Examples
    --------
    >>> import tempfile, scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> g = LensGraph(sp.csr_matrix(np.eye(2, dtype=int)), [[0], [1]], [[0, 1]], [0],
    ...               {"h": np.zeros((2, 3))}, lens_columns=["h"])
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     text = write_graphml(g, Path(tmp) / "g.graphml").read_text()
    >>> text.count("<node "), text.count("<edge ")
    (2, 1)
    """
    root = ET.Element(
        "graphml", {"xmlns": _GRAPHML_NS, "xmlns:xsi": _XSI_NS, "xsi:schemaLocation": _SCHEMA}
    )
    keys = {}

    def key(domain, name, kind):
        kid = f"d{len(keys)}"
        keys[(domain, name)] = kid
        ET.SubElement(root, "key", {"id": kid, "for": domain, "attr.name": _xml_text(name),
                                    "attr.type": kind})
        return kid

    for name, kind in (("lens_columns", "string"), ("params", "string"),
                       ("provenance", "string"), ("summary", "string"), ("n_rows", "long"),
                       ("n_unassigned", "long")):
        key("graph", name, kind)
    key("node", "size", "long")
    key("node", "element", "string")
    key("node", "level", "string")
    names = (*graph.lens_columns, *graph.data_columns)
    for name in names:
        for stat in STATS:
            key("node", f"{name}_{stat}", "double")
    key("edge", "shared", "long")
    key("edge", "jaccard", "double")

    g = ET.SubElement(root, "graph", {"id": "G", "edgedefault": "undirected"})

    def data(parent, domain, name, text):
        ET.SubElement(parent, "data", {"key": keys[(domain, name)]}).text = text

    data(g, "graph", "lens_columns", dumps(list(graph.lens_columns), indent=None))
    data(g, "graph", "params", dumps(graph.params, indent=None, sort_keys=True))
    data(g, "graph", "provenance", dumps(graph.provenance, indent=None, sort_keys=True))
    data(g, "graph", "summary", dumps(graph.summary().record(), indent=None, sort_keys=True))
    levels = graph.node_levels
    data(g, "graph", "n_rows", str(graph.n_rows))
    data(g, "graph", "n_unassigned", str(int(graph.unassigned.size)))
    for a in range(graph.n_nodes):
        node = ET.SubElement(g, "node", {"id": f"n{a}"})
        data(node, "node", "size", str(int(graph.node_sizes[a])))
        data(node, "node", "element", ",".join(str(int(i)) for i in graph.node_elements[a]))
        data(node, "node", "level", ",".join(repr(float(v)) for v in levels[a]))
        for name in names:
            for j, stat in enumerate(STATS):
                data(node, "node", f"{name}_{stat}", repr(float(graph.node_stats[name][a, j])))
    for e, ((a, b), s, w) in enumerate(zip(graph.edge_index, graph.edge_shared,
                                           graph.edge_jaccard)):
        edge = ET.SubElement(g, "edge", {"id": f"e{e}", "source": f"n{a}", "target": f"n{b}"})
        data(edge, "edge", "shared", str(int(s)))
        data(edge, "edge", "jaccard", repr(float(w)))
    tree = ET.ElementTree(root)
    ET.indent(tree, space=" ")
    path = Path(path)
    with atomic_path(path) as tmp:
        tree.write(tmp, encoding="utf-8", xml_declaration=True)
    return path


def graph_to_dict(graph):
    """The JSON-ready dict that :func:`write_graph_json` writes."""
    csc = graph.membership.tocsc()
    csc.sort_indices()
    names = (*graph.lens_columns, *graph.data_columns)
    levels = graph.node_levels
    nodes = [
        {
            "id": a,
            "element": [int(i) for i in graph.node_elements[a]],
            "level": [float(v) for v in levels[a]],
            "size": int(graph.node_sizes[a]),
            "stats": {
                name: dict(zip(STATS, (float(x) for x in graph.node_stats[name][a])))
                for name in names
            },
        }
        for a in range(graph.n_nodes)
    ]
    edges = [
        {"source": int(a), "target": int(b), "shared": int(s), "jaccard": float(w)}
        for (a, b), s, w in zip(graph.edge_index, graph.edge_shared, graph.edge_jaccard)
    ]
    return {
        "format": FORMAT, "format_version": FORMAT_VERSION,
        "n_rows": graph.n_rows, "id_name": graph.id_name,
        "row_ids": plain(list(graph.row_ids)),
        "lens_columns": list(graph.lens_columns), "data_columns": list(graph.data_columns),
        "nodes": nodes, "edges": edges,
        "membership": [csc.indices[csc.indptr[a]:csc.indptr[a + 1]].tolist()
                       for a in range(graph.n_nodes)],
        "unassigned": graph.unassigned.tolist(),
        "fragments": graph.fragments, "params": graph.params, "provenance": graph.provenance,
        "summary": graph.summary().record(),
    }


def write_graph_json(graph, path):
    """Write ``graph`` as JSON (see the module notes) atomically; returns the path.

    Examples
    --------
    >>> import json, tempfile, scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> g = LensGraph(sp.csr_matrix(np.eye(2, dtype=int)), [[0], [1]], [], [],
    ...               {"h": np.zeros((2, 3))}, lens_columns=["h"])
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     doc = json.loads(write_graph_json(g, Path(tmp) / "g.json").read_text())
    >>> doc["format"], doc["membership"]
    ('lenswork-graph', [[0], [1]])
    """
    text = dumps(graph_to_dict(graph), indent=None)
    path = Path(path)
    write_text(path, text + "\n")
    return path


def write_memberships(graph, path):
    """Write the CSV of row id -> node memberships (see the module notes); returns the path.

    Examples
    --------
    >>> import tempfile, scipy.sparse as sp
    >>> from lenswork.graph import LensGraph
    >>> M = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 0]]))
    >>> g = LensGraph(M, [[0], [1]], [[0, 1]], [1], {"h": np.zeros((2, 3))}, lens_columns=["h"])
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     text = write_memberships(g, Path(tmp) / "m.csv").read_text()
    >>> text.split()
    ['row,node', '1,0', '2,0', '2,1', '3,']
    """
    M = graph.membership
    ids = [safe_cell(plain(x)) for x in graph.row_ids]  # formulas neutralised, numbers kept
    path = Path(path)
    with atomic_path(path) as tmp, open(tmp, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow([safe_cell(graph.id_name), "node"])
        indptr, indices = M.indptr, M.indices
        for i in range(graph.n_rows):
            a, b = indptr[i], indptr[i + 1]
            if a == b:
                w.writerow([ids[i], ""])
            else:
                w.writerows([ids[i], int(node)] for node in indices[a:b])
    return path


def read_lens_file(path, cloud, columns=None):
    """Read lens columns written by :meth:`LensTable.write` for the rows of ``cloud``.

    The same as :meth:`lenswork.LensTable.read` (see there for the parameters,
    the matching by row id and the errors).

    Returns
    -------
    LensTable

    Examples
    --------
    >>> import tempfile
    >>> from lenswork import LensColumn, LensTable, PointCloud
    >>> cloud = PointCloud.from_array(np.zeros((3, 1)), ids=["a", "b", "c"])
    >>> table = LensTable([LensColumn("u", np.array([1.0, 2.0, 3.0])),
    ...                    LensColumn("v", np.array([6.0, 5.0, 4.0]))], cloud)
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     back = read_lens_file(table.write(Path(tmp) / "l.csv")[0], cloud, columns=["v"])
    >>> back.names, back["v"].values.tolist()
    (['v'], [6.0, 5.0, 4.0])
    """
    return LensTable.read(path, cloud, columns=columns)
