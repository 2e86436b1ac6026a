"""Hostile input and faults beyond issue 22's list, one test per case of the audit.

Each test names its case id in tests/benchmarks/audit_faults.py (X<n>). Exit codes
of a signal: 128 + the signal number, as POSIX shells report a process ended by
one (common practice: 130 for SIGINT, 143 for SIGTERM).
"""

from __future__ import annotations

import csv
import os
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from lenswork import InputError, ParameterError, load_table
from lenswork._io import read_manifest
from lenswork.cli import cli
from lenswork.lenses import parse_lens

SRC = str(Path(__file__).resolve().parents[1] / "src")

# The CLI in a subprocess that sends itself a signal at the k-th os.replace / os.rename:
# the moment its files are moved into place.
_SIGNALLED = textwrap.dedent("""
    import os, sys
    kill_at, sig = int(sys.argv[1]), int(sys.argv[2])
    calls = [0]
    def wrap(real):
        def call(*a, **kw):
            calls[0] += 1
            if calls[0] == kill_at:
                os.kill(os.getpid(), sig)
            return real(*a, **kw)
        return call
    os.replace, os.rename = wrap(os.replace), wrap(os.rename)
    from lenswork.cli import main
    sys.argv[0] = "lenswork"
    main(sys.argv[3:])
""")


def _env():
    return dict(os.environ, PYTHONPATH=SRC + os.pathsep + os.environ.get("PYTHONPATH", ""),
                MPLBACKEND="Agg")


def _table(path, n=200, seed=0, extra=None):
    rng = np.random.default_rng(seed)
    t = rng.uniform(0, 2 * np.pi, n)
    X = np.column_stack([np.cos(t), np.sin(t), 0.1 * rng.normal(size=n)])
    extra = extra or {}
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "x", "y", "z", *extra])
        w.writerows([f"r{i}", *X[i], *[v[i] for v in extra.values()]] for i in range(n))
    return path


def _hidden(folder):
    folder = Path(folder)
    inside = [p.name for p in folder.iterdir() if p.name.startswith(".")] if folder.is_dir() \
        else []
    beside = [p.name for p in folder.parent.iterdir() if p.name.startswith(f".{folder.name}.")]
    return inside + beside


@pytest.mark.parametrize("sig, code, at", [(signal.SIGINT, 130, 1), (signal.SIGTERM, 143, 2)])
def test_x16_x18_signal_while_moving_in_ends_with_a_message_and_a_whole_set(tmp_path, sig,
                                                                           code, at):
    """X16 / X18: Ctrl-C or SIGTERM while graph moves its files in."""
    data = _table(tmp_path / "t.csv")
    out = tmp_path / "g"
    argv = ["--quiet", "graph", str(data), "--id-column", "id", "-l", "pca", "--no-figure",
            "-o", str(out)]
    assert CliRunner().invoke(cli, argv + ["--intervals", "3"]).exit_code == 0
    first = {p.name: p.read_bytes() for p in out.iterdir()}
    run = subprocess.run([sys.executable, "-c", _SIGNALLED, str(at), str(int(sig)), *argv],
                         env=_env(), capture_output=True, text=True, timeout=120)
    assert run.returncode == code, run.stderr
    assert "interrupted" in run.stderr and "Traceback" not in run.stderr
    assert _hidden(out) == []  # no staging folder, journal or temporary file left
    now = {p.name: p.read_bytes() for p in out.iterdir()}
    doc = read_manifest(out)
    # the earlier set, or (signals are held while moving in) the whole new one
    assert now == first or sorted(now) == sorted(f["name"] for f in doc["files"]) + [
        "lenswork-manifest.json"]


def test_x17_sigint_while_computing_removes_the_staging_folder(tmp_path):
    """X17: Ctrl-C before any file is in place: exit 130, nothing staged is left."""
    data = _table(tmp_path / "t.csv")
    out = tmp_path / "s"
    # the first rename is a staged file's: the run is still writing into its staging folder
    run = subprocess.run([sys.executable, "-c", _SIGNALLED, "1", str(int(signal.SIGINT)),
                          "--quiet", "screen", str(data), "--id-column", "id", "--no-probe",
                          "--no-figures", "-o", str(out)],
                         env=_env(), capture_output=True, text=True, timeout=120)
    assert run.returncode == 130, run.stderr
    assert "interrupted (SIGINT)" in run.stderr and "Traceback" not in run.stderr
    assert not out.exists() and _hidden(out) == []


def test_x13_output_file_that_is_the_input_is_refused(tmp_path):
    """X13: -o naming the input table (compute and report) never replaces it."""
    data = _table(tmp_path / "t.csv")
    before = data.read_bytes()
    for argv in (["compute", str(data), "--id-column", "id", "-l", "pca", "-o", str(data)],
                 ["report", str(data), "--id-column", "id", "-o", str(data)]):
        res = CliRunner().invoke(cli, ["--quiet", *argv])
        assert res.exit_code == 1, res.output
        assert "is the input file" in res.output and "Nothing was computed" in res.output
        assert data.read_bytes() == before


def test_x10_a_field_of_a_million_characters_is_read(tmp_path):
    """X10: csv's default field limit is 128 KiB; a long text cell is still a cell."""
    path = _table(tmp_path / "long.csv", extra={"note": ["x" * (10**6 if i == 5 else 3)
                                                         for i in range(200)]})
    cloud = load_table(path, id_column="id")
    assert cloud.n == 200 and list(cloud.feature_names) == ["x", "y", "z"]
    assert len(cloud.passthrough["note"][5]) == 10**6


def test_x21_lens_specs_repeated_keys_and_long_names(tmp_path):
    """X21: a key given twice is refused; a 10,000-character spec gives a short message."""
    with pytest.raises(ParameterError, match="'components' is given twice"):
        parse_lens("pca:components=2,components=3")
    data = _table(tmp_path / "t.csv")
    for spec, text in (("x" * 10_000, "10,000 characters"), ("y" * 300, "Unknown lens")):
        res = CliRunner().invoke(cli, ["--quiet", "compute", str(data), "-l", spec, "-o",
                                       str(tmp_path / "l.csv")])
        assert res.exit_code == 1 and text in res.output
        assert len(res.output) < 400, len(res.output)


def test_x37_a_device_or_fifo_as_table_is_refused_at_once(tmp_path):
    """X37: /dev/zero never ends and a FIFO cannot be read twice: refused before reading."""
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    for path in (fifo, Path("/dev/zero")):
        with pytest.raises(InputError, match="not a regular file"):
            load_table(path)


def test_x15_output_folder_removed_while_its_files_are_written(tmp_path, monkeypatch):
    """X15: the folder (and its parent) disappear during the write: a message, no traceback."""
    import shutil

    data = _table(tmp_path / "t.csv")
    parent = tmp_path / "p"
    out = parent / "g"
    real = os.replace

    def vanish(a, b):
        shutil.rmtree(parent, ignore_errors=True)
        return real(a, b)

    monkeypatch.setattr(os, "replace", vanish)
    res = CliRunner().invoke(cli, ["--quiet", "graph", str(data), "--id-column", "id", "-l",
                                   "pca", "--no-figure", "-o", str(out)])
    assert res.exit_code == 1 and "Writing" in res.output and "failed" in res.output
    assert res.exception is None or isinstance(res.exception, SystemExit)


def test_x23_x30_library_names_read_as_options():
    """X23 / X30: screen's and the graph's parameters are named by their options."""
    from lenswork.cli._common import cli_text

    assert cli_text("The 'count' parameter of screen must be an int in [1, 16].") == \
        "The --count option must be an int in [1, 16]."
    assert cli_text("No cover element holds a group of at least min_size=299 points") == \
        "No cover element holds a group of at least --min-size 299 points"


def test_x47_decimal_commas_are_named(tmp_path):
    """X47: a semicolon file written with decimal commas (0,126) says so."""
    path = tmp_path / "euro.csv"
    path.write_text("id;a;b\n" + "".join(f"r{i};0,{i:03d};-1,5\n" for i in range(50)))
    with pytest.raises(InputError, match=r"column 'a' holds '0,000' at row 2, a number written "
                                         r"with a decimal comma"):
        load_table(path, id_column="id")


def test_x51_an_unknown_output_ending_is_refused_before_the_work(tmp_path, monkeypatch):
    """X51: compute -o l.txt stops before any lens is computed, naming the endings."""
    import lenswork.cli._lenses as lenses_cli

    data = _table(tmp_path / "t.csv")

    def never(*args, **kwargs):
        raise AssertionError("computed before the output was checked")

    monkeypatch.setattr(lenses_cli, "compute_lenses", never)
    res = CliRunner().invoke(cli, ["--quiet", "compute", str(data), "-l", "pca", "-o",
                                   str(tmp_path / "l.txt")])
    assert res.exit_code == 2 and ".csv, .tsv" in res.output and "format=" not in res.output


def test_i53_rows_file_ids_with_commas_tabs_and_formulas(tmp_path):
    """I5.3 (audit): --rows-file lines are whole ids even when they hold commas."""
    ids = [f'=HYPERLINK("x","y")_{i}' if i % 3 == 0 else f"\tT_{i}" if i % 3 == 1 else f"a,{i}"
           for i in range(200)]
    rng = np.random.default_rng(1)
    path = tmp_path / "t.csv"
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "x", "y"])
        w.writerows([ids[i], *rng.normal(size=2)] for i in range(200))
    (tmp_path / "rows.txt").write_text("\n".join(ids[:40]) + "\n")
    res = CliRunner().invoke(cli, ["--quiet", "contrast", str(path), "--id-column", "id", "-l",
                                   "pca", "--rows-file", str(tmp_path / "rows.txt"),
                                   "--no-figure", "-o", str(tmp_path / "k")])
    assert res.exit_code == 0, res.output
    text = (tmp_path / "k" / "contrast.csv").read_text()
    assert "\n=" not in text and ",=" not in text  # OWASP: no cell starts a formula


def test_i26_cluster_compute_rerun_into_its_own_folder(tmp_path):
    """I2.6 (audit): a second `compute --scheduler` into the same -o folder is a rerun."""
    pytest.importorskip("distributed")
    pd = pytest.importorskip("pandas")
    pytest.importorskip("pyarrow")
    out = tmp_path / "lens"
    for name, n, parts in (("a", 600, 3), ("b", 200, 1)):
        folder = tmp_path / name
        folder.mkdir()
        for j, rows in enumerate(np.array_split(np.arange(n), parts)):
            _table(folder / f"part-{j}.csv", n=len(rows), seed=j)
            text = (folder / f"part-{j}.csv").read_text().splitlines()
            (folder / f"part-{j}.csv").write_text("\n".join(
                [text[0]] + [f"{name}{rows[0] + i}," + ln.split(",", 1)[1]
                             for i, ln in enumerate(text[1:])]) + "\n")
        res = CliRunner().invoke(cli, ["--quiet", "compute", str(folder), "--scheduler", "local",
                                       "--workers", "1", "--id-column", "id", "-l", "pca", "-o",
                                       str(out)])
        assert res.exit_code == 0, res.output
    back = pd.read_parquet(out)
    assert len(back) == 200 and back["id"].is_unique and back["id"].str.startswith("b").all()


def test_x59_dangling_link_and_a_folder_in_the_way(tmp_path):
    """X59: -o a symlink to a missing folder is named as such; a folder where a file of the
    set goes stops the run before any file of the earlier set is replaced."""
    data = _table(tmp_path / "t.csv")
    link = tmp_path / "link"
    link.symlink_to(tmp_path / "missing")
    res = CliRunner().invoke(cli, ["--quiet", "graph", str(data), "--id-column", "id", "-l",
                                   "pca", "--no-figure", "-o", str(link)])
    assert res.exit_code == 1 and "symbolic link" in res.output and "missing" in res.output
    out = tmp_path / "g"
    argv = ["--quiet", "graph", str(data), "--id-column", "id", "-l", "pca", "-o", str(out)]
    assert CliRunner().invoke(cli, argv + ["--no-figure"]).exit_code == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    (out / "graph.svg").mkdir()
    res = CliRunner().invoke(cli, argv + ["--intervals", "3"])
    assert res.exit_code == 1 and "graph.svg" in res.output and "in the way" in res.output
    assert {p.name: p.read_bytes() for p in out.iterdir() if p.is_file()} == before
    assert _hidden(out) == []


def test_x53_local_cluster_workers_leave_ctrl_c_to_lenswork():
    """X53: a terminal's Ctrl-C reaches every process of the group; the workers ignore it
    (the run closes them, with one message) instead of each printing a traceback."""
    pytest.importorskip("distributed")
    from lenswork.partitioned import start_client

    client = start_client("local", workers=1)
    try:
        seen = client.run(lambda: int(signal.getsignal(signal.SIGINT)))
    finally:
        client.close()
    assert list(seen.values()) == [int(signal.SIG_IGN)]
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler  # restored here
