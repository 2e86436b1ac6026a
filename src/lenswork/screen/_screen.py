"""The screen's entry point: compute candidates, score them, select, probe.

:func:`screen` reads its input (a PointCloud, Workspace, DataFrame, array or
a ready LensTable), computes the candidate lenses, scores every column's
spread and ranks in one pass (one sort per column, on a few threads for big
tables), builds the Spearman matrix and the correlations with reference
columns, selects, and, with ``probe=True``, folds the structure probe
(:func:`lenswork.structure_scores`) into the merit.

Bad input
---------
A candidate column that is constant, or holds any NaN or infinity, gets
spread 0, a :class:`~lenswork.LensworkWarning` naming it, and is never
selected (registry lenses never hold NaN; an all-NaN column is treated the
same way rather than stopping the whole screen). Its correlations are NaN.
Asking for more lenses than there are usable candidates warns and selects the
usable ones. A reference column that is not numeric raises
:class:`~lenswork.ParameterError` naming it.
"""

from __future__ import annotations

import math
import numbers
import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from .. import _progress
from .._errors import InputError, ParameterError, warn_caller
from ..criteria import (
    HANDFUL,
    TAIL,
    RobustSpread,
    heat_kernel_affinity,
    laplacian_null_sd,
    robust_spread_sorted,
    smoothness,
    unit_rank_criteria,
)
from ..data import load_table
from ..lenses import LensTable
from ..probe import structure_scores
from ..workspace import Workspace
from ._candidates import candidate_columns
from ._confirm import confirm_selection, plan_sample
from ._redundancy import corr_from_unit, reference_correlations, unit_row
from ._result import PROBE_SCORES, ScreenResult
from ._select import DEFAULT_WEIGHTS, NO_PROBE_WEIGHTS, PairPreservation
from ._settings import ScreenSettings
from ._spread import non_finite_score, rank_sorted, spread_from_sorted, status_text

__all__ = ["screen"]

#: Threads ranking columns at once (numpy sorts release the GIL), from this many values on.
_MAX_THREADS = 4
_THREADS_FROM = 2_000_000
#: Neighbours of the heat-kernel graph of the Laplacian score (the graph builder's default k).
SMOOTHNESS_K = 15
#: Rows R_NX is measured on: every row up to this many, a seeded sample beyond.
_PRESERVATION_ROWS = 4000


def _score_columns(table, bins):
    """Spread figures and unit rank rows of every column of a LensTable (one sort each).

    Columns are independent, and numpy's sorts release the GIL, so large tables
    are ranked on a few threads; the result does not depend on the thread count.
    """
    m, n = len(table), table.cloud.n
    keys = ("spread", "entropy", "tied", "largest_tie", "outliers")
    Z = np.empty((m, n), dtype=np.float64)
    robust = [None] * m

    def one(j):
        v = np.asarray(table.columns[j].values, dtype=np.float64)
        if not np.isfinite(v).all():
            Z[j].fill(np.nan)
            robust[j] = RobustSpread(0.0, math.nan, math.nan, 0)
            return non_finite_score(bins, n)
        ranks, srt, counts = rank_sorted(v)
        unit_row(ranks, Z[j])
        robust[j] = robust_spread_sorted(srt, counts)
        return spread_from_sorted(srt, counts, bins)

    workers = min(_MAX_THREADS, os.cpu_count() or 1, m)
    if workers > 1 and n * m >= _THREADS_FROM:
        with ThreadPoolExecutor(workers) as pool:
            found = list(pool.map(one, range(m)))
    else:
        found = [one(j) for j in range(m)]
    scores = {k: np.array([getattr(s, k) for s in found], dtype=np.float64) for k in keys}
    scores["robust_spread"] = np.array([r.robust_spread for r in robust], dtype=np.float64)
    scores["tail_share"] = np.array([r.tail_share for r in robust], dtype=np.float64)
    scores["support"] = np.array([r.support for r in robust], dtype=np.float64)
    scores["value_support"] = np.array([r.value_support for r in robust], dtype=np.float64)
    return scores, [s.status for s in found], Z


def _smoothness(Z, ws, usable, support, value_support):
    """Laplacian score, smoothness and neighbour jitter of every column (lenswork.criteria).

    A column whose values put half their variation on a handful of rows that are
    also its most extreme 1 % (``value_support <= min(HANDFUL * k, ceil(TAIL * n))``,
    i.e. ``tail_share >= 1/2`` on at most ``k / 3`` rows; the eigensolver's warning
    for a concentrated Laplacian vector uses the same 1 %) is concentrated there
    on the value half of the balanced cover scale, however well spread its ranks:
    its support counts 0, so its smoothness and merit are 0. The bound for "smoother
    than chance" is Bonferroni's over the usable candidates (criteria.chance_bound).
    """
    k = min(SMOOTHNESS_K, ws.n - 1)
    handful = min(HANDFUL * k, math.ceil(TAIL * Z.shape[1]))
    support = np.where(np.asarray(value_support) <= handful, 0.0, support)
    S = heat_kernel_affinity(ws, k=k)
    Lr, jitter = unit_rank_criteria(np.where(usable[:, None], Z, np.nan), S)
    tests = max(int(np.count_nonzero(usable)), 1)  # one test per usable candidate
    return {"smoothness": smoothness(Lr, null_sd=laplacian_null_sd(S), support=support, k=k,
                                     tests=tests),
            "laplacian_score": Lr, "jitter": jitter}


def data_notes(ws):
    """What the screen found in the rows themselves: duplicates and the graph's pieces.

    Returns a JSON-ready dict (empty when there is nothing to say) and warns when the
    neighbour graph the smoothness criterion reads falls into pieces.
    """
    notes = {}
    dup = ws.duplicates
    if dup.n_duplicate_rows:
        notes["duplicates"] = dict(dup.to_dict(), text=dup.describe())
    tied = ws.tied_columns()
    if tied:
        shown = ", ".join(f"{name} {value:g} on {share:.0%}" for name, value, share in tied[:4])
        more = ", ..." if len(tied) > 4 else ""
        notes["tied_columns"] = {
            "columns": [{"name": name, "value": value, "share": share}
                        for name, value, share in tied],
            "text": (f"{len(tied)} of {ws.d} columns hold one value on half the rows or more "
                     f"({shown}{more}); ranks average ties"),
        }
    pieces = ws.pieces(min(SMOOTHNESS_K, ws.n - 1))
    if pieces.count > 1:
        notes["graph_pieces"] = dict(pieces.to_dict(), text=pieces.describe())
        warn_caller(
            f"The data's neighbour graph is not connected: {pieces.describe()}. Smoothness "
            f"and the Laplacian lenses see each piece on its own (no lens can follow "
            f"neighbours across pieces); check for groups of rows far from the rest, or "
            f"scale the columns."
        )
    return notes


def _preservation(table, ws, random_state):
    """R_NX of lens sets on every row, or on a seeded sample of ``_PRESERVATION_ROWS`` rows."""
    n = table.cloud.n
    K = ws.shared_k
    V = np.column_stack([np.asarray(c.values, dtype=np.float64) for c in table.columns])
    if n <= _PRESERVATION_ROWS:  # n > K + 1: the screen's row minimum (min_screen_rows)
        return PairPreservation(V, ws.neighbors(K).indices)
    rows = np.sort(np.random.default_rng(random_state).choice(n, _PRESERVATION_ROWS,
                                                              replace=False))
    sample = Workspace(ws.X[rows], random_state=random_state)
    return PairPreservation(V[rows], sample.neighbors(sample.shared_k).indices)



def screen(data, settings=None, **overrides):
    """Compute candidate lenses, score them, and select the few that keep the neighbours.

    Parameters
    ----------
    data : PointCloud, Workspace, LensTable, DataFrame or array-like (n_samples, n_features)
        The data. A LensTable is screened as it is (its columns are the
        candidates, nothing is computed); a DataFrame is read with
        :func:`~lenswork.load_table` (numeric columns are features, the others
        passthrough).
    settings : ScreenSettings or dict, optional
        Every setting of the screen (:class:`~lenswork.ScreenSettings`: the
        candidates ``lenses`` and ``extra``, ``count``, ``ceiling``,
        ``references``, ``bins``, ``weights``, ``probe``, ``pairing``,
        ``sample``, ``random_state``; its docstring describes each).
    **overrides
        Any of those settings by keyword, applied over ``settings``
        (``screen(X, count=3)`` is ``screen(X, ScreenSettings(count=3))``).

    On a sample (``sample``), the screen is a pipeline: the candidates are
    computed and ranked on a seeded sample of rows, each column carrying the
    spec it was computed from (:class:`~lenswork.screen._candidates.Candidate`);
    the chosen ones are then computed again on all rows from those specs and
    checked against the sample run (:mod:`lenswork.screen._confirm`).

    Returns
    -------
    ScreenResult

    Raises
    ------
    ParameterError
        Bad count, ceiling, bins, lens spec or reference column (a non-numeric
        reference names the column and the first bad row).
    InputError
        Fewer rows than :func:`min_screen_rows` (32 by default), or no candidate
        column at all.

    Warns
    -----
    LensworkWarning
        A constant or non-finite candidate (spread 0, never selected); a default
        lens that could not be computed (skipped); ``count`` larger than the
        number of usable candidates (all usable ones are selected); no lens
        selected because every candidate has merit 0 (e.g. lens columns that
        do not follow the data's neighbours: smoothness 0).

    Notes
    -----
    Cost beyond the lenses: one sort per candidate, O(n m log n), one
    (m, n) x (n, m) product, O(n m^2), with the columns ranked on a few
    threads, one sparse product for the Laplacian scores, O(n k m), and the
    neighbour preservation of the pairs tried, each a k-d tree query on at most
    4,000 rows (a seeded sample beyond that; every allowed pair when no lens
    shows significant structure, about 0.05 s a pair at 4,000 rows). Measured, for the ranking alone
    (spread and Spearman), at 1e6 rows and 40 candidates: 2.0 s (best of 3;
    3.3 s median on a busy 2-core machine), 125 times faster than a loop over
    ``scipy.stats.spearmanr`` pairs and 6 times faster than one
    ``scipy.stats.spearmanr`` call on the whole matrix
    (tests/benchmarks/bench_screen.py). See :mod:`lenswork.screen` for the
    scores and the selection rule.

    Examples
    --------
    >>> from lenswork import LensColumn, LensTable, PointCloud
    >>> rng = np.random.default_rng(0)
    >>> cloud = PointCloud.from_array(rng.normal(size=(500, 2)))
    >>> x, y = cloud.X[:, 0], cloud.X[:, 1]
    >>> table = LensTable([LensColumn("x", x), LensColumn("exp_x", np.exp(x)),
    ...                    LensColumn("y", y)], cloud)
    >>> result = screen(table, count=2)
    >>> sorted(result.selected)   # exp_x orders the rows as x does: never both
    ['x', 'y']
    >>> round(float(result.correlation[0, 1]), 6)
    1.0
    """
    s = ScreenSettings.coerce(settings, **overrides)
    if isinstance(data, LensTable):
        if s.lenses is not None or s.extra:
            raise ParameterError(
                "screen got a LensTable and lens specs; a LensTable is screened as it is. "
                "Pass the PointCloud or Workspace to compute lenses."
            )
        if s.sample not in ("auto", "all"):
            raise ParameterError(
                "screen got a LensTable and sample=...; a LensTable is screened as it is. "
                "Pass the PointCloud or Workspace to screen on a sample."
            )
        table = data
        if s.random_state is not None and s.random_state != table.random_state:
            table = LensTable(table.columns, table.cloud, random_state=s.random_state)
        ws = _workspace(table.cloud, table.random_state)
        refs = _collect_references(table.cloud, s.references)
        return _rank(table, s, ws, refs, [])
    ws = _workspace(data, s.random_state)
    refs = _collect_references(ws.cloud, s.references)  # check them before the lenses
    plan = plan_sample(ws, s.sample)
    if plan is None:
        columns, skipped, _ = candidate_columns(ws, s.lenses, s.extra)
        table = LensTable(columns, ws.cloud, random_state=ws.random_state)
        return _rank(table, s, ws, refs, skipped)
    # sample -> screen -> confirm, each column's spec carried forward
    sub = plan.workspace
    _check_rows(sub.n, sub.min_neighbors, of="the sample")
    with _progress.step(f"screen on a sample of {plan.size:,} of {ws.n:,} rows"):
        columns, skipped, origins = candidate_columns(sub, s.lenses, s.extra)
        table = LensTable(columns, sub.cloud, random_state=sub.random_state)
        ranked = _rank(table, s, sub, {k: v[plan.rows] for k, v in refs.items()}, skipped)
    return confirm_selection(ranked, ws, plan, origins)


def _workspace(data, random_state):
    """The Workspace of ``data`` (a Workspace must carry the same seed), with enough rows.

    Every screen passes here first (a LensTable with its cloud), so the row minimum
    is checked before any lens is computed; a sample is checked as it is drawn.
    """
    if isinstance(data, Workspace):
        ws = data
        if random_state is not None and random_state != ws.random_state:
            raise ParameterError(
                f"screen got random_state={random_state!r} and a Workspace with "
                f"random_state={ws.random_state!r}; expected one seed. Drop random_state "
                f"or build the Workspace with it."
            )
    else:
        if hasattr(data, "columns") and not isinstance(data, np.ndarray):  # a DataFrame
            data = load_table(data)
        ws = Workspace(data, random_state=0 if random_state is None else random_state)
    _check_rows(ws.n, ws.min_neighbors)
    return ws


def min_screen_rows(min_neighbors=30):
    """Fewest rows a screen can judge: ``max(2 SMOOTHNESS_K, min_neighbors + 2)``, 32 by default.

    The smoothness compares each lens with every row's ``SMOOTHNESS_K`` = 15 nearest
    neighbours and counts 0 for a lens carried by at most a third of one
    neighbourhood (``criteria.HANDFUL``); a lens spread over all rows without ties
    carries half its variation on about a fifth of them, so on fewer than about
    ``5 k / 3`` rows no lens can pass (``2 k`` leaves a margin). The pair rule's
    ``R_NX(K)`` compares each row's ``K`` (``Workspace.min_neighbors``) data
    neighbours with its ``K`` neighbours in the pair's rank plane, which needs
    ``K + 2`` rows to differ from chance.

    >>> min_screen_rows(), min_screen_rows(10)
    (32, 30)
    """
    return max(2 * SMOOTHNESS_K, int(min_neighbors) + 2)


def _check_rows(n, min_neighbors, of="the data"):
    """InputError naming the screen's own minimum when ``n`` rows (``of``) are too few."""
    need = min_screen_rows(min_neighbors)
    if n < need:
        raise InputError(
            f"A screen needs at least {need} rows; {of} has {n}. It compares each lens "
            f"with every row's {SMOOTHNESS_K} nearest neighbours and each pair of lenses "
            f"with every row's {min_neighbors} (Workspace min_neighbors={min_neighbors}; "
            f"CLI: --min-neighbors {min_neighbors}). On so few rows choose the lenses "
            f"yourself (build_graph with lenses=['pca']; CLI: lenswork graph --lens pca) "
            f"or give more rows."
        )


def _rank(table, settings, ws, refs, skipped):
    """Score, correlate and select the columns of ``table`` under ``settings``."""
    count, bins, probe = settings.count, settings.bins, settings.probe
    weights, pairing = settings.weights, settings.pairing
    cloud = table.cloud
    if len(table) == 0:
        raise InputError(
            "The screen has no candidate lens column. Give lenses (e.g. lenses=['pca']) or "
            "check the warnings about skipped lenses."
        )
    for col in table.columns:
        if np.shape(col.values) != (cloud.n,):
            raise InputError(
                f"Lens column {col.name!r} has shape {np.shape(col.values)}; expected "
                f"({cloud.n},), one value per row."
            )
    with _progress.step(f"ranking {len(table)} columns: spread and rank correlation"):
        scores, status, Z = _score_columns(table, bins)
        usable = np.array([s == "ok" for s in status])
        ok = np.flatnonzero(usable)
        corr = np.full((len(table), len(table)), np.nan)
        if ok.size:
            corr[np.ix_(ok, ok)] = corr_from_unit(Z[ok])
        ref_corr = reference_correlations(
            [np.asarray(c.values, dtype=np.float64) for c in table.columns], refs, usable, Z
        )
    with _progress.step("smoothness: Laplacian score on the neighbour graph"):
        notes = data_notes(ws)
        scores.update(_smoothness(Z, ws, usable, scores["support"], scores["value_support"]))
        del Z
    for j, s in enumerate(status):
        if s != "ok":
            warn_caller(
                f"Lens column {table.names[j]!r} is {status_text(s)}: spread 0, it is never "
                f"selected."
            )
    n_ok = int(np.count_nonzero(usable & (scores["spread"] > 0)))
    if count > n_ok:
        warn_caller(
            f"Asked for {count} lenses but only {n_ok} candidate column(s) are usable; "
            f"selecting at most {n_ok}."
        )
    preservation = _preservation(table, ws, table.random_state or 0) \
        if pairing == "preservation" else None
    with _progress.step("selection"):
        result = ScreenResult(
            table, scores, corr, usable=usable,
            weights=NO_PROBE_WEIGHTS if probe or weights is None else weights,
            count=count, ceiling=settings.ceiling, bins=bins, reference_names=list(refs),
            reference_correlation=ref_corr, skipped=skipped, status=status,
            pairing=pairing, preservation=preservation, defer=probe, settings=settings,
        )
    result.data_notes = notes
    if probe and usable.any():
        result = _with_structure(result, ws, weights)
    elif probe:
        result = result.rescore(weights=weights or NO_PROBE_WEIGHTS)
    result.settings = settings  # as the screen was called (the rescores above fill in weights)
    if n_ok and not result.selected:
        zero = [k for k in result.weights if not np.any(np.nan_to_num(result.scores[k]) > 0)]
        why = (f"every candidate has {' and '.join(zero)} 0" if zero else
               "no candidate has every weighted score above 0")
        if "smoothness" in zero:
            why += (" (no lens follows the data's neighbours better than a random ordering "
                    "of its values)")
        warn_caller(
            f"The screen selected no lens: {why}. Check that the lenses were computed on "
            f"these rows, or pass weights= without that score."
        )
    return result



def _with_structure(result, ws, weights):
    """Run the structure probe on the usable candidates and fold it into the merit."""
    names = [n for n, ok in zip(result.names, result.usable) if ok]
    found = structure_scores(result.lenses.select(names), ws)  # reports its own progress
    m = len(result.names)
    scores = {}
    for key in PROBE_SCORES:
        col = np.full(m, np.nan)
        for j, name in enumerate(result.names):
            if name in found:
                col[j] = found[name][key]
        scores[key] = col
    out = result.rescore(scores=scores, weights=weights or DEFAULT_WEIGHTS)
    out.probe = found
    return out



def _collect_references(cloud, references):
    out = {}
    if isinstance(references, dict):
        for name, vals in references.items():
            v = np.asarray(vals)
            if v.shape != (cloud.n,):
                raise ParameterError(
                    f"Reference column {name!r} has shape {v.shape}; expected ({cloud.n},), "
                    f"one value per row."
                )
            if v.dtype.kind not in "biuf":
                raise ParameterError(
                    f"Reference column {name!r} is not numeric (dtype {v.dtype}); rank "
                    f"correlation needs numbers. Encode the labels as numbers first."
                )
            out[str(name)] = v.astype(np.float64)
        return out
    for name in references:
        out[str(name)] = _reference_values(cloud, str(name))
    return out


def _reference_values(cloud, name):
    """A feature or passthrough column of ``cloud`` as float64 (NaN where missing)."""
    if name in cloud.feature_names:
        return cloud.X[:, list(cloud.feature_names).index(name)].astype(np.float64)
    if name not in cloud.passthrough:
        avail = [*cloud.feature_names, *cloud.passthrough]
        raise ParameterError(
            f"Reference column {name!r} is not in the data. Expected a feature or passthrough "
            f"column: {', '.join(map(str, avail))}."
        )
    raw = np.asarray(cloud.passthrough[name])
    if raw.dtype.kind in "biuf":
        return raw.astype(np.float64)
    out = np.empty(raw.shape[0], dtype=np.float64)
    for i, v in enumerate(raw):
        if v is None or (isinstance(v, str) and not v.strip()):
            out[i] = np.nan
            continue
        if isinstance(v, (bool, np.bool_)):
            out[i] = float(v)
            continue
        if isinstance(v, numbers.Real):
            out[i] = float(v)
            continue
        try:
            out[i] = float(str(v).strip())
        except ValueError:
            raise ParameterError(
                f"Reference column {name!r} is not numeric: row {int(cloud.row_numbers[i])} "
                f"holds {v!r}. Rank correlation needs numbers; pick a numeric column or encode "
                f"the labels as numbers."
            ) from None
    return out
