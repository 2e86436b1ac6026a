"""Report page: size, build time and time to interactive in headless Chromium, demo to 1e6 rows.

For each size the script builds a graph, writes the report page and opens it in
the distribution's Chromium (Selenium with chromium-driver), then prints:

* the page size, and the members' share of it, against the same members written as
  JSON lists of integers (the naive encoding: the reference ratio);
* the time to build the page's data (node statistics in the table's units, the
  node and feature contrasts, the member encoding) and to write it;
* the time to interactive: from navigation start to the moment the page's script
  has drawn the graph and the tables (``performance.now()`` when it sets
  ``data-ready``), against an empty page opened the same way (the browser's floor);
* the time to open the largest node's panel and to build its member CSV in the page;
* the page's JavaScript heap and the Python process's peak memory.

Sizes: the demo (screen + graph of its chosen pair, as ``lenswork report --demo``),
then a noisy loop with a flare, n x 20 (``bench_scale.make_table``) with a
categorical column of four levels, lens ``pca:components=2``, clusterer ``auto``
(``element-knn`` above 50,000 rows). Target (issue 23): under 5 MB and interactive
within 2 s. Run under ``flock /tmp/lenswork-bench.lock``.
"""

from __future__ import annotations

import argparse
import json
import resource
import shutil
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _util import print_table, timed
from bench_scale import make_table

import lenswork as lw
from lenswork.report import report_data, report_html


def browser():
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    opts = webdriver.ChromeOptions()
    opts.binary_location = shutil.which("chromium") or "/usr/bin/chromium"
    for arg in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                "--window-size=1280,1000", "--enable-precise-memory-info"):
        opts.add_argument(arg)
    return webdriver.Chrome(service=Service(shutil.which("chromedriver")), options=opts)


def open_page(driver, path):
    """(time to interactive in ms from navigation start, wall ms around driver.get)."""
    start = time.perf_counter()
    driver.get(path.as_uri())
    while driver.execute_script("return document.documentElement.getAttribute('data-ready')") \
            != "true":
        time.sleep(0.01)
    wall = 1e3 * (time.perf_counter() - start)
    return driver.execute_script("return window.lensworkReport.readyAt"), wall


def panel_ms(driver, node):
    return driver.execute_script(
        "var t = performance.now(); window.lensworkReport.selectNode(arguments[0], false);"
        "var a = performance.now(); var csv = window.lensworkReport.membersCsv(arguments[0]);"
        "return [a - t, performance.now() - a, csv.length];", node)


def floor_ms(driver, tmp):
    blank = tmp / "blank.html"
    blank.write_text("<!DOCTYPE html><html><body><script>window.r = performance.now();"
                     "document.documentElement.setAttribute('data-ready', 'true');"
                     "window.lensworkReport = {readyAt: window.r};</script></body></html>")
    return open_page(driver, blank)[0]


def demo_case():
    from lenswork.demo import load_demo

    ws = lw.Workspace(load_demo(), random_state=0)
    result = lw.screen(ws)
    graph = lw.build_graph(result.to_lens_table(), ws)
    return ws, graph, result


def synthetic_case(n):
    rng = np.random.default_rng(20261204)
    X = make_table(n, rng)
    regime = np.array(["a", "b", "c", "d"], dtype=object)[rng.integers(0, 4, n)]
    cloud = lw.PointCloud.from_array(X, feature_names=[f"x{j + 1}" for j in range(20)],
                                     passthrough={"regime": regime})
    ws = lw.Workspace(cloud, random_state=0)
    lenses = lw.compute_lenses(ws, ["pca:components=2"])
    graph = lw.build_graph(lenses, ws)
    return ws, graph, None


def naive_members_bytes(graph):
    csc = graph.membership.tocsc()
    return sum(len(json.dumps(csc.indices[csc.indptr[v]:csc.indptr[v + 1]].tolist()))
               for v in range(graph.n_nodes))


def run(label, make, driver, tmp):
    (ws, graph, result), build_s = timed(make)
    doc, data_s = timed(report_data, graph, ws, screen=result)
    page, html_s = timed(report_html, doc)
    path = tmp / f"report_{label}.html"
    path.write_text(page, encoding="utf-8")
    size = path.stat().st_size
    members = sum(len(m) for m in doc["graph"]["members"])
    naive = naive_members_bytes(graph)
    tti = [open_page(driver, path) for _ in range(3)]
    best = min(tti)
    big = int(np.argmax(graph.node_sizes))
    panel, csv_ms, _ = panel_ms(driver, big)
    heap = driver.execute_script("return performance.memory ? performance.memory.usedJSHeapSize"
                                 " : null")
    return {
        "rows": label, "nodes": graph.n_nodes, "build graph s": round(build_s, 1),
        "page data s": round(data_s, 2), "html s": round(html_s, 2),
        "page MB": round(size / 1e6, 3), "members MB": round(members / 1e6, 3),
        "JSON lists MB": round(naive / 1e6, 3), "ratio": round(naive / max(members, 1), 2),
        "interactive ms": round(best[0]), "wall ms": round(best[1]),
        "panel ms": round(panel, 1), "member CSV ms": round(csv_ms, 1),
        "JS heap MB": None if heap is None else round(heap / 2**20, 1),
        "peak RSS MiB": round(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024),
    }


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="demo and 1e4 only")
    parser.add_argument("--sizes", default="1e5,1e6", help="synthetic sizes (default 1e5,1e6)")
    parser.add_argument("--no-demo", action="store_true", help="skip the demo case")
    args = parser.parse_args()
    sizes = [int(float(s)) for s in ("1e4" if args.quick else args.sizes).split(",") if s]
    driver = browser()
    rows = []
    try:
        with tempfile.TemporaryDirectory(prefix="bench-report-") as tmp:
            tmp = Path(tmp)
            floor = min(floor_ms(driver, tmp) for _ in range(3))
            print(f"empty page, the browser's floor: interactive {floor:.0f} ms", flush=True)
            cases = [] if args.no_demo else [("demo", demo_case)]
            cases += [(f"{n:.0e}".replace("+0", ""), lambda n=n: synthetic_case(n))
                      for n in sizes]
            for label, make in cases:
                rows.append(run(label, make, driver, tmp))
                print_table(rows[-1:])
                print(flush=True)
    finally:
        driver.quit()
    print("summary (target: under 5 MB, interactive within 2,000 ms)")
    print_table(rows)


if __name__ == "__main__":
    main()
