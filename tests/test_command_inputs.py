"""Commands a user can steer: the same inputs on every graph command, columns chosen with ease,
names and messages a command-line user reads (click.testing.CliRunner on lenswork.cli.cli)."""

import csv
import json
import re
import warnings
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.spatial.distance import cdist
from sklearn.datasets import load_iris
from sklearn.decomposition import PCA

import lenswork as lw
from lenswork.cli import cli

ROOT = Path(__file__).resolve().parents[1]


def run(*args, quiet=True):
    return CliRunner().invoke(cli, [*(["-q"] if quiet else []), *map(str, args)],
                              catch_exceptions=False)


@pytest.fixture(scope="module")
def iris_csv(tmp_path_factory):
    """scikit-learn's bundled iris table with a row id column (Fisher 1936)."""
    data = load_iris()
    path = tmp_path_factory.mktemp("iris") / "iris.csv"
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["flower", "sl", "sw", "pl", "pw", "species"])
        for i, (row, t) in enumerate(zip(data.data, data.target, strict=True)):
            w.writerow([f"f{i:03d}", *(repr(float(v)) for v in row), data.target_names[t]])
    return path


@pytest.fixture(scope="module")
def wide_csv(tmp_path_factory):
    """An id column, a text column, eight unit-scale columns and one 1,000 times wider."""
    rng = np.random.default_rng(2104)
    n = 60
    path = tmp_path_factory.mktemp("wide") / "wide.csv"
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "label", *(f"w{i:02d}" for i in range(8)), "big"])
        for i in range(n):
            w.writerow([i + 1, f"L{i % 3}", *(f"{v:.5f}" for v in rng.normal(size=8)),
                        f"{rng.normal() * 1000:.3f}"])
    return path


# ------------------------------------------------------------------ same inputs everywhere
def test_contrast_builds_the_graph_that_graph_builds(iris_csv, tmp_path):
    # Before, contrast laid 10 intervals with min_size 10 and clusterer graph on iris's pca_1
    # (10 nodes, a row in no node) where graph, on its data-following defaults, gave 11 nodes
    # and every row in a node. Now both take GraphSettings' options and defaults.
    args = [iris_csv, "--id-column", "flower", "--scale", "zscore", "--lens", "pca_1",
            "--cover-scale", "rank", "--no-figure"]  # the issue measured on the rank scale
    g = run("graph", *args, "-o", tmp_path / "g")
    # iris's pca_1 graph has no significant feature and one component of every row, so the
    # contrast's default set is empty: --all-features tests the small ones (the graph is the same)
    c = run("contrast", *args, "--all-features", "-o", tmp_path / "c")
    assert g.exit_code == 0 and c.exit_code == 0, (g.output, c.output)
    assert g.output.splitlines()[0] == c.output.splitlines()[0]  # nodes, edges, rows in no node
    graph = json.loads((tmp_path / "g" / "graph.json").read_text())
    doc = json.loads((tmp_path / "c" / "contrast.json").read_text())
    assert doc["graph"]["params"] == graph["params"]
    shared = set(doc["graph"]["summary"]) & set(graph["summary"])
    assert len(shared) >= 10
    assert {k: doc["graph"]["summary"][k] for k in shared} == \
        {k: graph["summary"][k] for k in shared}
    assert len(graph["nodes"]) == 11 and graph["unassigned"] == []  # as the issue measured
    # the same graph from the Python API on scikit-learn's PCA coordinate (up to its sign,
    # Jolliffe 2002: a component's sign is arbitrary, and the rank cover is then mirrored)
    X = load_iris().data
    Z = (X - X.mean(0)) / X.std(0)
    pc1 = PCA(n_components=1, svd_solver="full").fit_transform(Z)[:, 0]
    ws = lw.Workspace(lw.load_table(Z))
    ref = lw.build_graph(lw.LensColumn("pca_1", pc1), ws, scale="rank")
    assert ref.n_nodes == len(graph["nodes"]) and ref.n_edges == len(graph["edges"])
    members = {frozenset(m) for m in graph["membership"]}
    assert members == {frozenset(ref.members(v).tolist()) for v in range(ref.n_nodes)}


def test_a_ranked_column_name_is_a_lens(iris_csv, tmp_path):
    out = tmp_path / "l.csv"
    res = run("compute", iris_csv, "--id-column", "flower", "--lens", "pca_2", "--lens",
              "eccentricity[p=1]", "-o", out)
    assert res.exit_code == 0, res.output
    with open(out) as fh:
        rows = list(csv.DictReader(fh))
    assert list(rows[0]) == ["flower", "species", "pca_2", "eccentricity[p=1]"]
    X = load_iris().data
    pc2 = PCA(n_components=2, svd_solver="full").fit_transform(X)[:, 1]  # scikit-learn
    got = np.array([float(r["pca_2"]) for r in rows])
    np.testing.assert_allclose(np.abs(got), np.abs(pc2), atol=1e-9)  # up to sign (Jolliffe)
    # eccentricity p = 1 from its definition, mean distance to every row (Mapper, 2007)
    ecc = np.array([float(r["eccentricity[p=1]"]) for r in rows])
    np.testing.assert_allclose(ecc, cdist(X, X).mean(axis=1), rtol=1e-10)
    res = run("compute", iris_csv, "--lens", "pcaa", "-o", tmp_path / "x.csv")
    assert res.exit_code == 1 and "Did you mean 'pca'?" in res.output
    res = run("graph", iris_csv, "--lens", "lapalcian_1", "-o", tmp_path / "x")
    assert "Did you mean 'laplacian'?" in res.output


def test_lens_file_and_use_on_compare_stability_bootstrap(iris_csv, tmp_path):
    common = [iris_csv, "--id-column", "flower", "--scale", "zscore"]
    lens_file = tmp_path / "lenses.csv"
    assert run("compute", *common, "--lens", "pca:components=2", "-o", lens_file).exit_code == 0
    # compare: one view per column of the file equals one view per --lens
    a = run("compare", *common, "--lens-file", lens_file, "--no-figure", "-o", tmp_path / "a")
    b = run("compare", *common, "--lens", "pca_1", "--lens", "pca_2", "--no-figure",
            "-o", tmp_path / "b")
    assert a.exit_code == 0 and b.exit_code == 0, (a.output, b.output)
    pairs = [json.loads((tmp_path / d / "comparison.json").read_text())["pairs"]
             for d in ("a", "b")]
    assert pairs[0] == pairs[1]
    # a --lens naming a column of the --lens-file is read from it, and --use is a view
    c = run("compare", *common, "--lens-file", lens_file, "--use", "pca_1", "--lens", "pca_2",
            "--no-figure", "-o", tmp_path / "c")
    assert c.exit_code == 0 and "pca_1 vs pca_2" in c.output
    # stability and bootstrap: --lens-file --use equals --lens
    for command, extra in (("stability", ["--interval-counts", "6,10", "--overlaps", "0.3"]),
                           ("bootstrap", ["--resamples", "3"])):
        r1 = run(command, *common, "--lens-file", lens_file, "--use", "pca_1", *extra,
                 "--no-figure", "-o", tmp_path / f"{command}1")
        r2 = run(command, *common, "--lens", "pca_1", *extra, "--no-figure",
                 "-o", tmp_path / f"{command}2")
        assert r1.exit_code == 0 and r2.exit_code == 0, (r1.output, r2.output)
        name = f"{command}.csv"
        assert (tmp_path / f"{command}1" / name).read_text() == \
            (tmp_path / f"{command}2" / name).read_text()
    res = run("compare", *common, "--lens", "pca_1", "-o", tmp_path / "d")
    assert res.exit_code == 2 and "Give two views or more" in res.output


def test_stability_grid_is_interval_counts():
    # one meaning per name: --intervals is one cover's count, the grid is --interval-counts
    res = run("stability", "--demo", "--lens", "pca_1", "--intervals", "8")
    assert res.exit_code == 2 and "No such option '--intervals'" in res.output
    X = np.random.default_rng(0).normal(size=(40, 2))
    with pytest.raises(lw.ParameterError, match="grid's interval counts are 'interval_counts'"):
        lw.stability_map(X[:, 0], lw.Workspace(X), intervals=(4, 6))


def test_aliases_say_so_and_every_command_is_in_the_readme():
    for alias, target in (("cluster-lenses", "compute"), ("cluster-graph", "graph")):
        res = run(alias, "--help")
        assert res.exit_code == 0
        assert f"Alias of `lenswork {target} TABLE --scheduler" in res.output
        params = {p.name for p in cli.commands[alias].params}
        assert params == {p.name for p in cli.commands[target].params}
        scheduler = next(p for p in cli.commands[alias].params if p.name == "scheduler")
        assert scheduler.default == "local"
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    table = readme[readme.index("## Commands"):readme.index("Every command reads")]
    for name in cli.commands:
        assert f"`lenswork {name}`" in table, name


def test_partitioned_columns_are_named_as_on_one_machine():
    from lenswork.partitioned._lenses import _parse

    cloud = SimpleNamespace(feature_names=("flow", "head"), d=2)
    names = [_parse(spec, cloud)["names"] for spec in (
        "eccentricity:p=1", "density", "density:log=false", "column:name=flow",
        "pca:components=2", "dtm:mass=0.05", "laplacian:components=1")]
    X = np.random.default_rng(5).normal(size=(50, 2))
    ws = lw.Workspace(lw.PointCloud.from_array(X, feature_names=["flow", "head"]))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        one = [lw.compute_lenses(ws, [spec]).names for spec in (
            "eccentricity:p=1", "density", "density:log=false", "column:name=flow",
            "pca:components=2", "dtm:mass=0.05", "laplacian:components=1")]
    assert names == one
    assert names[0] == ["eccentricity[p=1]"] and names[1] == ["density"]
    # a column name is a lens on partitions too, when it is a whole lens
    for name in ("eccentricity[p=1]", "column_flow", "pca_1", "density[log=false]"):
        assert _parse(name, cloud)["names"] == [name]
    with pytest.raises(lw.ParameterError, match="computed whole: 'pca_2' is one of the columns"):
        _parse("pca_2", cloud)


# ------------------------------------------------------------------ columns chosen with ease
def _features(out):
    return json.loads(Path(f"{out}.json").read_text())["input"]["features"]


@pytest.mark.parametrize(("args", "expected"), [
    (["-f", "w00:w03,~w01"], ["w00", "w02", "w03"]),           # a name range minus one
    (["-f", "3-5", "--exclude", "w02"], ["w00", "w01"]),        # 1-based positions 3 to 5
    (["--exclude", "big", "--exclude", "w00:w05"], ["w06", "w07"]),  # id column named
    (["-f", "w06:"], ["w06", "w07", "big"]),                   # an open end
])
def test_feature_selection_syntax(wide_csv, tmp_path, args, expected):
    out = tmp_path / "l.csv"
    res = run("compute", wide_csv, "--id-column", "id", *args, "--lens", "pca:components=1",
              "-o", out)
    assert res.exit_code == 0, res.output
    assert _features(out) == expected


@pytest.mark.parametrize(("args", "message"), [
    (["-f", "5-3"], "runs backwards; give the lower position first (3-5)"),
    (["-f", "w03:w01"], "runs backwards: 'w03' comes after 'w01'"),
    (["-f", "w00:w0x"], "Did you mean 'w07'?"),
    (["--id-column", "idd"], "wide.csv'. Did you mean 'id'?"),
])
def test_feature_selection_errors(wide_csv, tmp_path, args, message):
    res = run("compute", wide_csv, *args, "--lens", "pca", "-o", tmp_path / "l.csv")
    assert res.exit_code == 1 and message in res.output, res.output


def test_id_like_and_scale_warnings_and_the_features_line(wide_csv, tmp_path):
    res = CliRunner().invoke(cli, ["--progress", "compute", str(wide_csv), "--lens", "pca",
                                   "-o", str(tmp_path / "l.csv")])
    assert res.exit_code == 0, res.output
    assert re.search(r"Feature column 'id' in '[^']*wide.csv' looks like a row id", res.stderr)
    assert "(--id-column id)" in res.stderr and "(-f '~id')" in res.stderr
    with open(wide_csv) as fh:
        table = list(csv.DictReader(fh))
    cols = ["big", *(f"w{i:02d}" for i in range(8))]
    span = {k: np.ptp([float(r[k]) for r in table]) for k in cols}
    ratio = span["big"] / min(v for k, v in span.items() if k != "big")  # numpy's ptp
    assert ratio > 100
    # the default (--scale auto): ranges 100x apart are different units, standardised
    m = re.search(r"differ in range by ([\d,]+)x", res.stderr)
    assert m and int(m.group(1).replace(",", "")) == round(ratio)
    assert "--scale none" in res.stderr
    # kept in their units: the word about the standard deviations
    raw = CliRunner().invoke(cli, ["compute", str(wide_csv), "--scale", "none", "--lens", "pca",
                                   "-o", str(tmp_path / "n.csv")])
    assert raw.exit_code == 0, raw.output
    sd = {k: np.std([float(r[k]) for r in table]) for k in cols}
    ratio = sd["big"] / min(v for k, v in sd.items() if k != "big")  # numpy's population sd
    m = re.search(r"differ in scale by ([\d,]+)x", raw.stderr)
    assert m and int(m.group(1).replace(",", "")) == round(ratio)
    assert "--scale zscore" in raw.stderr
    assert "features (10): id, w00, w01, w02, w03, w04, w05, w06, w07, big; row ids 1..n" \
        in res.stderr
    # named id column, standardised features: no warning
    res = CliRunner().invoke(cli, ["compute", str(wide_csv), "--id-column", "id", "--scale",
                                   "zscore", "--lens", "pca", "-o", str(tmp_path / "m.csv")])
    assert res.exit_code == 0 and "Warning" not in res.stderr


# ------------------------------------------------------------------ names and labels
def test_cli_messages_name_options_not_python_objects(tmp_path):
    path = tmp_path / "gaps.csv"
    rows = ["a,b"] + [f"{i},{(i * 7) % 11}" for i in range(30)]
    rows[5] = "4,"
    path.write_text("\n".join(rows) + "\n")
    res = run("compute", path, "--lens", "pca", "-o", tmp_path / "l.csv")
    assert res.exit_code == 1 and "pass --skip-invalid to report" in res.output
    assert "invalid=" not in res.output
    res = CliRunner().invoke(cli, ["compute", str(path), "--skip-invalid", "--lens", "pca",
                                   "-o", str(tmp_path / "l.csv")])
    assert res.exit_code == 0 and "written to the outputs with empty lens values" in res.stderr
    assert "PointCloud" not in res.stderr
    res = CliRunner().invoke(cli, ["graph", "--demo", "--lens", "pca_2", "--lens",
                                   "laplacian_1", "--cover-scale", "rank", "--no-figure",
                                   "-o", str(tmp_path / "g")])  # rank: rows in no node
    assert res.exit_code == 0
    assert "--min-size" in res.stderr and "LensGraph" not in res.stderr, res.stderr


def test_warnings_point_at_the_caller():
    rng = np.random.default_rng(77)
    X = np.vstack([rng.normal(size=(60, 2)), 40 + rng.normal(size=(40, 2))])
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        lw.compute_lenses(lw.Workspace(X), ["laplacian"])  # a disconnected neighbour graph
    found = [w for w in caught if issubclass(w.category, lw.LensworkWarning)]
    assert found and {Path(w.filename).name for w in found} == {Path(__file__).name}


def test_a_capped_dtm_is_named_by_the_mass_used(tmp_path):
    out = tmp_path / "d.csv"
    res = run("compute", "--demo", "--lens", "dtm:mass=0.05", "-o", out)
    assert res.exit_code == 0, res.output
    with open(out) as fh:
        rows = list(csv.DictReader(fh))
    name = "dtm[mass=0.01033]"  # k = 31 of 3,000 rows: 31 / 3000 rounded down to 4 digits
    assert name in rows[0]
    side = json.loads(Path(f"{out}.json").read_text())
    col = next(c for c in side["columns"] if c["name"] == name)
    assert col["params"]["mass"] == 0.01033 and col["info"]["mass"] == 0.05
    # values: the definition with k = 31 (Chazal, Cohen-Steiner and Merigot 2011), brute force
    from lenswork.demo import load_demo

    X = load_demo(scale="zscore").X
    pick = np.arange(0, 3000, 150)
    D2 = np.sort(cdist(X[pick], X, "sqeuclidean"), axis=1)[:, :31]
    got = np.array([float(rows[i][name]) for i in pick])
    np.testing.assert_allclose(got, np.sqrt(D2.mean(axis=1)), rtol=1e-9)
    # the name read back as a lens gives the same column; --min-neighbors lifts the cap
    res = run("compute", "--demo", "--lens", name, "-o", tmp_path / "e.csv")
    assert res.exit_code == 0 and name in (tmp_path / "e.csv").read_text().splitlines()[0]
    res = run("compute", "--demo", "--lens", "dtm:mass=0.02", "--min-neighbors", "59",
              "-o", tmp_path / "f.csv")
    assert res.exit_code == 0 and "dtm[mass=0.02]" in res.output  # k = 60: no cap


def test_graph_colours_by_a_categorical_level_and_in_the_users_units(tmp_path):
    res = run("graph", "--demo", "--lens", "pca_1", "--color", "state:share=clogging",
              "--stats", "flow_m3h", "-o", tmp_path / "g")
    assert res.exit_code == 0, res.output
    assert (tmp_path / "g" / "graph.png").exists()
    res = run("graph", "--demo", "--lens", "pca_1", "--color", "state:share=clog",
              "-o", tmp_path / "h")
    assert res.exit_code == 1 and "no level 'clog'" in res.output
    assert not (tmp_path / "h").exists()
    # node means of flow_m3h in m3/h after the demo's z-scoring: the raw CSV's values
    doc = json.loads((tmp_path / "g" / "graph.json").read_text())
    with open(ROOT / "data" / "pump_stations.csv") as fh:
        raw = {r["snapshot"]: float(r["flow_m3h"]) for r in csv.DictReader(fh)}
    ids = doc["row_ids"]
    for node, members in zip(doc["nodes"], doc["membership"], strict=True):
        want = np.mean([raw[ids[i]] for i in members])
        assert node["stats"]["flow_m3h"]["mean"] == pytest.approx(want, rel=1e-12)


def test_the_pair_score_is_the_pair_merit(tmp_path):
    res = run("screen", "--demo", "--no-probe", "--no-figures", "-o", tmp_path / "s")
    assert res.exit_code == 0, res.output
    assert "pair merit" in res.output.splitlines()[0] and "gain" not in res.output
    doc = json.loads((tmp_path / "s" / "ranking.json").read_text())
    first, second = doc["ranking"][:2]
    assert "gain" not in first
    # without the probe the pair's merit is R_NX x the geometric mean of the two merits (README,
    # "pair merit"; with the probe, R_NX x the two lenses' joint merit)
    want = first["preservation"] * np.sqrt(first["merit"] * second["merit"])
    assert first["pair_merit"] == pytest.approx(want, rel=1e-9)
    header = (tmp_path / "s" / "ranking.csv").read_text().splitlines()[0]
    assert "pair_merit" in header.split(",") and "gain" not in header


def test_did_you_mean_for_use_and_stats_columns(iris_csv, tmp_path):
    lens_file = tmp_path / "lenses.csv"
    common = [iris_csv, "--id-column", "flower"]
    assert run("compute", *common, "--lens", "pca:components=2", "-o", lens_file).exit_code == 0
    res = run("graph", *common, "--lens-file", lens_file, "--use", "pca1", "-o", tmp_path / "g")
    assert res.exit_code == 1 and "--use 'pca1'" in res.output
    assert "Did you mean 'pca_1'?" in res.output and not (tmp_path / "g").exists()
    res = run("graph", *common, "--lens", "pca_1", "--stats", "sepal", "-o", tmp_path / "g")
    assert res.exit_code == 1 and "No data column 'sepal'." in res.output
    res = run("graph", *common, "--lens", "pca_1", "--stats", "pll", "-o", tmp_path / "g")
    assert "Did you mean 'pl'?" in res.output
