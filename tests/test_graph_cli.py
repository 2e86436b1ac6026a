"""Tests of the `lenswork graph` command (click.testing.CliRunner on lenswork.cli.cli)."""

import csv
import math

import networkx as nx
import numpy as np
import pytest
from click.testing import CliRunner

from lenswork import LensColumn, LensTable, Workspace, load_table
from lenswork.cli import cli
from lenswork.graph import build_graph, read_graph_json


@pytest.fixture(scope="module")
def torus_csv(tmp_path_factory):
    rng = np.random.default_rng(701)
    u = rng.uniform(0, 2 * np.pi, 1500)
    v = rng.uniform(0, 2 * np.pi, 1500)
    ring = 3 + np.cos(v)
    X = np.column_stack([ring * np.cos(u), ring * np.sin(u), np.sin(v)])
    path = tmp_path_factory.mktemp("data") / "torus.csv"
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["sample", "x", "y", "z", "site"])
        for i, row in enumerate(X):
            w.writerow([f"p{i}", *(repr(float(a)) for a in row), "north" if i % 2 else "south"])
    return path


def run(*args):
    return CliRunner().invoke(cli, ["-q", *map(str, args)], catch_exceptions=False)


def test_graph_from_a_registry_lens(torus_csv, tmp_path):
    out = tmp_path / "out"
    res = run("graph", torus_csv, "--id-column", "sample", "--lens", "column:name=x",
              "--stats", "z", "-o", out)
    assert res.exit_code == 0, res.output
    # a torus with the height lens across the hole: one component, one loop
    # (Cole-McLaughlin et al. 2004)
    assert res.output.startswith("significant: 1 component, 1 loop,")
    names = sorted(p.name for p in out.iterdir())
    assert names == ["graph.graphml", "graph.json", "graph.png", "graph.svg",
                     "lenswork-manifest.json", "memberships.csv"]
    G = nx.read_graphml(out / "graph.graphml")  # networkx as reference reader
    assert "z_mean" in next(iter(G.nodes.values()))
    # the command is a thin layer: the same graph as the Python API on the same table
    cloud = load_table(torus_csv, id_column="sample")
    api = build_graph(LensTable([LensColumn("column_x", cloud.X[:, 0])], cloud), Workspace(cloud),
                      columns=["z"])
    back = read_graph_json(out / "graph.json")
    assert np.array_equal(back.membership.indices, api.membership.indices)
    assert np.array_equal(back.edge_index, api.edge_index)
    with open(out / "memberships.csv", newline="") as fh:
        header = next(csv.reader(fh))
    assert header == ["sample", "node"]


def test_graph_from_a_lens_file(torus_csv, tmp_path):
    cloud = load_table(torus_csv, id_column="sample")
    cols = [LensColumn("height", cloud.X[:, 0], lens="column"),
            LensColumn("depth", cloud.X[:, 2], lens="column")]
    lens_path, _ = LensTable(cols, cloud).write(tmp_path / "lenses.csv")  # as screen writes
    out = tmp_path / "from-file"
    res = run("graph", torus_csv, "--id-column", "sample", "--lens-file", lens_path,
              "--use", "height", "--intervals", "8", "--overlap", "0.35", "-o", out,
              "--no-figure")
    assert res.exit_code == 0, res.output
    g = read_graph_json(out / "graph.json")
    assert g.lens_columns == ("height",)
    assert g.params["cover"]["intervals"] == [8] and g.params["cover"]["overlap"] == [0.35]
    assert not (out / "graph.png").exists()
    res2 = run("graph", torus_csv, "--id-column", "sample", "--lens-file", lens_path,
               "--intervals", "5,3", "-o", tmp_path / "two", "--no-figure")
    assert res2.exit_code == 0, res2.output
    assert read_graph_json(tmp_path / "two" / "graph.json").lens_columns == ("height", "depth")


@pytest.mark.parametrize(
    ("extra", "message", "code"),
    [  # click: usage errors exit 2, errors lenswork raises (ClickException) exit 1
        ([], "Give at least one --lens or a --lens-file", 2),
        (["--lens", "column:name=x", "--use", "a"], "--use picks columns of a --lens-file", 2),
        (["--lens", "column:name=x", "--intervals", "ten"], "The --intervals option must be", 1),
        (["--lens", "column:name=x", "--cutoff", "far"], "The --cutoff option must be", 1),
        (["--lens", "column:name=x", "--overlap", "1.5"], "The --overlap option must be", 1),
        (["--lens", "column:name=x", "--color", "nope"], "no node values for 'nope'", 1),
    ],
)
def test_errors_leave_no_files(torus_csv, tmp_path, extra, message, code):
    out = tmp_path / "never"
    res = CliRunner().invoke(cli, ["-q", "graph", str(torus_csv), "--id-column", "sample",
                                   "-o", str(out), *extra])
    assert res.exit_code == code
    assert message in res.output
    assert not out.exists()  # everything is checked before the first file is written


def test_help_lists_the_options():
    res = CliRunner().invoke(cli, ["graph", "--help"])
    assert res.exit_code == 0
    for option in ("--lens", "--lens-file", "--intervals", "--overlap", "--cover-scale",
                   "--cutoff", "--min-size", "--fragments", "--layout", "--no-figure"):
        assert option in res.output


def test_graph_prints_resolved_settings_and_significance(torus_csv, tmp_path):
    # the height across the hole of a torus: one loop over the whole range (Cole-McLaughlin et
    # al. 2004), which the summary reports as significant; the auto settings are shown resolved
    res = run("graph", torus_csv, "--id-column", "sample", "--lens", "column:name=x",
              "--no-figure", "-o", tmp_path / "o")
    assert res.exit_code == 0, res.output
    min_size = round(math.log(1500) ** 1.1)  # (ln n)^1.1 (Carrière, Michel and Oudot 2018)
    assert (f"settings: intervals 10 (auto), overlap 0.3, scale balanced (auto), "
            f"min_size {min_size} (auto)") in res.output
    assert res.output.startswith("significant: 1 component, 1 loop,")
    assert "raw cycle and degree counts" in res.output.splitlines()[1]
    res = run("graph", torus_csv, "--id-column", "sample", "--lens", "column:name=x",
              "--intervals", "8", "--min-size", "5", "--no-figure", "-o", tmp_path / "p")
    assert ("settings: intervals 8, overlap 0.3, scale balanced (auto), min_size 5, clusterer "
            "graph (auto)\n") in res.output  # 1,500 rows: at most 50,000, the shared graph's rule
    res = run("graph", torus_csv, "--id-column", "sample", "--lens", "column:name=x",
              "--intervals", "8", "--min-size", "5", "--clusterer", "element-knn",
              "--cover-scale", "rank", "--no-figure", "-o", tmp_path / "r")
    assert ("settings: intervals 8, overlap 0.3, scale rank, min_size 5, clusterer "
            "element-knn\n") in res.output
    res = run("graph", torus_csv, "--id-column", "sample", "--lens", "column:name=x",
              "--intervals", "auto", "--min-size", "auto", "--no-figure", "-o", tmp_path / "q")
    assert "intervals 10 (auto)" in res.output
