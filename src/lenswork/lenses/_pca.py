"""Principal coordinates: the first m principal components as lenses.

The PCA basis (mean, principal axes, explained variance) is a shared piece of
the :class:`~lenswork.Workspace`: :func:`_pca_basis` and :func:`_pca_scores`
compute it once per workspace and cache it, so the ``pca`` lens, the screen's
scatter plots of the first two principal coordinates and anything else that
needs the basis get it for free.

Two solvers, chosen by the number of features d:

* ``"covariance"`` (d <= 500): eigendecomposition of the d x d covariance
  matrix, O(n d^2 + d^3). At 1e6 x 20 this is a fraction of a second and
  several times faster than a full or randomized SVD of the data.
* ``"randomized"`` (d > 500): truncated randomized SVD of the centred data
  (Halko, Martinsson and Tropp 2011, through
  :func:`sklearn.utils.extmath.randomized_svd`), O(n d (m + 10)) per pass,
  seeded by ``random_state``. It needs one centred copy of the data.

Signs are deterministic: the largest-magnitude entry of each principal axis is
positive.
"""

from __future__ import annotations

from functools import partial
from typing import NamedTuple

import numpy as np
from sklearn.base import BaseEstimator, TransformerMixin

from .._errors import InputError, ParameterError, warn_caller
from .._validation import check_array, check_choice, check_int, seed_of
from ._common import LensOutputMixin, check_input
from ._declare import LensDecl, keep
from ._registry import LensPart, Param

__all__ = ["PCALens", "pca_coordinates"]

#: Largest d for the covariance solver; above it the randomized SVD is used.
#: Measured (tests/benchmarks/bench_small_lenses.py, m = 2, 2 shared cores): at
#: n = 2,000 the randomized SVD wins from d = 500 on (the d^3 eigendecomposition
#: dominates: 2-18x at d = 1000-2000); at n = 20,000 the covariance solver stays
#: ahead up to d of about 1000 (ratio ~0.3 at d = 500, ~1 at d = 1000) and
#: falls behind by d = 2000. d > 500 is the switch that is never far off.
COVARIANCE_MAX_DIM = 500
SOLVERS = ("auto", "covariance", "randomized")
# Rows per block when centring on the fly (no (n, d) centred copy).
_CHUNK_ROWS = 4096
# The fast covariance X^T X - n mean mean^T loses about eps * mean_j^2 / var_j of
# relative precision per entry; above this ratio the covariance (and the
# projection) are recomputed from centred blocks instead.
_MAX_MEAN_TO_VARIANCE = 1e6
_LOADINGS_MAX_DIM = 50


class _PCABasis(NamedTuple):
    """Mean, principal axes (rows, sign-fixed) and variances of one data array."""

    mean: np.ndarray
    components: np.ndarray
    explained_variance: np.ndarray
    total_variance: float
    solver: str
    centered: bool
    n_samples: int

    @property
    def explained_variance_ratio(self):
        if self.total_variance <= 0:
            return np.zeros_like(self.explained_variance)
        return self.explained_variance / self.total_variance

    def first(self, m):
        """The basis restricted to its first ``m`` components."""
        return self._replace(
            components=self.components[:m], explained_variance=self.explained_variance[:m]
        )


def _fix_signs(components):
    """Flip each row so its largest-magnitude entry is positive; returns the signs."""
    rows = np.arange(components.shape[0])
    signs = np.sign(components[rows, np.argmax(np.abs(components), axis=1)])
    signs[signs == 0] = 1.0
    return components * signs[:, None], signs


def _choose_solver(solver, d):
    if solver == "auto":
        return "covariance" if d <= COVARIANCE_MAX_DIM else "randomized"
    return solver


def _check_components(components, n, d, context):
    components = check_int("components", components, lo=1, context=context)
    top = min(n, d)
    if components > top:
        raise ParameterError(
            f"The 'components' parameter of {context} must be an int in [1, {top}] (at most "
            f"min(n_samples, n_features) = min({n}, {d}) for this data). Got {components} "
            f"instead."
        )
    return components


def _centered_gram(X, mean):
    """(X - mean)^T (X - mean), accumulated over row blocks."""
    d = X.shape[1]
    C = np.zeros((d, d))
    for start in range(0, X.shape[0], _CHUNK_ROWS):
        B = X[start:start + _CHUNK_ROWS] - mean
        C += B.T @ B
    return C


def _fit_basis(X, m, solver, random_state):
    """The PCA basis of ``X`` (finite float64, n >= 2).

    The covariance solver returns all d components (m is ignored); the
    randomized one returns m.
    """
    n, d = X.shape
    mean = X.mean(axis=0)
    if solver == "covariance":
        C = X.T @ X
        C -= n * np.outer(mean, mean)
        diag = np.diag(C) / (n - 1)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(mean == 0, 0.0, mean**2 / np.maximum(diag, 0.0))
        centered = bool(np.any(ratio > _MAX_MEAN_TO_VARIANCE))
        if centered:
            C = _centered_gram(X, mean)
        C /= n - 1
        C = (C + C.T) / 2
        evals, evecs = np.linalg.eigh(C)
        evals = np.clip(evals[::-1], 0.0, None)
        components = np.ascontiguousarray(evecs[:, ::-1].T)
        total = float(evals.sum())
    else:
        from sklearn.utils.extmath import randomized_svd

        Xc = X - mean  # one centred copy: the randomized SVD needs the matrix itself
        _, S, Vt = randomized_svd(
            Xc, m, n_oversamples=10, n_iter="auto", flip_sign=False,
            random_state=seed_of(random_state),
        )
        evals = S**2 / (n - 1)
        components = np.ascontiguousarray(Vt)
        total = float(np.einsum("ij,ij->", Xc, Xc) / (n - 1))
        centered = True
    components, _ = _fix_signs(components)
    if total <= 0:
        warn_caller(
            "Every feature column is constant: the principal coordinates are all 0. "
            "Check the feature selection."
        )
    return _PCABasis(mean, components, evals, total, solver, centered, n)


def _project(X, basis, m):
    """Principal coordinates (m, n): row j holds the j-th coordinate of every row of X."""
    V = basis.components[:m]
    if not basis.centered:
        out = V @ X.T
        out -= (V @ basis.mean)[:, None]
        return out
    out = np.empty((m, X.shape[0]))
    for start in range(0, X.shape[0], _CHUNK_ROWS):
        stop = start + _CHUNK_ROWS
        out[:, start:stop] = V @ (X[start:stop] - basis.mean).T
    return out


def _pca_basis(ws, m):
    """The workspace's PCA basis with its first ``m`` components (cached).

    The covariance solver computes every component at once and caches the full
    basis, so any ``m`` is a slice of it; the randomized solver caches one basis
    per ``m``.
    """
    ws.require_rows(2, "PCA")
    m = _check_components(m, ws.n, ws.d, "pca")
    solver = _choose_solver("auto", ws.d)
    if solver == "covariance":
        basis = ws.cached(
            ("pca_basis", "covariance"),
            lambda: _fit_basis(ws.X, ws.d, solver, ws.random_state),  # all d components
        )
    else:
        basis = ws.cached(
            ("pca_basis", "randomized", m),
            lambda: _fit_basis(ws.X, m, solver, ws.random_state),
        )
    return basis.first(m)


def _pca_scores(ws, m):
    """The first ``m`` principal coordinates of the workspace's rows, (m, n), cached.

    Row j is the j-th coordinate; the array is read-only because it is shared.
    """
    ws.require_rows(2, "PCA")
    m = _check_components(m, ws.n, ws.d, "pca")

    def compute():
        scores = _project(ws.X, _pca_basis(ws, m), m)
        scores.flags.writeable = False
        return scores

    return ws.cached(("pca_scores", m), compute)


#: The one declaration of the lens: function, transformer, registry, CLI and docs follow.
PCA = LensDecl(
    "pca",
    summary="Principal coordinates: projections on the first principal axes",
    cost="O(n d^2 + d^3) (covariance, d <= 500); O(n d m) per pass (randomized SVD, d > 500)",
    params=(
        Param("components", 2, partial(check_int, lo=1),
              "number of principal coordinates (columns pca_1, pca_2, ...; pca_j does not "
              "depend on it, so it is not part of the column name)", tag=False,
              type="int >= 1", more="At most min(n_samples, n_features)."),
        Param("solver", "auto", partial(check_choice, choices=SOLVERS),
              "covariance eigendecomposition or randomized SVD; auto: covariance for "
              "n_features <= 500", type='{"auto", "covariance", "randomized"}', lens=False),
        Param("random_state", 0, keep,
              "seed of the randomized SVD (unused by the covariance solver)",
              type="int, Generator or None", lens=False),
    ),
)


@PCA.function
def pca_coordinates(X, *, components, solver, random_state):
    """The first principal coordinates of the rows of ``X``.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
    {lens_params}

    Returns
    -------
    ndarray of shape (n_samples, components)
        Column j is the projection of the centred rows on the j-th principal
        axis; the largest-magnitude entry of each axis is positive.

    Raises
    ------
    ParameterError
        On a bad ``components`` or ``solver``.
    InputError
        On non-numeric or non-finite data, or fewer than 2 rows.

    See Also
    --------
    PCALens : the same as a scikit-learn transformer, with explained variance.

    Notes
    -----
    With C = (X - mean)^T (X - mean) / (n - 1) = V diag(lambda) V^T
    (eigenvalues in decreasing order), coordinate j of row x is
    (x - mean) . v_j and its explained variance is lambda_j. Cost: O(n d^2 + d^3)
    with the covariance solver, O(n d (m + 10)) per pass with the randomized one.
    When a column's mean is huge against its spread (|mean| > 1000 sd), the
    covariance and the projection are formed from centred row blocks so that no
    precision is lost to cancellation.

    References
    ----------
    .. [1] I. T. Jolliffe, "Principal Component Analysis", 2nd ed., Springer, 2002.
    .. [2] N. Halko, P.-G. Martinsson and J. A. Tropp, "Finding structure with
       randomness: probabilistic algorithms for constructing approximate matrix
       decompositions", SIAM Review 53(2), 2011.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(500, 3)) * [5.0, 1.0, 0.1]
    >>> Y = pca_coordinates(X, components=2)
    >>> Y.shape, np.round(Y.std(axis=0), 0).tolist()
    ((500, 2), [5.0, 1.0])
    """
    context = "pca_coordinates"
    X = check_array(X, context)
    n, d = X.shape
    _require_two_rows(n, context)
    m = _check_components(components, n, d, context)
    basis = _fit_basis(X, m, _choose_solver(solver, d), random_state)
    return _project(X, basis, m).T


def _require_two_rows(n, context):
    if n < 2:
        raise InputError(
            f"{context} needs at least 2 rows to estimate a covariance; the data has {n}. "
            f"Use more rows."
        )


@PCA.estimator
class PCALens(LensOutputMixin, TransformerMixin, BaseEstimator):
    """Principal coordinates as a scikit-learn transformer.

    Parameters
    ----------
    {lens_params}

    Attributes
    ----------
    mean_ : ndarray of shape (n_features,)
    components_ : ndarray of shape (components, n_features)
        Principal axes (unit rows), largest-magnitude entry of each positive.
    explained_variance_ : ndarray of shape (components,)
        Variance along each axis (divisor n - 1).
    explained_variance_ratio_ : ndarray of shape (components,)
        ``explained_variance_`` over the total variance of the data.
    solver_ : str
        The solver used (``"covariance"`` or ``"randomized"``).
    n_features_in_ : int
    feature_names_in_ : ndarray of str
        Column names of a DataFrame given to ``fit`` (only then).

    See Also
    --------
    pca_coordinates : the plain-function form.

    Notes
    -----
    ``transform(X)`` returns ``(X - mean_) @ components_.T``; cost as in
    :func:`pca_coordinates`. The output columns are named ``pca_1, pca_2, ...``
    (``get_feature_names_out``), as the ``pca`` lens names them.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(1)
    >>> X = rng.normal(size=(400, 4)) * [6.0, 2.0, 1.0, 0.5]
    >>> lens = PCALens(components=2).fit(X)
    >>> lens.components_.shape, np.round(lens.explained_variance_ratio_, 1).tolist()
    ((2, 4), [0.9, 0.1])
    >>> np.allclose(lens.transform(X), pca_coordinates(X, components=2))
    True
    """

    def fit(self, X, y=None):
        """Compute the basis of ``X``; returns self."""
        context = type(self).__name__
        params = PCA.check(self.get_params(), context)
        X = check_input(self, X, reset=True, min_rows=2, why="a covariance")
        n, d = X.shape
        m = _check_components(params["components"], n, d, context)
        solver = _choose_solver(params["solver"], d)
        basis = _fit_basis(X, m, solver, self.random_state).first(m)
        self.mean_ = basis.mean
        self.components_ = basis.components
        self.explained_variance_ = basis.explained_variance
        self.explained_variance_ratio_ = basis.explained_variance_ratio
        self.solver_ = solver
        self._basis = basis
        return self

    def _output_names(self):
        return [f"pca_{j + 1}" for j in range(self.components_.shape[0])]

    def transform(self, X):
        """Principal coordinates of the rows of ``X``, shape (n_samples, components)."""
        X = check_input(self, X, reset=False)
        return _project(X, self._basis, self.components_.shape[0]).T


@PCA.register
def _pca_lens(ws, *, components):
    basis = _pca_basis(ws, components)
    scores = _pca_scores(ws, components)
    ratio = basis.explained_variance_ratio
    loadings = None
    if ws.d <= _LOADINGS_MAX_DIM:
        names = ws.cloud.feature_names
        loadings = [dict(zip(names, axis.tolist(), strict=True)) for axis in basis.components]
    parts = []
    for j in range(components):
        info = {
            "component": j + 1,
            "explained_variance": float(basis.explained_variance[j]),
            "explained_variance_ratio": float(ratio[j]),
            "cumulative_ratio": float(ratio[: j + 1].sum()),
            "solver": basis.solver,
        }
        if loadings is not None:
            info["loadings"] = loadings[j]
        parts.append(LensPart(scores[j], str(j + 1), info))
    return parts
