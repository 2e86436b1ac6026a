"""``to_frame()`` of every result against the files its writers produce.

One name everywhere: ``to_frame``. The reference for each frame is the file
the same object writes (CSV read back by pandas' own CSV reader or the
standard library's :mod:`csv`; JSON by :mod:`json`): a frame must hold the
rows and columns a user would get by reading the file, value for value.
The data are scikit-learn's bundled iris measurements (Fisher 1936) and
seeded circles.
"""

from __future__ import annotations

import csv
import json
import sys
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose
from sklearn.datasets import load_iris

from lenswork import (
    LensColumn,
    LensTable,
    LensworkError,
    ParameterError,
    PointCloud,
    Workspace,
    bootstrap_graph,
    compare_views,
    screen,
    stability_map,
)
from lenswork._frame import records_frame

pd = pytest.importorskip("pandas")


@pytest.fixture(scope="module")
def iris_table():
    X = load_iris().data  # scikit-learn's bundled copy of Fisher's iris data
    ids = [f"flower{i:03d}" for i in range(len(X))]
    cloud = PointCloud.from_array(X, feature_names=["sl", "sw", "pl", "pw"], ids=ids)
    centred = X - X.mean(axis=0)
    return LensTable([LensColumn("petal", X[:, 2]), LensColumn("sepal", X[:, 0]),
                      LensColumn("width", X[:, 1]),
                      LensColumn("norm", np.sqrt((centred ** 2).sum(axis=1)))], cloud)


@pytest.fixture(scope="module")
def circle():
    rng = np.random.default_rng(1402)
    t = rng.uniform(0, 2 * np.pi, 400)
    X = np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.03, (400, 2))
    return X, Workspace(X)


def test_lens_table_frame_equals_its_csv(iris_table, tmp_path):
    path = iris_table.write(tmp_path / "lenses.csv")[0]
    ref = pd.read_csv(path, index_col=0)  # pandas' CSV reader as the reference
    frame = iris_table.to_frame()
    assert frame.shape == (150, 4) and list(frame.columns) == list(ref.columns)
    assert frame.index.name == ref.index.name and list(frame.index) == list(ref.index)
    assert_allclose(frame.to_numpy(), ref.to_numpy(), rtol=1e-15)


def test_screen_frame_equals_ranking_csv(iris_table, tmp_path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = screen(iris_table, count=2)
    res.write(tmp_path / "out", figures=False)
    with open(tmp_path / "out" / "ranking.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))  # the standard library's CSV reader
    frame = res.to_frame()
    # One row per candidate, in the file's order; the file's columns plus the pick order.
    assert list(frame.index) == [r["column"] for r in rows]
    header = [h for h in rows[0] if h != "column"]
    assert [c for c in frame.columns if c != "order"] == header
    assert frame.shape == (len(iris_table.names), len(header) + 1)
    for r in rows:
        got = frame.loc[r["column"]]
        assert got["rank"] == int(r["rank"])
        assert got["selected"] == (r["selected"] == "true")
        assert json.loads(got["params"]) == json.loads(r["params"])
        for h in ("spread", "merit", "pair_merit", "structure", "partner_rho"):
            assert float(got[h]) == pytest.approx(float(r[h]), rel=1e-15)
    assert frame["order"].dropna().tolist() == [1, 2]
    assert frame.index[frame["selected"]].tolist() == res.selected


def test_graph_frames_equal_the_graph_json(circle, tmp_path):
    X, ws = circle
    from lenswork.graph import build_graph

    g = build_graph(X[:, 0], ws, intervals=8, overlap=0.3)
    doc = json.loads(g.write_json(tmp_path / "g.json").read_text())
    nodes, edges = g.to_frame("nodes"), g.to_frame("edges")
    assert len(nodes) == len(doc["nodes"]) and len(edges) == len(doc["edges"])
    for nd in doc["nodes"]:
        row = nodes.loc[nd["id"]]
        assert row["size"] == nd["size"] == len(doc["membership"][nd["id"]])
        assert row["element"] == ",".join(map(str, nd["element"]))
        for stat, value in nd["stats"]["lens"].items():
            assert row[f"lens_{stat}"] == value
    assert edges[["source", "target", "shared"]].to_numpy().tolist() == [
        [e["source"], e["target"], e["shared"]] for e in doc["edges"]]
    assert edges["jaccard"].tolist() == [e["jaccard"] for e in doc["edges"]]


def test_stability_map_frame_equals_its_csv(circle, tmp_path):
    X, ws = circle
    smap = stability_map(X[:, 0], ws, interval_counts=(6, 8, 10), overlaps=(0.2, 0.4))
    path, _ = smap.write(tmp_path / "map.csv")
    ref = pd.read_csv(path)
    frame = smap.to_frame()
    assert frame.shape == (3 * 2, 2 + len(smap.counts))
    pd.testing.assert_frame_equal(frame, ref)  # dtypes too: int64 counts, float64 overlap
    # A circle: one loop at every cell with enough intervals (the loop is the circle's H1).
    assert set(frame.loc[frame["intervals"] >= 8, "loops"]) == {1}


def test_bootstrap_frames_equal_its_csv_and_json(circle, tmp_path):
    X, ws = circle
    res = bootstrap_graph(X[:, 0], ws, resamples=6, random_state=3)
    files = res.write(tmp_path / "boot", figures=False)
    ref = pd.read_csv(files["bootstrap.csv"])
    pd.testing.assert_frame_equal(res.to_frame(), ref)
    assert res.to_frame().shape == (6, 2 + len(res.features))
    doc = json.loads(files["bootstrap.json"].read_text())
    feats = res.to_frame("features")
    assert list(feats.columns) == list(doc["features"][0])
    assert feats["feature"].tolist() == [f["feature"] for f in doc["features"]]
    assert [json.loads(d) for d in feats["distribution"]] == [
        f["distribution"] for f in doc["features"]]
    # The share of each count is the frequency of that count over the resamples.
    loops = res.to_frame()["loops"]
    assert json.loads(feats.set_index("feature").loc["loops", "distribution"]) == {
        str(k): v / 6 for k, v in loops.value_counts().sort_index().items()}


def test_comparison_frames_equal_comparison_json(circle, tmp_path):
    X, ws = circle
    cmp = compare_views({"x": X[:, 0], "y": X[:, 1], "r": np.arctan2(X[:, 1], X[:, 0])}, ws)
    doc = json.loads(cmp.write(tmp_path / "cmp", figures=False)["comparison.json"].read_text())
    pairs, views = cmp.to_frame(), cmp.to_frame("views")
    assert pairs.shape == (3, len(doc["pairs"][0])) and list(pairs.columns) == list(doc["pairs"][0])
    assert views.shape == (3, len(doc["views"][0])) and list(views.columns) == list(doc["views"][0])
    for row, ref in zip(pairs.to_dict("records"), doc["pairs"], strict=True):
        for key, value in ref.items():
            got = json.loads(row[key]) if isinstance(value, list) else row[key]
            assert got == value, key
    assert [json.loads(p) for p in views["params"]] == [v["params"] for v in doc["views"]]
    with pytest.raises(ParameterError, match="'pairs', 'views'"):
        cmp.to_frame("rows")


def test_without_pandas_every_to_frame_says_so(iris_table, circle, monkeypatch):
    X, ws = circle
    smap = stability_map(X[:, 0], ws, interval_counts=(6,), overlaps=(0.3,))
    monkeypatch.setitem(sys.modules, "pandas", None)  # `import pandas` raises ImportError
    for obj, what in ((iris_table, "a LensTable"), (smap, "a StabilityMap")):
        with pytest.raises(LensworkError, match=f"Converting {what} to a DataFrame needs "
                                                f"pandas.*pip install pandas"):
            obj.to_frame()


def test_records_frame_without_records_keeps_the_columns():
    frame = records_frame([], columns=["a", "b"])
    assert frame.shape == (0, 2) and list(frame.columns) == ["a", "b"]
