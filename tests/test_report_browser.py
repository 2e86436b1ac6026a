"""The demo report page in a real browser: headless Chromium driven by Selenium.

The browser is the distribution's package (``chromium`` with ``chromium-driver``);
nothing is downloaded at run time. Outside CI the tests skip, with the reason,
when the browser, its driver or Selenium is missing; in CI (``CI`` set) they fail.

Every number the page shows is checked against the Python API or against the
raw demo table read with numpy (the table's own units); the Cliff's delta of a
node's top column against scipy's Mann-Whitney U (Cliff 1993:
delta = 2 U / (n1 n2) - 1).

Set ``LENSWORK_GALLERY=1`` to write the screenshot gallery/report_demo.png.
"""

from __future__ import annotations

import csv
import os
import shutil
import time
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import lenswork as lw
from lenswork.report import write_report

ROOT = Path(__file__).resolve().parents[1]
DEMO_CSV = ROOT / "data" / "pump_stations.csv"
AMBER, SLATE = "rgb(217,130,43)", "rgb(31,45,74)"  # the ends of the page's colour ramp


def _browser_paths():
    reasons = []
    try:
        import selenium  # noqa: F401
    except ImportError:
        reasons.append("Selenium is not installed (pip install -e '.[test]')")
    browser = shutil.which("chromium") or shutil.which("chromium-browser")
    driver = shutil.which("chromedriver")
    if browser is None:
        reasons.append("no Chromium on PATH (apt-get install chromium)")
    if driver is None:
        reasons.append("no chromedriver on PATH (apt-get install chromium-driver)")
    if reasons:
        message = "browser tests need a browser: " + "; ".join(reasons)
        if os.environ.get("CI"):
            pytest.fail(message + " -- .ci/run installs them, so CI must have them")
        pytest.skip(message)
    return browser, driver


@pytest.fixture(scope="module")
def demo(tmp_path_factory, demo_cloud):
    """The demo report as `lenswork report --demo` makes it: screen, graph of its pair, page."""
    ws = lw.Workspace(demo_cloud, random_state=0)
    result = lw.screen(ws)
    graph = lw.build_graph(result.to_lens_table(), ws)
    path = write_report(tmp_path_factory.mktemp("report") / "demo.html", graph, ws,
                        screen=result)
    raw = np.genfromtxt(DEMO_CSV, delimiter=",", names=True, dtype=None, encoding="utf-8")
    return {"ws": ws, "graph": graph, "screen": result, "path": path, "raw": raw}


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    chromium, chromedriver = _browser_paths()
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    downloads = tmp_path_factory.mktemp("downloads")
    opts = webdriver.ChromeOptions()
    opts.binary_location = chromium
    for arg in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                "--window-size=1280,1000", "--hide-scrollbars"):
        opts.add_argument(arg)
    opts.add_experimental_option("prefs", {"download.default_directory": str(downloads),
                                           "download.prompt_for_download": False})
    opts.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    driver = webdriver.Chrome(service=Service(chromedriver), options=opts)
    driver.execute_cdp_cmd("Page.setDownloadBehavior",
                           {"behavior": "allow", "downloadPath": str(downloads)})
    driver.downloads = downloads
    yield driver
    driver.quit()


@pytest.fixture
def page(browser, demo):
    """The demo page freshly opened; after the test, no console message of level error."""
    browser.set_window_size(1280, 1000)
    browser.get(demo["path"].as_uri())
    _wait(lambda: browser.execute_script(
        "return document.documentElement.getAttribute('data-ready')") == "true")
    yield browser
    errors = [e for e in browser.get_log("browser") if e["level"] in ("SEVERE", "ERROR")]
    assert errors == []


def _wait(cond, timeout=10.0):
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if cond():
            return
        time.sleep(0.05)
    raise AssertionError("the page did not get there in time")


def _by(driver, css):
    from selenium.webdriver.common.by import By

    return driver.find_element(By.CSS_SELECTOR, css)


def _all(driver, css):
    from selenium.webdriver.common.by import By

    return driver.find_elements(By.CSS_SELECTOR, css)


def _clickable_node(driver, graph):
    """The largest node whose circle is on top at its own centre (no other circle over it)."""
    driver.execute_script("document.getElementById('graph').scrollIntoView({block: 'center'})")
    free = driver.execute_script(
        "return Array.prototype.filter.call(document.querySelectorAll('#graph circle'), "
        "function (c) { var r = c.getBoundingClientRect(); "
        "return document.elementFromPoint(r.x + r.width / 2, r.y + r.height / 2) === c; })"
        ".map(function (c) { return +c.getAttribute('data-node'); });")
    assert free, "no node circle can be clicked"
    return max(free, key=lambda v: graph.node_sizes[v])


def _num(text):
    return float(text.replace(",", "").replace("−", "-"))


# ---------------------------------------------------------------- tests
def test_click_node_shows_its_numbers(page, demo):
    graph, raw = demo["graph"], demo["raw"]
    v = _clickable_node(page, graph)
    _by(page, f'circle[data-node="{v}"]').click()  # a real click on the SVG circle
    _wait(lambda: _by(page, "#node-title").text == f"Node {v}")
    size_text = _by(page, "#node-size").text
    assert size_text.startswith(f"{graph.node_sizes[v]:,} (")
    facts = {dt.text: dd.text for dt, dd in zip(_all(page, "#node-facts dt"),
                                                _all(page, "#node-facts dd"))}
    for name in graph.lens_columns:  # lens min ... max (mean), from the graph's node statistics
        mean, lo, hi = graph.node_stats[name][v]
        nums = [_num(t) for t in facts[name].replace("(mean", "").replace(")", "")
                .replace("…", " ").split()]
        np.testing.assert_allclose(nums, [lo, hi, mean], rtol=6e-3)  # 3 significant digits
    # the contrast table: the top numeric column's delta and means, against scipy and the raw CSV
    rows = _all(page, "#node-panel table.contrast tbody tr")
    assert rows
    inside = np.zeros(graph.n_rows, dtype=bool)
    inside[graph.members(v)] = True
    checked = 0
    for tr in rows:
        cells = [td.text for td in tr.find_elements("css selector", "td")]
        column = cells[0].rstrip(" *\u00a0")
        if column not in raw.dtype.names or column == "state":
            continue
        x, y = raw[column][inside], raw[column][~inside]
        u = stats.mannwhitneyu(x, y).statistic
        assert _num(cells[1]) == pytest.approx(2 * u / (x.size * y.size) - 1, abs=0.006)
        assert _num(cells[2]) == pytest.approx(x.mean(), rel=6e-3)
        assert _num(cells[3]) == pytest.approx(y.mean(), rel=6e-3)
        checked += 1
    assert checked >= 3
    # the same columns, in the same order, as the Python API ranks them
    api = lw.contrast_columns(graph, demo["ws"], nodes=[v]).top("nodes", len(rows))
    assert [tr.find_element("css selector", "td").text.rstrip(" *\u00a0") for tr in rows] == api


def test_switch_colouring_numeric_and_categorical(page, demo):
    from selenium.webdriver.support.ui import Select

    graph, raw = demo["graph"], demo["raw"]
    Select(_by(page, "#color-by")).select_by_value("col:flow_m3h")
    means = np.array([raw["flow_m3h"][graph.members(v)].mean() for v in range(graph.n_nodes)])
    _wait(lambda: "flow_m3h" in _by(page, "#legend").get_attribute("aria-label"))
    assert _by(page, f'circle[data-node="{int(np.argmax(means))}"]').get_attribute("fill") == AMBER
    assert _by(page, f'circle[data-node="{int(np.argmin(means))}"]').get_attribute("fill") == SLATE
    ticks = [t.text for t in _all(page, "#legend text")][1:]
    assert _num(ticks[0]) == pytest.approx(means.min(), rel=6e-3)
    assert _num(ticks[-1]) == pytest.approx(means.max(), rel=6e-3)
    assert not _by(page, "#color-level").is_displayed() or \
        _by(page, "#color-level-label").value_of_css_property("display") == "none"
    # a categorical column: the share of a chosen level
    Select(_by(page, "#color-by")).select_by_value("col:state")
    assert _by(page, "#color-level").is_displayed()
    Select(_by(page, "#color-level")).select_by_value("clogging")
    _wait(lambda: "share of state = clogging" in _by(page, "#legend").get_attribute("aria-label"))
    share = np.array([np.mean(raw["state"][graph.members(v)] == "clogging")
                      for v in range(graph.n_nodes)])
    top = int(np.argmax(share))
    want = AMBER if share[top] == 1.0 else None
    if want:
        assert _by(page, f'circle[data-node="{top}"]').get_attribute("fill") == want
    zero = int(np.flatnonzero(share == 0)[0])
    assert _by(page, f'circle[data-node="{zero}"]').get_attribute("fill") == SLATE
    # the node table's colour column follows
    cell = _by(page, f'#node-table td.colour[data-node="{top}"]').text
    assert cell == f"{100 * share[top]:.0f}%"


def test_choose_feature_highlights_and_lists_contrast(page, demo):
    graph = demo["graph"]
    sig = graph.summary().significant_features()
    buttons = _all(page, "#features-section ul.features button")
    assert len(buttons) == len(sig)
    if not sig:
        pytest.skip("the demo graph has no significant feature")
    buttons[0].click()
    assert buttons[0].get_attribute("aria-pressed") == "true"
    ringed = sorted(int(c.get_attribute("data-node")) for c in _all(page, "circle.in-feature"))
    assert ringed == sorted(set(sig[0].nodes))
    first = _by(page, "#feature-detail table.contrast tbody tr td").text.rstrip(" *\u00a0")
    label = "nodes:" + ",".join(map(str, sorted(set(sig[0].nodes))))
    api = lw.contrast_columns(graph, demo["ws"], [label])
    assert first == api.top(label, 1)[0]
    buttons[0].click()  # chosen again: off
    assert buttons[0].get_attribute("aria-pressed") == "false"
    assert _all(page, "circle.in-feature") == []


def test_download_members_csv(page, demo):
    graph = demo["graph"]
    v = int(np.argsort(graph.node_sizes)[-2])
    for old in page.downloads.glob("*"):
        old.unlink()
    page.execute_script("window.lensworkReport.selectNode(arguments[0], false)", v)
    button = _by(page, "#download-members")
    assert button.text == f"Download all {graph.node_sizes[v]:,} members (CSV)"
    button.click()
    target = page.downloads / f"node-{v}-members.csv"
    _wait(lambda: target.exists() and target.stat().st_size > 0)
    with target.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    assert rows[0] == ["row", graph.id_name]
    members = np.sort(graph.members(v))
    assert [int(r[0]) for r in rows[1:]] == (members + 1).tolist()
    assert [r[1] for r in rows[1:]] == [str(x) for x in graph.row_ids[members]]


def test_ranking_table_sorts(page, demo):
    header = _by(page, '#ranking th button[data-key="merit"]')
    header.click()
    th = header.find_element("xpath", "..")
    assert th.get_attribute("aria-sort") == "descending"
    fields = [b.get_attribute("data-key") for b in _all(page, "#ranking th button")]
    j = fields.index("merit")
    merits = [_num(tr.find_elements("css selector", "td")[j].text)
              for tr in _all(page, "#ranking tbody tr")]
    assert merits == sorted(merits, reverse=True)
    rows = demo["screen"].rows()
    assert sorted(merits, reverse=True) == pytest.approx(
        sorted((r["merit"] for r in rows), reverse=True), abs=6e-3)
    chosen = [tr.find_elements("css selector", "td")[fields.index("column")].text
              for tr in _all(page, "#ranking tbody tr.chosen")]
    assert sorted(chosen) == sorted(demo["screen"].selected)
    reasons = [td.text for td in _all(page, "#ranking td.reason")]
    assert all(reasons) and len(reasons) == len(rows)
    # the pairs the data do not tell apart from the chosen one, as the summary lists them
    ties = [" + ".join(t["lenses"]) for t in demo["screen"].pair_ties]
    shown = [c.text for c in _all(page, "#pair-ties .chip")]
    assert shown == ties


def test_keyboard_reaches_the_controls(page, demo):
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.keys import Keys

    seen = []
    for _ in range(40):
        ActionChains(page).send_keys(Keys.TAB).perform()
        seen.append(page.execute_script(
            "var e = document.activeElement; var f = e.getAttribute('data-feature'); "
            "return e.id || e.getAttribute('data-key') || e.getAttribute('data-node') || "
            "(f === null ? null : 'feature ' + f) || e.getAttribute('aria-label') || e.tagName;"))
    # the colouring, the zoom buttons, the graph itself, a feature, the ranking's sort buttons
    # and the node table, in page order
    wanted = ["color-by", "Zoom in", "Reset pan and zoom", "graph", "merit", "0"]
    if demo["graph"].summary().significant_features():
        wanted.insert(4, "feature 0")
    positions = [seen.index(w) for w in wanted if w in seen]
    assert len(positions) == len(wanted) and positions == sorted(positions), seen
    # a node opened from the node table with the keyboard alone
    button = _by(page, '#node-table button[data-node="3"]')
    page.execute_script("arguments[0].focus()", button)
    ActionChains(page).send_keys(Keys.ENTER).perform()
    _wait(lambda: _by(page, "#node-title").text == "Node 3")
    assert page.execute_script("return document.activeElement.id") == "node-title"
    # the graph pans from the keyboard
    page.execute_script("document.getElementById('graph').focus()")
    ActionChains(page).send_keys(Keys.ARROW_LEFT).perform()
    assert "translate(40,0)" in _by(page, "#viewport").get_attribute("transform")


def test_text_alternatives(page, demo):
    graph = demo["graph"]
    assert len(_all(page, "#node-table tbody tr")) == min(graph.n_nodes, 400)
    assert _by(page, "#graph").get_attribute("aria-label").startswith(
        f"Graph of {graph.n_nodes} nodes")
    assert _by(page, "#sheet img").get_attribute("alt")
    for sel in _all(page, "select"):
        assert sel.find_element("xpath", "ancestor::label")


def test_readable_at_1280_and_phone_width(page, demo, tmp_path):
    page.execute_script("window.lensworkReport.selectNode(arguments[0], false)",
                        int(np.argmax(demo["graph"].node_sizes)))
    shots = {}
    for width in (1280, 390):
        page.set_window_size(width, 1000)
        time.sleep(0.2)
        # nothing wider than the window: wide tables scroll inside their own boxes
        overflow = page.execute_script(
            "return document.documentElement.scrollWidth - document.documentElement.clientWidth")
        assert overflow <= 1, (width, overflow)
        box = _by(page, "#graph").rect
        assert box["width"] >= 0.8 * min(width, 900) - 60
        if width == 1280:  # the sticky node panel has its own column: no section runs under it
            panel = _by(page, "#node-panel").rect
            for sec in _all(page, "main > section"):
                assert sec.rect["x"] + sec.rect["width"] <= panel["x"] + 1, sec.get_attribute("id")
        shots[width] = tmp_path / f"report_{width}.png"
        page.save_screenshot(str(shots[width]))
        assert shots[width].read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    if os.environ.get("LENSWORK_GALLERY"):
        page.set_window_size(1280, 1500)
        page.execute_script("window.scrollTo(0, 0)")
        time.sleep(0.2)
        page.save_screenshot(str(ROOT / "gallery" / "report_demo.png"))


def test_page_opens_with_no_network(demo):
    """No element asks for anything outside the file (the page fixture checks the console)."""
    text = demo["path"].read_text(encoding="utf-8")
    assert 'src="http' not in text and 'href="http' not in text


def test_pan_and_zoom(page):
    from selenium.webdriver.common.action_chains import ActionChains

    view = _by(page, "#viewport")
    _by(page, 'button[aria-label="Zoom in"]').click()
    assert view.get_attribute("transform").endswith("scale(1.25)")
    graph = _by(page, "#graph")
    page.execute_script("arguments[0].scrollIntoView({block: 'center'})", graph)
    # drag from a corner of the drawing (no node there): the view moves with the pointer
    w, h = graph.rect["width"], graph.rect["height"]
    ActionChains(page).move_to_element_with_offset(graph, int(-w / 2) + 5, int(-h / 2) + 5) \
        .click_and_hold().move_by_offset(60, 30).release().perform()
    moved = view.get_attribute("transform")  # the zoom about the centre left (-125, -80)
    tx, ty = (float(t) for t in moved.split("(")[1].split(")")[0].split(","))
    assert tx + 125 == pytest.approx(60 * 1000 / w, rel=0.1)  # 60 px in viewBox units
    assert ty + 80 == pytest.approx(30 * 640 / h, rel=0.1)
    _by(page, 'button[aria-label="Reset pan and zoom"]').click()
    assert view.get_attribute("transform") == "translate(0,0) scale(1)"
