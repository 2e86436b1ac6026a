"""Data intake: load_table over CSV / TSV / NPY / Parquet / arrays / DataFrames, and its errors."""

import csv
import hashlib
import io
import sys
import tempfile
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from numpy.testing import assert_allclose, assert_array_equal

import lenswork.data._files as data_module
from lenswork import (
    ExcludedRow,
    InputError,
    LensworkError,
    LensworkWarning,
    ParameterError,
    PointCloud,
    load_table,
)


def _write(path, text, newline=""):
    with open(path, "w", encoding="utf-8", newline=newline) as fh:
        fh.write(text)
    return path


def _write_rows(path, rows, delimiter=","):
    """Write with the csv module (the reference writer: it quotes what needs quoting)."""
    with open(path, "w", encoding="utf-8", newline="") as fh:
        csv.writer(fh, delimiter=delimiter).writerows(rows)
    return path


# ---------------------------------------------------------------- reading, against references
def test_csv_values_match_pandas_reference(tmp_path):
    rng = np.random.default_rng(101)
    X = rng.normal(size=(40, 3)) * [1.0, 1e3, 1e-3]
    rows = [["id", "note", "a", "b", "c"]]
    for i, x in enumerate(X):
        note = ["plain", "with, comma", 'with "quotes"', "two\nlines", " padded "][i % 5]
        rows.append([f"S{i:03d}", note, *(repr(float(v)) for v in x)])
    path = _write_rows(tmp_path / "t.csv", rows)
    cloud = load_table(path, id_column="id", scale=None)  # the values as read
    ref = pd.read_csv(path, keep_default_na=False)  # pandas.read_csv as the reference parser
    # repr(float) round-trips exactly, and both parsers are correctly rounded: exact equality.
    assert_array_equal(cloud.X, ref[["a", "b", "c"]].to_numpy())
    assert cloud.feature_names == ("a", "b", "c")
    assert cloud.X.dtype == np.float64 and cloud.X.flags["C_CONTIGUOUS"]
    assert cloud.ids.tolist() == ref["id"].tolist()
    # passthrough text travels untouched (quotes, commas, line breaks, spaces kept)
    assert cloud.passthrough["note"].tolist() == ref["note"].tolist()
    assert cloud.passthrough["note"][4] == " padded "
    prov = cloud.provenance
    assert prov["format"] == "csv" and prov["delimiter"] == ","
    assert prov["n_rows_read"] == 40 and prov["features"] == ["a", "b", "c"]
    assert prov["id_column"] == "id" and prov["passthrough"] == ["note"]
    assert prov["scaling"] is None
    # sha256 of the file bytes: hashlib over the bytes on disk as the reference
    assert prov["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize("delimiter", [",", ";", "\t", "|"])
def test_delimiter_is_detected(tmp_path, delimiter):
    rng = np.random.default_rng(7)
    X = rng.integers(-50, 50, size=(12, 3)) / 4
    rows = [["p", "q", "r"], *[[repr(float(v)) for v in x] for x in X]]
    path = _write_rows(tmp_path / "t.csv", rows, delimiter=delimiter)
    cloud = load_table(path)
    assert cloud.provenance["delimiter"] == delimiter
    assert_array_equal(cloud.X, X)  # quarter steps are exact in binary floating point


def test_tsv_ending_means_tab_even_with_commas_in_cells(tmp_path):
    path = _write(tmp_path / "t.tsv", "name\tx\ty\nA, B\t1\t2\nC\t3\t4\n")
    cloud = load_table(path)
    assert cloud.provenance["delimiter"] == "\t"
    assert cloud.passthrough["name"].tolist() == ["A, B", "C"]
    assert_array_equal(cloud.X, [[1, 2], [3, 4]])


def test_delimiter_option_and_the_hint_that_asks_for_it(tmp_path):
    path = _write(tmp_path / "colon.txt", "a:b:c\n1:2:3\n4:5:6\n")
    with pytest.raises(InputError, match=r"no feature columns.*pass delimiter=':'"):
        load_table(path)
    cloud = load_table(path, delimiter=":")
    assert cloud.feature_names == ("a", "b", "c")
    assert_array_equal(cloud.X, [[1, 2, 3], [4, 5, 6]])
    with pytest.raises(ParameterError, match="delimiter.*one character"):
        load_table(path, delimiter="::")


def test_row_numbers_are_spreadsheet_rows_of_each_record(tmp_path):
    # Rows counted by hand as a spreadsheet shows them (common practice: the header is row 1,
    # one row per record whatever line breaks its quoted fields hold, a blank line an empty row).
    text = (
        "a,b,c\r\n"          # row 1 (line 1)
        '1,2,"p\r\nq"\r\n'   # row 2 (lines 2-3)
        "3,4,r\r\n"          # row 3 (line 4)
        "\r\n"               # row 4 (blank: no data)
        '5,6,"s\nt\nu"\r\n'  # row 5 (lines 6-8)
        "7,,v\r\n"           # row 6 (line 9)
        "8,9,w\r\n"          # row 7 (line 10)
    )
    path = _write(tmp_path / "ml.csv", text)
    with pytest.warns(LensworkWarning, match=r"rows 6\)"):
        cloud = load_table(path, invalid="exclude")
    assert cloud.row_numbers.tolist() == [2, 3, 5, 7]
    assert cloud.excluded == (
        ExcludedRow(row=6, id=4, reason="missing value in column 'b'", passthrough={"c": "v"}),
    )
    assert cloud.passthrough["c"].tolist() == ["p\r\nq", "r", "s\nt\nu", "w"]


def test_npy_plain_one_dimensional_and_structured(tmp_path):
    rng = np.random.default_rng(12)
    X = rng.normal(size=(6, 2))
    np.save(tmp_path / "x.npy", X)
    cloud = load_table(tmp_path / "x.npy")
    assert_array_equal(cloud.X, X)
    assert cloud.feature_names == ("x0", "x1") and cloud.row_numbers.tolist() == list(range(1, 7))
    assert cloud.provenance["sha256"] == hashlib.sha256(
        (tmp_path / "x.npy").read_bytes()
    ).hexdigest()
    np.save(tmp_path / "v.npy", X[:, 0])
    assert load_table(tmp_path / "v.npy").X.shape == (6, 1)  # one column is valid 1-D data
    rec = np.zeros(3, dtype=[("tag", "U2"), ("flow", "f8"), ("head", "i4")])
    rec["tag"], rec["flow"], rec["head"] = ["a", "b", "c"], [0.5, 1.5, 2.5], [3, 1, 2]
    np.save(tmp_path / "s.npy", rec)
    cloud = load_table(tmp_path / "s.npy", id_column="tag")
    assert cloud.feature_names == ("flow", "head")
    assert_array_equal(cloud.X, np.column_stack([rec["flow"], rec["head"]]))
    assert cloud.ids.tolist() == ["a", "b", "c"]


def test_parquet_matches_pandas_and_reports_nulls(tmp_path):
    pytest.importorskip("pyarrow")
    frame = pd.DataFrame({
        "id": ["a", "b", "c", "d"],
        "x": [1.5, None, 3.0, 4.0],
        "k": pd.array([1, 2, None, 5], dtype="Int64"),
        "label": ["p", None, "r", "q"],
    })
    path = tmp_path / "t.parquet"
    frame.to_parquet(path)
    with pytest.warns(LensworkWarning, match=r"Kept 2 of 4 rows.*rows 3, 4"):
        cloud = load_table(path, id_column="id", invalid="exclude")
    ref = pd.read_parquet(path)  # pandas.read_parquet as the reference reader
    keep = ref[["x", "k"]].notna().all(axis=1).to_numpy()
    assert_array_equal(cloud.X, ref.loc[keep, ["x", "k"]].to_numpy(dtype=float))
    assert cloud.ids.tolist() == ["a", "d"]
    assert [(r.row, r.reason) for r in cloud.excluded] == [
        (3, "missing value in column 'x'"), (4, "missing value in column 'k'"),
    ]
    assert cloud.excluded[0].passthrough == {"label": None}
    assert cloud.provenance["format"] == "parquet"


def test_parquet_without_pyarrow_says_how_to_install(tmp_path, monkeypatch):
    path = tmp_path / "t.parquet"
    path.write_bytes(b"PAR1 not really")
    monkeypatch.setitem(sys.modules, "pyarrow", None)  # makes `import pyarrow` fail
    monkeypatch.setitem(sys.modules, "pyarrow.parquet", None)
    with pytest.raises(InputError, match=r"needs pyarrow.*pip install lenswork\[parquet\]"):
        load_table(path)


def test_dataframe_source_with_text_dates_and_nullable_ints():
    frame = pd.DataFrame({
        "name": ["a", "b", "c"],
        "x": [1.0, 2.0, 4.0],
        "n": pd.array([1, 2, 3], dtype="Int64"),
        "t": pd.date_range("2024-01-01", periods=3),
    })
    cloud = load_table(frame)
    assert cloud.feature_names == ("x", "n")
    assert_array_equal(cloud.X, [[1, 1], [2, 2], [4, 3]])
    assert set(cloud.passthrough) == {"name", "t"}
    assert cloud.ids.tolist() == [1, 2, 3] and cloud.row_numbers.tolist() == [1, 2, 3]
    assert cloud.provenance["format"] == "dataframe" and len(cloud.provenance["sha256"]) == 64


def test_array_source_hash_matches_from_array_and_hashlib():
    rng = np.random.default_rng(5)
    X = rng.normal(size=(7, 3))
    cloud = load_table(X)
    assert_array_equal(cloud.X, X)
    expected = hashlib.sha256(np.ascontiguousarray(X).tobytes()).hexdigest()  # the definition
    assert cloud.provenance["sha256"] == expected
    assert PointCloud.from_array(X).provenance["sha256"] == expected
    assert load_table(X[:, 0]).X.shape == (7, 1)


def test_features_by_name_and_position_rest_is_passthrough(tmp_path):
    path = _write(tmp_path / "t.csv", "id,a,b,c,tag\n1,0.5,007,3,x\n2,1.5,008,4,y\n3,2.5,009,6,z\n")
    cloud = load_table(path, features=["c", 1], id_column=0)
    assert cloud.feature_names == ("c", "a")
    assert_array_equal(cloud.X, [[3, 0.5], [4, 1.5], [6, 2.5]])
    assert cloud.ids.tolist() == [1, 2, 3] and cloud.ids.dtype == np.int64
    assert cloud.passthrough["b"].tolist() == ["007", "008", "009"]  # untouched text
    assert cloud.passthrough["tag"].tolist() == ["x", "y", "z"]
    default = load_table(path)
    assert default.feature_names == ("id", "a", "b", "c")


def test_cli_positions_are_one_based(tmp_path):
    from lenswork.cli._common import load_input

    path = _write(tmp_path / "t.csv", "a,b,c\n1,2,3\n4,5,7\n")
    cloud = load_input(str(path), False, "2,c", None, None, False)
    assert cloud.feature_names == ("b", "c")


def test_text_ids_stay_text_unless_plain_integers(tmp_path):
    path = _write(tmp_path / "t.csv", "id,a\n007,1\n2,2\n3,3\n")
    assert load_table(path, id_column="id").ids.tolist() == ["007", "2", "3"]
    path = _write(tmp_path / "u.csv", "id,a\n-7,1\n2,2\n30,3\n")
    assert load_table(path, id_column="id").ids.tolist() == [-7, 2, 30]


def test_bom_and_blank_lines_are_ignored(tmp_path):
    path = _write(tmp_path / "t.csv", "\ufeffa,b\n\n1,2\n\n3,4\n\n")
    cloud = load_table(path)
    assert cloud.feature_names == ("a", "b")
    assert cloud.row_numbers.tolist() == [3, 5]


# ---------------------------------------------------------------- scaling
def test_zscore_matches_scipy(tmp_path):
    from scipy.stats import zscore

    rng = np.random.default_rng(33)
    X = rng.normal(size=(50, 3)) * [1.0, 100.0, 0.01] + [5.0, -2.0, 0.0]
    cloud = load_table(X, scale="zscore")
    # scipy.stats.zscore (ddof=0) as the reference; both round differently at 1e-15 relative.
    assert_allclose(cloud.X, zscore(X, ddof=0), rtol=1e-12, atol=1e-12)
    record = cloud.provenance["scaling"]
    assert record["method"] == "zscore"
    assert_allclose([record["columns"][f"x{j}"]["centre"] for j in range(3)], X.mean(axis=0),
                    rtol=1e-13)
    assert_allclose([record["columns"][f"x{j}"]["scale"] for j in range(3)], X.std(axis=0),
                    rtol=1e-13)


def test_robust_matches_sklearn(tmp_path):
    from sklearn.preprocessing import RobustScaler

    rng = np.random.default_rng(34)
    X = rng.standard_t(3, size=(61, 2)) * [2.0, 50.0]
    cloud = load_table(X, scale="robust")
    # scikit-learn's RobustScaler (median, IQR 25-75) as the reference; rounding-level agreement.
    ref = RobustScaler(quantile_range=(25.0, 75.0)).fit(X)
    assert_allclose(cloud.X, ref.transform(X), rtol=1e-12, atol=1e-12)
    record = cloud.provenance["scaling"]["columns"]
    assert_allclose([record["x0"]["centre"], record["x1"]["centre"]], ref.center_, rtol=1e-13)
    assert_allclose([record["x0"]["scale"], record["x1"]["scale"]], ref.scale_, rtol=1e-13)


def test_scaling_is_off_by_default_and_rejects_unknown_names():
    X = np.arange(8.0).reshape(4, 2)
    assert_array_equal(load_table(X).X, X)
    with pytest.raises(ParameterError, match=r"'scale' parameter of load_table.*'zscore'"):
        load_table(X, scale="minmax")
    with pytest.raises(ParameterError, match=r"'invalid' parameter.*'exclude'"):
        load_table(X, invalid="skip")


# ---------------------------------------------------------------- from_array (used by others)
def test_from_array_keeps_working_and_checks_values():
    cloud = PointCloud.from_array(np.eye(3), ids=["a", "b", "c"])
    assert cloud.X.shape == (3, 3) and cloud.ids.tolist() == ["a", "b", "c"]
    assert PointCloud.from_array(np.arange(4.0)).X.shape == (4, 1)
    with pytest.raises(InputError, match=r"The array has a non-finite value \(nan\) in row 2, "
                                         r"column 2 \('x1'\)"):
        PointCloud.from_array(np.array([[1.0, 2.0], [3.0, np.nan]]))
    with pytest.raises(InputError, match="3 dimensions"):
        PointCloud.from_array(np.zeros((2, 2, 2)))
    with pytest.raises(InputError, match=r"Id 'a' appears more than once.*rows 1 and 3"):
        PointCloud.from_array(np.eye(3), ids=["a", "b", "a"])


def test_require_rows_helper():
    cloud = PointCloud.from_array(np.eye(3))
    cloud.require_rows(3, "A test")
    with pytest.raises(InputError, match=r"A neighbour graph with k=5 needs at least 6 rows; the "
                                         r"data has 3 usable rows"):
        cloud.require_rows(6, "A neighbour graph with k=5")


# ---------------------------------------------------------------- bad input, one by one
def test_missing_file(tmp_path):
    with pytest.raises(InputError, match=r"File '.*nothere\.csv' not found.*Check the path"):
        load_table(tmp_path / "nothere.csv")


def test_directory_is_not_a_table(tmp_path):
    with pytest.raises(InputError, match="is a directory"):
        load_table(tmp_path)


@pytest.mark.parametrize("text", ["", "\n\n   \n"])
def test_empty_file(tmp_path, text):
    path = _write(tmp_path / "empty.csv", text)
    with pytest.raises(InputError, match=r"'.*empty\.csv' is empty.*expected a header row"):
        load_table(path)


def test_header_only(tmp_path):
    path = _write(tmp_path / "h.csv", "a,b,c\n")
    with pytest.raises(InputError, match=r"'.*h\.csv' has a header row but no data rows"):
        load_table(path)


@pytest.mark.parametrize(("line", "fields"), [("4,5", 2), ("4,5,6,7", 4)])
def test_ragged_rows(tmp_path, line, fields):
    path = _write(tmp_path / "r.csv", f"a,b,c\n1,2,3\n\n{line}\n")
    with pytest.raises(
        InputError, match=rf"Row 4 of '.*r\.csv' has {fields} fields, but the header has 3"
    ):
        load_table(path)


def test_non_numeric_value_in_a_chosen_feature(tmp_path):
    path = _write(tmp_path / "t.csv", "a,b,c\n1,2,3\n4,five,6\n")
    with pytest.raises(
        InputError,
        match=r"Column 'b' in '.*t\.csv' holds 'five' at row 3, which is not a number\. "
              r"Choose numeric feature columns.*or fix the cell",
    ):
        load_table(path, features=["a", "b"])


def test_non_numeric_value_in_a_later_block_is_found(tmp_path, monkeypatch):
    monkeypatch.setattr(data_module, "_CHUNK_ROWS", 4)  # several blocks on a small file
    lines = "".join(f"{i},{i}.25\n" for i in range(10))
    path = _write(tmp_path / "t.csv", "a,b\n" + lines + "10,oops\n")
    with pytest.raises(InputError, match=r"Column 'b' .* holds 'oops' at row 12"):
        load_table(path, features=["b"])


def test_mostly_numeric_column_left_out_warns_and_keeps_its_text(tmp_path, monkeypatch):
    monkeypatch.setattr(data_module, "_CHUNK_ROWS", 4)  # the bad cell sits in the third block
    body = "".join(f"{i},{i}.50,x{i}\n" for i in range(9))
    path = _write(tmp_path / "t.csv", "a,b,c\n" + body + "9,1;5,y\n")
    with pytest.warns(LensworkWarning, match=r"Column 'b' .* left out of the features: row 11 "
                                             r"holds '1;5'"):
        cloud = load_table(path)
    assert cloud.feature_names == ("a",)
    # read again as text: the passthrough is the text as written, not re-formatted floats
    assert cloud.passthrough["b"].tolist() == [f"{i}.50" for i in range(9)] + ["1;5"]


def test_decimal_commas_get_a_hint(tmp_path):
    path = _write(tmp_path / "t.csv", "a;b\n1,5;2\n3;4\n4;1\n")
    with pytest.warns(LensworkWarning, match="decimal commas are not read"):
        cloud = load_table(path)
    assert cloud.feature_names == ("b",)


@pytest.mark.parametrize(
    ("cell", "what"),
    [("", "a missing value"), ("NA", "a missing value"), ("nan", "NaN"), ("inf", "inf"),
     ("-inf", "-inf"), ("1e999", "inf")],
)
def test_missing_nan_inf_error_names_row_and_column(tmp_path, cell, what):
    path = _write(tmp_path / "t.csv", f"a,b\n1,2\n3,{cell}\n5,6\n")
    with pytest.raises(
        InputError,
        match=rf"Column 'b' in '.*t\.csv' has {what} at row 3.*invalid='exclude'",
    ):
        load_table(path)


def test_invalid_exclude_reports_rows_and_keeps_them_out(tmp_path):
    path = _write(
        tmp_path / "t.csv",
        "id,a,b,tag\nr1,1,2,x\nr2,,2,y\nr3,3,nan,z\nr4,4,5,w\nr5,inf,-inf,v\nr6,6,7,u\n",
    )
    with pytest.warns(LensworkWarning, match=r"Kept 3 of 6 rows .* out.*rows 3, 4, 6\)"):
        cloud = load_table(path, id_column="id", invalid="exclude")
    assert cloud.ids.tolist() == ["r1", "r4", "r6"]
    assert_array_equal(cloud.X, [[1, 2], [4, 5], [6, 7]])
    assert cloud.row_numbers.tolist() == [2, 5, 7]
    assert cloud.excluded == (
        ExcludedRow(3, "r2", "missing value in column 'a'", {"tag": "y"}),
        ExcludedRow(4, "r3", "NaN in column 'b'", {"tag": "z"}),
        ExcludedRow(6, "r5", "inf in column 'a'; -inf in column 'b'", {"tag": "v"}),
    )
    assert cloud.provenance["n_rows_excluded"] == 3


def test_text_in_a_feature_is_an_error_even_when_excluding(tmp_path):
    path = _write(tmp_path / "t.csv", "a,b\n1,2\n3,x\n")
    with pytest.raises(InputError, match="holds 'x' at row 3"):
        load_table(path, features=["a", "b"], invalid="exclude")


def test_constant_columns_warn_by_name(tmp_path):
    path = _write(tmp_path / "t.csv", "a,b,c,d\n1,2,5,0\n1,3,5,0\n1,4,5,0\n")
    with pytest.warns(LensworkWarning, match=r"columns 'a', 'c', 'd' in .* are constant"):
        cloud = load_table(path)
    assert cloud.d == 4
    with pytest.warns(LensworkWarning, match="constant"):
        scaled = load_table(path, scale="zscore")
    assert_array_equal(scaled.X[:, 0], 0.0)  # a constant column is centred, not divided by 0


def test_duplicate_column_names(tmp_path):
    path = _write(tmp_path / "t.csv", "a,b,a\n1,2,3\n4,5,6\n")
    with pytest.raises(InputError, match=r"header row of '.*t\.csv' has two columns named 'a' "
                                         r"\(columns 1 and 3\).*Rename one"):
        load_table(path)
    frame = pd.DataFrame([[1, 2], [3, 4]], columns=["x", "x"])
    with pytest.raises(InputError, match="The DataFrame has two columns named 'x'"):
        load_table(frame)


def test_duplicate_ids_name_the_rows(tmp_path):
    path = _write(tmp_path / "t.csv", "id,a\nx,1\ny,2\nx,3\n")
    with pytest.raises(InputError, match=r"Id 'x' appears more than once .* \(rows 2 and 4\)"):
        load_table(path, id_column="id")


def test_missing_id_is_an_error(tmp_path):
    path = _write(tmp_path / "t.csv", "id,a\nx,1\n,2\nz,3\n")
    with pytest.raises(InputError, match="has no id at row 3"):
        load_table(path, id_column="id")


def test_unknown_feature_and_id_columns_list_the_valid_ones(tmp_path):
    path = _write(tmp_path / "t.csv", "flow,head,tag\n1,2,a\n3,4,b\n")
    with pytest.raises(ParameterError, match=r"Unknown feature column 'flw'.*Did you mean "
                                             r"'flow'\? Valid columns: 'flow', 'head', 'tag'"):
        load_table(path, features=["flw"])
    with pytest.raises(ParameterError, match=r"Unknown id column 'ID'.*Valid columns: 'flow'"):
        load_table(path, id_column="ID")
    with pytest.raises(ParameterError, match=r"position 3 is out of range.*has 3 columns"):
        load_table(path, features=[3])
    with pytest.raises(ParameterError, match="listed twice"):
        load_table(path, features=["flow", 0])
    with pytest.raises(ParameterError, match="both as the id column and as a feature"):
        load_table(path, features=["flow"], id_column="flow")
    with pytest.raises(ParameterError, match="empty list"):
        load_table(path, features=[])


def test_fewer_rows_than_needed(tmp_path):
    path = _write(tmp_path / "t.csv", "a,b\n1,2\n3,4\n5,6\n")
    with pytest.raises(InputError, match=r"has 3 usable rows \(3 read\); at least 5 are needed"):
        load_table(path, min_rows=5)
    path = _write(tmp_path / "u.csv", "a,b\n1,2\n3,\n")
    with pytest.raises(InputError, match=r"1 usable row \(2 read, 1 more kept out"), \
            pytest.warns(LensworkWarning, match="Kept 1 of 2 rows"):
        load_table(path, invalid="exclude")


def test_single_column_tables(tmp_path):
    path = _write(tmp_path / "id.csv", "id\nA\nB\n")
    with pytest.raises(InputError, match=r"no feature columns: its only column, 'id', is the id"):
        load_table(path, id_column="id")
    path = _write(tmp_path / "text.csv", "name\nA\nB\n")
    with pytest.raises(InputError, match=r"no feature columns: no column holds only numbers"):
        load_table(path)
    path = _write(tmp_path / "semi.txt", "a b c\n1 2 3\n4 5 6\n")
    with pytest.raises(InputError, match=r"no feature columns.*spaces.*pass delimiter=' '"):
        load_table(path)
    path = _write(tmp_path / "one.csv", "value\n1.5\n2.5\n4\n")
    cloud = load_table(path)  # a single numeric column is valid 1-D data
    assert cloud.X.shape == (3, 1) and cloud.feature_names == ("value",)


def test_huge_values_overflow_squared_distances(tmp_path):
    from scipy.spatial.distance import pdist

    path = _write(tmp_path / "t.csv", "a,b\n1e200,1\n2,3\n-5,4\n")
    with pytest.raises(
        InputError,
        match=r"Column 'a' in '.*t\.csv' holds 1e\+200 at row 2.*overflow.*scale='zscore'",
    ):
        load_table(path, scale=None)  # kept in its units
    with pytest.warns(UserWarning, match=r"differ in range by 3\.33e\+199x"):
        assert np.isfinite(load_table(path).X).all()  # the default (auto) standardises
    X = np.array([[1e200, 1.0], [2.0, 3.0], [-5.0, 4.0]])
    with np.errstate(over="ignore"):  # scipy's pdist as the reference: it does overflow
        assert not np.isfinite(pdist(X, "sqeuclidean")).all()
    cloud = load_table(path, scale="zscore")  # scaling first, as asked: then it is fine
    assert np.isfinite(pdist(cloud.X, "sqeuclidean")).all()
    # Just below the bound 4 d x^2 < max float64 squared distances stay finite (pdist again).
    limit = np.sqrt(np.finfo(np.float64).max / (4 * 2))
    Y = np.array([[0.99 * limit, 0.99 * limit], [-0.99 * limit, -0.99 * limit]])
    assert np.isfinite(pdist(load_table(Y).X, "sqeuclidean")).all()
    with pytest.raises(InputError, match="overflow"):
        load_table(Y * 1.02)


@pytest.mark.parametrize("shape", [(), (2, 2, 2), (1, 2, 3, 4)])
def test_arrays_that_are_not_two_dimensional(shape):
    with pytest.raises(InputError, match=rf"The array has {len(shape)} dimensions"):
        load_table(np.zeros(shape))


def test_non_utf8_bytes(tmp_path):
    path = tmp_path / "latin.csv"
    path.write_bytes(b"a,b\n1,2\n3,4\n" + "5,caf\u00e9\n".encode("latin-1"))
    with pytest.raises(InputError, match=r"is not UTF-8 text: row 4 holds the byte 0xe9.*UTF-8"):
        load_table(path)


def test_utf16_and_binary_files(tmp_path):
    path = tmp_path / "w.csv"
    path.write_bytes("a,b\n1,2\n".encode("utf-16"))
    with pytest.raises(InputError, match="UTF-16 text; lenswork reads UTF-8"):
        load_table(path)
    path = tmp_path / "b.csv"
    path.write_bytes(b"PK\x03\x04\x00\x00binary")
    with pytest.raises(InputError, match="looks like a binary file"):
        load_table(path)


def test_header_of_numbers_warns(tmp_path):
    path = _write(tmp_path / "t.csv", "1.5,2.5\n1,2\n3,4\n")
    with pytest.warns(LensworkWarning, match="first row .* holds only numbers"):
        load_table(path)


def test_bad_sources():
    with pytest.raises(ParameterError, match="reads a file path, a numpy array or a DataFrame"):
        load_table({"a": [1, 2]})
    with pytest.raises(InputError, match="could not be turned into a table"):
        load_table([[1, 2], [3]])
    with pytest.raises(InputError, match="no feature columns: no column holds only numbers"):
        load_table(np.array([[1 + 2j, 3], [4, 5]]))


# ---------------------------------------------------------------- random malformed input
_CELLS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(-(10**6), 10**6).map(str),
    st.sampled_from(["", "NA", "nan", "-inf", "1e200", "1e400", "x", '"', '""', "a,b", "1,5",
                     " ", "\n", "\r", "caf\u00e9", "\x00", "1;2", "|", "\t"]),
    st.text(max_size=5),
)
_DELIMS = st.sampled_from([",", ";", "\t", "|", ":", " "])
_NAMES = st.one_of(st.sampled_from(["a", "b", "id", "a", ""]), st.text(max_size=4))


def _check_cloud(cloud, min_rows):
    """Invariants of every PointCloud load_table returns."""
    assert cloud.X.dtype == np.float64 and cloud.X.ndim == 2 and cloud.X.flags["C_CONTIGUOUS"]
    assert np.isfinite(cloud.X).all()
    assert cloud.n >= min_rows and cloud.d == len(cloud.feature_names) >= 1
    assert len(cloud.ids) == cloud.n == len(cloud.row_numbers)
    assert np.all(np.diff(cloud.row_numbers) > 0)
    assert cloud.n + len(cloud.excluded) == cloud.provenance["n_rows_read"]
    for col in cloud.passthrough.values():
        assert len(col) == cloud.n


def _call_and_check(source, kwargs):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            cloud = load_table(source, **kwargs)
        except LensworkError:  # lenswork's own error types are the only ones allowed
            cloud = None
    # numpy's RuntimeWarnings (overflow, invalid value...) must not leak out either
    assert all(issubclass(w.category, LensworkWarning) for w in caught), [
        (w.category, str(w.message)) for w in caught
    ]
    if cloud is not None:
        _check_cloud(cloud, kwargs.get("min_rows", 2))


_OPTIONS = st.fixed_dictionaries({
    "features": st.one_of(
        st.none(), st.lists(st.one_of(st.integers(-1, 6), _NAMES), min_size=1, max_size=3)
    ),
    "id_column": st.one_of(st.none(), st.integers(-1, 5), _NAMES),
    "scale": st.sampled_from([None, "zscore", "robust"]),
    "invalid": st.sampled_from(["error", "exclude"]),
    "min_rows": st.integers(1, 3),
})


@settings(max_examples=150, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(
    header=st.lists(_NAMES, max_size=5),
    rows=st.lists(st.lists(_CELLS, max_size=5), max_size=8),
    delimiter=_DELIMS,
    quoted=st.booleans(),
    junk=st.one_of(st.none(), st.tuples(st.integers(0, 200), st.binary(min_size=1, max_size=3))),
    suffix=st.sampled_from([".csv", ".tsv", ".txt"]),
    given_delimiter=st.one_of(st.none(), _DELIMS),
    options=_OPTIONS,
)
def test_random_malformed_tables_raise_only_lenswork_errors(
    tmp_path, header, rows, delimiter, quoted, junk, suffix, given_delimiter, options
):
    if quoted:
        buf = io.StringIO()
        csv.writer(buf, delimiter=delimiter).writerows([header, *rows])
        text = buf.getvalue()
    else:
        text = "\n".join(delimiter.join(r) for r in [header, *rows])
    raw = text.encode("utf-8")
    if junk is not None:
        at, extra = junk
        at = min(at, len(raw))
        raw = raw[:at] + extra + raw[at:]
    path = tmp_path / f"t{suffix}"
    path.write_bytes(raw)
    _call_and_check(path, dict(options, delimiter=given_delimiter))


def _array_strategy():
    shapes = hnp.array_shapes(min_dims=0, max_dims=3, min_side=0, max_side=4)
    numeric = hnp.arrays(
        st.sampled_from([np.float64, np.float32, np.int64, np.bool_, np.complex128]), shapes,
        elements=None,
    )
    floats = hnp.arrays(
        np.float64, shapes,
        elements=st.one_of(st.floats(), st.sampled_from([1e200, -1e300, np.nan, np.inf, 0.0])),
    )
    objects = hnp.arrays(
        object, shapes,
        elements=st.one_of(st.none(), st.floats(), st.integers(-(10**400), 10**400),
                           st.text(max_size=3), st.booleans()),
    )
    text = hnp.arrays("U3", shapes)
    return st.one_of(numeric, floats, objects, text)


@settings(max_examples=150, deadline=None)
@given(array=_array_strategy(), options=_OPTIONS)
def test_random_arrays_raise_only_lenswork_errors(array, options):
    _call_and_check(array, options)


@settings(max_examples=60, deadline=None)
@given(
    columns=st.dictionaries(
        _NAMES, st.lists(st.one_of(st.none(), st.floats(), st.text(max_size=2)), min_size=3,
                         max_size=3), max_size=4,
    ),
    options=_OPTIONS,
)
def test_random_dataframes_raise_only_lenswork_errors(columns, options):
    _call_and_check(pd.DataFrame(columns) if columns else pd.DataFrame(), options)


def test_no_raw_numpy_error_reaches_the_cli(tmp_path):
    # The CLI loader is a thin layer: the same lenswork errors surface there.
    from lenswork.cli._common import load_input

    path = _write(tmp_path / "t.csv", "a,b\n1,2\n3,x\n")
    with pytest.raises(InputError, match="holds 'x' at row 3"):
        load_input(str(path), False, "1,2", None, None, False)
    with tempfile.TemporaryDirectory() as tmp:
        empty = Path(tmp) / "e.csv"
        empty.write_bytes(b"")
        with pytest.raises(InputError, match="is empty"):
            load_input(str(empty), False, None, None, None, True)


def test_auto_scale_standardises_columns_in_different_units():
    # Reference: scikit-learn's StandardScaler (population sd, as numpy's std). Columns whose
    # ranges differ by more than 100x (a count of thousands beside 0/1 flags) are z-scored;
    # sklearn's digits (one 0-16 unit, some pixels rarely lit: sd ratio 277, range ratio 16)
    # stays in its units (common practice: standardise features measured in different units).
    from sklearn.datasets import load_digits
    from sklearn.preprocessing import StandardScaler

    rng = np.random.default_rng(3)
    X = np.column_stack([rng.poisson(3000.0, 200) * 10, rng.integers(0, 2, 200),
                         rng.normal(size=200)])
    with pytest.warns(UserWarning, match=r"differ in range by [\d,]+x .*scale='none'"):
        cloud = load_table(X.astype(float))
    assert_allclose(cloud.X, StandardScaler().fit_transform(X), rtol=0, atol=1e-12)
    assert cloud.provenance["scaling"]["chosen_by"]["choice"] == "zscore"
    kept = load_table(X.astype(float), scale="none")
    assert_array_equal(kept.X, X)
    D = load_digits().data
    digits = load_table(D[:, D.std(axis=0) > 0])
    assert_array_equal(digits.X, D[:, D.std(axis=0) > 0])
    assert digits.provenance["scaling"] is None
    assert digits.provenance["scale_rule"]["choice"] == "none"
    assert digits.provenance["scale_rule"]["range_ratio"] == 16.0
