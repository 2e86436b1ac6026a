"""Bootstrap confidence for graph features, and an optional cover suggestion.

Confidence
----------
Following Carrière, Michel and Oudot (2018) [1]_, a feature of a Mapper graph
(Mapper, 2007) deserves trust when it survives resampling: draw rows, rebuild
the graph on the drawn rows alone (with a neighbour graph of its own), and
count how often each feature count (components, loops b1, branch points,
flares) recurs. :func:`bootstrap_graph` reports, for each feature type, the
distribution of counts over the resamples, its most frequent value and how
often the full-data count recurs; and, for each *significant* feature of the
full-data graph (a loop, limb, flare or branch point whose lens span exceeds
the cover's resolution, :class:`lenswork.graph.GraphSummary`), how often a
significant feature of the same kind over the same lens range (interval
Jaccard >= 1/2 on every lens) recurs in the resampled graphs.

What is implemented, and where it differs from [1]
~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~
* [1] resample with replacement and measure the bottleneck distance between
  the extended persistence diagrams of the full and resampled graphs, giving
  a confidence region for the diagram. Here only feature *counts* are
  compared: the share of resamples whose count of loops (or flares, ...)
  equals the full-data count, and the distribution of counts. No persistence
  diagram and no bottleneck distance are computed.
* Duplicates. A draw with replacement repeats about 37 % of the rows; in the
  neighbour graph a repeated row sits at distance 0 from its copies, which
  then take several of its k neighbour slots and shrink its neighbourhood,
  and the cluster sizes count copies. The default scheme is therefore
  ``"subsample"``: draw ``fraction * n`` rows *without* replacement
  (m-out-of-n subsampling). ``"bootstrap"`` draws n rows with replacement and
  rebuilds on the *distinct* rows drawn (about 63 % of them), dropping the
  multiplicities; it is a subsample of random size, kept for comparison with
  the resampling of [1]. Jittering the copies instead was not chosen: its
  scale would be one more parameter, and it changes the geometry.
* The lens is held fixed, as the filter function is in [1]: each resample
  uses the full-data lens values of its rows (re-normalised on the resample
  by the graph builder's ``scale``); data-driven lenses (PCA, density...) are
  not recomputed per resample.

Cover suggestion
----------------
:func:`suggest_cover` (:mod:`lenswork.suggest`, re-exported here) picks the
scale, interval count and cut-off the parameter selection of [1] suggests;
``bootstrap_graph(..., suggest=True)`` builds the graphs with it.

References
----------
.. [1] M. Carriere, B. Michel and S. Oudot, "Statistical analysis and
   parameter selection for Mapper", Journal of Machine Learning Research 19,
   2018.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass, field, replace

import numpy as np

from . import _progress
from ._errors import InputError, ParameterError
from ._io import MANIFEST, OutputSet, write_text
from ._json import dumps
from ._validation import check_choice, check_float, check_int, check_random_state
from ._version import __version__
from .data import PointCloud
from .graph._features import (
    FEATURES,
    as_workspace,
    empty_counts,
    feature_counts,
    lens_label,
    quiet_build,
)
from .graph._settings import GraphSettings
from .suggest import CoverSuggestion, suggest_cover
from .table import as_lens_table
from .workspace import Workspace

__all__ = ["SIGNIFICANT", "BootstrapResult", "CoverSuggestion", "bootstrap_graph", "suggest_cover"]

SCHEMES = ("subsample", "bootstrap")

#: The most resamples bootstrap_graph takes (a share from 10,000 has SE <= 0.005).
MAX_RESAMPLES = 10_000


# --------------------------------------------------------------------------- bootstrap
@dataclass(frozen=True, eq=False)
class BootstrapResult:
    """Feature counts of the graphs rebuilt on resampled rows.

    Attributes
    ----------
    lens_label : str
        The lens column name(s).
    features : tuple of str
        :data:`lenswork.probe.FEATURES`.
    full_counts : dict of str -> int
        Counts of the graph on all rows.
    counts : dict of str -> ndarray of shape (resamples,), int
        Counts of each resampled graph.
    sizes : ndarray of shape (resamples,), int
        Rows in each resample.
    scheme : {"subsample", "bootstrap"}
    fraction : float or None
        Share of rows per subsample (None for "bootstrap").
    settings : dict
        The graph settings of every graph, whole (:meth:`GraphSettings.to_dict`),
        with ``"auto"`` values resolved on all rows (every resample uses them).
    suggestion : CoverSuggestion or None
    random_state : int or None
    n_rows : int
    extra : dict
        ``empty_resamples``: resamples whose graph had no node (every group
        below ``min_size``); their counts are all 0.
    significant_counts : dict of str -> ndarray of shape (resamples,), int
        Significant loops, limbs, flares and branch points of each resampled
        graph (:attr:`lenswork.graph.GraphSummary.significance`).
    full_features : list of dict
        The significant features of the full-data graph: kind, significance,
        lens range.
    recurs : ndarray of shape (len(full_features), resamples), bool
        Whether each of them recurs in each resample (see
        :meth:`feature_recurrence`).

    Examples
    --------
    >>> from lenswork import Workspace
    >>> rng = np.random.default_rng(1)
    >>> t = rng.uniform(0, 2 * np.pi, 600)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.03, (600, 2)))
    >>> res = bootstrap_graph(ws.X[:, 0], ws, resamples=5)
    >>> res.resamples, res.frequency("loops"), res.recurrence("loops")
    (5, {1: 1.0}, 1.0)
    """

    lens_label: str
    features: tuple
    full_counts: dict
    counts: dict
    sizes: np.ndarray
    scheme: str
    fraction: float | None
    settings: dict
    suggestion: CoverSuggestion | None = None
    random_state: object = None
    n_rows: int = 0
    extra: dict = field(default_factory=dict)
    significant_counts: dict = field(default_factory=dict)
    full_features: list = field(default_factory=list)
    recurs: np.ndarray = None

    @property
    def resamples(self):
        """Number of resampled graphs."""
        return int(self.sizes.shape[0])

    @property
    def scheme_text(self):
        """The resampling scheme in words."""
        if self.scheme == "subsample":
            return f"subsamples of {self.fraction:.0%} of the rows, without replacement"
        return "draws with replacement, distinct rows kept"

    def _feature(self, feature):
        if feature not in self.counts:
            raise ParameterError(
                f"No feature {feature!r} in the bootstrap; it has: {', '.join(self.counts)}."
            )
        return self.counts[feature]

    def frequency(self, feature):
        """Share of resamples per count of ``feature``: dict count -> share, by count."""
        values, n = np.unique(self._feature(feature), return_counts=True)
        return {int(v): float(c / self.resamples) for v, c in zip(values, n, strict=True)}

    def mode(self, feature):
        """(most frequent count, its share); ties go to the smaller count."""
        freq = self.frequency(feature)
        best = max(freq.values())
        value = min(v for v, s in freq.items() if s == best)
        return value, best

    def recurrence(self, feature):
        """Share of resamples whose ``feature`` count equals the full-data count."""
        return float(np.mean(self._feature(feature) == self.full_counts[feature]))

    def rows(self):
        """One dict per feature type: full count, mode, its share, recurrence, distribution."""
        out = []
        for f in self.features:
            mode, share = self.mode(f)
            out.append({
                "feature": f, "full": int(self.full_counts[f]), "mode": mode,
                "mode_share": share, "recurrence": self.recurrence(f),
                "distribution": self.frequency(f),
            })
        return out

    def feature_recurrence(self):
        """How often each significant feature of the full-data graph recurs.

        A feature recurs in a resample when that graph has a significant
        feature of the same kind whose range overlaps it on every lens by at
        least half of their union (interval Jaccard >= 1/2); the ranges are in
        lens units, so they compare across resamples.

        Returns
        -------
        list of dict
            ``kind``, ``significance`` (full data), ``lens_range``, ``recurrence``
            (share of resamples), by kind then decreasing significance.
        """
        out = []
        for i, f in enumerate(self.full_features):
            rec = float(self.recurs[i].mean()) if self.recurs is not None and \
                self.recurs.shape[1] else 0.0
            out.append({**f, "recurrence": rec})
        return out

    def format_features(self):
        """The significant features of the full-data graph and how often each recurs."""
        rows = self.feature_recurrence()
        if not rows:
            return "no significant feature in the full-data graph"
        lines = [f"{'feature':<8} {'signif.':>7} {'recurs':>7}  lens range"]
        for r in rows:
            spans = ", ".join(f"{k} {a:.4g}..{b:.4g}" for k, (a, b) in r["lens_range"].items())
            lines.append(f"{r['kind']:<8} {r['significance']:>7.2f} {r['recurrence']:>7.0%}  "
                         f"{spans}")
        return "\n".join(lines)

    def format_table(self):
        """The per-feature summary as aligned text."""
        lines = [f"{'feature':<14} {'full':>5} {'mode':>5} {'share':>6} {'recurs':>7}  counts"]
        for r in self.rows():
            dist = "  ".join(f"{v}: {s:.0%}" for v, s in r["distribution"].items())
            lines.append(f"{r['feature']:<14} {r['full']:>5} {r['mode']:>5} "
                         f"{r['mode_share']:>6.0%} {r['recurrence']:>7.0%}  {dist}")
        return "\n".join(lines)

    def to_csv_text(self):
        """One row per resample: its number, its rows, every feature count."""
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(["resample", "rows", *self.features])
        for b in range(self.resamples):
            counts = (int(self.counts[f][b]) for f in self.features)
            w.writerow([b + 1, int(self.sizes[b]), *counts])
        return buf.getvalue()

    def to_dict(self):
        """JSON-ready: settings, scheme, per-feature summary, suggestion, provenance."""
        return {
            "lenswork_version": __version__, "kind": "graph bootstrap", "lens": self.lens_label,
            "n_rows": self.n_rows, "resamples": self.resamples, "scheme": self.scheme,
            "fraction": self.fraction, "random_state": self.random_state,
            "settings": dict(self.settings),
            "features": [
                {**r, "distribution": {str(k): v for k, v in r["distribution"].items()}}
                for r in self.rows()
            ],
            "suggestion": None if self.suggestion is None else {
                k: getattr(self.suggestion, k) for k in self.suggestion.__dataclass_fields__
            },
            "significant_features": [
                {**r, "lens_range": {k: list(v) for k, v in r["lens_range"].items()}}
                for r in self.feature_recurrence()
            ],
            "significant_counts": {
                k: {str(c): float(share) for c, share in zip(*np.unique(v, return_counts=True))}
                for k, v in self.significant_counts.items()
            },
        }

    def write(self, directory, *, figures=True):
        """Write ``bootstrap.csv``, ``bootstrap.json`` (and ``bootstrap.png``) into ``directory``.

        One output set (:class:`lenswork._io.OutputSet`): all files or none,
        with ``lenswork-manifest.json`` written last.

        Returns
        -------
        dict of str -> Path
        """
        output = OutputSet(directory, command="bootstrap")
        with output as stage:
            write_text(stage / "bootstrap.csv", self.to_csv_text())
            write_text(stage / "bootstrap.json", dumps(self.to_dict()) + "\n")
            if figures:
                self.plot(stage / "bootstrap.png")
        return {p.name: p for p in output.written if p.name != MANIFEST}

    def text(self):
        """For a terminal: the per-feature count table, then how often each feature recurs."""
        return (f"Bootstrap of {self.lens_label}: {self.resamples} resamples "
                f"({self.scheme_text}), {self.n_rows} rows.\n{self.format_table()}\n"
                f"Significant features of the full-data graph and how often each recurs:\n"
                f"{self.format_features()}")

    def plot(self, paths=None):
        """Bar charts of the count distributions; write to ``paths`` or return the figure.

        The plot module is imported here, on the first call (with matplotlib).
        """
        from .plot._stability import bootstrap_figure, bootstrap_sheet
        from .plot._style import as_paths

        if paths is None:
            return bootstrap_figure(self)
        return bootstrap_sheet(self, as_paths(paths))

    def _repr_png_(self):
        """The ``plot()`` figure as PNG bytes (a notebook shows it); matplotlib's Agg canvas."""
        from .plot._style import png_bytes

        return png_bytes(self.plot())

    def __repr__(self):
        mode, share = self.mode("loops")
        return (f"BootstrapResult({self.resamples} resamples of {self.lens_label}, "
                f"loops: {mode} in {share:.0%})")

    def to_frame(self, what="resamples"):
        """A pandas DataFrame: one row per resample, or per feature type.

        ``what="resamples"``: ``resample`` (1-based), ``rows`` and every feature
        count, the columns of ``bootstrap.csv``. ``what="features"``: the
        ``features`` list of ``bootstrap.json`` (``distribution`` as JSON text).
        Needs pandas (a clear error without it).
        """
        from ._frame import records_frame
        from ._validation import check_choice

        if check_choice("what", what, ("resamples", "features"),
                        context="BootstrapResult.to_frame") == "features":
            return records_frame(self.to_dict()["features"], what="a BootstrapResult")
        rows = [{"resample": b + 1, "rows": int(self.sizes[b]),
                 **{f: int(self.counts[f][b]) for f in self.features}}
                for b in range(self.resamples)]
        return records_frame(rows, what="a BootstrapResult",
                             columns=["resample", "rows", *self.features])


def _draw(rng, n, scheme, fraction, minimum):
    if scheme == "subsample":
        m = min(n, max(minimum, int(round(fraction * n))))
        return np.sort(rng.choice(n, size=m, replace=False))
    return np.unique(rng.integers(0, n, size=n))


def bootstrap_graph(lenses, workspace, *, settings=None, resamples=100, scheme="subsample",
                    fraction=0.8, intervals=None, overlap=None, k=None, suggest=False,
                    random_state=None, **overrides):
    """Rebuild the graph on resampled rows and count how often each feature count recurs.

    Parameters
    ----------
    lenses : LensTable, LensColumn(s), array-like or registry spec(s)
        The lens (one or more columns: a product cover).
    workspace : Workspace
    resamples : int, default=100
    scheme : {"subsample", "bootstrap"}, default="subsample"
        ``"subsample"``: ``fraction * n`` rows without replacement.
        ``"bootstrap"``: n rows with replacement, distinct rows kept (see the
        module docstring for why duplicates are dropped).
    fraction : float in (0, 1], default=0.8
        Share of rows in each subsample (``"subsample"`` only).
    settings : GraphSettings or dict, optional
        The graph settings of every graph (default ``GraphSettings()``).
    intervals, overlap, k : optional
        Overrides of ``settings`` (``k``: neighbours of every neighbour graph,
        full data and each resample).
    suggest : bool, default=False
        Take intervals, overlap and cut-off from :func:`suggest_cover` on the
        full data's raw lens values (:meth:`CoverSuggestion.apply`: an interval
        cover with ``scale="raw"``).
    random_state : int, optional
        Seed of the resampling (default: the workspace's).
    **overrides
        Any :class:`~lenswork.GraphSettings` field, applied to ``settings``.

    Returns
    -------
    BootstrapResult

    Raises
    ------
    ParameterError
        Bad resamples, scheme, fraction or setting.
    InputError
        Too few rows for a resample's neighbour graph.

    Notes
    -----
    Cost: ``resamples`` times (a neighbour graph of its own on the resampled
    rows, exact for small data, plus one graph build).

    References
    ----------
    .. [1] M. Carriere, B. Michel and S. Oudot, "Statistical analysis and
       parameter selection for Mapper", JMLR 19, 2018.

    Examples
    --------
    >>> from lenswork import Workspace
    >>> rng = np.random.default_rng(0)
    >>> t = rng.uniform(0, 2 * np.pi, 400)
    >>> ws = Workspace(np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.03, (400, 2)))
    >>> res = bootstrap_graph(ws.X[:, 0], ws, resamples=10)
    >>> res.full_counts["loops"], res.mode("loops")[0]
    (1, 1)
    """
    try:  # bounded before the work: each resample is a graph, its counts kept in memory
        resamples = check_int("resamples", resamples, lo=1, hi=MAX_RESAMPLES,
                              context="bootstrap_graph")
    except ParameterError as err:
        raise ParameterError(
            f"{err} Each resample builds a graph (seconds each) and the shares' standard error "
            f"at {MAX_RESAMPLES:,} is already below 0.005."
        ) from None
    scheme = check_choice("scheme", scheme, SCHEMES, context="bootstrap_graph")
    fraction = check_float("fraction", fraction, lo=0, hi=1, lo_open=True,
                           context="bootstrap_graph")
    settings = GraphSettings.coerce(settings, **overrides, intervals=intervals, overlap=overlap,
                                    k=k)
    k = settings.k
    workspace = as_workspace(workspace)
    cols = as_lens_table(lenses, workspace, what="bootstrap_graph").columns
    suggestion = None
    if suggest:
        suggestion = suggest_cover(cols, workspace, settings=settings, scale="raw",
                                   random_state=random_state)
        settings = suggestion.apply(settings)
    n = workspace.n
    # "auto" values are fixed once on all rows: every resample uses the same cover
    # resolution and min_size, as the parameters are fixed in [1].
    settings = settings.resolve(n, len(cols))
    if scheme == "subsample" and round(fraction * n) < k + 2:
        raise InputError(
            f"A subsample of {fraction:g} x {n} rows is too small for a neighbour graph with "
            f"k={k}; use a larger fraction, more rows or a smaller k."
        )
    full_graph = quiet_build(cols, workspace, settings)
    full = feature_counts(full_graph)
    full_feats = _significant(full_graph)
    rng = check_random_state(workspace.random_state if random_state is None else random_state)
    counts = {f: np.zeros(resamples, dtype=np.int64) for f in FEATURES}
    sig_counts = {f: np.zeros(resamples, dtype=np.int64) for f in SIGNIFICANT}
    recurs = np.zeros((len(full_feats), resamples), dtype=bool)
    sizes = np.zeros(resamples, dtype=np.int64)
    empty = np.zeros(resamples, dtype=np.int64)
    for b in _progress.track(range(resamples), "bootstrap", length=resamples):
        idx = _draw(rng, n, scheme, fraction, k + 2)
        sub = Workspace(PointCloud.from_array(workspace.X[idx]),
                        random_state=workspace.random_state,
                        neighbor_method=workspace.neighbor_method)
        sub_cols = [replace(c, values=np.asarray(c.values)[idx]) for c in cols]
        try:
            g = quiet_build(sub_cols, sub, settings)
        except ParameterError:  # every group below min_size: an empty graph
            c = empty_counts(idx.size)
            g = None
        else:
            c = {**feature_counts(g), "empty": 0}
        empty[b] = c["empty"]
        sizes[b] = idx.size
        for f in FEATURES:
            counts[f][b] = c[f]
        if g is not None:
            sig = g.summary().significance or {}
            for f in SIGNIFICANT:
                sig_counts[f][b] = sig.get(f, (0, 0))[0]
            feats = _significant(g)
            for i, f in enumerate(full_feats):
                recurs[i, b] = any(_same_feature(f, h) for h in feats)
    return BootstrapResult(
        lens_label=lens_label(cols), features=FEATURES,
        full_counts={f: full[f] for f in FEATURES}, counts=counts, sizes=sizes, scheme=scheme,
        fraction=fraction if scheme == "subsample" else None, settings=settings.to_dict(),
        suggestion=suggestion, random_state=random_state, n_rows=n,
        extra={"empty_resamples": int(empty.sum())}, significant_counts=sig_counts,
        full_features=full_feats, recurs=recurs,
    )


#: Kinds of significant features counted per resample (keys of GraphSummary.significance).
SIGNIFICANT = ("loops", "limbs", "flares", "branch_points")
_KIND_ORDER = {"loop": 0, "limb": 1, "flare": 2, "branch": 3}


def _significant(graph):
    """Significant features of a graph as plain records, by kind then significance."""
    out = [{"kind": f.kind, "significance": float(f.significance),
            "lens_range": {k: (float(a), float(b)) for k, (a, b) in f.lens_range.items()}}
           for f in graph.summary().significant_features()]
    return sorted(out, key=lambda r: (_KIND_ORDER.get(r["kind"], 9), -r["significance"]))


def _same_feature(a, b):
    """Same kind, and lens ranges overlapping by at least half their union on every lens."""
    if a["kind"] != b["kind"]:
        return False
    for name, (lo, hi) in a["lens_range"].items():
        if name not in b["lens_range"]:
            return False
        lo2, hi2 = b["lens_range"][name]
        inter = min(hi, hi2) - max(lo, lo2)
        union = max(hi, hi2) - min(lo, lo2)
        if union > 0 and inter / union < 0.5:
            return False
        if union <= 0 and inter < 0:
            return False
    return True
