"""Tests of the `lenswork screen` command (click.testing.CliRunner on lenswork.cli.cli)."""

import csv
import json

import numpy as np
import pytest
import scipy.stats
from click.testing import CliRunner
from numpy.testing import assert_allclose

from lenswork.cli import cli


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    """One full `lenswork screen --demo` run with figures, shared by the checks below."""
    out = tmp_path_factory.mktemp("screen") / "out"
    # --progress: the runner's stderr is not a terminal, where progress is off by default
    result = CliRunner().invoke(
        cli, ["--progress", "screen", "--demo", "-o", str(out), "--ref", "flow_m3h"]
    )
    return result, out


def test_demo_screen_writes_every_file(demo_run):
    result, out = demo_run
    assert result.exit_code == 0, result.output
    names = sorted(p.name for p in out.iterdir())
    assert names == ["lenses.csv", "lenses.csv.json", "lenswork-manifest.json", "ranking.csv",
                     "ranking.json", "sheet.png", "sheet.svg"]
    assert "Selected:" in result.stdout and "rank  lens column" in result.stdout
    assert "ranking" in result.stderr  # progress, step by step, on stderr


def test_demo_screen_files_agree(demo_run):
    _, out = demo_run
    data = json.loads((out / "ranking.json").read_text())
    with open(out / "ranking.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["column"] for r in rows] == [r["column"] for r in data["ranking"]]
    chosen = [r["column"] for r in rows if r["selected"] == "true"]
    assert chosen == data["selected"] and len(chosen) == 2
    with open(out / "lenses.csv", newline="") as fh:
        lens_rows = list(csv.reader(fh))
    assert lens_rows[0] == ["snapshot", "state", *chosen]
    assert len(lens_rows) == 1 + 3000
    side = json.loads((out / "lenses.csv.json").read_text())
    assert [c["name"] for c in side["columns"]] == chosen
    # the written reference correlation agrees with scipy.stats.spearmanr on the written files
    from lenswork.demo import load_demo

    flow = load_demo().X[:, 0]
    first = np.array([float(r[2]) for r in lens_rows[1:]])
    rho = scipy.stats.spearmanr(first, flow).statistic  # reference implementation
    # the CSV holds repr() floats, so the ranks are the same: 1e-12
    assert_allclose(data["ranking"][0]["rho[flow_m3h]"], rho, rtol=0, atol=1e-12)


def test_screen_options_and_no_figures(tmp_path):
    out = tmp_path / "o"
    result = CliRunner().invoke(cli, [
        "--quiet", "screen", "--demo", "-o", str(out), "--no-figures", "-n", "3",
        "--ceiling", "0.6", "--lens", "column:name=vibration_mm_s", "--lens-format", "npy",
    ])
    assert result.exit_code == 0, result.output
    assert sorted(p.name for p in out.iterdir()) == [
        "lenses.npy", "lenses.npy.json", "lenswork-manifest.json", "ranking.csv", "ranking.json"]
    data = json.loads((out / "ranking.json").read_text())
    assert "column_vibration_mm_s" in [r["column"] for r in data["ranking"]]
    R = np.array(data["correlation"]["spearman"], dtype=float)
    idx = [data["correlation"]["columns"].index(c) for c in data["selected"]]
    sub = np.abs(R[np.ix_(idx, idx)]) - np.eye(len(idx))
    assert sub.max() <= 0.6  # never two chosen lenses above the ceiling
    assert np.load(out / "lenses.npy").shape == (3000, len(data["selected"]))
    assert "lens 1/" not in result.stderr and "ranking" not in result.stderr  # --quiet


def test_non_numeric_reference_fails_and_writes_nothing(tmp_path):
    out = tmp_path / "o"
    result = CliRunner().invoke(cli, ["screen", "--demo", "-o", str(out), "--ref", "state"])
    assert result.exit_code != 0
    assert "Reference column 'state' is not numeric" in result.output
    assert not out.exists()


def test_bad_lens_spec_fails_and_writes_nothing(tmp_path):
    out = tmp_path / "o"
    result = CliRunner().invoke(cli, ["screen", "--demo", "-o", str(out), "--lens", "dtm:mass=2"])
    assert result.exit_code != 0
    assert "'mass' parameter of dtm" in result.output
    assert not out.exists()
    result = CliRunner().invoke(cli, ["screen", "--demo", "-o", str(out), "--no-defaults"])
    assert result.exit_code != 0 and "--no-defaults needs at least one --lens" in result.output


def test_count_above_candidates_warns(tmp_path):
    out = tmp_path / "o"
    result = CliRunner().invoke(cli, [
        "screen", "--demo", "-o", str(out), "--no-defaults", "--no-figures", "-n", "5",
        "--lens", "pca", "--ceiling", "1",
    ])
    assert result.exit_code == 0, result.output
    assert "Warning: Asked for 5 lenses but only 2 candidate column(s) are usable" in result.stderr
    data = json.loads((out / "ranking.json").read_text())
    assert data["selected"] == ["pca_1", "pca_2"] or data["selected"] == ["pca_2", "pca_1"]


def test_screen_reads_a_table_file(tmp_path):
    rng = np.random.default_rng(41)
    n = 400
    t = rng.uniform(0, 2 * np.pi, n)
    X = np.c_[np.cos(t), np.sin(t), rng.normal(scale=0.1, size=n)]
    path = tmp_path / "ring.csv"
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "a", "b", "c", "temp"])
        for i in range(n):
            w.writerow([i + 1, *X[i], round(float(t[i]), 4)])
    out = tmp_path / "o"
    result = CliRunner().invoke(cli, [
        "--quiet", "screen", str(path), "--id-column", "id", "-f", "a,b,c", "-o", str(out),
        "--no-figures", "--no-defaults", "--lens", "pca", "--lens", "column:name=c",
        "--ref", "temp",
    ])
    assert result.exit_code == 0, result.output
    data = json.loads((out / "ranking.json").read_text())
    assert data["settings"]["references"] == ["temp"]
    assert data["input"]["source"].endswith("ring.csv")


def test_too_few_rows_end_in_the_screens_own_message_and_no_files(tmp_path):
    # 20 rows: the screen's minimum is named before any lens is computed (no "skipped" warnings),
    # with the option that lowers it; nothing is written (common practice: refuse before output).
    table = tmp_path / "small.csv"
    rng = np.random.default_rng(0)
    table.write_text("a,b,c\n" + "".join(
        ",".join(f"{v:.6f}" for v in row) + "\n" for row in rng.normal(size=(20, 3))))
    out = tmp_path / "out"
    result = CliRunner().invoke(cli, ["screen", str(table), "-o", str(out)])
    assert result.exit_code != 0
    assert "A screen needs at least 32 rows; the data has 20" in result.output
    assert "(--min-neighbors 30)" in result.output and "skipped" not in result.output
    assert "Traceback" not in result.output and not out.exists()
