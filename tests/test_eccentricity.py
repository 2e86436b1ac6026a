"""Eccentricity lenses: closed form, exact pairs, landmarks, geodesic variant."""

import math
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.sparse.csgraph import shortest_path
from scipy.spatial.distance import cdist
from sklearn.datasets import make_circles
from sklearn.neighbors import kneighbors_graph

from lenswork import (
    Eccentricity,
    InputError,
    LensworkWarning,
    ParameterError,
    Workspace,
    eccentricity,
    geodesic_eccentricity,
    get_lens,
)


def _brute(X, p, Q=None):
    """(mean_y d(x, y)^p)^(1/p) from scipy.spatial.distance.cdist (self included)."""
    D = cdist(X if Q is None else Q, X)
    return D.max(axis=1) if math.isinf(p) else np.mean(D**p, axis=1) ** (1 / p)


def _polygon(N):
    """The outer ring of sklearn.datasets.make_circles(noise=0): a regular N-gon, unit circle."""
    X, y = make_circles(n_samples=2 * N, noise=0.0, shuffle=True, random_state=0)
    return X[y == 0]


@pytest.mark.parametrize("N", [6, 7, 40, 41])
def test_regular_polygon_closed_forms(N):
    P = _polygon(N)
    assert P.shape == (N, 2)
    # textbook closed forms for the regular N-gon on the unit circle (chords 2 sin(pi k / N)):
    # mean squared chord = 2 (so E_2 = sqrt 2); sum_k sin(pi k / N) = cot(pi / 2N) (Gradshteyn
    # and Ryzhik 1.342.1, from memory); the longest chord is 2 (N even) or 2 cos(pi / 2N) (N odd).
    # rtol 1e-12: float64 sums of N terms of size ~1
    assert_allclose(eccentricity(P), np.full(N, math.sqrt(2)), rtol=1e-12)
    assert_allclose(eccentricity(P, p=1), (2 / N) / math.tan(math.pi / (2 * N)), rtol=1e-12)
    e_inf = 2.0 if N % 2 == 0 else 2 * math.cos(math.pi / (2 * N))
    assert_allclose(eccentricity(P, p="inf"), e_inf, rtol=1e-12)
    assert_allclose(eccentricity(P, p=math.inf), e_inf, rtol=1e-12)


def test_p2_closed_form_equals_brute_force():
    rng = np.random.default_rng(3141)
    X = rng.normal(size=(1500, 7)) * rng.uniform(0.5, 3, size=7) + 50.0
    values, info = eccentricity(X, return_info=True)
    assert info["mode"] == "closed_form"
    # scipy.spatial.distance.cdist brute force; rtol 1e-10: the closed form is exact algebra,
    # float64 rounding of squared norms of size ~1e1 after centring
    assert_allclose(values, _brute(X, 2.0), rtol=1e-10)


@pytest.mark.parametrize("p", [1.0, 1.5, 3.0, 4.0, math.inf])
def test_exact_mode_equals_brute_force(p):
    rng = np.random.default_rng(2718)
    X = rng.normal(size=(2500, 5)) + 10.0  # > one tile of 2048 columns
    values, info = eccentricity(X, p=p, mode="exact", return_info=True)
    assert info["mode"] == "exact"
    # scipy.spatial.distance.cdist brute force; rtol 1e-10: squared distances from the
    # expanded product after centring, errors ~1e-15 relative for distances of size ~1
    assert_allclose(values, _brute(X, p), rtol=1e-10)


def test_landmark_estimate_error_statements_hold():
    rng = np.random.default_rng(1618)
    X = np.r_[rng.normal(size=(3000, 4)), rng.normal(size=(1000, 4)) * 0.5 + 4]
    for p in (1.0, 3.0):
        values, info = eccentricity(X, p=p, mode="landmark", landmarks=400, return_info=True)
        err = np.abs(values - _brute(X, p))  # scipy cdist brute force as reference
        assert info["mode"] == "landmark" and info["landmarks"] == 400
        # normal approximation for a mean of 400 terms: |error| <= 3 se for ~99.7% of the
        # points; the landmark sample is shared by all points, so allow 95%
        assert np.mean(err <= 3 * info["se"]) >= 0.95
        assert np.median(err) <= 3 * np.median(info["se"])
    lower, info = eccentricity(X, p="inf", mode="landmark", landmarks=400, return_info=True)
    true = _brute(X, math.inf)
    # hard statement from the triangle inequality: lower <= E_inf <= lower + gap (always)
    assert np.all(lower <= true * (1 + 1e-12))
    assert np.all(true <= (lower + info["gap"]) * (1 + 1e-12))


def test_landmark_mode_is_permutation_equivariant():
    rng = np.random.default_rng(99)
    X = rng.normal(size=(2000, 3))
    perm = rng.permutation(len(X))
    a = eccentricity(X, p=1, mode="landmark", landmarks=200, random_state=4)
    b = eccentricity(X[perm], p=1, mode="landmark", landmarks=200, random_state=4)
    # landmarks are chosen from row content (common practice for lens contracts);
    # rtol 1e-12: the same sums, at most another summation order
    assert_allclose(b, a[perm], rtol=1e-12)


def test_transformer_new_points_and_lens_names():
    rng = np.random.default_rng(7)
    X = rng.normal(size=(800, 3))
    Y = rng.normal(size=(30, 3)) * 3
    for p in (1.0, 2.0, math.inf):
        est = Eccentricity(p=p).fit(X)
        # scipy cdist brute force; rtol 1e-10 (float64)
        assert_allclose(est.transform(Y)[:, 0], _brute(X, p, Q=Y), rtol=1e-10)
    ws = Workspace(X)
    (col,) = get_lens("eccentricity")(ws)
    assert col.name == "eccentricity"
    assert_allclose(col.values, _brute(X, 2.0), rtol=1e-10)
    (col,) = get_lens("eccentricity")(ws, p="inf")
    assert col.name == "eccentricity[p=inf]" and col.info["mode"] == "exact"
    assert_allclose(col.values, _brute(X, math.inf), rtol=1e-10)


def _brute_geodesic(X, k, p):
    """All-pairs shortest paths (scipy csgraph) on sklearn's k-NN distance graph, symmetrised."""
    G = kneighbors_graph(X, n_neighbors=k, mode="distance")
    D = shortest_path(G.maximum(G.T), directed=False)
    out = np.empty(len(X))
    for i, row in enumerate(D):
        r = row[np.isfinite(row)]  # the point's own component, itself included
        out[i] = r.max() if math.isinf(p) else np.mean(r**p) ** (1 / p)
    return out


@pytest.mark.parametrize("p", [1.0, 2.0, math.inf])
def test_geodesic_exact_equals_all_pairs_shortest_paths(p):
    rng = np.random.default_rng(4242)
    t = rng.uniform(0, 3 * np.pi, 400)
    X = np.c_[t * np.cos(t), t * np.sin(t), rng.normal(scale=0.1, size=400)]  # a spiral
    values, info = geodesic_eccentricity(X, p=p, k=8, landmarks=400, return_info=True)
    assert info["mode"] == "exact" and info["components"] == 1
    # scipy shortest_path on scikit-learn's kneighbors_graph as reference; rtol 1e-10:
    # the same path sums in float64
    assert_allclose(values, _brute_geodesic(X, 8, p), rtol=1e-10)


def test_geodesic_disconnected_graph_warns_and_stays_finite():
    rng = np.random.default_rng(5)
    X = np.r_[rng.normal(size=(150, 2)), rng.normal(size=(100, 2)) + 50.0]
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        values, info = geodesic_eccentricity(X, k=5, landmarks=1000, return_info=True)
    assert any(
        issubclass(w.category, LensworkWarning) and "2 connected components" in str(w.message)
        for w in caught
    )
    assert info["components"] == 2 and np.all(np.isfinite(values))
    # per-component all-pairs shortest paths (scipy) as reference; rtol 1e-10 (float64)
    assert_allclose(values, _brute_geodesic(X, 5, 2.0), rtol=1e-10)
    # landmark mode on the same graph: every component gets landmarks, nothing infinite
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        est = geodesic_eccentricity(X, k=5, landmarks=20)
    assert np.all(np.isfinite(est)) and np.all(est > 0)


def test_geodesic_landmark_standard_error_holds():
    rng = np.random.default_rng(6)
    X = rng.uniform(size=(1200, 2))
    values, info = geodesic_eccentricity(X, p=1, k=10, landmarks=150, return_info=True)
    err = np.abs(values - _brute_geodesic(X, 10, 1.0))
    assert info["mode"] == "landmark"
    # normal approximation for a mean over 150 landmarks, shared by all points: allow 95%
    assert np.mean(err <= 3 * info["se"]) >= 0.95
    lower, info = geodesic_eccentricity(X, p="inf", k=10, landmarks=150, return_info=True)
    true = _brute_geodesic(X, 10, math.inf)
    # hard interval from the triangle inequality of the path metric
    assert np.all(lower <= true * (1 + 1e-12)) and np.all(true <= (lower + info["gap"]) + 1e-12)


def test_geodesic_auto_landmarks_follow_n():
    rng = np.random.default_rng(77)
    X = rng.uniform(size=(150, 2))
    values, info = geodesic_eccentricity(X, k=8, return_info=True)  # landmarks="auto"
    assert info["mode"] == "exact" and info["landmarks"] == 150  # all rows up to 200
    # scipy shortest_path on scikit-learn's kneighbors_graph as reference (float64 sums)
    assert_allclose(values, _brute_geodesic(X, 8, 2.0), rtol=1e-10)
    X = rng.uniform(size=(1500, 2))
    values, info = geodesic_eccentricity(X, p=1, k=10, return_info=True)
    assert info["mode"] == "landmark" and info["landmarks"] == 200  # clip(1e7 / 1500) = 200
    assert info["landmarks_rule"].startswith("auto") and info["cost_node_visits"] == 200 * 1500
    err = np.abs(values - _brute_geodesic(X, 10, 1.0))
    # normal approximation for a mean over 200 shared landmarks: 3 se covers >= 95 %
    assert np.mean(err <= 3 * info["se"]) >= 0.95
    with pytest.raises(ParameterError, match=r"'landmarks' parameter .* or 'auto'"):
        geodesic_eccentricity(X, landmarks="many")


def test_geodesic_lens_uses_shared_graph():
    rng = np.random.default_rng(8)
    X = rng.normal(size=(300, 3))
    ws = Workspace(X)
    (col,) = get_lens("geodesic_eccentricity")(ws, k=6, landmarks=300)
    assert col.name.startswith("geodesic_eccentricity[")
    assert ("knn", "euclidean", 6) in ws._cache  # the workspace's graph was used and cached
    assert_allclose(col.values, _brute_geodesic(X, 6, 2.0), rtol=1e-10)  # scipy reference


def test_bad_parameters_raise_clear_errors():
    X = np.random.default_rng(9).normal(size=(40, 2))
    with pytest.raises(ParameterError, match="'p' parameter of eccentricity"):
        eccentricity(X, p=0.5)
    with pytest.raises(ParameterError, match="'p' parameter of eccentricity"):
        get_lens("eccentricity")(Workspace(X), p="max")
    with pytest.raises(ParameterError, match="'mode' parameter"):
        eccentricity(X, p=1, mode="fast")
    with pytest.raises(ParameterError, match="'landmarks' parameter"):
        eccentricity(X, p=1, landmarks=1)
    with pytest.raises(ParameterError, match="'k' parameter of geodesic_eccentricity"):
        geodesic_eccentricity(X, k=0)
    with pytest.raises(InputError, match="finite values"):
        eccentricity(np.array([[0.0, np.inf], [1.0, 2.0]]))
    with pytest.raises(ParameterError, match="too large for floating point"):
        eccentricity(np.array([[0.0], [1.0], [1e3]]), p=5000.0, mode="exact")


def test_landmark_standard_error_is_near_nominal_both_ways():
    # Coverage over independent landmark draws (40 seeds x 1000 rows): the standardised error
    # z = (estimate - exact) / stated se of a mean of a sample without replacement is about
    # N(0, 1) (central limit theorem; finite-population correction sqrt(1 - m/n), Cochran 1977,
    # eq. 2.12). Two-sided: a stated se twice too large, or one without the correction (41 %
    # too large at m = n/2), gives E[z^2] near 0.25 or 0.5 and fails as a too small one does.
    rng = np.random.default_rng(7)
    X = np.r_[rng.normal(size=(700, 3)), rng.normal(size=(300, 3)) * 0.5 + 3]
    for p in (1.0, 3.0):
        true = _brute(X, p)  # scipy cdist brute force
        z = np.concatenate([
            (v - true) / info["se"]
            for v, info in (eccentricity(X, p=p, mode="landmark", landmarks=500,
                                         random_state=s, return_info=True) for s in range(40))
        ])
        assert 0.8 <= np.mean(z**2) <= 1.25  # measured 1.01 (p = 1) and 1.01 (p = 3)
        assert 0.92 <= np.mean(np.abs(z) <= 1.96) <= 0.985  # nominal 0.95; measured 0.96, 0.97
        assert abs(np.mean(z)) <= 0.1  # no bias beyond the delta method's
