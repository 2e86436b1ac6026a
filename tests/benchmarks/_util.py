"""Helpers shared by the benchmark scripts: timing, peak memory, printing, the --quick flag.

The sample generators of the tests (``tests/_shapes.py``) are re-exported here,
so a benchmark draws the same shapes as the tests that check them.
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
import tracemalloc
from pathlib import Path

_TESTS = str(Path(__file__).resolve().parents[1])
if _TESTS not in sys.path:
    sys.path.insert(0, _TESTS)

from _shapes import noisy_circle, torus  # noqa: E402

__all__ = ["measure", "noisy_circle", "print_records", "print_table", "quick_flag", "timed",
           "torus"]


def measure(fn, *args, **kwargs):
    """Run ``fn`` once; return (result, seconds, peak MiB traced by tracemalloc, max RSS MiB)."""
    tracemalloc.start()
    start = time.perf_counter()
    out = fn(*args, **kwargs)
    seconds = time.perf_counter() - start
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    return out, seconds, peak / 2**20, rss


def timed(fn, *args, **kwargs):
    """Run ``fn`` once without tracing (tracemalloc slows Python code down); (result, seconds)."""
    start = time.perf_counter()
    out = fn(*args, **kwargs)
    return out, time.perf_counter() - start


def print_table(rows, columns=None):
    """Print a list of dicts as an aligned text table."""
    if not rows:
        return
    columns = columns or list(dict.fromkeys(k for r in rows for k in r))
    text = [[_fmt(r.get(c, "")) for c in columns] for r in rows]
    widths = [max(len(c), *(len(t[i]) for t in text)) for i, c in enumerate(columns)]
    print("  ".join(c.ljust(w) for c, w in zip(columns, widths)))
    for t in text:
        print("  ".join(v.ljust(w) for v, w in zip(t, widths)))


def print_records(rows, keys):
    """Print each dict as one line of ``key=value`` pairs (the keys given, in order, if set)."""
    for r in rows:
        parts = [f"{k}={_fmt(r[k])}" for k in keys if r.get(k) is not None]
        print("  ".join(parts), flush=True)


def quick_flag(doc, help="small sizes, a smoke run"):
    """Parse the command line of a script whose one option is ``--quick``; return it."""
    parser = argparse.ArgumentParser(description=doc.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help=help)
    return parser.parse_args().quick


def _fmt(v):
    if isinstance(v, float):
        return f"{v:.4g}"
    return str(v)
