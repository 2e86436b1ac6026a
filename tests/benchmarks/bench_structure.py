"""Structure benchmark: known loops, tails and branch points against what the graphs report.

Shapes with known features (tests/_shapes.py), each over ``--seeds`` seeds, in 2 to 20
dimensions with noise:

=====================  ====  =====  =====  ==========================================
shape                  d     loops  tails  what
=====================  ====  =====  =====  ==========================================
ring_tails             10    1      2      unit circle, two tails of 8 % of the rows
                                           each, length 2, thinning outward
ring_tails_uneven      20    1      2      tails of 4 % and 6 %, lengths 1.2 and 2.5
ring_tails_dense       3     1      2      tails of 12 %, length 1
tree                   5     0      3      arms of length 1, 1.5, 2.5 from one point
core_regimes           6     0      2      dense Gaussian core, two sparse regimes
two_loops              5     2      0      two circles touching at one point
mixture                8     0      0      three unit Gaussians 6 apart
blob                   10    0      0      standard Gaussian (noise only)
blob_20d               20    0      0      standard Gaussian (noise only)
cube                   5     0      0      uniform 5-cube (noise only)
=====================  ====  =====  =====  ==========================================

For every default lens (the screen's candidate columns; one-lens graph, build_graph
defaults) and for the screen's chosen pair (two-lens graph): reported significant loops
(one lens: significant loops; the pair: significant holes), tails (significant limbs,
GraphSummary.limbs) and branch points.

Columns: ``exp`` expected loops/tails; ``best`` the most loops/tails any one lens
reports (capped at the expected count when it is reached); ``ecc`` loops/tails of the
``eccentricity`` lens; ``pair`` the chosen pair's loops/tails/branch points; ``sens``
the share of expected loops and tails found by the best lens of each kind and by the
pair; ``fp`` the share of lens graphs (all lenses and the pair) that report more loops or
tails than expected. Means over the seeds.

Not a noise-only set: a uniform square (or disc) in 2-d. Its lenses have Reeb graphs with
branches of their own (the third Laplacian eigenvector of a square is a saddle with four
corner arms; the L-infinity eccentricity peaks at the corners), which a good rule reports.
What counts as a tail also depends on the lens: the mixture's three Gaussians in a row are a
path whose eccentricity dips in the middle (a V: one "up" point of the diagram, reported as a
limb), and a figure eight under eccentricity has one lobe's far end as an "up" point; both
are counted as excess tails here, before and after alike.

Run ``flock /tmp/lenswork-bench.lock python tests/benchmarks/bench_structure.py``; with
``--src /path/to/src`` it imports lenswork from another source tree (a clean checkout of
an older commit), so BEFORE and AFTER print from one script.
"""

from __future__ import annotations

import argparse
import sys
import time
import warnings
from pathlib import Path

import numpy as np

_TESTS = str(Path(__file__).resolve().parents[1])

SHAPES = {
    "ring_tails": (10, 1, 2, lambda n, rng: S.ring_with_tails(n, rng, d=10)),
    "ring_tails_uneven": (20, 1, 2, lambda n, rng: S.ring_with_tails(
        n, rng, d=20, share=0.05, lengths=(1.2, 2.5), angles=(0.5, 3.5))),
    "ring_tails_dense": (2, 1, 2, lambda n, rng: S.ring_with_tails(
        n, rng, d=2, share=0.12, lengths=(1.0, 1.0), angles=(0.0, 2.0))),
    "tree": (5, 0, 3, lambda n, rng: S.tree(n, rng, d=5)),
    "core_regimes": (6, 0, 2, lambda n, rng: S.core_with_regimes(n, rng, d=6)),
    "two_loops": (5, 2, 0, lambda n, rng: S.two_loops(n, rng, d=5)),
    "mixture": (8, 0, 0, lambda n, rng: S.gaussian_mixture(n, rng, d=8)),
    "blob": (10, 0, 0, lambda n, rng: S.blob(n, rng, d=10)),
    "blob_20d": (20, 0, 0, lambda n, rng: S.blob(n, rng, d=20)),
    "cube": (5, 0, 0, lambda n, rng: S.cube(n, rng, d=5)),
}
S = None


def reported(summary, pair):
    """(loops, tails, branch points) a graph reports as significant."""
    sig = summary.significance
    if sig is None:
        return 0, 0, 0
    loops = summary.significant_holes if pair else sig["loops"][0]
    return int(loops or 0), int(sig["limbs"][0]), int(sig["branch_points"][0])


def run_shape(lw, name, n, seed):
    d, exp_l, exp_t, make = SHAPES[name]
    X = make(n, np.random.default_rng(seed))
    ws = lw.Workspace(X, random_state=0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = lw.screen(ws)
        lenses = {}
        for col in result.lenses.columns:
            try:
                g = lw.build_graph(result.lenses.select([col.name]), ws)
            except lw.LensworkError:
                continue
            lenses[col.name] = reported(g.summary(), False)
        pair = reported(lw.build_graph(result.to_lens_table(), ws).summary(), True)
    return lenses, pair, result.selected


def main(argv=None):
    global S
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--src", default=None, help="import lenswork from this source tree")
    ap.add_argument("--n", type=int, default=1500)
    ap.add_argument("--seeds", type=int, default=5)
    ap.add_argument("--only", default="")
    args = ap.parse_args(argv)
    for p in ([args.src] if args.src else []) + [_TESTS]:
        sys.path.insert(0, str(Path(p).resolve()))
    import _shapes

    import lenswork as lw
    S = _shapes
    names = [s for s in SHAPES if not args.only or s in args.only.split(",")]
    print(f"# lenswork from {Path(lw.__file__).parent}; n = {args.n}, {args.seeds} seeds")
    head = (f"{'shape':<18} {'d':>3} {'exp L/T':>7} {'best L/T':>9} {'ecc L/T':>8} "
            f"{'pair L/T/B':>11} {'sens lens':>9} {'sens pair':>9} {'fp':>5}  chosen (seed 0)")
    print(head)
    print("-" * len(head))
    t0 = time.perf_counter()
    total = {"sens_lens": [], "sens_pair": [], "fp_noise": [], "fp_all": []}
    for name in names:
        d, exp_l, exp_t, _ = SHAPES[name]
        best_l, best_t, ecc_l, ecc_t, pl, pt, pb, sl, sp, fp = ([] for _ in range(10))
        chosen0 = ""
        for seed in range(args.seeds):
            lenses, pair, chosen = run_shape(lw, name, args.n, seed)
            if seed == 0:
                chosen0 = " + ".join(chosen)
            L = np.array([v[0] for v in lenses.values()])
            T = np.array([v[1] for v in lenses.values()])
            best_l.append(L.max())
            best_t.append(T.max())
            e = lenses.get("eccentricity", (0, 0, 0))
            ecc_l.append(e[0])
            ecc_t.append(e[1])
            pl.append(pair[0])
            pt.append(pair[1])
            pb.append(pair[2])
            expected = exp_l + exp_t
            if expected:
                sl.append((min(L.max(), exp_l) + min(T.max(), exp_t)) / expected)
                sp.append((min(pair[0], exp_l) + min(pair[1], exp_t)) / expected)
            over = [(lo > exp_l) or (ta > exp_t) for lo, ta, _ in [*lenses.values(), pair]]
            fp.append(float(np.mean(over)))
        m = np.mean
        sens_l = f"{m(sl):.2f}" if sl else "-"
        sens_p = f"{m(sp):.2f}" if sp else "-"
        print(f"{name:<18} {d:>3} {exp_l:>3}/{exp_t:<3} {m(best_l):>4.1f}/{m(best_t):<4.1f} "
              f"{m(ecc_l):>3.1f}/{m(ecc_t):<4.1f} {m(pl):>3.1f}/{m(pt):.1f}/{m(pb):<3.1f} "
              f"{sens_l:>9} {sens_p:>9} {m(fp):>5.2f}  {chosen0}", flush=True)
        if sl:
            total["sens_lens"] += sl
            total["sens_pair"] += sp
        else:
            total["fp_noise"] += fp
        total["fp_all"] += fp
    print("-" * len(head))
    print(f"sensitivity (best lens) {np.mean(total['sens_lens']):.2f}, (chosen pair) "
          f"{np.mean(total['sens_pair']):.2f}; false-positive share of graphs: noise-only "
          f"shapes {np.mean(total['fp_noise']):.3f}, all shapes {np.mean(total['fp_all']):.3f}; "
          f"{time.perf_counter() - t0:.0f} s")


if __name__ == "__main__":
    main()
