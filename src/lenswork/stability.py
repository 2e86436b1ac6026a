"""The stability map: feature counts of one lens's graph over a grid of cover settings.

Stability map
-------------
:func:`stability_map` runs the same grid for one lens at a finer resolution
and keeps every count per cell: a table (CSV) and a heat map per feature type
(:meth:`StabilityMap.plot`), with the 4-connected region of cells that share
the default setting's count, from which a user picks cover settings.

Every cell records first its *significant* counts, exactly as the graph
summary's first line reports them (:meth:`GraphSummary.significant_counts`
of ``build_graph`` at that cell's settings): components, significant loops
(one lens) or holes (several lenses: the fewest holes over the coarser
cover scales, ``hole_scales``), flares, limbs and branch points; then the
raw cycle and degree counts (small features included). The holes of a
multi-lens cell need the graphs at its coarser interval counts; a scale that
another cell of the grid (or another cell's scale) already built is read
from that build, not built again.
"""

from __future__ import annotations

import io
import math
from collections import deque
from dataclasses import dataclass, field

import numpy as np

from . import _progress
from ._errors import ParameterError
from ._io import dict_csv_writer, write_text
from ._json import dumps
from ._version import __version__
from .graph import grid_settings, hole_scale_settings
from .graph._features import (
    FEATURES,
    as_workspace,
    empty_counts,
    feature_counts,
    lens_label,
    quiet_build,
)
from .probe import check_grid, data_components, default_cell_setting, merged_settings
from .table import as_lens_table

__all__ = ["MAP_INTERVALS", "MAP_OVERLAPS", "SIGNIFICANT_KEYS", "StabilityMap", "stability_map"]

#: The stability map's default grid.
MAP_INTERVALS = (4, 6, 8, 10, 12, 14, 16, 20)
MAP_OVERLAPS = (0.1, 0.2, 0.3, 0.4, 0.5)
#: The significant counts of a cell, in the order the summary's first line gives them
#: (``significant_holes`` in place of ``significant_loops`` for several lenses). Components
#: all count, as in the summary: ``components`` is both.
SIGNIFICANT_KEYS = ("components", "significant_loops", "significant_holes",
                    "significant_flares", "significant_limbs", "significant_branch_points")
#: Raw counts (small features included), after the significant ones.
_RAW_KEYS = ("loops", "branch_points", "flares", "nodes", "edges", "unassigned",
             "extra_components", "empty")


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


@dataclass(frozen=True, eq=False)
class StabilityMap:
    """Feature counts of one lens's graph over an interval-count x overlap grid.

    Attributes
    ----------
    lens : str
        The lens column name(s), joined by `` x `` for a multi-column cover.
    interval_counts : tuple of int
        Interval counts (grid rows).
    overlaps : tuple of float
        Overlaps (grid columns).
    counts : dict of str -> ndarray of shape (len(interval_counts), len(overlaps)), int
        First the significant counts (:data:`SIGNIFICANT_KEYS`, those the
        graph summary's first line gives: ``components``,
        ``significant_loops`` for one lens or ``significant_holes`` for
        several, ``significant_flares``, ``significant_limbs``,
        ``significant_branch_points``; -1 where not known, e.g. the holes of a
        nerve too large to count; absent for a ball cover, which has no lens
        levels to judge by), then the raw ones: ``loops`` (b1),
        ``branch_points`` (degree >= 3), ``flares`` (leaf chains), ``nodes``,
        ``edges``, ``unassigned`` (rows in no node), ``extra_components`` and
        ``empty`` (1 where no cover element kept a group of ``min_size`` rows)
        at every cell.
    n_rows : int
    data_components : int
        Components of the data itself (see the module docstring).
    default : (int, float) or None
        The grid cell of the settings themselves (intervals, overlap; see
        :func:`default_cell_setting`), when the grid holds it.
    settings : dict
        The graph settings used, whole (:meth:`GraphSettings.to_dict`).

    Examples
    --------
    >>> from lenswork import Workspace
    >>> t = np.linspace(0, 2 * np.pi, 300, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> smap = stability_map(ws.X[:, 0], ws, interval_counts=(8, 10), overlaps=(0.3,))
    >>> smap.default_cell, smap.region("significant_loops").tolist(), len(smap.rows())
    ((1, 0), [[True], [True]], 2)
    >>> smap.counts["significant_loops"].ravel().tolist()
    [1, 1]
    """

    lens: str
    interval_counts: tuple
    overlaps: tuple
    counts: dict
    n_rows: int
    data_components: int
    default: tuple | None = None
    settings: dict = field(default_factory=dict)

    @property
    def features(self):
        """The feature types shown by default: the significant counts the map holds, then the
        raw ones (:data:`FEATURES`)."""
        return tuple(k for k in SIGNIFICANT_KEYS if k in self.counts) + \
            tuple(k for k in FEATURES if k in self.counts and k not in SIGNIFICANT_KEYS)

    @property
    def default_cell(self):
        """Grid position (row, column) of the default setting, or None."""
        if self.default is None:
            return None
        i = (self.interval_counts.index(self.default[0])
             if self.default[0] in self.interval_counts else None)
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
        ndarray of bool, shape (len(interval_counts), len(overlaps))
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
        for i, iv in enumerate(self.interval_counts):
            for j, ov in enumerate(self.overlaps):
                out.append({"intervals": int(iv), "overlap": float(ov),
                            **{k: int(v[i, j]) for k, v in self.counts.items()}})
        return out

    def to_csv_text(self):
        """The map as CSV text, one row per cell."""
        rows = self.rows()
        buf = io.StringIO()
        w = dict_csv_writer(buf, list(rows[0]), lineterminator="\n")
        w.writeheader()
        w.writerows(rows)
        return buf.getvalue()

    def provenance(self):
        """JSON-ready description: lens, grid, settings, default, data components, version."""
        return {
            "lenswork_version": __version__, "kind": "stability map", "lens": self.lens,
            "n_rows": self.n_rows, "interval_counts": list(self.interval_counts),
            "overlaps": list(self.overlaps), "default": list(self.default or []) or None,
            "data_components": self.data_components, "settings": dict(self.settings),
        }

    def write_csv(self, path):
        """Write the CSV table to ``path`` and its provenance to ``<path>.json`` (atomically).

        Returns
        -------
        (Path, Path)
        """
        from pathlib import Path

        path = Path(path)
        write_text(path, self.to_csv_text())
        sidecar = path.with_name(path.name + ".json")
        write_text(sidecar, dumps(self.provenance()) + "\n")
        return path, sidecar

    def write(self, directory, *, figures=True):
        """Write ``stability.csv``, its ``.json`` sidecar (and ``stability.png``) into a folder.

        A path ending in ``.csv`` is the older call: :meth:`write_csv` to that
        path, returning ``(path, sidecar)``.

        Returns
        -------
        list of Path
        """
        from pathlib import Path

        directory = Path(directory)
        if directory.suffix.lower() == ".csv":  # the older call, write(path.csv): the table only
            return self.write_csv(directory)
        if directory.exists() and not directory.is_dir():
            raise ParameterError(
                f"Output directory {str(directory)!r} is a file; give a directory path."
            )
        directory.mkdir(parents=True, exist_ok=True)
        fig = self.plot() if figures else None  # drawn before the first file is written
        written = list(self.write_csv(directory / "stability.csv"))
        if fig is not None:
            from .plot._style import save

            written.append(save(fig, directory / "stability.png"))
        return written

    def to_dict(self):
        """JSON-ready: the provenance (lens, grid, settings, default) and one record per cell."""
        return {**self.provenance(), "cells": self.rows()}

    def text(self):
        """For a terminal: per feature type, its count over the grid (intervals x overlaps).

        The significant counts come first; the raw cycle and degree counts
        follow, named raw.
        """
        head = "intervals " + " ".join(f"{o:>5g}" for o in self.overlaps)
        lines = [f"Stability map of {self.lens}: {len(self.interval_counts)} interval counts x "
                 f"{len(self.overlaps)} overlaps, {self.n_rows:,} rows"]
        for name in self.features:
            if name not in self.counts:
                continue
            title = name.replace("_", " ") if name in SIGNIFICANT_KEYS else \
                f"raw {name.replace('_', ' ')} (small features included)"
            lines += [f"{title}:", "  " + head]
            for i, iv in enumerate(self.interval_counts):
                lines.append(f"  {iv:>9} " + " ".join(f"{int(v):>5}" for v in self.counts[name][i]))
        return "\n".join(lines)

    def plot(self, paths=None, features=None):
        """Draw one heat map per feature type; write to ``paths`` or return the figure.

        The plot module is imported here, on the first call (with matplotlib).
        """
        from .plot._stability import stability_figure, stability_sheet
        from .plot._style import as_paths

        if paths is None:
            return stability_figure(self, features)
        return stability_sheet(self, as_paths(paths), features)

    def _repr_png_(self):
        """The ``plot()`` figure as PNG bytes (a notebook shows it); matplotlib's Agg canvas."""
        from .plot._style import png_bytes

        return png_bytes(self.plot())

    def to_frame(self):
        """The map as a pandas DataFrame, one row per grid cell: the columns of the CSV file.

        ``intervals``, ``overlap`` and every count of :attr:`counts`, as
        :meth:`to_csv_text` writes them. Needs pandas (a clear error without it).
        """
        from ._frame import records_frame

        return records_frame(self.rows(), what="a StabilityMap")


def stability_map(lens, workspace, *, settings=None, interval_counts=MAP_INTERVALS,
                  overlaps=MAP_OVERLAPS, k=None, **overrides):
    """Feature counts of one lens's graph over a grid of cover settings.

    Parameters
    ----------
    lens : LensColumn, LensTable, array-like or registry spec
        One lens; several columns give a product cover, with the same interval
        count and overlap on every column.
    workspace : Workspace
    interval_counts : sequence of int, default=(4, 6, 8, 10, 12, 14, 16, 20)
    overlaps : sequence of float in [0, 1), default=(0.1, 0.2, 0.3, 0.4, 0.5)
    settings : GraphSettings or dict, optional
        The graph settings; each cell replaces the cover's resolution and
        overlap (:func:`lenswork.graph.grid_settings`: interval count, or
        ball spacing ``1 / N``). The settings' own cell is the map's default.
    k : int, optional
        Neighbours of the shared graph (an override of ``settings.k``).
    **overrides
        Any :class:`~lenswork.GraphSettings` field, applied to ``settings``.

    Returns
    -------
    StabilityMap
        ``.counts[feature]`` is a (len(interval_counts), len(overlaps)) int array;
        ``.write_csv(path)`` writes the CSV table, ``.plot(path)`` the heat maps,
        ``.region(feature)`` the stable region around the default setting.

    Raises
    ------
    ParameterError
        Bad grid or setting.

    Notes
    -----
    Cost: one graph build per cell, O(n k) each on the shared neighbour graph,
    plus each graph's significance (the extended persistence of every lens on
    it, milliseconds for a Mapper graph) and, for several lenses, the graphs
    at the coarser cover scales that no cell of the grid already built
    (``hole_scales - 1`` per cell at most). Measured in
    ``tests/benchmarks/bench_stability.py``.

    Examples
    --------
    >>> from lenswork import Workspace
    >>> t = np.linspace(0, 2 * np.pi, 500, endpoint=False)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]))
    >>> smap = stability_map(np.cos(t), ws, interval_counts=(6, 10), overlaps=(0.2, 0.3))
    >>> smap.counts["significant_loops"].tolist(), smap.counts["loops"].tolist()
    ([[1, 1], [1, 1]], [[1, 1], [1, 1]])
    """
    interval_counts, overlaps = check_grid(interval_counts, overlaps, "stability_map")
    settings = merged_settings(settings, k, overrides)
    workspace = as_workspace(workspace)
    cols = as_lens_table(lens, workspace, what="stability_map").columns
    data_c = data_components(workspace, cols, settings)
    label = lens_label(cols)
    counts = _grid(cols, workspace, interval_counts, overlaps, settings, data_c, label)
    return StabilityMap(
        lens=label, interval_counts=interval_counts, overlaps=overlaps, counts=counts,
        n_rows=workspace.n, data_components=data_c,
        default=default_cell_setting(settings, workspace.n, len(cols)),
        settings=settings.to_dict(),
    )


def _key(settings):
    """A cache key of resolved settings: their whole record, the hole scales left out."""
    return dumps(settings.replace(hole_scales=1).to_dict())


def _grid(cols, workspace, interval_counts, overlaps, settings, data_c, label):
    """Significant and raw counts of the graph at every (intervals, overlap) cell.

    Each cell is :func:`~lenswork.build_graph` at :func:`~lenswork.graph.grid_settings`
    (built without its hole scales); its significant counts are its summary's
    :meth:`~lenswork.graph.GraphSummary.significant_counts`, the holes of several
    lenses completed as ``build_graph`` does: the fewest holes over the cell and
    its :func:`~lenswork.graph.hole_scale_settings`, each scale's holes read from
    the build of the same resolved settings when the sweep has one.
    """
    p, q, m, n = len(interval_counts), len(overlaps), len(cols), workspace.n
    judged = settings.cover_kind == "interval"
    holes_key = "significant_holes" if m > 1 else "significant_loops"
    keys = [k for k in SIGNIFICANT_KEYS if judged or k == "components"]
    keys = [k for k in keys if k not in ("significant_loops", "significant_holes")
            or k == holes_key]
    out = {k: np.zeros((p, q), dtype=np.int64) for k in (*keys, *_RAW_KEYS)}
    holes_of, pending = {}, []  # resolved settings -> raw holes; cells waiting for scales
    cells = [(i, j) for i in range(p) for j in range(q)]
    for i, j in _progress.track(cells, f"stability {label}", length=len(cells)):
        cell = grid_settings(settings, interval_counts[i], overlaps[j])
        resolved = cell.resolve(n, m, workspace=workspace)
        try:
            g = quiet_build(cols, workspace, resolved)
        except ParameterError:  # no node at this cover: an empty cell, no feature
            holes_of[_key(resolved)] = 0
            c = empty_counts(n)
        else:
            s = g.summary()
            holes_of[_key(resolved)] = s.holes
            c = {**feature_counts(g, data_c), "empty": 0}
            sig = s.significant_counts() if judged else None
            if judged:
                if sig is None:  # no lens levels to judge by: not known
                    sig = {k[len("significant_"):]: None for k in keys if k != "components"}
                c.update({f"significant_{kind}": v for kind, v in sig.items()
                          if kind != "components"})
                if m > 1:
                    pending.append((i, j, s.holes, hole_scale_settings(resolved, m)))
        for key in out:
            value = c.get(key, 0)
            out[key][i, j] = -1 if value is None else int(value)
    for i, j, own, scales in pending:  # several lenses: holes over the coarser scales
        found = [own]
        for scale in scales:
            if _key(scale) not in holes_of:
                try:
                    holes_of[_key(scale)] = quiet_build(cols, workspace, scale).summary().holes
                except ParameterError:  # no group reaches min_size: no hole (as build_graph)
                    holes_of[_key(scale)] = 0
            found.append(holes_of[_key(scale)])
        out["significant_holes"][i, j] = -1 if any(h is None for h in found) else min(found)
    return out
