"""Audit of faults and hostile input: issue 22's cases and more, run as a user runs them.

Every case runs the ``lenswork`` command line in a subprocess on small generated tables in a
temporary folder and judges what a user would see: a clear message (exit code != 0, no
traceback, the option / row / column named), an intact output set (the files of one run, no
staging folder or temporary file left), or a correct result. A case that runs too long is
stopped (``hang``); subprocesses run with a 4 GiB address-space limit (POSIX setrlimit), so
unbounded work shows up as an out-of-memory ending instead of taking the machine down.

Run it (about ten minutes; the cluster cases start Dask LocalClusters)::

    MPLBACKEND=Agg python tests/benchmarks/audit_faults.py                  # this checkout
    python tests/benchmarks/audit_faults.py --only X1,X2 -v                # some cases
    python tests/benchmarks/audit_faults.py --src /tmp/old/src --json old.json  # other code
    python tests/benchmarks/audit_faults.py --table old.json new.json      # markdown table

Case ids: ``I<section>.<n>`` are the cases of issue 22's "What went wrong" (sections 1-8),
``X<n>`` further hostile inputs and faults. Not collected by pytest; the regression tests of
each case are in tests/test_faults.py and tests/test_hostile_inputs.py.
"""

from __future__ import annotations

import argparse
import contextlib
import csv
import gzip
import json
import os
import re
import shutil
import signal
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve()
SRC_DEFAULT = str(HERE.parents[2] / "src")

# The CLI in a subprocess; AUDIT_KILL_AT=k sends AUDIT_SIG to itself at the k-th os.replace /
# os.rename (the moment files are moved into place), AUDIT_COUNT prints how many there were,
# AUDIT_CLUSTER_FAILS makes distributed's LocalCluster fail the way a lost worker does.
_CLI = textwrap.dedent("""
    import os, signal, sys
    kill_at = int(os.environ.get("AUDIT_KILL_AT", "0"))
    sig = int(os.environ.get("AUDIT_SIG", str(int(signal.SIGKILL))))
    calls = [0]
    def wrap(real):
        def call(*a, **kw):
            calls[0] += 1
            if calls[0] == kill_at and sig:
                os.kill(os.getpid(), sig)
            elif calls[0] == kill_at:  # AUDIT_SIG=0: the folder AUDIT_RMTREE disappears
                import shutil
                shutil.rmtree(os.environ["AUDIT_RMTREE"], ignore_errors=True)
            return real(*a, **kw)
        return call
    os.replace, os.rename = wrap(os.replace), wrap(os.rename)
    if os.environ.get("AUDIT_COUNT"):
        import atexit
        atexit.register(lambda: sys.stderr.write(f"AUDIT_CALLS={calls[0]}\\n"))
    if os.environ.get("AUDIT_CLUSTER_FAILS"):
        import distributed
        class Lost:
            def __init__(self, *a, **kw):
                raise RuntimeError("Nanny failed to start: worker lost")
        distributed.LocalCluster = Lost
        _client = distributed.Client
        def client(*a, **kw):
            if "n_workers" in kw or not a:
                raise RuntimeError("Nanny failed to start: worker lost")
            return _client(*a, **kw)
        distributed.Client = client
    from lenswork.cli import main
    sys.argv[0] = "lenswork"
    main()
""")

# Many argument lists in one process (click's test runner), one JSON line each; an alarm stops
# an argument list that runs too long.
_BATCH = textwrap.dedent("""
    import json, signal, sys, traceback
    from click.testing import CliRunner
    from lenswork.cli import cli
    class Hang(Exception):
        pass
    def alarm(*a):
        raise Hang()
    signal.signal(signal.SIGALRM, alarm)
    for line in sys.stdin:
        argv = json.loads(line)
        signal.alarm(int(sys.argv[1]))
        try:
            r = CliRunner().invoke(cli, argv)
            exc = r.exception if not isinstance(r.exception, SystemExit) else None
            rec = {"rc": r.exit_code, "out": r.output[-600:],
                   "exc": (type(exc).__name__ + ": " + str(exc)[:200]) if exc else None}
            if isinstance(exc, Hang):
                rec = {"rc": None, "out": "", "exc": "hang"}
        except Hang:
            rec = {"rc": None, "out": "", "exc": "hang"}
        except BaseException as err:
            rec = {"rc": None, "out": "", "exc": type(err).__name__ + ": " + str(err)[:200]}
        signal.alarm(0)
        print(json.dumps(rec), flush=True)
""")

VERBOSE = False


class Ran:
    """What a user saw: exit code, output, seconds, whether it was stopped."""

    def __init__(self, rc, out, err, secs, timed_out):
        self.rc, self.out, self.err, self.secs, self.timed_out = rc, out, err, secs, timed_out

    @property
    def traceback(self):
        return "Traceback (most recent call last)" in self.err

    def last_error(self):
        lines = [ln for ln in self.err.splitlines() if ln.strip()]
        errs = [ln for ln in lines if ln.startswith(("Error", "Aborted", "Interrupted"))]
        return (errs or lines or [""])[-1].strip()


class Audit:
    def __init__(self, src, work):
        self.src, self.work = src, Path(work)
        self._tables = {}

    # ------------------------------------------------------------------ running
    def env(self, **extra):
        env = dict(os.environ, PYTHONPATH=self.src, MPLBACKEND="Agg", LENSWORK_PROGRESS="0")
        env.pop("AUDIT_KILL_AT", None)
        env.update({k: str(v) for k, v in extra.items()})
        return env

    def run(self, argv, *, timeout=120, env=None, fsize=None, signal_after=None, cwd=None,
            mem_gib=4):
        def limits():
            import resource

            os.setsid()
            resource.setrlimit(resource.RLIMIT_AS, (mem_gib << 30, mem_gib << 30))
            if fsize:
                resource.setrlimit(resource.RLIMIT_FSIZE, (fsize, fsize))

        start = time.perf_counter()
        proc = subprocess.Popen([sys.executable, "-c", _CLI, *map(str, argv)],
                                env=env or self.env(), cwd=cwd or self.work,
                                stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                                preexec_fn=limits)
        timed_out = False
        if signal_after:
            delay, sig = signal_after
            try:
                out, err = proc.communicate(timeout=delay)
            except subprocess.TimeoutExpired:
                proc.send_signal(sig)
        try:
            out, err = proc.communicate(timeout=timeout)
        except subprocess.TimeoutExpired:
            timed_out = True
            os.killpg(proc.pid, signal.SIGKILL)
            out, err = proc.communicate()
        ran = Ran(proc.returncode, out, err, time.perf_counter() - start, timed_out)
        if VERBOSE:
            print(f"    $ lenswork {' '.join(map(str, argv))[:150]}\n    -> rc {ran.rc} "
                  f"{ran.secs:.1f}s {ran.err.strip()[-400:]}", file=sys.stderr)
        return ran

    def batch(self, argvs, per=40):
        """Run argument lists in one process; returns a list of records."""
        env = self.env()

        def limits():
            import resource

            resource.setrlimit(resource.RLIMIT_AS, (4 << 30, 4 << 30))

        proc = subprocess.run([sys.executable, "-c", _BATCH, str(per)], env=env, cwd=self.work,
                              input="".join(json.dumps(list(map(str, a))) + "\n"
                                            for a in argvs),
                              capture_output=True, text=True, preexec_fn=limits,
                              timeout=per * len(argvs) + 60)
        recs = [json.loads(ln) for ln in proc.stdout.splitlines() if ln.startswith("{")]
        while len(recs) < len(argvs):  # the process died: the rest unknown
            recs.append({"rc": None, "out": "", "exc": "process died: "
                         + (proc.stderr.strip().splitlines() or ["?"])[-1][:120]})
        return recs

    def folder(self, name):
        path = self.work / name
        if path.exists():
            shutil.rmtree(path)
        path.mkdir(parents=True)
        return path

    # ------------------------------------------------------------------ tables
    def table(self, n=300, seed=0, name=None, ids=None, extra=None, d=3):
        """A noisy circle in d columns, id column 'id', written as CSV (cached by name)."""
        name = name or f"t{n}_{seed}_{d}.csv"
        path = self.work / name
        if path.exists():
            return path
        rng = np.random.default_rng(seed)
        t = rng.uniform(0, 2 * np.pi, n)
        X = np.column_stack([np.cos(t), np.sin(t)] + [0.1 * rng.normal(size=n)
                                                      for _ in range(d - 2)])
        ids = ids or [f"r{i}" for i in range(n)]
        extra = extra or {}
        with open(path, "w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(["id", *[f"x{j}" for j in range(d)], *extra])
            for i in range(n):
                w.writerow([ids[i], *X[i], *[v[i] for v in extra.values()]])
        return path


# ---------------------------------------------------------------------- judging
def short(text, width=110):
    text = " ".join(str(text).split())
    return text if len(text) <= width else text[: width - 3] + "..."


def broken(r):
    """(outcome, verdict) when the run could not run, hung or ended in a traceback; else None."""
    m = re.search(r"No such option: (\S+)", r.err)
    if m:
        return f"cannot run: option {m.group(1)} did not exist", None
    if r.timed_out:
        return f"hang (stopped after {r.secs:.0f} s)", False
    if r.traceback:
        return f"traceback: {short(r.last_error(), 90)}", False
    return None


def message(r, *words, ok_rc0=False):
    """A clear message: exit code 1-2, no traceback, each of ``words`` (regex) in the error."""
    if broken(r):
        return broken(r)
    if r.rc == 0:
        return ("exit 0 (accepted)", True) if ok_rc0 else ("exit 0: accepted silently", False)
    if r.rc is not None and r.rc < 0:
        return f"killed by signal {-r.rc} after {r.secs:.0f} s", False
    text = r.err + r.out
    missing = [w for w in words if not re.search(w, text, re.I | re.S)]
    desc = f"exit {r.rc}: {short(r.last_error(), 100)} ({r.secs:.1f} s)"
    if missing:
        return desc + f" [does not name {'/'.join(missing)}]", False
    return desc, True


def ok_run(r, what="result correct"):
    if broken(r):
        return broken(r)
    if r.rc != 0:
        return f"exit {r.rc}: {short(r.last_error(), 100)}", False
    return f"exit 0, {what}", True


def hidden_leftovers(folder):
    folder = Path(folder)
    found = []
    if folder.is_dir():
        found += [p.name for p in folder.iterdir() if p.name.startswith(".")]
    if folder.parent.is_dir():
        found += [p.name for p in folder.parent.iterdir()
                  if p.name.startswith(f".{folder.name}.")]
    return found


def graph_folder_state(folder):
    """'empty', 'consistent (n rows)' or 'mixed: ...' for a graph output folder."""
    folder = Path(folder)
    if not (folder / "graph.json").exists():
        return "empty"
    try:
        doc = json.loads((folder / "graph.json").read_text())
        with open(folder / "memberships.csv", newline="") as fh:
            rows = list(csv.reader(fh))[1:]
        ids = {r[0] for r in rows}
        gml = (folder / "graph.graphml").read_text()
        n_nodes = len(re.findall(r"<node ", gml))
    except (OSError, ValueError, IndexError) as err:
        return f"mixed: unreadable ({type(err).__name__})"
    if len(ids) + len(doc.get("unassigned", [])) < doc["n_rows"] * 0.5 or len(ids) > doc["n_rows"]:
        return f"mixed: graph.json {doc['n_rows']} rows, memberships.csv {len(ids)} ids"
    if n_nodes != len(doc["nodes"]):
        return f"mixed: graph.json {len(doc['nodes'])} nodes, graph.graphml {n_nodes}"
    return f"consistent ({doc['n_rows']} rows)"


def manifest_flags(folder):
    """Whether the folder's manifest (when there is one) flags a file that does not match."""
    import hashlib

    path = Path(folder) / "lenswork-manifest.json"
    if not path.exists():
        return False
    doc = json.loads(path.read_text())
    for f in doc.get("files", []):
        p = Path(folder) / f["name"]
        if not p.exists() or hashlib.sha256(p.read_bytes()).hexdigest() != f.get("sha256"):
            return True
    return (Path(folder) / ".lenswork-pending.json").exists()


def read_csv_rows(path, delimiter=","):
    with open(path, newline="") as fh:
        return list(csv.reader(fh, delimiter=delimiter))


CASES = []


def case(cid, title):
    def deco(fn):
        CASES.append((cid, title, fn))
        return fn
    return deco


# ====================================================================== issue 22, section 1
@case("I1.1", "graph --clusterer single --gap-bins 1e9 on 300 rows (unbounded memory)")
def _(a):
    r = a.run(["-q", "graph", a.table(), "--id-column", "id", "-l", "pca", "--clusterer",
               "single", "--gap-bins", "1000000000", "--no-figure", "-o", a.work / "g11"],
              timeout=120)
    if not r.traceback and "ran out of memory" in r.err.lower():
        return f"exit {r.rc}: ran out of the 4 GiB limit ({r.secs:.0f} s)", False
    return message(r, "gap-bins")


@case("I1.2", "density:bandwidth=1e300 (overflow)")
def _(a):
    return message(a.run(["-q", "compute", a.table(), "--id-column", "id", "-l",
                          "density:bandwidth=1e300", "-o", a.work / "l12.csv"]), "bandwidth")


@case("I1.3", "density:bandwidth=1e-20 (a constant lens with only a numpy warning)")
def _(a):
    out = a.work / "l13.csv"
    r = a.run(["-q", "compute", a.table(), "--id-column", "id", "-l", "density:bandwidth=1e-20",
               "-o", out])
    if r.rc == 0 and not r.traceback:
        vals = np.array([float(x[1]) for x in read_csv_rows(out)[1:]])
        if "RuntimeWarning" in r.err or np.ptp(vals) == 0 or not np.isfinite(vals).all():
            return "exit 0: a constant or non-finite lens written (numpy warning)", False
    return message(r, "bandwidth")


# ====================================================================== section 2
def _kill_points(a, argv, count_env=None):
    r = a.run(argv, env=a.env(AUDIT_COUNT=1, **(count_env or {})))
    m = re.search(r"AUDIT_CALLS=(\d+)", r.err)
    return int(m.group(1)) if m else 0


@case("I2.1", "graph killed (SIGKILL) at each file move of a rerun on more rows: mixed set?")
def _(a):
    out = a.work / "g21"
    small, big = a.table(300), a.table(2000, seed=1)
    base = ["-q", "graph", "--id-column", "id", "-l", "pca", "--no-figure", "-o", out]
    steps = _kill_points(a, base[:2] + [big] + base[2:])
    mixed, silent = 0, 0
    for k in range(1, steps + 1):
        if out.exists():
            shutil.rmtree(out)
        a.run(base[:2] + [small] + base[2:])
        a.run(base[:2] + [big] + base[2:], env=a.env(AUDIT_KILL_AT=k))
        state = graph_folder_state(out)
        if state.startswith("mixed"):
            mixed += 1
            silent += not manifest_flags(out)
    rerun = a.run(base[:2] + [big] + base[2:])
    left = hidden_leftovers(out)
    desc = (f"{steps} kill points: {mixed} left a mixed set ({silent} unflagged); "
            f"rerun exit {rerun.rc}, {len(left)} hidden leftovers")
    return desc, silent == 0 and not left and rerun.rc == 0


@case("I2.2", "compute killed between lenses.csv and its sidecar, then graph --lens-file")
def _(a):
    out = a.work / "l22.csv"
    small, big = a.table(300), a.table(2000, seed=1)
    base = ["-q", "compute", "--id-column", "id", "-l", "pca", "-o", out]
    steps = _kill_points(a, base[:2] + [big] + base[2:])
    silent = 0
    for k in range(1, steps + 1):
        for p in a.work.glob("l22.csv*"):
            p.unlink()
        a.run(base[:2] + [small] + base[2:])
        a.run(base[:2] + [big] + base[2:], env=a.env(AUDIT_KILL_AT=k))
        rows = len(read_csv_rows(out)) - 1 if out.exists() else None
        side = json.loads(Path(f"{out}.json").read_text()) if Path(f"{out}.json").exists() \
            else {}
        side_rows = side.get("n_rows_used")
        if rows is not None and side_rows is not None and rows != side_rows:
            g = a.run(["-q", "graph", big, "--id-column", "id", "--lens-file", out,
                       "--no-figure", "-o", a.work / "g22"])
            if g.rc == 0 and not re.search(r"sidecar|does not match|checksum", g.err, re.I):
                silent += 1
    return (f"{steps} kill points: {silent} left a lens file whose sidecar is another run's, "
            f"accepted silently by graph --lens-file", silent == 0)


@case("I2.3", "kills leave .*.tmp files and staging folders that no later run removes")
def _(a):
    out = a.work / "s23"
    if out.exists():
        shutil.rmtree(out)
    t = a.table(300)
    screen = ["-q", "screen", t, "--id-column", "id", "--no-probe", "--no-figures", "-o", out]
    graph = ["-q", "graph", t, "--id-column", "id", "-l", "pca", "-o", a.work / "g23"]
    a.run(screen)
    a.run(graph)
    for k in (1, 2, 3):
        a.run(screen, env=a.env(AUDIT_KILL_AT=k))
        a.run(graph, env=a.env(AUDIT_KILL_AT=k))
    after_kill = hidden_leftovers(out) + hidden_leftovers(a.work / "g23")
    a.run(screen)
    a.run(graph)
    left = hidden_leftovers(out) + hidden_leftovers(a.work / "g23")
    return (f"{len(after_kill)} hidden files/folders after 6 kills; {len(left)} after a rerun "
            f"{short(left, 60) if left else ''}", not left)


@case("I2.4", "rerun with --no-figure leaves the previous run's graph.png")
def _(a):
    out = a.work / "g24"
    t = a.table(300)
    a.run(["-q", "graph", t, "--id-column", "id", "-l", "pca", "-o", out])
    r = a.run(["-q", "graph", t, "--id-column", "id", "-l", "pca", "--no-figure", "-o", out])
    stale = [p for p in ("graph.png", "graph.svg") if (out / p).exists()]
    return (f"exit {r.rc}; stale files: {', '.join(stale) or 'none'}", not stale and r.rc == 0)


@case("I2.5", "screen --lens-format parquet after csv leaves lenses.csv")
def _(a):
    out = a.work / "s25"
    t = a.table(300)
    base = ["-q", "screen", t, "--id-column", "id", "--no-probe", "--no-figures", "-o", out]
    a.run(base)
    r = a.run(base + ["--lens-format", "parquet"])
    stale = [p.name for p in out.glob("lenses.csv*")]
    return (f"exit {r.rc}; stale files: {', '.join(stale) or 'none'}", not stale and r.rc == 0)


def _partitions(a, name, n, parts, seed=0, const=False):
    folder = a.folder(name)
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, 3))
    if const:
        X[:, 2] = 1.0
    for j, rows in enumerate(np.array_split(np.arange(n), parts)):
        with open(folder / f"part-{j}.csv", "w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(["id", "a", "b", "c"])
            w.writerows([f"r{i}", *X[i]] for i in rows)
    return folder


@case("I2.6", "cluster path rerun with fewer partitions leaves extra part-* files")
def _(a):
    import pandas as pd

    out = a.work / "c26"
    base = ["-q", "compute", "--scheduler", "local", "--workers", "1", "--id-column", "id",
            "-l", "pca", "-o", out]
    r1 = a.run(base[:1] + base[1:2] + [_partitions(a, "p26a", 3000, 3)] + base[2:], timeout=240)
    if r1.rc != 0:
        return message(r1)
    r2 = a.run(base[:2] + [_partitions(a, "p26b", 1000, 1)] + base[2:], timeout=240)
    if r2.rc != 0:
        return "rerun: " + message(r2, "^$")[0], False
    back = pd.read_parquet(out)
    ids = back.iloc[:, 0]
    return (f"read back {len(back)} rows, {int(ids.duplicated().sum())} duplicate ids "
            f"(expected 1000, 0)", len(back) == 1000 and ids.is_unique)


# ====================================================================== section 3
@case("I3.1", "a text column named pca_1 and the lens pca_1 (name collision)")
def _(a):
    t = a.table(300, name="t31.csv", extra={"pca_1": [f"note{i}" for i in range(300)]})
    out = a.work / "l31.csv"
    r = a.run(["-q", "compute", t, "--id-column", "id", "-l", "pca", "-o", out])
    if r.rc != 0:
        return message(r, "pca_1")
    header = read_csv_rows(out)[0]
    if len(set(header)) != len(header):
        return f"exit 0: header {header} repeats a name", False
    g = a.run(["-q", "graph", t, "--id-column", "id", "--lens-file", out, "--no-figure", "-o",
               a.work / "g31"])
    return ok_run(g, f"names {header}; the file reads back")


@case("I3.2", "-o lenses.tsv writes commas")
def _(a):
    out = a.work / "l32.tsv"
    r = a.run(["-q", "compute", a.table(), "--id-column", "id", "-l", "pca", "-o", out])
    if r.rc != 0:
        return message(r, "tsv")
    head = out.read_text().splitlines()[0]
    return (f"exit 0, header {head!r}", "\t" in head and "," not in head)


@case("I3.3", "lens file from another table with the same ids (sidecar checksum differs)")
def _(a):
    la = a.work / "l33.csv"
    a.run(["-q", "compute", a.table(300), "--id-column", "id", "-l", "pca", "-o", la])
    other = a.table(300, seed=5)
    r = a.run(["-q", "graph", other, "--id-column", "id", "--lens-file", la, "--no-figure",
               "-o", a.work / "g33"])
    if r.rc == 0:
        if re.search(r"checksum|another table|computed from|does not match", r.err, re.I):
            return f"exit 0 with a warning: {short(r.err.strip().splitlines()[0], 90)}", True
        return "exit 0: accepted silently", False
    return message(r, "checksum|table")


# ====================================================================== section 4
def _immutable(path):
    return shutil.which("chattr") and subprocess.run(
        ["chattr", "+i", str(path)], capture_output=True).returncode == 0


@case("I4.1", "read-only (immutable) output folder")
def _(a):
    folder = a.folder("locked41")
    if not _immutable(folder):
        folder.chmod(0o555)
    try:
        r = a.run(["-q", "graph", a.table(), "--id-column", "id", "-l", "pca", "-o", folder])
    finally:
        subprocess.run(["chattr", "-i", str(folder)], capture_output=True)
        folder.chmod(0o755)
    return message(r, "locked41|output")


@case("I4.2", "full disk while writing (a 20 kB file-size limit) on a rerun")
def _(a):
    out = a.work / "g42"
    t = a.table(600)
    base = ["-q", "graph", t, "--id-column", "id", "-l", "pca:components=2", "-o", out]
    a.run(base + ["--no-figure"])
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    r = a.run(base, fsize=20_000)
    desc, ok = message(r, "limit|space")
    after = {p.name: p.read_bytes() for p in out.iterdir()}
    intact = after == before
    return desc + ("; earlier set intact" if intact else "; earlier set changed"), ok and intact


@case("I4.3", "-o afile/l.csv where afile is a file")
def _(a):
    (a.work / "afile").write_text("x")
    return message(a.run(["-q", "compute", a.table(), "--id-column", "id", "-l", "pca", "-o",
                          a.work / "afile" / "l.csv"]), "afile")


def _parquet(a, name, extra_type):
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = np.random.default_rng(0)
    n = 200
    cols = {"id": pa.array([f"r{i}" for i in range(n)]),
            "a": pa.array(rng.normal(size=n)), "b": pa.array(rng.normal(size=n))}
    if extra_type == "map":
        cols["m"] = pa.array([[("k", i)] for i in range(n)], type=pa.map_(pa.string(), pa.int64()))
    elif extra_type == "list":
        cols["l"] = pa.array([[i, i + 1] for i in range(n)])
        cols["s"] = pa.array([{"u": i, "v": "w"} for i in range(n)])
    path = a.work / name
    pq.write_table(pa.table(cols), path)
    return path


@case("I4.4", "Parquet table with a map column")
def _(a):
    p = _parquet(a, "map.parquet", "map")
    r = a.run(["-q", "compute", p, "--id-column", "id", "-l", "pca", "-o", a.work / "l44.csv"])
    return message(r, r"\bm\b", ok_rc0=True) if r.rc else ok_run(r, "the map column left aside")


@case("I4.5", "--memory-limit abc")
def _(a):
    d = _partitions(a, "p45", 200, 1)
    return message(a.run(["-q", "compute", d, "--scheduler", "local", "--memory-limit", "abc",
                          "-l", "pca", "-o", a.work / "c45"], timeout=120), "memory-limit|size")


@case("I4.6", "a worker lost while the local cluster starts")
def _(a):
    d = _partitions(a, "p46", 200, 1)
    return message(a.run(["-q", "compute", d, "--scheduler", "local", "--workers", "1",
                          "--id-column", "id", "-l", "pca", "-o", a.work / "c46"],
                         env=a.env(AUDIT_CLUSTER_FAILS=1), timeout=120), "start|worker")


@case("I4.7", "--memory-limit 1MB (workers restart for ever)")
def _(a):
    d = _partitions(a, "p47", 200, 1)
    return message(a.run(["-q", "compute", d, "--scheduler", "local", "--memory-limit", "1MB",
                          "--id-column", "id", "-l", "pca", "-o", a.work / "c47"], timeout=150),
                   "memory")


# ====================================================================== section 5
FORMULAS = ['=HYPERLINK("http://example.invalid","x")', "+cmd|' /C calc'!A0", "@SUM(1+1)",
            "-2+3", "\tTAB"]


def _formula_cells(path):
    rows = read_csv_rows(path)
    return [c for row in rows for c in row
            if c[:1] in ("=", "+", "@", "\t", "\r") or (c[:1] == "-" and not _number(c))]


def _number(text):
    try:
        float(text)
        return True
    except ValueError:
        return False


def _formula_table(a):
    n = 300
    ids = [FORMULAS[i % len(FORMULAS)] + f"_{i}" for i in range(n)]
    return a.table(n, name="formulas.csv", ids=ids,
                   extra={"=kind()": [FORMULAS[i % 3] for i in range(n)]})


@case("I5.1", "formula-like ids in lenses.csv (CSV injection) and read back")
def _(a):
    t, out = _formula_table(a), a.work / "l51.csv"
    r = a.run(["-q", "compute", t, "--id-column", "id", "-l", "pca", "-o", out])
    if r.rc:
        return message(r)
    bad = _formula_cells(out)
    g = a.run(["-q", "graph", t, "--id-column", "id", "--lens-file", out, "--no-figure", "-o",
               a.work / "g51"])
    return (f"{len(bad)} formula cells; read back by graph --lens-file: exit {g.rc}",
            not bad and g.rc == 0)


@case("I5.2", "formula-like ids in memberships.csv")
def _(a):
    out = a.work / "g52"
    r = a.run(["-q", "graph", _formula_table(a), "--id-column", "id", "-l", "pca",
               "--no-figure", "-o", out])
    if r.rc:
        return message(r)
    bad = _formula_cells(out / "memberships.csv")
    return f"{len(bad)} formula cells in memberships.csv", not bad


@case("I5.3", "formula-like column names and levels in contrast.csv")
def _(a):
    out = a.work / "k53"
    t = _formula_table(a)
    ids = [row[0] for row in read_csv_rows(t)[1:41]]
    (a.work / "frows.txt").write_text("\n".join(ids) + "\n")
    r = a.run(["-q", "contrast", t, "--id-column", "id", "-l", "pca", "--rows-file",
               a.work / "frows.txt", "--no-figure", "--categorical", "=kind()", "-o", out])
    if r.rc:
        return message(r, "^$")  # a run that writes no contrast.csv does not show the case
    bad = _formula_cells(out / "contrast.csv")
    return f"{len(bad)} formula cells in contrast.csv", not bad


# ====================================================================== section 6
@case("I6.1", "error row number with quoted line breaks (spreadsheet row 12, file line 14)")
def _(a):
    path = a.work / "quoted.csv"
    lines = ["id,a,b,note"]
    for i in range(2, 40):  # spreadsheet rows 2.. (the header is row 1)
        note = '"one\ntwo\nthree"' if i == 3 else "x"
        b = "oops" if i == 12 else str(i * 0.5)
        lines.append(f"r{i},{i},{b},{note}")
    path.write_text("\n".join(lines) + "\n")
    r = a.run(["-q", "compute", path, "--id-column", "id", "-f", "a,b", "-l", "pca", "-o",
               a.work / "l61.csv"])
    desc, ok = message(r, r"\b12\b")
    if ok and re.search(r"\b14\b", r.err):
        return desc + " [also names line 14]", False
    return desc, ok


@case("I6.2", "all rows identical: Laplacian lens of arbitrary values")
def _(a):
    path = a.work / "same.csv"
    path.write_text("a,b,c\n" + "1.5,2,3\n" * 200)
    return message(a.run(["-q", "compute", path, "-l", "laplacian", "-o", a.work / "l62.csv"]),
                   "same|identical|distinct")


@case("I6.3", "denormal values (5e-324 steps)")
def _(a):
    path = a.work / "tiny.csv"
    rng = np.random.default_rng(0)
    path.write_text("a,b\n" + "".join(f"{int(v) * 5e-324},{int(w) * 5e-324}\n"
                                      for v, w in rng.integers(0, 50, size=(200, 2))))
    return message(a.run(["-q", "compute", path, "-l", "laplacian", "-o", a.work / "l63.csv"]),
                   "underflow|subnormal|denormal|scale")


# ====================================================================== section 7
@case("I7.1", "--neighbors approximate under NUMBA_NUM_THREADS=1 and =2 (20,000 x 30)")
def _(a):
    t = a.table(20000, seed=2, d=30)  # the size at which the issue saw the values differ
    vals, sides = [], []
    for threads in (1, 2):
        out = a.work / f"l71_{threads}.csv"
        r = a.run(["-q", "compute", t, "--id-column", "id", "--neighbors", "approximate",
                   "-l", "knn_distance", "-l", "laplacian", "-l", "dtm", "-o", out],
                  env=a.env(NUMBA_NUM_THREADS=threads), timeout=900)
        if r.rc:
            return message(r)
        vals.append(np.array([[float(x) for x in row[1:]] for row in read_csv_rows(out)[1:]]))
        sides.append(json.loads(Path(f"{out}.json").read_text()).get("threads"))
    same = np.array_equal(vals[0], vals[1])
    if same:
        return "identical values under 1 and 2 threads", True
    differ = float(np.max(np.abs(vals[0] - vals[1])))
    if sides[0] and sides[0] != sides[1]:
        return (f"values differ (max {differ:.2g}); the sidecar records the thread count "
                f"{sides[0]} / {sides[1]}", True)
    return f"values differ (max {differ:.2g}); thread count not recorded", False


# ====================================================================== section 8
@case("I8.1", "cluster path estimated lenses vs one machine at 20,000 rows (Spearman rho)")
def _(a):
    import pandas as pd
    from scipy.stats import spearmanr

    d = _partitions(a, "p81", 20_000, 4, seed=8)
    lenses = ["eccentricity:p=1", "density", "dtm"]
    out = a.work / "c81"
    r = a.run(["-q", "compute", d, "--scheduler", "local", "--workers", "2", "--id-column",
               "id", *sum((["-l", s] for s in lenses), []), "-o", out], timeout=600)
    if r.rc:
        return message(r)
    full = pd.concat([pd.read_csv(p) for p in sorted(d.glob("*.csv"))])
    full.to_csv(a.work / "full81.csv", index=False)
    one = a.work / "l81.csv"
    r1 = a.run(["-q", "compute", a.work / "full81.csv", "--id-column", "id",
                *sum((["-l", s] for s in lenses), []), "-o", one], timeout=600)
    if r1.rc:
        return message(r1)
    cl = pd.read_parquet(out).set_index("id")
    sm = pd.read_csv(one).set_index("id")
    base = {c.split("[")[0]: c for c in cl.columns if not c.endswith("_error")}
    rhos = {c: spearmanr(cl.loc[sm.index, base[c.split("[")[0]]], sm[c]).statistic
            for c in sm.columns if c.split("[")[0] in base}
    errs = [c for c in cl.columns if c.endswith("_error")]
    text = ", ".join(f"{c} {v:.3f}" for c, v in rhos.items())
    return (f"rho {text}; error columns: {len(errs)}",
            all(v >= 0.95 for v in rhos.values()) and len(rhos) == 3)


@case("I8.2", "cluster path: the per-row error column written")
def _(a):
    import pandas as pd

    # density is exact on the cluster up to 50,000 rows (no error to state); eccentricity
    # with p = 1 and dtm are landmark estimates, so each must carry its per-row error column
    d = _partitions(a, "p82", 2000, 2)
    out = a.work / "c82"
    r = a.run(["-q", "compute", d, "--scheduler", "local", "--workers", "1", "--id-column",
               "id", "-l", "density", "-l", "eccentricity:p=1", "-l", "dtm", "--landmarks",
               "300", "-o", out], timeout=300)
    if r.rc:
        return message(r)
    cols = list(pd.read_parquet(out).columns)
    estimated = [c for c in cols if c.startswith(("eccentricity", "dtm")) and
                 not c.endswith("_error")]
    return f"columns {cols}", bool(estimated) and all(f"{c}_error" in cols for c in estimated)


@case("I8.3", "cluster path: Scott density on a constant column (Cholesky)")
def _(a):
    d = _partitions(a, "p83", 1000, 2, const=True)
    return message(a.run(["-q", "compute", d, "--scheduler", "local", "--workers", "1",
                          "--id-column", "id", "-l", "density:bandwidth=scott", "--landmarks",
                          "200", "-o", a.work / "c83"], timeout=300), "singular|constant")


# ====================================================================== further hostile input
def _compute(a, table, *more, out="lx.csv", timeout=120):
    return a.run(["-q", "compute", table, *more, "-l", "pca", "-o", a.work / out],
                 timeout=timeout)


@case("X1", "an empty file (0 bytes)")
def _(a):
    (a.work / "empty.csv").write_bytes(b"")
    return message(_compute(a, a.work / "empty.csv"), "empty")


@case("X2", "a header-only file")
def _(a):
    (a.work / "header.csv").write_text("id,a,b\n")
    return message(_compute(a, a.work / "header.csv"), "row")


@case("X3", "a file of one row")
def _(a):
    (a.work / "one.csv").write_text("a,b\n1,2\n")
    return message(_compute(a, a.work / "one.csv"), "row")


@case("X4", "a gzip file named .csv")
def _(a):
    data = a.table(300).read_bytes()
    (a.work / "gz.csv").write_bytes(gzip.compress(data))
    r = _compute(a, a.work / "gz.csv", "--id-column", "id")
    return ok_run(r, "read as gzip") if r.rc == 0 else message(r, "gzip|compress|binary|text")


@case("X5", "a UTF-16 file with a BOM")
def _(a):
    text = a.table(300).read_text()
    (a.work / "u16.csv").write_bytes(text.encode("utf-16"))
    r = _compute(a, a.work / "u16.csv", "--id-column", "id")
    return ok_run(r, "read as UTF-16") if r.rc == 0 else message(r, "UTF-16|encoding")


@case("X6", "a UTF-8 BOM before the header")
def _(a):
    text = a.table(300).read_text()
    (a.work / "bom.csv").write_bytes(b"\xef\xbb\xbf" + text.encode())
    r = _compute(a, a.work / "bom.csv", "--id-column", "id", out="l_x6.csv")
    if r.rc == 0:
        head = read_csv_rows(a.work / "l_x6.csv")[0][0]
        return (f"exit 0, id column {head!r}", head == "id")
    return message(r)


@case("X7", "duplicate column names")
def _(a):
    (a.work / "dup.csv").write_text("id,a,a,b\n" + "".join(
        f"r{i},{i},{i * 2 % 7},{i % 5}\n" for i in range(100)))
    return message(_compute(a, a.work / "dup.csv", "--id-column", "id"), r"\ba\b")


@case("X8", "a feature column all NaN")
def _(a):
    (a.work / "nancol.csv").write_text("id,a,b,c\n" + "".join(
        f"r{i},{i},{i * 2 % 7},nan\n" for i in range(100)))
    return message(_compute(a, a.work / "nancol.csv", "--id-column", "id"), r"\bc\b")


@case("X9", "inf values in a feature")
def _(a):
    rows = [f"r{i},{i},{'inf' if i == 7 else i % 5}\n" for i in range(100)]
    (a.work / "inf.csv").write_text("id,a,b\n" + "".join(rows))
    return message(_compute(a, a.work / "inf.csv", "--id-column", "id"), "r7|row 9", "b")


@case("X10", "a 1e6-character text field")
def _(a):
    t = a.table(300, name="long.csv", extra={"note": ["x" * (10**6 if i == 5 else 3)
                                                     for i in range(300)]})
    return ok_run(_compute(a, t, "--id-column", "id", timeout=120), "the text column passed")


@case("X11", "a row with extra fields")
def _(a):
    rows = [f"r{i},{i},{i % 5}" + (",9,9" if i == 20 else "") + "\n" for i in range(100)]
    (a.work / "extra.csv").write_text("id,a,b\n" + "".join(rows))
    return message(_compute(a, a.work / "extra.csv", "--id-column", "id"), r"\b22\b|r20")


@case("X12", "a semicolon-separated file")
def _(a):
    text = a.table(300).read_text().replace(",", ";")
    (a.work / "semi.csv").write_text(text)
    r = _compute(a, a.work / "semi.csv", "--id-column", "id", out="l_x12.csv")
    if r.rc == 0:
        cols = read_csv_rows(a.work / "l_x12.csv")[0]
        return (f"exit 0, columns {cols}", cols == ["id", "pca_1", "pca_2"])
    return message(r)


@case("X13", "-o is the input table itself")
def _(a):
    t = a.table(300, name="self.csv")
    before = t.read_bytes()
    r = a.run(["-q", "compute", t, "--id-column", "id", "-l", "pca", "-o", t])
    same = t.read_bytes() == before
    desc, ok = message(r, "input")
    return desc + ("" if same else "; the input was overwritten"), ok and same


@case("X14", "-o is a symlink to another folder")
def _(a):
    target = a.folder("x14target")
    (target / "mine.txt").write_text("user file")
    link = a.work / "x14link"
    if link.is_symlink() or link.exists():
        link.unlink()
    link.symlink_to(target)
    r = a.run(["-q", "graph", a.table(), "--id-column", "id", "-l", "pca", "--no-figure",
               "-o", link])
    if r.rc == 0:
        ok = (link.is_symlink() and (target / "mine.txt").exists()
              and graph_folder_state(target).startswith("consistent"))
        return (f"exit 0; link kept: {link.is_symlink()}, written into the target: "
                f"{graph_folder_state(target)}", ok)
    return message(r, "link")


@case("X15", "the output folder's parent removed while the run writes its files")
def _(a):
    parent = a.work / "x15parent"
    out = parent / "out"
    t = a.table(300)
    res = []
    for k in (1, 2):  # while the files are staged; at the first move into place
        a.folder("x15parent")
        a.run(["-q", "graph", t, "--id-column", "id", "-l", "pca", "--no-figure", "-o", out])
        r = a.run(["-q", "graph", t, "--id-column", "id", "-l", "pca", "--no-figure", "-o",
                   out], env=a.env(AUDIT_KILL_AT=k, AUDIT_SIG=0, AUDIT_RMTREE=parent))
        if r.rc == 0:
            state = graph_folder_state(out)
            res.append((f"exit 0; {state}", state.startswith("consistent")))
        else:
            res.append(message(r, "x15parent|out"))
    return "; ".join(d for d, _ in res), all(ok for _, ok in res)


def _signal_case(a, argv, sig, *, at_move=None, delay=None, out=None):
    env = a.env(AUDIT_KILL_AT=at_move, AUDIT_SIG=int(sig)) if at_move else a.env()
    r = a.run(argv, env=env, signal_after=(delay, sig) if delay else None)
    want = 128 + int(sig)
    left = hidden_leftovers(out) if out else []
    desc = (f"exit {r.rc}, {'traceback' if r.traceback else short(r.last_error(), 50)!s}; "
            f"{len(left)} staging/temp left")
    return desc, r.rc == want and not r.traceback and not left and bool(r.last_error())


#: (case, title, command, table rows, extra arguments, signal, at the k-th move or after seconds)
_SIGNALLED = [
    ("X16", "SIGINT (Ctrl-C) while graph moves its files in", "graph", 300,
     ["-l", "pca", "--no-figure"], signal.SIGINT, {"at_move": 2}),
    ("X17", "SIGINT (Ctrl-C) while screen computes", "screen", 20000, ["--no-figures"],
     signal.SIGINT, {"delay": 6}),
    ("X18", "SIGTERM while graph moves its files in", "graph", 300,
     ["-l", "pca", "--no-figure"], signal.SIGTERM, {"at_move": 2}),
    ("X19", "SIGTERM while compute computes", "compute", 200000,
     ["-l", "laplacian", "-l", "dtm", "-l", "density"], signal.SIGTERM, {"delay": 6}),
]


def _signalled(command, n, extra, sig, when):
    def run(a):
        out = a.work / f"sig_{command}_{int(sig)}{'.csv' if command == 'compute' else ''}"
        return _signal_case(a, ["-q", command, a.table(n, seed=3 if n > 300 else 0),
                                "--id-column", "id", *extra, "-o", out], sig, out=out, **when)
    return run


for _cid, _title, _command, _n, _extra, _sig, _when in _SIGNALLED:
    case(_cid, _title)(_signalled(_command, _n, _extra, _sig, _when))


@case("X20", "SIGINT / SIGTERM while contrast and stability move files in")
def _(a):
    t = a.table()
    res = []
    for cmd, sig in (("contrast", signal.SIGINT), ("stability", signal.SIGTERM)):
        out = a.work / f"x20{cmd}"
        rows = ["--rows", ",".join(f"r{i}" for i in range(40))] if cmd == "contrast" else []
        res.append(_signal_case(a, ["-q", cmd, t, "--id-column", "id", "-l", "pca", *rows,
                                    "--no-figure", "-o", out], sig, at_move=1, out=out))
    return "; ".join(f"{c}: {d}" for c, (d, _) in zip(("contrast", "stability"), res)), \
        all(ok for _, ok in res)


@case("X21", "lens specs: unicode, 10,000-character and nested-bracket names")
def _(a):
    specs = ["dénsité", "x" * 10_000, "eccentricity[p=[1]]", "pca:components=２",
             "density:bandwidth=[1,[2]]", "pca:components=2,components=3", "ｐｃａ", "pca:",
             ":", "pca::components=2", "dtm:mass=1e-400", "pca_9"]
    recs = a.batch([["-q", "compute", str(a.table()), "--id-column", "id", "-l", s, "-o",
                     str(a.work / "l_x21.csv")] for s in specs], per=60)
    return _judge_batch(specs, recs, names=None, max_len=400)


def _judge_batch(labels, recs, names=None, max_len=None):
    bad = []
    for i, (label, rec) in enumerate(zip(labels, recs)):
        text = rec["out"]
        why = None
        if rec["exc"]:
            why = rec["exc"]
        elif rec["rc"] not in (0, 1, 2):
            why = f"exit {rec['rc']}"
        elif rec["rc"] and "Error" not in text:
            why = "no message"
        elif rec["rc"] and names and not re.search(names[i], text, re.I):
            why = f"does not name {names[i]}: {short(text, 60)}"
        elif max_len and len(text) > max_len:
            why = f"message of {len(text)} characters"
        if why:
            bad.append(f"{short(label, 30)} -> {short(why, 70)}")
    desc = f"{len(labels) - len(bad)}/{len(labels)} handled"
    return (desc + (": " + "; ".join(bad[:4]) + (" ..." if len(bad) > 4 else "") if bad
                    else ""), not bad)


ABSURD = ("-5", "0", "nan", "1e308", "2.5", "inf")

GRAPH_NUMERIC = {"-k": ABSURD, "--intervals": ABSURD + ("1000000000",),
                 "--overlap": ("-0.1", "1", "nan", "1e308", "inf"),
                 "--min-size": ABSURD, "--radius": ("-1", "0", "nan", "1e308", "inf"),
                 "--centres": ABSURD, "--gap-bins": ABSURD, "--hole-scales": ABSURD,
                 "--cutoff": ("-1", "0", "nan", "1e308", "inf"),
                 "--min-neighbors": ABSURD, "--seed": ("-5", "nan", "1e308", "2.5")}


def _absurd(a, command, options, base, *, needs_cover_ball=("--radius", "--centres")):
    argvs, labels, names = [], [], []
    for opt, values in options.items():
        for v in values:
            extra = ["--cover", "ball"] if opt in needs_cover_ball else []
            argvs.append([*base[:1], command, *base[1:], *extra, opt, v])
            labels.append(f"{opt} {v}")
            names.append(re.escape(opt.lstrip("-")).replace("\\-", "[-_ ]")
                         if len(opt) > 2 else {"-k": r"-k|\bk\b", "-n": r"-n\b|count"}[opt])
    return _judge_batch(labels, a.batch(argvs, per=60), names=names)


@case("X22", "absurd numbers for every numeric option of graph (66 values)")
def _(a):
    base = ["-q", str(a.table()), "--id-column", "id", "-l", "pca", "--no-figure", "-o",
            str(a.work / "g_x22")]
    return _absurd(a, "graph", GRAPH_NUMERIC, base)


@case("X23", "absurd numbers for screen, compute, bootstrap, stability, contrast, compare")
def _(a):
    t = str(a.table())
    sets = [
        ("screen", {"-n": ABSURD, "--ceiling": ("-1", "nan", "2", "inf"), "--bins": ABSURD,
                    "--sample": ("-5", "0", "1", "nan", "1e308", "2.5")},
         ["-q", t, "--id-column", "id", "--no-probe", "--no-figures", "-o", "s_x23"]),
        ("compute", {"--landmarks": ("-5", "0", "1e308", "nan"),
                     "--workers": ("-5", "0", "1e308")},
         ["-q", t, "--id-column", "id", "-l", "pca", "-o", "l_x23.csv"]),
        ("bootstrap", {"--resamples": ABSURD, "--fraction": ("-1", "0", "nan", "2", "inf")},
         ["-q", t, "--id-column", "id", "-l", "pca", "--no-figure", "-o", "b_x23"]),
        ("stability", {"--interval-counts": ("0", "-3", "nan", "1e308", "1000000000"),
                       "--overlaps": ("-1", "1", "nan", "inf")},
         ["-q", t, "--id-column", "id", "-l", "pca", "--no-figure", "-o", "st_x23"]),
        ("contrast", {"--hops": ABSURD, "--alpha": ("-1", "0", "nan", "2"),
                      "--top": ABSURD, "--max-levels": ABSURD},
         ["-q", t, "--id-column", "id", "-l", "pca", "--rows",
          ",".join(f"r{i}" for i in range(40)), "--no-figure", "-o", "k_x23"]),
        ("compare", {"--match": ("-1", "nan", "2", "inf")},
         ["-q", t, "--id-column", "id", "-l", "pca", "-l", "density", "--no-figure", "-o",
          "c_x23"]),
        ("report", {"--top": ABSURD, "--contrast-rows": ("-5", "nan", "1e308", "2.5")},
         ["-q", t, "--id-column", "id", "-o", "r_x23.html"]),
    ]
    descs, oks = [], []
    for command, options, base in sets:
        if command == "report":
            base = [*base[:-2], "--graph", str(_graph_folder(a)), "-o", base[-1]]
        d, ok = _absurd(a, command, options, base, needs_cover_ball=())
        descs.append(f"{command} {d}")
        oks.append(ok)
    return "; ".join(descs), all(oks)


def _graph_folder(a):
    out = a.work / "g_ref"
    if not (out / "graph.json").exists():
        a.run(["-q", "graph", a.table(), "--id-column", "id", "-l", "pca", "--no-figure",
               "-o", out])
    return out


@case("X24", "--sample larger than the table")
def _(a):
    return ok_run(a.run(["-q", "screen", a.table(), "--id-column", "id", "--no-probe",
                         "--no-figures", "--sample", "100000", "-o", a.work / "s_x24"]),
                  "every row ranked")


@case("X25", "--scheduler with an unreachable address")
def _(a):
    d = _partitions(a, "p25", 200, 1)
    r = a.run(["-q", "compute", d, "--scheduler", "tcp://127.0.0.1:9", "--id-column", "id",
               "-l", "pca", "-o", a.work / "c_x25"], timeout=120)
    desc, ok = message(r, "127.0.0.1:9|scheduler")
    return desc, ok and r.secs < 60


def _lens_file_variant(a, name, edit):
    la = a.work / "l_ref.csv"
    if not la.exists():
        a.run(["-q", "compute", a.table(), "--id-column", "id", "-l", "pca", "-o", la])
    rows = read_csv_rows(la)
    rows = [rows[0]] + edit(rows[1:])
    path = a.work / name
    with open(path, "w", newline="") as fh:
        csv.writer(fh).writerows(rows)
    shutil.copy(f"{la}.json", f"{path}.json")
    return path


def _graph_with(a, lens_file, out):
    return a.run(["-q", "graph", a.table(), "--id-column", "id", "--lens-file", lens_file,
                  "--no-figure", "-o", a.work / out])


@case("X26", "lens file with NaN rows")
def _(a):
    f = _lens_file_variant(a, "l_nan.csv", lambda rs: [r if i != 4 else [r[0], "nan", "nan"]
                                                       for i, r in enumerate(rs)])
    return message(_graph_with(a, f, "g_x26"), r"r4|row 6", ok_rc0=False)


@case("X27", "lens file with ids of another table")
def _(a):
    f = _lens_file_variant(a, "l_ids.csv", lambda rs: [[f"z{i}", *r[1:]]
                                                       for i, r in enumerate(rs)])
    return message(_graph_with(a, f, "g_x27"), "id")


@case("X28", "lens file with its rows reordered (matched by id: the same graph)")
def _(a):
    f = _lens_file_variant(a, "l_rev.csv", lambda rs: rs[::-1])
    ref = _graph_with(a, a.work / "l_ref.csv", "g_x28a")
    r = _graph_with(a, f, "g_x28b")
    if r.rc or ref.rc:
        return message(r)
    same = (a.work / "g_x28a" / "memberships.csv").read_bytes() == \
        (a.work / "g_x28b" / "memberships.csv").read_bytes()
    return ("exit 0, memberships " + ("identical" if same else "differ")), same


@case("X29", "lens file with extra rows (ids not in the table)")
def _(a):
    f = _lens_file_variant(a, "l_more.csv", lambda rs: rs + [[f"extra{i}", "0.1", "0.2"]
                                                             for i in range(5)])
    r = _graph_with(a, f, "g_x29")
    return ok_run(r, "the extra ids left aside") if r.rc == 0 else message(r, "extra|id")


@case("X30", "report (and graph) where no cover element keeps a group: a 0-node graph")
def _(a):
    r = a.run(["-q", "report", a.table(), "--id-column", "id", "--min-size", "299",
               "--fragments", "report", "-o", a.work / "r_x30.html"], timeout=300)
    return ok_run(r, "page written") if r.rc == 0 else message(r, "node|empty", "min-size")


@case("X31", "compare with one view")
def _(a):
    r = a.run(["-q", "compare", a.table(), "--id-column", "id", "-l", "pca", "--no-figure",
               "-o", a.work / "c_x31"])
    return message(r, "two|view")


@case("X32", "contrast with a one-row group")
def _(a):
    r = a.run(["-q", "contrast", a.table(), "--id-column", "id", "-l", "pca", "--rows", "r0",
               "--no-figure", "-o", a.work / "k_x32"])
    return ok_run(r, "contrast written") if r.rc == 0 else message(r, "row")


@case("X33", "Parquet with list and struct columns")
def _(a):
    p = _parquet(a, "nested.parquet", "list")
    r = a.run(["-q", "graph", p, "--id-column", "id", "-l", "pca", "--no-figure", "-o",
               a.work / "g_x33"])
    return ok_run(r, "nested columns left aside") if r.rc == 0 else message(r, r"\bl\b|\bs\b")


@case("X34", "a table of only text columns")
def _(a):
    (a.work / "text.csv").write_text("id,a,b\n" + "".join(f"r{i},x{i},y\n" for i in range(50)))
    return message(_compute(a, a.work / "text.csv", "--id-column", "id"), "numeric|feature")


@case("X35", "a single numeric column (graph -l pca)")
def _(a):
    t = a.table(300, name="single.csv", d=2)
    (a.work / "single1.csv").write_text("\n".join(
        ",".join(r[:2]) for r in read_csv_rows(t)) + "\n")
    r = a.run(["-q", "graph", a.work / "single1.csv", "--id-column", "id", "-l", "pca",
               "--no-figure", "-o", a.work / "g_x35"])
    return ok_run(r, "one component") if r.rc == 0 else message(r, "column|feature")


@case("X36", "duplicate ids")
def _(a):
    ids = [f"r{i % 150}" for i in range(300)]
    t = a.table(300, name="dupids.csv", ids=ids)
    return message(_compute(a, t, "--id-column", "id"), "r0|duplicate")


@case("X37", "TABLE is /dev/zero (endless input)")
def _(a):
    r = _compute(a, "/dev/zero", timeout=60)
    return message(r, "zero|file|text|binary")


@case("X38", "an NPY file holding Python objects (pickle)")
def _(a):
    arr = np.empty((20, 2), dtype=object)
    arr[:] = 1.0
    np.save(a.work / "obj.npy", arr, allow_pickle=True)
    return message(_compute(a, a.work / "obj.npy"), "object|pickle")


@case("X39", "a 3-D NPY array")
def _(a):
    np.save(a.work / "cube.npy", np.zeros((10, 3, 3)))
    return message(_compute(a, a.work / "cube.npy"), "dimension|2-D|shape|3")


@case("X40", "a lens file that is a plain table (no sidecar)")
def _(a):
    r = a.run(["-q", "graph", a.table(), "--id-column", "id", "--lens-file", a.table(),
               "--no-figure", "-o", a.work / "g_x40"])
    return ok_run(r, "columns read") if r.rc == 0 else message(r, "sidecar|json")


@case("X41", "--delimiter of two characters, and an empty one")
def _(a):
    res = [message(_compute(a, a.table(), "--id-column", "id", "--delimiter", d), "delimiter")
           for d in ("ab", "")]
    return "; ".join(d for d, _ in res), all(ok for _, ok in res)


@case("X42", "-o '' (empty output path)")
def _(a):
    return message(a.run(["-q", "graph", a.table(), "--id-column", "id", "-l", "pca",
                          "--no-figure", "-o", ""]), "out|path|folder")


@case("X43", "--rows-file with ids not in the table, and an empty --rows")
def _(a):
    (a.work / "rows.txt").write_text("nope1\nnope2\n")
    res = []
    for extra in (["--rows-file", a.work / "rows.txt"], ["--rows", ""]):
        res.append(message(a.run(["-q", "contrast", a.table(), "--id-column", "id", "-l", "pca",
                                  *extra, "--no-figure", "-o", a.work / "k_x43"]), "row|id"))
    return "; ".join(d for d, _ in res), all(ok for _, ok in res)


@case("X44", "-o of compute is an existing folder")
def _(a):
    a.folder("x44dir")
    return message(a.run(["-q", "compute", a.table(), "--id-column", "id", "-l", "pca", "-o",
                          a.work / "x44dir"]), "x44dir|folder|director")


@case("X45", "a lens file whose sidecar is truncated JSON")
def _(a):
    f = _lens_file_variant(a, "l_badjson.csv", lambda rs: rs)
    Path(f"{f}.json").write_text('{"columns": [')
    r = _graph_with(a, f, "g_x45")
    return ok_run(r, "read with a warning") if r.rc == 0 and "Warning" in r.err else \
        message(r, "json|sidecar")


@case("X46", "an unknown file ending (.xlsx)")
def _(a):
    shutil.copy(a.table(), a.work / "t.xlsx")
    return message(_compute(a, a.work / "t.xlsx"), "xlsx|format|ending")


def _rows_file(a, name, header, rows):
    (a.work / name).write_text(header + "\n" + "".join(r + "\n" for r in rows))
    return a.work / name


@case("X47", "a semicolon file with decimal commas (0,126)")
def _(a):
    rng = np.random.default_rng(0)
    rows = [f"r{i};{x:.3f};{y:.3f}".replace(".", ",")
            for i, (x, y) in enumerate(rng.normal(size=(100, 2)))]
    f = _rows_file(a, "euro.csv", "id;a;b", rows)
    return message(_compute(a, f, "--id-column", "id"), "decimal comma", r"\ba\b")


@case("X48", "values near 1e200 (squared distances overflow)")
def _(a):
    rng = np.random.default_rng(0)
    f = _rows_file(a, "huge.csv", "a,b", [f"{x * 1e200},{y}" for x, y in rng.normal(size=(100, 2))])
    # kept in its units: refused, naming the column; by default (--scale auto) the columns'
    # ranges differ by 1e200x, so they are standardised, with a warning that says so
    raw = message(_compute(a, f, "--scale", "none"), "overflow|scale", r"\ba\b")
    r = _compute(a, f, out="l_x48.csv")
    said = re.search(r"differ in range by .*standardised", r.err + r.out, re.S)
    auto = (f"default: exit {r.rc}, {'standardised with a warning' if said else 'no warning'}",
            r.rc == 0 and bool(said) and not r.traceback)
    return f"--scale none: {raw[0]}; {auto[0]}", raw[1] and auto[1]


@case("X49", "CRLF line ends and trailing blank lines")
def _(a):
    text = a.table(300).read_text().replace("\n", "\r\n") + "\r\n\r\n"
    (a.work / "crlf.csv").write_bytes(text.encode())
    r = _compute(a, a.work / "crlf.csv", "--id-column", "id", out="l_x49.csv")
    if r.rc == 0:
        n = len(read_csv_rows(a.work / "l_x49.csv")) - 1
        return f"exit 0, {n} rows", n == 300
    return message(r)


@case("X50", "an empty id cell")
def _(a):
    rows = [f"{'' if i == 3 else f'r{i}'},{i % 7},{i % 5}" for i in range(100)]
    return message(_compute(a, _rows_file(a, "noid.csv", "id,a,b", rows), "--id-column", "id"),
                   r"\b5\b", "id")


@case("X51", "-o /dev/null and -o with an unknown ending (.txt)")
def _(a):
    res = [message(_compute(a, a.table(), "--id-column", "id", out="/dev/null"), "regular"),
           message(_compute(a, a.table(), "--id-column", "id", out="l.txt"), r"\.csv")]
    bad = "format=" in res[1][0]
    return "; ".join(d for d, _ in res) + (" [a Python name]" if bad else ""), \
        all(ok for _, ok in res) and not bad


@case("X52", "report --graph on a truncated graph.json")
def _(a):
    folder = a.folder("gbad")
    (folder / "graph.json").write_text('{"format": "lenswork-graph", "nodes": [')
    return message(a.run(["-q", "report", a.table(), "--id-column", "id", "--graph", folder,
                          "-o", a.work / "r_x52.html"]), "graph.json", "JSON")


def _session_alive(pid):
    """Processes still in the session ``pid`` started (setsid): Dask workers left behind."""
    out = subprocess.run(["ps", "-e", "-o", "sid=,pid="], capture_output=True, text=True).stdout
    return [ln.split()[1] for ln in out.splitlines() if ln.split()[0] == str(pid)]


@case("X53", "Ctrl-C (to the process group) during a cluster run: exit 130, no worker left")
def _(a):
    d = _partitions(a, "p53", 200_000, 4)
    out = a.work / "c53"

    def limits():
        os.setsid()

    proc = subprocess.Popen([sys.executable, "-c", _CLI, "-q", "compute", str(d), "--scheduler",
                             "local", "--workers", "2", "--id-column", "id", "-l", "density",
                             "-l", "dtm", "-o", str(out)], env=a.env(), cwd=a.work,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            preexec_fn=limits)
    time.sleep(8)  # the cluster is up after about 4 s; 200,000 rows take about 20 s
    os.killpg(proc.pid, signal.SIGINT)  # as a terminal's Ctrl-C: every process of the group
    try:
        _, err = proc.communicate(timeout=60)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)
        return "hang after SIGINT (stopped after 60 s)", False
    time.sleep(5)
    left = _session_alive(proc.pid)
    for pid in left:
        with contextlib.suppress(OSError):
            os.kill(int(pid), signal.SIGKILL)
    r = Ran(proc.returncode, "", err, 0, False)
    desc = (f"exit {r.rc}, {'traceback' if r.traceback else short(r.last_error(), 50)}; "
            f"{len(left)} processes left; {len(hidden_leftovers(out))} staging left")
    return desc, r.rc == 130 and not left and not r.traceback and not hidden_leftovers(out)


@case("X54", "cluster path: -o is the folder of input partitions")
def _(a):
    d = _partitions(a, "p54", 600, 2)
    before = sorted(p.name for p in d.iterdir())
    r = a.run(["-q", "compute", d, "--scheduler", "local", "--workers", "1", "--id-column",
               "id", "-l", "pca", "-o", d], timeout=240)
    kept = sorted(p.name for p in d.iterdir()) == before
    desc, ok = message(r, "p54")
    return desc + ("" if kept else "; the input partitions were replaced"), ok and kept


@case("X55", "cluster path: partitions with different columns")
def _(a):
    d = _partitions(a, "p55", 600, 2)
    (d / "part-1.csv").write_text("id,a,b,zz\n" + "".join(f"q{i},1,2,3\n" for i in range(50)))
    return message(a.run(["-q", "compute", d, "--scheduler", "local", "--workers", "1",
                          "--id-column", "id", "-l", "pca", "-o", a.work / "c55"], timeout=240),
                   "part-1|column")


@case("X56", "cluster path: a glob that matches nothing")
def _(a):
    return message(a.run(["-q", "compute", str(a.work / "nothing-*.parquet"), "--scheduler",
                          "local", "--workers", "1", "-l", "pca", "-o", a.work / "c56"],
                         timeout=240), "nothing-|match|no ")


@case("X57", "a lens file whose column was renamed (sidecar lists another)")
def _(a):
    f = _lens_file_variant(a, "l_ren.csv", lambda rs: rs)
    rows = read_csv_rows(f)
    rows[0][1] = "other"
    with open(f, "w", newline="") as fh:
        csv.writer(fh).writerows(rows)
    r = _graph_with(a, f, "g_x57")
    if r.rc == 0:
        return (("exit 0 with a warning", True) if re.search("sidecar|does not match", r.err)
                else ("exit 0: accepted silently", False))
    return message(r, "other|pca_1|sidecar")


@case("X58", "graph on 5 rows, and a product cover of 10 lens columns")
def _(a):
    res = [message(a.run(["-q", "graph", _rows_file(a, "five.csv", "a,b", [f"{i},{i * i % 3}"
                                                                          for i in range(5)]),
                          "-l", "pca", "--no-figure", "-o", a.work / "g_x58a"]),
                   "row", ok_rc0=True)]
    t = a.table(300, name="t300d10.csv", d=10)
    r = a.run(["-q", "graph", t, "--id-column", "id", "-l", "pca:components=10",
               "--no-figure", "-o", a.work / "g_x58b"], timeout=180)
    res.append(ok_run(r, "graph built") if r.rc == 0 else message(r, "lens|column|cover"))
    return "; ".join(d for d, _ in res), all(ok for _, ok in res)


@case("X59", "-o a dangling symlink; a folder named graph.json inside the -o folder")
def _(a):
    link = a.work / "x59link"
    if link.is_symlink():
        link.unlink()
    link.symlink_to(a.work / "x59-missing")
    res = [message(a.run(["-q", "graph", a.table(), "--id-column", "id", "-l", "pca",
                          "--no-figure", "-o", link]), "symbolic link|x59-missing")]
    out = a.work / "g_x59"
    a.run(["-q", "graph", a.table(), "--id-column", "id", "-l", "pca", "--no-figure", "-o", out])
    before = {p.name: p.read_bytes() for p in out.iterdir() if p.is_file()}
    (out / "graph.svg").mkdir()  # in the way of the next run's drawing
    r = a.run(["-q", "graph", a.table(), "--id-column", "id", "-l", "pca", "--intervals", "3",
               "-o", out])
    after = {p.name: p.read_bytes() for p in out.iterdir() if p.is_file()}
    desc, ok = message(r, "graph.svg")
    res.append((desc + ("" if after == before else "; earlier files replaced"),
                ok and after == before))
    return "; ".join(d for d, _ in res), all(ok for _, ok in res)


# ---------------------------------------------------------------------- main
def run_cases(src, only=None):
    results = []
    with tempfile.TemporaryDirectory(prefix="lenswork-audit-") as work:
        audit = Audit(src, work)
        for cid, title, fn in CASES:
            if only and cid not in only:
                continue
            start = time.perf_counter()
            try:
                outcome, ok = fn(audit)
            except Exception as err:  # the audit itself failed on this case: say so
                outcome, ok = f"audit error: {type(err).__name__}: {short(err, 80)}", False
            secs = time.perf_counter() - start
            verdict = {True: "PASS", False: "FAIL", None: "n/a"}[ok]
            print(f"{cid:5} {verdict:4} {secs:6.1f}s  {title}\n             {outcome}",
                  flush=True)
            results.append({"id": cid, "case": title, "outcome": outcome, "verdict": verdict})
    return results


def table(before_path, after_path):
    before = {r["id"]: r for r in json.loads(Path(before_path).read_text())}
    after = {r["id"]: r for r in json.loads(Path(after_path).read_text())}
    lines = ["| id | case | before (90fbf76) | after |", "|---|---|---|---|"]
    for cid, rec in after.items():
        b = before.get(cid, {"verdict": "n/a", "outcome": "not run"})
        cell = lambda r: f"**{r['verdict']}** {r['outcome']}".replace("|", "\\|")  # noqa: E731
        lines.append(f"| {cid} | {rec['case'].replace('|', '/')} | {cell(b)} | {cell(rec)} |")
    for name, res in (("before", before), ("after", after)):
        n = sum(r["verdict"] == "PASS" for r in res.values())
        lines.append(f"\n{name}: {n} of {len(after)} cases pass")
    return "\n".join(lines)


def main():
    global VERBOSE
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--src", default=SRC_DEFAULT, help="the lenswork source folder to audit")
    p.add_argument("--only", default="", help="comma-separated case ids")
    p.add_argument("--json", help="write the results to this JSON file")
    p.add_argument("--table", nargs=2, metavar=("BEFORE", "AFTER"),
                   help="print the markdown table of two result files and exit")
    p.add_argument("-v", "--verbose", action="store_true", help="print every command run")
    args = p.parse_args()
    if args.table:
        print(table(*args.table))
        return
    VERBOSE = args.verbose
    only = set(filter(None, args.only.split(",")))
    results = run_cases(args.src, only)
    n = sum(r["verdict"] == "PASS" for r in results)
    print(f"\n{n} of {len(results)} cases pass ({args.src})")
    if args.json:
        Path(args.json).write_text(json.dumps(results, indent=1))


if __name__ == "__main__":
    main()
