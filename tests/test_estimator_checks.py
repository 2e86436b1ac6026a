"""The lens transformers against scikit-learn's own estimator contract.

``parametrize_with_checks`` runs scikit-learn's estimator checks (the API
contract of a transformer: cloning, fitted attributes, input validation
messages, pickling, sample-order invariance, fit_transform against
fit().transform()...) on one instance of every lens transformer. No check is
expected to fail. The instances use small settings (k = 2 or 3) because the
checks fit on 20-30 rows.

The pipeline tests check the values against outside references:
scikit-learn's PCA, scipy's gaussian_kde and a brute-force eccentricity.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.spatial.distance import cdist
from scipy.stats import gaussian_kde
from sklearn.compose import ColumnTransformer
from sklearn.decomposition import PCA
from sklearn.neighbors import NearestNeighbors
from sklearn.pipeline import Pipeline, make_pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.utils.estimator_checks import parametrize_with_checks

from lenswork import (
    DistanceToMeasure,
    Eccentricity,
    GaussianDensity,
    InputError,
    KNNDistance,
    LaplacianLens,
    PCALens,
)

pd = pytest.importorskip("pandas")

ESTIMATORS = [
    GaussianDensity(),
    Eccentricity(),  # p = 2: the closed form
    Eccentricity(p=1.0),  # the chunked exact sums
    LaplacianLens(components=1, k=3),
    PCALens(components=1),  # the checks fit data with a single feature too
    DistanceToMeasure(mass=0.1, max_k=5),  # k = 2..5 on the checks' 20-150 rows
    KNNDistance(k=2),
]


# The checks fit on 10-150 rows of blobs: the DTM cap on k and disconnected k-NN graphs
# (two blobs) give soft LensworkWarnings there, which are the documented behaviour.
@pytest.mark.filterwarnings("ignore::lenswork.LensworkWarning")
@parametrize_with_checks(ESTIMATORS)
def test_sklearn_estimator_checks(estimator, check):
    check(estimator)


@pytest.mark.parametrize(
    ("estimator", "names"),
    [
        (GaussianDensity(), ["density"]),
        (Eccentricity(), ["eccentricity"]),
        (LaplacianLens(components=2, k=5), ["laplacian_1", "laplacian_2"]),
        (PCALens(components=2), ["pca_1", "pca_2"]),
        (DistanceToMeasure(mass=0.1), ["dtm"]),
        (KNNDistance(k=3), ["knn_distance"]),
    ],
)
def test_pandas_output_has_the_lens_column_names(estimator, names):
    rng = np.random.default_rng(3301)
    frame = pd.DataFrame(rng.normal(size=(60, 3)), columns=["a", "b", "c"])
    out = estimator.set_output(transform="pandas").fit_transform(frame)
    assert isinstance(out, pd.DataFrame)
    assert list(out.columns) == names  # the names the registry's lenses give (common practice)
    assert list(out.index) == list(frame.index)
    assert list(estimator.feature_names_in_) == ["a", "b", "c"]
    assert list(estimator.get_feature_names_out()) == names
    with pytest.raises(InputError, match="input_features should have length equal"):
        estimator.get_feature_names_out(["a", "b"])


def test_pipeline_with_pandas_output_equals_sklearn_pca():
    rng = np.random.default_rng(3302)
    X = rng.normal(size=(200, 4)) * [5.0, 2.0, 1.0, 0.5]
    frame = pd.DataFrame(X, columns=["w", "x", "y", "z"])
    pipe = make_pipeline(StandardScaler(), PCALens(components=2)).set_output(transform="pandas")
    out = pipe.fit_transform(frame)
    assert list(out.columns) == ["pca_1", "pca_2"]
    # Reference: scikit-learn's PCA on the same scaled data, equal up to the sign of
    # each axis (eigenvectors are defined up to sign); rtol 1e-8 for two float64 solvers.
    ref = PCA(n_components=2).fit_transform(StandardScaler().fit_transform(X))
    got = out.to_numpy()
    signs = np.sign(np.sum(got * ref, axis=0))
    assert_allclose(got, ref * signs, rtol=1e-8, atol=1e-10)
    # New rows through the fitted pipeline keep the names.
    new = pipe.transform(frame.iloc[:5])
    assert list(new.columns) == ["pca_1", "pca_2"] and new.shape == (5, 2)


def test_column_transformer_with_pandas_output():
    rng = np.random.default_rng(3303)
    X = rng.normal(size=(150, 4))
    frame = pd.DataFrame(X, columns=["p", "q", "r", "s"])
    ct = ColumnTransformer(
        [
            ("dens", GaussianDensity(), ["p", "q"]),
            ("ecc", Eccentricity(), ["p", "q", "r", "s"]),
            ("knn", KNNDistance(k=4), ["r", "s"]),
            ("pca", PCALens(components=2), ["p", "q", "r"]),
            ("lap", LaplacianLens(components=2, k=8), ["p", "q", "r"]),
        ]
    ).set_output(transform="pandas")
    out = ct.fit_transform(frame)
    assert list(out.columns) == [
        "dens__density", "ecc__eccentricity", "knn__knn_distance", "pca__pca_1", "pca__pca_2",
        "lap__laplacian_1", "lap__laplacian_2",
    ]
    # fit_transform of the whole and transform of the fitted rows agree (every lens maps
    # its own fitted rows to their fit_transform values).
    assert_allclose(ct.transform(frame).to_numpy(), out.to_numpy(), rtol=1e-12)
    # scipy.stats.gaussian_kde (Scott's rule, full covariance) as reference; rtol 1e-10.
    assert_allclose(out["dens__density"], gaussian_kde(X[:, :2].T).logpdf(X[:, :2].T), rtol=1e-10)
    # Eccentricity E_2(x) = sqrt(mean_y ||x - y||^2), brute force with scipy's cdist.
    ref = np.sqrt(np.mean(cdist(X, X, "sqeuclidean"), axis=1))
    assert_allclose(out["ecc__eccentricity"], ref, rtol=1e-10)
    # k-th nearest other row: scikit-learn kneighbors() with no query excludes each row itself.
    ref = NearestNeighbors(n_neighbors=4).fit(X[:, 2:]).kneighbors()[0][:, 3]
    assert_allclose(out["knn__knn_distance"], ref, rtol=1e-12)
    # transform on other rows: columns and shape kept, new points' values as references say.
    Q = pd.DataFrame(rng.normal(size=(7, 4)), columns=frame.columns)
    ct2 = ColumnTransformer([("knn", KNNDistance(k=4), ["r", "s"])]).set_output(
        transform="pandas"
    )
    got = ct2.fit(frame).transform(Q)
    ref = NearestNeighbors(n_neighbors=4).fit(X[:, 2:]).kneighbors(Q[["r", "s"]].to_numpy())
    assert_allclose(got["knn__knn_distance"], ref[0][:, 3], rtol=1e-12)


def test_laplacian_lens_in_a_pipeline():
    # fit_transform through the Pipeline gives the same as the function on the scaled data.
    rng = np.random.default_rng(3305)
    t = rng.uniform(0.0, 3.0, 300)
    frame = pd.DataFrame(np.c_[t, np.sin(2 * t), 0.01 * rng.normal(size=300)], columns=list("abc"))
    pipe = make_pipeline(StandardScaler(), LaplacianLens(components=2, k=10))
    out = pipe.set_output(transform="pandas").fit_transform(frame)
    assert list(out.columns) == ["laplacian_1", "laplacian_2"]
    from lenswork import laplacian_eigenmaps

    ref = laplacian_eigenmaps(StandardScaler().fit_transform(frame), 2, k=10)
    assert np.array_equal(out.to_numpy(), ref)
    # The first vector orders the points along the curve (Belkin and Niyogi 2003: the
    # first non-trivial eigenvector of a path-like graph is monotone along it; the ends of
    # a sampled curve bend it a little, hence 0.95 rather than 1).
    rho = pd.Series(out["laplacian_1"]).corr(pd.Series(t), method="spearman")
    assert abs(rho) > 0.95
    # New rows (Nystrom extension) keep the names, and a point 1e-3 away from a fitted row
    # gets nearly that row's coordinates (the extension is a weighted mean over the
    # neighbours, smooth along the curve; 0.05 is about the change over 10 neighbours).
    new = pipe.transform(frame.iloc[:5] + 1e-3)
    assert list(new.columns) == ["laplacian_1", "laplacian_2"]
    assert_allclose(new["laplacian_1"], out["laplacian_1"].iloc[:5], atol=0.05)


def test_pipeline_refuses_wrong_columns_with_a_clear_error():
    rng = np.random.default_rng(3304)
    pipe = Pipeline([("lens", GaussianDensity())]).fit(rng.normal(size=(50, 3)))
    with pytest.raises(InputError, match="X has 2 features, but GaussianDensity is expecting 3"):
        pipe.transform(rng.normal(size=(5, 2)))
    bad = rng.normal(size=(50, 3))
    bad[2, 1] = np.nan
    with pytest.raises(InputError, match=r"non-finite value \(nan\) in row 3, column 2 \('b'\)"):
        GaussianDensity().fit(pd.DataFrame(bad, columns=["a", "b", "c"]))
    with pytest.raises(InputError, match="n_samples=3 rows; it needs at least 6"):
        KNNDistance(k=5).fit(bad[3:6])


def test_every_public_transformer_is_checked():
    # A new transformer exported by lenswork must join ESTIMATORS (common practice:
    # the contract test covers the whole public surface).
    from sklearn.base import TransformerMixin

    import lenswork

    public = {
        obj for name in lenswork.__all__
        if isinstance(obj := getattr(lenswork, name), type) and issubclass(obj, TransformerMixin)
    }
    assert public == {type(e) for e in ESTIMATORS}


def test_feature_union_remainder_and_grid_search_over_a_lens_parameter():
    # scikit-learn's composition tools as the reference: FeatureUnion prefixes the lens
    # names with the step names, ColumnTransformer passes the remainder through untouched,
    # and GridSearchCV can tune a lens parameter through the step path.
    from sklearn.linear_model import LinearRegression
    from sklearn.model_selection import GridSearchCV
    from sklearn.pipeline import make_union

    rng = np.random.default_rng(3306)
    X = rng.normal(size=(120, 3)) * [3.0, 1.0, 0.3]
    frame = pd.DataFrame(X, columns=["a", "b", "c"])
    union = make_union(Eccentricity(), KNNDistance(k=3)).set_output(transform="pandas")
    out = union.fit_transform(frame)
    assert list(out.columns) == ["eccentricity__eccentricity", "knndistance__knn_distance"]
    ref = NearestNeighbors(n_neighbors=3).fit(X).kneighbors()[0][:, 2]
    assert_allclose(out["knndistance__knn_distance"], ref, rtol=1e-12)
    ct = ColumnTransformer([("dens", GaussianDensity(), ["a", "b"])], remainder="passthrough",
                           verbose_feature_names_out=False).set_output(transform="pandas")
    out = ct.fit_transform(frame)
    assert list(out.columns) == ["density", "c"] and out["c"].tolist() == frame["c"].tolist()
    # y is linear in X; PCA with all 3 components is an invertible linear map of the
    # centred data, so a linear model on it fits exactly (R^2 = 1) and 1 or 2 components
    # cannot (the dropped directions carry part of y): the search must pick 3.
    y = frame["a"] - 2.0 * frame["c"]
    pipe = make_pipeline(ColumnTransformer([("pca", PCALens(components=1), ["a", "b", "c"])]),
                         LinearRegression())
    search = GridSearchCV(pipe, {"columntransformer__pca__components": [1, 2, 3]}, cv=3)
    search.fit(frame, y)
    assert search.best_params_ == {"columntransformer__pca__components": 3}
    assert search.best_score_ == pytest.approx(1.0, abs=1e-10)
    assert max(search.cv_results_["mean_test_score"][:2]) < 0.99
