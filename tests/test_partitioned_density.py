"""The density on partitions is the single machine's density: estimator, rows and error."""

from __future__ import annotations

import numpy as np
import pytest

dask = pytest.importorskip("dask")
distributed = pytest.importorskip("distributed")

import dask.array as da  # noqa: E402
from numpy.testing import assert_allclose  # noqa: E402
from scipy.stats import gaussian_kde, spearmanr  # noqa: E402

from lenswork import InputError  # noqa: E402
from lenswork.lenses import gaussian_density  # noqa: E402
from lenswork.lenses._common import sample_rows  # noqa: E402
from lenswork.partitioned import open_partitioned, partitioned_lenses  # noqa: E402
from lenswork.partitioned._sample import keyed_sample  # noqa: E402


@pytest.fixture(scope="module")
def client():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as c:
        yield c


def _mixture(n, d=20, k=6, seed=11):
    """A seeded Gaussian mixture in d dimensions (centres sd 2, scales 0.5 to 1.5)."""
    rng = np.random.default_rng(seed)
    centres = rng.normal(0.0, 2.0, (k, d))
    scales = rng.uniform(0.5, 1.5, k)
    label = rng.integers(0, k, n)
    return centres[label] + rng.normal(size=(n, d)) * scales[label][:, None]


def _both(X, spec, single, chunks=700, seed=4):
    cloud = open_partitioned(da.from_array(X, chunks=(chunks, X.shape[1])))
    lens = partitioned_lenses(cloud, [spec], random_state=seed)
    values, errors = lens.compute()
    v, info = gaussian_density(X, random_state=seed, return_info=True, **single)
    return lens, values[:, 0], errors[:, 0], v, info


def test_keyed_sample_takes_the_single_machine_rows(client):
    X = _mixture(2500, d=5)
    cloud = open_partitioned(da.from_array(X, chunks=(600, 5)))
    for seed in (0, 7):
        R, pos = keyed_sample(cloud, 300, random_state=seed)
        want = sample_rows(X, 300, np.random.default_rng(seed))
        np.testing.assert_array_equal(pos, want)
        np.testing.assert_array_equal(R, X[want])


def test_exact_mode_equals_scipy_and_the_single_machine(client):
    # up to the single machine's exact size every row is a reference: scipy.stats.gaussian_kde
    # (Scott's rule, full covariance; Scott 1992, eq. 6.42) on all rows is the reference
    X = _mixture(2000, d=6)
    lens, v, e, single, _ = _both(X, "density", {})
    assert_allclose(v, gaussian_kde(X.T).logpdf(X.T), rtol=1e-9)
    assert_allclose(v, single, rtol=1e-12)
    assert lens.provenance[0]["exact"] is True and np.isnan(e).all()


def test_scalable_mode_is_the_single_machine_estimate_and_states_its_error(client):
    # 20-d mixture, reference subsample of 400 of 3,000 rows: the sum of kernel terms is
    # carried by a few near rows, the case where the sample's own se understates the error
    X = _mixture(3000)
    lens, v, e, single, info = _both(X, "density:mode=scalable,reference_size=400",
                                     {"mode": "scalable", "reference_size": 400})
    prov = lens.provenance[0]
    # the same estimate and the same calibrated error column on both paths
    assert_allclose(v, single, rtol=1e-12)
    assert_allclose(e, info["rel_se"], rtol=1e-8)
    assert prov["error_scale"] == pytest.approx(info["error_scale"], rel=1e-8)
    assert prov["probe_rows"] == info["probe_rows"] == 1000
    # against the exact log density (scipy.stats.gaussian_kde, Scott 1992)
    exact = gaussian_kde(X.T).logpdf(X.T)
    # the ranking: Spearman's rho of this seeded set (measured 0.94; 2,000 references of
    # the 20-d benchmark mixture at 1e5 rows: 0.98, tests/benchmarks/bench_partitioned.py)
    assert spearmanr(v, exact)[0] > 0.9
    # the stated error holds both ways: about 68% of rows within it (the share of a normal
    # within 1 sd, standard normal table) and 90% within tail_factor_90 times it; an
    # inflated error fails the upper bounds, the uncalibrated se (error_scale > 1) the lower
    within = np.abs(v - exact) <= e
    tail = np.abs(v - exact) <= prov["tail_factor_90"] * e
    assert 0.6 < within.mean() < 0.76, within.mean()
    assert 0.85 < tail.mean() < 0.95, tail.mean()
    assert prov["error_scale"] > 1.5  # the sample's own se alone would cover too few rows
    assert np.mean(np.abs(v - exact) <= e / prov["error_scale"]) < 0.5


def test_density_refusal_is_the_single_machines(client):
    X = _mixture(500, d=4)
    X[:, 2] = 1.0  # a constant column: Scott's covariance is singular
    cloud = open_partitioned(da.from_array(X, chunks=(200, 4)))
    with pytest.raises(InputError) as cluster_error:
        partitioned_lenses(cloud, ["density"])
    with pytest.raises(InputError) as single_error:
        gaussian_density(X)
    assert str(cluster_error.value) == str(single_error.value)
