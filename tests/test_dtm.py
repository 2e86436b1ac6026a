"""Tests of distance to a measure and k-NN distance (lenswork.lenses._dtm)."""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from sklearn.base import clone
from sklearn.neighbors import NearestNeighbors

from lenswork import (
    DistanceToMeasure,
    InputError,
    KNNDistance,
    LensworkWarning,
    ParameterError,
    Workspace,
    compute_lenses,
    distance_to_measure,
    get_lens,
    knn_distance,
    neighbor_graph,
)
from lenswork.lenses._dtm import MAX_K


def _brute_dtm(X, k, Q=None):
    """Brute-force DTM from the definition (Chazal, Cohen-Steiner and Merigot 2011):
    root mean squared distance from each query to its k nearest sample points,
    a sample point counting itself at distance 0."""
    Q = X if Q is None else Q
    D2 = ((Q[:, None, :] - X[None, :, :]) ** 2).sum(axis=2)
    nearest = np.sort(D2, axis=1)[:, :k]
    return np.sqrt(nearest.mean(axis=1))


def _dtm_lens(X, **params):
    ws = Workspace(X, random_state=0, min_neighbors=MAX_K)  # k up to MAX_K from one graph
    (col,) = get_lens("dtm")(ws, **params)
    return col


@pytest.mark.parametrize("mass", [0.01, 0.05, 0.2, 0.33])
def test_dtm_equals_brute_force(mass):
    rng = np.random.default_rng(515)
    X = np.vstack([rng.normal(size=(200, 3)), rng.normal(size=(100, 3)) * 0.2 + 4.0])
    k = math.ceil(mass * X.shape[0])  # k = ceil(m n): 3, 15, 60, 99 (all under the cap)
    ref = _brute_dtm(X, k)  # reference: brute-force numpy version above
    # Same squared distances summed in another order: rounding only.
    col = _dtm_lens(X, mass=mass)
    assert col.info["k"] == k and col.info["capped"] is False
    assert_allclose(col.values, ref, rtol=1e-12, atol=1e-14)
    assert_allclose(distance_to_measure(X, mass=mass), ref, rtol=1e-12, atol=1e-14)


def test_dtm_is_one_lipschitz():
    rng = np.random.default_rng(2011)
    X = np.vstack([rng.normal(size=(250, 2)), rng.uniform(-4, 4, size=(50, 2))])
    values = distance_to_measure(X, mass=0.05)
    # Chazal, Cohen-Steiner and Merigot 2011: the DTM is 1-Lipschitz,
    # |d(x) - d(y)| <= ||x - y||. Checked on random pairs of data rows...
    i, j = rng.integers(0, len(X), size=(2, 2000))
    gap = np.abs(values[i] - values[j])
    dist = np.linalg.norm(X[i] - X[j], axis=1)
    assert np.all(gap <= dist + 1e-12)  # 1e-12: rounding of the square roots
    # ... and on random pairs of new points through the transformer.
    dtm = DistanceToMeasure(mass=0.05).fit(X)
    P, Q = rng.uniform(-6, 6, size=(2, 1000, 2))
    gap = np.abs(dtm.transform(P)[:, 0] - dtm.transform(Q)[:, 0])
    assert np.all(gap <= np.linalg.norm(P - Q, axis=1) + 1e-12)
    # The bound is nearly attained somewhere (a sanity check that the test can fail).
    assert np.max(gap / np.linalg.norm(P - Q, axis=1)) > 0.5


def test_dtm_on_a_uniform_grid_at_one_half():
    # Derived from the definition: the k nearest points of a uniform grid of
    # [0, 1] to x = 1/2 fill an interval of length m around it, and the mean
    # squared distance over a uniform interval of half-width m/2 is m^2/12,
    # so d(1/2) = m / (2 sqrt 3).
    N = 9901  # grid i / 9900: spacing h = 1/9900, and 1/2 is a grid point
    X = (np.arange(N) / (N - 1))[:, None]
    k = 99  # 1/2 itself and 49 grid points on each side (no tie at the edge)
    mass = k / N
    col = _dtm_lens(X, mass=mass)
    assert col.info["k"] == k
    value = col.values[(N - 1) // 2]
    # Discrete value, exactly: h * sqrt(2 sum_{j<=49} j^2 / 99) = h sqrt(r(r+1)/3), r = 49
    # (sum of squares, r(r+1)(2r+1)/6).
    h, r = 1 / (N - 1), (k - 1) // 2
    assert value == pytest.approx(h * math.sqrt(r * (r + 1) / 3), rel=1e-12)
    # Against the continuum value m / (2 sqrt 3): the ratio is
    # N/(N-1) * sqrt(1 - 1/k^2) = 1 + 5.0e-5 here, so rtol 1e-4 bounds the
    # discretisation and a wrong convention (e.g. self not counted: +1%) fails.
    assert value == pytest.approx(mass / (2 * math.sqrt(3)), rel=1e-4)


def test_mass_to_k_convention():
    rng = np.random.default_rng(70)
    X = rng.normal(size=(100, 2))
    # 0.07 * 100 is 7.000000000000001 in floating point; the definition k = ceil(m n)
    # means 7 (exact arithmetic), not 8.
    assert _dtm_lens(X, mass=0.07).info["k"] == 7
    assert _dtm_lens(X, mass=0.071).info["k"] == 8  # ceil(7.1) = 8
    with pytest.warns(LensworkWarning, match="k=1"):
        col = _dtm_lens(X, mass=0.005)  # ceil(0.5) = 1: only the point itself
    assert np.array_equal(col.values, np.zeros(100))
    assert col.info["convention"].startswith("a data point counts as its own")


def test_k_cap_warns_and_records_the_mass_used():
    rng = np.random.default_rng(123)
    X = rng.normal(size=(12_000, 2))
    ws = Workspace(X, random_state=0, min_neighbors=MAX_K)  # the shared graph holds >= 99
    with pytest.warns(LensworkWarning, match=r"asks for k=120 .* capped at 100"):
        (col,) = get_lens("dtm")(ws, mass=0.01)  # k = 120 > cap
    assert col.info["k"] == MAX_K and col.info["capped"] is True
    assert col.info["mass_used"] == pytest.approx(MAX_K / 12_000)
    rows = rng.choice(12_000, size=100, replace=False)
    ref = _brute_dtm(X, MAX_K, Q=X[rows])  # reference: brute force with k = 100
    assert_allclose(col.values[rows], ref, rtol=1e-12)


def test_k_is_capped_by_the_shared_graph_so_no_second_build():
    rng = np.random.default_rng(124)
    X = rng.normal(size=(5_000, 3))
    ws = Workspace(X, random_state=0)  # min_neighbors = 30: the shared graph holds 30
    with pytest.warns(LensworkWarning, match=r"asks for k=50 .* capped at 31 .*shared neighbour"):
        (col,) = get_lens("dtm")(ws, mass=0.01)  # ceil(0.01 * 5000) = 50 > 30 + 1
    assert col.info["k"] == 31 and col.info["k_requested"] == 50 and col.info["k_cap"] == 31
    assert col.info["mass"] == 0.01 and col.info["mass_used"] == pytest.approx(31 / 5_000)
    graphs = [key for key in ws._cache if key[0] == "knn"]
    assert max(key[2] for key in graphs) == 30  # one build of 30 neighbours, then slices
    rows = rng.choice(5_000, size=50, replace=False)
    # reference: brute force from the definition with the k actually used
    assert_allclose(col.values[rows], _brute_dtm(X, 31, Q=X[rows]), rtol=1e-12)


def test_precomputed_graph_and_its_errors():
    rng = np.random.default_rng(8)
    X = rng.normal(size=(400, 3))
    g = neighbor_graph(X, k=20)
    assert_allclose(distance_to_measure(X, mass=0.05, graph=g), distance_to_measure(X, mass=0.05),
                    rtol=0, atol=0)  # same graph data, same arithmetic
    assert np.array_equal(knn_distance(X, k=7, graph=g), knn_distance(X, k=7))
    with pytest.raises(InputError, match="needs 39 neighbours per row; the graph given has 20"):
        distance_to_measure(X, mass=0.1, graph=g)  # k = 40 points: 39 others
    with pytest.raises(InputError, match="covers 400 rows; the data has 399"):
        knn_distance(X[:-1], k=3, graph=g)
    with pytest.raises(ParameterError, match="'graph' parameter of knn_distance must be a "
                                             "lenswork.NeighborGraph"):
        knn_distance(X, k=3, graph=g.distances)


def test_dtm_transformer():
    rng = np.random.default_rng(44)
    X = rng.normal(size=(300, 3))
    est = DistanceToMeasure(mass=0.03)
    assert clone(est).get_params() == {"mass": 0.03, "max_k": MAX_K, "random_state": 0}
    fitted = est.fit_transform(X)
    assert fitted.shape == (300, 1)  # one output column, as every transformer
    fitted = fitted[:, 0]
    assert est.k_ == 9
    assert_allclose(fitted, _brute_dtm(X, 9), rtol=1e-12)  # reference: brute force
    # A fitted row finds itself at distance 0: transform agrees with fit_transform.
    assert_allclose(est.transform(X)[:, 0], fitted, rtol=1e-12)
    Q = rng.normal(size=(40, 3)) * 3
    assert_allclose(est.transform(Q)[:, 0], _brute_dtm(X, 9, Q=Q), rtol=1e-12)


@pytest.mark.parametrize("k", [1, 5, 10])
def test_knn_distance_equals_sklearn(k):
    rng = np.random.default_rng(1000 + k)
    X = rng.normal(size=(350, 4))
    # Reference: sklearn NearestNeighbors.kneighbors() with X=None excludes each row itself.
    ref = NearestNeighbors(n_neighbors=k).fit(X).kneighbors()[0][:, k - 1]
    # Same distances from two exact searches: identical up to rounding.
    assert_allclose(knn_distance(X, k=k), ref, rtol=1e-12)
    table = compute_lenses(Workspace(X), [("knn_distance", {"k": k})])
    assert_allclose(table.values()[:, 0], ref, rtol=1e-12)
    assert_allclose(KNNDistance(k=k).fit_transform(X)[:, 0], ref, rtol=1e-12)
    # The fitted rows through transform: each skips itself, so fit_transform is matched.
    assert_allclose(KNNDistance(k=k).fit(X).transform(X)[:, 0], ref, rtol=1e-12)
    # New points: the k-th nearest fitted row, nothing excluded (sklearn's kneighbors(Q)).
    Q = rng.normal(size=(30, 4))
    ref_q = NearestNeighbors(n_neighbors=k).fit(X).kneighbors(Q)[0][:, k - 1]
    assert_allclose(KNNDistance(k=k).fit(X).transform(Q)[:, 0], ref_q, rtol=1e-12)


def test_default_column_names_and_info():
    rng = np.random.default_rng(6)
    table = compute_lenses(Workspace(rng.normal(size=(120, 2))), ["dtm", "knn_distance",
                                                                  "dtm:mass=0.1"])
    assert table.names == ["dtm", "knn_distance", "dtm[mass=0.1]"]
    assert table["dtm"].info["k"] == 2  # ceil(0.01 * 120) = 2
    assert table["knn_distance"].info == {"k": 10, "graph": "exact"}


def test_bad_parameters_and_data():
    rng = np.random.default_rng(9)
    X = rng.normal(size=(30, 2))
    for bad in (0, 1.5, "abc"):
        with pytest.raises(ParameterError, match=r"'mass' parameter of dtm must be a float in "
                                                 r"\(0.0, 1.0\]"):
            _dtm_lens(X, mass=bad)
    with pytest.raises(ParameterError, match=r"'k' parameter of knn_distance must be an int"):
        get_lens("knn_distance")(Workspace(X), k=0)
    with pytest.raises(InputError, match="knn_distance with k=10 needs at least 11 rows"):
        get_lens("knn_distance")(Workspace(X[:5]))
    with pytest.raises(InputError, match="knn_distance with k=10 needs at least 11 rows"):
        knn_distance(X[:5])
    with pytest.raises(ParameterError, match=r"'max_k' parameter of distance_to_measure"):
        distance_to_measure(X, max_k=0)
    bad = X.copy()
    bad[4, 0] = np.inf
    with pytest.raises(InputError, match=r"non-finite value \(inf\) in row 5, column 1"):
        distance_to_measure(bad)
    with pytest.raises(InputError, match="X has 3 features, but DistanceToMeasure is expecting 2"):
        DistanceToMeasure(mass=0.5).fit(X).transform(np.zeros((1, 3)))


def test_capped_mass_is_told_once_recorded_and_printed_by_the_cli(tmp_path):
    # "Nothing silently wrong": the mass asked, the mass used and the option that lifts the
    # cap, in one warning at the caller's line, in the sidecar and on the CLI's output.
    # Reference for k: the definition k = ceil(m n) (Chazal, Cohen-Steiner and Mérigot 2011).
    import json
    import warnings

    from click.testing import CliRunner

    from lenswork.cli import cli

    X = np.random.default_rng(125).normal(size=(4_000, 3))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        (col,) = get_lens("dtm")(Workspace(X, random_state=0), mass=0.01)  # k = 40 > 31
    dtm_warnings = [w for w in caught if "mass=0.01" in str(w.message)]
    assert len(dtm_warnings) == 1 and "lenswork" not in dtm_warnings[0].filename
    message = str(dtm_warnings[0].message)
    assert "asks for k=40" in message and "capped at 31 (mass 0.00775)" in message
    assert "min_neighbors" in message
    assert col.info["mass"] == 0.01 and col.info["mass_used"] == pytest.approx(31 / 4000)
    table = tmp_path / "t.csv"
    np.savetxt(table, X, delimiter=",", header="a,b,c", comments="")
    out = tmp_path / "l.csv"
    result = CliRunner().invoke(cli, ["compute", str(table), "-l", "dtm", "-o", str(out)])
    assert result.exit_code == 0, result.output
    assert "capped at 31 (mass 0.00775)" in result.output and "--min-neighbors" in result.output
    (column,) = json.loads(out.with_name("l.csv.json").read_text())["columns"]
    assert column["name"] == "dtm[mass=0.00775]" and column["params"] == {"mass": 0.00775}
    assert column["info"]["capped"] is True and column["info"]["mass"] == 0.01
    assert column["info"]["k_requested"] == 40 and column["info"]["k"] == 31
