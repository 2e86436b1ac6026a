"""Which data columns set a graph feature's rows apart.

For a loop, flare, branch, path or component of a :class:`~lenswork.LensGraph`
(or any set of nodes or rows a user names), every data column -- the features
of the point cloud and its passthrough columns, numeric or categorical -- is
compared between the feature's rows and the rows it is set against:

=================  ==========================================================
column             what is reported
=================  ==========================================================
numeric            Cliff's delta (the rank-biserial correlation, ``2 U / (n1
                   n2) - 1`` from the Mann-Whitney U; robust to scale), the
                   standardised mean difference (Cohen's d, pooled SD), the
                   two-sample Kolmogorov-Smirnov test (exact p-value of
                   ``scipy.stats.ks_2samp`` up to ``n1 n2 = 1e6``, Smirnov's
                   asymptotic law above)
categorical        Cramér's V and the chi-square test of the 2 x levels table
                   (``scipy.stats.chi2_contingency``, no continuity
                   correction); the level most over-represented in the feature
every test         the Benjamini-Hochberg (1995) step-up q-value over every
                   (feature, column) test of the call
along the feature  flare / limb / path: Spearman's rho with the position along
                   it (distance from the attachment node: in lens space when the
                   lens values are given, else graph hops); loop: the rank
                   circular-linear correlation with the angle around the
                   cycle (multiple correlation of the column's ranks on cos
                   and sin of the angle, Mardia 1976) and the node where the
                   column peaks
=================  ==========================================================

``against="rest"`` compares with every other row of the graph;
``against="neighbours"`` with the rows of the nodes within ``hops`` graph hops
of the feature that are not in it: a flare is then compared with the part of
the loop it leaves from, so a column that only marks the place on the loop
(the time of day, say) does not rank high.

The rank of a column is by its effect size: ``|Cliff's delta|`` for numeric
columns, Cramér's V for categorical ones (both 0 for no difference and 1 for
complete separation), ties broken by the p-value.

A column is *significant* (starred) only when its q-value is at most
``alpha`` **and** its effect is at least small (:data:`EFFECT_FLOOR`):
``|delta| >= 0.147`` (Romano et al. 2006 [5]_) or ``V >= 0.1`` (Cohen 1988
[6]_). On thousands of rows a test finds differences too small to matter
(a KS test gives q = 3e-55 for a delta of -0.04); the floor keeps them
unstarred.

Which features by default: the components and the significant features of the
graph summary (loops, flares, limbs and branch points above the threshold);
``all_features=True`` adds the small ones and the paths. A feature named --
a kind (``"flare"``: every flare) or a label (``"flare:3"``) -- is tested
whatever its significance; the feature lines show it, with the threshold a
small one missed.

References
----------
.. [1] Y. Benjamini and Y. Hochberg, "Controlling the false discovery rate: a
   practical and powerful approach to multiple testing", JRSS B 57, 1995.
.. [2] N. Cliff, "Dominance statistics: ordinal analyses to answer ordinal
   questions", Psychological Bulletin 114, 1993.
.. [3] H. Cramér, *Mathematical Methods of Statistics*, 1946.
.. [4] K. V. Mardia, "Linear-circular correlation coefficients and rhythmometry",
   Biometrika 63, 1976.
.. [5] J. Romano, J. D. Kromrey, J. Coraggio and J. Skowronek, "Appropriate
   statistics for ordinal level data", annual meeting of the Florida
   Association of Institutional Research, 2006.
.. [6] J. Cohen, *Statistical Power Analysis for the Behavioral Sciences*,
   2nd ed., 1988.
"""

from __future__ import annotations

import io
import math
import re
from dataclasses import asdict, dataclass, field

import numpy as np
import scipy.sparse as sp
from scipy import stats
from scipy.sparse.csgraph import dijkstra

from ._errors import InputError, ParameterError
from ._frame import data_frame
from ._io import csv_writer, write_text
from ._json import dumps
from ._validation import check_choice, check_float, check_int
from ._version import __version__
from .data import MISSING_TEXT as DATA_MISSING_TEXT
from .data import PointCloud
from .graph import GraphFeature, LensGraph

__all__ = [
    "AGAINST",
    "EFFECT_FLOOR",
    "FEATURE_KINDS",
    "KS_EXACT_MAX",
    "MISSING_TEXT",
    "ColumnContrast",
    "ContrastResult",
    "benjamini_hochberg",
    "circular_rank_correlation",
    "cliffs_delta",
    "contrast_columns",
    "cramers_v",
    "node_column_values",
]

#: What a feature's rows can be set against.
AGAINST = ("rest", "neighbours")
#: Feature kinds of a graph summary, in the order they are listed.
FEATURE_KINDS = ("component", "loop", "branch", "flare", "path", "limb")
#: Smallest effect a starred column must show: |Cliff's delta| for numeric columns (the
#: "small" threshold of Romano et al. 2006, 0.147) and Cramér's V for categorical ones (Cohen
#: 1988's small effect w = 0.1; for the 2 x k table of a feature against the rest, V = w).
EFFECT_FLOOR = {"numeric": 0.147, "categorical": 0.1}
#: Node statistics of :func:`node_column_values` for numeric columns.
NODE_STATS = ("mean", "median", "min", "max", "std")
_OTHER = "(other levels)"


# ---------------------------------------------------------------- statistics
def benjamini_hochberg(pvalues):
    """Benjamini-Hochberg (1995) step-up adjusted p-values (q-values).

    ``q_(i) = min_{j >= i} min(1, m p_(j) / j)`` over the sorted p-values; a
    hypothesis is rejected at false discovery rate ``alpha`` when its q-value is
    ``<= alpha``. Missing p-values (NaN) stay NaN and do not count in ``m``.

    Parameters
    ----------
    pvalues : array-like of float in [0, 1]

    Returns
    -------
    ndarray of float, same shape

    Notes
    -----
    O(m log m) for m p-values (one sort, one running minimum from the end).

    References
    ----------
    .. [1] Y. Benjamini and Y. Hochberg, JRSS B 57, 1995.

    Examples
    --------
    >>> benjamini_hochberg([0.01, 0.04, 0.03, np.nan]).round(3).tolist()
    [0.03, 0.04, 0.04, nan]
    """
    p = np.asarray(pvalues, dtype=np.float64)
    out = np.full(p.shape, np.nan)
    flat = p.ravel()
    ok = np.flatnonzero(np.isfinite(flat))
    if ok.size == 0:
        return out
    if (flat[ok] < 0).any() or (flat[ok] > 1).any():
        raise ParameterError("p-values must lie in [0, 1]; got a value outside it.")
    m = ok.size
    order = ok[np.argsort(flat[ok], kind="stable")]
    scaled = flat[order] * m / np.arange(1, m + 1)
    q = np.minimum(np.minimum.accumulate(scaled[::-1])[::-1], 1.0)
    res = out.ravel()
    res[order] = q
    return res.reshape(p.shape)


def cliffs_delta(x, y):
    """Cliff's delta, ``P(X > Y) - P(X < Y)``, from the Mann-Whitney U of the pooled ranks.

    Equal to the rank-biserial correlation ``2 U / (n_x n_y) - 1`` (ties count
    one half), in [-1, 1]: 1 when every x exceeds every y. Invariant under any
    increasing transformation of the values.

    Examples
    --------
    >>> float(cliffs_delta([3, 4, 5], [1, 2, 3]))
    0.8888888888888888
    """
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    n1, n2 = x.size, y.size
    ranks = stats.rankdata(np.concatenate([x, y]))
    u1 = ranks[:n1].sum() - n1 * (n1 + 1) / 2.0
    return 2.0 * u1 / (n1 * n2) - 1.0


def cramers_v(table):
    """Cramér's V of a contingency table: ``sqrt(chi2 / (n (min(r, c) - 1)))``, no correction.

    Examples
    --------
    >>> round(float(cramers_v([[10, 0], [0, 10]])), 3)
    1.0
    """
    table = np.asarray(table, dtype=np.float64)
    chi2 = stats.chi2_contingency(table, correction=False)[0]
    k = min(table.shape) - 1
    return math.sqrt(chi2 / (table.sum() * k)) if k > 0 else float("nan")


def circular_rank_correlation(angle, x):
    """Rank circular-linear correlation of ``x`` with an angle, and where ``x`` peaks.

    The multiple correlation of the ranks of ``x`` on ``cos(angle)`` and
    ``sin(angle)``: ``R^2 = (r_c^2 + r_s^2 - 2 r_c r_s r_cs) / (1 - r_cs^2)`` with
    ``r_c = corr(rank x, cos)``, ``r_s = corr(rank x, sin)``, ``r_cs = corr(cos,
    sin)`` (Mardia 1976, on ranks), in [0, 1] and independent of where the
    angle starts. ``n R^2`` is compared with the chi-square law on 2 degrees of
    freedom for the p-value (its large-sample null law, common practice for a
    regression on two terms).

    Returns
    -------
    r : float
    pvalue : float
    peak : float
        Angle (radians) at which the fitted ``a + b cos + c sin`` of the ranks
        is largest.

    Examples
    --------
    >>> angle = np.linspace(0, 2 * np.pi, 200, endpoint=False)
    >>> r, p, peak = circular_rank_correlation(angle, np.cos(angle - 1.0))
    >>> round(r, 3), bool(p < 1e-10), round(peak, 1)
    (0.993, True, 1.0)
    """
    angle = np.asarray(angle, dtype=np.float64)
    rx = stats.rankdata(np.asarray(x, dtype=np.float64))
    c, s = np.cos(angle), np.sin(angle)
    if np.ptp(rx) == 0 or np.ptp(c) == 0 and np.ptp(s) == 0:
        return float("nan"), float("nan"), float("nan")

    def corr(a, b):
        sa, sb = a.std(), b.std()
        return 0.0 if sa == 0 or sb == 0 else float(np.mean((a - a.mean()) * (b - b.mean())) /
                                                    (sa * sb))

    rc, rs, rcs = corr(rx, c), corr(rx, s), corr(c, s)
    r2 = (rc * rc + rs * rs - 2 * rc * rs * rcs) / max(1.0 - rcs * rcs, 1e-12)
    r2 = min(max(r2, 0.0), 1.0)
    design = np.column_stack([np.ones_like(c), c, s])
    coef = np.linalg.lstsq(design, rx, rcond=None)[0]
    peak = float(np.arctan2(coef[2], coef[1]) % (2 * np.pi))
    return math.sqrt(r2), float(stats.chi2.sf(angle.size * r2, 2)), peak


# ---------------------------------------------------------------- columns
#: Text cells read as missing: the tokens lenswork.data reads as missing in a table, and "nan".
MISSING_TEXT = DATA_MISSING_TEXT | {"nan"}


def _is_missing(value):
    if value is None:
        return True
    if isinstance(value, float) and math.isnan(value):
        return True
    if isinstance(value, str) and value.strip().lower() in MISSING_TEXT:
        return True
    return type(value).__name__ in ("NAType", "NaTType")


@dataclass
class _Column:
    name: str
    role: str  # "feature" or "passthrough"
    kind: str  # "numeric" or "categorical"
    values: np.ndarray  # float64 (NaN missing) or int codes (-1 missing)
    levels: tuple = ()
    note: str = ""
    sorted: object = None  # _SortedColumn, made on first use


def _numeric_or_none(col):
    """float64 values with NaN where missing, or None when a cell is not a number."""
    arr = np.asarray(col)
    if arr.dtype.kind in "biuf":
        return arr.astype(np.float64)
    out = np.empty(arr.size, dtype=np.float64)
    for i, v in enumerate(arr.ravel()):
        if _is_missing(v):
            out[i] = np.nan
            continue
        try:
            out[i] = float(v)
        except (TypeError, ValueError):
            return None
    return out


def _categorical(name, role, col, max_levels, n_rows):
    cells = ["" if _is_missing(v) else str(v) for v in np.asarray(col, dtype=object).ravel()]
    present = [c for c in cells if c]
    levels, counts = np.unique(np.array(present, dtype=object), return_counts=True) \
        if present else (np.array([], dtype=object), np.array([], dtype=np.int64))
    order = np.lexsort((levels.astype(str), -counts))
    levels, counts = [str(x) for x in levels[order]], counts[order]
    note = ""
    if len(levels) > max_levels:
        if len(levels) >= 0.5 * max(len(present), 1):
            return _Column(name, role, "categorical", np.full(n_rows, -1), tuple(levels),
                           note=f"skipped: {len(levels):,} levels in {len(present):,} rows "
                           f"(an identifier?); a chi-square test needs repeated levels")
        kept = levels[:max_levels - 1]
        note = (f"{len(levels):,} levels: the {max_levels - 1} most frequent kept, the other "
                f"{len(levels) - len(kept):,} pooled as {_OTHER!r} (raise max_levels to keep more)")
        levels = [*kept, _OTHER]
    index = {lev: i for i, lev in enumerate(levels)}
    other = index.get(_OTHER, -1)
    codes = np.array([-1 if not c else index.get(c, other) for c in cells], dtype=np.int64)
    return _Column(name, role, "categorical", codes, tuple(levels), note=note)


def _columns(cloud, columns, categorical, max_levels):
    feats = list(cloud.feature_names)
    passthrough = [str(k) for k in cloud.passthrough if str(k) != cloud.id_name]
    every = feats + passthrough
    if columns is None:
        chosen = every
    else:
        chosen = [columns] if isinstance(columns, str) else [str(c) for c in columns]
        for c in chosen:
            if c not in every:
                raise ParameterError(
                    f"No data column {c!r}. Columns: {', '.join(every)}."
                )
        if not chosen:
            raise ParameterError("The 'columns' parameter is empty; give at least one column.")
    cats = set([categorical] if isinstance(categorical, str) else (categorical or ()))
    for c in cats:
        if c not in every:
            raise ParameterError(
                f"Column {c!r} named in 'categorical' is not a data column. Columns: "
                f"{', '.join(every)}."
            )
    out = []
    for name in dict.fromkeys(chosen):
        if name in feats:
            values = cloud.X[:, feats.index(name)]
            role = "feature"
        else:
            values = cloud.passthrough[name]
            role = "passthrough"
        numeric = None if name in cats else _numeric_or_none(values)
        if numeric is None:
            out.append(_categorical(name, role, values, max_levels, cloud.n))
        else:
            out.append(_Column(name, role, "numeric", numeric))
    return out


# ---------------------------------------------------------------- features
@dataclass(frozen=True)
class _Feature:
    label: str
    kind: str
    nodes: tuple
    inside: np.ndarray  # bool (n_rows,)
    attached_to: int | None = None
    significance: float | None = None
    significant: bool | None = None
    threshold: float | None = None


def _rows_of_nodes(graph, nodes):
    nodes = np.asarray(list(nodes), dtype=np.int64)
    if nodes.size == 0:
        return np.zeros(graph.n_rows, dtype=bool)
    return np.asarray(graph.membership[:, nodes].sum(axis=1)).ravel() > 0


def _check_nodes(graph, nodes, what):
    nodes = [int(v) for v in nodes]
    bad = [v for v in nodes if not 0 <= v < graph.n_nodes]
    if bad:
        raise ParameterError(
            f"{what} names node {bad[0]}, but the graph has nodes 0 to {graph.n_nodes - 1}."
        )
    return tuple(dict.fromkeys(nodes))


def _default_feature(f, all_features):
    """Tested unless named: components and significant features (every one with all_features)."""
    return all_features or f.kind == "component" or f.significant is True


def _from_summary(graph, f, label):
    s = graph.summary()
    nodes, joins = tuple(int(v) for v in f.nodes), f.attached_to
    if f.kind == "limb" and joins is None:  # its rows: the nodes from its tip up to the join
        path = s.tail_path(f)
        nodes, joins = path[:-1], path[-1]
    return _Feature(label, f.kind, nodes, _rows_of_nodes(graph, nodes), joins,
                    f.significance, f.significant, s.needed(f))


def _resolve_features(graph, feature, nodes, rows, all_features=False):
    """-> (list of _Feature, explicit?, number of small features left out)."""
    labelled = graph.summary().labelled()
    left_out = sum(1 for _, f in labelled if not _default_feature(f, all_features))
    out = []
    if nodes is not None:
        nodes = _check_nodes(graph, nodes, "The 'nodes' parameter")
        out.append(_Feature("nodes", "nodes", nodes, _rows_of_nodes(graph, nodes)))
    if rows is not None:
        arr = np.asarray(rows)
        if arr.dtype == bool:
            if arr.shape != (graph.n_rows,):
                raise ParameterError(
                    f"A boolean 'rows' mask needs one entry per graph row ({graph.n_rows}); "
                    f"got shape {arr.shape}."
                )
            inside = arr.copy()
        else:
            idx = np.asarray(arr, dtype=np.int64).ravel()
            bad = idx[(idx < 0) | (idx >= graph.n_rows)]
            if bad.size:
                raise ParameterError(
                    f"The 'rows' parameter names row position {int(bad[0])}; positions run from "
                    f"0 to {graph.n_rows - 1}."
                )
            inside = np.zeros(graph.n_rows, dtype=bool)
            inside[idx] = True
        touched = np.flatnonzero(np.asarray(graph.membership[inside].sum(axis=0)).ravel() > 0)
        out.append(_Feature("rows", "rows", tuple(int(v) for v in touched), inside))
    if feature is None and not out:
        return [_from_summary(graph, f, lab) for lab, f in labelled
                if _default_feature(f, all_features)], False, left_out
    items = [] if feature is None else (
        list(feature) if isinstance(feature, (list, tuple)) else [feature])
    for item in items:
        if isinstance(item, GraphFeature):
            lab = next((lab for lab, f in labelled if f == item), f"{item.kind}")
            out.append(_from_summary(graph, item, lab))
            continue
        text = str(item).strip().lower()
        if text in FEATURE_KINDS:
            hits = [_from_summary(graph, f, lab) for lab, f in labelled if f.kind == text]
            if not hits:
                raise ParameterError(f"The graph has no {text} feature (feature {item!r}).")
            out += hits
            continue
        m = re.fullmatch(r"nodes\s*:\s*([\d\s,]+)", text)
        if m:
            ids = [int(x) for x in m.group(1).replace(" ", "").split(",") if x]
            ids = _check_nodes(graph, ids, f"Feature {item!r}")
            out.append(_Feature(f"nodes:{','.join(map(str, ids))}", "nodes", ids,
                                _rows_of_nodes(graph, ids)))
            continue
        hit = next((f for lab, f in labelled if lab == text.replace(" ", "")), None)
        if hit is None:
            names = ", ".join(lab for lab, _ in labelled[:12])
            more = " ..." if len(labelled) > 12 else ""
            raise ParameterError(
                f"No graph feature {item!r}. Name one as kind:i (1-based within its kind) or "
                f"nodes:3,5,7, or give a kind ({', '.join(FEATURE_KINDS)}). This graph has: "
                f"{names}{more}."
            )
        out.append(_from_summary(graph, hit, text.replace(" ", "")))
    return out, True, 0


def _against_rows(graph, feat, against, hops):
    if against == "rest":
        return ~feat.inside
    if not feat.nodes:
        return np.zeros(graph.n_rows, dtype=bool)
    dist = dijkstra(graph.adjacency(), directed=False, indices=list(feat.nodes),
                    unweighted=True, limit=hops + 0.5, min_only=True)
    own = set() if feat.kind == "rows" else set(feat.nodes)  # a row set: its nodes' other rows
    near = [v for v in np.flatnonzero(np.isfinite(dist)) if v not in own]
    return _rows_of_nodes(graph, near) & ~feat.inside


# ---------------------------------------------------------------- position along a feature
def _lens_array(lenses, n_rows):
    if lenses is None:
        return None
    if hasattr(lenses, "values") and callable(lenses.values):
        arr = np.asarray(lenses.values(), dtype=np.float64)
    else:
        arr = np.asarray(lenses, dtype=np.float64)
    arr = arr.reshape(arr.shape[0], -1) if arr.ndim else arr
    if arr.ndim != 2 or arr.shape[0] != n_rows:
        raise ParameterError(
            f"The 'lenses' values must have one row per graph row ({n_rows}); got shape "
            f"{np.shape(arr)}."
        )
    if not np.isfinite(arr).all():
        raise InputError("The 'lenses' values have missing values; give finite lens values.")
    return arr


def _position(graph, feat, lens):
    """Row position along a flare / path (float) or angle around a loop; None otherwise."""
    rows = np.flatnonzero(feat.inside)
    if feat.kind == "loop" and len(feat.nodes) >= 3:
        L = len(feat.nodes)
        ang = 2 * np.pi * np.arange(L) / L
        sub = graph.membership[rows][:, list(feat.nodes)].astype(np.float64)
        c, s = np.asarray(sub @ np.cos(ang)).ravel(), np.asarray(sub @ np.sin(ang)).ravel()
        return "angle", np.arctan2(s, c) % (2 * np.pi)
    if feat.kind not in ("flare", "limb", "path"):
        return None, None
    anchor = feat.attached_to if feat.kind in ("flare", "limb") else feat.nodes[0]
    if lens is not None:
        sd = lens.std(axis=0)
        sd[sd == 0] = 1.0
        centre = lens[graph.members(anchor)].mean(axis=0)
        return "lens distance", np.sqrt((((lens[rows] - centre) / sd) ** 2).sum(axis=1))
    dist = dijkstra(graph.adjacency(), directed=False, indices=anchor, unweighted=True)
    nodes = list(feat.nodes)
    sub = graph.membership[rows][:, nodes].astype(np.float64)
    return "hops", np.asarray(sub @ dist[nodes]).ravel() / np.asarray(sub.sum(axis=1)).ravel()


# ---------------------------------------------------------------- result
@dataclass(frozen=True)
class ColumnContrast:
    """One data column compared between a feature's rows and the rows it is set against.

    Attributes
    ----------
    feature : str
        Feature label (``flare:2``, ``loop:1``, ``nodes:3,5``, ``rows``...).
    kind : str
    column : str
    role : {"feature", "passthrough"}
    type : {"numeric", "categorical"}
    rank : int
        1 = the column that sets the feature apart most (within the feature).
    effect : float
        ``|cliffs_delta|`` (numeric) or ``cramers_v`` (categorical), in [0, 1].
    cliffs_delta, smd : float
        Numeric only (NaN otherwise): Cliff's delta (feature vs against) and the
        standardised mean difference (Cohen's d, pooled SD).
    mean_in, mean_out : float
        Numeric only: means in the cloud's units (after its scaling).
    level : str
        Categorical only: the level most over-represented in the feature.
    share_in, share_out : float
        Categorical only: that level's share inside and outside.
    test : {"ks", "chi2"}
    statistic, pvalue, qvalue : float
        Test statistic, p-value and Benjamini-Hochberg q-value.
    significant : bool
        ``qvalue <= alpha`` and ``large_enough``.
    large_enough : bool
        The effect reaches :data:`EFFECT_FLOOR` (a small effect or more).
    n_in, n_out : int
        Non-missing rows compared on each side.
    along, along_r, along_p : str, float, float
        How the column changes along the feature: ``"spearman"`` (flare / path;
        ``along_r`` is Spearman's rho with the distance from the attachment
        node), ``"circular"`` (loop; the rank circular-linear correlation) or
        ``""`` (no order along the feature).
    along_peak_node : int or None
        Loop only: the loop node nearest to where the column peaks.

    Examples
    --------
    >>> from lenswork import PointCloud, build_graph
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(300, 2))
    >>> cloud = PointCloud.from_array(X, feature_names=["a", "b"])
    >>> g = build_graph(X[:, 0], cloud, intervals=4)
    >>> row = contrast_columns(g, cloud, nodes=[0]).rows[0]
    >>> row.column, row.test, row.rank
    ('a', 'ks', 1)
    """

    feature: str
    kind: str
    column: str
    role: str
    type: str
    rank: int
    effect: float
    cliffs_delta: float
    smd: float
    mean_in: float
    mean_out: float
    level: str
    share_in: float
    share_out: float
    test: str
    statistic: float
    pvalue: float
    qvalue: float
    significant: bool
    n_in: int
    n_out: int
    large_enough: bool = True
    along: str = ""
    along_r: float = float("nan")
    along_p: float = float("nan")
    along_peak_node: int | None = None


@dataclass(frozen=True)
class ContrastResult:
    """The column contrasts of one or more graph features.

    Attributes
    ----------
    rows : tuple of ColumnContrast
        Ordered by feature, then rank.
    features : tuple of dict
        Per feature: ``label, kind, nodes, n_rows, n_against, attached_to, position``.
    skipped : tuple of dict
        ``{"feature", "column", "reason"}`` for every feature or column left out.
    notes : tuple of str
        Soft remarks (pooled levels, missing values dropped).
    params : dict
        ``against, hops, alpha, max_levels``, library version.

    Examples
    --------
    >>> from lenswork import PointCloud, build_graph
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(300, 2))
    >>> cloud = PointCloud.from_array(X, feature_names=["a", "b"])
    >>> g = build_graph(X[:, 0], cloud, intervals=4)
    >>> res = contrast_columns(g, cloud, nodes=[0])
    >>> len(res.rows), res.top("nodes", 1), res.significant_features()
    (2, ['a'], ['nodes'])
    """

    rows: tuple
    features: tuple
    skipped: tuple = ()
    notes: tuple = ()
    params: dict = field(default_factory=dict)

    def for_feature(self, label):
        """The rows of one feature, by rank."""
        if label not in {f["label"] for f in self.features}:
            names = ", ".join(f["label"] for f in self.features)
            raise ParameterError(f"No feature {label!r} in this result. Features: {names}.")
        return tuple(r for r in self.rows if r.feature == label)

    def top(self, label, n=5, *, significant_only=False):
        """The ``n`` best-ranked columns of one feature (their names)."""
        rows = self.for_feature(label)
        if significant_only:
            rows = [r for r in rows if r.significant]
        return [r.column for r in rows[:n]]

    def significant_features(self):
        """Labels of the features with at least one significant column (q and effect pass)."""
        return [f["label"] for f in self.features
                if any(r.significant for r in self.rows if r.feature == f["label"])]

    def records(self):
        """The table as a list of plain dicts (one per row)."""
        return [asdict(r) for r in self.rows]

    def to_frame(self):
        """The table as a pandas DataFrame (needs pandas)."""
        names = [f.name for f in ColumnContrast.__dataclass_fields__.values()]
        cols = {n: [getattr(r, n) for r in self.rows] for n in names}
        return data_frame(cols, what="a column contrast")

    def to_dict(self):
        """JSON-ready form (NaN written as null by :func:`lenswork._json.dumps`)."""
        return {"params": self.params, "features": list(self.features),
                "columns": self.records(), "skipped": list(self.skipped),
                "notes": list(self.notes)}

    def csv_text(self):
        """The table as CSV text."""
        buf = io.StringIO()
        names = list(ColumnContrast.__dataclass_fields__)
        writer = csv_writer(buf, lineterminator="\n")
        writer.writerow(names)
        for rec in self.records():
            writer.writerow(["" if v is None or (isinstance(v, float) and not math.isfinite(v))
                             else (f"{v:.6g}" if isinstance(v, float) else v)
                             for v in (rec[n] for n in names)])
        return buf.getvalue()

    def write_csv(self, path):
        """Write the table as CSV, atomically; returns the path."""
        write_text(path, self.csv_text())
        return path

    def write_json(self, path):
        """Write :meth:`to_dict` as strict JSON, atomically; returns the path."""
        write_text(path, dumps(self.to_dict()) + "\n")
        return path

    def text(self, top=5, *, all_features=False):
        """A few lines per feature with a significant column (or every feature) for a terminal.

        The first line states the rule of the stars: the q-value and the
        effect-size floor (:data:`EFFECT_FLOOR`, with its sources).
        """
        lines = []
        alpha = self.params.get("alpha", 0.05)
        shown = self.significant_features() if not all_features else \
            [f["label"] for f in self.features]
        for f in self.features:
            if f["label"] not in shown:
                continue
            sig = ""
            if f.get("significance") is not None:
                sig = f", significance {f['significance']:.2f}" + (
                    "" if f.get("significant") or f.get("threshold") is None
                    else f" < {f['threshold']:.2f} needed (small)")
            lines.append(f"{f['label']}: {f['n_rows']:,} rows against {f['n_against']:,} "
                         f"({self.params.get('against')}){sig}, nodes "
                         f"{_short_nodes(f['nodes'])}")
            for r in self.for_feature(f["label"])[:top]:
                if r.type == "numeric":
                    what = (f"delta {r.cliffs_delta:+.2f}  d {r.smd:+.2f}  mean "
                            f"{r.mean_in:.3g} vs {r.mean_out:.3g}")
                else:
                    what = (f"V {r.effect:.2f}  {r.level!r} {r.share_in:.0%} vs "
                            f"{r.share_out:.0%}")
                along = ""
                if r.along and math.isfinite(r.along_r):
                    name = "rho" if r.along == "spearman" else "R"
                    along = f"  along: {name} {r.along_r:+.2f}" if name == "rho" else \
                        f"  along: {name} {r.along_r:.2f} peak node {r.along_peak_node}"
                mark = "*" if r.significant else " "
                lines.append(f"  {r.rank:>2}{mark} {r.column:<20} {what}  q {r.qvalue:.2g}{along}")
        floor = self.params.get("effect_floor", EFFECT_FLOOR)
        rule = (f"* = q <= {alpha} (Benjamini-Hochberg over all {self.params.get('family', 0)} "
                f"tests) and an effect at least small: |Cliff's delta| >= {floor['numeric']:g} "
                f"(Romano et al. 2006), Cramér's V >= {floor['categorical']:g} (Cohen 1988)")
        if not lines:
            lines.append(f"no feature has a significant column ({len(self.features)} features "
                         f"tested)")
        lines.insert(0, rule)
        for s in self.skipped:
            where = f"{s['feature']}: " if s.get("feature") else ""
            col = f"column {s['column']!r} " if s.get("column") else ""
            lines.append(f"  note: {where}{col}{s['reason']}")
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)

    def __str__(self):
        return self.text()


def _short_nodes(nodes, k=8):
    nodes = list(nodes)
    return ",".join(map(str, nodes[:k])) + (",..." if len(nodes) > k else "")


# ---------------------------------------------------------------- the call
def _cloud_of(data, graph):
    cloud = getattr(data, "cloud", data)
    if not isinstance(cloud, PointCloud):
        raise ParameterError(
            f"The 'data' parameter of contrast_columns must be a PointCloud or a Workspace; got "
            f"{type(data).__name__}."
        )
    if cloud.n != graph.n_rows:
        raise InputError(
            f"The graph was built on {graph.n_rows:,} rows but the data has {cloud.n:,}; give the "
            f"point cloud the graph was built from."
        )
    if np.array_equal(np.asarray(graph.row_ids), np.asarray(cloud.ids)):
        return cloud
    ids_a = [str(x) for x in np.asarray(graph.row_ids).tolist()]
    ids_b = [str(x) for x in np.asarray(cloud.ids).tolist()]
    if ids_a != ids_b:  # ints read back as text still match
        first = next(i for i, (a, b) in enumerate(zip(ids_a, ids_b)) if a != b)
        raise InputError(
            f"The graph's row ids differ from the data's at row {first + 1} ({ids_a[first]!r} vs "
            f"{ids_b[first]!r}); give the point cloud the graph was built from."
        )
    return cloud


#: Largest ``n_in * n_out`` whose KS p-value is exact (``ks_2samp(method="exact")``); above it
#: Smirnov's asymptotic law (``method="asymp"``). The exact law costs up to 0.2 s a call at
#: 5,000 x 5,000 rows (measured, scipy 1.17) and differs from the asymptotic one by a few per
#: cent of p at 1,000 x 1,000.
KS_EXACT_MAX = 1_000_000


class _SortedColumn:
    """One numeric column sorted once; every comparison walks the sorted order in O(n).

    For rows ``inside`` and ``other`` (disjoint masks), the comparison keeps the
    sorted positions of their union (still sorted), so the Mann-Whitney U (sum of
    average ranks of the inside rows) and the Kolmogorov-Smirnov distance
    (largest gap between the two empirical distribution functions, read at the
    end of each block of tied values) need no further sort.
    """

    def __init__(self, values):
        self.values = values
        finite = np.flatnonzero(np.isfinite(values))
        self.order = finite[np.argsort(values[finite], kind="stable")]
        self.sorted = values[self.order]

    def compare(self, inside, other):
        keep = (inside | other)[self.order]
        v = self.sorted[keep]
        lab = inside[self.order][keep]
        n = v.size
        n1 = int(lab.sum())
        n2 = n - n1
        ends = np.flatnonzero(np.append(v[1:] != v[:-1], True))  # last index of each tie block
        starts = np.append(0, ends[:-1] + 1)
        block_rank = (starts + ends + 2) / 2.0  # average 1-based rank of each block
        block_of = np.repeat(np.arange(ends.size), ends - starts + 1)
        u1 = block_rank[block_of][lab].sum() - n1 * (n1 + 1) / 2.0
        cum = np.cumsum(lab)[ends]
        d = float(np.max(np.abs(cum / n1 - (ends + 1 - cum) / n2)))
        return n1, n2, 2.0 * u1 / (n1 * n2) - 1.0, d


def _numeric_stats(col, inside, other):
    """(n_in, n_out, Cliff's delta, SMD, KS distance, KS p-value, mean_in, mean_out)."""
    n1, n2, delta, d = col.compare(inside, other)
    x_in, x_out = col.values[inside], col.values[other]
    x_in, x_out = x_in[np.isfinite(x_in)], x_out[np.isfinite(x_out)]
    pooled = math.sqrt(((n1 - 1) * x_in.var(ddof=1) + (n2 - 1) * x_out.var(ddof=1)) /
                       max(n1 + n2 - 2, 1))
    diff = float(x_in.mean() - x_out.mean())
    smd = diff / pooled if pooled > 0 else (math.copysign(math.inf, diff) if diff else 0.0)
    if n1 * n2 <= KS_EXACT_MAX:
        ks = stats.ks_2samp(x_in, x_out, method="exact")
        d, p = float(ks.statistic), float(ks.pvalue)
    else:  # Smirnov's asymptotic law, the formula of ks_2samp(method="asymp")
        en = n1 * n2 / (n1 + n2)
        p = float(np.clip(stats.kstwo.sf(d, np.round(en)), 0.0, 1.0))
    return n1, n2, delta, smd, d, p, float(x_in.mean()), float(x_out.mean())


def contrast_columns(graph, data, feature=None, *, nodes=None, rows=None, against="rest", hops=2,
                     columns=None, categorical=None, lenses=None, max_levels=50, alpha=0.05,
                     all_features=False):
    """Rank the data columns by how strongly they set a graph feature's rows apart.

    Parameters
    ----------
    graph : LensGraph
    data : PointCloud or Workspace
        The rows the graph was built on (same order and ids).
    feature : str, GraphFeature or list of them, optional
        ``"flare:2"`` (the second flare of ``graph.summary().features``; kinds
        component, loop, branch, flare, path, limb, 1-based within the kind,
        as :meth:`GraphSummary.labelled` names them), a kind (every feature of
        it, small ones too), ``"nodes:3,5,7"``, or a
        GraphFeature. Default: the components and the significant features of
        the summary (unless ``nodes`` or ``rows`` is given).
    nodes : sequence of int, optional
        A set of nodes to contrast (labelled ``nodes``).
    rows : bool mask of shape (n_rows,) or sequence of int, optional
        A set of rows (0-based positions) to contrast (labelled ``rows``).
    against : {"rest", "neighbours"}, default="rest"
        Every other row, or the rows of the nodes within ``hops`` hops of the
        feature that are not in it (for a set of rows, the other rows of the
        nodes they lie in count too).
    hops : int, default=2
    columns : list of str, optional
        Data columns to test (features and passthrough); default all.
    categorical : list of str, optional
        Columns to treat as categorical even when their values are numbers.
    lenses : LensTable or array-like of shape (n_rows,) or (n_rows, m), optional
        Row lens values; with them the position along a flare or path is the
        (SD-scaled) lens distance from its attachment node, which orders the
        rows of even a one-node flare. Without them: graph hops.
    max_levels : int, default=50
        A categorical column with more levels keeps the ``max_levels - 1`` most
        frequent and pools the others; one with a level for half its rows or
        more is skipped (an identifier).
    alpha : float, default=0.05
        False discovery rate of the Benjamini-Hochberg step-up (over every
        test of the call). A column is significant when its q-value is at
        most ``alpha`` and its effect reaches :data:`EFFECT_FLOOR`.
    all_features : bool, default=False
        Test every feature of the summary (small ones and paths too), not only
        the components and the significant features.

    Returns
    -------
    ContrastResult

    Raises
    ------
    ParameterError
        An unknown feature, node, column or option.
    InputError
        A named feature with no rows, with every row, or with no neighbouring
        rows; data that do not match the graph's rows.

    Notes
    -----
    Features and columns that cannot be tested are listed in
    ``result.skipped`` with the reason (a constant or all-missing column, a
    side with fewer than two values, an identifier-like column; when every
    feature of the summary is tested, a feature holding every row). Cost per
    feature and numeric column: one sort of the rows compared, O(n log n).

    Examples
    --------
    >>> from lenswork import PointCloud, build_graph
    >>> rng = np.random.default_rng(0)
    >>> t = rng.uniform(0, 1, 400)
    >>> X = np.column_stack([t, rng.normal(0, 0.05, 400), (t > 0.8) * 2.0])
    >>> cloud = PointCloud.from_array(X, feature_names=["t", "noise", "step"])
    >>> g = build_graph(X[:, 0], cloud, intervals=5, overlap=0.3, min_size=10)
    >>> res = contrast_columns(g, cloud, nodes=[g.n_nodes - 1])
    >>> sorted(res.top("nodes", 2)), bool(res.for_feature("nodes")[0].qvalue < 1e-6)
    (['step', 't'], True)
    """
    if not isinstance(graph, LensGraph):
        raise ParameterError(
            f"The 'graph' parameter of contrast_columns must be a LensGraph; got "
            f"{type(graph).__name__}."
        )
    against = check_choice("against", against, AGAINST, context="contrast_columns")
    hops = check_int("hops", hops, lo=1, context="contrast_columns")
    max_levels = check_int("max_levels", max_levels, lo=2, context="contrast_columns")
    alpha = check_float("alpha", alpha, lo=0, hi=1, lo_open=True, context="contrast_columns")
    cloud = _cloud_of(data, graph)
    cols = _columns(cloud, columns, categorical, max_levels)
    lens = _lens_array(lenses, graph.n_rows)
    skipped, notes, raw, infos = [], [], [], []
    all_features = bool(all_features)
    feats, explicit, left_out = _resolve_features(graph, feature, nodes, rows, all_features)
    if left_out and feature is None and nodes is None and rows is None:
        notes.append(f"{left_out} small features (below the significance threshold) and paths "
                     f"not tested; all_features=True (--all-features) tests them too")
    for c in cols:
        if c.note.startswith("skipped"):
            skipped.append({"feature": "", "column": c.name, "reason": c.note[9:]})
        elif c.note:
            notes.append(f"column {c.name!r}: {c.note}")
        elif c.kind == "numeric":
            finite = np.isfinite(c.values)
            if not finite.any():
                skipped.append({"feature": "", "column": c.name, "reason": "all values missing"})
                c.note = "skip"
            elif np.ptp(c.values[finite]) == 0:
                skipped.append({"feature": "", "column": c.name,
                                "reason": f"constant (every value {c.values[finite][0]:.6g})"})
                c.note = "skip"
            elif not finite.all():
                notes.append(f"column {c.name!r}: {int((~finite).sum()):,} missing values left "
                             f"out of its tests")
        if c.kind == "categorical" and not c.note.startswith("skipped"):
            used = set(np.unique(c.values[c.values >= 0]).tolist())
            if len(used) < 2:
                reason = "all values missing" if not used else \
                    f"constant (every value {c.levels[next(iter(used))]!r})"
                skipped.append({"feature": "", "column": c.name, "reason": reason})
                c.note = "skipped"
    cols = [c for c in cols if not c.note.startswith("skip")]
    if not cols:
        raise InputError(
            "No data column can be tested: every column is constant, missing or an identifier "
            "(see the notes above); give other columns."
        )
    for feat in feats:
        n_in = int(feat.inside.sum())
        other = _against_rows(graph, feat, against, hops)
        n_out = int(other.sum())
        reason = None
        if n_in == 0:
            reason = "the feature has no rows"
        elif n_out == 0:
            reason = ("no neighbouring rows within "
                      f"{hops} hops (use against='rest' or more hops)" if against == "neighbours"
                      else "the feature holds every row: nothing to set it against")
        if reason:
            if explicit:
                raise InputError(f"Feature {feat.label!r}: {reason}.")
            skipped.append({"feature": feat.label, "column": "", "reason": reason})
            continue
        kind_pos, pos = _position(graph, feat, lens)
        in_rows = np.flatnonzero(feat.inside)
        infos.append({"label": feat.label, "kind": feat.kind, "nodes": list(feat.nodes),
                      "n_rows": n_in, "n_against": n_out, "attached_to": feat.attached_to,
                      "position": kind_pos or "", "significance": feat.significance,
                      "significant": feat.significant, "threshold": feat.threshold})
        for c in cols:
            rec = _test_column(c, feat, other, in_rows, kind_pos, pos)
            if isinstance(rec, str):
                skipped.append({"feature": feat.label, "column": c.name, "reason": rec})
            else:
                raw.append(rec)
    if not infos:
        reasons = "; ".join(f"{s['feature']}: {s['reason']}" for s in skipped if s["feature"])
        hint = ("" if explicit else " Nothing significant is left to contrast: test the small "
                "features too with all_features=True (--all-features), or name rows with "
                "--rows / --rows-file.")
        raise InputError(f"No graph feature can be tested ({reasons}).{hint}")
    q = benjamini_hochberg([r["pvalue"] for r in raw]) if raw else np.array([])
    out = []
    for f in infos:
        mine = [(r, qq) for r, qq in zip(raw, q) if r["feature"] == f["label"]]
        mine.sort(key=lambda rq: (-rq[0]["effect"], rq[0]["pvalue"], rq[0]["column"]))
        for rank, (r, qq) in enumerate(mine, start=1):
            big = bool(r["effect"] >= EFFECT_FLOOR[r["type"]])
            out.append(ColumnContrast(rank=rank, qvalue=float(qq), large_enough=big,
                                      significant=bool(qq <= alpha) and big, **r))
    params = {"against": against, "hops": hops if against == "neighbours" else None,
              "alpha": alpha, "max_levels": max_levels, "correction": "Benjamini-Hochberg 1995",
              "family": len(raw), "effect_floor": dict(EFFECT_FLOOR),
              "effect_floor_source": "Romano et al. 2006 (|Cliff's delta| small); Cohen 1988 "
                                     "(Cramér's V / w small)",
              "all_features": all_features, "lenswork": __version__,
              "scaling": cloud.provenance.get("scaling"),
              "lenses": list(graph.lens_columns)}
    return ContrastResult(tuple(out), tuple(infos), tuple(skipped), tuple(notes), params)


def _test_column(c, feat, other, in_rows, kind_pos, pos):
    """One (feature, column) comparison as a dict, or the reason it was skipped."""
    nan = float("nan")
    base = {"feature": feat.label, "kind": feat.kind, "column": c.name, "role": c.role,
            "type": c.kind}
    if c.kind == "numeric":
        finite = np.isfinite(c.values)
        n1, n2 = int((feat.inside & finite).sum()), int((other & finite).sum())
        if n1 < 2 or n2 < 2:
            return f"fewer than two values on one side ({n1} in, {n2} against)"
        both = c.values[(feat.inside | other) & finite]
        if both.min() == both.max():
            return "constant on the rows compared"
        if c.sorted is None:
            c.sorted = _SortedColumn(c.values)
        n1, n2, delta, smd, ks, p, m_in, m_out = _numeric_stats(c.sorted, feat.inside, other)
        rec = dict(base, effect=abs(delta), cliffs_delta=delta, smd=smd, mean_in=m_in,
                   mean_out=m_out, level="", share_in=nan, share_out=nan, test="ks",
                   statistic=ks, pvalue=p, n_in=n1, n_out=n2)
        rec.update(_along(c.values[in_rows], kind_pos, pos, feat))
        return rec
    k_in, k_out = c.values[feat.inside], c.values[other]
    k_in, k_out = k_in[k_in >= 0], k_out[k_out >= 0]
    if k_in.size < 2 or k_out.size < 2:
        return f"fewer than two values on one side ({k_in.size} in, {k_out.size} against)"
    L = len(c.levels)
    table = np.vstack([np.bincount(k_in, minlength=L), np.bincount(k_out, minlength=L)])
    table = table[:, table.sum(axis=0) > 0]
    levels = [lev for lev, n in zip(c.levels, np.bincount(np.concatenate([k_in, k_out]),
                                                          minlength=L)) if n > 0]
    if table.shape[1] < 2:
        return "constant on the rows compared"
    chi2, p, _, _ = stats.chi2_contingency(table, correction=False)
    v = math.sqrt(chi2 / table.sum())
    share = table / table.sum(axis=1, keepdims=True)
    top = int(np.argmax(share[0] - share[1]))
    return dict(base, effect=v, cliffs_delta=nan, smd=nan, mean_in=nan, mean_out=nan,
                level=levels[top], share_in=float(share[0, top]), share_out=float(share[1, top]),
                test="chi2", statistic=float(chi2), pvalue=float(p), n_in=int(k_in.size),
                n_out=int(k_out.size), along="", along_r=nan, along_p=nan, along_peak_node=None)


def _along(values, kind_pos, pos, feat):
    nan = float("nan")
    empty = {"along": "", "along_r": nan, "along_p": nan, "along_peak_node": None}
    if kind_pos is None:
        return empty
    ok = np.isfinite(values)
    x, t = values[ok], pos[ok]
    if x.size < 3 or np.ptp(x) == 0 or np.ptp(t) == 0:
        return dict(empty, along="spearman" if kind_pos != "angle" else "circular")
    if kind_pos == "angle":
        r, p, peak = circular_rank_correlation(t, x)
        L = len(feat.nodes)
        node = feat.nodes[int(round(peak / (2 * np.pi) * L)) % L] if math.isfinite(peak) else None
        return {"along": "circular", "along_r": r, "along_p": p, "along_peak_node": node}
    res = stats.spearmanr(t, x)
    return {"along": "spearman", "along_r": float(res.statistic), "along_p": float(res.pvalue),
            "along_peak_node": None}


# ---------------------------------------------------------------- per-node values
def node_column_values(graph, data, column, stat="mean", *, level=None):
    """A per-node statistic of any data column: mean, median, min, max, std, or share of a level.

    Parameters
    ----------
    graph : LensGraph
    data : PointCloud, Workspace, or array-like of shape (n_rows,)
        Where the column is found (a cloud's feature or passthrough column), or
        the row values themselves (then ``column`` only labels them).
    column : str
    stat : {"mean", "median", "min", "max", "std", "share"}, default="mean"
        ``"share"`` (the default for a categorical column) is the fraction of
        each node's members whose value is ``level``.
    level : str, optional
        The level for ``"share"``; default: the column's most frequent level.

    Returns
    -------
    values : ndarray of shape (n_nodes,)
    label : str
        For a colour bar: ``"vibration (node mean)"``, ``"share of state = clogging"``.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from lenswork import LensGraph, PointCloud
    >>> M = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 1]]))
    >>> g = LensGraph(M, [[0], [1]], [[0, 1]], [1], {"h": np.zeros((2, 3))}, lens_columns=["h"])
    >>> cloud = PointCloud.from_array(np.array([[1.0], [2.0], [6.0]]), feature_names=["v"],
    ...                               passthrough={"kind": np.array(["a", "b", "b"], dtype=object)})
    >>> node_column_values(g, cloud, "v")[0].tolist()
    [1.5, 4.0]
    >>> node_column_values(g, cloud, "kind", level="b")
    (array([0.5, 1. ]), 'share of kind = b')
    """
    if isinstance(data, PointCloud) or hasattr(data, "cloud"):
        cloud = _cloud_of(data, graph)
        names = [*cloud.feature_names, *(str(k) for k in cloud.passthrough)]
        if column not in names:
            raise ParameterError(f"No data column {column!r}. Columns: {', '.join(names)}.")
        values = cloud.X[:, list(cloud.feature_names).index(column)] \
            if column in cloud.feature_names else cloud.passthrough[column]
    else:
        values = np.asarray(data)
        if values.shape != (graph.n_rows,):
            raise ParameterError(
                f"Row values for {column!r} must have shape ({graph.n_rows},); got "
                f"{values.shape}."
            )
    numeric = _numeric_or_none(values)
    stat = str(stat).strip().lower()
    csc = sp.csc_matrix(graph.membership)
    if numeric is None or stat == "share":
        cells = np.array(["" if _is_missing(v) else str(v) for v in
                          np.asarray(values, dtype=object)], dtype=object)
        present, counts = np.unique(cells[cells != ""], return_counts=True)
        if level is None:
            if present.size == 0:
                raise InputError(f"Column {column!r} has no values.")
            level = str(present[np.argmax(counts)])
        elif str(level) not in set(present.tolist()):
            shown = ", ".join(map(str, present[:20]))
            raise ParameterError(
                f"Column {column!r} has no level {level!r}. Levels: {shown}"
                f"{' ...' if present.size > 20 else ''}."
            )
        if stat not in ("mean", "share"):
            raise ParameterError(
                f"Column {column!r} is categorical: colour it by 'share' of a level, not {stat!r}."
            )
        hit = (cells == str(level)).astype(np.float64)
        known = (cells != "").astype(np.float64)
        num = np.asarray(csc.T @ hit).ravel()
        den = np.asarray(csc.T @ known).ravel()
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(den > 0, num / den, np.nan), f"share of {column} = {level}"
    stat = check_choice("stat", stat, NODE_STATS, context="node_column_values")
    out = np.full(graph.n_nodes, np.nan)
    for a in range(graph.n_nodes):
        v = numeric[csc.indices[csc.indptr[a]:csc.indptr[a + 1]]]
        v = v[np.isfinite(v)]
        if v.size:
            out[a] = getattr(np, stat)(v)
    return out, f"{column} (node {stat})"
