"""Reading a LensGraph back from its JSON form (written by :mod:`lenswork.graph.io`).

The writers live in :mod:`lenswork.graph.io` and know the graph only by its
attributes; reading builds a :class:`LensGraph`, so it sits here, above both.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from .._errors import InputError
from ._lensgraph import LensGraph
from ._tables import STATS
from .io import FORMAT, FORMAT_VERSION, write_graph_json  # noqa: F401  (the doctest uses it)

__all__ = ["graph_from_dict", "read_graph_json"]


def graph_from_dict(doc, source="the document"):
    """Rebuild a LensGraph from :func:`graph_to_dict` output."""
    if not isinstance(doc, dict) or doc.get("format") != FORMAT:
        raise InputError(
            f"{source} is not a lenswork graph file (no \"format\": \"{FORMAT}\" entry). "
            f"Give a file written by LensGraph.write_json or the graph command."
        )
    if doc.get("format_version") != FORMAT_VERSION:
        raise InputError(
            f"{source} has graph format version {doc.get('format_version')!r}; this lenswork "
            f"reads version {FORMAT_VERSION}. Rewrite it with this version."
        )
    try:
        import scipy.sparse as sp

        n_rows = int(doc["n_rows"])
        nodes = doc["nodes"]
        V = len(nodes)
        members = doc["membership"]
        rows = np.concatenate([np.asarray(m, dtype=np.int64) for m in members]) if V else \
            np.zeros(0, dtype=np.int64)
        cols = np.repeat(np.arange(V), [len(m) for m in members])
        M = sp.csr_matrix((np.ones(rows.size, dtype=np.int8), (rows, cols)), shape=(n_rows, V))
        names = [*doc["lens_columns"], *doc["data_columns"]]
        stats = {
            name: np.array([[nd["stats"][name][s] for s in STATS] for nd in nodes],
                           dtype=np.float64).reshape(V, 3)
            for name in names
        }
        width = len(nodes[0]["element"]) if V else len(doc["lens_columns"])
        elements = np.array([nd["element"] for nd in nodes], dtype=np.int64).reshape(V, width)
        levels = None
        if V and all("level" in nd for nd in nodes):  # files before the cover seam have none
            levels = np.array([[np.nan if v is None else v for v in nd["level"]]
                               for nd in nodes], dtype=np.float64).reshape(V, -1)
        edges = np.array([[e["source"], e["target"]] for e in doc["edges"]],
                         dtype=np.int64).reshape(-1, 2)
        shared = np.array([e["shared"] for e in doc["edges"]], dtype=np.int64)
        row_ids = doc["row_ids"]
        ids = np.empty(len(row_ids), dtype=object)
        ids[:] = row_ids
        if all(isinstance(x, int) for x in row_ids):
            ids = np.asarray(row_ids, dtype=np.int64)
        return LensGraph(
            M, elements, edges, shared, stats, lens_columns=doc["lens_columns"],
            data_columns=doc["data_columns"], row_ids=ids, id_name=doc["id_name"],
            params=doc["params"], provenance=doc["provenance"], fragments=doc["fragments"],
            node_levels=levels,
        )
    except (KeyError, TypeError, ValueError, IndexError) as err:
        raise InputError(
            f"{source} is damaged or incomplete ({type(err).__name__}: {err}). Write it again "
            f"with LensGraph.write_json."
        ) from None


def read_graph_json(path):
    """Read a LensGraph written by :func:`write_graph_json`.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    LensGraph

    Raises
    ------
    InputError
        The file is missing, not JSON, or not a lenswork graph.

    Examples
    --------
    >>> import tempfile, scipy.sparse as sp
    >>> g = LensGraph(sp.csr_matrix(np.eye(2, dtype=int)), [[0], [1]], [], [],
    ...               {"h": np.zeros((2, 3))}, lens_columns=["h"])
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     same = read_graph_json(write_graph_json(g, Path(tmp) / "g.json")) == g
    >>> same
    True
    """
    path = Path(path)
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"No graph file {str(path)!r}; check the path.") from None
    except (json.JSONDecodeError, UnicodeDecodeError) as err:
        raise InputError(
            f"{str(path)!r} is not valid JSON ({err}); give a file written by "
            f"LensGraph.write_json."
        ) from None
    return graph_from_dict(doc, source=repr(str(path)))
