"""Tests of the `lenswork contrast` command (click.testing.CliRunner on lenswork.cli.cli)."""

import csv

import numpy as np
import pytest
from _strict_json import strict_loads
from click.testing import CliRunner
from numpy.testing import assert_allclose

from lenswork import Workspace, build_graph, compute_lenses, contrast_columns
from lenswork.cli import cli
from lenswork.demo import load_demo, write_demo

LENS = "laplacian:components=1"


def run(*args):
    return CliRunner().invoke(cli, ["-q", *map(str, args)], catch_exceptions=False)


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("contrast") / "out"
    res = run("contrast", "--demo", "--lens", LENS, "--feature", "flare", "--against",
              "neighbours", "--color", "state:share=clogging", "-o", out)
    return res, out


def test_demo_run_prints_writes_and_draws(demo_run):
    res, out = demo_run
    assert res.exit_code == 0, res.output
    assert "vibration_mm_s" in res.output and "bearing_temp_c" in res.output
    names = sorted(p.name for p in out.iterdir())
    assert {"contrast.csv", "contrast.json", "graph_state.png"} <= set(names)
    sheets = [n for n in names if n.startswith("columns_flare-")]
    assert sheets and all((out / n).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for n in sheets)

    doc = strict_loads((out / "contrast.json").read_text())  # RFC 8259
    assert doc["contrast"]["params"]["against"] == "neighbours"
    assert doc["lenses"][0]["name"].startswith("laplacian")


def test_cli_table_equals_the_python_call(demo_run):
    # the CLI is a thin layer: the same graph and call give the same numbers
    _, out = demo_run
    with open(out / "contrast.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    cloud = load_demo()
    ws = Workspace(cloud, random_state=0)
    lenses = compute_lenses(ws, [LENS])
    graph = build_graph(lenses, ws)  # the contrast command's defaults are GraphSettings' own
    res = contrast_columns(graph, ws, "flare", against="neighbours", lenses=lenses)
    assert [(r["feature"], r["column"]) for r in rows] == [(r.feature, r.column) for r in res.rows]
    # the CSV keeps 6 significant digits
    assert_allclose([float(r["effect"]) for r in rows], [r.effect for r in res.rows], rtol=1e-5)
    assert_allclose([float(r["qvalue"]) for r in rows], [r.qvalue for r in res.rows], rtol=1e-5)


@pytest.mark.parametrize("args, message", [
    (["--feature", "flare:99"], "No graph feature 'flare:99'"),
    (["--columns", "pressure"], "No data column 'pressure'"),
    (["--rows", "PS-00001,PS-99999"], "no row with id 'PS-99999'"),
    (["--color", "state:median"], "categorical: colour it by 'share'"),
    (["--color", "state:share=jammed"], "no level 'jammed'"),
])
def test_bad_input_is_one_line_and_writes_nothing(tmp_path, args, message):
    out = tmp_path / "out"
    res = run("contrast", "--demo", "--lens", LENS, "-o", out, *args)
    assert res.exit_code == 1
    assert message in res.output and "Traceback" not in res.output
    assert not out.exists() or not any(out.iterdir())


def test_usage_errors(tmp_path):
    res = run("contrast", "--demo", "-o", tmp_path)
    assert res.exit_code == 2 and "Give at least one --lens" in res.output
    ids = tmp_path / "ids.txt"
    ids.write_text("PS-00001\n")
    res = run("contrast", "--demo", "--lens", LENS, "--rows", "PS-00001", "--rows-file", ids)
    assert res.exit_code == 2 and "not both" in res.output


def test_rows_file_and_troublesome_columns_on_a_table(tmp_path):
    # a table with a constant column and a column of hundreds of levels: both reported, no crash
    path = write_demo(tmp_path / "pumps.csv")
    rng = np.random.default_rng(7301)
    lines = path.read_text().splitlines()
    tags = rng.integers(0, 400, len(lines) - 1)
    lines = [lines[0] + ",site,crew"] + [
        f"{ln},north,crew-{t:03d}" for ln, t in zip(lines[1:], tags)]
    path.write_text("\n".join(lines) + "\n")
    ids_file = tmp_path / "ids.txt"
    cloud = load_demo()
    state = np.asarray(cloud.passthrough["state"])
    chosen = cloud.ids[state == "bearing_wear"]
    ids_file.write_text("snapshot\n" + "\n".join(map(str, chosen)) + "\n")
    out = tmp_path / "out"
    res = run("contrast", path, "--id-column", "snapshot", "--scale", "zscore", "--lens", LENS,
              "--rows-file", ids_file, "--max-levels", "40", "--no-figure", "-o", out)
    assert res.exit_code == 0, res.output
    assert "column 'site' constant" in res.output
    assert "'crew'" in res.output and "pooled" in res.output
    # the bearing-wear rows named by id: vibration sets them apart most (demo.py ground truth)
    with open(out / "contrast.csv", newline="") as fh:
        rows = [r for r in csv.DictReader(fh) if r["feature"] == "rows"]
    assert rows[0]["column"] in {"vibration_mm_s", "bearing_temp_c", "state"}
    assert sorted(p.name for p in out.iterdir()) == ["contrast.csv", "contrast.json",
                                                     "lenswork-manifest.json"]


def test_default_tests_the_significant_features_and_all_features_the_rest(tmp_path):
    cloud = load_demo()
    ws = Workspace(cloud, random_state=0)
    graph = build_graph(compute_lenses(ws, [LENS]), ws)
    s = graph.summary()
    default, every = tmp_path / "default", tmp_path / "every"
    res = run("contrast", "--demo", "--lens", LENS, "-o", default)
    assert res.exit_code == 0, res.output
    # the graph's summary comes first, led by its significant counts; then the rule of the stars
    assert res.output.startswith(f"significant: {s.headline()}")
    assert "|Cliff's delta| >= 0.147 (Romano et al. 2006)" in res.output
    assert "--all-features" in res.output
    doc = strict_loads((default / "contrast.json").read_text())
    tested = {f["label"] for f in doc["contrast"]["features"]}
    skipped = {x["feature"] for x in doc["contrast"]["skipped"] if x["feature"]}
    expect = {lab for lab, f in s.labelled() if f.kind == "component" or f.significant}
    assert tested | skipped == expect
    sheets = [p for p in default.iterdir() if p.name.startswith("columns_")]
    starred = {r["feature"] for r in doc["contrast"]["columns"] if r["significant"]}
    assert len(sheets) == len(starred) <= len(expect)  # one sheet per feature with a star
    res = run("contrast", "--demo", "--lens", LENS, "--all-features", "--no-figure", "-o", every)
    assert res.exit_code == 0, res.output
    doc = strict_loads((every / "contrast.json").read_text())
    tested = {f["label"] for f in doc["contrast"]["features"]}
    skipped = {x["feature"] for x in doc["contrast"]["skipped"] if x["feature"]}
    assert tested | skipped == {lab for lab, _ in s.labelled()}
    assert doc["contrast"]["params"]["all_features"] is True


def test_all_features_draws_only_features_with_a_tested_column(tmp_path):
    # the one component of pca_1's graph holds 2,999 of 3,000 rows: every column is untested
    # there (fewer than two values on one side), so it gets no sheet instead of an error
    out = tmp_path / "all"
    res = run("contrast", "--demo", "--lens", "pca_1", "--all-features", "-o", out)
    assert res.exit_code == 0, res.output
    doc = strict_loads((out / "contrast.json").read_text())
    tested = {r["feature"] for r in doc["contrast"]["columns"]}
    sheets = {p.name for p in out.iterdir() if p.name.startswith("columns_")}
    assert sheets and len(sheets) <= len(tested)
    assert "columns_component-1.png" not in sheets
