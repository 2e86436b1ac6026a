"""Tests of the stability, bootstrap and compare commands (click's CliRunner on lenswork.cli)."""

import csv
import json

import numpy as np
import pytest
from click.testing import CliRunner

from lenswork.cli import cli


@pytest.fixture
def circle_csv(tmp_path):
    rng = np.random.default_rng(51)
    t = rng.uniform(0, 2 * np.pi, 400)
    X = np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.03, (400, 2))
    path = tmp_path / "circle.csv"
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "x", "y"])
        for i, (a, b) in enumerate(X):
            w.writerow([f"r{i}", f"{a:.6f}", f"{b:.6f}"])
    return path


def _run(*args):
    return CliRunner().invoke(cli, ["--quiet", *map(str, args)], catch_exceptions=False)


def test_stability_command(circle_csv, tmp_path):
    out = tmp_path / "st"
    # on the rank scale: the balanced default, on 400 rows, loses the loop at 10 intervals and
    # overlap 0.2 (the sparse middle of cos t gets fewer rows per interval than on ranks)
    res = _run("stability", circle_csv, "--id-column", "id", "--lens", "column:name=x",
               "--interval-counts", "6,10,12", "--overlaps", "0.2,0.3", "--cover-scale", "rank",
               "-o", out)
    assert res.exit_code == 0, res.output
    assert "Stability map of column_x on 400 rows (3 x 2 cover settings)." in res.output
    assert "loops: 1 at the default setting; the same over 6 of 6 cells around it" in res.output
    with open(out / "stability.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [(r["intervals"], r["overlap"]) for r in rows] == [
        ("6", "0.2"), ("6", "0.3"), ("10", "0.2"), ("10", "0.3"), ("12", "0.2"), ("12", "0.3")]
    assert all(r["loops"] == "1" for r in rows)
    meta = json.loads((out / "stability.csv.json").read_text())
    assert meta["lens"] == "column_x" and meta["settings"]["k"] == 15
    assert (out / "stability.png").read_bytes()[:4] == b"\x89PNG"


def test_bootstrap_command(circle_csv, tmp_path):
    out = tmp_path / "bs"
    res = _run("bootstrap", circle_csv, "--id-column", "id", "--lens", "column:name=x",
               "--resamples", 12, "--no-figure", "-o", out)
    assert res.exit_code == 0, res.output
    assert "12 resamples (subsamples of 80% of the rows, without replacement)" in res.output
    loops = next(line for line in res.output.splitlines() if line.startswith("loops"))
    assert loops.split()[1:5] == ["1", "1", "100%", "100%"]
    meta = json.loads((out / "bootstrap.json").read_text())
    assert meta["resamples"] == 12 and meta["settings"]["intervals"] == 10  # auto, resolved
    # the circle's one loop is significant and recurs (Carrière, Michel and Oudot 2018)
    line = next(x for x in res.output.splitlines() if x.startswith("loop "))
    assert line.split()[2] == "100%"
    assert [f["kind"] for f in meta["significant_features"]].count("loop") == 1
    assert len((out / "bootstrap.csv").read_text().splitlines()) == 13
    assert not (out / "bootstrap.png").exists()


def test_bootstrap_command_with_suggestion(circle_csv, tmp_path):
    res = _run("bootstrap", circle_csv, "--id-column", "id", "--lens", "column:name=x",
               "--resamples", 3, "--scheme", "bootstrap", "--suggest", "--no-figure",
               "-o", tmp_path / "bs2")
    assert res.exit_code == 0, res.output
    assert "Suggested cover: intervals " in res.output
    assert "draws with replacement, distinct rows kept" in res.output


def test_compare_command(circle_csv, tmp_path):
    out = tmp_path / "cmp"
    res = _run("compare", circle_csv, "--id-column", "id", "--lens", "column:name=x",
               "--lens", "column:name=y", "--intervals", 8, "-o", out)
    assert res.exit_code == 0, res.output
    assert "  component partition (400 rows): ARI 1.000" in res.output
    # both views are one component: the ARI of 1 is flagged trivial; the co-membership of row
    # pairs (checked against sklearn and a pair count in test_compare) is the headline
    assert "trivial: both are one block" in res.output
    meta = json.loads((out / "comparison.json").read_text())
    co = next(x for x in res.output.splitlines() if x.startswith("column:name=x vs column:name=y"))
    assert co.startswith(f"column:name=x vs column:name=y: co-membership ARI "
                         f"{meta['pairs'][0]['co_ari']:.3f}") and meta["pairs"][0]["trivial"]
    assert [v["loops"] for v in meta["views"]] == [1, 1]
    assert [v["significant"]["loops"] for v in meta["views"]] == [1, 1]
    assert meta["views"][0]["params"]["cover"]["intervals"] == [8]
    assert (out / "correspondence_1_2.csv").read_text().startswith("node_a,node_b,shared_rows")
    assert (out / "comparison.png").read_bytes()[:4] == b"\x89PNG"


def test_command_errors(circle_csv, tmp_path):
    res = _run("compare", circle_csv, "--lens", "column:name=x", "-o", tmp_path / "c")
    assert res.exit_code == 2 and "Give two views or more" in res.output
    res = _run("stability", circle_csv, "--lens", "column:name=x", "--cutoff", "far",
               "-o", tmp_path / "s")
    assert res.exit_code == 1
    # every graph command takes the same cut-off words (GraphSettings), fence included
    assert "Error: The --cutoff option must be 'auto', 'fence', 'none' or a non-negative" \
        in res.output
    res = _run("stability", circle_csv, "--lens", "column:name=x", "--interval-counts", "0,4",
               "-o", tmp_path / "s")
    assert res.exit_code == 1 and "The --interval-counts option" in res.output
    res = _run("bootstrap", circle_csv, "--lens", "column:name=x", "--overlap", "a,b",
               "-o", tmp_path / "b")
    assert res.exit_code == 1 and "The --overlap option must be a number" in res.output
    (tmp_path / "file").write_text("x")
    res = _run("stability", circle_csv, "--lens", "column:name=x", "-o", tmp_path / "file")
    assert res.exit_code != 0


def test_help_texts():
    for name in ("stability", "bootstrap", "compare"):
        res = _run(name, "--help")
        assert res.exit_code == 0 and "--lens" in res.output and "--cover-scale" in res.output
