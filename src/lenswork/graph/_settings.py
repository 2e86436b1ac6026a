"""GraphSettings: every setting of a graph build, in one frozen object validated once.

The dataclass is the one place that defines the graph settings, their
defaults, their checks and their command-line options (the ``cli`` entry of
each field's metadata, read by :func:`lenswork.cli._common.graph_options`).
Everything that builds graphs -- :func:`~lenswork.build_graph`, the structure
probe, the stability map, the bootstrap and the comparison of views -- takes a
``GraphSettings``; a parameter sweep is a list of ``settings.replace(...)``.

Values that depend on the data (a future ``"auto"`` interval count that
follows the number of rows, say) are resolved by :meth:`GraphSettings.resolve`
from ``(n_rows, n_lenses)`` just before a build; add such a rule to
:data:`AUTO_RULES` (field name -> function of ``(settings, n_rows, n_lenses)``)
and allow the word ``"auto"`` in the field's checker.
"""

from __future__ import annotations

import numbers
from dataclasses import dataclass, field, fields
from dataclasses import replace as _dc_replace

from .._errors import ParameterError
from .._validation import check_choice, check_float, check_int
from ..workspace import METRICS
from ._cluster import (
    CLUSTERERS,
    FRAGMENT_RULES,
    check_clusterer,
    check_cutoff,
    clusterer_name,
)
from ._cover import COVER_SCALES, COVERS, CoverBase

__all__ = ["AUTO_RULES", "GraphSettings", "grid_settings"]

#: Field -> rule resolving a data-dependent value from (settings, n_rows, n_lenses). None yet.
AUTO_RULES: dict = {}


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
    return check_int(name, value, lo=1, context="Cover")


def _overlap(name, value):
    return check_float(name, value, lo=0.0, hi=1.0, hi_open=True, context="Cover")


@dataclass(frozen=True)
class GraphSettings:
    """Every setting of a graph build, validated once (see the module notes).

    Parameters
    ----------
    cover : {"interval", "ball"} or CoverBase, default="interval"
        The cover kind (:data:`lenswork.graph.COVERS`), or a cover object
        (then its own parameters rule and the fields below that belong to
        covers are not used).
    intervals : int or tuple of int, default=10
        Interval cover: intervals per lens (one value, or one per lens).
    overlap : float or tuple of float, default=0.3
        Overlap fraction in [0, 1). Interval cover: the share of each interval
        shared with the next; ball cover: balls of radius ``eps / (1 - overlap)``
        (one value only).
    scale : {"rank", "raw"}, default="rank"
        Cover scale: ranks (equal counts) or raw lens values.
    radius : float in (0, 1], default=0.1
        Ball cover: net spacing on the cover scale.
    centres : int, optional
        Ball cover: a net of this many centres instead of the spacing ``radius``.
    clusterer : {"graph", "single", "element-knn"} or scikit-learn clusterer, default="graph"
    cutoff : float or {"auto", "fence", "none"}, default="auto"
        Longest neighbour edge the graph clusterer keeps.
    min_size : int, default=10
        Groups with fewer rows are fragments.
    k : int, default=15
        Neighbours of the shared graph.
    metric : {"euclidean", "manhattan", "chebyshev", "cosine"}, default="euclidean"
    fragments : {"attach", "report"}, default="attach"
    gap_bins : int, default=10
        Histogram bins of the single-linkage gap rule.
    random_state : int, optional
        Seed of scikit-learn clusterers (default: the workspace's).

    Examples
    --------
    >>> s = GraphSettings(intervals=8)
    >>> s.intervals, s.replace(cover="ball", radius=0.2).cover_kind
    (8, 'ball')
    >>> GraphSettings.from_dict(s.to_dict()) == s
    True
    """

    cover: object = field(default="interval", metadata=_cli(
        "--cover", "Cover kind: interval (product of intervals) or ball (balls around a greedy "
        "net of the lens values).", choices=tuple(COVERS), kind="choice"))
    intervals: object = field(default=10, metadata=_cli(
        "--intervals", "Interval cover: intervals per lens, one value or one per lens column.",
        metavar="N[,N...]", kind="list"))
    overlap: object = field(default=0.3, metadata=_cli(
        "--overlap", "Overlap fraction in [0, 1): one value, or one per lens column (interval "
        "cover).", metavar="P[,P...]", kind="list"))
    scale: str = field(default="rank", metadata=_cli(
        "--cover-scale", "Lay the cover on ranks (equal counts) or on raw lens values.",
        choices=COVER_SCALES, kind="choice"))
    radius: float = field(default=0.1, metadata=_cli(
        "--radius", "Ball cover: net spacing on the cover scale (lenses in [0, 1]).",
        metavar="EPS", kind="float"))
    centres: object = field(default=None, metadata=_cli(
        "--centres", "Ball cover: grow the net to this many centres instead of --radius.",
        metavar="N", kind="int"))
    clusterer: object = field(default="graph", metadata=_cli(
        "--clusterer", "graph: components of the shared k-NN graph in each element; single: "
        "single linkage cut at the first histogram gap (small data); element-knn: a k-NN graph "
        "built inside each element alone (the --scheduler graph's rule).",
        choices=tuple(CLUSTERERS),
        kind="choice"))
    cutoff: object = field(default="auto", metadata=_cli(
        "--cutoff", "Longest k-NN edge kept; auto cuts only at a gap in the distance tail, "
        "fence at Tukey's upper fence, none keeps every edge.",
        metavar="auto|fence|none|FLOAT", kind="text"))
    min_size: int = field(default=10, metadata=_cli(
        "--min-size", "Groups with fewer rows are fragments.", metavar="N", kind="int"))
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
        put("scale", check_choice("scale", self.scale, COVER_SCALES, context="Cover"))
        put("radius", check_float("radius", self.radius, lo=0.0, hi=1.0, lo_open=True,
                                  context="BallCover"))
        if self.centres is not None:
            put("centres", check_int("centres", self.centres, lo=1, context="BallCover"))
        if self.cover_kind == "ball" and isinstance(self.overlap, tuple):
            raise ParameterError(
                f"The 'overlap' parameter of BallCover must be one float in [0.0, 1.0). Got "
                f"{self.overlap!r} instead."
            )
        put("clusterer", check_clusterer(self.clusterer))
        put("cutoff", check_cutoff(self.cutoff))
        put("min_size", check_int("min_size", self.min_size, lo=1, context="build_graph"))
        put("k", check_int("k", self.k, lo=1, context="build_graph"))
        put("metric", check_choice("metric", self.metric, METRICS, context="build_graph"))
        put("fragments", check_choice("fragments", self.fragments, FRAGMENT_RULES,
                                      context="build_graph"))
        put("gap_bins", check_int("gap_bins", self.gap_bins, lo=2, context="build_graph"))
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

    def resolve(self, n_rows, n_lenses):
        """Settings with every data-dependent value fixed for ``n_rows`` rows, ``n_lenses`` lenses.

        Runs the rules of :data:`AUTO_RULES` (none at present, so this returns
        ``self``) and checks per-lens values against ``n_lenses``.
        """
        for name, value in (("intervals", self.intervals), ("overlap", self.overlap)):
            if self.cover_kind == "interval" and isinstance(value, tuple) \
                    and len(value) != n_lenses:
                raise ParameterError(
                    f"The {name!r} parameter of Cover has {len(value)} values for {n_lenses} "
                    f"lens column(s). Give one value, or one per lens column."
                )
        changes = {name: rule(self, n_rows, n_lenses) for name, rule in AUTO_RULES.items()
                   if getattr(self, name) == "auto"}
        return self.replace(**changes) if changes else self

    def replace(self, **changes):
        """A copy with ``changes`` applied (and validated again).

        Examples
        --------
        >>> [s.intervals for s in (GraphSettings().replace(intervals=n) for n in (6, 10))]
        [6, 10]
        """
        unknown = sorted(set(changes) - set(self.field_names()))
        if unknown:
            raise ParameterError(
                f"GraphSettings has no setting {unknown[0]!r}; the settings are: "
                f"{', '.join(self.field_names())}."
            )
        return _dc_replace(self, **changes)

    @classmethod
    def field_names(cls):
        """Names of every setting, in order."""
        return tuple(f.name for f in fields(cls))

    @classmethod
    def coerce(cls, settings=None, **overrides):
        """``settings`` (GraphSettings, dict or None) with ``overrides`` (None values skipped)."""
        if settings is None:
            base = cls()
        elif isinstance(settings, GraphSettings):
            base = settings
        elif isinstance(settings, dict):
            base = cls.from_dict(settings)
        else:
            raise ParameterError(
                f"The 'settings' parameter must be a GraphSettings, a dict of settings or None. "
                f"Got {type(settings).__name__} instead."
            )
        changes = {k: v for k, v in overrides.items() if v is not None}
        return base.replace(**changes) if changes else base

    # ---------------------------------------------------------------- records
    def to_dict(self):
        """Every setting as plain JSON values (a cover object as its kind and parameters)."""
        out = {}
        for f in fields(self):
            value = getattr(self, f.name)
            if f.name == "cover" and isinstance(value, CoverBase):
                value = {"kind": type(value).kind, **value.get_params()}
            elif f.name == "clusterer":
                value = clusterer_name(value)
            elif isinstance(value, tuple):
                value = list(value)
            out[f.name] = value
        return out

    @classmethod
    def from_dict(cls, doc):
        """Settings from :meth:`to_dict` output (unknown keys raise).

        A scikit-learn clusterer is recorded by name only and cannot be
        rebuilt: pass the estimator again with ``replace(clusterer=...)``.
        """
        doc = dict(doc)
        unknown = sorted(set(doc) - set(cls.field_names()))
        if unknown:
            raise ParameterError(
                f"GraphSettings has no setting {unknown[0]!r}; the settings are: "
                f"{', '.join(cls.field_names())}."
            )
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

