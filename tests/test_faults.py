"""Faults, hostile input and abuse: each case ends in a clear message or an intact output set.

The output-set rule (README, "Output files"): a run's files appear all together or not at
all, lenswork-manifest.json (written last) lists each file's size and SHA-256, and the next
run removes what an earlier run wrote and left behind. Kills are real SIGKILLs of a
subprocess; a full disk is a file-size limit (RLIMIT_FSIZE, POSIX setrlimit) on the
subprocess; a locked folder is an immutable one (chattr +i, which stops root too) or a
read-only bind mount. CSV injection: OWASP, "CSV Injection" (a leading =, +, -, @, tab or
carriage return starts a formula; a leading apostrophe makes the cell text).
"""

from __future__ import annotations

import csv
import json
import os
import shutil
import signal
import subprocess
import sys
import textwrap
import time
import warnings
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from lenswork import (
    InputError,
    LensColumn,
    LensTable,
    LensworkWarning,
    OutputError,
    ParameterError,
    PointCloud,
    load_table,
)
from lenswork._io import MANIFEST, OutputSet, check_against_manifest, read_manifest, safe_cell
from lenswork.cli import cli

SRC = str(Path(__file__).resolve().parents[1] / "src")
CLI = "import sys; from lenswork.cli import main; sys.argv[0] = 'lenswork'; main()"


def _env():
    env = dict(os.environ, PYTHONPATH=SRC + os.pathsep + os.environ.get("PYTHONPATH", ""),
               MPLBACKEND="Agg")
    return env


def _table_csv(path, n, seed=0):
    rng = np.random.default_rng(seed)
    t = rng.uniform(0, 2 * np.pi, n)
    X = np.column_stack([np.cos(t), np.sin(t), 0.1 * rng.normal(size=n)])
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "x", "y", "z"])
        w.writerows([f"r{i}", *X[i]] for i in range(n))
    return path


def _assert_intact(folder, expected=None):
    """Every file of the manifest present and matching; no staging, journal or temp left."""
    folder = Path(folder)
    doc = read_manifest(folder)
    assert doc is not None, sorted(p.name for p in folder.iterdir())
    names = {f["name"] for f in doc["files"]}
    for name in names:
        assert check_against_manifest(folder / name) is None, name
    if expected is not None:
        assert names == set(expected)
    leftovers = [p.name for p in folder.iterdir() if p.name.startswith(".")]
    leftovers += [p.name for p in folder.parent.iterdir()
                  if p.name.startswith(f".{folder.name}.lenswork-stage-")]
    assert leftovers == []
    return names


# ------------------------------------------------------------------ kills while writing
_WRITER = textwrap.dedent("""
    import os, signal, sys
    from pathlib import Path
    from lenswork._io import OutputSet, write_text
    folder, names, tag, kill_at = sys.argv[1], sys.argv[2].split(","), sys.argv[3], int(sys.argv[4])
    whole = len(sys.argv) > 5  # a dataset folder: swapped in whole by renames
    calls = [0]
    def killing(real):
        def call(a, b):
            calls[0] += 1
            if calls[0] == kill_at:
                os.kill(os.getpid(), signal.SIGKILL)
            return real(a, b)
        return call
    os.replace, os.rename = killing(os.replace), killing(os.rename)
    manifest = "_lenswork-manifest.json" if whole else "lenswork-manifest.json"
    with OutputSet(folder, command="test", manifest=manifest, replace_folder=whole) as stage:
        for name in names:
            write_text(stage / name, f"{tag} {name}\\n" * 1000)
    print(calls[0])
""")


def _write_set(folder, names, tag):
    """A complete run in this process (the runs before and after the killed one)."""
    from lenswork._io import write_text

    with OutputSet(folder, command="test") as stage:
        for name in names:
            write_text(stage / name, f"{tag} {name}\n" * 1000)


def _run_writer(folder, names, tag, kill_at=0, whole=False):
    return subprocess.run([sys.executable, "-c", _WRITER, str(folder), ",".join(names), tag,
                           str(kill_at), *(["whole"] if whole else [])], env=_env(),
                          capture_output=True, text=True)


def test_kill_at_every_step_of_moving_in_then_the_next_run_heals(tmp_path):
    first = ["a.txt", "b.txt", "c.txt"]
    second = ["a.txt", "b.txt", "d.txt"]
    steps = int(_run_writer(tmp_path / "count", second, "x").stdout)
    assert steps >= 5  # the files, the journal and the manifest are moved in one by one
    for kill_at in range(1, steps + 1):
        folder = tmp_path / f"k{kill_at}"
        folder.mkdir()
        (folder / "notes.txt").write_text("the user's own file\n")
        _write_set(folder, first, "old")
        run = _run_writer(folder, second, "new", kill_at)
        assert run.returncode == -signal.SIGKILL
        doc = read_manifest(folder)
        listed = [f["name"] for f in doc["files"]]
        problems = [check_against_manifest(folder / n) for n in listed]
        if not any(problems):  # the manifest matches: one whole set, the old or the new
            texts = {(folder / n).read_text().split()[0] for n in listed}
            assert len(texts) == 1 and set(listed) in (set(first), set(second))
        else:  # a mixed folder is never silent: the manifest check names the file
            assert all("a run was stopped" in p or "does not match" in p
                       for p in problems if p)
        # the next run leaves exactly its own set (and the user's file)
        _write_set(folder, ["a.txt", "e.txt"], "third")
        assert _assert_intact(folder) == {"a.txt", "e.txt"}
        assert sorted(p.name for p in folder.iterdir()) == [
            "a.txt", "e.txt", MANIFEST, "notes.txt"]


def test_kill_while_a_dataset_folder_is_swapped_in(tmp_path):
    dataset = "_lenswork-manifest.json"
    first, second = ["part-0", "part-1", "part-2"], ["part-0", "part-1"]
    steps = int(_run_writer(tmp_path / "count", second, "x", whole=True).stdout)
    for kill_at in range(1, steps + 1):
        folder = tmp_path / f"k{kill_at}"
        with OutputSet(folder, command="test", manifest=dataset, replace_folder=True) as stage:
            for name in first:
                (stage / name).write_text(f"old {name}\n")
        run = _run_writer(folder, second, "new", kill_at, whole=True)
        assert run.returncode == -signal.SIGKILL
        if folder.exists():  # the old set or the new one, whole: never a mix of parts
            parts = sorted(p.name for p in folder.iterdir() if not p.name.startswith("_"))
            assert parts in (first, second)
            assert len({(folder / n).read_text().split()[0] for n in parts}) == 1
        with OutputSet(folder, command="test", manifest=dataset, replace_folder=True) as stage:
            (stage / "part-0").write_text("third\n")
        assert sorted(p.name for p in folder.iterdir()) == [dataset, "part-0"]
        assert [p.name for p in tmp_path.iterdir() if p.name.startswith(f".{folder.name}.")] \
            == []


def test_concurrent_runs_into_one_folder_leave_one_whole_set(tmp_path):
    folder = tmp_path / "out"
    sets = [["a.txt", "b.txt"], ["b.txt", "c.txt", "d.txt"], ["e.txt"]]
    procs = [subprocess.Popen([sys.executable, "-c", _WRITER, str(folder), ",".join(names),
                               f"run{i}", "0"], env=_env(), stdout=subprocess.DEVNULL)
             for i, names in enumerate(sets)]
    assert [p.wait() for p in procs] == [0, 0, 0]
    names = _assert_intact(folder)
    assert sorted(names) in [sorted(s) for s in sets]
    assert len({(folder / n).read_text().split()[0] for n in names}) == 1  # from one run


def test_cli_killed_at_random_points_then_rerun(tmp_path):
    data = _table_csv(tmp_path / "t.csv", 3000)
    out = tmp_path / "out"
    args = [sys.executable, "-c", CLI, "--quiet", "graph", str(data), "--id-column", "id",
            "-l", "pca:components=2", "-o", str(out)]
    rng = np.random.default_rng(2207)  # seeded delays over the run (about 3-6 s here)
    for delay in rng.uniform(0.5, 4.0, size=3):
        proc = subprocess.Popen(args, env=_env(), stdout=subprocess.DEVNULL,
                                stderr=subprocess.DEVNULL)
        time.sleep(delay)
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        if out.exists() and read_manifest(out) is not None:
            for f in read_manifest(out)["files"]:
                problem = check_against_manifest(out / f["name"])
                assert problem is None or "does not match" in problem
    done = subprocess.run(args, env=_env(), capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    _assert_intact(out, {"graph.graphml", "graph.json", "memberships.csv", "graph.png",
                         "graph.svg"})
    members = (out / "memberships.csv").read_text().splitlines()
    ids = {line.split(",")[0] for line in members[1:]}
    assert ids == {f"r{i}" for i in range(3000)}


def test_full_disk_leaves_the_earlier_set_and_says_so(tmp_path):
    data = _table_csv(tmp_path / "t.csv", 600)
    out = tmp_path / "out"
    args = [sys.executable, "-c", CLI, "--quiet", "graph", str(data), "--id-column", "id",
            "-l", "pca:components=2", "-o", str(out)]
    assert subprocess.run(args + ["--no-figure"], env=_env()).returncode == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}

    def limit():  # a disk that takes 20 kB more per file (POSIX setrlimit, RLIMIT_FSIZE)
        import resource

        resource.setrlimit(resource.RLIMIT_FSIZE, (20_000, 20_000))

    run = subprocess.run(args, env=_env(), preexec_fn=limit, capture_output=True, text=True)
    assert run.returncode == 1
    assert "file-size limit" in run.stderr and "Traceback" not in run.stderr
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    _assert_intact(out)


# ------------------------------------------------------------------ locked folders, bad paths
def _lock(folder):
    """Make ``folder`` refuse writes even to root; returns the undo, or skips."""
    if shutil.which("chattr") and subprocess.run(["chattr", "+i", str(folder)],
                                                 capture_output=True).returncode == 0:
        return lambda: subprocess.run(["chattr", "-i", str(folder)], check=True)
    if os.geteuid() != 0:
        folder.chmod(0o555)
        return lambda: folder.chmod(0o755)
    pytest.skip("no way to make a folder read-only for root here (no chattr +i)")


def test_locked_output_folder_refused_before_the_work(tmp_path):
    folder = tmp_path / "locked"
    folder.mkdir()
    undo = _lock(folder)
    try:
        for argv in (["graph", "--demo", "-l", "pca", "-o", str(folder)],
                     ["screen", "--demo", "-o", str(folder / "sub")],
                     ["compute", "--demo", "-l", "pca", "-o", str(folder / "l.csv")],
                     ["bootstrap", "--demo", "-l", "pca", "-o", str(folder)]):
            start = time.perf_counter()
            res = CliRunner().invoke(cli, ["--quiet", *argv])
            assert res.exit_code == 1, res.output
            assert "Cannot write" in res.output and "Nothing was computed" in res.output
            assert res.exception is None or isinstance(res.exception, SystemExit)
            assert time.perf_counter() - start < 20  # refused before any lens is computed
        with pytest.raises(OutputError, match="Cannot write"):
            OutputSet(folder, command="test")
    finally:
        undo()


def test_path_under_a_file_and_a_folder_named_like_a_file(tmp_path):
    (tmp_path / "afile").write_text("x")
    res = CliRunner().invoke(cli, ["compute", "--demo", "-l", "pca", "-o",
                                   str(tmp_path / "afile" / "l.csv")])
    assert res.exit_code == 1 and "is a file, not a folder" in res.output
    res = CliRunner().invoke(cli, ["graph", "--demo", "-l", "pca", "-o",
                                   str(tmp_path / "afile")])
    assert res.exit_code == 2 and "is a file" in res.output  # click's usage error
    res = CliRunner().invoke(cli, ["compute", "--demo", "-l", "pca", "-o", str(tmp_path)])
    assert res.exit_code != 0 and "Traceback" not in res.output
    os.mkfifo(tmp_path / "pipe.csv")  # never replaced by a regular file (nor a device node)
    res = CliRunner().invoke(cli, ["compute", "--demo", "-l", "pca", "-o",
                                   str(tmp_path / "pipe.csv")])
    assert res.exit_code == 1 and "not a regular file" in res.output
    assert not (tmp_path / "pipe.csv").is_file()
    for argv in (["compute", "--demo", "-l", "pca", "-o", ""],
                 ["graph", "--demo", "-l", "pca", "-o", ""]):
        res = CliRunner().invoke(cli, argv)
        assert res.exit_code == 1 and "empty" in res.output


# ------------------------------------------------------------------ output sets across runs
def test_rerun_removes_what_the_earlier_run_wrote_and_only_that(tmp_path):
    out = tmp_path / "s"
    run = CliRunner().invoke
    assert run(cli, ["--quiet", "screen", "--demo", "--no-probe", "-o", str(out)]).exit_code == 0
    (out / "mine.txt").write_text("not lenswork's")
    # a killed run of an earlier version and of this one: temp files and staging folders
    (out / ".graph.json.k2j4x9q1.tmp").write_text("half")
    (out / ".ranking.csv.99999999.abcdefgh.tmp").write_text("half")
    (out / ".lenswork-screen-abcd").mkdir()
    (tmp_path / ".s.lenswork-stage-99999999-xyz").mkdir()
    res = run(cli, ["--quiet", "screen", "--demo", "--no-probe", "--no-figures",
                    "--lens-format", "parquet", "-o", str(out)])
    assert res.exit_code == 0, res.output
    assert sorted(p.name for p in out.iterdir() if not p.name.startswith(".")) == [
        "lenses.parquet", "lenses.parquet.json", MANIFEST, "mine.txt", "ranking.csv",
        "ranking.json"]
    assert [p.name for p in out.iterdir() if p.name.startswith(".")] == [
        ".graph.json.k2j4x9q1.tmp"]  # not a name lenswork wrote here: left alone
    assert not (tmp_path / ".s.lenswork-stage-99999999-xyz").exists()


def test_lens_file_from_a_half_replaced_pair_or_another_table(tmp_path):
    a = _table_csv(tmp_path / "a.csv", 300, seed=1)
    b = _table_csv(tmp_path / "b.csv", 300, seed=2)  # the same ids, other values
    run = CliRunner().invoke
    assert run(cli, ["--quiet", "compute", str(a), "--id-column", "id", "-l", "pca",
                     "-o", str(tmp_path / "la.csv")]).exit_code == 0
    base = ["--quiet", "graph", str(b), "--id-column", "id", "--lens-file",
            str(tmp_path / "la.csv"), "--no-figure", "-o", str(tmp_path / "g")]
    res = run(cli, base)
    assert res.exit_code == 0 and "computed from another table" in res.output
    res = run(cli, [*base, "--lens-file-check", "error"])
    assert res.exit_code == 1 and "computed from another table" in res.output
    res = run(cli, [*base, "--lens-file-check", "off"])
    assert res.exit_code == 0 and "another table" not in res.output
    # a new data file beside the old sidecar (a run stopped between the two)
    cloud = load_table(b, id_column="id")
    other = LensTable([LensColumn("pca_1", cloud.X[:, 0] * 2, lens="pca"),
                       LensColumn("pca_2", cloud.X[:, 1] * 2, lens="pca")], cloud)
    other.write(tmp_path / "lb.csv")
    shutil.copy(tmp_path / "lb.csv", tmp_path / "la.csv")
    with pytest.warns(LensworkWarning, match="not the file its sidecar"):
        LensTable.read(tmp_path / "la.csv", load_table(a, id_column="id"))
    with pytest.raises(InputError, match="not the file its sidecar"):
        LensTable.read(tmp_path / "la.csv", load_table(a, id_column="id"), check="error")


def test_a_file_that_does_not_match_its_folders_manifest_is_named(tmp_path):
    out = tmp_path / "s"
    assert CliRunner().invoke(cli, ["--quiet", "screen", "--demo", "--no-probe", "--no-figures",
                                    "-o", str(out)]).exit_code == 0
    from lenswork.demo import load_demo

    cloud = load_demo()
    table = LensTable.read(out / "lenses.csv", cloud)  # the set as written: silent
    lens = table.values(normalized=False)
    data = (out / "lenses.csv").read_text().replace(repr(lens[0, 0]), repr(lens[0, 0] + 1), 1)
    (out / "lenses.csv").write_text(data)  # changed behind lenswork's back
    with pytest.warns(LensworkWarning, match="does not match the manifest"):
        LensTable.read(out / "lenses.csv", cloud)


# ------------------------------------------------------------------ hostile names, formats
HOSTILE = ['=HYPERLINK("http://example.invalid","x")', "+cmd|' /C calc'!A0", "@SUM(1+1)",
           "-2+3", "\tlead", "\rcr", "'=quoted", "plain", "-7"]


def test_formulas_neutralised_in_every_csv_and_read_back(tmp_path):
    n = len(HOSTILE) * 20
    rng = np.random.default_rng(5)
    X = np.column_stack([np.cos(np.arange(n)), np.sin(np.arange(n))]) + rng.normal(0, .01, (n, 2))
    path = tmp_path / "h.csv"
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "note", "level", "x", "y"])
        for i in range(n):
            w.writerow([f"{HOSTILE[i % len(HOSTILE)]}#{i}", HOSTILE[(i + 1) % len(HOSTILE)],
                        -i, *X[i]])
    run = CliRunner().invoke
    res = run(cli, ["--quiet", "compute", str(path), "--id-column", "id", "-f", "x,y",
                    "-l", "pca", "-o", str(tmp_path / "l.csv")])
    assert res.exit_code == 0, res.output
    rows = _csv_rows(tmp_path / "l.csv")
    for row in rows[1:]:
        for cell in row[:2]:  # text cells: never a formula start; a number text stays
            assert not cell.startswith(("=", "+", "@", "\t", "\r")), cell
            if cell.startswith("-"):
                float(cell)
        assert row[2] == "0" or row[2].startswith("-")  # negative numbers stay numbers
        float(row[3])
    cloud = load_table(path, id_column="id", features=["x", "y"])
    back = load_table(tmp_path / "l.csv", id_column="id", features=["pca_1"])
    assert back.ids.tolist() == cloud.ids.tolist()  # the guard undone on reading
    assert back.passthrough["note"].tolist() == cloud.passthrough["note"].tolist()
    res = run(cli, ["--quiet", "graph", str(path), "--id-column", "id", "-f", "x,y",
                    "--lens-file", str(tmp_path / "l.csv"), "--no-figure", "-o",
                    str(tmp_path / "g")])
    assert res.exit_code == 0, res.output
    cells = [r[0] for r in _csv_rows(tmp_path / "g" / "memberships.csv")]
    assert not any(c.startswith(("=", "+", "@", "\t", "\r")) for c in cells)
    res = run(cli, ["--quiet", "contrast", str(path), "--id-column", "id", "-f", "x,y",
                    "-l", "pca", "--rows", "plain#7,plain#16,plain#25,plain#34", "--no-figure",
                    "-o", str(tmp_path / "c")])  # a circle: its features hold every row
    assert res.exit_code == 0, res.output
    for row in _csv_rows(tmp_path / "c" / "contrast.csv"):
        for cell in row:
            assert not cell.startswith(("=", "+", "@", "\t", "\r")), cell
            if cell.startswith("-"):
                float(cell)  # only numbers start with a minus


def _csv_rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.reader(fh))


def test_safe_cell_rule():
    # OWASP "CSV Injection": the triggers, and what must stay as it is
    for text in ("=1+1", "+1+1x", "-x", "@A1", "\tx", "\rx"):
        assert safe_cell(text) == "'" + text
    for value in ("-1.5", "+3", "-2e-5", -4.0, 7, "x=1", "", "a-b"):
        assert safe_cell(value) == value


def test_written_names_never_collide_and_the_ending_sets_the_format(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("id,pca_1,a,b\n" + "".join(f"r{i},t{i},{np.cos(i)},{np.sin(i)}\n"
                                                for i in range(50)))
    cloud = load_table(path, id_column="id", features=["a", "b"])
    table = LensTable([LensColumn("pca_1", cloud.X[:, 0])], cloud)
    with pytest.warns(LensworkWarning, match="written as 'pca_1_data'"):
        table.write(tmp_path / "l.tsv")
    lines = (tmp_path / "l.tsv").read_text().splitlines()
    assert lines[0].split("\t") == ["id", "pca_1_data", "pca_1"]  # tabs for .tsv
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        back = LensTable.read(tmp_path / "l.tsv", cloud)
    assert back.names == ["pca_1"]
    with pytest.raises(ParameterError, match="from its ending"):
        table.write(tmp_path / "l.txt")
    with pytest.raises(ParameterError, match="ends in .csv but the format asked is 'parquet'"):
        table.write(tmp_path / "l.csv", format="parquet")


# ------------------------------------------------------------------ bounds and degenerate data
def test_size_like_parameters_are_bounded_with_the_reason():
    from lenswork.bootstrap import bootstrap_graph
    from lenswork.graph import GraphSettings
    from lenswork.lenses import gaussian_density

    with pytest.raises(ParameterError, match=r"\[2, 10000\].*24 GB"):
        GraphSettings(clusterer="single", gap_bins=1_000_000_000)
    with pytest.raises(ParameterError, match=r"\[1, 32\].*builds the graph again"):
        GraphSettings(hole_scales=1_000_000_000)
    X = np.random.default_rng(0).normal(size=(300, 2))
    with pytest.raises(ParameterError, match="would overflow"):
        gaussian_density(X, bandwidth=1e300)
    with pytest.raises(ParameterError, match="flat over the data"):
        gaussian_density(X, bandwidth=1e50)
    with pytest.raises(ParameterError, match="below 1e-06 times"):
        gaussian_density(X, bandwidth=1e-20)
    grid = np.column_stack([np.arange(300.0), np.arange(300.0) % 7])  # rows >= 1 apart
    with pytest.raises(ParameterError, match="same density"):  # exp(-1 / 2e-6) = 0
        gaussian_density(grid, bandwidth=1e-3)
    cloud = PointCloud.from_array(X)
    with pytest.raises(ParameterError, match=r"\[1, 10000\]"):
        bootstrap_graph(LensTable([LensColumn("h", X[:, 0])], cloud), None,
                        resamples=10**9)
    res = CliRunner().invoke(cli, ["compute", "--demo", "-l", "density:bandwidth=1e300"])
    assert res.exit_code == 1 and "overflow" in res.output


def test_identical_and_subnormal_rows_refused(tmp_path):
    (tmp_path / "same.csv").write_text("a,b\n" + "1.5,2\n" * 40)
    with pytest.raises(InputError, match="same feature values"):
        load_table(tmp_path / "same.csv")
    (tmp_path / "tiny.csv").write_text("a,b\n" + "".join(f"{(i % 3) * 5e-324},{i}\n"
                                                        for i in range(40)))
    with pytest.raises(InputError, match="underflow"):
        load_table(tmp_path / "tiny.csv", scale=None)
    cloud = load_table(tmp_path / "tiny.csv", scale="zscore")  # the way out the message names
    assert np.ptp(cloud.X[:, 0]) > 1
    with pytest.raises(InputError, match="underflow"):
        load_table(tmp_path / "tiny.csv")  # the default (auto) does not rescue an underflow


def test_error_names_the_spreadsheet_row_across_quoted_line_breaks(tmp_path):
    # Counted by hand: the header is row 1 and each record one row (common practice)
    path = tmp_path / "q.csv"
    path.write_text('a,b,note\n1,2,"one\ntwo\nthree"\n3,4,x\n5,oops,y\n')
    with pytest.raises(InputError, match="row 4"):
        load_table(path, features=["a", "b"])


# ------------------------------------------------------------------ the cluster path
def test_cluster_dataset_folder_rerun_with_fewer_parts(tmp_path):
    pd = pytest.importorskip("pandas")
    da = pytest.importorskip("dask.array")
    pytest.importorskip("pyarrow")
    from lenswork.partitioned import open_partitioned, partitioned_lenses

    X = np.random.default_rng(3).normal(size=(900, 2))
    out = tmp_path / "lens"
    for chunks in (200, 450):  # 5 parts, then 2
        cloud = open_partitioned(da.from_array(X, chunks=(chunks, 2)))
        files = partitioned_lenses(cloud, ["pca", "dtm"], landmarks=200).write(out)
        assert files[-1] == str(tmp_path / "lens.json")  # provenance beside the folder
    back = pd.read_parquet(out)
    assert len(back) == 900 and back.iloc[:, 0].is_unique
    assert "dtm_error" in back.columns and "pca_1_error" not in back.columns
    assert sorted(p.name for p in out.iterdir()) == [
        "_lenswork-manifest.json", "part-00000.parquet", "part-00001.parquet"]
    doc = json.loads((tmp_path / "lens.json").read_text())
    assert doc["dataset"]["set_sha256"] == read_manifest(out, "_lenswork-manifest.json")[
        "set_sha256"]
    (out / "foreign.txt").write_text("x")
    with pytest.raises(OutputError, match="no lenswork run wrote"):
        partitioned_lenses(cloud, ["pca"]).write(out)


def test_cluster_options_refused_with_a_message(tmp_path):
    pytest.importorskip("distributed")
    (tmp_path / "p").mkdir()
    _table_csv(tmp_path / "p" / "part-0.csv", 100)
    for limit, text in (("abc", "is not a size"), ("1MB", "below 256 MiB")):
        start = time.perf_counter()
        res = CliRunner().invoke(cli, ["compute", str(tmp_path / "p"), "--scheduler", "local",
                                       "--memory-limit", limit, "-l", "pca", "-o",
                                       str(tmp_path / "o")])
        assert res.exit_code == 1 and text in res.output, res.output
        assert time.perf_counter() - start < 30  # no worker is started


def test_a_cluster_that_does_not_start_ends_in_a_message(monkeypatch):
    distributed = pytest.importorskip("distributed")
    from lenswork.partitioned import start_client

    def lost(*args, **kwargs):  # what a worker dying during start-up raises, among others
        raise RuntimeError("Nanny failed to start: worker lost")

    monkeypatch.setattr(distributed, "Client", lost)
    with pytest.raises(ParameterError, match="did not start .*worker lost"):
        start_client("local", workers=1)
    with pytest.raises(ParameterError, match=r"'workers' parameter .*\[1, 256\]"):
        start_client("local", workers=100_000)


def test_the_thread_count_of_the_approximate_search_is_recorded(tmp_path):
    # pynndescent's result depends on numba's thread count: the sidecar says which it was
    numba = pytest.importorskip("numba")
    cloud = PointCloud.from_array(np.random.default_rng(0).normal(size=(20, 2)))
    table = LensTable([LensColumn("h", cloud.X[:, 0])], cloud)
    before = numba.get_num_threads()
    try:
        numba.set_num_threads(1)
        _, sidecar = table.write(tmp_path / "l.csv")
        assert json.loads(sidecar.read_text())["threads"] == {"numba": 1}
    finally:
        numba.set_num_threads(before)


def test_cluster_density_on_a_constant_column_refused_as_on_one_machine():
    da = pytest.importorskip("dask.array")
    from lenswork.lenses import gaussian_density
    from lenswork.partitioned import open_partitioned, partitioned_lenses

    X = np.random.default_rng(4).normal(size=(600, 3))
    X[:, 2] = 1.0
    with pytest.raises(InputError, match="singular") as one:
        gaussian_density(X)
    with pytest.raises(InputError, match="singular") as many:
        partitioned_lenses(open_partitioned(da.from_array(X, chunks=(200, 3))), ["density"],
                           landmarks=100)
    assert str(one.value) == str(many.value)  # the same message on both paths


def test_few_distinct_rows_warn_with_the_result_per_lens(tmp_path):
    rng = np.random.default_rng(9)
    X = np.repeat(rng.normal(size=(5, 3)), 20, axis=0)  # 5 distinct rows, 20 copies each
    np.savetxt(tmp_path / "few.csv", X, delimiter=",", header="a,b,c", comments="")
    with pytest.warns(LensworkWarning, match=r"only 5 distinct rows among 100.*20 to 20"):
        cloud = load_table(tmp_path / "few.csv")
    assert cloud.provenance["distinct_rows"] == 5
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # distinct rows: no warning, no count
        load_table(rng.normal(size=(100, 3)))


def test_control_characters_in_names_keep_the_graphml_well_formed(tmp_path):
    import xml.etree.ElementTree as ET

    rng = np.random.default_rng(8)
    path = tmp_path / "ctl.csv"
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "a\x01b", "<y&\"z\">"])
        w.writerows([f"r\x02{i}", *rng.normal(size=2)] for i in range(200))
    res = CliRunner().invoke(cli, ["--quiet", "graph", str(path), "--id-column", "id", "-l",
                                   "pca", "--stats", "all", "--no-figure", "-o",
                                   str(tmp_path / "g")])
    assert res.exit_code == 0, res.output
    root = ET.parse(tmp_path / "g" / "graph.graphml").getroot()  # the stdlib XML 1.0 parser
    names = {k.get("attr.name") for k in root.iter("{http://graphml.graphdrawing.org/xmlns}key")}
    assert "a\ufffdb_mean" in names and '<y&"z">_mean' in names
