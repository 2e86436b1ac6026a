"""Lens criteria: the Laplacian score (He, Cai and Niyogi, NIPS 2005) and the robust spread."""

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.stats import rankdata

from lenswork import ParameterError, Workspace
from lenswork.criteria import (
    heat_kernel_affinity,
    laplacian_score,
    robust_spread,
    smoothness,
)


def _dense_score(f, S):
    """He, Cai and Niyogi 2005, eqs. 1-4, written directly with dense numpy matrices."""
    S = np.asarray(S.todense() if sp.issparse(S) else S, dtype=np.float64)
    D = np.diag(S.sum(axis=1))
    L = D - S
    one = np.ones(f.size)
    ft = f - (f @ D @ one) / (one @ D @ one) * one
    return (ft @ L @ ft) / (ft @ D @ ft)


def test_affinity_is_the_heat_kernel_on_knn_pairs():
    # He et al. 2005, step 2: S_ij = exp(-||x_i - x_j||^2 / t) when i, j are neighbours.
    rng = np.random.default_rng(41)
    X = rng.normal(size=(60, 3))
    S = heat_kernel_affinity(X, k=4, width=2.0)
    from sklearn.neighbors import NearestNeighbors

    ind = NearestNeighbors(n_neighbors=5).fit(X).kneighbors(X, return_distance=False)[:, 1:]
    A = np.zeros((60, 60), bool)
    for i in range(60):
        A[i, ind[i]] = True
    A |= A.T
    D2 = ((X[:, None, :] - X[None, :, :]) ** 2).sum(-1)
    np.testing.assert_allclose(S.toarray(), np.where(A, np.exp(-D2 / 2.0), 0.0), rtol=1e-12)


@pytest.mark.parametrize("scale", ["raw", "rank"])
def test_score_matches_the_dense_formula(scale):
    rng = np.random.default_rng(42)
    X = rng.normal(size=(120, 4))
    S = heat_kernel_affinity(Workspace(X), k=8)
    F = np.c_[X[:, 0], X[:, 0] ** 3, rng.normal(size=120)]
    got = laplacian_score(F, S, scale=scale)
    ref = [_dense_score((rankdata(F[:, j]) - 0.5) / 120 if scale == "rank" else F[:, j], S)
           for j in range(3)]
    np.testing.assert_allclose(got, ref, rtol=1e-10)  # same formula, rounding only


def test_constant_on_components_scores_zero():
    # Closed form: if f is constant on each connected component of S, every term
    # S_ij (f_i - f_j)^2 vanishes, so f~^T L f~ = 0 (He et al. 2005, eq. 4).
    rng = np.random.default_rng(43)
    X = np.r_[rng.normal(0, 0.1, (50, 2)), rng.normal(10, 0.1, (50, 2))]
    S = heat_kernel_affinity(X, k=5)
    f = np.r_[np.zeros(50), np.ones(50)]
    assert laplacian_score(f, S, scale="raw") == pytest.approx(0.0, abs=1e-12)
    # the trivial constant: f~ = 0, the score is undefined
    assert np.isnan(laplacian_score(np.ones(100), S))


def test_noise_scores_near_one_and_smooth_near_zero():
    # Expectation of numerator and denominator agree for independent values (module notes):
    # L_r of noise concentrates near 1; a coordinate along a line scores near 0.
    rng = np.random.default_rng(44)
    t = rng.uniform(0, 1, 1500)
    X = np.c_[t, 0.01 * rng.normal(size=1500)]
    S = heat_kernel_affinity(X, k=10)
    smooth, noise = laplacian_score(np.c_[t, rng.normal(size=1500)], S)
    assert smooth < 0.01
    assert 0.9 < noise < 1.1
    assert smoothness(np.array([smooth, noise]))[1] < 0.1


def test_rank_scale_is_monotone_invariant():
    rng = np.random.default_rng(45)
    X = rng.normal(size=(200, 3))
    S = heat_kernel_affinity(X, k=10)
    a, b = laplacian_score(np.c_[X[:, 1], np.exp(3 * X[:, 1])], S)
    assert a == pytest.approx(b, rel=1e-12)


def test_robust_spread_keeps_groups_and_punishes_few_rows():
    rng = np.random.default_rng(46)
    n = 3000
    uniform = robust_spread(rng.uniform(size=n)).robust_spread
    bimodal = robust_spread(np.r_[rng.normal(0, 1, n // 2), rng.normal(8, 1, n // 2)])
    three = robust_spread(np.r_[rng.normal(0, .3, n // 3), rng.normal(3, .3, n // 3),
                                rng.normal(6, .3, n // 3)])
    outlier = robust_spread(np.r_[rng.normal(size=n - 1), 1000.0])
    ties = robust_spread(np.r_[np.zeros(9 * n // 10), rng.uniform(size=n // 10)])
    # uniform: the top 1 % of (v - median)^2 on U(0,1) carries about 3 % of the sum (closed form:
    # int_{0.495}^{0.5} 2 x^2 dx / int_0^{0.5} 2 x^2 dx = 1 - 0.99^3 = 0.0297)
    assert uniform == pytest.approx(1 - (1 - 0.99 ** 3), abs=0.01)
    assert bimodal.robust_spread >= uniform - 0.01
    assert three.robust_spread >= uniform - 0.01
    assert outlier.robust_spread < 0.05 and outlier.tail_share > 0.95
    assert ties.largest_tie == pytest.approx(0.9) and ties.robust_spread < 0.1


def test_robust_spread_is_affine_invariant():
    rng = np.random.default_rng(47)
    v = rng.gamma(2.0, size=500)
    a, b = robust_spread(v), robust_spread(-3.0 * v + 7.0)
    assert a.robust_spread == pytest.approx(b.robust_spread, rel=1e-9)


def test_errors():
    S = sp.identity(3, format="csr") * 0
    with pytest.raises(ParameterError, match="expected \\(4, 4\\)"):
        laplacian_score(np.arange(4.0), S)
    with pytest.raises(ParameterError, match="not symmetric"):
        laplacian_score(np.arange(3.0), sp.csr_matrix(np.triu(np.ones((3, 3)), 1)))
    with pytest.raises(ParameterError, match="NaN or infinite values in column 0"):
        laplacian_score(np.array([0.0, np.nan, 1.0]), S)
    with pytest.raises(ParameterError, match="value at row 2"):
        robust_spread([1.0, np.inf, 2.0])
    with pytest.raises(ParameterError, match="at least 2 values"):
        robust_spread([1.0])


def _rnx_brute(F, ind, k):
    """Q_NX(k) from explicit neighbour sets (Lee and Verleysen 2009, eq. 9), rescaled to R_NX."""
    from sklearn.neighbors import NearestNeighbors

    n = F.shape[0]
    U = np.column_stack([(rankdata(F[:, j]) - 0.5) / n for j in range(F.shape[1])])
    lens_nb = NearestNeighbors(n_neighbors=k + 1).fit(U).kneighbors(U, return_distance=False)
    q = np.mean([len(set(lens_nb[i][lens_nb[i] != i][:k]) & set(ind[i, :k])) / k
                 for i in range(n)])
    return ((n - 1) * q - k) / (n - 1 - k)


def test_neighbour_preservation_matches_explicit_sets():
    from lenswork.criteria import neighbour_preservation

    rng = np.random.default_rng(48)
    X = rng.normal(size=(300, 3))
    nb = Workspace(X).neighbors(12)
    F = X[:, :2] + 0.3 * rng.normal(size=(300, 2))
    # ranks sit on a lattice, so distances tie; scikit-learn and scipy's k-d tree break ties
    # differently, which moves a few neighbours at the k-th place: 0.005 allows for that
    assert neighbour_preservation(F, nb, scale="k") == pytest.approx(
        _rnx_brute(F, nb.indices, 12), abs=0.005)
    # log-scale area: sum_k R_NX(k) / k over sum_k 1 / k (Lee, Peluffo-Ordonez and Verleysen 2015)
    ks = np.arange(1, 13)
    auc = sum(_rnx_brute(F, nb.indices, k) / k for k in ks) / (1.0 / ks).sum()
    assert neighbour_preservation(F, nb) == pytest.approx(auc, abs=0.005)
    # random lens space: R_NX is 0 in expectation (the rescaling's purpose)
    assert abs(neighbour_preservation(rng.normal(size=(300, 2)), nb)) < 0.05


def test_proposed_merit_vanishes_with_any_score():
    from lenswork.criteria import proposed_merit

    m = proposed_merit([0.9, 0.9, 0.0], [0.8, 0.0, 0.8], [0.5, 0.5, 0.5])
    assert m[0] == pytest.approx((0.9 * 0.8 * 0.5) ** (1 / 3)) and m[1] == 0 and m[2] == 0


def test_neighbour_jitter_is_the_laplacian_score_in_cover_units():
    # He et al. 2005: f~^T L f~ = 1/2 sum_ij S_ij (f_i - f_j)^2, so
    # delta^2 = sum_ij S_ij (u_i - u_j)^2 / sum_ij S_ij = 2 L_r (f~^T D f~) / (1^T D 1)
    from lenswork.criteria import neighbour_jitter

    rng = np.random.default_rng(49)
    X = rng.normal(size=(150, 3))
    S = heat_kernel_affinity(X, k=10)
    f = X[:, 0] + 0.2 * rng.normal(size=150)
    Sd = S.toarray()
    d = Sd.sum(axis=1)
    ft = f - (f @ d) / d.sum()
    lr = laplacian_score(f, S, scale="raw")
    expected = np.sqrt(2 * lr * (ft @ (d * ft)) / d.sum()) / np.ptp(f)
    assert neighbour_jitter(f, S, scale="raw") == pytest.approx(expected, rel=1e-10)
    assert neighbour_jitter(np.ones(150), S) == 0.0


def test_robust_spread_matches_a_brute_force_tail_share():
    # the definition written directly: numpy's median, a full sort of (v - median)^2, the
    # largest ceil(n / 100) of them over the total; ties by collections.Counter
    from collections import Counter

    rng = np.random.default_rng(48)
    for v in (rng.normal(size=1001), rng.integers(0, 7, 640).astype(float),
              np.r_[rng.exponential(size=499), 50.0], rng.uniform(size=2)):
        dev = np.sort((v - np.median(v)) ** 2)
        top = int(np.ceil(v.size / 100))
        share = dev[-top:].sum() / dev.sum()
        most = max(Counter(v.tolist()).values())
        tie = most / v.size if most > 1 else 0.0
        got = robust_spread(v)
        assert got.tail_share == pytest.approx(share, rel=1e-12)
        assert got.largest_tie == tie
        assert got.robust_spread == pytest.approx((1 - tie) * (1 - share), rel=1e-12)


def test_batch_criteria_match_the_dense_formula():
    # unit_rank_criteria on centred rank rows = He et al. 2005 eq. 4 on the ranks (the score
    # is invariant under f -> a f + b), and delta^2 = 2 f~^T L f~ / 1^T S 1 / range^2
    from lenswork.criteria import neighbour_jitter, unit_rank_criteria

    rng = np.random.default_rng(49)
    X = rng.normal(size=(150, 3))
    S = heat_kernel_affinity(Workspace(X), k=6)
    F = np.c_[X[:, 0], np.exp(X[:, 1]), rng.normal(size=150)]
    R = np.array([rankdata(F[:, j]) for j in range(3)])
    Z = (R - R.mean(axis=1, keepdims=True)) / 17.0
    Z = np.r_[Z, np.full((1, 150), np.nan)]
    Lr, delta = unit_rank_criteria(Z, S)
    ref = [_dense_score((rankdata(F[:, j]) - 0.5) / 150, S) for j in range(3)]
    np.testing.assert_allclose(Lr[:3], ref, rtol=1e-10)
    np.testing.assert_allclose(delta[:3], [neighbour_jitter(F[:, j], S) for j in range(3)],
                               rtol=1e-10)
    assert np.isnan(Lr[3]) and np.isnan(delta[3])


def test_chance_bound_is_two_sigma_or_bonferroni():
    # Bonferroni: m one-sided tests at family-wise level 0.05 each use 0.05 / m; the normal
    # quantile is scipy's (Abramowitz and Stegun 1964, table 26.1: Phi(2.73) = 0.99683).
    from scipy.stats import norm

    from lenswork.criteria import chance_bound

    assert chance_bound(1) == 2.0 and chance_bound(2) == 2.0  # 1.645, 1.96 < 2
    assert chance_bound(16) == pytest.approx(norm.isf(0.05 / 16), rel=1e-12)
    assert norm.cdf(2.73) == pytest.approx(0.99683, abs=1e-5)
    assert chance_bound(16) == pytest.approx(2.73, abs=0.005)
    with pytest.raises(ParameterError, match="tests"):
        chance_bound(0)


def test_bonferroni_bound_holds_the_family_wise_rate_on_noise():
    # 16 noise columns per draw, 500 draws: the share of draws where some noise column
    # scores above 0 is near the family-wise 5 % of Bonferroni's inequality, while the plain
    # 2-sigma bound lets through about 1 - (1 - 0.0228) ** 16 = 31 % of the draws (the normal
    # tail, common practice). Measured here 0.07 and 0.31: the permutation null of 1 - L_r is
    # slightly right-skewed (skewness 0.2 on this graph; 40,000 noise columns put 0.41 % above
    # 2.73 sd where the normal puts 0.32 %), so the bound holds to about 6 %, and the test
    # allows three binomial standard errors of 500 draws over 5 %.
    from lenswork.criteria import laplacian_null_sd

    rng = np.random.default_rng(48)
    X = rng.normal(size=(600, 3))
    S = heat_kernel_affinity(X, k=10)
    sd = laplacian_null_sd(S)
    L = laplacian_score(rng.normal(size=(600, 500 * 16)), S).reshape(500, 16)
    bonf = np.mean([np.any(smoothness(row, null_sd=sd, tests=16) > 0) for row in L])
    two = np.mean([np.any(smoothness(row, null_sd=sd) > 0) for row in L])
    assert bonf <= 0.05 + 3 * np.sqrt(0.05 * 0.95 / 500)
    assert 0.15 < two < 0.45
