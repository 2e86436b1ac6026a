"""Tests of the principal-coordinate lens (lenswork.lenses._pca)."""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from sklearn.base import clone
from sklearn.datasets import load_iris
from sklearn.decomposition import PCA
from sklearn.exceptions import NotFittedError

from lenswork import (
    InputError,
    LensworkWarning,
    ParameterError,
    PCALens,
    Workspace,
    compute_lenses,
    get_lens,
    pca_coordinates,
)
from lenswork.lenses import _pca
from lenswork.lenses._pca import _pca_basis, _pca_scores


def _anisotropic(rng, n, scales, shift=0.0):
    """Gaussian rows with well-separated variances along random axes."""
    d = len(scales)
    Q, _ = np.linalg.qr(rng.normal(size=(d, d)))
    return (rng.normal(size=(n, d)) * np.asarray(scales)) @ Q.T + shift


def _align(A, B):
    """Flip the columns of A to the sign of B (eigenvectors are defined up to sign)."""
    signs = np.sign(np.sum(A * B, axis=0))
    return A * signs


def _low_rank_wide(rng, n, d):
    """n x d data of rank about 5 plus small noise (for the randomized solver)."""
    latent = rng.normal(size=(n, 5)) * [10.0, 7.0, 5.0, 3.0, 2.0]
    W = rng.normal(size=(5, d))
    return latent @ W + 0.1 * rng.normal(size=(n, d))


@pytest.mark.parametrize("solver", ["covariance", "randomized"])
def test_coordinates_match_sklearn_pca_up_to_sign(solver):
    rng = np.random.default_rng(20240611)
    X = _anisotropic(rng, 600, [6.0, 4.0, 2.5, 1.0, 0.5, 0.2], shift=3.0)
    ours = pca_coordinates(X, components=3, solver=solver)
    # Reference: sklearn.decomposition.PCA with the exact LAPACK SVD.
    ref = PCA(n_components=3, svd_solver="full").fit_transform(X)
    # Both are exact to rounding (the spectrum is well separated, so even the
    # randomized SVD with power iterations converges to machine precision):
    # 1e-9 of the coordinate scale leaves room for a few thousand roundings.
    assert_allclose(_align(ours, ref), ref, atol=1e-9 * np.abs(ref).max())


def test_transformer_attributes_match_sklearn_pca():
    rng = np.random.default_rng(7)
    X = _anisotropic(rng, 400, [5.0, 3.0, 1.0, 0.3], shift=-2.0)
    lens = PCALens(components=2).fit(X)
    ref = PCA(n_components=2, svd_solver="full").fit(X)  # reference: scikit-learn
    signs = np.sign(np.sum(lens.components_ * ref.components_, axis=1))
    # Unit vectors / variances from two exact methods: agreement to ~1e-12.
    assert_allclose(lens.components_ * signs[:, None], ref.components_, atol=1e-12)
    assert_allclose(lens.explained_variance_, ref.explained_variance_, rtol=1e-12)
    assert_allclose(lens.explained_variance_ratio_, ref.explained_variance_ratio_, rtol=1e-12)
    assert_allclose(lens.mean_, ref.mean_, rtol=1e-13)
    Y = rng.normal(size=(50, 4))
    assert_allclose(lens.transform(Y) * signs, ref.transform(Y), atol=1e-11)
    assert lens.solver_ == "covariance"


def test_iris_explained_variance_ratio():
    X = load_iris().data  # unscaled, as in scikit-learn's gallery example
    table = compute_lenses(Workspace(X), ["pca"])
    ratios = [table[name].info["explained_variance_ratio"] for name in ("pca_1", "pca_2")]
    # Reference values: scikit-learn's gallery example "Comparison of LDA and PCA 2D
    # projection of Iris dataset" prints "explained variance ratio (first two
    # components): [0.92461872 0.05306648]" (8 printed digits, hence atol 1e-6).
    assert_allclose(ratios, [0.92461872, 0.05306648], atol=1e-6)
    assert table["pca_2"].info["cumulative_ratio"] == pytest.approx(sum(ratios), abs=1e-12)


def test_wide_data_uses_randomized_svd_and_matches_full_svd():
    rng = np.random.default_rng(31)
    X = _low_rank_wide(rng, 200, _pca.COVARIANCE_MAX_DIM + 100)
    lens = PCALens(components=3, random_state=5).fit(X)
    assert lens.solver_ == "randomized"
    ref = PCA(n_components=3, svd_solver="full").fit(X)  # reference: exact SVD
    # Strong spectral gap (10:7:5 latent scales, noise 0.1): the randomized SVD
    # with 7 power iterations reaches ~1e-12; 1e-8 is a safe bound.
    assert_allclose(lens.explained_variance_, ref.explained_variance_, rtol=1e-8)
    assert_allclose(lens.explained_variance_ratio_, ref.explained_variance_ratio_, rtol=1e-8)
    # Same seed, same bits (determinism of the randomized path).
    again = PCALens(components=3, random_state=5).fit(X)
    assert np.array_equal(again.components_, lens.components_)


def test_sign_rule_largest_entry_positive():
    rng = np.random.default_rng(99)
    X = _anisotropic(rng, 300, [4.0, 2.0, 1.0])
    lens = PCALens(components=3).fit(X)
    comp = lens.components_
    # Rule from the project contract (common practice, as sklearn's svd_flip):
    # the largest-magnitude entry of every principal axis is positive.
    assert np.all(comp[np.arange(3), np.argmax(np.abs(comp), axis=1)] > 0)
    # Consequence: negating the data keeps the axes and negates the coordinates.
    assert_allclose(pca_coordinates(-X, components=3), -pca_coordinates(X, components=3),
                    atol=1e-12 * np.abs(X).max())  # rounding only


def test_huge_mean_keeps_precision():
    rng = np.random.default_rng(4242)
    X = _anisotropic(rng, 2000, [3.0, 1.0, 0.5], shift=1e7)  # e.g. raw timestamps
    ours = pca_coordinates(X, components=2)
    # Reference: numpy SVD of the explicitly centred data.
    Xc = X - X.mean(axis=0)
    U, S, _ = np.linalg.svd(Xc, full_matrices=False)
    ref = U[:, :2] * S[:2]
    # Forming X^T X - n mean mean^T here would lose ~eps * 1e14 of precision (useless);
    # the centred-block path keeps it to the rounding of the input itself (eps * 1e7 ~ 2e-9).
    assert_allclose(_align(ours, ref), ref, atol=1e-6)


def test_basis_and_scores_are_shared_through_the_workspace():
    rng = np.random.default_rng(12)
    ws = Workspace(_anisotropic(rng, 250, [3.0, 2.0, 1.0, 0.5]))
    table = compute_lenses(ws, [("pca", {"components": 3})])
    # `components` is not tagged: pca_j does not depend on how many coordinates are asked for.
    names = [f"pca_{j}" for j in (1, 2, 3)]
    assert table.names == names
    scores = _pca_scores(ws, 3)
    assert scores is _pca_scores(ws, 3)  # cached, not recomputed
    for j in range(3):
        assert np.array_equal(table[names[j]].values, scores[j])
    # The covariance basis is computed once; any m is a slice of it.
    b2, b3 = _pca_basis(ws, 2), _pca_basis(ws, 3)
    assert np.array_equal(b2.components, b3.components[:2])
    assert b2.mean is b3.mean
    # Loadings are recorded by feature name, one axis per column.
    loadings = table[names[0]].info["loadings"]
    assert list(loadings) == ["x0", "x1", "x2", "x3"]
    assert_allclose(list(loadings.values()), b3.components[0], rtol=0, atol=0)
    with pytest.raises(ValueError, match="read-only"):
        scores[0, 0] = 1.0  # shared with every reader: protected


def test_transformer_is_a_proper_sklearn_estimator():
    lens = PCALens(components=3, solver="covariance", random_state=2)
    assert lens.get_params() == {"components": 3, "solver": "covariance", "random_state": 2}
    assert clone(lens).get_params() == lens.get_params()
    with pytest.raises(NotFittedError, match="fit"):
        lens.transform(np.zeros((3, 4)))
    rng = np.random.default_rng(5)
    X = _anisotropic(rng, 100, [3.0, 2.0, 1.0, 0.5])
    assert_allclose(lens.fit_transform(X), lens.fit(X).transform(X), atol=1e-12)
    msg = "X has 3 features, but PCALens is expecting 4 .* columns PCALens was fitted on"
    with pytest.raises(InputError, match=msg):
        lens.transform(np.zeros((2, 3)))


def test_bad_parameters_and_data():
    rng = np.random.default_rng(3)
    X = rng.normal(size=(50, 4))
    with pytest.raises(ParameterError, match=r"'components' parameter of pca must be an int in "
                                             r"\[1, 4\]"):
        get_lens("pca")(Workspace(X), components=5)
    with pytest.raises(ParameterError, match=r"'components' parameter of pca must be an int"):
        get_lens("pca")(Workspace(X), components="two")
    with pytest.raises(ParameterError, match=r"'solver' parameter of pca_coordinates must be a "
                                             r"str among"):
        pca_coordinates(X, solver="svd")
    bad = X.copy()
    bad[2, 1] = np.nan
    with pytest.raises(InputError, match=r"non-finite value \(nan\) in row 3, column 2"):
        pca_coordinates(bad)
    with pytest.raises(InputError, match="at least 2 rows"):
        pca_coordinates(X[:1], components=1)
    with pytest.raises(InputError, match="could not convert string to float.*numeric columns"):
        PCALens().fit([["a", "b"], ["c", "d"]])


def test_constant_data_warns_and_gives_zeros():
    X = np.full((20, 3), 2.5)
    with pytest.warns(LensworkWarning, match="constant"):
        lens = PCALens(components=2).fit(X)
    assert np.array_equal(lens.transform(X), np.zeros((20, 2)))
    assert np.array_equal(lens.explained_variance_ratio_, np.zeros(2))
