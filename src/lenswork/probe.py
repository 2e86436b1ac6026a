"""The structure probe: what graph structure a lens reveals, and how significant it is.

A lens is worth covering when its Mapper graph (Mapper, 2007) shows
structure (loops and branches that span much of the lens's range) and when
that structure does not hinge on the exact cover. The probe builds
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

Significance of one graph
-------------------------
Each graph of one lens also gets the extended persistence diagram of the lens
on it (``lenswork.graph._thresholds.lens_persistence``; Carrière and Oudot,
"Structure and stability of the one-dimensional Mapper", FoCM 2018): every
loop and branch is a pair of lens levels, and its *significance* is the share
of the lens range it spans. A feature is *significant* when it spans more than
the cover can make on its own, ``2 (L + delta)`` (interval length ``L``, the
lens's neighbour jitter ``delta``; see ``lenswork.graph._thresholds``). The
cell's total is ``T = sum w_kind * significance`` over the significant points
and trunks (:data:`SIGNIFICANCE_WEIGHTS`: loops 1, branches 0.5; a trunk, the
tail that holds the lens's extreme, counts as a branch:
``lenswork.graph._trunks.diagram_trunks``): a tangle of short noise loops
adds 0, one loop over the whole range adds 1. The loop and the branch parts
are also kept apart (``loop_significance``, ``branch_significance``: ``1 -
2 ** -median`` of each), for the screen's pair merit. The thresholds are the
graph's own, per end node (``params["node_jitter"]``).

Scores of one lens over the grid
--------------------------------
::

    significance = 1 - 2 ** -median(T over the cells)          in [0, 1)
    coherence    = kept / (1 + mean extra components)           in [0, 1]
    structure    = coherence * (floor + (1 - floor) * significance)

``kept`` is the mean share of rows in a node over the cells (an empty cell
keeps none); the mean of the extra components is taken over the non-empty
cells. The median keeps a feature that only some settings make significant
from counting (stability over the cover settings). ``significance`` is 0.5
for one loop over the whole range at most settings. Components beyond the
data's own divide the score: when the data hang together at the clusterer's
scale and a lens's graphs still fall apart, or drop rows into no node, the
lens is not continuous along the data there (a lens of pure noise on a circle
gives dozens of extra components and no loop). ``structure`` (higher is
better) is the column the screen's merit uses; the floor (default 0.25) keeps
a lens that reveals no feature but keeps the data whole from merit 0 in the
screen's geometric mean, where it can still be the right second lens.

The feature counts of the earlier probe stay in the table as diagnoses. For
``f`` in loops, flares, branch points, extra components: ``mode_f``, the most
frequent count over the grid (ties to the smaller) and ``agree_f``, the share
of cells with that count; ``significant_loops`` and ``significant_branches``
are the most frequent significant counts. With feature weights ``w`` (loops 1,
flares 0.5, branch points 0.25)::

    revealed        = 1 - 2 ** -(sum_f w_f mode_f)
    stability       = mean of agree_f over the four types
    count_structure = floor + (1 - floor) * revealed * stability
                      * (1 - empty share) / (1 + mean extra components)

``count_structure`` is the score the screen used before significance (it
rewards counts, so noise loops raise it): kept for comparison only.

The grid
--------
The default overlaps are 0.25 and 0.4; the interval counts are 6, 10 and 14,
each capped by :func:`probe_intervals` at the finest count whose average
cover element can hold two groups of ``min_size`` rows (every loop or branch
passes through an element with two nodes). On 150 rows with ``min_size`` 10
that gives (6, 9), from about 300 rows on the full grid; a data-dependent
``min_size`` (``"auto"``) is resolved for the number of rows first.

Stability map
-------------
:func:`stability_map` (:mod:`lenswork.stability`) runs the same grid for one
lens at a finer resolution.

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
.. [2] M. Carriere and S. Oudot, "Structure and stability of the
   one-dimensional Mapper", Foundations of Computational Mathematics 18, 2018.
"""

from __future__ import annotations

import io
import math

import numpy as np

from . import _progress
from ._errors import ParameterError
from ._io import dict_csv_writer
from ._json import dumps
from ._validation import check_float, check_int
from .graph._features import (
    FEATURES,
    as_workspace,
    build_counts,
    empty_counts,
    feature_counts,
    quiet_build,
)
from .graph._settings import GraphSettings, grid_settings
from .graph._structure_score import significance_total
from .graph._thresholds import lens_persistence
from .graph._trunks import diagram_trunks
from .table import as_lens_table

__all__ = [
    "FEATURES",
    "FEATURE_WEIGHTS",
    "StructureProbe",
    "check_grid",
    "data_components",
    "default_cell_setting",
    "feature_counts",
    "grid_counts",
    "merged_settings",
    "probe_intervals",
    "structure_scores",
]

#: Feature types that count as revealed structure, with their default weights in ``revealed``.
FEATURE_WEIGHTS = {"loops": 1.0, "flares": 0.5, "branch_points": 0.25}
#: Feature types whose agreement over the grid enters ``stability``.
SCORED_FEATURES = ("loops", "flares", "branch_points", "extra_components")
#: The probe's small default grid (cheap enough for the screen); the interval counts are
#: capped by :func:`probe_intervals` on small data.
PROBE_INTERVALS = (6, 10, 14)
PROBE_OVERLAPS = (0.25, 0.4)
#: Weights of the diagram point kinds in the significance total ``T`` (a loop counts as
#: much as two branches, as ``FEATURE_WEIGHTS`` weighs loops against flares).
SIGNIFICANCE_WEIGHTS = {"loop": 1.0, "down": 0.5, "up": 0.5}


# --------------------------------------------------------------------------- grid
def check_grid(interval_counts, overlaps, context):
    """Validated, de-duplicated, sorted interval counts and overlaps."""
    if isinstance(interval_counts, (str, int, np.integer)):
        interval_counts = ([interval_counts] if not isinstance(interval_counts, str)
                           else interval_counts.split(","))
    if isinstance(overlaps, (str, float, int, np.number)):
        overlaps = [overlaps] if not isinstance(overlaps, str) else overlaps.split(",")
    try:
        iv = [check_int("interval_counts", v, lo=1, context=context) for v in interval_counts]
        ov = [check_float("overlaps", v, lo=0, hi=1, hi_open=True, context=context)
              for v in overlaps]
    except TypeError:
        raise ParameterError(
            f"The 'interval_counts' and 'overlaps' of {context} must be sequences of numbers, e.g. "
            f"interval_counts=(6, 10, 14), overlaps=(0.25, 0.4)."
        ) from None
    if not iv or not ov:
        raise ParameterError(
            f"The cover grid of {context} is empty; give at least one interval count and one "
            f"overlap."
        )
    return tuple(sorted(set(iv))), tuple(sorted(set(ov)))


def interval_length(intervals, overlap):
    """Length of one interval of an ``intervals``-interval cover of [0, 1] with this overlap.

    ``L = 1 / (1 + (N - 1)(1 - p))``: N intervals of length L, consecutive ones
    ``L (1 - p)`` apart, span the range.

    Examples
    --------
    >>> round(interval_length(10, 0.3), 4)
    0.137
    """
    return 1.0 / (1.0 + (intervals - 1) * (1.0 - overlap))


def probe_intervals(n_rows, min_size, overlap, columns=1, intervals=PROBE_INTERVALS):
    """The interval counts the data afford: ``intervals`` capped at ``N_max(n, min_size, d)``.

    Parameters
    ----------
    n_rows : int
    min_size : int
        The graph builder's minimum group size.
    overlap : float
        The smallest overlap of the grid (the shortest intervals).
    columns : int, default=1
        Lens columns of the cover (a product cover of ``d`` columns has ``N^d`` elements).
    intervals : sequence of int, default=(6, 10, 14)
        The counts to cap.

    Returns
    -------
    tuple of int
        ``sorted({min(N, N_max) for N in intervals})``, where ``N_max`` is the
        largest count (at least 2) whose average cover element, ``n L^d`` rows
        with ``L = interval_length(N, overlap)``, holds two groups of
        ``min_size`` rows.

    Notes
    -----
    Every loop or branch of a Mapper graph passes through a cover element with
    two nodes, so an element that cannot hold two groups of ``min_size`` rows
    cannot show a feature: it only drops rows into no node (on 150 rows with
    14 intervals most rows end up there). The resolution idea is that of
    Carrière, Michel and Oudot (JMLR 2018): the finest cover the sample
    supports, here counted in rows per element on the rank scale. The count
    grows like ``n^(1/d)`` and stops at the default grid's 14 for large data.

    Examples
    --------
    >>> probe_intervals(150, 10, 0.25), probe_intervals(3000, 10, 0.25)
    ((6, 9), (6, 10, 14))
    """
    n_rows = int(n_rows)
    need = 2.0 * int(min_size)
    best = 2
    limit = max(intervals)
    N = 2
    while limit >= N and n_rows * interval_length(N, overlap) ** columns >= need:
        best = N
        N += 1
    return tuple(sorted({min(int(v), best) for v in intervals}))


def merged_settings(settings, k, overrides):
    """GraphSettings from ``settings`` (object, dict or None), then ``k`` and the overrides."""
    if "intervals" in overrides:  # one meaning per name: the grid's counts are interval_counts
        raise ParameterError(
            "The grid's interval counts are 'interval_counts' (e.g. interval_counts=(6, 10, 14)); "
            "'intervals' is one cover's count per lens, which the grid replaces."
        )
    return GraphSettings.coerce(settings, **overrides, k=k)


def default_cell_setting(settings, n_rows=None, n_lenses=1):
    """The (intervals, overlap) grid cell the settings themselves stand for, or None.

    Interval cover: its interval count and overlap (when both are single
    values); ball cover: ``(1 / radius, overlap)`` when ``1 / radius`` is a
    whole number (see :func:`lenswork.graph.grid_settings`). A data-dependent
    value (``"auto"``) is resolved for ``n_rows`` rows and ``n_lenses`` lens
    columns first (None without ``n_rows``).

    Examples
    --------
    >>> s = GraphSettings(intervals=10)
    >>> default_cell_setting(s), default_cell_setting(GraphSettings(cover="ball"))
    ((10, 0.3), (10, 0.3))
    """
    if n_rows is not None and any(isinstance(getattr(settings, f), str)
                                  for f in ("intervals", "min_size")):
        try:
            settings = settings.resolve(int(n_rows), int(n_lenses))
        except ParameterError:
            return None
    if settings.cover_kind == "ball":
        if settings.centres is not None:
            return None
        res = 1.0 / settings.radius
        if not math.isclose(res, round(res)):
            return None
        return (int(round(res)), float(settings.overlap))
    if isinstance(settings.intervals, int) and not isinstance(settings.overlap, tuple):
        return (settings.intervals, float(settings.overlap))
    return None


def _mode(values):
    """Most frequent value (ties go to the smaller) and the share of entries equal to it."""
    values = np.asarray(values).ravel()
    uniq, counts = np.unique(values, return_counts=True)
    best = int(uniq[np.argmax(counts)])  # np.unique sorts, argmax takes the first maximum
    return best, float(counts.max() / values.size)


# --------------------------------------------------------------------------- graphs
def data_components(workspace, cols, settings):
    """Components of the data itself under the graph builder's clustering (cached per settings).

    The graph built with one interval on the first lens covers the whole range,
    so only the clustering step splits the rows: its components are the data's
    own.
    """
    whole = settings.replace(cover="interval", intervals=1, overlap=0.0)
    key = ("probe:data_components", dumps(whole.to_dict(), indent=None, sort_keys=True))

    def compute():
        return int(feature_counts(quiet_build(cols[:1], workspace, whole))["components"])

    return workspace.cached(key, compute)


def grid_counts(cols, workspace, interval_counts, overlaps, settings, data_components, label,
                jitter=False):
    """Feature counts of the graph at every (intervals, overlap) cell: dict -> (p, q) arrays.

    Each cell's settings come from :func:`lenswork.graph.grid_settings`, so the
    grid sweeps whichever cover the settings hold. Unless ``jitter`` is False
    (one lens column, interval cover) each cell's graph also gets its extended
    persistence diagram (``lenswork.graph._thresholds.lens_persistence`` with
    that jitter; None: the graph's own, per node): the counts of significant
    loops and branches (trunks included) and the significance total ``T`` of the
    module notes.
    """
    p, q = len(interval_counts), len(overlaps)
    keys = ("nodes", "edges", "unassigned", *FEATURES, "extra_components", "empty")
    out = {k: np.zeros((p, q), dtype=np.int64) for k in keys}
    diagrams = jitter is not False and settings.cover_kind == "interval"
    if diagrams:
        for k in ("significant_loops", "significant_branches"):
            out[k] = np.zeros((p, q), dtype=np.int64)
        for k in ("significance_total", "loop_total", "branch_total"):
            out[k] = np.zeros((p, q), dtype=np.float64)
    cells = [(i, j) for i in range(p) for j in range(q)]
    for i, j in _progress.track(cells, f"probe {label}", length=len(cells)):
        cell = grid_settings(settings, interval_counts[i], overlaps[j])
        if not diagrams:
            c = build_counts(cols, workspace, cell, data_components)
        else:
            try:
                g = quiet_build(cols, workspace, cell)
            except ParameterError:  # no node at this cover: an empty cell
                c = empty_counts(workspace.n)
            else:
                c = {**feature_counts(g, data_components), "empty": 0}
                d = lens_persistence(g, jitter=jitter)
                sig = d.significant
                E = np.asarray(g.edge_index, dtype=np.int64).reshape(-1, 2)
                level = g.node_elements[:, 0].astype(np.float64)
                sizes = np.asarray(g.membership.sum(axis=0)).ravel()
                found = diagram_trunks(d, E, level, sizes)
                trunks = sum(1 for t in found if t[3] > t[4])
                c["significant_loops"] = int(np.count_nonzero(sig & (d.kind == "loop")))
                c["significant_branches"] = trunks + int(np.count_nonzero(
                    sig & ((d.kind == "down") | (d.kind == "up"))))
                loop_w = {"loop": SIGNIFICANCE_WEIGHTS["loop"]}
                branch_w = {k: w for k, w in SIGNIFICANCE_WEIGHTS.items() if k != "loop"}
                out["loop_total"][i, j] = significance_total(d, E, level, loop_w, trunks=[])
                out["branch_total"][i, j] = significance_total(d, E, level, branch_w,
                                                               trunks=found)
                out["significance_total"][i, j] = out["loop_total"][i, j] \
                    + out["branch_total"][i, j]
        for k in out:
            if k in c:
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


def _score(counts, weights, floor, n_rows=None):
    """The scores of one lens from its grid of feature counts (see the module docstring)."""
    row = {}
    for f in SCORED_FEATURES:
        mode, share = _mode(counts[f])
        row[f] = mode
        row[f"{f}_agreement"] = share
    for f in ("significant_loops", "significant_branches"):
        row[f] = _mode(counts[f])[0] if f in counts else 0
    total = sum(w * row[f] for f, w in weights.items())
    revealed = 1.0 - 2.0 ** (-total)
    stability = float(np.mean([row[f"{f}_agreement"] for f in SCORED_FEATURES]))
    empty = np.asarray(counts["empty"], dtype=bool)
    extra = np.asarray(counts["extra_components"], dtype=np.float64)[~empty]
    mean_extra = float(extra.mean()) if extra.size else 0.0
    if n_rows:
        kept = 1.0 - float(np.mean(np.asarray(counts["unassigned"]) / n_rows))
    else:
        kept = 1.0 - float(empty.mean())
    coherence = kept / (1.0 + mean_extra)
    T = float(np.median(counts["significance_total"])) if "significance_total" in counts \
        else 0.0
    significance = 1.0 - 2.0 ** (-T)
    row["revealed"] = revealed
    row["stability"] = stability
    row["significance"] = significance
    for kind in ("loop", "branch"):
        key = f"{kind}_total"
        part = float(np.median(counts[key])) if key in counts else 0.0
        row[f"{kind}_significance"] = 1.0 - 2.0 ** (-part)
    row["coherence"] = coherence
    row["count_structure"] = floor + (1.0 - floor) * revealed * stability * (
        (1.0 - float(empty.mean())) / (1.0 + mean_extra))
    row["structure"] = coherence * (floor + (1.0 - floor) * significance)
    return row


def _score_keys():
    keys = []
    for f in SCORED_FEATURES:
        keys += [f, f"{f}_agreement"]
    return [*keys, "significant_loops", "significant_branches", "revealed", "stability",
            "significance", "loop_significance", "branch_significance", "coherence",
            "count_structure", "structure"]


class StructureProbe(dict):
    """The structure probe's result: lens column name -> dict of scores.

    A plain dict (name -> scores) with the grid, the settings and the raw
    counts attached, and :meth:`columns` to hand score columns to the screen.

    Attributes
    ----------
    names : list of str
        Lens column names, in input order.
    interval_counts, overlaps : tuple
        The grid.
    counts : dict of str -> dict of str -> ndarray of shape (p, q)
        Per lens, the feature counts at every cell.
    data_components : int
    weights : dict of str -> float
    floor : float
    settings : dict
        The graph settings used, whole (:meth:`GraphSettings.to_dict`).

    Examples
    --------
    >>> from lenswork import Workspace
    >>> t = np.linspace(0, 2 * np.pi, 300, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> probe = structure_scores(ws.X, ws, interval_counts=(8,), overlaps=(0.3,))
    >>> probe.names, probe["lens_1"]["loops"], probe.columns(["loops"])["loops"].tolist()
    (['lens_1', 'lens_2'], 1, [1.0, 1.0])
    """

    def __init__(self, scores, *, names, interval_counts, overlaps, counts, data_components,
                 weights, floor, settings):
        super().__init__(scores)
        self.names = list(names)
        self.interval_counts = tuple(interval_counts)
        self.overlaps = tuple(overlaps)
        self.counts = counts
        self.data_components = int(data_components)
        self.weights = dict(weights)
        self.floor = float(floor)
        self.settings = settings.to_dict() if isinstance(settings, GraphSettings) \
            else dict(settings)

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
        w = dict_csv_writer(buf, list(rows[0]), lineterminator="\n")
        w.writeheader()
        for r in rows:
            w.writerow({k: (f"{v:.6g}" if isinstance(v, float) else v) for k, v in r.items()})
        return buf.getvalue()

    def __repr__(self):
        best = max(self.names, key=lambda n: self[n]["structure"])
        return (f"StructureProbe({len(self.names)} lens columns, {len(self.interval_counts)} x "
                f"{len(self.overlaps)} grid, most structure: {best})")


def structure_scores(lenses, workspace, *, settings=None, interval_counts=None,
                     overlaps=PROBE_OVERLAPS, k=None, weights=None, floor=0.25, **overrides):
    """Score the graph structure each lens column reveals over a small grid of covers.

    Parameters
    ----------
    lenses : LensTable, list of LensColumn, array-like of shape (n_samples, m), or spec(s)
        Candidate lens columns; each column is probed on its own (a 1-D cover).
    workspace : Workspace or array-like of shape (n_samples, n_features)
        Supplies the shared neighbour graph (computed once, used by every build).
    interval_counts : sequence of int, optional
        Interval counts of the grid (default: (6, 10, 14) capped by
        :func:`probe_intervals` for the number of rows and ``min_size``).
    overlaps : sequence of float in [0, 1), default=(0.25, 0.4)
        Overlaps of the grid.
    settings : GraphSettings or dict, optional
        The graph settings of every build (default ``GraphSettings()``); each
        grid cell replaces the cover's resolution and overlap
        (:func:`lenswork.graph.grid_settings`).
    k : int, optional
        Neighbours of the shared graph the clustering step uses (an override
        of ``settings.k``, 15 by default).
    weights : dict of str -> float, optional
        Weights of ``loops``, ``flares`` and ``branch_points`` in ``revealed``
        (default :data:`FEATURE_WEIGHTS`).
    floor : float in [0, 1), default=0.25
        ``structure`` of a lens that reveals no significant feature and keeps
        the data whole (lower when its graphs drop rows or fall apart).
    **overrides
        Any :class:`~lenswork.GraphSettings` field (``scale``, ``clusterer``,
        ``cutoff``, ``min_size``, ``cover``...), applied to ``settings``.

    Returns
    -------
    StructureProbe
        A dict: lens column name -> scores. Each scores dict holds, for
        ``f`` in loops, flares, branch_points, extra_components, ``f`` (its most
        frequent count over the grid) and ``f_agreement`` (the share of cells
        with that count), ``significant_loops``, ``significant_branches``, then
        ``revealed``, ``stability``, ``significance``, ``coherence``,
        ``count_structure`` and ``structure`` (see the module docstring for
        the formulas).
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
    Cost: ``len(interval_counts) * len(overlaps) * m`` graph builds, each O(n k) on
    the shared neighbour graph, plus one build for the data's own components,
    and one extended persistence diagram per graph (milliseconds for graphs
    of tens to hundreds of nodes).

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
    weights = _check_weights(weights)
    floor = check_float("floor", floor, lo=0, hi=1, hi_open=True, context="structure_scores")
    settings = merged_settings(settings, k, overrides)
    workspace = as_workspace(workspace)
    if interval_counts is None:
        _, overlaps = check_grid(PROBE_INTERVALS, overlaps, "structure_scores")
        interval_counts = probe_intervals(workspace.n, _min_size(settings, workspace.n),
                                    min(overlaps))
    interval_counts, overlaps = check_grid(interval_counts, overlaps, "structure_scores")
    cols = as_lens_table(lenses, workspace, what="structure_scores", finite=False).columns
    good = [c for c in cols if np.isfinite(np.asarray(c.values)).all()]
    data_c = data_components(workspace, good or cols, settings) if good else 0
    scores, counts = {}, {}
    for col in cols:
        if col not in good:
            workspace.warn(
                f"Lens column {col.name!r} holds NaN or infinite values; the structure probe "
                f"gives it NaN scores. Recompute the lens or drop it."
            )
            scores[col.name] = {k: math.nan for k in _score_keys()}
            continue
        grid = grid_counts([col], workspace, interval_counts, overlaps, settings, data_c, col.name,
                           jitter=None)
        counts[col.name] = grid
        scores[col.name] = _score(grid, weights, floor, workspace.n)
    return StructureProbe(
        scores, names=[c.name for c in cols], interval_counts=interval_counts, overlaps=overlaps,
        counts=counts, data_components=data_c, weights=weights, floor=floor,
        settings=settings.to_dict(),
    )


def _min_size(settings, n_rows):
    """The settings' minimum group size for ``n_rows`` rows (a data-dependent value resolved)."""
    if isinstance(settings.min_size, str):  # e.g. "auto": resolved by the graph settings' rule
        return settings.replace(intervals=1, overlap=0.0).resolve(n_rows, 1).min_size
    return settings.min_size


