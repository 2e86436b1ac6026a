"""LensTable output: formats, provenance sidecar, excluded rows, atomic writes."""

import csv
import json

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal

from lenswork import LensColumn, LensTable, ParameterError, PointCloud
from lenswork.data import ExcludedRow


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


def test_excluded_rows_written_as_missing(tmp_path):
    X = np.arange(6.0).reshape(3, 2)
    cloud = PointCloud(
        X=X, feature_names=("p", "q"), ids=np.array(["r1", "r3", "r4"], dtype=object),
        id_name="id", passthrough={}, row_numbers=np.array([2, 4, 5]),
        excluded=(ExcludedRow(row=3, id="r2", reason="NaN in column 'p'"),),
        provenance={"source": "test", "sha256": "0", "scaling": None},
    )
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
    with pytest.raises(ParameterError, match="'format' parameter"):
        table.write(tmp_path / "out.xlsx")
    assert list(tmp_path.iterdir()) == []


def test_duplicate_column_names_rejected():
    cloud, _ = _table()
    col = LensColumn("a", np.zeros(5))
    with pytest.raises(ParameterError, match="'a' appears twice"):
        LensTable([col, col], cloud)
