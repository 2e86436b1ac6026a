"""GraphSettings: every setting of a graph build, in one frozen object validated once.

The dataclass is the one place that defines the graph settings, their
defaults, their checks and their command-line options (the ``cli`` entry of
each field's metadata, read by :func:`lenswork.cli._common.graph_options`).
Everything that builds graphs -- :func:`~lenswork.build_graph`, the structure
probe, the stability map, the bootstrap and the comparison of views -- takes a
``GraphSettings``; a parameter sweep is a list of ``settings.replace(...)``.

Defaults that follow the data
-----------------------------
``intervals`` and ``min_size`` default to ``"auto"``: :meth:`GraphSettings.resolve`
fixes them from the number of rows ``n`` and of lens columns ``m`` just before
a build, by the rules of :data:`AUTO_RULES` (field name -> function of
``(settings, n_rows, n_lenses)``). The rules read the parameter selection of
Carrière, Michel and Oudot (JMLR 2018), also behind ``bootstrap --suggest``, on
the rank scale, in closed form:

* their scale ``delta`` is the Hausdorff distance between the rows and a
  subsample of ``s = n / (ln n) ** (1 + beta)`` rows (``beta = 0.1``), so a
  ``delta``-ball holds about ``q = n / s = (ln n) ** 1.1`` rows;
* their resolution is ``r = omega(delta) / g`` for the lens oscillation
  ``omega`` over a ``delta``-ball and the gain (overlap) ``g``. On the rank
  scale ``q`` distinct rows span at least ``q / n`` of the range, so the
  finest resolution the rule can give holds ``q / g`` rows per interval
  (``g`` taken as at least 1/4: smaller overlaps would ask for huge elements);
* ``intervals = "auto"``: with ``m`` lenses the product cover's elements
  must keep ``q / g`` rows, so each lens gets intervals of length
  ``L = (q / (g n)) ** (1 / m)`` (lens columns taken as independent; on ranks
  an element of length ``L`` per lens then holds ``n L ** m`` rows), that is
  ``N = floor((1 / L - g) / (1 - g))`` intervals (the interval cover's length
  is ``1 / (N - (N - 1) g)``), clipped to ``[1, 10]`` -- 10, the former fixed
  default, is kept for large data, the rule only coarsens covers that the
  rows cannot fill;
* ``min_size = "auto"``: ``round(q)`` clipped to ``[3, 10]`` -- a group
  smaller than one ``delta``-ball's share of rows is a fragment (10, the former
  default, from about 3,000 rows on).

With ``overlap = 0.3``: one lens keeps 10 intervals from about 150 rows on;
two lenses on 150 rows get 3 x 3 and ``min_size`` 6 (a 10 x 10 cover with
``min_size`` 10 left 117 of iris's 150 rows in no node).

``clusterer = "auto"`` (:func:`auto_clusterer`): the ``"graph"`` rule, which
reads the shared neighbour graph of all rows, up to :data:`AUTO_GRAPH_MAX_ROWS`
rows (where that graph is exact and quick) or when the workspace holds it
already; ``"element-knn"``, a neighbour graph inside each element, above.

``scale = "auto"`` (:func:`auto_scale`): the ``"balanced"`` cover scale, the mean
of each lens's ranks and of its values divided by their range. On the rank scale
every interval holds the same number of rows, so a sparse tail far out in the
lens's values -- a failure mode, a rare regime -- gets one or two intervals and
no resolution, while the raw scale gives a dense pile one interval and a long
sparse tail most of them. On the mean of the two an interval holds at most twice
the rows of an equal-count interval and spans at most twice the values of an
equal-length one: dense regions keep at least half the rank scale's resolution
and sparse ones at least half the raw scale's. It is a fixed-form instance of
the covers that adapt to the lens's distribution (interval lengths set from the
data instead of equal; Carrière, Michel and Oudot 2018 set one resolution for
the whole lens, later work splits or merges intervals where the distribution
asks for it) with no parameter to fit.

The resolved values are what the graph records (``provenance["graph_settings"]``,
with ``provenance["auto_settings"]`` naming the fields that were ``"auto"``).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field

from .._errors import ParameterError
from .._validation import SettingsRecord, check_choice, check_float, check_int
from ..workspace import EXACT_MAX_ROWS, METRICS
from ._cluster import CLUSTERERS, check_clusterer
from ._cluster_estimator import clusterer_name
from ._cover import COVER_SCALES, COVERS, CoverBase
from ._cutoff import check_cutoff
from ._fragments import FRAGMENT_RULES

__all__ = [
    "AUTO_BETA",
    "AUTO_GRAPH_MAX_ROWS",
    "AUTO_MAX_INTERVALS",
    "AUTO_MAX_MIN_SIZE",
    "AUTO_MIN_GAIN",
    "AUTO_RULES",
    "GraphSettings",
    "auto_clusterer",
    "auto_intervals",
    "auto_min_size",
    "auto_scale",
    "ball_rows",
    "grid_settings",
    "is_auto",
]

#: Exponent beta of the subsample size n / (ln n) ** (1 + beta) (Carrière, Michel and Oudot 2018).
AUTO_BETA = 0.1
#: Largest interval count per lens the "auto" rule gives (the former fixed default).
AUTO_MAX_INTERVALS = 10
#: Smallest gain in the element size q / g (a small overlap would ask for huge elements).
AUTO_MIN_GAIN = 0.25
#: Largest "auto" min_size (the former fixed default).
AUTO_MAX_MIN_SIZE = 10
#: Most rows for which clusterer="auto" reads the shared neighbour graph ("graph"): the
#: workspace's exact-search limit (above it the shared graph is an approximate all-rows build).
AUTO_GRAPH_MAX_ROWS = EXACT_MAX_ROWS


def ball_rows(n_rows):
    """Rows per ``delta``-ball, ``q = (ln n) ** (1 + beta)``: n over the subsample size s.

    Examples
    --------
    >>> round(ball_rows(150), 2)
    5.89
    """
    n = max(int(n_rows), 2)
    return math.log(n) ** (1.0 + AUTO_BETA)


def _mean_overlap(overlap):
    return float(sum(overlap) / len(overlap)) if isinstance(overlap, tuple) else float(overlap)


def auto_intervals(n_rows, n_lenses, overlap=0.3):
    """Intervals per lens so each product-cover element holds ``q / g`` rows (module notes).

    Parameters
    ----------
    n_rows, n_lenses : int
    overlap : float or tuple of float, default=0.3
        The gain ``g`` (one per lens: one count per lens).

    Returns
    -------
    int or tuple of int

    Examples
    --------
    >>> auto_intervals(150, 1), auto_intervals(150, 2), auto_intervals(1000, 2)
    (10, 3, 8)
    """
    n, m = int(n_rows), max(int(n_lenses), 1)
    gains = overlap if isinstance(overlap, tuple) else (overlap,)
    gain = max(_mean_overlap(overlap), AUTO_MIN_GAIN)
    length = min(1.0, (ball_rows(n) / (gain * max(n, 1))) ** (1.0 / m))
    counts = []
    for g in gains:
        g = float(g)
        c = math.floor((1.0 / length - g) / (1.0 - g) + 1e-9)
        counts.append(int(min(AUTO_MAX_INTERVALS, max(1, c))))
    return counts[0] if len(counts) == 1 else tuple(counts)


def auto_min_size(n_rows):
    """``round((ln n) ** 1.1)`` clipped to [3, 10]: a group smaller than a delta-ball is a fragment.

    Examples
    --------
    >>> auto_min_size(150), auto_min_size(1000), auto_min_size(100_000)
    (6, 8, 10)
    """
    return int(min(AUTO_MAX_MIN_SIZE, max(3, round(ball_rows(n_rows)))))


def auto_clusterer(n_rows, graph_cached=False):
    """``"graph"`` up to :data:`AUTO_GRAPH_MAX_ROWS` rows or with the shared graph at hand, else
    ``"element-knn"``.

    Parameters
    ----------
    n_rows : int
    graph_cached : bool, default=False
        Whether the workspace already holds a neighbour graph of every row with
        at least ``k`` neighbours (then the "graph" rule costs only the
        clustering).

    Returns
    -------
    str

    Notes
    -----
    Below the limit the shared graph is exact and quick (the whole default
    build, graph included, 4.1 s on 50,000 x 20 rows); above it, it is
    pynndescent's approximate search, which compiles for 25-55 s in every
    fresh process and took 480 s of a 557-s ``lenswork graph`` run on 1e6 x 20
    rows. The element rule needs no all-rows graph: 7.1 s there for the
    clusters of all four cover scales, and the same components and holes as
    the graph rule at 1e4, 5e4 and 1e5 rows (tests/benchmarks/bench_graph_rules.py;
    DEVELOPERS.md, "Clustering rules").

    Examples
    --------
    >>> auto_clusterer(50_000), auto_clusterer(50_001), auto_clusterer(10**6, graph_cached=True)
    ('graph', 'element-knn', 'graph')
    """
    return "graph" if graph_cached or int(n_rows) <= AUTO_GRAPH_MAX_ROWS else "element-knn"


def auto_scale(n_rows):
    """The cover scale of ``scale="auto"``: ``"balanced"`` (module notes).

    The balanced scale is the mean of a lens's ranks and of its values divided
    by their range, so its intervals follow the lens's distribution both ways:
    none holds more than twice the rows of an equal-count interval, none spans
    more than twice the values of an equal-length one. A sparse tail far out in
    the values keeps at least half the intervals the raw scale would give it; a
    dense pile keeps at least half those of the rank scale.

    Examples
    --------
    >>> auto_scale(3000)
    'balanced'
    """
    return "balanced"


def _clusterer_rule(s, n, m, workspace):
    cached = workspace is not None and workspace.has_neighbors(s.k, s.metric)
    return auto_clusterer(n, cached)


#: Field -> rule resolving a data-dependent value from (settings, n_rows, n_lenses, workspace);
#: the workspace (or None) only tells whether the shared neighbour graph is already built.
AUTO_RULES: dict = {
    "intervals": lambda s, n, m, ws: auto_intervals(
        n, m, s.overlap if not (isinstance(s.overlap, tuple) and len(s.overlap) != m)
        else _mean_overlap(s.overlap)),
    "min_size": lambda s, n, m, ws: auto_min_size(n),
    "clusterer": _clusterer_rule,
    "scale": lambda s, n, m, ws: auto_scale(n),
}


def is_auto(value):
    """Whether a setting's value is the word ``"auto"`` (resolved from the data at build time).

    Examples
    --------
    >>> is_auto("Auto"), is_auto(10)
    (True, False)
    """
    return isinstance(value, str) and value.strip().lower() == "auto"


_auto = is_auto


def _cli(flag, help, *, metavar=None, choices=None, kind="text"):
    """Field metadata for the generated CLI option (``kind``: text, int, float, choice, list)."""
    return {"cli": {"flag": flag, "help": help, "metavar": metavar, "choices": choices,
                    "kind": kind}}


def _per_lens(name, value, check):
    """A number, or a tuple of numbers (one per lens column), each checked."""
    if isinstance(value, str) and "," in value:
        value = [v for v in value.split(",") if v.strip()]
    if isinstance(value, (str, numbers.Number)):
        return check(name, value)
    try:
        items = tuple(check(name, v) for v in value)
    except TypeError:
        return check(name, value)
    if not items:
        raise ParameterError(
            f"The {name!r} parameter of Cover is empty; give one value, or one per lens column."
        )
    return items[0] if len(items) == 1 else items


def _intervals(name, value):
    if _auto(value):
        return "auto"
    return check_int(name, value, lo=1, context="Cover")


def _overlap(name, value):
    return check_float(name, value, lo=0.0, hi=1.0, hi_open=True, context="Cover")


#: The largest gap_bins: more bins than rows in a cover element are empty anyway.
MAX_GAP_BINS = 10_000

#: The most hole scales: each is a whole graph build, and the interval counts from N down to
#: N / 2 hold few distinct values for any cover a screen can use.
MAX_HOLE_SCALES = 32


@dataclass(frozen=True)
class GraphSettings(SettingsRecord):
    """Every setting of a graph build, validated once (see the module notes).

    Parameters
    ----------
    cover : {"interval", "ball"} or CoverBase, default="interval"
        The cover kind (:data:`lenswork.graph.COVERS`), or a cover object
        (then its own parameters rule and the fields below that belong to
        covers are not used).
    intervals : int, tuple of int or "auto", default="auto"
        Interval cover: intervals per lens (one value, or one per lens);
        ``"auto"`` follows the rows and lens columns (module notes).
    overlap : float or tuple of float, default=0.3
        Overlap fraction in [0, 1). Interval cover: the share of each interval
        shared with the next; ball cover: balls of radius ``eps / (1 - overlap)``
        (one value only).
    scale : {"auto", "balanced", "rank", "raw"}, default="auto"
        Cover scale: ranks (equal counts), raw lens values (divided by their
        range), or the mean of the two (``"balanced"``); ``"auto"`` resolves to
        ``"balanced"`` (:func:`auto_scale`, module notes).
    radius : float in (0, 1], default=0.1
        Ball cover: net spacing on the cover scale.
    centres : int, optional
        Ball cover: a net of this many centres instead of the spacing ``radius``.
    clusterer : {"auto", "graph", "single", "element-knn"} or estimator, default="auto"
        ``"auto"``: ``"graph"`` up to 50,000 rows or when the workspace holds
        the shared neighbour graph already, else ``"element-knn"``
        (:func:`auto_clusterer`).
    cutoff : float or {"auto", "fence", "none"}, default="auto"
        Longest neighbour edge the graph clusterer keeps.
    min_size : int or "auto", default="auto"
        Groups with fewer rows are fragments; ``"auto"``: ``round((ln n) ** 1.1)``
        in [3, 10] (module notes).
    k : int, default=15
        Neighbours of the shared graph.
    metric : {"euclidean", "manhattan", "chebyshev", "cosine"}, default="euclidean"
    fragments : {"attach", "report"}, default="attach"
    gap_bins : int, default=10
        Histogram bins of the single-linkage gap rule.
    hole_scales : int, default=4
        Multi-lens interval covers: graphs at this many interval counts from the
        cover's own down to half of it are built, and a hole counts as
        significant only when every one of them has it (see
        :func:`lenswork.build_graph`); 1 counts the holes of this cover alone.
    random_state : int, optional
        Seed of scikit-learn clusterers (default: the workspace's).

    Examples
    --------
    >>> s = GraphSettings(intervals=8)
    >>> s.intervals, s.replace(cover="ball", radius=0.2).cover_kind
    (8, 'ball')
    >>> r = GraphSettings().resolve(150, 2)
    >>> r.intervals, r.min_size
    (3, 6)
    >>> GraphSettings.from_dict(s.to_dict()) == s
    True
    """

    cover: object = field(default="interval", metadata=_cli(
        "--cover", "Cover kind: interval (product of intervals) or ball (balls around a greedy "
        "net of the lens values).", choices=tuple(COVERS), kind="choice"))
    intervals: object = field(default="auto", metadata=_cli(
        "--intervals", "Interval cover: intervals per lens, one value or one per lens column; "
        "auto: from the rows and lens columns (elements keep enough rows).",
        metavar="N[,N...]", kind="list"))
    overlap: object = field(default=0.3, metadata=_cli(
        "--overlap", "Overlap fraction in [0, 1): one value, or one per lens column (interval "
        "cover).", metavar="P[,P...]", kind="list"))
    scale: str = field(default="auto", metadata=_cli(
        "--cover-scale", "Lay the cover on ranks (equal counts), on raw lens values, or on "
        "their mean (balanced: dense piles and sparse tails both get intervals); auto: "
        "balanced.", choices=("auto", *COVER_SCALES), kind="choice"))
    radius: float = field(default=0.1, metadata=_cli(
        "--radius", "Ball cover: net spacing on the cover scale (lenses in [0, 1]).",
        metavar="EPS", kind="float"))
    centres: object = field(default=None, metadata=_cli(
        "--centres", "Ball cover: grow the net to this many centres instead of --radius.",
        metavar="N", kind="int"))
    clusterer: object = field(default="auto", metadata=_cli(
        "--clusterer", "graph: components of the shared k-NN graph in each element; single: "
        "single linkage cut at the first histogram gap (small data); element-knn: a k-NN graph "
        "built inside each element alone (the --scheduler graph's rule); auto: graph up to "
        "50,000 rows, element-knn above.",
        choices=("auto", *CLUSTERERS),
        kind="choice"))
    cutoff: object = field(default="auto", metadata=_cli(
        "--cutoff", "Longest k-NN edge kept; auto cuts only at a gap in the distance tail, "
        "fence at Tukey's upper fence, none keeps every edge.",
        metavar="auto|fence|none|FLOAT", kind="text"))
    min_size: object = field(default="auto", metadata=_cli(
        "--min-size", "Groups with fewer rows are fragments; auto: (ln n)^1.1 rows, 3 to 10.",
        metavar="N|auto", kind="text"))
    k: int = field(default=15, metadata=_cli(
        "-k", "Neighbours of the shared k-NN graph.", metavar="K", kind="int"))
    metric: str = field(default="euclidean", metadata=_cli(
        "--metric", "Distance of the neighbour graph and the clusterers.", choices=METRICS,
        kind="choice"))
    fragments: str = field(default="attach", metadata=_cli(
        "--fragments", "attach: join the nearest kept cluster within two k-NN hops and the "
        "cut-off; report: leave them out (rows in no node are listed).",
        choices=FRAGMENT_RULES, kind="choice"))
    gap_bins: int = field(default=10, metadata=_cli(
        "--gap-bins", "Histogram bins of the single-linkage gap rule.", metavar="N",
        kind="int"))
    hole_scales: int = field(default=4, metadata=_cli(
        "--hole-scales", "Multi-lens interval covers: a hole counts as significant when the "
        "graphs at this many interval counts, from the cover's down to half of it, all have "
        "it (1: this cover alone).", metavar="N", kind="int"))
    random_state: object = None

    def __post_init__(self):
        def put(name, value):
            object.__setattr__(self, name, value)

        cover = self.cover
        if isinstance(cover, CoverBase):
            if type(cover).kind not in COVERS:
                raise ParameterError(
                    f"The cover {type(cover).__name__} has no entry in COVERS; register its kind "
                    f"there first."
                )
            cover.check_params()  # a cover object's own parameters, checked here once
        else:
            put("cover", check_choice("cover", cover, tuple(COVERS), context="GraphSettings"))
        put("intervals", _per_lens("intervals", self.intervals, _intervals))
        put("overlap", _per_lens("overlap", self.overlap, _overlap))
        put("scale", "auto" if _auto(self.scale)
            else check_choice("scale", self.scale, COVER_SCALES, context="Cover"))
        put("radius", check_float("radius", self.radius, lo=0.0, hi=1.0, lo_open=True,
                                  context="BallCover"))
        if self.centres is not None:
            put("centres", check_int("centres", self.centres, lo=1, context="BallCover"))
        if self.cover_kind == "ball" and isinstance(self.overlap, tuple):
            raise ParameterError(
                f"The 'overlap' parameter of BallCover must be one float in [0.0, 1.0). Got "
                f"{self.overlap!r} instead."
            )
        put("clusterer", "auto" if _auto(self.clusterer) else check_clusterer(self.clusterer))
        put("cutoff", check_cutoff(self.cutoff))
        put("min_size", "auto" if _auto(self.min_size)
            else check_int("min_size", self.min_size, lo=1, context="build_graph"))
        put("k", check_int("k", self.k, lo=1, context="build_graph"))
        put("metric", check_choice("metric", self.metric, METRICS, context="build_graph"))
        put("fragments", check_choice("fragments", self.fragments, FRAGMENT_RULES,
                                      context="build_graph"))
        try:  # bounded: np.histogram allocates every bin (1e9 bins took 24 GB on 300 rows)
            put("gap_bins", check_int("gap_bins", self.gap_bins, lo=2, hi=MAX_GAP_BINS,
                                      context="build_graph"))
        except ParameterError as err:
            raise ParameterError(
                f"{err} The gap rule bins the merge heights of one cover element (at most one "
                f"per row); more than {MAX_GAP_BINS:,} bins leave nearly all empty and cost "
                f"memory (1e9 bins: 24 GB)."
            ) from None
        try:  # bounded: every scale is a whole graph build (1e9 scales ran out of memory)
            put("hole_scales", check_int("hole_scales", self.hole_scales, lo=1,
                                         hi=MAX_HOLE_SCALES, context="build_graph"))
        except ParameterError as err:
            raise ParameterError(
                f"{err} Each hole scale builds the graph again at a coarser interval count "
                f"(from the cover's down to half of it); {MAX_HOLE_SCALES} is more than a cover "
                f"of up to 64 intervals has distinct counts there."
            ) from None
        if self.random_state is not None:
            put("random_state", check_int("random_state", self.random_state, lo=0,
                                          context="build_graph"))

    # ---------------------------------------------------------------- derived
    @property
    def cover_kind(self):
        """The cover's kind name (a key of :data:`COVERS`)."""
        return self.cover if isinstance(self.cover, str) else type(self.cover).kind

    def make_cover(self):
        """A fresh (unfitted) cover object for these settings."""
        if isinstance(self.cover, CoverBase):
            return type(self.cover)(**self.cover.get_params())
        if self.cover == "ball":
            return COVERS["ball"](radius=self.radius, centres=self.centres,
                                  overlap=self.overlap, scale=self.scale)
        return COVERS["interval"](intervals=self.intervals, overlap=self.overlap,
                                  scale=self.scale)

    def resolve(self, n_rows, n_lenses, workspace=None):
        """Settings with every data-dependent value fixed for ``n_rows`` rows, ``n_lenses`` lenses.

        Runs the rules of :data:`AUTO_RULES` on the fields set to ``"auto"``
        (see the module notes) and checks per-lens values against ``n_lenses``.
        Settings with no ``"auto"`` left come back unchanged. ``workspace``
        (optional) tells the clusterer rule whether the shared neighbour graph
        is already built (:func:`auto_clusterer`).

        Examples
        --------
        >>> GraphSettings().resolve(1000, 1).intervals
        10
        >>> GraphSettings(min_size=4).resolve(150, 1).min_size
        4
        """
        for name, value in (("intervals", self.intervals), ("overlap", self.overlap)):
            if self.cover_kind == "interval" and isinstance(value, tuple) \
                    and len(value) != n_lenses:
                raise ParameterError(
                    f"The {name!r} parameter of Cover has {len(value)} values for {n_lenses} "
                    f"lens column(s). Give one value, or one per lens column."
                )
        changes = {name: rule(self, n_rows, n_lenses, workspace)
                   for name, rule in AUTO_RULES.items() if _auto(getattr(self, name))}
        return self.replace(**changes) if changes else self

    def auto_fields(self):
        """Names of the fields still set to ``"auto"`` (resolved at build time)."""
        return tuple(name for name in AUTO_RULES if _auto(getattr(self, name)))

    # ---------------------------------------------------------------- records
    def record_value(self, name, value):
        """One setting as JSON (a cover object as its kind and parameters; see ``to_dict``)."""
        if name == "cover" and isinstance(value, CoverBase):
            return {"kind": type(value).kind, **value.get_params()}
        if name == "clusterer":
            return clusterer_name(value)
        return list(value) if isinstance(value, tuple) else value

    @classmethod
    def from_dict(cls, doc):
        """Settings from :meth:`to_dict` output (unknown keys raise).

        A scikit-learn clusterer is recorded by name only and cannot be
        rebuilt: pass the estimator again with ``replace(clusterer=...)``.
        """
        doc = dict(doc)
        cls.check_names(doc)
        cover = doc.get("cover")
        if isinstance(cover, dict):
            params = dict(cover)
            kind = params.pop("kind", None)
            if kind not in COVERS:
                raise ParameterError(
                    f"Unknown cover kind {kind!r}; the kinds are: {', '.join(COVERS)}."
                )
            doc["cover"] = COVERS[kind](**params)
        if isinstance(doc.get("clusterer"), dict):
            raise ParameterError(
                "The recorded clusterer is a scikit-learn estimator, which a settings record "
                "cannot rebuild; pass it again with replace(clusterer=...)."
            )
        for key in ("intervals", "overlap"):
            if isinstance(doc.get(key), list):
                doc[key] = tuple(doc[key])
        return cls(**doc)


def grid_settings(settings, intervals, overlap):
    """The settings of one cell of an (intervals x overlap) grid.

    For the interval cover the cell sets ``intervals`` and ``overlap``. For
    the ball cover an interval count ``N`` sets the net spacing
    ``radius = 1 / N`` (on the rank scale an interval of N has about that
    width) and ``overlap`` the ball growth, so the same grid sweeps either
    cover from coarse to fine.

    Examples
    --------
    >>> grid_settings(GraphSettings(cover="ball"), 5, 0.2).radius
    0.2
    """
    if settings.cover_kind == "ball":
        if isinstance(settings.cover, CoverBase):
            cover = type(settings.cover)(**{**settings.cover.get_params(),
                                             "radius": 1.0 / intervals, "overlap": overlap})
            return settings.replace(cover=cover)
        return settings.replace(radius=1.0 / intervals, overlap=overlap, centres=None)
    if isinstance(settings.cover, CoverBase):
        cover = type(settings.cover)(**{**settings.cover.get_params(),
                                         "intervals": intervals, "overlap": overlap})
        return settings.replace(cover=cover)
    return settings.replace(intervals=intervals, overlap=overlap)

