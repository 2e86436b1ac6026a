"""The structure probe: what graph structure a lens reveals, and how stable it is.

A lens is worth covering when its Mapper graph (Mapper, 2007) shows
structure (loops, branch points, flares, components beyond the data's own)
and when that structure does not hinge on the exact cover. The probe builds
the graph of each lens over a small grid of cover settings (interval counts x
overlaps) with :func:`lenswork.build_graph`, on the one shared neighbour graph
of the workspace, and reads the feature counts of each graph's summary.

Feature counts of one graph
---------------------------
``components`` C, ``loops`` b1 = E - V + C (the first Betti number of the
graph), ``branch_points`` and ``flares`` as the graph summary defines them,
and ``extra_components`` = max(C - C_data, 0), where C_data is the number of
components of the data itself: the components of the graph built with a
single interval (the cover is the whole range, so only the clustering step
acts; same clusterer, cut-off and minimum size).

Scores of one lens over the grid
--------------------------------
For each feature type f (loops, flares, branch points, extra components)
take over the p x q grid cells

* ``mode_f``: the most frequent count (ties go to the smaller count);
* ``agree_f``: the share of cells whose count equals ``mode_f``.

Then, with feature weights ``w`` (default loops 1, flares 0.5, branch points
0.25)::

    revealed   = 1 - 2 ** -(sum_f w_f mode_f)                  in [0, 1)
    stability  = mean of agree_f over the four types            in (0, 1]
    coherence  = (1 - empty share) / (1 + mean extra components) in [0, 1]
    structure  = floor + (1 - floor) * revealed * stability * coherence

``revealed`` is 0 for a lens whose graph is a plain path at most settings,
0.5 for one stable loop, 0.75 for one loop and two flares (1 + 2 x 0.5).
``stability`` is 1 when every cell agrees on every count.

Components beyond the data's own are counted and reported, but they divide
the score rather than add to it: when the data hang together at the
clusterer's scale and a lens's graphs still fall apart, the lens is not
continuous along the data there (a lens of pure noise on a circle gives
dozens of extra components and no loop). A cell where no cover element
holds a group of ``min_size`` rows has an *empty* graph (every count 0, every
row unassigned); the share of empty cells lowers ``coherence`` too. The mean
of the extra components is taken over the non-empty cells (a mean, not the
mode: a lens that falls apart differently at every setting has no typical
count, but on average many pieces).

``structure`` (higher is better, in [floor, 1)) is the column meant for the
screen's merit: the floor (default 0.25) keeps a lens that reveals nothing
from getting merit 0 in the screen's geometric mean, where it could still be
the right second lens.

Stability map
-------------
:func:`stability_map` runs the same grid for one lens at a finer resolution
and keeps every count per cell: a table (CSV) and a heat map per feature type
(:meth:`StabilityMap.plot`), with the 4-connected region of cells that share
the default setting's count, from which a user picks cover settings.

Cost
----
One graph build per cell and lens: with ``p x q`` cells and ``m`` lens columns,
``p q m`` builds of O(n k) each once the neighbour graph exists (the neighbour
graph is computed once per workspace and shared). Measured here (2 cores):
a 5 x 4 grid for one lens on 1e5 rows of 3-d data takes about 2 s after a
0.7 s exact neighbour graph; the 6-cell default grid over the demo's
candidate lenses (3,000 rows) about 1 s (tests/benchmarks/bench_probe.py).

References
----------
.. [1] M. Carriere, B. Michel and S. Oudot, "Statistical analysis and
   parameter selection for Mapper", JMLR 19, 2018.
"""

from __future__ import annotations

import contextlib
import csv
import inspect
import io
import json
import math
import warnings
from collections import deque
from dataclasses import dataclass, field

import numpy as np

from . import _progress
from ._errors import LensworkWarning, ParameterError
from ._io import write_text
from ._validation import check_float, check_int
from .table import as_lens_table

__all__ = [
    "FEATURES",
    "FEATURE_WEIGHTS",
    "StabilityMap",
    "StructureProbe",
    "feature_counts",
    "stability_map",
    "structure_scores",
]

#: Feature types counted in every graph (as the stability map shows them).
FEATURES = ("components", "loops", "branch_points", "flares")
#: Feature types that count as revealed structure, with their default weights in ``revealed``.
FEATURE_WEIGHTS = {"loops": 1.0, "flares": 0.5, "branch_points": 0.25}
#: Feature types whose agreement over the grid enters ``stability``.
SCORED_FEATURES = ("loops", "flares", "branch_points", "extra_components")
#: The probe's small default grid (cheap enough for the screen).
PROBE_INTERVALS = (6, 10, 14)
PROBE_OVERLAPS = (0.25, 0.4)
#: The stability map's default grid.
MAP_INTERVALS = (4, 6, 8, 10, 12, 14, 16, 20)
MAP_OVERLAPS = (0.1, 0.2, 0.3, 0.4, 0.5)
#: Cover settings passed through to build_graph (besides intervals and overlap).
GRAPH_SETTINGS = ("scale", "clusterer", "cutoff", "min_size", "k")


# --------------------------------------------------------------------------- lens input
def _label(cols):
    """A short label for a list of columns: their names joined by ' x '."""
    return " \u00d7 ".join(c.name for c in cols)


# --------------------------------------------------------------------------- grid
def _check_grid(intervals, overlaps, context):
    """Validated, de-duplicated, sorted interval counts and overlaps."""
    if isinstance(intervals, (str, int, np.integer)):
        intervals = [intervals] if not isinstance(intervals, str) else intervals.split(",")
    if isinstance(overlaps, (str, float, int, np.number)):
        overlaps = [overlaps] if not isinstance(overlaps, str) else overlaps.split(",")
    try:
        iv = [check_int("intervals", v, lo=1, context=context) for v in intervals]
        ov = [check_float("overlaps", v, lo=0, hi=1, hi_open=True, context=context)
              for v in overlaps]
    except TypeError:
        raise ParameterError(
            f"The 'intervals' and 'overlaps' of {context} must be sequences of numbers, e.g. "
            f"intervals=(6, 10, 14), overlaps=(0.25, 0.4)."
        ) from None
    if not iv or not ov:
        raise ParameterError(
            f"The cover grid of {context} is empty; give at least one interval count and one "
            f"overlap."
        )
    return tuple(sorted(set(iv))), tuple(sorted(set(ov)))


def _settings(given, context):
    """Keyword settings passed on to build_graph (unknown names raise)."""
    unknown = sorted(set(given) - set(GRAPH_SETTINGS))
    if unknown:
        raise ParameterError(
            f"{context} has no setting {unknown[0]!r}; the graph settings it passes on are: "
            f"{', '.join(GRAPH_SETTINGS)}."
        )
    return {k: v for k, v in given.items() if v is not None}


def _graph_defaults():
    """build_graph's default interval count and overlap (read from its signature)."""
    from .graph import build_graph

    params = inspect.signature(build_graph).parameters
    return int(params["intervals"].default), float(params["overlap"].default)


def _mode(values):
    """Most frequent value (ties go to the smaller) and the share of entries equal to it."""
    values = np.asarray(values).ravel()
    uniq, counts = np.unique(values, return_counts=True)
    best = int(uniq[np.argmax(counts)])  # np.unique sorts, argmax takes the first maximum
    return best, float(counts.max() / values.size)


def _region(grid, cell):
    """Boolean mask of the 4-connected cells holding the same value as ``grid[cell]``."""
    grid = np.asarray(grid)
    mask = np.zeros(grid.shape, dtype=bool)
    target = grid[cell]
    todo = deque([cell])
    mask[cell] = True
    while todo:
        i, j = todo.popleft()
        for a, b in ((i - 1, j), (i + 1, j), (i, j - 1), (i, j + 1)):
            if 0 <= a < grid.shape[0] and 0 <= b < grid.shape[1] and not mask[a, b] \
                    and grid[a, b] == target:
                mask[a, b] = True
                todo.append((a, b))
    return mask


# --------------------------------------------------------------------------- graphs
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
    >>> from lenswork import Workspace
    >>> from lenswork.graph import build_graph
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
    finally:
        _progress._reporter = previous


def _build(cols, workspace, intervals, overlap, settings):
    """build_graph without its per-graph warnings (a sweep counts unassigned rows instead)."""
    from .graph import build_graph

    with _quiet():
        return build_graph(cols, workspace, intervals=intervals, overlap=overlap, **settings)


def _workspace(workspace):
    from .workspace import Workspace

    return workspace if isinstance(workspace, Workspace) else Workspace(workspace)


def _data_components(workspace, cols, settings):
    """Components of the data itself under the graph builder's clustering (cached per settings).

    The graph built with one interval per lens covers the whole range, so only
    the clustering step splits the rows: its components are the data's own.
    """
    key = ("probe:data_components", tuple(sorted((k, repr(v)) for k, v in settings.items())))

    def compute():
        _, overlap = _graph_defaults()
        g = _build(cols[:1], workspace, 1, overlap, settings)
        return int(feature_counts(g)["components"])

    return workspace.cached(key, compute)


def _empty_counts(n_rows):
    """Counts of a cell where no cover element holds a group of ``min_size`` rows."""
    return {"nodes": 0, "edges": 0, "unassigned": int(n_rows), "components": 0, "loops": 0,
            "branch_points": 0, "flares": 0, "extra_components": 0, "empty": 1}


def _build_counts(cols, workspace, intervals, overlap, settings, data_components=None):
    """Feature counts of one graph; an empty graph (every group below min_size) counts as empty.

    The settings were already accepted by the build for the data's own
    components, so a ParameterError here comes from this cell's cover: the
    graph builder refuses to return a graph with no node.
    """
    try:
        g = _build(cols, workspace, intervals, overlap, settings)
    except ParameterError:
        return _empty_counts(workspace.n)
    return {**feature_counts(g, data_components), "empty": 0}


def _grid_counts(cols, workspace, intervals, overlaps, settings, data_components, label):
    """Feature counts of the graph at every (intervals, overlap) cell: dict -> (p, q) ints."""
    p, q = len(intervals), len(overlaps)
    keys = ("nodes", "edges", "unassigned", *FEATURES, "extra_components", "empty")
    out = {k: np.zeros((p, q), dtype=np.int64) for k in keys}
    cells = [(i, j) for i in range(p) for j in range(q)]
    for i, j in _progress.track(cells, f"probe {label}", length=len(cells)):
        c = _build_counts(cols, workspace, intervals[i], overlaps[j], settings, data_components)
        for k in keys:
            out[k][i, j] = c[k]
    return out


# --------------------------------------------------------------------------- probe
def _check_weights(weights):
    if weights is None:
        return dict(FEATURE_WEIGHTS)
    unknown = sorted(set(weights) - set(FEATURE_WEIGHTS))
    if unknown:
        raise ParameterError(
            f"No feature type {unknown[0]!r} to weight; the probe scores "
            f"{', '.join(FEATURE_WEIGHTS)}."
        )
    out = {k: check_float(f"weights[{k}]", v, lo=0, context="structure_scores")
           for k, v in weights.items()}
    if sum(out.values()) <= 0:
        raise ParameterError("The feature 'weights' of structure_scores sum to 0; give one a "
                             "positive weight.")
    return out


def _score(counts, weights, floor):
    """The scores of one lens from its grid of feature counts (see the module docstring)."""
    row = {}
    for f in SCORED_FEATURES:
        mode, share = _mode(counts[f])
        row[f] = mode
        row[f"{f}_agreement"] = share
    total = sum(w * row[f] for f, w in weights.items())
    revealed = 1.0 - 2.0 ** (-total)
    stability = float(np.mean([row[f"{f}_agreement"] for f in SCORED_FEATURES]))
    empty = np.asarray(counts["empty"], dtype=bool)
    extra = np.asarray(counts["extra_components"], dtype=np.float64)[~empty]
    mean_extra = float(extra.mean()) if extra.size else 0.0
    coherence = (1.0 - float(empty.mean())) / (1.0 + mean_extra)
    row["revealed"] = revealed
    row["stability"] = stability
    row["coherence"] = coherence
    row["structure"] = floor + (1.0 - floor) * revealed * stability * coherence
    return row


def _score_keys():
    keys = []
    for f in SCORED_FEATURES:
        keys += [f, f"{f}_agreement"]
    return [*keys, "revealed", "stability", "coherence", "structure"]


class StructureProbe(dict):
    """The structure probe's result: lens column name -> dict of scores.

    A plain dict (name -> scores) with the grid, the settings and the raw
    counts attached, and :meth:`columns` to hand score columns to the screen.

    Attributes
    ----------
    names : list of str
        Lens column names, in input order.
    intervals, overlaps : tuple
        The grid.
    counts : dict of str -> dict of str -> ndarray of shape (p, q)
        Per lens, the feature counts at every cell.
    data_components : int
    weights : dict of str -> float
    floor : float
    settings : dict
        The graph settings used (k, clusterer...).

    Examples
    --------
    >>> from lenswork import Workspace
    >>> t = np.linspace(0, 2 * np.pi, 300, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> probe = structure_scores(ws.X, ws, intervals=(8,), overlaps=(0.3,))
    >>> probe.names, probe["lens_1"]["loops"], probe.columns(["loops"])["loops"].tolist()
    (['lens_1', 'lens_2'], 1, [1.0, 1.0])
    """

    def __init__(self, scores, *, names, intervals, overlaps, counts, data_components, weights,
                 floor, settings):
        super().__init__(scores)
        self.names = list(names)
        self.intervals = tuple(intervals)
        self.overlaps = tuple(overlaps)
        self.counts = counts
        self.data_components = int(data_components)
        self.weights = dict(weights)
        self.floor = float(floor)
        self.settings = dict(settings)

    def columns(self, keys=None):
        """Score columns in name order: dict of score -> ndarray of shape (m,).

        ``keys`` picks the scores (default every one). Ready for
        ``ScreenResult.rescore(scores=probe.columns(["structure"]))``.
        """
        keys = list(keys) if keys is not None else list(self[self.names[0]])
        missing = [k for k in keys if k not in self[self.names[0]]]
        if missing:
            raise ParameterError(
                f"The probe has no score {missing[0]!r}; it has: "
                f"{', '.join(self[self.names[0]])}."
            )
        return {k: np.array([self[n][k] for n in self.names], dtype=np.float64) for k in keys}

    def rows(self):
        """One dict per lens column: name, then every score."""
        return [{"column": n, **self[n]} for n in self.names]

    def to_csv_text(self):
        """The score table as CSV text."""
        rows = self.rows()
        buf = io.StringIO()
        w = csv.DictWriter(buf, fieldnames=list(rows[0]), lineterminator="\n")
        w.writeheader()
        for r in rows:
            w.writerow({k: (f"{v:.6g}" if isinstance(v, float) else v) for k, v in r.items()})
        return buf.getvalue()

    def __repr__(self):
        best = max(self.names, key=lambda n: self[n]["structure"])
        return (f"StructureProbe({len(self.names)} lens columns, {len(self.intervals)} x "
                f"{len(self.overlaps)} grid, most structure: {best})")


def structure_scores(lenses, workspace, *, intervals=PROBE_INTERVALS, overlaps=PROBE_OVERLAPS,
                     k=15, weights=None, floor=0.25, **settings):
    """Score the graph structure each lens column reveals over a small grid of covers.

    Parameters
    ----------
    lenses : LensTable, list of LensColumn, array-like of shape (n_samples, m), or spec(s)
        Candidate lens columns; each column is probed on its own (a 1-D cover).
    workspace : Workspace or array-like of shape (n_samples, n_features)
        Supplies the shared neighbour graph (computed once, used by every build).
    intervals : sequence of int, default=(6, 10, 14)
        Interval counts of the grid.
    overlaps : sequence of float in [0, 1), default=(0.25, 0.4)
        Overlaps of the grid.
    k : int, default=15
        Neighbours of the shared graph the clustering step uses.
    weights : dict of str -> float, optional
        Weights of ``loops``, ``flares`` and ``branch_points`` in ``revealed``
        (default :data:`FEATURE_WEIGHTS`).
    floor : float in [0, 1), default=0.25
        Lowest ``structure`` score (a lens that reveals nothing).
    **settings
        Passed to :func:`lenswork.build_graph`: ``scale``, ``clusterer``,
        ``cutoff``, ``min_size``.

    Returns
    -------
    StructureProbe
        A dict: lens column name -> scores. Each scores dict holds, for
        ``f`` in loops, flares, branch_points, extra_components, ``f`` (its most
        frequent count over the grid) and ``f_agreement`` (the share of cells
        with that count), then ``revealed``, ``stability``, ``coherence`` and
        ``structure`` (see the module docstring for the formulas).
        ``.columns(["structure"])`` gives arrays in input order for
        :meth:`ScreenResult.rescore`.

    Raises
    ------
    ParameterError
        Bad grid, weights, floor or graph setting.
    InputError
        A lens column with the wrong length.

    Warns
    -----
    LensworkWarning
        A lens column with NaN or infinite values (its scores are NaN, so the
        screen, which never selects such a column, can still take the table).

    Notes
    -----
    Cost: ``len(intervals) * len(overlaps) * m`` graph builds, each O(n k) on
    the shared neighbour graph, plus one build for the data's own components.

    Examples
    --------
    >>> from lenswork import LensColumn, Workspace
    >>> rng = np.random.default_rng(0)
    >>> t = rng.uniform(0, 2 * np.pi, 600)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.02, (600, 2)))
    >>> probe = structure_scores([LensColumn("x", ws.X[:, 0]), LensColumn("radius",
    ...                           np.hypot(*ws.X.T))], ws)
    >>> probe["x"]["loops"], probe["x"]["structure"] > probe["radius"]["structure"]
    (1, True)
    """
    intervals, overlaps = _check_grid(intervals, overlaps, "structure_scores")
    k = check_int("k", k, lo=1, context="structure_scores")
    weights = _check_weights(weights)
    floor = check_float("floor", floor, lo=0, hi=1, hi_open=True, context="structure_scores")
    settings = _settings(dict(settings, k=k), "structure_scores")
    workspace = _workspace(workspace)
    cols = as_lens_table(lenses, workspace, what="structure_scores", finite=False).columns
    good = [c for c in cols if np.isfinite(np.asarray(c.values)).all()]
    data_c = _data_components(workspace, good or cols, settings) if good else 0
    scores, counts = {}, {}
    for col in cols:
        if col not in good:
            workspace.warn(
                f"Lens column {col.name!r} holds NaN or infinite values; the structure probe "
                f"gives it NaN scores. Recompute the lens or drop it."
            )
            scores[col.name] = {k: math.nan for k in _score_keys()}
            continue
        grid = _grid_counts([col], workspace, intervals, overlaps, settings, data_c, col.name)
        counts[col.name] = grid
        scores[col.name] = _score(grid, weights, floor)
    return StructureProbe(
        scores, names=[c.name for c in cols], intervals=intervals, overlaps=overlaps,
        counts=counts, data_components=data_c, weights=weights, floor=floor, settings=settings,
    )


# --------------------------------------------------------------------------- stability map
@dataclass(frozen=True, eq=False)
class StabilityMap:
    """Feature counts of one lens's graph over an interval-count x overlap grid.

    Attributes
    ----------
    lens : str
        The lens column name(s), joined by `` x `` for a multi-column cover.
    intervals : tuple of int
        Interval counts (grid rows).
    overlaps : tuple of float
        Overlaps (grid columns).
    counts : dict of str -> ndarray of shape (len(intervals), len(overlaps)), int
        ``nodes``, ``edges``, ``unassigned`` (rows in no node), ``components``,
        ``loops``, ``branch_points``, ``flares``, ``extra_components`` and
        ``empty`` (1 where no cover element kept a group of ``min_size`` rows)
        at every cell.
    n_rows : int
    data_components : int
        Components of the data itself (see the module docstring).
    default : (int, float) or None
        build_graph's default (intervals, overlap), when the grid holds it.
    settings : dict
        The other graph settings used.

    Examples
    --------
    >>> from lenswork import Workspace
    >>> t = np.linspace(0, 2 * np.pi, 300, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> smap = stability_map(ws.X[:, 0], ws, intervals=(8, 10), overlaps=(0.3,))
    >>> smap.default_cell, smap.region("loops").tolist(), len(smap.rows())
    ((1, 0), [[True], [True]], 2)
    """

    lens: str
    intervals: tuple
    overlaps: tuple
    counts: dict
    n_rows: int
    data_components: int
    default: tuple | None = None
    settings: dict = field(default_factory=dict)

    @property
    def features(self):
        """The feature types drawn by default: :data:`FEATURES`."""
        return FEATURES

    @property
    def default_cell(self):
        """Grid position (row, column) of the default setting, or None."""
        if self.default is None:
            return None
        i = self.intervals.index(self.default[0]) if self.default[0] in self.intervals else None
        close = [j for j, o in enumerate(self.overlaps) if math.isclose(o, self.default[1])]
        return None if i is None or not close else (i, close[0])

    def region(self, feature, cell=None):
        """Cells with the same ``feature`` count as ``cell``, 4-connected to it.

        Parameters
        ----------
        feature : str
        cell : (int, int), optional
            Grid position; default :attr:`default_cell`.

        Returns
        -------
        ndarray of bool, shape (len(intervals), len(overlaps))
        """
        if feature not in self.counts:
            raise ParameterError(
                f"No feature {feature!r} in the stability map; it has: "
                f"{', '.join(self.counts)}."
            )
        cell = self.default_cell if cell is None else tuple(cell)
        if cell is None:
            raise ParameterError(
                "The stability map's grid does not hold the default setting; pass a cell=(i, j)."
            )
        return _region(self.counts[feature], cell)

    def rows(self):
        """One dict per grid cell: intervals, overlap, then every count."""
        out = []
        for i, iv in enumerate(self.intervals):
            for j, ov in enumerate(self.overlaps):
                out.append({"intervals": int(iv), "overlap": float(ov),
                            **{k: int(v[i, j]) for k, v in self.counts.items()}})
        return out

    def to_csv_text(self):
        """The map as CSV text, one row per cell."""
        rows = self.rows()
        buf = io.StringIO()
        w = csv.DictWriter(buf, fieldnames=list(rows[0]), lineterminator="\n")
        w.writeheader()
        w.writerows(rows)
        return buf.getvalue()

    def provenance(self):
        """JSON-ready description: lens, grid, settings, default, data components, version."""
        from . import __version__

        return {
            "lenswork_version": __version__, "kind": "stability map", "lens": self.lens,
            "n_rows": self.n_rows, "intervals": list(self.intervals),
            "overlaps": list(self.overlaps), "default": list(self.default or []) or None,
            "data_components": self.data_components,
            "settings": {k: v if isinstance(v, (int, float, str, bool)) else repr(v)
                         for k, v in self.settings.items()},
        }

    def write(self, path):
        """Write the CSV table to ``path`` and its provenance to ``<path>.json`` (atomically).

        Returns
        -------
        (Path, Path)
        """
        from pathlib import Path

        path = Path(path)
        write_text(path, self.to_csv_text())
        sidecar = path.with_name(path.name + ".json")
        write_text(sidecar, json.dumps(self.provenance(), indent=2) + "\n")
        return path, sidecar

    def plot(self, paths=None, features=None):
        """Draw one heat map per feature type; write to ``paths`` or return the figure."""
        from .plot._stability import stability_figure, stability_sheet

        if paths is None:
            return stability_figure(self, features)
        from .plot._style import as_paths

        paths = as_paths(paths)
        return stability_sheet(self, paths, features)


def stability_map(lens, workspace, *, intervals=MAP_INTERVALS, overlaps=MAP_OVERLAPS, k=15,
                  **settings):
    """Feature counts of one lens's graph over a grid of cover settings.

    Parameters
    ----------
    lens : LensColumn, LensTable, array-like or registry spec
        One lens; several columns give a product cover, with the same interval
        count and overlap on every column.
    workspace : Workspace
    intervals : sequence of int, default=(4, 6, 8, 10, 12, 14, 16, 20)
    overlaps : sequence of float in [0, 1), default=(0.1, 0.2, 0.3, 0.4, 0.5)
    k : int, default=15
        Neighbours of the shared graph used by the clustering step.
    **settings
        Passed to :func:`lenswork.build_graph`: ``scale``, ``clusterer``,
        ``cutoff``, ``min_size``.

    Returns
    -------
    StabilityMap
        ``.counts[feature]`` is a (len(intervals), len(overlaps)) int array;
        ``.write(path)`` writes the CSV table, ``.plot(path)`` the heat maps,
        ``.region(feature)`` the stable region around the default setting.

    Raises
    ------
    ParameterError
        Bad grid or setting.

    Notes
    -----
    Cost: one graph build per cell, O(n k) each on the shared neighbour graph.

    Examples
    --------
    >>> from lenswork import Workspace
    >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> smap = stability_map(np.cos(t), ws, intervals=(6, 10), overlaps=(0.2, 0.3))
    >>> smap.counts["loops"].tolist()
    [[1, 1], [1, 1]]
    """
    intervals, overlaps = _check_grid(intervals, overlaps, "stability_map")
    k = check_int("k", k, lo=1, context="stability_map")
    settings = _settings(dict(settings, k=k), "stability_map")
    workspace = _workspace(workspace)
    cols = as_lens_table(lens, workspace, what="stability_map").columns
    data_c = _data_components(workspace, cols, settings)
    label = _label(cols)
    counts = _grid_counts(cols, workspace, intervals, overlaps, settings, data_c, label)
    return StabilityMap(
        lens=label, intervals=intervals, overlaps=overlaps, counts=counts, n_rows=workspace.n,
        data_components=data_c, default=_graph_defaults(), settings=settings,
    )
