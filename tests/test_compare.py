"""Tests of lenswork.compare: partition agreement scores, node correspondence, compare_views."""

import math

import numpy as np
import pytest
import scipy.sparse as sp
from numpy.testing import assert_allclose
from sklearn.metrics import adjusted_rand_score, mutual_info_score
from sklearn.metrics.cluster import contingency_matrix

from lenswork import InputError, ParameterError
from lenswork.compare import adjusted_rand_index, contingency_table, variation_of_information


def _entropy_direct(labels):
    """Shannon entropy (nats) of the label shares, by a loop over the labels."""
    labels = list(labels)
    n = len(labels)
    h = 0.0
    for value in set(labels):
        p = labels.count(value) / n
        h -= p * math.log(p)
    return h


def _vi_direct(a, b):
    """VI = H(A) + H(B) - 2 I(A; B) (Meila 2007, eq. 15), I from the joint shares by loops."""
    a, b = list(a), list(b)
    n = len(a)
    mutual = 0.0
    for x in set(a):
        for y in set(b):
            nxy = sum(1 for s, t in zip(a, b, strict=True) if s == x and t == y)
            if nxy:
                pxy = nxy / n
                mutual += pxy * math.log(pxy / ((a.count(x) / n) * (b.count(y) / n)))
    return _entropy_direct(a) + _entropy_direct(b) - 2 * mutual


# --------------------------------------------------------------------------- contingency
def test_contingency_matches_sklearn():
    rng = np.random.default_rng(101)
    a = rng.integers(0, 5, 300)
    b = rng.integers(0, 7, 300)
    # scikit-learn's contingency_matrix as reference (same sorted-label order)
    assert_allclose(contingency_table(a, b).toarray(), contingency_matrix(a, b), atol=0)
    assert sp.issparse(contingency_table(a, b))


def test_contingency_accepts_string_labels():
    rng = np.random.default_rng(102)
    a = rng.choice(["red", "green", "blue"], 50)
    b = rng.integers(0, 3, 50)
    table = contingency_table(a, b)
    assert table.sum() == 50
    assert_allclose(table.toarray(), contingency_matrix(a, b), atol=0)


def test_contingency_rejects_mismatched_lengths():
    with pytest.raises(InputError, match="different numbers of rows"):
        contingency_table([0, 1, 1], [0, 1])


def test_contingency_rejects_2d_labels():
    with pytest.raises(InputError, match="must be a 1-D array"):
        contingency_table(np.zeros((3, 2)), [0, 1, 2])


# --------------------------------------------------------------------------- ARI
@pytest.mark.parametrize("n", [2, 17, 400])
@pytest.mark.parametrize("ka,kb", [(1, 1), (1, 4), (3, 3), (6, 2), (40, 40)])
def test_ari_equals_sklearn(n, ka, kb):
    rng = np.random.default_rng(1000 + n + 10 * ka + kb)
    a = rng.integers(0, ka, n)
    b = rng.integers(0, kb, n)
    # scikit-learn's adjusted_rand_score as reference; both are exact rational
    # arithmetic up to the final division, so they agree to rounding
    assert_allclose(adjusted_rand_index(a, b), adjusted_rand_score(a, b), rtol=0, atol=1e-12)


def test_ari_of_a_refinement_matches_sklearn():
    rng = np.random.default_rng(103)
    a = rng.integers(0, 4, 500)
    b = a * 10 + rng.integers(0, 3, 500)  # b refines a
    assert_allclose(adjusted_rand_index(a, b), adjusted_rand_score(a, b), rtol=0, atol=1e-12)


def test_ari_worked_examples():
    # Worked examples from scikit-learn's adjusted_rand_score documentation
    assert adjusted_rand_index([0, 0, 1, 1], [1, 1, 0, 0]) == 1.0
    assert adjusted_rand_index([0, 0, 1, 1], [0, 1, 0, 1]) == -0.5
    assert_allclose(adjusted_rand_index([0, 0, 1, 2], [0, 0, 1, 1]), 0.5714285714285714,
                    rtol=1e-15)  # 4/7, from the same documentation
    # Degenerate: both one block, both all singletons -> 1 (agreement)
    assert adjusted_rand_index([3, 3, 3], [1, 1, 1]) == 1.0
    assert adjusted_rand_index([0, 1, 2], [5, 6, 7]) == 1.0


def test_ari_is_invariant_to_relabelling():
    rng = np.random.default_rng(104)
    a = rng.integers(0, 5, 200)
    b = rng.integers(0, 5, 200)
    perm = rng.permutation(5)
    # ARI depends on the partitions only, not the label names (Hubert and Arabie 1985)
    assert adjusted_rand_index(a, b) == adjusted_rand_index(perm[a], b)
    assert adjusted_rand_index(a, b) == adjusted_rand_index(b, a)


def test_ari_rejects_empty():
    with pytest.raises(InputError, match="empty partitions"):
        adjusted_rand_index([], [])


# --------------------------------------------------------------------------- VI
@pytest.mark.parametrize("ka,kb", [(1, 1), (2, 5), (4, 4), (9, 3)])
def test_vi_equals_direct_entropy_computation(ka, kb):
    rng = np.random.default_rng(200 + 10 * ka + kb)
    a = rng.integers(0, ka, 120)
    b = rng.integers(0, kb, 120)
    # direct loop over H(A) + H(B) - 2 I(A;B) (Meila 2007, eq. 15); float sums of a
    # few hundred terms, so 1e-12 absolute is ample
    assert_allclose(variation_of_information(a, b), _vi_direct(a, b), rtol=0, atol=1e-12)


def test_vi_against_sklearn_mutual_information():
    rng = np.random.default_rng(201)
    a = rng.integers(0, 6, 1000)
    b = (a + rng.integers(0, 2, 1000)) % 6
    from scipy.stats import entropy

    # scipy.stats.entropy and sklearn.metrics.mutual_info_score (nats) as references
    ref = (entropy(np.bincount(a)) + entropy(np.bincount(b)) - 2 * mutual_info_score(a, b))
    assert_allclose(variation_of_information(a, b), ref, rtol=0, atol=1e-12)


def test_vi_closed_forms():
    # One block against two equal halves: VI = log 2 (Meila 2007: VI(1, C) = H(C))
    assert_allclose(variation_of_information([0] * 8, [0] * 4 + [1] * 4), math.log(2),
                    rtol=1e-15)
    # One block against n singletons: VI = log n, the largest value on n rows (Meila 2007)
    n = 16
    assert_allclose(variation_of_information([0] * n, list(range(n))), math.log(n), rtol=1e-15)
    assert_allclose(variation_of_information([0] * n, list(range(n)), normalized=True), 1.0,
                    rtol=1e-15)
    assert variation_of_information([2, 2, 5, 5], [0, 0, 1, 1]) == 0.0


def test_vi_is_a_metric():
    rng = np.random.default_rng(202)
    # Meila 2007, Property 1: VI is a metric on partitions (triangle inequality, symmetry)
    for _ in range(20):
        a, b, c = (rng.integers(0, rng.integers(1, 6), 60) for _ in range(3))
        ab = variation_of_information(a, b)
        assert ab == pytest.approx(variation_of_information(b, a), abs=1e-12)
        assert ab <= variation_of_information(a, c) + variation_of_information(c, b) + 1e-12
