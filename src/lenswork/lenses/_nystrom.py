"""The Nyström extension of Laplacian-eigenmap coordinates, and the lens's sample mode.

A landmark solution ``x`` of ``W x = mu D x`` (random-walk coordinates,
``mu = 1 - lambda`` with ``lambda`` an eigenvalue of the normalised Laplacian
``I - D^-1/2 W D^-1/2``, as :func:`lenswork.laplacian_eigenmaps` returns) holds
at every landmark ``i``::

    x_i = (1 / mu) * sum_j P_ij x_j,        P_ij = w_ij / sum_l w_il,

so a new point ``z`` gets the value the same equation gives it, with the
weights ``w(z, l_j)`` to its ``k`` nearest landmarks under the rule the
landmark graph used (Bengio et al. 2004, the out-of-sample formula for
Laplacian eigenmaps and spectral clustering)::

    x(z) = (1 / mu) * sum_j w(z, l_j) x_j / sum_j w(z, l_j).

A landmark given as a new point gets back (up to the solver's residual) its own
value when its k nearest landmarks are its graph neighbours.

The sample mode of the Laplacian lens (:func:`sample_fit`) solves on a seeded
landmark sample, extends to every other row by this formula
(:func:`extend_by_component`: one eigenvalue per graph component) and
estimates its own error from a held-out fifth of the landmarks
(:func:`scaled_error`).
"""

from __future__ import annotations

import time

import numpy as np

from .._errors import InputError, ParameterError
from .._validation import check_array, check_choice, check_float, check_int
from ._affinity import MIN_WEIGHT, SELF_TUNING_NEIGHBOR, WEIGHTS, heat_weights

__all__ = [
    "HOLDOUT",
    "agreement",
    "extend_by_component",
    "nearest_rows",
    "nystrom_extend",
    "sample_fit",
    "scaled_error",
]

#: One landmark in this many is held out to estimate the extension error.
HOLDOUT = 5
_BLOCK = 4096


def _knn(landmarks, Z, k, exclude_self=False):
    from sklearn.neighbors import NearestNeighbors

    kk = k + 1 if exclude_self else k
    nn = NearestNeighbors(n_neighbors=kk).fit(landmarks)
    dist, idx = nn.kneighbors(Z)
    if exclude_self:
        dist, idx = dist[:, 1:], idx[:, 1:]
    return dist, idx


def nystrom_extend(landmarks_X, vectors, eigenvalues, X_new, *, k=15, weights="heat",
                   sigma=None, metric="euclidean"):
    """Extend Laplacian-eigenmap coordinates from landmarks to new points.

    Parameters
    ----------
    landmarks_X : array-like of shape (n_landmarks, n_features)
        The rows the eigenvectors were computed on.
    vectors : array-like of shape (n_landmarks, m)
        Random-walk coordinates ``D^-1/2 u`` of the landmarks (the output of
        :func:`lenswork.laplacian_eigenmaps` on ``landmarks_X``).
    eigenvalues : array-like of shape (m,)
        Their eigenvalues ``lambda`` of ``I - D^-1/2 W D^-1/2`` (``info["eigenvalues"]``),
        each in [0, 1).
    X_new : array-like of shape (n_new, n_features)
        Points to extend to.
    k : int, default=15
        Landmarks each new point is linked to (the k of the landmark graph).
    weights : {"heat", "self_tuning"}, default="heat"
        ``"heat"``: ``exp(-d^2 / sigma^2)`` with the landmark graph's ``sigma``
        (``info["sigma"]``; required) and d less the new point's reach
        (``lenswork.lenses._affinity.heat_weights``); ``"self_tuning"``:
        ``exp(-d^2 / (sigma_z sigma_j))`` with ``sigma_z`` the distance from the
        new point to its 7th nearest landmark and ``sigma_j`` that from landmark
        ``j`` to its 7th nearest other landmark (k-th when k < 7).
    sigma : float, optional
        The heat-kernel scale; needed with ``weights="heat"``.
    metric : {"euclidean"}, default="euclidean"

    Returns
    -------
    ndarray of shape (n_new, m)

    Raises
    ------
    ParameterError
        Bad ``k``, ``weights``, ``sigma`` or eigenvalues.
    InputError
        Arrays of mismatched shapes or non-finite values.

    Notes
    -----
    ``x(z) = (1 / (1 - lambda)) sum_j w(z, l_j) x_j / sum_j w(z, l_j)`` over the
    k nearest landmarks ``l_j``. A point whose weights all fall under 1e-10
    (far from every landmark) gets the weighted mean of its k nearest landmarks
    with equal weights. Cost O(n_new k m) after the neighbour search (a tree or
    brute force over the landmarks, O(n_new n_landmarks d) at worst).

    References
    ----------
    .. [1] Y. Bengio, J.-F. Paiement, P. Vincent, O. Delalleau, N. Le Roux and
       M. Ouimet, "Out-of-sample extensions for LLE, Isomap, MDS, Eigenmaps, and
       Spectral Clustering", NIPS 2004.
    .. [2] L. Zelnik-Manor and P. Perona, "Self-tuning spectral clustering", NIPS 2004.

    Examples
    --------
    >>> from lenswork import laplacian_eigenmaps
    >>> t = np.linspace(0, 1, 400)
    >>> X = np.column_stack([t, 0.1 * np.sin(6 * t)])
    >>> L = X[::2]
    >>> vec, info = laplacian_eigenmaps(L, 1, k=10, return_info=True)
    >>> ext = nystrom_extend(L, vec, info["eigenvalues"], X[1::2], k=10, sigma=info["sigma"])
    >>> ext.shape, bool(abs(np.corrcoef(ext[:, 0], vec[:, 0])[0, 1]) > 0.99)
    ((200, 1), True)
    """
    context = "nystrom_extend"
    L = check_array(landmarks_X, context, label="the landmarks")
    V = np.asarray(vectors, dtype=np.float64)
    if V.ndim == 1:
        V = V[:, None]
    if V.shape[0] != L.shape[0]:
        raise InputError(
            f"nystrom_extend got {V.shape[0]} rows of vectors for {L.shape[0]} landmarks; give "
            f"one row of coordinates per landmark."
        )
    lam = np.atleast_1d(np.asarray(eigenvalues, dtype=np.float64))
    if lam.shape != (V.shape[1],):
        raise ParameterError(
            f"nystrom_extend got {lam.size} eigenvalues for {V.shape[1]} vectors; give one each."
        )
    if not np.all((lam >= 0) & (lam < 1)):
        raise ParameterError(
            "The eigenvalues given to nystrom_extend must lie in [0, 1) (eigenvalues of the "
            "normalised Laplacian below 1); got " + ", ".join(f"{v:.3g}" for v in lam) + "."
        )
    Z = check_array(X_new, context, label="the new points")
    if Z.shape[1] != L.shape[1]:
        raise InputError(
            f"nystrom_extend: the new points have {Z.shape[1]} features, the landmarks "
            f"{L.shape[1]}. Pass rows with the same columns."
        )
    k = check_int("k", k, lo=1, hi=L.shape[0], context=context)
    weights = check_choice("weights", weights, WEIGHTS, context=context)
    check_choice("metric", metric, ("euclidean",), context=context)
    if weights == "heat":
        if sigma is None:
            raise ParameterError(
                "nystrom_extend with weights='heat' needs sigma, the landmark graph's heat "
                "scale (info['sigma'] of laplacian_eigenmaps)."
            )
        sigma = check_float("sigma", sigma, lo=0.0, lo_open=True, context=context)
        s_land = None
    else:
        j = min(SELF_TUNING_NEIGHBOR, k) - 1
        d_land, _ = _knn(L, L, min(k, L.shape[0] - 1), exclude_self=True)
        s_land = d_land[:, min(j, d_land.shape[1] - 1)].copy()
        good = s_land > 0
        s_land[~good] = s_land[good].min() if good.any() else 1.0
    scale = 1.0 / (1.0 - lam)
    out = np.empty((Z.shape[0], V.shape[1]))
    for start in range(0, Z.shape[0], _BLOCK):
        block = Z[start:start + _BLOCK]
        dist, idx = _knn(L, block, k)
        if weights == "heat":
            w = heat_weights(dist, sigma)
        else:
            j = min(SELF_TUNING_NEIGHBOR, k) - 1
            s_new = dist[:, j].copy()
            s_new[s_new <= 0] = s_land.min()
            w = np.exp(-(dist**2) / (s_new[:, None] * s_land[idx]))
        w[w < MIN_WEIGHT] = 0.0
        total = w.sum(axis=1)
        far = total <= 0
        if far.any():
            w[far] = 1.0
            total[far] = k
        out[start:start + _BLOCK] = np.einsum("ij,ijm->im", w / total[:, None], V[idx]) * scale
    return out


def nearest_rows(fit_X, Z):
    """Index of the nearest row of ``fit_X`` for each row of ``Z`` (exact, scikit-learn)."""
    from sklearn.neighbors import NearestNeighbors

    return NearestNeighbors(n_neighbors=1).fit(fit_X).kneighbors(Z)[1][:, 0]


def extend_by_component(fit_X, coords, labels, lambdas, Z, *, k, weights, sigma, nearest=None):
    """Nystrom extension of ``coords`` (on ``fit_X``) to the rows ``Z``.

    :func:`nystrom_extend` takes one eigenvalue per column; on a graph of
    several components each component has its own, so there the weighted means
    come from ``nystrom_extend`` with eigenvalue 0 and are divided by
    ``1 - lambda`` of the component of each row's nearest fitted row
    (``nearest``, found here when not given).
    """
    lam = np.clip(lambdas, 0.0, None)
    if lam.shape[0] == 1 and np.all(lam < 1.0):
        return nystrom_extend(fit_X, coords, lam[0], Z, k=k, weights=weights, sigma=sigma)
    mean = nystrom_extend(
        fit_X, coords, np.zeros(coords.shape[1]), Z, k=k, weights=weights, sigma=sigma
    )
    if nearest is None:
        nearest = nearest_rows(fit_X, Z)
    mu = 1.0 - lam[labels[nearest]]
    mu[mu == 0.0] = 1.0  # lambda = 1 exactly: no finite extension; keep the weighted mean
    return mean / mu


def agreement(ext, ref):
    """Per column: |corr(ext_j, ref_j)| and the R^2 of ref_j on all columns of ext (+ 1)."""
    m = ref.shape[1]
    corr = []
    for j in range(m):
        a, b = ext[:, j] - ext[:, j].mean(), ref[:, j] - ref[:, j].mean()
        den = np.linalg.norm(a) * np.linalg.norm(b)
        corr.append(float(abs(a @ b) / den) if den > 0 else 0.0)
    A = np.c_[np.ones(ext.shape[0]), ext]
    coef, *_ = np.linalg.lstsq(A, ref, rcond=None)
    resid = ((ref - A @ coef) ** 2).sum(axis=0)
    total = ((ref - ref.mean(axis=0)) ** 2).sum(axis=0)
    r2 = [float(1.0 - r / t) if t > 0 else 0.0 for r, t in zip(resid, total)]
    return corr, r2


def scaled_error(corr, h, share):
    """Estimated ``1 - |corr|`` of a sample-mode vector with the exact one, from the held-out one.

    To first order an eigenvector's sampling error is a mean of one influence
    term per landmark. Then the solve on the kept share ``1 - h`` differs from
    the solve on all landmarks by ``h`` times (mean over kept - mean over
    held-out), of variance ``h / (1 - h)`` times that of the landmark solve's
    own error; and the landmark solve differs from the all-rows solve by a
    variance ``1 - share`` times its own (``share`` = landmarks / rows). As
    ``1 - |corr|`` is half a squared distance, the held-out figure is scaled by
    ``(1 - h) / h * (1 - share)`` (4 (1 - share) for h = 1/5), at most 1.
    """
    return float(min(1.0, (1.0 - corr) * (1.0 - h) / h * (1.0 - share)))


def sample_fit(X, solve, m, k, weights, rng, landmarks, warn):
    """Sample mode: solve on ``landmarks`` seeded rows, extend to the rest (module notes).

    ``solve(rows, warn)`` solves the lens on the array ``rows`` and returns
    ``(coords, info, state)`` with ``state = (rows, coords, labels, lambdas)``
    (what :func:`extend_by_component` needs). ``rng`` draws the landmarks, then
    the held-out fifth. Returns ``(coords, info, state)`` of all rows, ``info``
    with the extension's error estimate.
    """
    start = time.perf_counter()
    n = X.shape[0]
    held = landmarks // HOLDOUT
    needed = max(m + 2, k + 1)
    if landmarks - held < needed:
        least = needed
        while least - least // HOLDOUT < needed:
            least += 1
        raise ParameterError(
            f"The sample mode of the Laplacian lens with components={m} and k={k} needs "
            f"landmarks >= {least} (a fifth is held out to estimate the extension error); "
            f"got landmarks={landmarks}."
        )
    rows = np.sort(rng.choice(n, size=landmarks, replace=False))
    XL = X[rows]
    coords_l, info, state = solve(XL, warn)
    solved = time.perf_counter()
    rest = np.ones(n, dtype=bool)
    rest[rows] = False
    coords = np.empty((n, m))
    coords[rows] = coords_l
    sigma = info.get("sigma")
    coords[rest] = extend_by_component(*state, X[rest], k=k, weights=weights, sigma=sigma)
    extended = time.perf_counter()
    # Extension error: solve again on four fifths of the landmarks, extend to the held-out
    # fifth and compare with the values the full landmark solve gave those rows.
    order = rng.permutation(landmarks)
    hold, keep = np.sort(order[:held]), np.sort(order[held:])
    _, sub_info, sub_state = solve(XL[keep], lambda message: None)
    ext = extend_by_component(
        *sub_state, XL[hold], k=k, weights=weights, sigma=sub_info.get("sigma")
    )
    corr, r2 = agreement(ext, coords_l[hold])
    errors = [scaled_error(c, held / landmarks, landmarks / n) for c in corr]
    info.update(
        mode="sample",
        landmarks=int(landmarks),
        landmark_rule=f"min(n, landmarks) = {landmarks:,} of {n:,} rows, drawn uniformly "
                      f"without replacement with random_state",
        extension_holdout=int(held),
        extension_holdout_abs_corr=corr,
        extension_r2=r2,
        extension_errors=errors,
        extension_error=max(errors),
        landmark_solve_seconds=round(solved - start, 3),
        extension_seconds=round(extended - solved, 3),
        error_estimate_seconds=round(time.perf_counter() - extended, 3),
    )
    return coords, info, state
