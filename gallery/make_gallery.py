"""Make every gallery figure from the demo data (invented pump-station snapshots).

Run from the repository root:

    python gallery/make_gallery.py                 # full size, into gallery/
    python gallery/make_gallery.py --quick --out /tmp/g   # reduced size, for a smoke test

Figures (PNG):

* ``screen_sheet.png``: the lens screen: one card per candidate lens (histogram
  and the data coloured by the lens), the Spearman correlation heat map and the
  ranking with the reason for every decision;
* ``graph_<lens>.png``: the Mapper graph (Mapper, 2007) of three lenses in the
  level layout (vertical position = the node's mean lens value);
* ``stability_<lens>.png``: the stability map of the loop lens: feature counts
  over a grid of cover settings, the stable region around the default outlined;
* ``bootstrap_<lens>.png``: how often each feature count recurs over subsamples;
* ``compare_<a>_<b>.png``: two views side by side, each coloured by the other
  view's lens, and their node correspondence.

Only the public API is used: lenswork.screen, build_graph and LensGraph.draw,
stability_map, bootstrap_graph and compare_views.
"""

from __future__ import annotations

import argparse
import shutil
import tempfile
import time
from pathlib import Path

import lenswork as lw
from lenswork.demo import load_demo

#: Lenses whose graphs the gallery draws (the first, the screen's first pick on the demo, is
#: the loop lens of the stability map and the bootstrap).
GRAPH_LENSES = ("laplacian_1", "pca_2", "density")
#: The two views compared: the loop lens against the density lens.
COMPARE = ("laplacian_1", "density")


def _demo(quick):
    cloud = load_demo()
    if not quick:
        return cloud
    keep = slice(None, None, 3)  # every third snapshot: 1,000 rows
    return lw.PointCloud.from_array(
        cloud.X[keep], feature_names=cloud.feature_names, ids=cloud.ids[keep],
        passthrough={k: v[keep] for k, v in cloud.passthrough.items()},
    )


def _step(label, started):
    print(f"{label}: {time.perf_counter() - started:.1f} s", flush=True)


def make_gallery(out, quick=False):
    """Write every gallery figure into ``out``; returns the list of paths."""
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    written = []
    cloud = _demo(quick)
    ws = lw.Workspace(cloud, random_state=0)

    t = time.perf_counter()
    result = lw.screen(ws)
    with tempfile.TemporaryDirectory() as tmp:
        files = result.write(tmp, figures=True)
        target = out / "screen_sheet.png"
        shutil.copyfile(files["sheet.png"], target)
    written.append(target)
    _step("screen sheet", t)

    t = time.perf_counter()  # the graph of the screen's own choice: the loop and both flares
    pair = lw.build_graph(result.to_lens_table(), ws)
    target = out / "graph_screen_pair.png"
    pair.draw(target)
    written.append(target)
    _step("graph of the screen's pair", t)

    table = lw.compute_lenses(ws, ["laplacian", "pca:components=2", "density"])
    for name in GRAPH_LENSES:
        t = time.perf_counter()
        graph = lw.build_graph(table[name], ws)
        target = out / f"graph_{name}.png"
        graph.draw(target)
        written.append(target)
        _step(f"graph of {name}", t)

    loop_lens = table[GRAPH_LENSES[0]]
    t = time.perf_counter()
    grid = {"interval_counts": (4, 8, 10, 14), "overlaps": (0.2, 0.3, 0.5)} if quick else {}
    smap = lw.stability_map(loop_lens, ws, **grid)
    written += smap.plot(out / f"stability_{loop_lens.name}.png")
    _step("stability map", t)

    t = time.perf_counter()
    boot = lw.bootstrap_graph(loop_lens, ws, resamples=10 if quick else 100, random_state=0)
    written += boot.plot(out / f"bootstrap_{loop_lens.name}.png")
    _step("bootstrap", t)

    t = time.perf_counter()
    a, b = COMPARE
    cmp = lw.compare_views({a: table[a], b: table[b]}, ws)
    written += cmp.plot(out / f"compare_{a}_{b}.png")
    _step("comparison", t)
    return written


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true",
                        help="reduced size (a third of the rows, a small grid, 10 resamples)")
    parser.add_argument("--out", default=str(Path(__file__).resolve().parent),
                        help="output directory (default: the gallery/ folder)")
    args = parser.parse_args(argv)
    for path in make_gallery(args.out, quick=args.quick):
        print(f"wrote {path} ({path.stat().st_size / 1024:.0f} KB)")


if __name__ == "__main__":
    main()
