"""The progress display: one line per step, nested steps indented, loops with count/rate/time left.

The terminal behaviour is tested in a real pseudo-terminal (the standard
library's ``pty``): a child Python process writes its progress to the pty
slave as its stderr, and the test reads everything the terminal would show.
"""

from __future__ import annotations

import io
import os
import re
import select
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from lenswork import _progress
from lenswork.cli import cli

SRC = str(Path(__file__).resolve().parents[1] / "src")
PROGRESS_FILE = str(Path(SRC) / "lenswork" / "_progress.py")
pty = pytest.importorskip("pty")  # POSIX only

ANSI = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]")

# The child loads lenswork/_progress.py on its own (it imports nothing from the package),
# so it starts in milliseconds instead of importing scikit-learn.
CHILD = """
import importlib.util, sys, time
spec = importlib.util.spec_from_file_location("progress", sys.argv[1])
_progress = importlib.util.module_from_spec(spec)
spec.loader.exec_module(_progress)
_progress.configure()
with _progress.step("outer"):
    for i in _progress.track(range(4), "cells", length=4):
        with _progress.step("hidden inner"):  # inside a loop: not reported
            time.sleep(float(sys.argv[2]))
    with _progress.step("inner"):
        pass
print("done", file=sys.stderr)
"""


def _env(**extra):
    env = {k: v for k, v in os.environ.items() if k != _progress.ENV_VAR}
    env["PYTHONPATH"] = SRC + os.pathsep + env.get("PYTHONPATH", "")
    env.update(extra)
    return env


def _run_with_stderr_on_a_pty(args, env):
    """Run ``args`` with stderr on a pseudo-terminal; return what the terminal received."""
    master, slave = pty.openpty()
    proc = subprocess.Popen(args, stdin=subprocess.DEVNULL, stdout=subprocess.PIPE, stderr=slave,
                            env=env)
    os.close(slave)
    chunks = []
    while True:
        ready, _, _ = select.select([master], [], [], 60)
        if not ready:
            proc.kill()
            raise AssertionError("the child wrote nothing for 60 s")
        try:
            data = os.read(master, 4096)
        except OSError:  # EIO: the child closed the terminal (Linux)
            break
        if not data:
            break
        chunks.append(data)
    os.close(master)
    stdout = proc.stdout.read().decode()
    proc.stdout.close()
    assert proc.wait(timeout=60) == 0
    return b"".join(chunks).decode(), stdout


def _lines(raw):
    """The raw lines (between newlines) without ANSI codes; the terminal's \\r\\n made \\n."""
    text = ANSI.sub("", raw).replace("\r\n", "\n")
    return text.split("\n")[:-1] if text.endswith("\n") else text.split("\n")


def _shown(line):
    """What a terminal shows of a raw line: the last redraw after a carriage return."""
    parts = [p for p in line.split("\r") if p.strip()]
    return parts[-1].rstrip() if parts else ""


def test_steps_and_a_loop_in_a_pseudo_terminal():
    # 4 x 0.35 s: past click's first second, after which it shows the time left.
    raw, _ = _run_with_stderr_on_a_pty([sys.executable, "-c", CHILD, PROGRESS_FILE, "0.35"],
                                       _env())
    lines = _lines(raw)
    shown = [_shown(line) for line in lines]
    assert len(shown) == 5, shown
    # One line per step; the parent ends its line before its children and closes with
    # its own timed line; children one level (two spaces) deeper (common practice).
    assert shown[0] == "  outer ..."
    bar = r"    cells\s+\[#+\]\s+4/4\s+100%\s+\S+/s\s+in \d+\.\d\d s"
    assert re.fullmatch(bar, shown[1]), shown[1]
    assert re.fullmatch(r"    inner \.\.\. \d+\.\d\d s", shown[2]), shown[2]
    assert re.fullmatch(r"  outer \.\.\. \d+\.\d\d s", shown[3]), shown[3]
    assert shown[4] == "done"
    # No interleaving: each raw line carries one label only, however often it is redrawn.
    for line, label in zip(lines, ["outer", "cells", "inner", "outer", "done"], strict=True):
        others = {"outer", "cells", "inner", "done"} - {label}
        assert label in line and not any(o in line for o in others), line
    assert "hidden inner" not in raw
    # Counts redrawn in place, in order: 0/4 ... 4/4, with a time left once click knows
    # the rate (after one second) and a rate on every line past the first item.
    redraws = [p for p in lines[1].split("\r") if p.strip()]
    counts = [int(m.group(1)) for p in redraws if (m := re.search(r"\s(\d)/4\s", p))]
    assert counts == sorted(counts) and counts[0] == 0 and counts[-1] == 4
    assert set(counts) == {0, 1, 2, 3, 4}
    assert any(re.search(r"\d\d:\d\d:\d\d", p) for p in redraws), redraws  # click's eta format
    assert all(re.search(r"/s", p) for p in redraws if re.search(r"\s[1-4]/4\s", p))


def test_silent_when_stderr_is_not_a_terminal_unless_asked():
    child = [sys.executable, "-c", CHILD, PROGRESS_FILE, "0.01"]
    run = subprocess.run(child, capture_output=True, text=True, env=_env(), timeout=60,
                         check=True)
    assert run.stderr == "done\n"  # a pipe is not a terminal: no progress at all
    run = subprocess.run(child, capture_output=True, text=True,
                         env=_env(**{_progress.ENV_VAR: "1"}), timeout=60, check=True)
    lines = run.stderr.splitlines()
    # Forced on into a pipe: plain lines, no carriage returns, the same nesting.
    assert "\r" not in run.stderr
    assert lines[0] == "  outer ..."
    assert re.fullmatch(r"    cells: 4/4 in \d+\.\d\d s \(\S+/s\)", lines[1]), lines
    assert lines[-1] == "done"


def test_quiet_wins_in_a_pseudo_terminal(tmp_path):
    args = [sys.executable, "-c", "from lenswork.cli import main; main()", "compute", "--demo",
            "--lens", "dtm:mass=0.01", "-o", str(tmp_path / "l.csv")]
    raw, stdout = _run_with_stderr_on_a_pty(args, _env())
    assert "neighbour graph" in raw  # a terminal: progress shown
    assert "wrote" in stdout
    raw, stdout = _run_with_stderr_on_a_pty(args[:3] + ["-q"] + args[3:], _env())
    assert raw == "" and "wrote" in stdout


def test_cli_progress_option_and_quiet(capsys, tmp_path):
    runner = CliRunner()
    base = ["compute", "--demo", "--lens", "dtm:mass=0.01", "-o", str(tmp_path / "l.csv")]
    res = runner.invoke(cli, base)
    assert res.exit_code == 0 and "neighbour graph" not in res.stderr  # not a terminal
    res = runner.invoke(cli, ["--progress", *base])
    assert res.exit_code == 0 and "neighbour graph: exact" in res.stderr
    res = runner.invoke(cli, ["-q", "--progress", *base])
    assert res.exit_code == 0 and res.stderr == ""
    # After the command the library is silent again (the CLI restores the reporter; a
    # reporter left behind would write to the runner's closed stream and raise).
    capsys.readouterr()
    with _progress.step("after"):
        pass
    assert capsys.readouterr().err == ""
    assert _progress.progress_wanted(stream=io.StringIO()) is False


class _FakeClock:
    """perf_counter that advances 2 s per call: rates and times left become closed forms."""

    def __init__(self):
        self.now = 0.0

    def __call__(self):
        value = self.now
        self.now += 2.0
        return value


def test_loop_lines_count_rate_and_time_left(monkeypatch):
    monkeypatch.setattr(_progress.time, "perf_counter", _FakeClock())
    out = io.StringIO()  # not a terminal: timed lines
    previous = _progress.set_reporter(True, out, interval=1.0)
    try:
        assert list(_progress.track(range(4), "items", length=4)) == [0, 1, 2, 3]
    finally:
        _progress.restore(previous)
    # Clock: start 0, items done at 2, 4, 6, 8 s, closing read at 10 s. Rate = count /
    # elapsed; time left = elapsed / count * remaining (constant-rate extrapolation,
    # common practice).
    assert out.getvalue().splitlines() == [
        "  items: 1/4 (0.5/s, 6.00 s left)",
        "  items: 2/4 (0.5/s, 4.00 s left)",
        "  items: 3/4 (0.5/s, 2.00 s left)",
        "  items: 4/4 in 10 s (0.4/s)",
    ]


def test_a_failing_step_says_so_and_raises():
    out = io.StringIO()
    previous = _progress.set_reporter(True, out)
    try:
        with pytest.raises(ZeroDivisionError), _progress.step("outer"):
            with _progress.step("inner"):
                pass
            1 / 0  # noqa: B018
    finally:
        _progress.restore(previous)
    lines = out.getvalue().splitlines()
    assert lines[0] == "  outer ..." and lines[-1] == "  outer ... failed"
    assert re.fullmatch(r"    inner \.\.\. \d+\.\d\d s", lines[1])


def test_nested_steps_without_output_between_stay_on_one_line_each():
    out = io.StringIO()
    previous = _progress.set_reporter(True, out)
    try:
        with _progress.step("a"):
            with _progress.step("b"), _progress.step("c"):
                pass
            for _ in _progress.track([1, 2], "loop"):  # length from len()
                pass
    finally:
        _progress.restore(previous)
    shape = [re.sub(r"\d+\.\d\d s|[^ (]+/s", "T", line) for line in out.getvalue().splitlines()]
    assert shape == ["  a ...", "    b ...", "      c ... T", "    b ... T",
                     "    loop: 2/2 in T (T)", "  a ... T"]


def test_screen_command_in_a_pseudo_terminal(tmp_path):
    # The CLI as a user runs it, stderr on a terminal: two candidate lenses (the first one
    # warns inside its step, and needs the neighbour graph: a nested step), the ranking,
    # then the structure probe of each candidate column as a bar.
    from lenswork.probe import PROBE_INTERVALS, PROBE_OVERLAPS

    cells = len(PROBE_INTERVALS) * len(PROBE_OVERLAPS)
    args = [sys.executable, "-c", "from lenswork.cli import main; main()", "screen", "--demo",
            "--no-defaults", "--lens", "dtm:mass=0.9", "--lens", "pca:components=2",
            "--no-figures", "-o", str(tmp_path / "out")]
    raw, stdout = _run_with_stderr_on_a_pty(args, _env())
    assert "Selected:" in stdout
    lines = _lines(raw)
    shown = [_shown(line) for line in lines]
    t = r"\d+(\.\d\d)? s"
    expected = [
        r"  features \(12\): flow_m3h, .*; row ids from 'snapshot'",  # the features used
        r"  lens 1/2: dtm:mass=0\.9 \.\.\.",
        r"Warning: dtm: mass=0\.9 asks for k=2700 .*",  # its own line, not the step's end
        rf"    neighbour graph: exact \w+, n=3000, k=30 \.\.\. {t}",
        rf"  lens 1/2: dtm:mass=0\.9 \.\.\. {t}",
        rf"  lens 2/2: pca:components=2 \.\.\. {t}",
        rf"  ranking 3 columns: spread and rank correlation \.\.\. {t}",
        rf"  smoothness: Laplacian score on the neighbour graph \.\.\. {t}",
        rf"  selection \.\.\. {t}",
        *(rf"  probe {re.escape(c)}\s+\[#+\]\s+{cells}/{cells}\s+100%\s+\S+/s\s+in {t}"
          for c in ("dtm[mass=0.01033]", "pca_1", "pca_2")),
        rf"  writing ranking and lens columns \.\.\. {t}",
    ]
    assert len(shown) == len(expected), shown
    for got, pattern in zip(shown, expected, strict=True):
        assert re.fullmatch(pattern, got), (got, pattern)
    # No interleaving: every raw line (all its redraws) carries one label only.
    labels = ["features (12)", "lens 1/2", "Warning", "neighbour graph:", "lens 2/2", "ranking 3",
              "smoothness:", "selection", "probe dtm", "probe pca_1", "probe pca_2", "writing"]
    for line in lines:
        assert sum(label in line for label in labels) == 1, line
    # Each bar counts 0, 1, ..., cells in order, redrawn in place on its one line.
    for line in lines[9:12]:
        counts = [int(m.group(1)) for p in line.split("\r")
                  if (m := re.search(rf"\s(\d+)/{cells}\s", p))]
        assert counts == sorted(counts) and set(counts) == set(range(cells + 1)), counts


CHILD_NOTE = """
import importlib.util, sys
spec = importlib.util.spec_from_file_location("progress", sys.argv[1])
_progress = importlib.util.module_from_spec(spec)
spec.loader.exec_module(_progress)
_progress.configure()
for i in _progress.track(range(4), "cells", length=4):
    if i == 2:  # a message from outside the reporter, as the CLI's warnings
        _progress.interrupt()
        print("Warning: a note", file=sys.stderr, flush=True)
with _progress.step("after"):
    _progress.interrupt()
    print("Warning: inside a step", file=sys.stderr, flush=True)
"""


def test_a_message_during_a_bar_or_a_step_gets_its_own_line():
    raw, _ = _run_with_stderr_on_a_pty([sys.executable, "-c", CHILD_NOTE, PROGRESS_FILE],
                                       _env())
    lines = _lines(raw)
    shown = [_shown(line) for line in lines]
    assert len(shown) == 6, shown
    # The bar stops at its count so far, the note follows on its own line, and the bar
    # goes on below it up to 4/4; a step's open line is ended the same way.
    assert re.search(r"\s2/4\s", shown[0]) and "Warning" not in lines[0]
    assert shown[1] == "Warning: a note"
    assert re.search(r"\s4/4\s", shown[2]) and "Warning" not in lines[2]
    assert shown[3] == "  after ..." and shown[4] == "Warning: inside a step"
    assert re.fullmatch(r"  after \.\.\. \d+\.\d\d s", shown[5])


def test_cluster_command_shows_dask_progress_only_when_wanted(tmp_path):
    # The cluster commands show Dask's own progress bar on stderr, under lenswork's rule
    # for progress: nothing off a terminal, the bar with --progress, nothing with -q; the
    # bar never reaches stdout (the command's own output).
    pytest.importorskip("distributed")
    pd = pytest.importorskip("pandas")
    pytest.importorskip("pyarrow")
    rng = np.random.default_rng(1404)
    for i in range(3):
        pd.DataFrame({"f0": rng.normal(size=50), "f1": rng.normal(size=50)}).to_parquet(
            tmp_path / f"part-{i}.parquet")
    base = ["cluster-lenses", str(tmp_path), "--scheduler", "local", "--workers", "1",
            "--lens", "column:name=f0"]
    runner = CliRunner()
    res = runner.invoke(cli, [*base, "-o", str(tmp_path / "a")])
    assert res.exit_code == 0, res.output
    assert "Completed" not in res.stderr and "wrote" in res.stdout
    res = runner.invoke(cli, ["--progress", *base, "-o", str(tmp_path / "b")])
    assert res.exit_code == 0, res.output
    assert "100% Completed" in res.stderr and "Completed" not in res.stdout, res.stderr
    res = runner.invoke(cli, ["-q", "--progress", *base, "-o", str(tmp_path / "c")])
    assert res.exit_code == 0 and "Completed" not in res.stderr
