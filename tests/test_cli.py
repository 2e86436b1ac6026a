"""The CLI scaffolding: version, help, quiet, one-line errors."""

from click.testing import CliRunner

from lenswork import __version__
from lenswork.cli import cli


def test_version_and_help():
    runner = CliRunner()
    assert __version__ in runner.invoke(cli, ["--version"]).output
    out = runner.invoke(cli, ["--help"]).output
    for command in ("screen", "lenses", "compute", "graph", "make-demo"):
        assert command in out


def test_missing_table_is_one_clear_line(tmp_path):
    result = CliRunner().invoke(cli, ["compute", str(tmp_path / "nope.csv"), "--lens", "pca"])
    assert result.exit_code == 1
    assert "Error:" in result.output and "nope.csv" in result.output
    assert "Traceback" not in result.output


def test_bad_lens_spec_is_one_clear_line():
    result = CliRunner().invoke(cli, ["compute", "--demo", "--lens", "pca:components=0"])
    assert result.exit_code == 1
    assert "'components' parameter of pca must be an int" in result.output


def test_lenses_lists_registry():
    out = CliRunner().invoke(cli, ["lenses"]).output
    for name in ("density", "eccentricity", "laplacian", "pca", "dtm", "knn_distance", "column"):
        assert name in out


def test_compute_writes_columns_and_sidecar(tmp_path):
    out = tmp_path / "l.csv"
    result = CliRunner().invoke(
        cli, ["-q", "compute", "--demo", "--lens", "pca:components=2", "--lens", "knn_distance",
              "-o", str(out)],
    )
    assert result.exit_code == 0, result.output
    header = out.read_text().splitlines()[0]
    assert header == "snapshot,state,pca_1,pca_2,knn_distance"
    assert (tmp_path / "l.csv.json").exists()
