"""Eccentricity lenses: how far, on average, a point lies from all the others.

``E_p(x) = (mean_y d(x, y)^p)^(1/p)`` over all n points y, x itself included
(its zero distance counts in the mean), and ``E_inf(x) = max_y d(x, y)``.

* Euclidean, p = 2: the closed form
  ``E_2(x)^2 = ||x - mean||^2 + (1/n) sum_y ||y - mean||^2``, O(n d).
* other p, exact: all pairs in tiles of one BLAS product each
  (``||x||^2 + ||y||^2 - 2 x.y``), O(n^2 d).
* other p, landmarks: the mean over a random subsample of landmarks, with a
  standard error (p finite) or a hard upper bound (p = inf), O(n m d).
* geodesic: shortest paths on the shared neighbour graph from landmarks.
"""

from __future__ import annotations

import math
from functools import partial

import numpy as np
from sklearn.base import BaseEstimator, TransformerMixin

from .._errors import InputError, ParameterError, warn_caller
from .._validation import (
    check_array,
    check_choice,
    check_float_or_choice,
    check_int,
    check_random_state,
    seed_of,
)
from ._common import (
    TILE_COLS,
    LensOutputMixin,
    check_input,
    parallel_rows,
    sample_rows,
    zero_self,
)
from ._declare import LensDecl, keep
from ._registry import LensPart, Param

__all__ = ["Eccentricity", "eccentricity", "geodesic_eccentricity"]

MODES = ("auto", "exact", "landmark")
#: "auto" computes all pairs up to this many rows (p != 2), landmarks above.
EXACT_MAX_ROWS = 40_000
LANDMARKS = 1000
#: Geodesic landmarks by default ("auto"): every point up to 200 rows, else
#: m = clip(round(GEODESIC_BUDGET / n), 32, 200). Each landmark is one Dijkstra run,
#: O(n k log n), so the budget caps the cost at about 1e7 node visits (m n) from 5e4 rows
#: up, where m reaches 200 -> 100 at 1e5 -> the floor of 32 from about 3e5 rows. The
#: error of a landmark mean depends on m, not on n: relative standard error about
#: cv / (p sqrt(m)), cv the spread of d^p over the component (1 / (p sqrt(m)) when cv = 1:
#: 3.5 % at m = 200, 8.8 % at the floor of 32), stated per run in the info.
GEODESIC_LANDMARKS = 200
GEODESIC_MIN_LANDMARKS = 32
GEODESIC_BUDGET = 10_000_000
# Dijkstra runs from this many landmarks at a time (bounded memory: batch x n floats).
_DIJKSTRA_BATCH = 16


_P_CHECK = partial(check_float_or_choice, choices=("inf",), lo=1.0, lo_open=False)
_P_DOC = "order of the mean (>= 1) or 'inf' for the largest distance"


def _p_value(p):
    return math.inf if p == "inf" else float(p)


def _p_label(p):
    return "inf" if math.isinf(p) else p


# ---------------------------------------------------------------------------
# tiled all-pairs reductions
# ---------------------------------------------------------------------------


def _augment_rows(Q, q_sq):
    """``Qa`` with ``Qa @ RaT = ||q - r||^2``: the rows ``Q``, their squared norms, ones."""
    d = Q.shape[1]
    Qa = np.empty((Q.shape[0], d + 2))
    Qa[:, :d] = Q
    Qa[:, d] = q_sq
    Qa[:, d + 1] = 1.0
    return Qa


def _augment_cols(R, r_sq):
    """``RaT`` with ``Qa @ RaT = ||q - r||^2``: ``-2 R^T``, ones, the squared norms."""
    d = R.shape[1]
    RaT = np.empty((d + 2, R.shape[0]))
    np.multiply(R.T, -2.0, out=RaT[:d])
    RaT[d] = 1.0
    RaT[d + 1] = r_sq
    return RaT


def _power_sums(Q, R, p, *, ref_rows=None, second=False, extra=None):
    """Per query row: sum_j d^p (and sum_j d^2p), or max_j d for p = inf.

    ``ref_rows`` (sorted data index of each reference row) marks self pairs of
    query rows 0..n-1, whose distance is set to exactly 0. ``extra`` (p = inf
    only, one value per reference) also returns ``min_j (d_ij + extra_j)``.
    The squared-distance factors are made per tile (a block of query rows, a
    tile of reference rows), so no (n, d + 2) copy of either side is held: at
    1e6 x 20 rows that is 176 MB per side.
    """
    q_sq = np.einsum("ij,ij->i", Q, Q)
    r_sq = np.einsum("ij,ij->i", R, R)
    nq, nr = Q.shape[0], R.shape[0]
    s1 = np.zeros(nq)
    s2 = np.zeros(nq) if second else None
    upper = np.full(nq, np.inf) if extra is not None else None

    def work(i0, i1):
        acc1 = np.zeros(i1 - i0)
        acc2 = np.zeros(i1 - i0) if second else None
        up = np.full(i1 - i0, np.inf) if extra is not None else None
        buf = np.empty((i1 - i0, TILE_COLS))
        Qa = _augment_rows(Q[i0:i1], q_sq[i0:i1])
        for j0 in range(0, nr, TILE_COLS):
            j1 = min(j0 + TILE_COLS, nr)
            T = buf if j1 - j0 == TILE_COLS else np.empty((i1 - i0, j1 - j0))
            np.matmul(Qa, _augment_cols(R[j0:j1], r_sq[j0:j1]), out=T)
            np.maximum(T, 0.0, out=T)  # rounding can make a squared distance slightly negative
            if ref_rows is not None:
                zero_self(T, i0, i1, None, ref_rows, j0, j1)
            if math.isinf(p):
                np.maximum(acc1, T.max(axis=1), out=acc1)
                if extra is not None:
                    np.sqrt(T, out=T)
                    T += extra[None, j0:j1]
                    np.minimum(up, T.min(axis=1), out=up)
                continue
            if p == 1.0:
                np.sqrt(T, out=T)
            elif p == 2.0:
                pass
            elif p == 4.0:
                np.square(T, out=T)
            else:
                np.power(T, 0.5 * p, out=T)
            acc1 += T.sum(axis=1)
            if second:
                acc2 += np.einsum("ij,ij->i", T, T)
        s1[i0:i1] = np.sqrt(acc1) if math.isinf(p) else acc1
        if second:
            s2[i0:i1] = acc2
        if extra is not None:
            upper[i0:i1] = up

    with np.errstate(over="ignore"):  # overflow of d^p is reported by _finite_or_fail
        parallel_rows(work, nq)
    return s1, s2, upper


def _scaled(X, Q=None):
    """Centre on the reference mean and divide by a scale (accuracy, no overflow of d^p)."""
    mean = X.mean(axis=0)
    Xc = X - mean
    scale = float(np.sqrt(np.einsum("ij,ij->i", Xc, Xc).max())) or 1.0
    Qc = None if Q is None else (Q - mean) / scale
    Xc /= scale  # in place: one copy of X, not two
    return Xc, Qc, scale


def _finite_or_fail(values, p):
    if not np.all(np.isfinite(values)):
        raise ParameterError(
            f"The 'p' parameter of eccentricity is too large for floating point (p={p:g}): "
            f"d^p overflowed. Use a smaller p, or p='inf' for the largest distance."
        )
    return values


# ---------------------------------------------------------------------------
# the worker
# ---------------------------------------------------------------------------


def _eccentricity(X, Q, *, p, mode, landmarks, rng):
    """Eccentricity of the rows of Q (None: the rows of X themselves) w.r.t. X.

    Returns ``(values, info, error)``; ``error`` is the per-point standard error
    (landmarks, p finite), the gap to the upper bound (landmarks, p = inf) or None.
    """
    n = X.shape[0]
    self_query = Q is None
    info = {"p": _p_label(p), "metric": "euclidean"}
    if p == 2.0:
        mean = X.mean(axis=0)
        Xc = X - mean
        spread = float(np.einsum("ij,ij->i", Xc, Xc).mean())
        Qc = Xc if self_query else Q - mean
        values = np.sqrt(np.einsum("ij,ij->i", Qc, Qc) + spread)
        info.update(mode="closed_form", error="none: exact closed form")
        return values, info, None
    if mode == "auto":
        mode = "exact" if n <= EXACT_MAX_ROWS else "landmark"
    if mode == "landmark" and landmarks >= n:
        mode = "exact"
    Xs, Qs, scale = _scaled(X, Q)
    Qs = Xs if self_query else Qs
    if mode == "exact":
        s1, _, _ = _power_sums(Qs, Xs, p, ref_rows=np.arange(n) if self_query else None)
        values = s1 if math.isinf(p) else (s1 / n) ** (1.0 / p)
        info.update(mode="exact", error="none: exact sum over all pairs")
        return _finite_or_fail(values * scale, p), info, None
    rows = sample_rows(X, landmarks, rng)
    m = rows.size
    L = Xs[rows]
    ref_rows = rows if self_query else None
    info.update(mode="landmark", landmarks=int(m))
    if math.isinf(p):
        # exact eccentricity of each landmark, then for every x:
        #   max_l d(x, l) <= E_inf(x) <= min_l (d(x, l) + E_inf(l))   (triangle inequality)
        ecc_l, _, _ = _power_sums(L, Xs, p, ref_rows=None)
        lower, _, upper = _power_sums(Qs, L, p, ref_rows=ref_rows, extra=ecc_l)
        gap = (upper - lower) * scale
        info.update(
            error="hard interval: value = max distance to a landmark (a lower bound); the true "
            "value is at most value + gap (triangle inequality through the landmarks)",
            gap_median=float(np.median(gap)), gap_max=float(np.max(gap)),
            rel_gap_median=float(np.median(gap / np.maximum(lower * scale, 1e-300))),
        )
        return lower * scale, info, gap
    s1, s2, _ = _power_sums(Qs, L, p, ref_rows=ref_rows, second=True)
    mu = s1 / m
    var = np.maximum(s2 / m - mu**2, 0.0) * m / max(m - 1, 1)
    se_mu = np.sqrt(var / m * max(0.0, 1.0 - m / n))
    values = mu ** (1.0 / p)
    # delta method: se(mu^(1/p)) = mu^(1/p - 1) se(mu) / p
    with np.errstate(divide="ignore", invalid="ignore"):
        rel_se = np.where(mu > 0, se_mu / (p * mu), 0.0)
    info.update(
        error="estimated relative standard error (landmark sample, delta method)",
        rel_se_median=float(np.median(rel_se)), rel_se_max=float(np.max(rel_se)),
    )
    values = _finite_or_fail(values * scale, p)
    return values, info, rel_se * values


def _returned(values, info, err, p, return_info):
    """``values``, or ``(values, info)`` with the per-point error as ``"gap"`` or ``"se"``."""
    if not return_info:
        return values
    if err is not None:
        info["gap" if math.isinf(p) else "se"] = err
    return values, info


#: The one declaration of the lens: function, transformer, registry, CLI and docs follow.
ECCENTRICITY = LensDecl(
    "eccentricity",
    summary="Mean Euclidean distance to all points (order p)",
    cost="p=2: O(n d); else exact O(n^2 d) up to 40,000 rows, landmarks O(n m d)",
    params=(
        Param("p", 2.0, _P_CHECK, _P_DOC, type='float >= 1 or "inf"',
              more='``"inf"`` (or ``np.inf``) gives the largest distance.'),
        Param("mode", "auto", partial(check_choice, choices=MODES),
              "exact pairs, landmark estimate, or auto by size (p=2: closed form)",
              type='{"auto", "exact", "landmark"}',
              more="For p != 2: all pairs, or the mean over ``landmarks`` random rows;\n"
                   '``"auto"`` is exact up to 40,000 rows. p = 2 always uses the exact\n'
                   'closed form (``info["mode"] == "closed_form"``).'),
        Param("landmarks", LANDMARKS, partial(check_int, lo=2),
              "landmark sample size of the estimate", type="int >= 2"),
        Param("random_state", 0, keep, "seeds the landmark choice",
              type="int, numpy Generator or None", lens=False),
    ),
)


@ECCENTRICITY.function
def eccentricity(X, *, p, mode, landmarks, random_state, return_info=False):
    """Euclidean eccentricity ``(mean_y ||x - y||^p)^(1/p)`` of every row.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        A 1-D array is read as one feature.
    {lens_params}
    return_info : bool, default=False
        Also return a dict (mode, error estimate) and, under ``"error"``... see Notes.

    Returns
    -------
    values : ndarray of shape (n_samples,)
    info : dict
        Only with ``return_info=True``; in landmark mode it holds ``"se"``
        (p finite: per-point standard error) or ``"gap"`` (p = inf: per-point
        width of the hard interval).

    Raises
    ------
    ParameterError
        p < 1, an unknown mode, landmarks < 2, or p so large that d^p overflows.
    InputError
        Non-finite data.

    Notes
    -----
    The mean runs over all n rows, the point itself included (distance 0), so
    ``E_p(x)^p = (1/n) sum_y ||x - y||^p``.

    * p = 2: ``E_2(x)^2 = ||x - m||^2 + (1/n) sum_y ||y - m||^2`` with ``m`` the
      mean, O(n d).
    * exact: tiles of ``||x||^2 + ||y||^2 - 2 x.y`` from one BLAS product each,
      after centring and scaling; self distances set to exactly 0;
      O(n^2 d). Exact duplicates of a row other than itself may show a distance
      of about 1e-8 times the data scale instead of 0.
    * landmarks, p finite: ``mu = mean_l ||x - l||^p`` over a simple random
      sample of m rows (chosen by row content, so the choice does not depend on
      the row order), unbiased for ``E_p^p``; standard error
      ``sqrt(var / m (1 - m/n))``, carried to ``E_p`` by the delta method. O(n m d).
    * landmarks, p = inf: the value is ``max_l ||x - l||``, a lower bound
      attained by a real pair; with the exact ``E_inf`` of every landmark, the
      triangle inequality gives ``E_inf(x) <= min_l (||x - l|| + E_inf(l))``. The
      gap between the two is reported; O(n m d).

    References
    ----------
    .. [1] M. Carriere, B. Michel and S. Oudot, "Statistical analysis and
       parameter selection for Mapper", JMLR 19, 2018 (eccentricity as a lens of
       Mapper, 2007).

    Examples
    --------
    >>> X = np.array([[0.0, 0.0], [2.0, 0.0]])
    >>> eccentricity(X).round(6).tolist()
    [1.414214, 1.414214]
    >>> eccentricity(X, p="inf").tolist()
    [2.0, 2.0]
    """
    X = check_array(X, "eccentricity")
    rng = check_random_state(random_state)
    p = _p_value(p)
    values, info, err = _eccentricity(X, None, p=p, mode=mode, landmarks=landmarks, rng=rng)
    return _returned(values, info, err, p, return_info)


@ECCENTRICITY.estimator
class Eccentricity(LensOutputMixin, TransformerMixin, BaseEstimator):
    """Euclidean eccentricity as a transformer (one output column).

    Parameters
    ----------
    {lens_params}

    Attributes
    ----------
    n_features_in_ : int
    feature_names_in_ : ndarray of str
        Column names of a DataFrame given to ``fit`` (only then).
    info_ : dict
        Mode and error estimate of ``fit_transform`` (empty after ``fit``;
        ``transform`` leaves the fitted estimator unchanged).

    Notes
    -----
    ``transform(Y)`` gives the eccentricity of each row of ``Y`` with respect to
    the fitted rows; ``fit_transform(X)`` equals :func:`eccentricity` on ``X``.
    The output column is named ``eccentricity`` (``get_feature_names_out``).

    Examples
    --------
    >>> X = np.random.default_rng(0).normal(size=(200, 3))
    >>> est = Eccentricity(p=1)
    >>> est.fit_transform(X).shape
    (200, 1)
    >>> bool(np.allclose(est.transform(X[:4])[:, 0], eccentricity(X, p=1)[:4]))
    True
    """

    def fit(self, X, y=None):
        """Keep ``X`` as the reference rows."""
        ECCENTRICITY.check(self.get_params(), "Eccentricity")
        self._X = check_input(self, X, reset=True)
        self.info_ = {}
        return self

    def _run(self, Q):
        params = ECCENTRICITY.check(self.get_params(), "Eccentricity")
        values, info, _ = _eccentricity(
            self._X, Q, p=_p_value(params["p"]), mode=params["mode"],
            landmarks=params["landmarks"],
            rng=check_random_state(self.random_state),
        )
        return values[:, None], info

    def _output_names(self):
        return ["eccentricity"]

    def transform(self, X):
        """Eccentricity of the rows of ``X`` w.r.t. the fitted rows, shape (n, 1)."""
        return self._run(check_input(self, X, reset=False))[0]

    def fit_transform(self, X, y=None, **fit_params):
        """Fit on ``X`` and return the eccentricity of its rows, shape (n, 1)."""
        values, self.info_ = self.fit(X)._run(None)
        return values


# ---------------------------------------------------------------------------
# geodesic eccentricity
# ---------------------------------------------------------------------------


def _graph_matrix(graph):
    """Symmetric sparse distance matrix of a NeighborGraph; zero lengths made tiny, not dropped."""
    dist = graph.distances
    positive = dist[dist > 0]
    tiny = (float(positive.min()) if positive.size else 1.0) * 1e-9
    return graph.to_sparse(np.where(dist > 0, dist, tiny))


def _geodesic(graph, X, *, p, landmarks, rng, warn):
    """Geodesic eccentricity on a NeighborGraph; returns (values, info, error)."""
    from scipy.sparse.csgraph import connected_components, dijkstra

    A = _graph_matrix(graph)
    n = A.shape[0]
    ncomp, labels = connected_components(A, directed=False)
    sizes = np.bincount(labels, minlength=ncomp)
    if ncomp > 1:
        warn(
            f"geodesic eccentricity: the neighbour graph (k={graph.k}) has {ncomp} connected "
            f"components (largest {sizes.max()} of {n} rows); each point's eccentricity is taken "
            f"within its own component. A larger k joins components."
        )
    # landmarks per component, in proportion to its size (at least one; all when it is small)
    chosen = []
    for c in range(ncomp):
        members = np.flatnonzero(labels == c)
        m_c = members.size if landmarks >= n else min(
            members.size, max(1, round(landmarks * members.size / n))
        )
        chosen.append(members[sample_rows(X[members], m_c, rng)])
    lm = np.sort(np.concatenate(chosen))
    m_of = np.bincount(labels[lm], minlength=ncomp).astype(np.float64)
    finite_p = not math.isinf(p)
    s1 = np.zeros(n)
    s2 = np.zeros(n)
    low_hard = np.zeros(n)  # max_l (E(l) - d(x, l)) (p finite) / not used (p = inf)
    up_hard = np.full(n, np.inf)  # min_l (E(l) + d(x, l))
    ecc_l = np.empty(lm.size)
    for b0 in range(0, lm.size, _DIJKSTRA_BATCH):
        src = lm[b0:b0 + _DIJKSTRA_BATCH]
        D = dijkstra(A, directed=False, indices=src)  # (batch, n), inf outside the component
        for r, s in enumerate(src):
            comp = labels == labels[s]
            row = D[r]
            dr = np.where(comp, row, 0.0)
            if finite_p:
                e = (np.sum(dr[comp] ** p) / sizes[labels[s]]) ** (1.0 / p)
                s1 += dr**p
                s2 += dr ** (2 * p)
            else:
                e = float(dr.max())
                np.maximum(s1, dr, out=s1)
            ecc_l[b0 + r] = e
            # triangle inequality through the landmark, points of its component only
            np.minimum(up_hard, np.where(comp, e + dr, np.inf), out=up_hard)
            np.maximum(low_hard, np.where(comp, e - dr, 0.0), out=low_hard)
    m_i = m_of[labels]
    n_i = sizes[labels].astype(np.float64)
    info = {
        "p": _p_label(p), "k": graph.k, "landmarks": int(lm.size), "components": int(ncomp),
        "neighbor_method": graph.method,
    }
    exact = bool(np.all(m_of == sizes))
    if finite_p:
        mu = s1 / m_i
        values = mu ** (1.0 / p)
        var = np.maximum(s2 / m_i - mu**2, 0.0) * m_i / np.maximum(m_i - 1, 1)
        se_mu = np.sqrt(var / m_i * np.maximum(0.0, 1.0 - m_i / n_i))
        with np.errstate(divide="ignore", invalid="ignore"):
            se = np.where(mu > 0, values * se_mu / (p * mu), 0.0)
        error = se
        info.update(
            mode="exact" if exact else "landmark",
            error="none: all points are landmarks" if exact else (
                "estimated standard error (landmark sample, delta method); hard interval from "
                "the triangle inequality through the landmarks"
            ),
        )
        if not exact:
            info.update(
                rel_se_median=float(np.median(se / np.maximum(values, 1e-300))),
                rel_se_max=float(np.max(se / np.maximum(values, 1e-300))),
            )
    else:
        values = s1
        error = up_hard - values
        info.update(
            mode="exact" if exact else "landmark",
            error="none: all points are landmarks" if exact else (
                "hard interval: value = largest geodesic distance to a landmark (a lower bound); "
                "the true value is at most value + gap"
            ),
        )
    lower = low_hard if finite_p else np.maximum(low_hard, values)
    width = np.maximum(up_hard - lower, 0.0)
    if not exact:
        info.update(
            hard_width_median=float(np.median(width)),
            rel_hard_width_median=float(np.median(width / np.maximum(values, 1e-300))),
        )
    return values, info, (None if exact else error)


def _check_landmarks(name, value, *, context=""):
    """An int >= 1 or "auto" (a checker in the registry's shape)."""
    if isinstance(value, str) and value.strip().lower() == "auto":
        return "auto"
    try:
        return check_int(name, value, lo=1, context=context)
    except ParameterError:
        raise ParameterError(
            f"The '{name}' parameter of {context} must be an int in [1, inf) or 'auto'. "
            f"Got {value!r} instead."
        ) from None


def _auto_landmarks(landmarks, n):
    """(landmark count, rule text) for ``landmarks`` ("auto" or an int) at n rows."""
    if landmarks != "auto":
        return landmarks, "given"
    if n <= GEODESIC_LANDMARKS:
        m = n
    else:
        m = int(np.clip(round(GEODESIC_BUDGET / n), GEODESIC_MIN_LANDMARKS, GEODESIC_LANDMARKS))
    rule = (f"auto: all rows up to {GEODESIC_LANDMARKS}, else clip(round({GEODESIC_BUDGET:.0e}"
            f" / n), {GEODESIC_MIN_LANDMARKS}, {GEODESIC_LANDMARKS}) = {m} at n={n}")
    return m, rule


#: The one declaration of the lens: function, registry, CLI and docs follow.
GEODESIC_ECCENTRICITY = LensDecl(
    "geodesic_eccentricity",
    summary="Mean shortest-path distance on the neighbour graph (order p)",
    cost="O(m n k log n) for m landmarks, once the neighbour graph exists",
    family="eccentricity",
    params=(
        Param("p", 2.0, _P_CHECK, _P_DOC, type='float >= 1 or "inf"'),
        Param("k", 15, partial(check_int, lo=1), "neighbours per point of the graph",
              type="int >= 1", more="Ignored when ``neighbors`` is given."),
        Param("landmarks", "auto", _check_landmarks,
              "Dijkstra sources (all points when at least n); 'auto': all up to 200 rows, "
              "else clip(round(1e7 / n), 32, 200)", type='int >= 1 or "auto"',
              more="With ``landmarks >= n_samples`` the result is exact; the cost stays\n"
                   "near 1e7 node visits (200 up to 5e4 rows, 100 at 1e5, 32 from about\n"
                   "3e5 rows)."),
        Param("random_state", 0, keep, "seeds the landmark choice",
              type="int, numpy Generator or None", lens=False),
    ),
)


@GEODESIC_ECCENTRICITY.function
def geodesic_eccentricity(X, *, p, k, landmarks, random_state, neighbors=None,
                          return_info=False):
    """Eccentricity in the shortest-path metric of the k-nearest-neighbour graph.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
    {lens_params}
    neighbors : NeighborGraph, optional
        A precomputed graph on ``X`` (the lens passes the workspace's shared graph).
    return_info : bool, default=False
        Also return a dict (mode, components, error); in landmark mode it holds
        ``"se"`` (p finite) or ``"gap"`` (p = inf), one value per point.

    Returns
    -------
    values : ndarray of shape (n_samples,)
    info : dict
        Only with ``return_info=True``.

    Raises
    ------
    ParameterError
        A parameter out of range.
    InputError
        Non-finite data, fewer than k + 1 rows, or a graph of another size.

    Warns
    -----
    LensworkWarning
        When the graph is disconnected.

    Notes
    -----
    Edge lengths are the Euclidean neighbour distances (an edge is kept if
    either end lists the other). With ``d_G`` the shortest-path distance and
    ``C(x)`` the connected component of x, ``E_p(x) = (mean_{y in C(x)} d_G(x,
    y)^p)^(1/p)``, estimated by the mean over the landmarks in C(x) (each
    component gets landmarks in proportion to its size, at least one), so a
    disconnected graph never yields inf. Standard error as for
    :func:`eccentricity`; for p = inf the value is the largest distance to a
    landmark (a lower bound). Every landmark's exact eccentricity comes free
    with its Dijkstra row, so the triangle inequality gives the hard interval
    ``max_l (E(l) - d_G(x, l)) <= E(x) <= min_l (E(l) + d_G(x, l))``, reported as
    ``hard_width_median``. Cost: O(m n k log n) for m landmarks; the info
    records m, the rule that chose it (``landmarks_rule``) and the Dijkstra
    node visits m n (``cost_node_visits``). The standard error of a landmark
    mean shrinks like 1 / sqrt(m) whatever n is, which is why m may fall as n
    grows: at the floor m = 32 it is about cv / (p sqrt(32)), cv the
    coefficient of variation of d_G^p (``rel_se_median`` reports it per run).

    Examples
    --------
    >>> t = np.linspace(0, 1, 50)
    >>> X = np.c_[t, np.zeros(50)]  # a path: geodesic = Euclidean here
    >>> bool(np.allclose(geodesic_eccentricity(X, k=2, landmarks=50), eccentricity(X)))
    True
    """
    from ..workspace import NeighborGraph, neighbor_graph

    p = _p_value(p)
    X = check_array(X, "geodesic_eccentricity")
    rng = check_random_state(random_state)
    if neighbors is None:
        neighbors = neighbor_graph(X, k, random_state=seed_of(random_state))
    elif not isinstance(neighbors, NeighborGraph) or neighbors.n != X.shape[0]:
        raise InputError(
            "The 'neighbors' argument of geodesic_eccentricity must be a NeighborGraph on the "
            f"same {X.shape[0]} rows as X. Build it with lenswork.neighbor_graph(X, k)."
        )

    def warn(msg):

        warn_caller(msg)

    m, rule = _auto_landmarks(landmarks, X.shape[0])
    values, info, err = _geodesic(neighbors, X, p=p, landmarks=m, rng=rng, warn=warn)
    info.update(landmarks_rule=rule, cost_node_visits=int(info["landmarks"]) * X.shape[0])
    return _returned(values, info, err, p, return_info)


# ---------------------------------------------------------------------------
# registry entries
# ---------------------------------------------------------------------------

@ECCENTRICITY.register
def _eccentricity_lens(ws, *, p, mode, landmarks):
    values, info, _ = _eccentricity(
        ws.X, None, p=_p_value(p), mode=mode, landmarks=landmarks,
        rng=check_random_state(ws.random_state),
    )
    return [LensPart(values, "", info)]


@GEODESIC_ECCENTRICITY.register
def _geodesic_eccentricity_lens(ws, *, p, k, landmarks):
    graph = ws.neighbors(k)
    m, rule = _auto_landmarks(landmarks, ws.n)
    values, info, _ = _geodesic(
        graph, ws.X, p=_p_value(p), landmarks=m,
        rng=check_random_state(ws.random_state), warn=ws.warn,
    )
    info.update(landmarks_rule=rule, cost_node_visits=int(info["landmarks"]) * ws.n)
    return [LensPart(values, "", info)]
