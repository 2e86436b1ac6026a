"""Selection: merit from the score columns, then the lenses that keep the neighbours.

Merit
-----
Each candidate gets a ``merit``: the weighted geometric mean of named score
columns, by default three equally weighted criteria (``DEFAULT_WEIGHTS``)::

    merit = (robust_spread * smoothness * structure) ** (1/3)

* ``robust_spread`` (:func:`lenswork.criteria.robust_spread`) rewards a lens
  that many rows carry: it is marked down for ties (no cover splits rows that
  share a value) and for a few far rows that own its variation (Hampel et
  al. 1986: the variance has an unbounded influence function), but not for
  values sitting in two or three groups -- a lens that separates groups.
* ``smoothness`` = ``1 - min(L_r, 1)`` with ``L_r`` the Laplacian score (He,
  Cai and Niyogi, NIPS 2005) on the lens's ranks: it rewards a lens that
  changes little between data neighbours, i.e. one whose cover elements
  gather rows the data join. A lens of pure noise has ``L_r`` about 1 and
  smoothness about 0.
* ``structure`` (:func:`lenswork.probe.structure_scores`) rewards a lens whose
  graphs show loops and branches that span more of its range than the cover
  can make on its own: the extended persistence of the lens on its graph,
  above the cover's resolution (Carrière and Oudot, FoCM 2018), times the
  share of rows the graphs keep in nodes. A tangle of short noise loops adds
  nothing; one loop over the whole range adds the most.

Why a geometric mean: each criterion is a necessary condition (a lens that
few rows carry, one that ignores the neighbour graph, or one whose graphs
fall apart is a poor lens however good the others are), and the geometric
mean vanishes when any one does; a fixed relative change of any criterion
moves the merit alike. The weights are equal for want of evidence for
others; ``weights=`` changes them or names other score columns (a zero in
any weighted score gives merit 0). Without the structure probe the merit is
the geometric mean of the first two.

Pairs and sets
--------------
A two-lens cover makes a two-dimensional cover space, and a Mapper node
gathers rows that are close there and linked in the data. The pair is the
one with the largest ``R_NX(K) * joint merit`` among the pairs with
``|rho| <= ceiling`` (``pairing="preservation"``, the default). ``R_NX(K)`` is
the neighbour preservation of the pair's rank space at the K of the
workspace's shared neighbour graph (``Workspace.shared_k``, 30 by default;
Lee and Verleysen, Neurocomputing 2009;
:func:`lenswork.criteria.neighbour_preservation` with ``scale="k"``): how
many of each row's K data neighbours stay among its K neighbours in the
cover space, rescaled so that a random pair scores 0 and a pair that keeps
every neighbourhood 1. The joint merit
(:func:`joint_merit`) is the structure the two lenses show together (the
loops of the better loop lens and the tails of the better tail lens) times
its coverage of the kinds of structure the best lenses show; pairs that show
nothing significant all weigh alike, and then ``R_NX`` alone decides. Without
the structure probe the weight is ``sqrt(merit_i merit_j)``.

Why the spread and the smoothness of each lens do not weigh the pair: for a
pair they are what ``R_NX`` measures (a lens with ties or one that jitters
between data neighbours scatters the pair's neighbourhoods); multiplied in
again, they let a small difference in one lens's merit outweigh a gap in
neighbour preservation (tests/benchmarks: with ``sqrt(merit_i merit_j)`` as
the weight 6 of 15 labelled tables get a pair within 5% of the best and at
least as good as pca_1 + pca_2, without it 11). Why one K and not the
log-scale area over k = 1..K (Lee, Peluffo-Ordóñez and Verleysen 2015): the
area gives 57% of its weight to k <= 5 (K = 30), where on tables of 150-600
rows rank ties and single rows decide, while a node gathers a cover
element's worth of linked rows, many more than five. On scikit-learn's wine
the area ranks pca_1 + laplacian_3 above pca_1 + pca_2 (0.27 against 0.23),
``R_NX(30)`` the other way (0.50 against 0.56), and the classes follow
``R_NX(30)`` (15-NN balanced accuracy 0.921 against 0.962). Two smooth lenses can
still be one direction of the data twice; ``R_NX`` asks whether the pair
together keeps the neighbourhoods. With more than two lenses each further one
maximises ``R_NX(set) * geometric mean of the merits``; with one, the best
merit wins. Since ``R_NX <= 1``, pairs are tried in decreasing joint merit and
the search stops when that bound falls below the best score found: the result
is the exhaustive one.

``pairing="greedy"`` keeps the earlier rule: repeatedly take the candidate
with the largest pair merit ``merit * (1 - max |rho| to the lenses already
taken)`` under the ceiling (:func:`select_lenses`).

The *pair merit* is what each rule maximises: ``R_NX(K) * joint merit``
(for a set of more than two, ``R_NX(set) * geometric mean of the merits``) for
``"preservation"``, ``merit * (1 - max |rho|)`` for
``"greedy"``. (lenswork does not call it a gain: in Mapper, gain is the cover's
overlap fraction.)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._errors import ParameterError
from .._validation import check_float, check_int
from ..criteria import neighbour_preservation
from ..normalize import normalize
from ..probe import SIGNIFICANCE_WEIGHTS
from ..workspace import knn_matrix

__all__ = [
    "DEFAULT_WEIGHTS",
    "PAIRINGS",
    "PairPreservation",
    "Selection",
    "check_weights",
    "joint_merit",
    "select_by_preservation",
    "select_lenses",
    "tied_pairs",
    "weighted_merit",
]

#: Score columns that enter the merit, and their weights (weighted geometric mean).
DEFAULT_WEIGHTS = {"robust_spread": 1.0, "smoothness": 1.0, "structure": 1.0}
#: The merit without the structure probe.
NO_PROBE_WEIGHTS = {"robust_spread": 1.0, "smoothness": 1.0}
#: Rules that pick the lens set from the merits (see the module notes).
PAIRINGS = ("preservation", "greedy")


@dataclass(frozen=True)
class Selection:
    """Result of :func:`select_lenses`.

    Attributes
    ----------
    indices : tuple of int
        Chosen candidates, in the order they were taken.
    pair_merits : tuple of float
        The pair merit at the moment each was taken: ``merit * (1 - max |rho| to those
        taken before)`` for the greedy rule; for the preservation rule the merit
        of a single lens, then ``R_NX(set) * geometric mean of the merits`` of the
        set it completes (both lenses of the pair share the pair's score).
    stop : {"count", "ceiling", "candidates"}
        Why selection stopped: the count was reached; every remaining usable
        candidate has ``|rho|`` above the ceiling with a chosen one; or no
        usable candidate with merit > 0 was left.

    Examples
    --------
    >>> sel = select_lenses(np.eye(3), [0.2, 0.9, 0.5], count=3)
    >>> sel.indices, sel.stop
    ((1, 2, 0), 'count')
    """

    indices: tuple
    pair_merits: tuple
    stop: str


def _check_selection(correlation, merit, count, ceiling, usable, context):
    """A selection's merits, correlation matrix, count and ceiling, checked, and who may be taken.

    The last item is the mask of usable candidates with merit > 0.
    """
    merit = np.asarray(merit, dtype=np.float64)
    m = merit.shape[0]
    R = np.asarray(correlation, dtype=np.float64)
    if R.shape != (m, m):
        raise ParameterError(
            f"{context} got a correlation matrix of shape {R.shape} for {m} merits; "
            f"expected ({m}, {m})."
        )
    if merit.ndim != 1 or (np.isfinite(merit) & (merit >= 0)).sum() != m:
        raise ParameterError(
            f"{context} expects merits as a 1-D array of finite numbers >= 0."
        )
    count = check_int("count", count, lo=1, context=context)
    ceiling = check_float("ceiling", ceiling, lo=0, hi=1, lo_open=True, context=context)
    ok = np.ones(m, dtype=bool) if usable is None else np.asarray(usable, dtype=bool).copy()
    return merit, R, count, ceiling, ok & (merit > 0)


def select_lenses(correlation, merit, *, count=2, ceiling=0.8, usable=None):
    """Greedy non-redundant selection: best merit, discounted by redundancy.

    Parameters
    ----------
    correlation : array-like of shape (m, m)
        Rank correlations between the candidates (NaN entries count as 0 for
        the discount; mark such candidates unusable).
    merit : array-like of shape (m,)
        Non-negative merit of each candidate (e.g. its spread score).
    count : int, default=2
        Lenses to take at most.
    ceiling : float in (0, 1], default=0.8
        Never take a candidate whose ``|rho|`` with a chosen one exceeds this.
    usable : array-like of bool, shape (m,), optional
        Candidates that may be taken (default: all). Candidates with merit 0
        are never taken.

    Returns
    -------
    Selection

    Notes
    -----
    Step t takes ``argmax_j merit_j * (1 - max_{i in S} |rho_ij|)`` over the
    usable, untaken j with ``max_{i in S} |rho_ij| <= ceiling`` and merit > 0
    (S the lenses taken so far; the max over an empty S is 0, so the first
    pick is the best merit). Equal pair merits go to the earlier candidate, so the
    result is deterministic. Cost O(count m).

    Examples
    --------
    >>> rho = np.array([[1.0, 0.95, 0.1], [0.95, 1.0, 0.2], [0.1, 0.2, 1.0]])
    >>> sel = select_lenses(rho, [0.9, 0.8, 0.5], count=2, ceiling=0.8)
    >>> sel.indices, sel.stop
    ((0, 2), 'count')
    """
    merit, R, count, ceiling, ok = _check_selection(correlation, merit, count, ceiling, usable,
                                                    "select_lenses")
    m = merit.shape[0]
    absr = np.nan_to_num(np.abs(R), nan=0.0)
    worst = np.zeros(m)  # max |rho| to the chosen set
    chosen, pair_merits = [], []
    stop = "count"
    while len(chosen) < count:
        open_ = ok & (worst <= ceiling)
        if not open_.any():
            stop = "ceiling" if ok.any() else "candidates"
            break
        pair_merit = np.where(open_, merit * (1.0 - worst), -np.inf)
        j = int(np.argmax(pair_merit))
        chosen.append(j)
        pair_merits.append(float(pair_merit[j]))
        ok[j] = False
        worst = np.maximum(worst, absr[:, j])
    return Selection(tuple(chosen), tuple(pair_merits), stop)


def weighted_merit(scores, weights):
    """Weighted geometric mean of the named score columns (each in [0, 1]).

    Parameters
    ----------
    scores : dict of str -> array-like of shape (m,)
        Score columns, higher is better; NaN counts as 0.
    weights : dict of str -> float
        Weight of each score column that enters the merit (0 leaves it out).

    Returns
    -------
    ndarray of shape (m,)
        ``exp(sum_k w_k log s_k / sum_k w_k)``; 0 where any weighted score is
        0 (or NaN).

    Examples
    --------
    >>> m = weighted_merit({"spread": [0.25, 1.0, 0.5], "structure": [1.0, 0.0, 0.5]},
    ...                    {"spread": 1.0, "structure": 1.0})
    >>> np.round(m, 6).tolist()
    [0.5, 0.0, 0.5]
    """
    total = sum(weights.values())
    m = len(next(iter(scores.values())))
    log_sum = np.zeros(m)
    zero = np.zeros(m, dtype=bool)
    for name, w in weights.items():
        if w == 0:
            continue
        s = np.asarray(scores[name], dtype=np.float64)
        s = np.where(np.isfinite(s), s, 0.0)
        zero |= s <= 0
        with np.errstate(divide="ignore"):
            log_sum += w * np.log(np.where(s > 0, s, 1.0))
    merit = np.exp(log_sum / total)
    merit[zero] = 0.0
    return merit


def check_weights(weights, scores):
    """The merit weights, checked against the score columns.

    The default is :data:`DEFAULT_WEIGHTS` when every one of its columns is there
    (the probe ran), else :data:`NO_PROBE_WEIGHTS`.
    """
    if weights is None:
        weights = DEFAULT_WEIGHTS if set(DEFAULT_WEIGHTS) <= set(scores) else NO_PROBE_WEIGHTS
    weights = dict(weights)
    if not weights:
        raise ParameterError(
            "The 'weights' parameter of screen is empty; expected at least one score column, "
            "e.g. {'spread': 1.0}."
        )
    for name, w in weights.items():
        if name not in scores:
            raise ParameterError(
                f"The 'weights' parameter of screen names score column {name!r}, which does "
                f"not exist. Score columns: {', '.join(scores)}."
            )
        check_float(f"weights[{name!r}]", w, lo=0, context="screen")
    if sum(weights.values()) <= 0:
        raise ParameterError("The 'weights' of screen sum to 0; give one a positive weight.")
    return {k: float(v) for k, v in weights.items()}


class PairPreservation:
    """Neighbour preservation ``R_NX(K)`` of sets of lens columns, cached per set.

    Parameters
    ----------
    columns : array-like of shape (n_rows, m)
        The lens values on the rows used (every row, or a sample of them).
    neighbors : array-like of shape (n_rows, K), int
        The data's K nearest neighbours among those rows (the screen's shared graph).
    scale : {"k", "log-auc"}, default="k"
        Passed to :func:`lenswork.criteria.neighbour_preservation`: ``R_NX`` at
        the graph's own K (the default; see the module notes) or the log-scale
        area over k = 1..K.

    Examples
    --------
    >>> from lenswork import Workspace
    >>> X = np.random.default_rng(0).uniform(size=(300, 2))
    >>> rnx = PairPreservation(X, Workspace(X).neighbors(10).indices)
    >>> round(rnx((0, 1)), 1)
    0.9
    """

    def __init__(self, columns, neighbors, scale="k"):
        V = np.asarray(columns, dtype=np.float64)
        ok = np.isfinite(V).all(axis=0)
        self.U = np.column_stack([normalize(V[:, j], "rank") if ok[j] else np.zeros(len(V))
                                  for j in range(V.shape[1])])
        self.neighbors = np.asarray(neighbors, dtype=np.int64)
        self.scale = scale
        self._cache = {}
        self._rows = {}

    def __call__(self, indices):
        key = tuple(sorted(int(j) for j in indices))
        if key not in self._cache:
            if self.scale == "k":
                self._cache[key] = float(self.rows(key).mean())
            else:
                self._cache[key] = neighbour_preservation(self.U[:, list(key)], self.neighbors,
                                                          scale=self.scale)
        return self._cache[key]

    def rows(self, indices):
        """Each row's term of ``R_NX(K)`` for a set of candidates (their mean is the call's value).

        Only for ``scale="k"``; cached per set, like the call.
        """
        key = tuple(sorted(int(j) for j in indices))
        if key not in self._rows:
            self._rows[key] = neighbour_preservation(self.U[:, list(key)], self.neighbors,
                                                     scale="k", per_row=True)
        return self._rows[key]


#: ``structure`` of a lens that reveals nothing and keeps its rows (the probe's default floor).
STRUCTURE_FLOOR = 0.25


def joint_merit(scores, weights, floor=STRUCTURE_FLOOR, families=None):
    """The structure two lenses show together: the pair rule's weight on ``R_NX``, or None.

    Parameters
    ----------
    scores : dict of str -> ndarray of shape (m,)
        Score columns; the pair rule needs ``loop_significance`` and
        ``branch_significance`` (the structure probe's) and the merit's columns.
    weights : dict of str -> float
        The merit's weights; the structure must enter them.
    floor : float, default=0.25
        The weight of a pair that shows no significant loop or branch (the
        probe's floor for a lens that reveals nothing).
    families : sequence of str, optional
        The lens family of each candidate (``LensColumn.lens``). The coverage
        then counts only the kinds of structure that lenses of at least two
        families show (default: every kind some candidate shows).

    Returns
    -------
    callable or None
        ``merit(i, j) = (floor + (1 - floor)(1 - 2^-(T_loop + T_branch))) *
        coverage(i, j)`` with ``T_loop = max(T_loop_i, T_loop_j)`` and
        ``T_branch`` likewise (``T = -log2(1 - significance)``, the probe's
        totals per kind). So a pair of a lens that shows the loop and one that
        shows the tails gets credit for both, two lenses that show the same loop
        get it once, and pairs that show nothing significant all weigh
        ``floor``: then ``R_NX`` alone decides. The coverage is ``prod_kind ((1
        + r_kind) / 2) ** (w_structure / sum w)`` over the kinds (loops,
        branches) some candidate shows, each factor raised to ``s_kind``, with
        ``r_kind`` the larger ``merit_i * sig_kind_i`` of the pair over the
        largest of any candidate (``sig_kind``: the probe's ``loop_significance``
        or ``branch_significance``) and ``s_kind`` the evidence for the kind: the
        largest total ``T_kind`` of any candidate in whole-range features of that
        kind (one loop over the whole range ``T = 1``, one branch ``T = 0.5``,
        the probe's ``SIGNIFICANCE_WEIGHTS``), at most 1. A pair that leaves
        out loops or tails shown clearly (a whole-range feature or more) loses
        what halving a lens's structure score costs its merit,
        ``2^-(w_structure / sum w)`` (21 % with the default weights); one that
        leaves out a kind shown weakly loses less: a branch of significance
        0.1 (``T = 0.15``, a tail over 30 % of the range) costs it 7 %. (At the
        full 21 % for every kind, such a branch, shown by three density-type
        lenses on a table of card applicants, took the pair from 0.84 to 0.58
        balanced accuracy, while pca_1 + pca_2 had 0.86;
        tests/benchmarks/bench_judgement.py, credit_cards.) With ``families``, a kind
        that lenses of one family alone show is left out of the coverage: one
        construction's feature may be its artefact (a Laplacian vector computed
        per piece of a disconnected neighbour graph puts its pieces at
        arbitrary levels, and its graphs branch between them), while two
        constructions that agree point at the data; the pair still gets the
        kind's credit in ``T``.
        The lenses' spread and smoothness do not enter on their own: for a pair
        they are what ``R_NX`` measures (a lens with ties or one that scatters
        data neighbours scatters the pair's neighbourhoods), and counting them
        again let one lens's smoothness outweigh a gap in neighbour
        preservation between pairs. None when the structure does not enter the
        merit or the columns are missing (the pair rule then weighs ``R_NX`` by
        ``sqrt(merit_i merit_j)``).

    Examples
    --------
    >>> s = {"structure": [0.625, 0.4375, 0.625, 0.25],
    ...      "loop_significance": [0.5, 0.0, 0.5, 0.0],
    ...      "branch_significance": [0.0, 0.25, 0.0, 0.0]}
    >>> f = joint_merit(s, {"structure": 1.0})
    >>> round(f(0, 1), 4), round(f(0, 2), 4), round(f(1, 3), 4)  # loop + tail beats loop + loop
    (0.7188, 0.3516, 0.2188)
    >>> g = joint_merit(s, {"structure": 1.0}, families=["pca", "density", "pca", "dtm"])
    >>> round(g(0, 2), 4)   # the loop is one family's, the tail another's: no coverage
    0.625
    """
    need = ("loop_significance", "branch_significance")
    if weights.get("structure", 0) <= 0 or not all(k in scores for k in need):
        return None
    cols = {k: np.nan_to_num(np.asarray(v, dtype=np.float64), nan=0.0)
            for k, v in scores.items() if k in weights or k in need}

    def level(name):
        return -np.log2(1.0 - np.clip(cols[name], 0.0, 1.0 - 1e-12))

    loop_t, branch_t = level("loop_significance"), level("branch_significance")
    single = weighted_merit(cols, weights)
    kinds = need if families is None else [
        k for k in need if len({families[j] for j in np.flatnonzero(cols[k] > 0)}) >= 2]
    shown = [single * cols[k] for k in kinds]
    best = [float(v.max()) if v.size else 0.0 for v in shown]
    # the evidence for each kind in whole-range features of that kind, at most one
    full = {"loop_significance": SIGNIFICANCE_WEIGHTS["loop"],
            "branch_significance": SIGNIFICANCE_WEIGHTS["down"]}
    top_t = {"loop_significance": loop_t, "branch_significance": branch_t}
    strength = [min(1.0, float(top_t[k].max()) / full[k]) if cols[k].size else 0.0
                for k in kinds]
    power = weights["structure"] / sum(weights.values())

    def merit(i, j):
        T = max(loop_t[i], loop_t[j]) + max(branch_t[i], branch_t[j])
        coverage = 1.0
        for v, top, s in zip(shown, best, strength):
            if top > 0:
                coverage *= (0.5 * (1.0 + min(max(v[i], v[j]) / top, 1.0))) ** s
        return float((floor + (1.0 - floor) * (1.0 - 2.0 ** (-T))) * coverage ** power)

    return merit


def _pair_weight(merit, joint_merit):
    """The pair rule's weight on ``R_NX``: ``joint_merit(i, j)``, or ``sqrt(merit_i merit_j)``."""
    if joint_merit is None:
        return lambda i, j: float(np.sqrt(merit[i] * merit[j]))
    return lambda i, j: float(joint_merit(int(i), int(j)))


def _allowed_pairs(ok, absr, ceiling):
    """Candidate pairs ``(i, j)``, ``i < j``, both usable, with ``|rho_ij| <= ceiling``."""
    idx = np.flatnonzero(ok)
    return [(int(i), int(j)) for a, i in enumerate(idx) for j in idx[a + 1:]
            if absr[i, j] <= ceiling]


def _geomean(merit, idx):
    return float(np.exp(np.mean(np.log(merit[list(idx)]))))


def select_by_preservation(correlation, merit, preservation, *, count=2, ceiling=0.8,
                           usable=None, joint_merit=None):
    """The lens set that keeps the data's neighbours, weighted by merit, under the ceiling.

    Parameters
    ----------
    correlation : array-like of shape (m, m)
        Rank correlations between the candidates (NaN counts as 1: never paired).
    merit : array-like of shape (m,)
        Non-negative merits; candidates with merit 0 are never taken.
    preservation : callable
        ``preservation(indices) -> R_NX`` of a set of candidates
        (:class:`PairPreservation`).
    count : int, default=2
    ceiling : float in (0, 1], default=0.8
    usable : array-like of bool, shape (m,), optional
    joint_merit : callable, optional
        ``joint_merit(i, j)``, the merit of the two lenses together (:func:`joint_merit`: the
        structure the two show together) in place of ``sqrt(merit_i merit_j)``.

    Returns
    -------
    Selection
        For ``count == 1`` the best merit. Otherwise the pair with the largest
        ``max(R_NX, 0) * sqrt(merit_i merit_j)`` (or ``joint_merit``) with ``|rho_ij| <= ceiling``
        (higher merit first), then, one at a time, the candidate ``j`` with the
        largest ``max(R_NX(S + j), 0) * geomean(merit over S + j)`` under the
        ceiling with every member of S. Equal scores go to the earlier
        candidate (pair), so the result is deterministic.

    Examples
    --------
    >>> rho = np.array([[1.0, 0.9, 0.1], [0.9, 1.0, 0.2], [0.1, 0.2, 1.0]])
    >>> table = {(0, 1): 0.3, (0, 2): 0.5, (1, 2): 0.6}
    >>> sel = select_by_preservation(rho, [0.9, 0.8, 0.5], lambda s: table[tuple(s)])
    >>> sel.indices, sel.stop
    ((1, 2), 'count')
    """
    merit, R, count, ceiling, ok = _check_selection(correlation, merit, count, ceiling, usable,
                                                    "select_by_preservation")
    idx = np.flatnonzero(ok)
    if not idx.size:
        return Selection((), (), "candidates")
    first = int(idx[np.argmax(merit[idx])])
    if count == 1:
        return Selection((first,), (float(merit[first]),), "count")
    absr = np.nan_to_num(np.abs(R), nan=1.0)
    both = _pair_weight(merit, joint_merit)
    pairs = [(both(i, j), i, j) for i, j in _allowed_pairs(ok, absr, ceiling)]
    if not pairs:
        return Selection((first,), (float(merit[first]),),
                         "ceiling" if idx.size > 1 else "candidates")
    pairs.sort(key=lambda t: (-t[0], t[1], t[2]))
    best, chosen = -1.0, None
    for bound, i, j in pairs:
        if bound <= best:
            break
        score = max(float(preservation((i, j))), 0.0) * bound
        if score > best + 1e-12:
            best, chosen = score, (i, j) if merit[i] >= merit[j] else (j, i)
    chosen = list(chosen)
    pair_merits = [best, best]
    stop = "count"
    while len(chosen) < count:
        worst = absr[:, chosen].max(axis=1)
        open_ = ok & (worst <= ceiling)
        open_[chosen] = False
        cand = np.flatnonzero(open_)
        if not cand.size:
            rest = ok.copy()
            rest[chosen] = False
            stop = "ceiling" if rest.any() else "candidates"
            break
        bounds = sorted(((_geomean(merit, [*chosen, int(j)]), int(j)) for j in cand),
                        key=lambda t: (-t[0], t[1]))
        top, pick = -1.0, None
        for bound, j in bounds:
            if bound <= top:
                break
            score = max(float(preservation([*chosen, j])), 0.0) * bound
            if score > top + 1e-12:
                top, pick = score, j
        chosen.append(pick)
        pair_merits.append(top)
    return Selection(tuple(chosen), tuple(pair_merits), stop)


#: Standard errors within which two pairs' scores count as the same (common practice).
TIE_Z = 2.0


def tied_pairs(chosen, correlation, merit, preservation, *, ceiling=0.8, usable=None,
               joint_merit=None, z=TIE_Z):
    """Pairs whose score the data do not tell apart from the chosen pair's.

    Parameters
    ----------
    chosen : tuple of two int
        The chosen pair (:func:`select_by_preservation`).
    correlation, merit, ceiling, usable, joint_merit
        As for :func:`select_by_preservation`: the same pairs are allowed and scored.
    preservation : PairPreservation
        Must give each row's term of ``R_NX(K)`` (``preservation.rows``).
    z : float, default=2.0
        Standard errors within which a pair counts as tied with the chosen one.

    Returns
    -------
    list of (i, j, score, difference, se)
        The allowed pairs with ``score_c - score_p <= z * se``, best score first:
        ``score = weight * R_NX(K)`` as the pair rule scores it, ``difference``
        the chosen pair's score minus this one's, ``se`` the standard error of
        that difference from the per-row differences ``d_i = w_c r_c,i - w_p
        r_p,i`` (paired: the rows are the same). The chosen pair is not listed.

    Notes
    -----
    Rows that are neighbours share most of their neighbourhoods, so their
    terms are correlated and ``sd(d) / sqrt(n)`` understates the error (by a
    factor 2-4.5 on 21 labelled tables). The standard error is the spatial
    heteroskedasticity-and-autocorrelation-consistent one with a uniform kernel
    over the neighbour graph (Conley, "GMM estimation with cross sectional
    dependence", J. Econometrics 92, 1999): ``se^2 = (sum_i e_i^2 + sum_(i~j)
    e_i e_j) / n^2`` with ``e = d - mean(d)`` and ``i ~ j`` when either row is
    among the other's K neighbours (each ordered pair once), never below the
    independent-rows figure ``var(d) / n``. Pairs that cannot be within ``z``
    standard errors are not scored: ``score_p <= w_p``, and ``se <= sqrt((1 +
    D) / n) (w_c sd(r_c) + w_p h)`` with ``D`` the graph's largest degree and
    ``h`` half the range of a per-row term, ``[-K / (n - 1 - K), (n - 1) / (n -
    1 - K)]`` (Gershgorin's bound on ``e^T (I + A) e``).

    Examples
    --------
    >>> from lenswork import Workspace
    >>> rng = np.random.default_rng(0)
    >>> X = rng.uniform(size=(400, 2))
    >>> V = np.column_stack([X[:, 0], X[:, 1], np.exp(X[:, 0])])  # exp: x0's ranks again
    >>> pres = PairPreservation(V, Workspace(X).neighbors(10).indices)
    >>> rho = np.corrcoef(V.T)
    >>> [(int(i), int(j)) for i, j, *_ in tied_pairs((0, 1), rho, [1.0, 1.0, 1.0], pres,
    ...                                              ceiling=1.0)]
    [(1, 2)]
    """
    merit, R, _, ceiling, ok = _check_selection(correlation, merit, 2, ceiling, usable,
                                                "tied_pairs")
    absr = np.nan_to_num(np.abs(R), nan=1.0)
    both = _pair_weight(merit, joint_merit)
    c = tuple(sorted(int(j) for j in chosen))
    wc = both(*c)
    rc = wc * preservation.rows(c)
    n = rc.shape[0]
    nb = preservation.neighbors
    K = nb.shape[1]
    A = knn_matrix(nb, np.ones(nb.shape))  # i ~ j: either is among the other's neighbours
    A.setdiag(0.0)
    A.eliminate_zeros()
    degree = float(np.asarray(A.sum(axis=1)).max()) if n else 0.0
    half = 0.5 * ((n - 1) + K) / (n - 1 - K)
    spread_c = float(rc.std()) if n > 1 else 0.0  # w_c sd(r_c)
    score_c = max(float(rc.mean()), 0.0)
    out = []
    for p in _allowed_pairs(ok, absr, ceiling):
        wp = both(*p)
        if p == c or wp < score_c - z * np.sqrt((1.0 + degree) / n) * (spread_c + wp * half):
            continue  # the chosen pair, or one that cannot be within z standard errors
        rp = wp * preservation.rows(p)
        d = rc - rp
        e = d - d.mean()
        var = max(float(e @ e + e @ (A @ e)) / n ** 2, float(d.var(ddof=1)) / n)
        se = float(np.sqrt(var))
        diff = score_c - max(float(rp.mean()), 0.0)
        if diff <= z * se:
            out.append((p[0], p[1], score_c - diff, diff, se))
    out.sort(key=lambda t: (-t[2], t[0], t[1]))
    return out
