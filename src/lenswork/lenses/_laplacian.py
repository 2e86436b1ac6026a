"""Laplacian eigenmaps: the first non-trivial eigenvectors of a k-NN graph Laplacian.

The lens reads the shared k-nearest-neighbour graph, weights its edges
(:mod:`lenswork.lenses._affinity`: heat or self-tuning weights), makes it
symmetric and returns the first ``m`` non-trivial eigenvectors of the
normalised Laplacian ``L = I - S``, ``S = D^-1/2 W D^-1/2``, as *random-walk*
coordinates ``x = D^-1/2 u`` (the solutions of ``(D - W) x = lambda D x``),
which is also what :class:`sklearn.manifold.SpectralEmbedding` returns. The
eigenvectors come from :func:`lenswork.linalg.laplacian_eigs` (a block LOBPCG
started and preconditioned by aggregation multigrid); above 200,000 rows the
lens solves on a landmark sample and extends by the Nystrom formula
(:mod:`lenswork.lenses._nystrom`).

One global sigma suits data of even density. Where density falls off (the
tails of a Gaussian blob) the heat weights link the sparse points only weakly,
and the first vectors single out a few of them; the lens then warns
(``half_weight_points`` in the info counts the points holding half of each
vector's weight) and ``weights="self_tuning"`` is the remedy. Measured on a 3-D
Gaussian, 1e5 points, k = 15: heat weights put half of each of the 4 vectors on
2 points; self-tuning weights on 14,000-19,000.

Measured (tests/benchmarks/bench_laplacian.py, 2 shared cores, 4 vectors,
k = 15): against :class:`sklearn.manifold.SpectralEmbedding` on 5,000 x 20
Gaussian data, graph included, 0.15 s against 8.9 s (57x), |corr| >= 0.999999
on the same affinity. Once the neighbour graph exists, at n = 1e6: noisy swiss
roll 27 s (16 iterations, largest residual 3.9e-9, lambda_1 = 1.6e-6), noisy
torus 35 s (20 iterations), both about 2.6 GB traced at the peak of the solve;
20-d Gaussian 67 s (21 iterations, 16 block vectors, 3.9 GB).

Disconnected graphs
-------------------
A graph with several connected components raises a
:class:`~lenswork.LensworkWarning` and each component is embedded on its own:
its own first ``m`` non-trivial vectors, centred and scaled within the
component. A component with fewer than ``m + 2`` points has fewer than ``m``
non-trivial vectors; its points get 0 (the centre of every coordinate). The
eigenvalues and residuals reported are those of the largest component
(``max_residual`` covers all).
"""

from __future__ import annotations

from functools import partial

import numpy as np
from sklearn.base import BaseEstimator, TransformerMixin

from .._errors import InputError, warn_caller
from .._validation import (
    check_array,
    check_choice,
    check_float,
    check_int,
    check_random_state,
    seed_of,
)
from ..linalg import component_eigenvalues, laplacian_eigs
from ..workspace import neighbor_graph
from ._affinity import WEIGHTS, knn_affinity
from ._common import LensOutputMixin, check_input
from ._declare import LensDecl, keep
from ._nystrom import extend_by_component, sample_fit
from ._registry import LensPart, Param

__all__ = ["LaplacianLens", "laplacian_eigenmaps"]

#: Modes: all rows, or a landmark sample with the Nystrom extension.
MODES = ("auto", "exact", "sample")
#: "auto" solves every row up to this many rows, and samples above.
EXACT_MAX_ROWS = 200_000
#: Default number of landmarks of the sample mode.
LANDMARKS = 20_000
#: Fewest landmarks accepted.
MIN_LANDMARKS = 100


def _warn(message):
    warn_caller(message)


def _embed(graph, m, weights, rng, tol, max_iter, warn=_warn):
    """Affinity of a NeighborGraph, then its Laplacian eigenvectors: (coords, info, W)."""
    W, winfo = knn_affinity(graph, weights)
    coords, info = laplacian_eigs(W, m, rng=rng, tol=tol, max_iter=max_iter, warn=warn)
    info = dict(info, weights=weights, k=int(graph.k), **winfo)
    return coords, info, W


#: The one declaration of the lens: function, transformer, registry, CLI and docs follow.
LAPLACIAN = LensDecl(
    "laplacian",
    summary="Laplacian eigenmaps: first non-trivial eigenvectors of the normalised k-NN "
    "graph Laplacian",
    cost="exact: O(n k) per LOBPCG iteration (about 10-30) once the neighbour graph exists; "
    "sample (auto above 200,000 rows): a solve on 20,000 landmarks, then an O(k) Nystrom "
    "extension per row",
    params=(
        Param("components", 2, partial(check_int, lo=1),
              "number of eigenvectors (columns laplacian_1, ...; laplacian_j does not depend on "
              "it, so it is not part of the column name)", tag=False, type="int >= 1"),
        Param("k", 15, partial(check_int, lo=1), "neighbours per point in the graph",
              type="int >= 1",
              more="The k-NN graph is built with :func:`lenswork.neighbor_graph`, exact or\n"
                   "approximate by size."),
        Param("weights", "heat", partial(check_choice, choices=WEIGHTS),
              "edge weights: heat (one global sigma) or self_tuning (local sigma_i)",
              type='{"heat", "self_tuning"}'),
        Param("tol", 1e-3, partial(check_float, lo=0, hi=1, lo_open=True, hi_open=True),
              "stop when each residual ||S u - mu u|| is at most tol times its eigenvalue "
              "lambda = 1 - mu", type="float in (0, 1)"),
        Param("max_iter", 200, partial(check_int, lo=1),
              "LOBPCG iterations at most (a warning says when they ran out)", type="int >= 1"),
        Param("mode", "auto", partial(check_choice, choices=MODES),
              "exact (all rows), sample (landmarks + Nystrom extension, with its error "
              "estimated), or auto by size", type='{"auto", "exact", "sample"}',
              more='``"exact"`` solves on the graph of all rows; ``"sample"`` solves on\n'
                   "``landmarks`` seeded rows and extends to the others by the Nystrom\n"
                   'formula (Bengio et al. 2004); ``"auto"`` is exact up to 200,000 rows,\n'
                   "sample above. With ``landmarks >= n_samples`` sample is exact."),
        Param("landmarks", LANDMARKS, partial(check_int, lo=MIN_LANDMARKS),
              "rows solved in sample mode", type=f"int >= {MIN_LANDMARKS}"),
        Param("random_state", 0, keep,
              "seed of the landmarks, of the aggregation and of the approximate neighbour graph",
              type="int, Generator or None", lens=False),
    ),
)


def _require_rows(n, components, k, context):
    needed = max(components + 2, k + 1)
    if n < needed:
        raise InputError(
            f"{context} with components={components} and k={k} needs at least {needed} rows; "
            f"the data has {n}. Use fewer components, a smaller k or more rows."
        )


def _resolve_mode(mode, n, landmarks):
    """The mode that runs for ``n`` rows, and the rule that chose it (a sentence)."""
    if mode == "auto":
        if n <= EXACT_MAX_ROWS:
            return "exact", f"auto: exact up to {EXACT_MAX_ROWS:,} rows (n = {n:,})"
        mode, rule = "sample", f"auto: sample above {EXACT_MAX_ROWS:,} rows (n = {n:,})"
    else:
        rule = f"mode={mode}"
    if mode == "sample" and landmarks >= n:
        return "exact", rule + f"; landmarks={landmarks:,} >= n, so every row is solved"
    return mode, rule


def _solve_rows(X, m, k, weights, tol, max_iter, rng, seed, warn, graph=None):
    """Eigenvectors of the k-NN graph of the rows X; returns (coords, info, state).

    ``state = (X, coords, labels, lambdas)`` is what the Nystrom extension needs.
    """
    if graph is None:
        graph = neighbor_graph(X, k, random_state=seed)
    coords, info, W = _embed(graph, m, weights, rng, tol, max_iter, warn)
    info["neighbor_seconds"] = graph.info.get("seconds")
    info["neighbor_method"] = graph.method
    labels, lambdas = component_eigenvalues(W, coords)
    return coords, info, (X, coords, labels, lambdas)


def _fit(X, components, k, weights, tol, max_iter, mode, landmarks, random_state, context,
         warn=_warn, graph_of=None):
    """Exact or sample fit of the rows X: (coords, info, state for the extension).

    ``graph_of(k)`` gives the neighbour graph of all rows (a Workspace's shared
    one) for the exact mode; by default it is built here.
    """
    _require_rows(X.shape[0], components, k, context)
    rng = check_random_state(random_state)
    seed = seed_of(random_state)
    resolved, rule = _resolve_mode(mode, X.shape[0], landmarks)
    if resolved == "exact":
        graph = graph_of(k) if graph_of is not None else None
        coords, info, state = _solve_rows(
            X, components, k, weights, tol, max_iter, rng, seed, warn, graph=graph
        )
        info.update(mode="exact", landmarks=int(X.shape[0]), extension_error=0.0)
    else:
        def solve(rows, warn):
            return _solve_rows(rows, components, k, weights, tol, max_iter, rng, seed, warn)

        coords, info, state = sample_fit(X, solve, components, k, weights, rng, landmarks, warn)
    info["mode_rule"] = rule
    return coords, info, state


# ------------------------------------------------------------------ public surface
@LAPLACIAN.function
def laplacian_eigenmaps(
    X, components, *, k, weights, tol, max_iter, mode, landmarks, random_state,
    return_info=False,
):
    """Laplacian-eigenmap coordinates of the rows of ``X``.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
    {lens_params}
    return_info : bool, default=False
        Also return a dict with ``eigenvalues`` (of ``I - S``), ``residuals``,
        ``iterations``, ``method``, ``levels``, ``sigma``, ``graph_components``,
        ``mode``, ``mode_rule``, ``landmarks``, ``extension_error`` (0 in exact
        mode); in sample mode also ``extension_errors`` (per vector),
        ``extension_holdout_abs_corr``, ``extension_r2`` and ``landmark_rule``.

    Returns
    -------
    coords : ndarray of shape (n_samples, components)
        Random-walk coordinates ``D^-1/2 u``, scaled to a degree-weighted mean
        square of 1 (``sum_i d_i x_i^2 = sum_i d_i``) with degree-weighted mean 0;
        the largest-magnitude entry of each column is positive. In sample mode
        these hold on the landmarks; the other rows carry their extension.
    info : dict
        Only with ``return_info=True``.

    Raises
    ------
    ParameterError
        For a parameter out of range, or too few landmarks for ``k``.
    InputError
        For non-finite data or fewer than ``max(components + 2, k + 1)`` rows.

    Notes
    -----
    The first ``m`` non-trivial solutions of ``(D - W) x = lambda D x``, the
    smallest of the normalised Laplacian ``I - D^-1/2 W D^-1/2`` (Belkin and
    Niyogi 2003; Chung 1997). Cost once the graph exists: O(n k) to weight,
    reorder and coarsen the graph, then 10-25 LOBPCG iterations, each one
    block product and one V-cycle, O(n k b), plus O(n b^2) dense work for a
    block of b = m + 4 or more vectors (1e6 rows in 27-35 s on 2-D manifolds,
    see the module notes). A disconnected graph is embedded per component.
    The sample mode, its cost and its error estimate: see the module notes.

    References
    ----------
    .. [1] M. Belkin and P. Niyogi, "Laplacian eigenmaps for dimensionality
       reduction and data representation", Neural Computation 15, 2003.
    .. [2] L. Zelnik-Manor and P. Perona, "Self-tuning spectral clustering",
       NIPS 2004.
    .. [3] A. V. Knyazev, "Toward the optimal preconditioned eigensolver:
       locally optimal block preconditioned conjugate gradient method",
       SIAM J. Sci. Comput. 23, 2001.
    .. [4] P. Vanek, J. Mandel and M. Brezina, "Algebraic multigrid by smoothed
       aggregation for second and fourth order elliptic problems",
       Computing 56, 1996.
    .. [5] Y. Bengio, J.-F. Paiement, P. Vincent, O. Delalleau, N. Le Roux and
       M. Ouimet, "Out-of-sample extensions for LLE, Isomap, MDS, Eigenmaps,
       and spectral clustering", NIPS 2004.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.linspace(0.0, 1.0, 300)
    >>> X = np.c_[t, np.sin(3 * t)]
    >>> coords, info = laplacian_eigenmaps(X, components=2, k=10, return_info=True)
    >>> coords.shape, info["graph_components"], info["mode"]
    ((300, 2), 1, 'exact')
    >>> bool(np.all(np.diff(coords[:, 0]) < 0) or np.all(np.diff(coords[:, 0]) > 0))
    True

    The sample mode on 4,000 points of a 3 x 1 rectangle, solved on 1,000 of
    them; its first vector is close to cos(pi u / 3):

    >>> rng = np.random.default_rng(0)
    >>> X = np.c_[rng.uniform(0, 3, 4000), rng.uniform(0, 1, 4000)]
    >>> coords, info = laplacian_eigenmaps(X, 1, k=10, mode="sample", landmarks=1000,
    ...                                    return_info=True)
    >>> coords.shape, info["mode"], info["landmarks"], bool(info["extension_error"] < 0.01)
    ((4000, 1), 'sample', 1000, True)
    >>> bool(abs(np.corrcoef(coords[:, 0], np.cos(np.pi * X[:, 0] / 3))[0, 1]) > 0.99)
    True
    """
    context = "laplacian_eigenmaps"
    X = check_array(X, context)
    coords, info, _ = _fit(
        X, components, k, weights, tol, max_iter, mode, landmarks, random_state, context
    )
    return (coords, info) if return_info else coords


@LAPLACIAN.estimator
class LaplacianLens(LensOutputMixin, TransformerMixin, BaseEstimator):
    """Laplacian eigenmaps as a scikit-learn transformer, with a Nystrom extension to new rows.

    Parameters
    ----------
    {lens_params}

    Attributes
    ----------
    embedding_ : ndarray of shape (n_samples, components)
        The coordinates :func:`laplacian_eigenmaps` returns.
    eigenvalues_ : ndarray of shape (components,)
        Eigenvalues of ``I - D^-1/2 W D^-1/2`` (of the largest component).
    residuals_ : ndarray of shape (components,)
        ``||S u - mu u||`` of each unit eigenvector.
    info_ : dict
        Solver details (see :func:`laplacian_eigenmaps`): ``mode`` says which
        mode ran, ``extension_error`` the estimated error of the sample mode.
    n_iter_ : int
        LOBPCG iterations on the largest graph component; 1 when it was small
        enough (at most 1,000 points) to be solved directly in one dense solve.
    n_features_in_ : int
    feature_names_in_ : ndarray of str
        Column names of a DataFrame given to ``fit`` (only then).

    Notes
    -----
    ``fit_transform(X)`` equals :func:`laplacian_eigenmaps` on ``X``.
    ``transform(Y)`` extends the coordinates of the solved rows (all fitted
    rows in exact mode, the landmarks in sample mode) to new rows by the
    Nystrom formula for Laplacian eigenmaps (Bengio et al. 2004), with
    :func:`~lenswork.lenses._nystrom.nystrom_extend`: with the k nearest solved
    rows ``x_j`` of ``y`` and the fit's edge weights ``w_j`` (heat:
    ``exp(-d_j^2 / sigma^2)``; self-tuning: ``exp(-d_j^2 / (sigma_y sigma_j))``,
    ``sigma_y`` the distance from ``y`` to its 7th nearest solved row),

    ``f(y) = sum_j w_j f(x_j) / ((1 - lambda) sum_j w_j)``,

    ``lambda`` the eigenvalue of the column on the graph component of the
    nearest solved row. This is the eigen-equation ``P f = (1 - lambda) f`` of
    the random walk ``P = D^-1 W`` read at a new point. A row of ``Y``
    identical to a solved row gets its solved coordinates, so
    ``transform(X)`` gives back ``fit_transform(X)`` on the fitted rows
    (exactly in exact mode; to rounding in sample mode, where the other rows
    are themselves extensions). Cost of ``transform``: exact k-neighbour
    searches over the solved rows plus O(k m) per row. The output columns are
    named ``laplacian_1, laplacian_2, ...`` (``get_feature_names_out``), as the
    ``laplacian`` lens names them.

    References
    ----------
    .. [1] Y. Bengio, J.-F. Paiement, P. Vincent, O. Delalleau, N. Le Roux and
       M. Ouimet, "Out-of-sample extensions for LLE, Isomap, MDS, Eigenmaps,
       and spectral clustering", NIPS 2004.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(0)
    >>> angle = rng.uniform(0.0, 2.0 * np.pi, 400)
    >>> X = np.c_[np.cos(angle), np.sin(angle)] + 0.01 * rng.normal(size=(400, 2))
    >>> lens = LaplacianLens(components=2, k=10)
    >>> lens.fit_transform(X).shape
    (400, 2)
    >>> bool(lens.residuals_.max() < 1e-6), lens.info_["graph_components"]
    (True, 1)

    An evenly sampled circle embeds as a circle of radius sqrt(2) (cos and
    sin, scaled to mean square 1); new points on it land on that circle too:

    >>> a = np.arange(600) * (2.0 * np.pi / 600)
    >>> lens = LaplacianLens(components=2, k=10).fit(np.c_[np.cos(a), np.sin(a)])
    >>> new = lens.transform([[1.0, 0.0], [0.6, -0.8]])
    >>> np.round(np.hypot(new[:, 0], new[:, 1]) ** 2, 3).tolist()
    [2.0, 2.0]
    """

    def fit(self, X, y=None):
        """Compute the embedding of ``X``; returns self."""
        from sklearn.neighbors import NearestNeighbors

        context = type(self).__name__
        params = LAPLACIAN.check(self.get_params(), context)
        components, k = params["components"], params["k"]
        X = check_input(
            self, X, reset=True, min_rows=max(components + 2, k + 1),
            why=f"components + 2 and k + 1, with components={components}, k={k}",
        )
        coords, info, state = _fit(X, **params, context=context)
        self.embedding_ = coords
        self.eigenvalues_ = np.asarray(info["eigenvalues"])
        self.residuals_ = np.asarray(info["residuals"])
        self.info_ = info
        self.n_iter_ = max(int(info["iterations"]), 1)
        # What the Nystrom extension needs: the solved rows and their coordinates, the
        # eigenvalue of each column on each graph component.
        self._solved = state
        self._nn = NearestNeighbors(n_neighbors=1).fit(state[0])
        return self

    def _output_names(self):
        return [f"laplacian_{j + 1}" for j in range(self.embedding_.shape[1])]

    def transform(self, X):
        """Coordinates of the rows of ``X`` by the Nystrom extension, shape (n, components)."""
        X = check_input(self, X, reset=False)
        fit_X, coords, labels, lambdas = self._solved
        nearest = self._nn.kneighbors(X)[1][:, 0]
        out = extend_by_component(
            fit_X, coords, labels, lambdas, X, k=self.info_["k"], weights=self.info_["weights"],
            sigma=self.info_.get("sigma"), nearest=nearest,
        )
        same = np.all(fit_X[nearest] == X, axis=1)
        out[same] = coords[nearest[same]]
        return out

    def fit_transform(self, X, y=None):
        """Compute the embedding of ``X`` and return it, shape (n_samples, components)."""
        return self.fit(X).embedding_


@LAPLACIAN.register
def _laplacian_lens(ws, *, components, k, weights, tol, max_iter, mode, landmarks):
    coords, info, _ = _fit(
        ws.X, components, k, weights, tol, max_iter, mode, landmarks, ws.random_state,
        "The laplacian lens", warn=ws.warn, graph_of=ws.neighbors,
    )
    parts = []
    for j in range(components):
        part_info = dict(info, component=j + 1)
        if j < len(info["eigenvalues"]):
            part_info["eigenvalue"] = info["eigenvalues"][j]
            part_info["residual"] = info["residuals"][j]
        if info["mode"] == "sample":  # this column's own estimate
            part_info["extension_error"] = info["extension_errors"][j]
        parts.append(LensPart(coords[:, j], str(j + 1), part_info))
    return parts
