"""Feature counts of graphs built in sweeps: the pieces the probe and the bootstrap share.

A sweep (the structure probe's grid, the stability map, the bootstrap's
resamples) builds many graphs and reads a few numbers from each:
:func:`feature_counts`. :func:`quiet_build` builds one graph without its
per-graph progress lines and warnings (the sweep reports its own), and
:func:`build_counts` turns a build that finds no node into an *empty* cell
instead of an error.
"""

from __future__ import annotations

import contextlib
import warnings

from .. import _progress
from .._errors import LensworkWarning, ParameterError
from ..workspace import Workspace
from ._build import build_graph
from ._settings import GraphSettings

__all__ = [
    "FEATURES",
    "as_workspace",
    "build_counts",
    "empty_counts",
    "feature_counts",
    "lens_label",
    "quiet_build",
]

#: Feature types counted in every graph (as the stability map shows them).
FEATURES = ("components", "loops", "branch_points", "flares")


def lens_label(cols):
    """A short label for a list of lens columns: their names joined by ' x '."""
    return " \u00d7 ".join(c.name for c in cols)


def as_workspace(workspace):
    """``workspace`` itself, or a Workspace over the array given."""
    return workspace if isinstance(workspace, Workspace) else Workspace(workspace)


def feature_counts(graph, data_components=None):
    """The feature counts of one graph, as the probe and the stability map read them.

    Parameters
    ----------
    graph : LensGraph
    data_components : int, optional
        Components of the data itself; adds ``extra_components`` =
        max(components - data_components, 0).

    Returns
    -------
    dict of str -> int
        ``nodes``, ``edges``, ``components``, ``loops`` (b1 = E - V + C),
        ``branch_points``, ``flares``, ``unassigned`` (rows in no node), and
        ``extra_components`` when ``data_components`` is given.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.linspace(0, 2 * np.pi, 400, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> feature_counts(build_graph(np.cos(t), ws))["loops"]
    1
    """
    s = graph.summary()
    out = {
        "nodes": int(s.n_nodes), "edges": int(s.n_edges), "components": int(s.n_components),
        "loops": int(s.loops), "branch_points": len(s.branch_points), "flares": int(s.n_flares),
        "unassigned": int(s.n_unassigned),
    }
    if data_components is not None:
        out["extra_components"] = max(out["components"] - int(data_components), 0)
    return out


@contextlib.contextmanager
def _quiet():
    """No per-graph progress lines or warnings inside a sweep (it reports its own progress)."""
    previous = _progress.set_reporter(False)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", LensworkWarning)
            yield
    finally:  # put the previous reporter back through the public switch
        stream = getattr(previous, "stream", None)
        _progress.set_reporter(stream is not None, stream=stream)


def quiet_build(cols, workspace, settings):
    """build_graph without its per-graph warnings (a sweep counts unassigned rows instead).

    A sweep reads feature counts, not holes, so the coarser covers that
    multi-lens holes are checked against are not built (``hole_scales=1``).
    """
    settings = GraphSettings.coerce(settings)
    with _quiet():
        return build_graph(cols, workspace, settings.replace(hole_scales=1))


def empty_counts(n_rows):
    """Counts of a cell where no cover element holds a group of ``min_size`` rows."""
    return {"nodes": 0, "edges": 0, "unassigned": int(n_rows), "components": 0, "loops": 0,
            "branch_points": 0, "flares": 0, "extra_components": 0, "empty": 1}


def build_counts(cols, workspace, settings, data_components=None):
    """Feature counts of one graph; an empty graph (every group below min_size) counts as empty.

    The settings are validated before the sweep starts, so a ParameterError
    here comes from this cell's cover: the graph builder refuses to return a
    graph with no node.
    """
    try:
        g = quiet_build(cols, workspace, settings)
    except ParameterError:
        return empty_counts(workspace.n)
    return {**feature_counts(g, data_components), "empty": 0}
