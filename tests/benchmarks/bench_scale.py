"""Benchmark: `lenswork screen` and `lenswork graph` end to end at 1e5 and 1e6 rows.

Generates a seeded 1e6 x 20 table (or smaller): a noisy loop with a flare (a
segment leaving the loop at one point), embedded by a random orthonormal map
in 6 of the 20 dimensions, plus noise of sd 0.1 in all 20 (14 of them pure
noise). Saved as .npy so that reading the table costs little. Then, each in a
FRESH process (so numba compilation and imports are included):

1. ``lenswork screen TABLE`` with default options: wall time, peak RSS of the
   child (VmHWM of its own address space, read at exit: getrusage would carry
   the parent's high-water mark over), and per-step seconds parsed from its
   progress output on stderr (``LENSWORK_PROGRESS=1``; "label ... 1.23 s"
   lines and loop lines, nested steps kept apart); whatever the top-level
   steps do not cover (start-up, reading) is "other". Above 50,000 rows the
   screen ranks on a seeded sample and confirms the chosen lenses on all rows;
   its sample lines (rule, bootstrap error, Spearman agreement) are printed.
   ``--full-check N`` (default 1e5) also runs ``--sample all`` at N rows and
   compares the two choices.
2. ``lenswork graph TABLE --lens-file OUT/lenses.csv`` on the chosen lenses at
   the largest size.
3. Per-lens costs: each default candidate (``lenswork.default_candidates``)
   computed by ``lenswork.compute_lenses`` on a Workspace, the shared
   neighbour graph timed first (as the screen builds it: k = 30), with each
   lens's mode and error read from its LensColumn info.

The machine is shared (2 cores, other work running): quote ratios and
scaling, not absolute seconds. ``--src DIR`` runs another checkout's
``src`` (e.g. the code before a change) for a before/after comparison.

``--graph-only 1e5,1e6`` skips the screen: at each size it writes a lens file
with ``lenswork compute TABLE -l pca:components=2`` (``--graph-lenses``; timed
apart) and runs step 2 on it, once per ``--src`` and ``--before-src`` (e.g.
the main checkout's ``src``), so the two codes are compared in one run.

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_scale.py [--quick]
      [--sizes 1e5,1e6] [--lens-sizes 1e4,1e5,1e6] [--full-check 1e5|''] [--src DIR]
      [--graph-only 1e5,1e6 [--graph-lenses SPEC,...] [--graph-use COLS] [--before-src DIR]]
"""

from __future__ import annotations

import argparse
import json
import os
import re
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

SEED = 20261203
HERE = Path(__file__).resolve().parent
SRC = HERE.parents[1] / "src"

# Run in the child: the CLI, then this process's peak RSS (VmHWM) written to a file at exit.
_LAUNCH = """
import atexit, sys
def _peak(path=sys.argv.pop(1)):
    for line in open('/proc/self/status'):
        if line.startswith('VmHWM:'):
            open(path, 'w').write(line.split()[1])
atexit.register(_peak)
sys.argv[0] = 'lenswork'
from lenswork.cli import main
main()
"""


def make_table(n, rng):
    """n x 20: a noisy loop with a flare in 6 dimensions, noise in all 20; seeded."""
    n_flare = n // 7
    t = rng.uniform(0, 2 * np.pi, n - n_flare)
    loop = np.column_stack([np.cos(t), np.sin(t), np.zeros_like(t)])
    s = rng.uniform(0, 1.5, n_flare)  # the flare leaves the loop at (1, 0, 0)
    flare = np.column_stack([1 + s, 0.3 * s, 0.6 * s])
    Z = np.vstack([loop, flare])[rng.permutation(n)]
    Q, _ = np.linalg.qr(rng.normal(size=(6, 3)))  # orthonormal 3 -> 6 map
    X = rng.normal(scale=0.1, size=(n, 20))
    X[:, :6] += Z @ Q.T
    return X


def run_cli(args, src, workdir):
    """Run the CLI in a fresh process; (wall seconds, peak MiB, stderr, stdout, exit code)."""
    peak_file = Path(workdir) / "peak.txt"
    env = dict(os.environ, PYTHONPATH=str(src), MPLBACKEND="Agg", LENSWORK_PROGRESS="1")
    cmd = [sys.executable, "-c", _LAUNCH, str(peak_file), *args]
    start = time.perf_counter()
    proc = subprocess.run(cmd, capture_output=True, text=True, env=env)
    wall = time.perf_counter() - start
    peak = int(peak_file.read_text()) / 1024 if peak_file.exists() else float("nan")
    peak_file.unlink(missing_ok=True)
    return wall, peak, proc.stderr, proc.stdout, proc.returncode


_STEP = re.compile(r"^(?P<indent> *)(?P<label>\S.*?) \.\.\.(?: (?P<secs>[0-9.]+ s|\d+m \d+s))?$")
_LOOP = re.compile(r"^(?P<indent> *)(?P<label>\S.*?): \d+/\d+ in (?P<secs>[0-9.]+ s|\d+m \d+s)")


def _seconds(text):
    if "m " in text:
        minutes, secs = text.rstrip("s").split("m ")
        return 60 * int(minutes) + int(secs)
    return float(text[:-2])


def parse_steps(stderr):
    """Finished steps and loops from the progress output: [(depth, label, seconds)].

    A step is ``label ... 1.23 s`` (or ``1m 05s``) indented two spaces per
    level (the CLI's own lines start at two); a parent whose children were
    printed first opens with ``label ...`` and closes with its time; a loop
    closes with ``label: 6/6 in 0.54 s (11/s)``.
    """
    steps, open_ = [], []
    for line in stderr.splitlines():
        m = _STEP.match(line) or _LOOP.match(line)
        if not m:
            continue
        label = m.group("label").strip()
        if not m.group("secs"):  # a parent opens; its children follow
            open_.append(label)
            continue
        if open_ and open_[-1] == label:
            open_.pop()
        steps.append((len(open_), label, _seconds(m.group("secs"))))
    return steps


def summarise_steps(steps):
    """Seconds per kind of top-level step (lens names kept), nested steps listed apart."""
    rows = []
    for depth, label, secs in steps:
        name = re.sub(r"^lens \d+/\d+: ", "", label)
        rows.append({"depth": depth, "step": name, "seconds": secs})
    return rows


def table_file(n, tmp):
    table = Path(tmp) / f"table_{n}.npy"
    if not table.exists():
        np.save(table, make_table(n, np.random.default_rng([SEED, n])))
    return table


def bench_screen(n, src, tmp, sample=None):
    """``lenswork screen`` at n rows (default options, or ``--sample SAMPLE``)."""
    table = table_file(n, tmp)
    out = Path(tmp) / f"screen_{n}_{sample or 'default'}"
    args = ["screen", str(table), "-o", str(out)] + (["--sample", sample] if sample else [])
    wall, peak, err, stdout, code = run_cli(args, src, tmp)
    if code != 0:
        print(f"screen n={n} failed (exit {code}):\n{err[-2000:]}", flush=True)
        return None
    steps = summarise_steps(parse_steps(err))
    top = sum(r["seconds"] for r in steps if r["depth"] == 0)
    selected = re.search(r"^Selected: (.*?) \(", stdout, re.MULTILINE)
    opts = f"--sample {sample}" if sample else "default options"
    print(f"\n== lenswork screen, n={n:,} x 20, {opts}, fresh process: wall {wall:.1f} s, "
          f"peak RSS {peak:,.0f} MiB; selected: {selected.group(1) if selected else '?'}",
          flush=True)
    for r in steps:
        print(f"  {'  ' * r['depth']}{r['step'][:78]:<80} {r['seconds']:8.2f} s")
    print(f"  {'other (start-up, reading, probe, figures, writing outside steps)':<80} "
          f"{wall - top:8.2f} s", flush=True)
    for line in stdout.splitlines():  # the sample's lines of the summary
        if line.startswith(("Screened on a seeded sample", "Sampling error", "Confirmed on")):
            print("  " + line)
    chosen = [s.strip() for s in selected.group(1).split(",")] if selected else []
    return {"n": n, "table": table, "out": out, "wall": wall, "peak": peak, "selected": chosen}


def explain_difference(sampled, full):
    """|Spearman rho| between the two runs' chosen lens columns on the same rows.

    Two choices that differ by near-equivalent lenses (each lens of one run
    with |rho| >= 0.8, the screen's own redundancy ceiling, against a lens of
    the other) show the same views under other names.
    """
    from scipy.stats import spearmanr

    def columns(run):
        text = (Path(run["out"]) / "lenses.csv").read_text().splitlines()
        names = text[0].split(",")[1:]
        values = np.array([line.split(",")[1:] for line in text[1:]], dtype=np.float64)
        return names, values

    names_s, vs = columns(sampled)
    names_f, vf = columns(full)
    print("  |Spearman rho| between the choices on all rows (rows: full-data screen; "
          "columns: sample screen):")
    print("  " + " " * 26 + "".join(f"{c[:24]:>26}" for c in names_s))
    best = []
    for i, name in enumerate(names_f):
        rho = [abs(spearmanr(vf[:, i], vs[:, j])[0]) for j in range(len(names_s))]
        best.append(max(rho))
        print(f"  {name[:24]:<26}" + "".join(f"{r:26.3f}" for r in rho))
    verdict = "the same views under other names" if min(best) >= 0.8 else "a different view"
    print(f"  each full-data lens's best match: {', '.join(f'{b:.3f}' for b in best)}: "
          f"{verdict} (screen's redundancy ceiling 0.8)", flush=True)


def bench_graph(run, src, tmp, label="", use=None):
    lens_file = run["out"] / "lenses.csv"
    gout = Path(tmp) / f"graph_{run['n']}"
    extra = ["--use", use] if use else []
    wall, peak, err, stdout, code = run_cli(
        ["graph", str(run["table"]), "--lens-file", str(lens_file), *extra, "-o", str(gout)],
        src, tmp)
    if code != 0:
        print(f"graph n={run['n']} failed (exit {code}):\n{err[-2000:]}", flush=True)
        return
    steps = summarise_steps(parse_steps(err))
    top = sum(r["seconds"] for r in steps if r["depth"] == 0)
    # the command's own steps (lens file, cover ... files) cover all it does once the table
    # is read: start-up, imports and reading the table are the rest
    after = f"; after the table is read {top:.1f} s"
    print(f"\n== lenswork graph --lens-file{label}, n={run['n']:,}: wall {wall:.1f} s{after}, "
          f"peak RSS {peak:,.0f} MiB", flush=True)
    for r in steps:
        print(f"  {'  ' * r['depth']}{r['step'][:78]:<80} {r['seconds']:8.2f} s")
    print(f"  {'other (start-up, imports, reading the table)':<80} "
          f"{wall - top:8.2f} s")
    summary = [line for line in stdout.splitlines() if line.strip()][:6]
    print("  " + "\n  ".join(summary), flush=True)


def lens_file_run(n, specs, src, tmp):
    """``lenswork compute`` of ``specs`` on the n-row table: the run record bench_graph reads."""
    table = table_file(n, tmp)
    out = Path(tmp) / f"lenses_{n}"
    out.mkdir(exist_ok=True)
    args = ["compute", str(table), "-o", str(out / "lenses.csv")]
    for spec in specs:
        args += ["-l", spec]
    wall, peak, err, _, code = run_cli(args, src, tmp)
    if code != 0:
        print(f"compute n={n} failed (exit {code}):\n{err[-2000:]}", flush=True)
        return None
    print(f"\n== lenswork compute {' '.join(specs)}, n={n:,}: wall {wall:.1f} s, peak RSS "
          f"{peak:,.0f} MiB (the lens file)", flush=True)
    return {"n": n, "table": table, "out": out}


# ---------------------------------------------------------------- per-lens costs (child)
def _error_of(info):
    for key in ("extension_error", "rel_se_median", "rel_gap_median", "max_residual",
                "rel_hard_width_median"):
        if key in info and info[key] is not None:
            return f"{key}={info[key]:.2g}"
    if "error" in info:
        return str(info["error"])[:40]
    if "capped" in info:
        return f"k={info['k']} (asked {info['k_requested']}), exact on the graph"
    return "exact on the graph" if "k" in info else "exact"


def lens_costs_child(n):
    import warnings

    import lenswork as lw

    X = make_table(n, np.random.default_rng([SEED, n]))
    ws = lw.Workspace(X, random_state=0)
    rows = []
    start = time.perf_counter()
    g = ws.neighbors(ws.min_neighbors)
    rows.append({"lens": f"neighbour graph k={g.k}", "seconds": time.perf_counter() - start,
                 "mode": g.method + " " + g.info.get("backend", ""), "error": "-"})
    print(json.dumps({"row": rows[-1]}), flush=True)
    for name, params in lw.default_candidates(ws):
        start = time.perf_counter()
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            table = lw.compute_lenses(ws, [(name, params)])
        secs = time.perf_counter() - start
        info = table.columns[0].info
        mode = info.get("mode") or info.get("method") or info.get("solver") or ""
        spec = name + (":" + ",".join(f"{k}={v}" for k, v in params.items()) if params else "")
        graphs = sorted({key[2] for key in ws._cache if key[0] == "knn"})
        rows.append({"lens": spec, "seconds": secs, "mode": str(mode), "error": _error_of(info),
                     "warned": len(caught), "graphs_k": graphs[-1] if graphs else None,
                     "landmarks": info.get("landmarks")})
        print(json.dumps({"row": rows[-1]}), flush=True)  # kept if a later lens runs too long
    peak = next(int(line.split()[1]) / 1024
                for line in Path("/proc/self/status").read_text().splitlines()
                if line.startswith("VmHWM:"))
    print(json.dumps({"rows": rows, "peak": peak}))


def bench_lens_costs(sizes, src, timeout=None):
    env = dict(os.environ, PYTHONPATH=f"{src}{os.pathsep}{HERE}", MPLBACKEND="Agg")
    table = {}
    for n in sizes:
        try:
            proc = subprocess.run([sys.executable, __file__, "--lens-child", str(n)],
                                  capture_output=True, text=True, env=env, timeout=timeout)
            out, code, err = proc.stdout, proc.returncode, proc.stderr
        except subprocess.TimeoutExpired as exc:
            out = exc.stdout.decode() if isinstance(exc.stdout, bytes) else (exc.stdout or "")
            code, err = None, f"stopped after {timeout:.0f} s"
        lines = [json.loads(line) for line in out.strip().splitlines() if line.startswith("{")]
        if code != 0:
            print(f"per-lens n={n} did not finish ({err[-2000:]}); lenses done so far:")
            for r in (rec["row"] for rec in lines if "row" in rec):
                print(f"    {r['lens'][:34]:<36}{r['seconds']:10.2f} s   {r['mode']} / "
                      f"{r['error']}", flush=True)
            continue
        rec = lines[-1]
        table[n] = rec
        print(f"  per-lens n={n:,}: peak RSS {rec['peak']:,.0f} MiB", flush=True)
        for r in rec["rows"]:  # each size as soon as it is done
            print(f"    {r['lens'][:34]:<36}{r['seconds']:10.2f} s   {r['mode']} / {r['error']}",
                  flush=True)
    if not table:
        return
    print("\n== per-lens cost (seconds; mode; error from LensColumn info), fresh process per n")
    names = [r["lens"] for r in next(iter(table.values()))["rows"]]
    header = f"{'lens':<36}" + "".join(f"{f'n={n:.0e}':>10}" for n in table) + "   mode / error"
    print(header)
    for i, name in enumerate(names):
        cells = "".join(f"{table[n]['rows'][i]['seconds']:10.2f}" for n in table)
        last = table[max(table)]["rows"][i]
        extra = f"   {last['mode']} / {last['error']}"
        if last.get("landmarks"):
            extra += f" / landmarks {last['landmarks']}"
        if last.get("graphs_k") and name != names[0]:
            extra += f" / largest graph k={last['graphs_k']}"
        print(f"{name[:36]:<36}{cells}{extra}")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="screen and per-lens at 1e4 only")
    parser.add_argument("--sizes", default="1e5,1e6", help="screen sizes (default 1e5,1e6)")
    parser.add_argument("--lens-sizes", default="1e4,1e5,1e6", help="per-lens table sizes")
    parser.add_argument("--graph-size", default=None,
                        help="run `lenswork graph --lens-file` at this screen size "
                             "(default: the largest)")
    parser.add_argument("--full-check", default="1e5",
                        help="also screen this size with --sample all and compare the choice "
                             "('' to skip)")
    parser.add_argument("--src", default=str(SRC), help="lenswork src directory to run")
    parser.add_argument("--lens-timeout", type=float, default=None,
                        help="stop a per-lens child after this many seconds (the lenses it "
                             "finished are still printed)")
    parser.add_argument("--graph-only", default=None, metavar="SIZES",
                        help="no screen: `lenswork graph --lens-file` on a computed lens file at "
                             "these sizes")
    parser.add_argument("--graph-lenses", default="pca:components=2",
                        help="--graph-only: lens specs of the lens file, comma-separated")
    parser.add_argument("--graph-use", default=None, metavar="COLS",
                        help="--graph-only: the lens-file columns the graph uses (--use)")
    parser.add_argument("--before-src", default=None,
                        help="--graph-only: also run the graph with this src (before/after)")
    parser.add_argument("--lens-child", type=int, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.lens_child:
        lens_costs_child(args.lens_child)
        return
    if args.quick:
        args.full_check = ""
    sizes = [10_000] if args.quick else [int(float(s)) for s in args.sizes.split(",") if s]
    lens_sizes = [10_000] if args.quick else [int(float(s)) for s in args.lens_sizes.split(",")
                                              if s]
    src = Path(args.src).resolve()
    threads = {k: os.environ[k] for k in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS",
                                          "MKL_NUM_THREADS", "NUMBA_NUM_THREADS")
               if k in os.environ}
    # the Nystrom step's BLAS work scales with threads: 1e6 rows took 46 s at
    # OMP_NUM_THREADS=1 and 24 s at the default 2 threads on the reference machine
    print(f"lenswork from {src}; machine: {os.cpu_count()} cores, shared; thread limits: "
          f"{threads or 'none (library defaults)'}", flush=True)
    if args.graph_only:
        with tempfile.TemporaryDirectory(prefix="lenswork-scale-") as tmp:
            for n in [int(float(x)) for x in args.graph_only.split(",") if x]:
                run = lens_file_run(n, args.graph_lenses.split(","), src, tmp)
                if run is None:
                    continue
                if args.before_src:
                    bench_graph(run, Path(args.before_src).resolve(), tmp, label=" (before)",
                                use=args.graph_use)
                bench_graph(run, src, tmp, label=" (after)" if args.before_src else "",
                            use=args.graph_use)
        return
    with tempfile.TemporaryDirectory(prefix="lenswork-scale-") as tmp:
        runs = [r for r in (bench_screen(n, src, tmp) for n in sizes) if r]
        if args.full_check:
            n = int(float(args.full_check))
            full = bench_screen(n, src, tmp, sample="all")
            sampled = next((r for r in runs if r["n"] == n), None)
            if full and sampled:
                same = sorted(full["selected"]) == sorted(sampled["selected"])
                print(f"\n== n={n:,}: sample screen chose {sampled['selected']}, full-data "
                      f"screen chose {full['selected']}: {'same' if same else 'DIFFERENT'}; "
                      f"wall {sampled['wall']:.1f} s vs {full['wall']:.1f} s "
                      f"({full['wall'] / sampled['wall']:.1f}x)", flush=True)
                if not same:
                    explain_difference(sampled, full)
        if runs:
            gsize = int(float(args.graph_size)) if args.graph_size else max(r["n"] for r in runs)
            for r in runs:
                if r["n"] == gsize:
                    bench_graph(r, src, tmp)
        if lens_sizes:
            bench_lens_costs(lens_sizes, src, args.lens_timeout)


if __name__ == "__main__":
    main()
