"""Normalisations against scipy / numpy references."""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.stats import rankdata, zscore

from lenswork import ParameterError, normalize


def test_rank_uses_average_ties():
    # Reference: scipy.stats.rankdata(method="average"); mapped to (0, 1) by (r - 1/2) / n.
    rng = np.random.default_rng(9)
    v = rng.integers(0, 5, size=200).astype(float)
    assert_allclose(normalize(v, "rank"), (rankdata(v) - 0.5) / 200, rtol=1e-15)
    out = normalize(v, "rank")
    assert out.min() > 0 and out.max() < 1


def test_zscore_matches_scipy():
    rng = np.random.default_rng(10)
    v = rng.normal(3, 2, 100)
    assert_allclose(normalize(v, "zscore"), zscore(v), rtol=1e-12)  # scipy.stats.zscore, ddof=0


def test_robust_uses_median_and_iqr():
    v = np.array([1.0, 2.0, 3.0, 4.0, 100.0])
    # numpy percentiles (linear interpolation): Q1 = 2, median = 3, Q3 = 4
    assert_allclose(normalize(v, "robust"), (v - 3.0) / 2.0)


def test_constant_column_does_not_divide_by_zero():
    v = np.full(7, 2.5)
    assert_allclose(normalize(v, "minmax"), 0.5)
    assert_allclose(normalize(v, "zscore"), 0.0)
    assert_allclose(normalize(v, "robust"), 0.0)


def test_unknown_method():
    with pytest.raises(ParameterError, match="among {'rank', 'minmax', 'zscore', 'robust'}"):
        normalize([1.0, 2.0], "log")
