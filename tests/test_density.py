"""Gaussian kernel density: bandwidth rules, exact and scalable modes, lens entry."""

import math
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.special import logsumexp
from scipy.stats import gaussian_kde, multivariate_normal

from lenswork import (
    GaussianDensity,
    InputError,
    LensworkWarning,
    ParameterError,
    Workspace,
    gaussian_density,
    get_lens,
    scott_bandwidth,
    silverman_bandwidth,
)
from lenswork.lenses._density import CV_GRID


def _brute_log_kde(Q, X, H):
    """log (1/n) sum_i N(q - x_i; 0, H), one scipy multivariate_normal per reference point."""
    logs = np.array([multivariate_normal(mean=x, cov=H).logpdf(Q) for x in X]).reshape(len(X), -1)
    return logsumexp(logs, axis=0) - math.log(len(X))


@pytest.mark.parametrize("d", [1, 5])
def test_exact_density_equals_scipy_gaussian_kde(d):
    rng = np.random.default_rng(20240601 + d)
    X = rng.normal(size=(700, d)) @ rng.normal(size=(d, d)) + 3.0
    # scipy.stats.gaussian_kde as reference (same Scott bandwidth, full covariance);
    # rtol 1e-10: both are float64 sums of the same terms, rounding differs at ~1e-14
    ref = gaussian_kde(X.T)
    assert_allclose(gaussian_density(X, mode="exact", log=False), ref(X.T), rtol=1e-10)
    assert_allclose(gaussian_density(X, mode="exact"), ref.logpdf(X.T), rtol=1e-10)


def test_log_density_is_finite_far_out():
    rng = np.random.default_rng(7)
    X = rng.normal(size=(400, 3))
    est = GaussianDensity(mode="exact").fit(X)
    far = np.array([[60.0, -40.0, 80.0], [0.0, 0.0, 0.0]])
    got = est.transform(far)[:, 0]
    # scipy.stats.gaussian_kde.logpdf as reference (it also shifts before exponentiating);
    # the far point's density underflows in float64, its log must not be -inf
    assert np.all(np.isfinite(got))
    assert_allclose(got, gaussian_kde(X.T).logpdf(far.T), rtol=1e-10)


def test_silverman_rule_of_thumb_worked_example():
    # Silverman 1986, eq. 3.31 (rule of thumb 0.9 min(sd, IQR/1.349) n^-1/5), numpy
    # percentiles: sd = 5.36656 (ddof=1), IQR = 4 - (-5) = 9; value worked by hand and in the task
    H = silverman_bandwidth(np.array([-7.0, -5.0, 1.0, 4.0, 5.0]))
    # rtol 2e-7: the reference is given to 7 significant digits
    assert_allclose(math.sqrt(H[0, 0]), 3.500618, rtol=2e-7)


def test_silverman_multivariate_is_per_feature_normal_reference():
    rng = np.random.default_rng(11)
    X = rng.standard_t(df=4, size=(500, 3)) * np.array([1.0, 3.0, 0.5])
    n, d = X.shape
    H = silverman_bandwidth(X)
    # Silverman 1986, eq. 4.14, with the robust scale min(sd, IQR/1.349) per feature
    s = np.array([
        min(np.std(c, ddof=1), (np.percentile(c, 75) - np.percentile(c, 25)) / 1.349) for c in X.T
    ])
    h = (4 / (d + 2)) ** (1 / (d + 4)) * n ** (-1 / (d + 4)) * s
    assert_allclose(H, np.diag(h**2), rtol=1e-12)  # same formula, float64 rounding only


def test_scott_bandwidth_equals_scipy_covariance():
    rng = np.random.default_rng(12)
    X = rng.normal(size=(300, 4)) @ rng.normal(size=(4, 4))
    # scipy.stats.gaussian_kde.covariance as reference (Scott factor, ddof=1 covariance)
    assert_allclose(scott_bandwidth(X), gaussian_kde(X.T).covariance, rtol=1e-12)


@pytest.mark.parametrize("bandwidth", [0.4, "silverman"])
def test_other_bandwidths_against_brute_force(bandwidth):
    rng = np.random.default_rng(13)
    X = rng.normal(size=(150, 2)) * np.array([1.0, 2.0])
    H = np.eye(2) * 0.4**2 if bandwidth == 0.4 else silverman_bandwidth(X)
    # brute force: scipy.stats.multivariate_normal per reference point; rtol 1e-10 (float64)
    assert_allclose(gaussian_density(X, bandwidth=bandwidth), _brute_log_kde(X, X, H), rtol=1e-10)


def test_cv_bandwidth_maximises_leave_one_out_likelihood():
    rng = np.random.default_rng(14)
    X = np.r_[rng.normal(size=(120, 2)) * 0.3, rng.normal(size=(80, 2)) * 0.3 + 3.0]
    n, d = X.shape
    _, info = gaussian_density(X, bandwidth="cv", return_info=True)
    # brute-force leave-one-out log-likelihood (Silverman 1986, sec. 3.4.4, from memory) over
    # the same multipliers of Scott's covariance, with scipy.stats.multivariate_normal kernels
    base = np.cov(X.T) * n ** (-2 / (d + 4))
    scores = []
    for c in CV_GRID:
        total = 0.0
        for i in range(n):
            logk = multivariate_normal(mean=X[i], cov=base * c**2).logpdf(np.delete(X, i, 0))
            total += logsumexp(logk) - math.log(n - 1)
        scores.append(total)
    best = CV_GRID[int(np.argmax(scores))]
    assert info["cv_multiplier"] == pytest.approx(best, rel=1e-12)  # the same grid point
    assert info["bandwidth_factor"] == pytest.approx(best * n ** (-1 / (d + 4)), rel=1e-12)


def test_float32_close_to_float64():
    rng = np.random.default_rng(15)
    X = rng.normal(size=(2000, 8))
    f64 = gaussian_density(X, mode="exact", log=False)
    f32 = gaussian_density(X, mode="exact", precision="float32", log=False)
    # scipy.stats.gaussian_kde as reference; rtol 1e-4: float32 tiles with float64 sums
    # lose ~1e-5 relative (squared distances of ~100 in whitened units)
    assert_allclose(f32, gaussian_kde(X.T)(X.T), rtol=1e-4)
    assert_allclose(f64, gaussian_kde(X.T)(X.T), rtol=1e-10)


def test_scalable_error_estimate_holds_against_exact():
    rng = np.random.default_rng(16)
    X = np.r_[rng.normal(size=(14000, 2)), rng.normal(size=(6000, 2)) * 0.3 + 2.5]
    est, info = gaussian_density(
        X, mode="scalable", reference_size=2000, random_state=3, return_info=True
    )
    check = rng.choice(len(X), size=800, replace=False)
    # scipy.stats.gaussian_kde on all 20,000 points as the exact reference, at 800 points
    exact = gaussian_kde(X.T).logpdf(X[check].T)
    rel_err = np.abs(np.expm1(est[check] - exact))
    rel_se = info["rel_se"][check]
    assert info["mode"] == "scalable" and info["reference_size"] == 2000
    # normal approximation of a mean of 2,000 terms: |error| <= 3 se for ~99.7% of the
    # points; allow 97% (sampling of the checked points, a mildly skewed kernel sample)
    assert np.mean(rel_err <= 3 * rel_se) >= 0.97
    # the reported median se is the right size (not inflated): within a factor 3
    assert np.median(rel_err) <= 3 * np.median(rel_se) and np.median(rel_se) <= 3 * np.median(
        rel_err
    )
    assert info["rel_se_median"] == pytest.approx(np.median(info["rel_se"]))


def test_scalable_mode_is_permutation_equivariant_and_seeded():
    rng = np.random.default_rng(17)
    X = rng.normal(size=(3000, 3))
    perm = rng.permutation(len(X))
    a = gaussian_density(X, mode="scalable", reference_size=500, random_state=5)
    b = gaussian_density(X[perm], mode="scalable", reference_size=500, random_state=5)
    # the subsample is chosen from row content, so the rows' order cannot matter (common
    # practice for lens contracts); rtol 1e-12: only the summation order may differ
    assert_allclose(b, a[perm], rtol=1e-12)
    c = gaussian_density(X, mode="scalable", reference_size=500, random_state=6)
    assert not np.allclose(a, c, rtol=1e-12)


def test_transformer_new_points_equal_scipy():
    rng = np.random.default_rng(18)
    X = rng.normal(size=(500, 3))
    Y = rng.normal(size=(40, 3)) * 2
    est = GaussianDensity(log=False).fit(X)
    # scipy.stats.gaussian_kde evaluated at new points; rtol 1e-10 (float64)
    assert_allclose(est.transform(Y)[:, 0], gaussian_kde(X.T)(Y.T), rtol=1e-10)
    assert_allclose(est.covariance_, gaussian_kde(X.T).covariance, rtol=1e-12)
    from sklearn.base import clone

    assert clone(est).get_params()["log"] is False
    with pytest.raises(InputError, match="X has 2 features, but GaussianDensity is expecting 3"):
        est.transform(Y[:, :2])


def test_lens_entry_matches_function_and_records_info():
    rng = np.random.default_rng(19)
    X = rng.normal(size=(600, 4))
    (col,) = get_lens("density")(Workspace(X))
    assert col.name == "density"
    # scipy.stats.gaussian_kde as reference; rtol 1e-10 (float64)
    assert_allclose(col.values, gaussian_kde(X.T).logpdf(X.T), rtol=1e-10)
    assert col.info["mode"] == "exact" and col.info["bandwidth_rule"] == "scott"
    assert len(col.info["kernel_sd"]) == 4
    (col2,) = get_lens("density")(Workspace(X), bandwidth="0.5", log="false", precision="float32")
    assert col2.name.startswith("density[") and col2.info["bandwidth_h"] == 0.5


def test_bad_parameters_and_inputs_raise_clear_errors():
    rng = np.random.default_rng(20)
    X = rng.normal(size=(50, 2))
    with pytest.raises(ParameterError, match="'bandwidth' parameter of gaussian_density"):
        gaussian_density(X, bandwidth=-1.0)
    with pytest.raises(ParameterError, match="'bandwidth' parameter of density"):
        get_lens("density")(Workspace(X), bandwidth="wide")
    with pytest.raises(ParameterError, match="'mode' parameter"):
        gaussian_density(X, mode="fast")
    with pytest.raises(ParameterError, match="'precision' parameter"):
        gaussian_density(X, precision="float16")
    bad = X.copy()
    bad[3, 1] = np.nan
    with pytest.raises(InputError, match="row 4, column 2"):
        gaussian_density(bad)
    const = np.c_[X[:, 0], np.ones(50)]
    with pytest.raises(InputError, match="singular"):
        gaussian_density(const)
    # an isotropic numeric bandwidth works on the same data (no covariance needed)
    assert np.all(np.isfinite(gaussian_density(const, bandwidth=0.5)))


def test_cv_warns_at_grid_edge():
    rng = np.random.default_rng(21)
    # two tight, far-apart blobs of 2 distinct values each: the LOO likelihood wants the
    # narrowest kernel of the grid
    X = np.repeat(np.array([[0.0], [1e-3], [100.0], [100.001]]), 5, axis=0)
    X = X + rng.normal(scale=1e-9, size=X.shape)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        _, info = gaussian_density(X, bandwidth="cv", return_info=True)
    assert info.get("cv_at_grid_edge") is True
    assert any(
        issubclass(w.category, LensworkWarning) and "edge of the grid" in str(w.message)
        for w in caught
    )


def test_scalable_standard_error_is_near_nominal_both_ways():
    # Over 40 independent reference samples of m = n/2 rows, z = (estimate - exact) / stated se
    # should be about N(0, 1) in the body (central limit theorem; finite-population correction,
    # Cochran 1977, eq. 2.12): median |z| 0.674 and 95 % within 1.96. The far tails are known
    # to be off (README: about 1 % of rows beyond 4 se), so the checks are on quantiles. A
    # doubled se (median 0.36) or one without the correction (0.51) fails, as a too small one.
    rng = np.random.default_rng(3)
    X = rng.normal(size=(1000, 2))
    exact = gaussian_density(X, log=False, mode="exact")  # checked against scipy above
    z = []
    for seed in range(40):
        v, info = gaussian_density(X, log=False, mode="scalable", reference_size=500,
                                   random_state=seed, return_info=True)
        z.append((v - exact) / (info["rel_se"] * v))
    z = np.abs(np.concatenate(z))
    assert 0.58 <= np.median(z) <= 0.85  # measured 0.72
    assert 0.88 <= np.mean(z <= 1.96) <= 0.98  # measured 0.92
