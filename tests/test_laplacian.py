"""Tests of the Laplacian-eigenmap lens (lenses._laplacian, _affinity; the linalg solver).

References used below: closed forms of path and cycle spectra (Chung, "Spectral
Graph Theory", 1997, ch. 1; Spielman, "Spectral and Algebraic Graph Theory",
ch. 6), the monotone Fiedler vector of a Robinson similarity (Atkins, Boman and
Hendrickson, "A spectral algorithm for seriation", SIAM J. Comput. 1998),
the residual bounds of symmetric eigenproblems (Davis-Kahan sin-theta for
vectors, |theta - lambda| <= ||r||^2 / gap for values: Parlett, "The Symmetric
Eigenvalue Problem", 1998, ch. 11), sklearn.manifold.SpectralEmbedding and
numpy.linalg.eigh as reference implementations.
"""

import warnings

import numpy as np
import pytest
import scipy.sparse as sp
from numpy.testing import assert_allclose
from sklearn.base import clone
from sklearn.datasets import make_swiss_roll
from sklearn.manifold import SpectralEmbedding
from sklearn.neighbors import NearestNeighbors
from threadpoolctl import threadpool_limits

from lenswork import (
    InputError,
    LaplacianLens,
    LensworkWarning,
    ParameterError,
    Workspace,
    compute_lenses,
    laplacian_eigenmaps,
    neighbor_graph,
)
from lenswork.lenses import _laplacian
from lenswork.lenses._affinity import knn_affinity
from lenswork.linalg import _graph_eigs, _multigrid, laplacian_eigs


# ---------------------------------------------------------------- helpers
def _path(n):
    i = np.arange(n - 1)
    A = sp.csr_matrix((np.ones(n - 1), (i, i + 1)), shape=(n, n))
    return (A + A.T).tocsr()


def _cycle(n):
    i = np.arange(n)
    A = sp.csr_matrix((np.ones(n), (i, (i + 1) % n)), shape=(n, n))
    return (A + A.T).tocsr()


def _unit(v):
    return v / np.linalg.norm(v)


def _vector_error(x, ref):
    """||x/|x| -+ ref/|ref||| with the sign that makes it smallest (eigenvectors up to sign)."""
    a, b = _unit(x), _unit(ref)
    return min(np.linalg.norm(a - b), np.linalg.norm(a + b))


def _gaps(values, spectrum):
    """Distance from each value to the nearest *different* eigenvalue of the spectrum."""
    out = []
    for v in values:
        other = spectrum[np.abs(spectrum - v) > 1e-9 * max(abs(v), 1e-300)]
        out.append(np.abs(other - v).min())
    return np.array(out)


def _dense_normalized(W, vectors=True):
    """Brute force: eigenpairs of I - D^-1/2 W D^-1/2 with numpy.linalg.eigh (reference).

    One BLAS thread: a threaded dense eigensolver crawls on a loaded machine.
    """
    Wd = W.toarray()
    d = Wd.sum(axis=1)
    S = Wd / np.sqrt(np.outer(d, d))
    with threadpool_limits(limits=1, user_api="blas"):
        if not vectors:
            return np.linalg.eigvalsh(np.eye(len(d)) - S)
        lam, U = np.linalg.eigh(np.eye(len(d)) - S)
    return lam, U, d, S


def _manifold(rng, n):
    """A noisy 2-D sheet bent in 3-D (well separated low eigenvalues)."""
    u, v = rng.uniform(0, 3.0, n), rng.uniform(0, 1.0, n)
    return np.c_[u, v, 0.3 * np.sin(2 * u)] + 0.01 * rng.normal(size=(n, 3))


# ---------------------------------------------------------------- closed forms
@pytest.mark.parametrize("n", [40, 2500])  # dense solver, multilevel LOBPCG
def test_path_combinatorial_laplacian_closed_form(n):
    # Internal worker with uniform mass = the combinatorial Laplacian D - W.
    # Path P_n: eigenvalues 2 - 2 cos(pi k / n), eigenvectors cos(pi k (i - 1/2) / n),
    # i = 1..n (Spielman, ch. 6; Chung 1997, ch. 1).
    rng = np.random.default_rng(101)
    m = 3
    x, info = laplacian_eigs(_path(n), m, mass="uniform", rng=rng)
    k = np.arange(1, m + 1)
    i = np.arange(1, n + 1)[:, None]
    ref_vec = np.cos(np.pi * k * (i - 0.5) / n)
    spectrum = 2 - 2 * np.cos(np.pi * np.arange(n) / n)
    lam = spectrum[1 : m + 1]
    res = np.array(info["residuals"])
    gap = _gaps(lam, spectrum)
    # Eigenvalues: |theta - lambda| <= ||r||^2 / gap (Parlett ch. 11), plus rounding.
    assert_allclose(info["eigenvalues"], lam, rtol=0, atol=1e-12 + (res**2 / gap).max())
    for j in range(m):
        # Vectors: sin(angle) <= ||r|| / gap (Davis-Kahan); the chord is <= 2 sin(angle/2)*...
        # so bound it by 2 ||r|| / gap, plus rounding.
        assert _vector_error(x[:, j], ref_vec[:, j]) <= 2 * res[j] / gap[j] + 1e-9
    assert info["method"] == ("dense" if n <= _graph_eigs.DENSE_MAX else "multilevel")


@pytest.mark.parametrize("n", [40, 2500])
def test_path_normalized_laplacian_closed_form(n):
    # Normalised Laplacian of P_n: eigenvalues 1 - cos(pi k / (n - 1)), random-walk
    # eigenvectors cos(pi k (i - 1) / (n - 1)) (Chung 1997, ch. 1, from memory; so the
    # closed form is also checked against numpy.linalg.eigh at the small size).
    rng = np.random.default_rng(102)
    m = 3
    x, info = laplacian_eigs(_path(n), m, mass="degree", rng=rng)
    k = np.arange(1, m + 1)
    i = np.arange(1, n + 1)[:, None]
    ref_vec = np.cos(np.pi * k * (i - 1) / (n - 1))
    spectrum = 1 - np.cos(np.pi * np.arange(n) / (n - 1))
    if n <= 100:
        lam_np = _dense_normalized(_path(n))[0]
        assert_allclose(lam_np, spectrum, atol=1e-12)  # the closed form itself
    lam = spectrum[1 : m + 1]
    res = np.array(info["residuals"])
    gap = _gaps(lam, spectrum)
    assert_allclose(info["eigenvalues"], lam, rtol=0, atol=1e-12 + (res**2 / gap).max())
    d = _path(n).sum(axis=1).A.ravel()
    for j in range(m):
        # Compare in the symmetric form u = D^1/2 x, where the Davis-Kahan bound holds.
        u, ref = np.sqrt(d) * x[:, j], np.sqrt(d) * ref_vec[:, j]
        assert _vector_error(u, ref) <= 2 * res[j] / gap[j] + 1e-9


@pytest.mark.parametrize("n", [50, 2400])
def test_cycle_combinatorial_eigenvalues(n):
    # Cycle C_n: combinatorial eigenvalues 2 - 2 cos(2 pi k / n), each k >= 1 twice
    # (Spielman ch. 6; Chung 1997 ch. 1).
    rng = np.random.default_rng(103)
    _, info = laplacian_eigs(_cycle(n), 4, mass="uniform", rng=rng)
    spectrum = 2 - 2 * np.cos(2 * np.pi * np.arange(n) / n)
    lam = 2 - 2 * np.cos(2 * np.pi * np.array([1, 1, 2, 2]) / n)
    res = np.array(info["residuals"])
    bound = (res**2 / _gaps(lam, spectrum)).max()  # gap to the other distinct values
    assert_allclose(info["eigenvalues"], lam, rtol=0, atol=1e-12 + bound)


@pytest.mark.parametrize("n", [60, 1500])
def test_equally_spaced_circle_gives_the_cycle_spectrum(n):
    # Public function: n equally spaced points on a circle with k = 2 give the cycle
    # graph with equal weights (a regular graph), whose normalised Laplacian is the
    # combinatorial one over 2: eigenvalues 1 - cos(2 pi k / n) (Chung 1997, ch. 1).
    angle = 2 * np.pi * np.arange(n) / n
    X = np.c_[np.cos(angle), np.sin(angle)]
    _, info = laplacian_eigenmaps(X, 4, k=2, return_info=True, tol=1e-6)
    lam = 1 - np.cos(2 * np.pi * np.array([1, 1, 2, 2]) / n)
    # Equal weights hold to rounding of the distances (~1e-16 relative), and the
    # solver stops at residual <= 1e-6 * lambda: its value error is far smaller.
    assert_allclose(info["eigenvalues"], lam, rtol=1e-7)
    assert info["graph_components"] == 1


@pytest.mark.parametrize("n", [300, 1500])
def test_points_on_a_line_give_a_monotone_first_vector(n):
    # Integer points on a line with k = 4: the heat weights are a decreasing function
    # of |i - j| on a band (a Robinson matrix), whose Fiedler vector is monotone
    # (Atkins, Boman and Hendrickson 1998). Its closed form on the plain path is the
    # first cosine above. tol is tight because the vector is flat near the ends.
    rng = np.random.default_rng(104)
    X = np.c_[np.arange(n, dtype=float)][rng.permutation(n)]
    coords = laplacian_eigenmaps(X, 2, k=4, tol=1e-8)
    first = coords[np.argsort(X[:, 0]), 0]
    steps = np.diff(first)
    assert np.all(steps > 0) or np.all(steps < 0)


# ---------------------------------------------------------------- references
@pytest.mark.parametrize("weights", ["heat", "self_tuning"])
def test_agrees_with_sklearn_spectral_embedding_on_swiss_roll(weights):
    # sklearn.manifold.SpectralEmbedding as the reference, given the same k-NN
    # affinity (precomputed): it returns the random-walk vectors D^-1/2 u too.
    X, _ = make_swiss_roll(1500, noise=0.05, random_state=7)
    ours, info = laplacian_eigenmaps(X, 4, k=10, weights=weights, return_info=True)
    assert info["method"] == "multilevel"
    W, _ = knn_affinity(neighbor_graph(X, 10), weights)
    ref = SpectralEmbedding(n_components=4, affinity="precomputed", random_state=0)
    theirs = ref.fit_transform(W)
    for j in range(4):
        corr = np.corrcoef(ours[:, j], theirs[:, j])[0, 1]
        # Both solve the same problem; 0.99 leaves room for their ARPACK tolerance.
        assert abs(corr) >= 0.99, (j, corr)


def test_multilevel_solution_matches_a_dense_reference():
    # numpy.linalg.eigh of the dense normalised Laplacian as the reference, on a graph
    # above the dense size (so the multilevel LOBPCG path runs).
    rng = np.random.default_rng(105)
    X = _manifold(rng, 1100)
    W, _ = knn_affinity(neighbor_graph(X, 10), "heat")
    x, info = laplacian_eigs(W, 4, rng=np.random.default_rng(1))
    assert info["method"] == "multilevel" and info["converged"]
    assert info["preconditioner"] == "smoothed aggregation"
    lam, U, d, S = _dense_normalized(W)
    res = np.array(info["residuals"])
    gap = _gaps(lam[1:5], lam)
    assert_allclose(info["eigenvalues"], lam[1:5], rtol=0, atol=1e-13 + (res**2 / gap).max())
    for j in range(4):
        u = np.sqrt(d) * x[:, j]
        assert _vector_error(u, U[:, j + 1]) <= 2 * res[j] / gap[j] + 1e-9
        # The reported residual is ||S u - mu u|| of the unit vector (recomputed here).
        u = _unit(u)
        mu = 1.0 - info["eigenvalues"][j]
        assert_allclose(np.linalg.norm(S @ u - mu * u), res[j], rtol=1e-3, atol=1e-13)


def test_unsmoothed_aggregation_preconditioner_matches_a_dense_reference(monkeypatch):
    # Force the unsmoothed hierarchy (as on dense aggregate graphs) on a 2-D sheet, whose
    # eigenvalues are near 0, so the plain aggregation V-cycle is used; numpy.linalg.eigh
    # of the dense normalised Laplacian as the reference.
    monkeypatch.setattr(_graph_eigs, "SMOOTH_MAX_DEGREE", 0)
    monkeypatch.setattr(_multigrid, "SMOOTH_MAX_DEGREE", 0)
    rng = np.random.default_rng(118)
    W, _ = knn_affinity(neighbor_graph(_manifold(rng, 1100), 10), "heat")
    _, info = laplacian_eigs(W, 3, rng=np.random.default_rng(3))
    assert info["preconditioner"] == "aggregation" and info["converged"]
    lam = _dense_normalized(W, vectors=False)
    res = np.array(info["residuals"])
    bound = (res**2 / _gaps(lam[1:4], lam)).max()  # Parlett ch. 11
    assert_allclose(info["eigenvalues"], lam[1:4], rtol=0, atol=1e-13 + bound)


def test_random_start_and_jacobi_coarsest_level_still_converge(monkeypatch):
    # A coarsest level too large for a dense solve (forced here) gets Jacobi sweeps and a
    # random start block; numpy.linalg.eigh of the dense matrix as the reference.
    monkeypatch.setattr(_graph_eigs, "COARSE_DENSE_MAX", 10)
    monkeypatch.setattr(_multigrid, "COARSE_DENSE_MAX", 10)
    rng = np.random.default_rng(119)
    W, _ = knn_affinity(neighbor_graph(_manifold(rng, 1100), 10), "heat")
    _, info = laplacian_eigs(W, 2, rng=np.random.default_rng(4))
    assert info["converged"]
    lam = _dense_normalized(W, vectors=False)
    res = np.array(info["residuals"])
    bound = (res**2 / _gaps(lam[1:3], lam)).max()  # Parlett ch. 11
    assert_allclose(info["eigenvalues"], lam[1:3], rtol=0, atol=1e-13 + bound)


def test_expander_like_data_uses_the_unsmoothed_hierarchy_and_converges():
    # 10-d Gaussian data: aggregates have many neighbours, so the prolongation stays
    # unsmoothed; eigenvalues far from 0 and clustered. numpy.linalg.eigh as reference.
    rng = np.random.default_rng(106)
    X = rng.normal(size=(1100, 10))
    W, _ = knn_affinity(neighbor_graph(X, 10), "self_tuning")
    x, info = laplacian_eigs(W, 3, rng=np.random.default_rng(2))
    assert info["smoothed_levels"] == 0 and info["converged"]
    assert info["preconditioner"] in {"none", "aggregation"}
    lam = _dense_normalized(W, vectors=False)
    res = np.array(info["residuals"])
    # Clustered values: bound each by ||r||^2 / gap and, where the gap is tiny, by ||r||.
    bound = np.minimum(res**2 / _gaps(lam[1:4], lam), res)
    assert np.all(np.abs(np.array(info["eigenvalues"]) - lam[1:4]) <= bound + 1e-13)


def test_heat_sigma_is_the_median_neighbour_distance():
    # Brute force with sklearn.neighbors.NearestNeighbors as the reference.
    rng = np.random.default_rng(107)
    X = rng.uniform(size=(300, 3))
    _, info = laplacian_eigenmaps(X, 2, k=7, return_info=True)
    dist, _ = NearestNeighbors(n_neighbors=8).fit(X).kneighbors(X)
    assert_allclose(info["sigma"], np.median(dist[:, 1:]), rtol=1e-12)


def test_self_tuning_weights_match_a_brute_force_construction():
    # Zelnik-Manor and Perona 2004: w_ij = exp(-d_ij^2 / (sigma_i sigma_j)), sigma_i the
    # distance to the 7th neighbour; symmetric k-NN graph (edge if either end lists the
    # other). Brute-force numpy version written here.
    rng = np.random.default_rng(108)
    X = rng.normal(size=(120, 2)) * [3.0, 1.0]
    k = 9
    W, info = knn_affinity(neighbor_graph(X, k), "self_tuning")
    D = np.sqrt(((X[:, None, :] - X[None, :, :]) ** 2).sum(-1))
    order = np.argsort(D, axis=1)[:, 1 : k + 1]
    sigma = np.sort(D, axis=1)[:, 7]
    mask = np.zeros_like(D, dtype=bool)
    mask[np.repeat(np.arange(120), k), order.ravel()] = True
    mask |= mask.T
    ref = np.where(mask, np.exp(-(D**2) / np.outer(sigma, sigma)), 0.0)
    # Same formula, distances from a kd-tree vs numpy: rounding only.
    assert_allclose(W.toarray(), ref, rtol=1e-10, atol=1e-14)
    assert info["sigma_neighbor"] == 7


# ---------------------------------------------------------------- disconnected graphs
def test_disconnected_graph_warns_and_embeds_each_component_on_its_own():
    rng = np.random.default_rng(109)
    a = rng.normal(size=(260, 2))
    b = rng.normal(size=(140, 2)) * 0.5 + 100.0
    X = np.vstack([a, b])
    with pytest.warns(LensworkWarning, match=r"not connected: 2 components \(sizes 260, 140\)"):
        coords, info = laplacian_eigenmaps(X, 2, k=8, weights="self_tuning", return_info=True)
    assert np.all(np.isfinite(coords)) and info["graph_components"] == 2
    # Self-tuning weights are local and no neighbour crosses the gap, so each component's
    # coordinates are exactly those of the component embedded alone (dense solver: rounding).
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        alone_a = laplacian_eigenmaps(a, 2, k=8, weights="self_tuning")
        alone_b = laplacian_eigenmaps(b, 2, k=8, weights="self_tuning")
    assert_allclose(coords[:260], alone_a, atol=1e-8)
    assert_allclose(coords[260:], alone_b, atol=1e-8)


def test_components_too_small_for_m_vectors_get_zero():
    rng = np.random.default_rng(110)
    W = sp.block_diag([_path(50), _path(2)]).tocsr()  # a 2-vertex piece: 1 non-trivial vector
    with pytest.warns(LensworkWarning, match=r"1 component\(s\) with fewer than 4 points get 0"):
        x, info = laplacian_eigs(W, 2, rng=rng)
    assert np.all(x[50:] == 0.0) and np.all(np.isfinite(x))
    assert info["component_sizes"] == [50, 2]


def test_a_weakly_attached_point_is_reported():
    rng = np.random.default_rng(111)
    n = 400
    # A pair of vertices (joined by weight 1) hangs on the end of a path by a thread:
    # the first vector of the normalised Laplacian singles out the pair.
    W = sp.lil_matrix(sp.block_diag([_path(n), _path(2)]))
    W[n - 1, n] = W[n, n - 1] = 1e-9
    with pytest.warns(LensworkWarning, match="concentrated on few points"):
        _, info = laplacian_eigs(W.tocsr(), 2, rng=rng)
    assert info["half_weight_points"][0] <= 2


# ---------------------------------------------------------------- conventions
def test_signs_centring_and_scale():
    rng = np.random.default_rng(112)
    X = _manifold(rng, 1200)
    coords = laplacian_eigenmaps(X, 3, k=10)
    W, _ = knn_affinity(neighbor_graph(X, 10), "heat")
    d = np.asarray(W.sum(axis=1)).ravel()
    # Conventions of the module: largest-|entry| positive, degree-weighted mean 0,
    # degree-weighted mean square 1 (common practice for signs; our own scale choice).
    pick = np.abs(coords).argmax(axis=0)
    assert np.all(coords[pick, np.arange(3)] > 0)
    assert_allclose(d @ coords / d.sum(), 0.0, atol=1e-10)
    assert_allclose((d[:, None] * coords**2).sum(axis=0) / d.sum(), 1.0, rtol=1e-10)


def test_deterministic_under_a_seed_and_stable_across_seeds():
    rng = np.random.default_rng(113)
    X = _manifold(rng, 1600)
    a = laplacian_eigenmaps(X, 2, k=10, random_state=4)
    b = laplacian_eigenmaps(X.copy(), 2, k=10, random_state=4)
    assert np.array_equal(a, b)
    c = laplacian_eigenmaps(X, 2, k=10, random_state=5)  # other aggregates, same answer
    for j in range(2):
        assert np.corrcoef(a[:, j], c[:, j])[0, 1] >= 0.9999  # signs fixed, so no abs


def test_lens_registry_matches_the_function():
    rng = np.random.default_rng(114)
    X = _manifold(rng, 500)
    ws = Workspace(X, random_state=3)
    table = compute_lenses(ws, ["laplacian:components=3,k=10"])
    assert table.names == [f"laplacian_{j}[k=10]" for j in (1, 2, 3)]  # components untagged
    coords = laplacian_eigenmaps(X, 3, k=10, random_state=3)
    for j, col in enumerate(table.columns):
        assert np.array_equal(col.values, coords[:, j])
        assert col.info["residual"] <= 1e-3 * col.info["eigenvalue"]
        assert col.info["weights"] == "heat" and col.info["k"] == 10


def test_transformer_matches_the_function():
    rng = np.random.default_rng(115)
    X = _manifold(rng, 400)
    lens = LaplacianLens(components=2, k=10, weights="self_tuning")
    out = lens.fit_transform(X)
    assert np.array_equal(out, laplacian_eigenmaps(X, 2, k=10, weights="self_tuning"))
    assert lens.eigenvalues_.shape == (2,) and lens.residuals_.shape == (2,)
    assert lens.n_features_in_ == 3 and lens.info_["graph_components"] == 1
    assert clone(lens).get_params()["weights"] == "self_tuning"


# ---------------------------------------------------------------- errors
@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"components": 0}, r"The 'components' parameter of laplacian_eigenmaps must be an int"),
        ({"k": "many"}, r"The 'k' parameter of laplacian_eigenmaps must be an int"),
        ({"weights": "gauss"}, r"The 'weights' parameter of laplacian_eigenmaps must be a str "
                               r"among \{'heat', 'self_tuning'\}"),
        ({"tol": 0.0}, r"The 'tol' parameter of laplacian_eigenmaps must be a float in \(0"),
        ({"max_iter": 0}, r"The 'max_iter' parameter of laplacian_eigenmaps must be an int"),
    ],
)
def test_bad_parameters_are_clear_errors(kwargs, message):
    X = np.random.default_rng(116).normal(size=(50, 2))
    with pytest.raises(ParameterError, match=message):
        laplacian_eigenmaps(X, **kwargs)


def test_bad_data_is_a_clear_error():
    rng = np.random.default_rng(117)
    with pytest.raises(InputError, match=r"needs at least 16 rows; the data has 10"):
        laplacian_eigenmaps(rng.normal(size=(10, 2)))
    X = rng.normal(size=(40, 2))
    X[5, 1] = np.nan
    with pytest.raises(InputError, match=r"non-finite value .* in row 6, column 2"):
        laplacian_eigenmaps(X)
    with pytest.raises(ParameterError, match=r"The 'weights' parameter of LaplacianLens"):
        LaplacianLens(weights="cosine").fit(rng.normal(size=(40, 2)))


# ---------------------------------------------------------------- Nystrom extension
def test_nystrom_extension_on_an_evenly_sampled_circle():
    # Closed form: the first non-trivial Laplacian eigenvectors of a cycle graph are
    # cos(2 pi j / n) and sin(2 pi j / n), eigenvalue 1 - cos(2 pi / n) per unit degree
    # (Chung 1997, ch. 1). Scaled to mean square 1 the fitted rows lie on a circle of
    # radius sqrt(2) at angle a + phi (one rotation phi, or a reflection).
    rng = np.random.default_rng(4101)
    a = np.arange(600) * (2.0 * np.pi / 600)
    lens = LaplacianLens(components=2, k=10).fit(np.c_[np.cos(a), np.sin(a)])
    E = lens.embedding_
    assert_allclose(np.hypot(E[:, 0], E[:, 1]), np.sqrt(2.0), rtol=1e-9)
    phi = np.angle(np.exp(1j * (np.arctan2(E[:, 1], E[:, 0]) - a)))
    flip = np.ptp(phi) > 1e-6  # a reflection: the angle runs the other way
    phi = np.angle(np.exp(1j * (np.arctan2(E[:, 1], E[:, 0]) + (a if flip else -a))))
    assert np.ptp(phi) < 1e-6
    # New points on the circle: the Nystrom formula (Bengio et al. 2004) must put them on
    # the same circle at their own angle. Tolerances: the extension averages chords of
    # the 10 nearest grid points (spacing 0.0105 rad), so 1e-3 in radius and angle.
    t = rng.uniform(0.0, 2.0 * np.pi, 50)
    N = lens.transform(np.c_[np.cos(t), np.sin(t)])
    assert_allclose(np.hypot(N[:, 0], N[:, 1]), np.sqrt(2.0), rtol=1e-3)
    psi = np.arctan2(N[:, 1], N[:, 0]) + (t if flip else -t)
    assert np.max(np.abs(np.angle(np.exp(1j * (psi - phi[0]))))) < 1e-3


@pytest.mark.parametrize("weights", ["heat", "self_tuning"])
def test_nystrom_extension_equals_the_formula(weights):
    # Reference: the out-of-sample formula of Bengio et al. (NIPS 2004) for Laplacian
    # eigenmaps, f(y) = sum_j w(y, x_j) f(x_j) / ((1 - lambda) sum_j w(y, x_j)), written
    # here with scipy's cdist, the eigenvalue from the Rayleigh quotient of the fitted
    # coordinates on a dense affinity built from sklearn's NearestNeighbors.
    from scipy.spatial.distance import cdist

    rng = np.random.default_rng(4102 + len(weights))
    X = _manifold(rng, 300)
    k = 10
    lens = LaplacianLens(components=2, k=k, weights=weights).fit(X)
    E = lens.embedding_
    dist, idx = NearestNeighbors(n_neighbors=k + 1).fit(X).kneighbors(X)
    dist, idx = dist[:, 1:], idx[:, 1:]
    if weights == "heat":
        sigma = np.median(dist[dist > 0])
        # measured from each row's reach max(d_1 - sigma, 0) (local connectivity beyond sigma,
        # McInnes, Healy and Melville 2018)
        wgt = np.exp(-((np.maximum(dist - np.maximum(dist[:, :1] - sigma, 0), 0) / sigma) ** 2))
    else:
        s = dist[:, 6]
        wgt = np.exp(-(dist**2) / (s[:, None] * s[idx]))
    W = np.zeros((300, 300))
    W[np.repeat(np.arange(300), k), idx.ravel()] = wgt.ravel()
    W = np.maximum(W, W.T)
    deg = W.sum(axis=1)
    lam = np.array([E[:, j] @ (deg * E[:, j] - W @ E[:, j]) / (deg @ E[:, j] ** 2)
                    for j in range(2)])
    Y = X[:20] + 0.05 * rng.normal(size=(20, X.shape[1]))
    D = cdist(Y, X)
    near = np.argsort(D, axis=1)[:, :k]
    d = np.take_along_axis(D, near, axis=1)
    if weights == "heat":
        w = np.exp(-((np.maximum(d - np.maximum(d[:, :1] - sigma, 0), 0) / sigma) ** 2))
    else:
        w = np.exp(-(d**2) / (d[:, 6][:, None] * s[near]))
    ref = np.einsum("ij,ijm->im", w, E[near]) / w.sum(axis=1)[:, None] / (1.0 - lam)
    # Same formula in a different order of operations: float64 rounding only.
    assert_allclose(lens.transform(Y), ref, rtol=1e-8, atol=1e-10)
    # The fitted rows themselves come back unchanged (the scikit-learn contract).
    assert np.array_equal(lens.transform(X), E)


# ---------------------------------------------------------------- sample mode
def _strip(rng, n, length=3.5):
    """Uniform points on a flat length x 1 rectangle (Neumann eigenfunctions in closed form)."""
    return np.c_[rng.uniform(0, length, n), rng.uniform(0, 1.0, n)]


def test_sample_mode_agrees_with_the_exact_mode_and_the_closed_form():
    # Closed form: the Neumann Laplacian of a 3.5 x 1 rectangle has eigenfunctions
    # cos(j pi u / 3.5), eigenvalues (j pi / 3.5)^2 = 0.81, 3.2, 7.3 for j = 1, 2, 3, well
    # apart from the next, cos(pi v) at 9.9 (separation of variables; e.g. Courant and
    # Hilbert, vol. 1, ch. V). Graph Laplacians of uniform samples converge to it
    # (Belkin and Niyogi 2003), so both modes must find these functions.
    rng = np.random.default_rng(4201)
    X = _strip(rng, 6000)
    exact, e_info = laplacian_eigenmaps(X, 3, k=10, mode="exact", return_info=True)
    sample, s_info = laplacian_eigenmaps(X, 3, k=10, mode="sample", landmarks=3000,
                                         return_info=True)
    assert e_info["mode"] == "exact" and e_info["extension_error"] == 0.0
    assert s_info["mode"] == "sample" and s_info["landmarks"] == 3000
    for j in range(3):
        ref = np.cos((j + 1) * np.pi * X[:, 0] / 3.5)
        # The k-NN graph's own discretisation error on 6,000 points: measured |corr|
        # 0.9907-0.9997 over four seeds, so 0.99 (exact mode).
        assert abs(np.corrcoef(exact[:, j], ref)[0, 1]) >= 0.99
        if j < 2:  # 3,000 landmarks: measured 0.9950-0.9994 over four seeds
            assert abs(np.corrcoef(sample[:, j], ref)[0, 1]) >= 0.99
        # Against the exact mode: the reported estimate of 1 - |corr| (from held-out
        # landmarks, see _scaled_error). Over 4 seeds x 2 sample sizes x 3 vectors the
        # true value was 0.29-1.83 times the estimate (one random split of 600 held-out
        # rows is a noisy measurement), hence the factor 3.
        gap = 1.0 - abs(np.corrcoef(exact[:, j], sample[:, j])[0, 1])
        assert gap <= 3.0 * s_info["extension_errors"][j] + 1e-4, (j, gap)
    assert s_info["extension_error"] == max(s_info["extension_errors"]) < 0.05
    assert len(s_info["extension_r2"]) == 3 and min(s_info["extension_r2"]) > 0.98


def test_sample_mode_is_deterministic_under_a_seed():
    rng = np.random.default_rng(4202)
    X = _strip(rng, 3000)
    a, ia = laplacian_eigenmaps(X, 2, k=10, mode="sample", landmarks=800, random_state=7,
                                return_info=True)
    b, ib = laplacian_eigenmaps(X.copy(), 2, k=10, mode="sample", landmarks=800,
                                random_state=7, return_info=True)
    assert np.array_equal(a, b)
    assert ia["extension_errors"] == ib["extension_errors"]
    c, ic = laplacian_eigenmaps(X, 2, k=10, mode="sample", landmarks=800, random_state=8,
                                return_info=True)
    assert not np.array_equal(a, c)  # other landmarks ...
    for j in range(2):  # ... the same functions, within both runs' estimated errors
        # (two independent sample errors add; factor 3 as in the test above).
        gap = 1.0 - abs(np.corrcoef(a[:, j], c[:, j])[0, 1])
        assert gap <= 3.0 * (ia["extension_errors"][j] + ic["extension_errors"][j]), (j, gap)


def test_auto_mode_follows_the_row_threshold(monkeypatch):
    rng = np.random.default_rng(4203)
    X = _strip(rng, 1200)
    _, info = laplacian_eigenmaps(X, 2, k=10, return_info=True)
    assert info["mode"] == "exact" and info["mode_rule"].startswith("auto: exact up to")
    monkeypatch.setattr(_laplacian, "EXACT_MAX_ROWS", 1000)
    _, info = laplacian_eigenmaps(X, 2, k=10, landmarks=600, return_info=True)
    assert info["mode"] == "sample" and info["mode_rule"].startswith("auto: sample above 1,000")
    # As many landmarks as rows: the sample mode is the exact mode.
    _, info = laplacian_eigenmaps(X, 2, k=10, mode="sample", landmarks=1200, return_info=True)
    assert info["mode"] == "exact" and "every row is solved" in info["mode_rule"]


def test_sample_mode_lens_reports_its_error_and_leaves_the_shared_graph_alone():
    rng = np.random.default_rng(4204)
    X = _strip(rng, 2500)
    ws = Workspace(X, random_state=1)
    table = compute_lenses(ws, ["laplacian:k=10,mode=sample,landmarks=700"])
    assert table.names == [f"laplacian_{j}[k=10;mode=sample;landmarks=700]" for j in (1, 2)]
    for j, col in enumerate(table.columns):
        info = col.info
        assert info["mode"] == "sample" and info["landmarks"] == 700
        assert info["extension_holdout"] == 140 and "random_state" in info["landmark_rule"]
        # Its own column's estimate, from the held-out |corr| (scaled as _scaled_error says:
        # (1 - h) / h * (1 - landmarks / n) with h = 1/5).
        expect = 4.0 * (1.0 - info["extension_holdout_abs_corr"][j]) * (1.0 - 700 / 2500)
        assert_allclose(info["extension_error"], expect, rtol=1e-12)
        # Sanity only: 700 landmarks, measured 0.004 and 0.06.
        assert info["extension_error"] == info["extension_errors"][j] < 0.2
    # The landmarks' graph is the lens's own: no all-rows graph was built.
    assert not any(key[0] == "knn" for key in ws._cache)
    same = laplacian_eigenmaps(X, 2, k=10, mode="sample", landmarks=700, random_state=1)
    assert np.array_equal(np.c_[[c.values for c in table.columns]].T, same)


def test_sample_mode_transformer_gives_back_its_fit():
    rng = np.random.default_rng(4205)
    X = _strip(rng, 2000)
    lens = LaplacianLens(components=2, k=10, mode="sample", landmarks=600).fit(X)
    assert lens.info_["mode"] == "sample" and lens.embedding_.shape == (2000, 2)
    # Landmarks come back exactly, the other rows as the same extension (rounding only).
    assert_allclose(lens.transform(X), lens.embedding_, rtol=1e-12, atol=1e-12)


def test_too_few_landmarks_for_k_is_a_clear_error():
    X = _strip(np.random.default_rng(4206), 1000)
    with pytest.raises(ParameterError, match=r"needs landmarks >= 126 .* got landmarks=120"):
        laplacian_eigenmaps(X, 2, k=100, mode="sample", landmarks=120)
    with pytest.raises(ParameterError, match=r"The 'landmarks' parameter of laplacian_eigenmaps"):
        laplacian_eigenmaps(X, 2, mode="sample", landmarks=10)
    with pytest.raises(ParameterError, match=r"The 'mode' parameter of LaplacianLens"):
        LaplacianLens(mode="fast").fit(X)


def test_extension_on_a_disconnected_fit_uses_each_component_eigenvalue():
    # Bengio et al. (NIPS 2004) formula per component: f(y) = mean_w f(x_j) / (1 - lambda_c),
    # lambda_c the eigenvalue of the column on the component of y's nearest fitted row,
    # written here with scipy's cdist. Two far blobs: no weight crosses the gap.
    from scipy.spatial.distance import cdist

    rng = np.random.default_rng(4207)
    a = _strip(rng, 300)
    b = _strip(rng, 200) * 0.5 + 50.0
    X = np.vstack([a, b])
    with pytest.warns(LensworkWarning, match="not connected"):
        lens = LaplacianLens(components=2, k=8, weights="self_tuning").fit(X)
    E = lens.embedding_
    Y = b[:5] + 0.01 * rng.normal(size=(5, 2))
    D = cdist(Y, X)
    near = np.argsort(D, axis=1)[:, :8]
    d = np.take_along_axis(D, near, axis=1)
    dist_fit = np.sort(cdist(X, X), axis=1)[:, 1:9]
    s = dist_fit[:, 6]
    w = np.exp(-(d**2) / (d[:, 6][:, None] * s[near]))
    Wb = lens._solved[2] == lens._solved[2][300]  # rows of blob b's component
    assert Wb[300:].all() and not Wb[:300].any()
    Eb = E[300:]
    # lambda of each column on blob b: the Rayleigh quotient of its coordinates there.
    from lenswork import neighbor_graph as ng

    W, _ = knn_affinity(ng(b, 8), "self_tuning")
    deg = np.asarray(W.sum(axis=1)).ravel()
    lam = np.array([Eb[:, j] @ (deg * Eb[:, j] - W @ Eb[:, j]) / (deg @ Eb[:, j] ** 2)
                    for j in range(2)])
    ref = np.einsum("ij,ijm->im", w, E[near]) / w.sum(axis=1)[:, None] / (1.0 - lam)
    assert_allclose(lens.transform(Y), ref, rtol=1e-8, atol=1e-10)


# ---------------------------------------------------------------- the split into layers
def test_the_lens_is_its_weights_then_the_linalg_solver_and_agrees_with_eigsh():
    # The lens = lenses._affinity.knn_affinity + linalg.laplacian_eigs, bit for bit (the
    # split of the old single module changed no arithmetic); the outside reference is
    # scipy.sparse.linalg.eigsh (ARPACK) on S = D^-1/2 W D^-1/2, largest algebraic
    # eigenvalues, whose eigenvectors are the smallest of I - S (Chung 1997, ch. 1).
    from scipy.sparse.linalg import eigsh

    rng = np.random.default_rng(120)
    X = _manifold(rng, 1500)  # above the dense size: the multilevel LOBPCG path runs
    coords, info = laplacian_eigenmaps(X, 3, k=10, random_state=0, return_info=True)
    W, _ = knn_affinity(neighbor_graph(X, 10, random_state=0), "heat")
    x, solver_info = laplacian_eigs(W, 3, rng=np.random.default_rng(0))
    np.testing.assert_array_equal(coords, x)
    assert info["eigenvalues"] == solver_info["eigenvalues"]
    assert solver_info["method"] == "multilevel"
    d = np.asarray(W.sum(axis=1)).ravel()
    S = sp.diags(1 / np.sqrt(d)) @ W @ sp.diags(1 / np.sqrt(d))
    mu, U = eigsh(S, k=4, which="LA", tol=1e-12, v0=np.sqrt(d))
    order = np.argsort(-mu)
    lam, U = 1.0 - mu[order], U[:, order]
    res = np.array(info["residuals"])
    # |theta - lambda| <= ||r||^2 / gap (Parlett 1998, ch. 11); gap to the next value.
    gap = np.abs(np.diff(lam)).min()
    assert_allclose(info["eigenvalues"], lam[1:], rtol=0, atol=1e-10 + (res**2).max() / gap)
    for j in range(3):
        assert _vector_error(np.sqrt(d) * coords[:, j], U[:, j + 1]) < 1e-4
