"""lenswork on a Dask cluster: partitioned results against the single-machine ones."""

from __future__ import annotations

import math

import numpy as np
import pytest

dask = pytest.importorskip("dask")
distributed = pytest.importorskip("distributed")
pd = pytest.importorskip("pandas")
pytest.importorskip("pyarrow")

import dask.array as da  # noqa: E402
import dask.dataframe as dd  # noqa: E402

from lenswork import (  # noqa: E402
    InputError,
    distance_to_measure,
    eccentricity,
    gaussian_density,
    laplacian_eigenmaps,
    load_table,
    pca_coordinates,
)
from lenswork.graph import membership_matrix, nerve_edges  # noqa: E402
from lenswork.lenses._extend import nystrom_extend  # noqa: E402
from lenswork.partitioned import (  # noqa: E402
    cluster_element,
    element_ranges,
    open_partitioned,
    partitioned_graph,
    partitioned_lenses,
    sample_cloud,
)


@pytest.fixture(scope="module")
def client():
    # threads of this process: starts in about a second, no pickling of the test module
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as c:
        yield c


def _parquet_dir(tmp_path, X, n_parts):
    for i, block in enumerate(np.array_split(X, n_parts)):
        cols = {f"f{j}": block[:, j] for j in range(X.shape[1])}
        pd.DataFrame(cols).to_parquet(tmp_path / f"part-{i}.parquet")
    return tmp_path


def test_exact_lenses_equal_single_machine(client, tmp_path):
    rng = np.random.default_rng(8765678)
    X = rng.normal(size=(3000, 4)) * [3.0, 2.0, 1.0, 0.5] + [10.0, -2.0, 0.0, 1.0]
    cloud = open_partitioned(_parquet_dir(tmp_path, X, 5))
    assert cloud.n == 3000 and cloud.n_partitions == 5
    lens = partitioned_lenses(cloud, ["pca:components=3", "eccentricity", "column:name=f2"])
    values, errors = lens.compute()
    # references: lenswork's own single-machine functions (PCA via eigh of the covariance,
    # Jolliffe 2002; eccentricity closed form, Carrière, Michel and Oudot 2018)
    np.testing.assert_allclose(values[:, :3], pca_coordinates(X, components=3), atol=1e-12)
    np.testing.assert_allclose(values[:, 3], eccentricity(X), rtol=1e-12)
    np.testing.assert_array_equal(values[:, 4], X[:, 2])
    assert np.isnan(errors).all()
    # numpy's covariance as an outside reference for the tree reduction
    np.testing.assert_allclose(cloud.scatter / (cloud.n - 1), np.cov(X.T), rtol=1e-12)


def test_zscore_and_written_columns(client, tmp_path):
    rng = np.random.default_rng(11)
    X = rng.normal(size=(800, 3)) * [5.0, 1.0, 0.2]
    cloud = open_partitioned(da.from_array(X, chunks=(300, 3)), scale="zscore")
    single = load_table(X, scale="zscore")
    np.testing.assert_allclose(cloud.to_point_cloud().X, single.X, atol=1e-12)
    lens = partitioned_lenses(cloud, ["eccentricity"])
    files = lens.write(tmp_path / "out")
    assert len(files) == 4 and files[-1].endswith("lenses.json")
    back = pd.concat([pd.read_parquet(f) for f in files[:-1]])
    np.testing.assert_allclose(back["eccentricity"], eccentricity(single.X), rtol=1e-12)
    import json

    sidecar = json.loads((tmp_path / "out" / "lenses.json").read_text())
    assert sidecar["columns"]["eccentricity"]["exact"] is True
    assert sidecar["input"]["sha256"] == cloud.provenance["sha256"]


def test_estimated_lenses_within_stated_error(client):
    rng = np.random.default_rng(424242)
    X = rng.normal(size=(3000, 2))
    cloud = open_partitioned(da.from_array(X, chunks=(1000, 2)))
    k = math.ceil(0.05 * 3000)
    lens = partitioned_lenses(
        cloud, ["density", "eccentricity:p=1", f"dtm:mass={k / 3000}"], landmarks=500,
        random_state=3,
    )
    values, errors = lens.compute()
    # density: exact Gaussian KDE with Scott's bandwidth (scipy.stats.gaussian_kde's rule)
    exact = gaussian_density(X, mode="exact")
    z = (values[:, 0] - exact) / errors[:, 0]  # errors: se of log density (delta method)
    # the se is itself estimated from the sample: in the far tails, where a few landmarks
    # carry the sum, it understates the error (common practice: a looser tail allowance)
    # half of a normal's mass lies within 0.674 sd (standard normal table)
    assert np.mean(np.abs(z) > 4) < 0.02 and 0.4 < np.median(np.abs(z)) < 1.0
    exact_e = eccentricity(X, p=1, mode="exact")
    z = (values[:, 1] - exact_e) / errors[:, 1]
    assert np.mean(np.abs(z) > 4) < 0.005 and 0.4 < np.median(np.abs(z)) < 1.0
    # DTM: hard bound of Chazal, Cohen-Steiner and Mérigot 2011, Theorem 3.5 (from memory):
    # sup |d_mu,m - d_nu,m| <= W2(mu, nu) / sqrt(m)
    exact_d = distance_to_measure(X, mass=0.05, max_k=k)
    bound = lens.provenance[2]["error_bound"]
    assert np.max(np.abs(values[:, 2] - exact_d)) <= bound
    assert lens.provenance[2]["exact"] is False


def test_nystrom_extension_matches_full_solution():
    rng = np.random.default_rng(777)
    t = np.sort(rng.uniform(0, 1, 2000))
    X = np.column_stack([np.cos(3 * t), np.sin(3 * t), t]) + rng.normal(0, 0.01, (2000, 3))
    full = laplacian_eigenmaps(X, 2, k=15)
    idx = np.sort(rng.choice(2000, 600, replace=False))
    vec, info = laplacian_eigenmaps(X[idx], 2, k=15, return_info=True)
    ext = nystrom_extend(X[idx], vec, info["eigenvalues"], X, k=15, sigma=info["sigma"])
    # the first two Laplacian eigenvectors of a curve are cos(pi t), cos(2 pi t)
    # (Belkin and Niyogi 2003): extension and full solution agree up to sign (measured:
    # |corr| 0.999 and 0.986 with 600 of 2000 rows as landmarks)
    for j, least in enumerate((0.99, 0.98)):
        assert abs(np.corrcoef(ext[:, j], full[:, j])[0, 1]) > least


def test_laplacian_on_partitions_states_held_out_error(client):
    rng = np.random.default_rng(99)
    t = rng.uniform(0, 1, 3000)
    X = np.column_stack([t, 0.2 * np.sin(4 * t)]) + rng.normal(0, 0.005, (3000, 2))
    cloud = open_partitioned(da.from_array(X, chunks=(1000, 2)))
    lens = partitioned_lenses(cloud, ["laplacian:components=1,k=10"], landmarks=800)
    values, _ = lens.compute()
    # on a curve the first vector is monotone in the arc parameter (Belkin and Niyogi 2003)
    from scipy.stats import spearmanr

    assert abs(spearmanr(values[:, 0], t).statistic) > 0.99
    assert lens.provenance[0]["held_out_abs_corr"] > 0.95


def _reference_graph(X, values, lo, hi, intervals, overlap, **kw):
    """Single machine: the same per-element clustering on every element in one process."""
    first, last = element_ranges(values, lo, hi, intervals, overlap)
    nodes = []
    for element in np.ndindex(*intervals):
        inside = np.ones(X.shape[0], dtype=bool)
        for j, e in enumerate(element):
            inside &= (first[:, j] <= e) & (last[:, j] >= e)
        rows = np.flatnonzero(inside)
        if rows.size == 0:
            continue
        labels, _ = cluster_element(X[rows], rows, **kw)
        for c in range(labels.max() + 1):
            nodes.append(frozenset(rows[labels == c].tolist()))
    return nodes


def _node_and_edge_sets(g):
    nodes = {frozenset(nd.members.tolist()) for nd in g.nodes}
    edges = {frozenset((frozenset(g.nodes[e.source].members.tolist()),
                        frozenset(g.nodes[e.target].members.tolist()))) for e in g.edges}
    return nodes, edges


def _reference_edges(ref, n):
    idx = {s: i for i, s in enumerate(ref)}
    rows = np.concatenate([sorted(s) for s in ref])
    cols = np.concatenate([[idx[s]] * len(s) for s in ref])
    edges, _ = nerve_edges(membership_matrix(rows, cols, n, len(ref)))
    return {frozenset((ref[a], ref[b])) for a, b in edges}


def test_graph_equals_single_machine_graph(client):
    rng = np.random.default_rng(2024)
    a = rng.uniform(0, 2 * np.pi, 2000)
    X = np.column_stack([np.cos(a), np.sin(a), rng.normal(0, 0.05, 2000)])
    cloud = open_partitioned(da.from_array(X, chunks=(500, 3)))
    lens = partitioned_lenses(cloud, ["column:name=x0"])
    g = partitioned_graph(lens, intervals=6, overlap=0.3, k=10, min_size=5)
    ref = _reference_graph(X, X[:, [0]], [X[:, 0].min()], [X[:, 0].max()], [6], [0.3], k=10,
                           min_size=5)
    nodes, edges = _node_and_edge_sets(g)
    # compared as sets of frozensets of rows (as networkx's component tests compare)
    assert nodes == set(ref) and len(nodes) == len(ref)
    assert edges == _reference_edges(ref, 2000)
    assert g.summary().loops == 1  # a circle's nerve has one loop (Mapper, 2007)


def test_product_cover_graph_equals_single_machine_graph(client):
    rng = np.random.default_rng(77)
    X = rng.normal(size=(1500, 3))
    cloud = open_partitioned(da.from_array(X, chunks=(400, 3)))
    lens = partitioned_lenses(cloud, ["column:name=x0", "column:name=x1"])
    g = partitioned_graph(lens, intervals=[3, 4], overlap=[0.2, 0.4], k=8, min_size=4,
                          fragments="report")
    V = X[:, :2]
    ref = _reference_graph(X, V, V.min(axis=0), V.max(axis=0), [3, 4], [0.2, 0.4], k=8,
                           min_size=4, fragments="report")
    nodes, edges = _node_and_edge_sets(g)
    assert nodes == set(ref) and len(nodes) == len(ref)
    assert edges == _reference_edges(ref, 1500)


def test_interval_ranges_equal_the_cover():
    # lenswork.Cover (raw scale) as the reference for the floor formula
    from lenswork import Cover

    rng = np.random.default_rng(3)
    v = rng.normal(size=(500, 2))
    cover = Cover(intervals=[5, 7], overlap=[0.3, 0.6], scale="raw").fit(v)
    first, last = element_ranges(v, v.min(axis=0), v.max(axis=0), [5, 7], [0.3, 0.6])
    np.testing.assert_array_equal(first, cover.first_)
    np.testing.assert_array_equal(last, cover.last_)


def test_eccentricity_p_inf_refused(client):
    cloud = open_partitioned(da.from_array(np.arange(20.0).reshape(10, 2), chunks=(5, 2)))
    from lenswork import ParameterError

    with pytest.raises(ParameterError, match="p = inf is not offered"):
        partitioned_lenses(cloud, ["eccentricity:p=inf"])


def test_csv_glob_and_dataframe_ids(client, tmp_path):
    (tmp_path / "a.csv").write_text("id,u,v\nr1,1,2\nr2,3,4\n")
    (tmp_path / "b.csv").write_text("id,u,v\nr3,5,7\n")
    cloud = open_partitioned(str(tmp_path / "*.csv"), id_column="id")
    pc = cloud.to_point_cloud()
    assert pc.ids.tolist() == ["r1", "r2", "r3"] and pc.row_numbers.tolist() == [2, 3, 2]
    frame = pd.DataFrame({"key": [10, 11, 12, 13], "w": [0.5, 1.5, 2.5, 4.0]})
    cloud = open_partitioned(dd.from_pandas(frame, npartitions=2), id_column="key")
    assert cloud.to_point_cloud().ids.tolist() == [10, 11, 12, 13]
    assert cloud.provenance["sha256"] == open_partitioned(
        dd.from_pandas(frame, npartitions=2), id_column="key").provenance["sha256"]


def test_cluster_element_matches_scipy_components():
    rng = np.random.default_rng(5)
    X = np.concatenate([rng.normal(0, 0.1, (40, 2)), rng.normal(5, 0.1, (30, 2))])
    labels, rep = cluster_element(X, np.arange(70), k=5, min_size=3, cutoff="none")
    # reference: connected components of scikit-learn's kneighbors_graph (scipy csgraph)
    from scipy.sparse.csgraph import connected_components
    from sklearn.neighbors import kneighbors_graph

    _, ref = connected_components(kneighbors_graph(X, 5), directed=True, connection="weak")
    assert {frozenset(np.flatnonzero(labels == c)) for c in range(labels.max() + 1)} == {
        frozenset(np.flatnonzero(ref == c)) for c in range(ref.max() + 1)}


def test_sample_is_exact_size_and_deterministic(client):
    X = np.arange(2000.0).reshape(1000, 2)
    cloud = open_partitioned(da.from_array(X, chunks=(130, 2)))
    a = sample_cloud(cloud, 77, random_state=4)
    b = sample_cloud(cloud, 77, random_state=4)
    assert a.n == 77 and np.array_equal(a.X, b.X)
    # numpy's generator as the reference for the drawn positions
    pos = np.sort(np.random.default_rng(4).choice(1000, 77, replace=False))
    np.testing.assert_array_equal(a.X, X[pos])


def test_bad_parquet_partition_names_partition_file_and_row(client, tmp_path):
    rng = np.random.default_rng(1)
    X = rng.normal(size=(300, 2))
    X[250, 1] = np.nan  # partition 3 (rows 200-299), file row 52 (header = row 1)
    _parquet_dir(tmp_path, X, 3)
    with pytest.raises(InputError, match=r"Partition 3 of 3: .*part-2\.parquet.* row 52"):
        open_partitioned(tmp_path)


def test_bad_csv_partition(client, tmp_path):
    (tmp_path / "a.csv").write_text("u,v\n1,2\n3,4\n")
    (tmp_path / "b.csv").write_text("u,v\n1,2\n3,oops\n")
    with pytest.raises(InputError, match=r"Partition 2 of 2: .*'v'.*'oops' at row 3"):
        open_partitioned(str(tmp_path / "*.csv"), features=["u", "v"])


def test_bad_dask_dataframe_partition(client):
    frame = pd.DataFrame({"p": np.arange(10.0), "q": np.arange(10.0)})
    frame.loc[7, "q"] = np.inf
    ddf = dd.from_pandas(frame, npartitions=2)
    with pytest.raises(InputError, match=r"partition 2 of the dask DataFrame.*inf at row 8"):
        open_partitioned(ddf)


def test_duplicate_ids_across_partitions(client, tmp_path):
    (tmp_path / "a.csv").write_text("id,v\n1,2\n2,4\n")
    (tmp_path / "b.csv").write_text("id,v\n3,2\n1,4\n")
    with pytest.raises(InputError, match=r"Id 1 appears .*\(partitions 1, 2\)"):
        open_partitioned(tmp_path, id_column="id")


def test_cli_commands_on_a_local_cluster(tmp_path):
    from click.testing import CliRunner

    from lenswork.cli import cli

    rng = np.random.default_rng(31)
    a = rng.uniform(0, 2 * np.pi, 900)
    X = np.column_stack([np.cos(a), np.sin(a)]) + rng.normal(0, 0.02, (900, 2))
    (tmp_path / "d").mkdir()
    data = _parquet_dir(tmp_path / "d", X, 3)
    common = ["--scheduler", "local", "--workers", "1", "--lens", "column:name=f0"]
    r = CliRunner().invoke(cli, ["--quiet", "cluster-lenses", str(data), *common, "-o",
                                 str(tmp_path / "lens")])
    assert r.exit_code == 0, r.output
    assert (tmp_path / "lens" / "lenses.json").exists()
    r = CliRunner().invoke(cli, ["--quiet", "cluster-graph", str(data), *common,
                                 "--intervals", "8", "-o", str(tmp_path / "g.json")])
    assert r.exit_code == 0, r.output
    assert "1 loops" in r.output  # a noisy circle (Mapper, 2007)


def test_screen_on_a_sample_then_lenses_on_all_partitions(client):
    from lenswork import screen

    rng = np.random.default_rng(6060)
    X = rng.normal(size=(4000, 3)) * [4.0, 1.0, 0.3]
    cloud = open_partitioned(da.from_array(X, chunks=(1000, 3)))
    sample = sample_cloud(cloud, 600, random_state=2)
    result = screen(sample, ["pca:components=2", "eccentricity"], probe=False)
    assert result.selected and set(result.selected) <= {"pca_1", "pca_2", "eccentricity"}
    lens = partitioned_lenses(cloud, ["pca:components=2", "eccentricity"])
    values, _ = lens.compute()
    # the chosen columns on every partition equal lenswork's one-machine ones on all rows
    ref = dict(zip(["pca_1", "pca_2"], pca_coordinates(X, components=2).T))
    ref["eccentricity"] = eccentricity(X)
    for name in result.selected:
        np.testing.assert_allclose(values[:, lens.names.index(name)], ref[name], atol=1e-12)


def test_too_few_rows(client):
    with pytest.raises(InputError, match="1 usable row in 1 partition; at least 2"):
        open_partitioned(da.from_array(np.ones((1, 2)), chunks=(1, 2)))
