"""Benchmark every lens family in one run: reference ratios, n-scaling, peak memory.

Runs, in this order and in one process, the lens benchmarks of the families
(density, eccentricity, Laplacian, PCA / DTM / k-NN distance) and prints each
one's table. Each family's script can also be run on its own.

Run:  flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_lenses.py [--quick] [--only NAME]
"""

from __future__ import annotations

import argparse
import importlib
import time

from _util import print_table

FAMILIES = {
    "density": "bench_density",
    "eccentricity": "bench_eccentricity",
    "laplacian": "bench_laplacian",
    "small": "bench_small_lenses",
}


def main(quick=False, only=None):
    for family, module in FAMILIES.items():
        if only and family not in only:
            continue
        start = time.perf_counter()
        print(f"\n=== {family} ({module}.py) ===", flush=True)
        rows = importlib.import_module(module).run(quick=quick)
        print_table(rows)
        print(f"({time.perf_counter() - start:.1f} s)", flush=True)


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes, a smoke run")
    parser.add_argument("--only", nargs="*", choices=list(FAMILIES), help="families to run")
    args = parser.parse_args()
    main(args.quick, args.only)
