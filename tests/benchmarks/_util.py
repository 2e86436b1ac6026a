"""Helpers shared by the benchmark scripts: timing, peak memory, table printing."""

from __future__ import annotations

import resource
import time
import tracemalloc


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


def _fmt(v):
    if isinstance(v, float):
        return f"{v:.4g}"
    return str(v)
