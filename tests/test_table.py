"""LensTable output and input: formats, provenance sidecar, excluded rows, atomic writes,
reading a lens file back, and the lens-input reading shared by the graph functions."""

import csv
import json

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal

from lenswork import InputError, LensColumn, LensTable, ParameterError, PointCloud, Workspace
from lenswork.data import ExcludedRow
from lenswork.table import as_lens_table


def _table():
    rng = np.random.default_rng(31)
    X = rng.normal(size=(5, 2))
    cloud = PointCloud.from_array(X, passthrough={"label": np.array(list("abcde"), dtype=object)})
    cols = [LensColumn("a", X[:, 0], lens="column", params={"name": "x0"}),
            LensColumn("b", X[:, 1] ** 2, lens="custom")]
    return cloud, LensTable(cols, cloud, random_state=4)


def test_csv_roundtrip_and_sidecar(tmp_path):
    cloud, table = _table()
    path, sidecar = table.write(tmp_path / "out.csv")
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    assert rows[0] == ["row", "label", "a", "b"]
    got = np.array([[float(v) for v in r[2:]] for r in rows[1:]])
    assert_array_equal(got, table.values())  # repr(float) round-trips exactly (Python float repr)
    meta = json.loads(sidecar.read_text())
    assert meta["input"]["sha256"] == cloud.provenance["sha256"]
    assert meta["random_state"] == 4
    assert [c["name"] for c in meta["columns"]] == ["a", "b"]
    assert meta["lenswork_version"]


def test_npy_and_parquet(tmp_path):
    pq = pytest.importorskip("pyarrow.parquet")
    _, table = _table()
    path, _ = table.write(tmp_path / "out.npy")
    assert_array_equal(np.load(path), table.values())
    path, _ = table.write(tmp_path / "out.parquet")
    back = pq.read_table(path).to_pydict()
    assert_allclose(back["b"], table["b"].values, rtol=0)


def _cloud_without_row_3():
    """Rows 2, 4, 5 of an input whose row 3 (id r2) was kept out (as load_table reports it)."""
    X = np.arange(6.0).reshape(3, 2)
    cloud = PointCloud(
        X=X, feature_names=("p", "q"), ids=np.array(["r1", "r3", "r4"], dtype=object),
        id_name="id", passthrough={}, row_numbers=np.array([2, 4, 5]),
        excluded=(ExcludedRow(row=3, id="r2", reason="NaN in column 'p'"),),
        provenance={"source": "test", "sha256": "0", "scaling": None},
    )
    return X, cloud


def test_excluded_rows_written_as_missing(tmp_path):
    X, cloud = _cloud_without_row_3()
    table = LensTable([LensColumn("p", X[:, 0])], cloud)
    path, sidecar = table.write(tmp_path / "o.csv")
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    assert [r[0] for r in rows[1:]] == ["r1", "r2", "r3", "r4"]  # input order kept
    assert rows[2][1] == ""  # the excluded row's lens value is missing
    assert json.loads(sidecar.read_text())["excluded_rows"][0]["row"] == 3


def test_normalization_recorded_raw_values_kept():
    _, table = _table()
    ranked = table.normalize("rank")
    assert ranked["a"].normalization == "rank"
    assert_array_equal(ranked["a"].values, table["a"].values)
    assert sorted(ranked.values()[:, 0]) == [0.1, 0.3, 0.5, 0.7, 0.9]  # (rank - 1/2) / n


def test_failed_write_leaves_nothing(tmp_path):
    _, table = _table()
    with pytest.raises(ParameterError, match="format of .*out.xlsx.* from its ending"):
        table.write(tmp_path / "out.xlsx")
    assert list(tmp_path.iterdir()) == []


def test_duplicate_column_names_rejected():
    cloud, _ = _table()
    col = LensColumn("a", np.zeros(5))
    with pytest.raises(ParameterError, match="'a' appears twice"):
        LensTable([col, col], cloud)


# ---------------------------------------------------------------- reading a lens file back
def test_read_normalized_parquet_and_rows_in_another_order(tmp_path):
    pytest.importorskip("pyarrow.parquet")
    cloud, table = _table()
    ranked = table.normalize("rank")
    path, _ = ranked.write(tmp_path / "out.parquet", normalized=True)
    perm = np.array([3, 0, 4, 1, 2])
    other = PointCloud.from_array(cloud.X[perm], ids=cloud.ids[perm])
    back = LensTable.read(path, other)
    # the file holds (rank - 1/2) / n of each column (normalize's rank rule); matched by id
    assert_allclose(back.values(), ranked.values()[perm], rtol=0, atol=0)
    assert [c.normalization for c in back] == [None, None]  # already applied in the file
    assert back.random_state == 4 and back["a"].params == {"name": "x0"}
    assert back["a"].info["source"] == str(path)


def test_read_reports_missing_rows_and_npy_files(tmp_path):
    X, cloud = _cloud_without_row_3()
    path, _ = LensTable([LensColumn("p", X[:, 0])], cloud).write(tmp_path / "o.csv")
    wants_r2 = PointCloud.from_array(np.zeros((2, 1)), ids=np.array(["r1", "r2"], dtype=object))
    with pytest.raises(InputError, match=r"\(id r2\) has a missing lens value"):
        LensTable.read(path, wants_r2)
    npy, _ = LensTable([LensColumn("p", X[:, 0])], cloud).write(tmp_path / "o.npy")
    with pytest.raises(InputError, match="is an NPY lens file, which holds no row ids"):
        LensTable.read(npy, cloud)
    with pytest.raises(InputError, match="No lens file"):
        LensTable.read(tmp_path / "none.csv", cloud)


# ---------------------------------------------------------------- lens input
def test_as_lens_table_reads_every_accepted_kind():
    rng = np.random.default_rng(32)
    X = rng.normal(size=(40, 3))
    ws = Workspace(X, random_state=7)
    pca = as_lens_table("pca", ws)
    # the registry's pca columns on the same workspace (computed there, not here)
    assert pca.names == ["pca_1", "pca_2"] and pca.random_state == 7
    mixed = as_lens_table([LensColumn("h", X[:, 0]), "eccentricity"], ws)
    assert mixed.names == ["h", "eccentricity"]
    # eccentricity with p = 2 from its closed form sqrt(||x - m||^2 + mean ||y - m||^2)
    C = X - X.mean(axis=0)
    sq = np.einsum("ij,ij->i", C, C)
    assert_allclose(mixed["eccentricity"].values, np.sqrt(sq + sq.mean()), rtol=1e-12)
    by_name = as_lens_table({"p": X[:, 1], "q": X[:, 2]}, ws)
    assert by_name.names == ["p", "q"] and by_name["p"].lens == "array"
    assert_array_equal(by_name.values(), X[:, 1:])
    assert as_lens_table(X[:, 0], ws).names == ["lens"]
    table = LensTable([LensColumn("a", X[:, 0], normalization="rank")], ws.cloud, random_state=3)

    class Result:  # anything with to_lens_table(), as a screening result has
        def to_lens_table(self):
            return table

    got = as_lens_table(Result(), ws)
    assert got.names == ["a"] and got.random_state == 3 and got["a"].normalization == "rank"


def test_as_lens_table_errors():
    rng = np.random.default_rng(33)
    X = rng.normal(size=(30, 2))
    ws = Workspace(X)
    with pytest.raises(ParameterError, match="No lens column given to probe"):
        as_lens_table([], ws, what="probe")
    with pytest.raises(ParameterError, match="'lenses' argument of probe must be a LensTable"):
        as_lens_table({"a"}, ws, what="probe")
    with pytest.raises(InputError, match="lenses have 29 rows but the workspace has 30"):
        as_lens_table(X[:29], ws)
    with pytest.raises(InputError, match="must have shape .* got shape \\(30, 2, 1\\)"):
        as_lens_table(X[:, :, None], ws)
    with pytest.raises(InputError, match="Lens 'p' given to build_graph has 2 columns"):
        as_lens_table({"p": X}, ws)
    with pytest.raises(InputError, match="Lens column 'c' has 29 values but the data has 30"):
        as_lens_table(LensColumn("c", X[:29, 0]), ws)
    bad = X[:, 0].copy()
    bad[4] = np.inf
    with pytest.raises(InputError, match="Lens column 'lens' has a non-finite value in row 5"):
        as_lens_table(bad, ws)
    assert not np.isfinite(as_lens_table(bad, ws, finite=False)["lens"].values).all()
    with pytest.raises(ParameterError, match="'a' appears twice"):
        as_lens_table([LensColumn("a", X[:, 0]), LensColumn("a", X[:, 1])], ws)
