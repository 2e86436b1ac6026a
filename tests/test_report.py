"""The report page's builder, without a browser: self-contained HTML, the embedded data, members.

References named beside the checks: the raw demo table read back with numpy (the values a user
sees in the page are the table's own units), scipy's Mann-Whitney U for Cliff's delta (Cliff 1993:
delta = 2 U / (n1 n2) - 1), and the LEB128 worked example of the DWARF standard (v4, section 7.6:
624485 -> e5 8e 26).
"""

from __future__ import annotations

import base64
import json
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from scipy import stats

import lenswork as lw
from lenswork.cli import cli
from lenswork.graph import write_graph_json
from lenswork.report import (
    decode_members,
    encode_members,
    read_screen,
    report_data,
    report_html,
    write_report,
)
from lenswork.report._data import id_encoding

DEMO_CSV = Path(__file__).resolve().parents[1] / "data" / "pump_stations.csv"


@pytest.fixture(scope="module")
def demo_graph(demo_cloud):
    ws = lw.Workspace(demo_cloud, random_state=0)
    lenses = lw.compute_lenses(ws, ["pca:components=2"])
    return ws, lw.build_graph(lenses, ws)


@pytest.fixture(scope="module")
def demo_doc(demo_graph):
    ws, graph = demo_graph
    return report_data(graph, ws)


class _Tags(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.data_text, self._in_data = [], None, False

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        self._in_data = tag == "script" and dict(attrs).get("id") == "report-data"

    def handle_data(self, data):
        if self._in_data:
            self.data_text = (self.data_text or "") + data

    def handle_endtag(self, tag):
        self._in_data = False


def _parse(page):
    p = _Tags()
    p.feed(page)
    return p


# ---------------------------------------------------------------- members
def test_leb128_worked_example():
    # DWARF v4, 7.6: the unsigned LEB128 of 624485 is the bytes e5 8e 26; 2 is 02, 127 is 7f,
    # 128 is 80 01
    assert base64.b64decode(encode_members([624485])) == bytes([0xE5, 0x8E, 0x26])
    # positions 2 then 130: first value 2, then the gap minus one, 127
    assert base64.b64decode(encode_members([2, 130])) == bytes([0x02, 0x7F])
    assert base64.b64decode(encode_members([0, 129])) == bytes([0x00, 0x80, 0x01])


@pytest.mark.parametrize("n, high", [(1, 10), (50, 60), (1000, 10**6), (5000, 2**40), (0, 5)])
def test_member_encoding_round_trips(n, high):
    rng = np.random.default_rng(8675309 + n)
    rows = np.unique(rng.integers(0, high, size=n))
    rng.shuffle(rows)
    back = decode_members(encode_members(rows))
    np.testing.assert_array_equal(back, np.sort(rows))  # numpy's sort is the reference order


def test_member_encoding_of_runs_is_one_byte_each():
    # consecutive rows: one zero byte per row after the first (common practice for delta codes)
    raw = base64.b64decode(encode_members(np.arange(200, 500)))
    assert raw[0:2] == bytes([0xC8, 0x01]) and set(raw[2:]) == {0} and len(raw) == 301


def test_member_encoding_rejects_duplicates_and_negatives():
    with pytest.raises(lw.ParameterError, match="Row position 3 is listed twice"):
        encode_members([1, 3, 3])
    with pytest.raises(lw.ParameterError, match="0 or more"):
        encode_members([-1, 2])


def test_graph_members_round_trip(demo_graph, demo_doc):
    _, graph = demo_graph
    for v in range(graph.n_nodes):
        np.testing.assert_array_equal(decode_members(demo_doc["graph"]["members"][v]),
                                      np.sort(graph.members(v)))


# ---------------------------------------------------------------- ids
def test_id_patterns():
    assert id_encoding(np.array(["PS-0001", "PS-0002", "PS-0003"]))["kind"] == "pattern"
    assert id_encoding(np.arange(5, 50, 5)) == {"kind": "pattern", "prefix": "", "width": 0,
                                                "start": 5, "step": 5}
    irregular = np.array(["PS-0001", "PS-0003", "PS-0004"])
    assert id_encoding(irregular) == {"kind": "list", "ids": "PS-0001\nPS-0003\nPS-0004"}


def test_too_many_irregular_ids_are_left_out(monkeypatch):
    from lenswork.report import _data

    monkeypatch.setattr(_data, "MAX_ID_TEXT", 10)
    assert id_encoding(np.array(["x7", "a", "b", "c", "d"])) == {"kind": "none"}


# ---------------------------------------------------------------- the page
def test_page_is_self_contained(demo_graph, demo_doc):
    page = report_html(demo_doc)
    parsed = _parse(page)
    for tag, attrs in parsed.tags:
        for key in ("src", "href"):
            value = attrs.get(key) or ""
            assert not value.lower().startswith(("http:", "https:", "//")), (tag, attrs)
    assert not any(t == "link" for t, _ in parsed.tags)  # styles are inline
    scripts = [a for t, a in parsed.tags if t == "script"]
    assert len(scripts) == 2 and not any("src" in a for a in scripts)
    assert "@import" not in page and "url(http" not in page


def test_embedded_json_is_the_python_document(demo_graph, demo_doc, tmp_path):
    ws, graph = demo_graph
    path = write_report(tmp_path / "r.html", graph, ws)
    text = _parse(path.read_text(encoding="utf-8")).data_text
    embedded = json.loads(text.replace("<\\/", "</"))
    assert embedded == json.loads(json.dumps(demo_doc))
    g = embedded["graph"]
    assert g["size"] == graph.node_sizes.tolist()
    assert g["edges"]["source"] == graph.edge_index[:, 0].tolist()
    assert g["edges"]["target"] == graph.edge_index[:, 1].tolist()
    for name in graph.lens_columns:
        np.testing.assert_allclose(g["lens"][name]["mean"], graph.node_stats[name][:, 0],
                                   rtol=1e-5)


def test_column_means_are_in_the_tables_units(demo_graph, demo_doc):
    """The demo is z-scored on intake; the page shows node means of the raw CSV values."""
    _, graph = demo_graph
    raw = np.genfromtxt(DEMO_CSV, delimiter=",", names=True, dtype=None, encoding="utf-8")
    cols = {c["name"]: c for c in demo_doc["columns"]}
    for name in ("flow_m3h", "vibration_mm_s", "efficiency_pct"):
        expect = [raw[name][graph.members(v)].mean() for v in range(graph.n_nodes)]
        np.testing.assert_allclose(cols[name]["mean"], expect, rtol=1e-4)  # 6 digits kept
    state = cols["state"]
    assert state["type"] == "categorical" and "clogging" in state["levels"]
    expect = [np.mean(raw["state"][graph.members(v)] == "clogging") for v in range(graph.n_nodes)]
    np.testing.assert_allclose(state["share"]["clogging"], expect, atol=1e-4)


def test_node_contrast_delta_matches_mann_whitney(demo_graph, demo_doc):
    _, graph = demo_graph
    raw = np.genfromtxt(DEMO_CSV, delimiter=",", names=True, dtype=None, encoding="utf-8")
    v = int(np.argmax(graph.node_sizes))
    top = demo_doc["node_contrast"][v]
    assert 0 < len(top) <= 6
    inside = np.zeros(graph.n_rows, dtype=bool)
    inside[graph.members(v)] = True
    for row in top:
        if row["type"] != "numeric":
            continue
        x, y = raw[row["column"]][inside], raw[row["column"]][~inside]
        u = stats.mannwhitneyu(x, y).statistic  # Cliff 1993: delta = 2U/(n1 n2) - 1
        assert row["delta"] == pytest.approx(2 * u / (x.size * y.size) - 1, abs=1e-6)
        assert row["mean_in"] == pytest.approx(x.mean(), rel=1e-6)
        assert row["mean_out"] == pytest.approx(y.mean(), rel=1e-6)


def test_features_carry_their_contrast(demo_graph, demo_doc):
    _, graph = demo_graph
    sig = graph.summary().significant_features()
    assert len(demo_doc["features"]) == len(sig)
    for f, g in zip(demo_doc["features"], sig):
        assert f["nodes"] == list(g.nodes) and f["rows"] == g.rows
        assert f["contrast"] and f["contrast"][0]["rank"] == 1


def test_report_without_data_has_lenses_only(demo_graph):
    _, graph = demo_graph
    doc = report_data(graph)
    assert doc["columns"] == [] and all(r == [] for r in doc["node_contrast"])
    assert "report-data" in report_html(doc)


def test_wrong_data_is_refused_before_any_file(demo_graph, tmp_path):
    _, graph = demo_graph
    small = lw.PointCloud.from_array(np.zeros((10, 2)), feature_names=["a", "b"])
    out = tmp_path / "r.html"
    with pytest.raises(lw.InputError, match="built on 3,000 rows but the data has 10"):
        write_report(out, graph, small)
    assert not out.exists() and list(tmp_path.iterdir()) == []
    with pytest.raises(lw.ParameterError, match="must be a LensGraph"):
        report_data(42)
    with pytest.raises(lw.InputError, match="No graph file"):
        report_data(tmp_path)
    with pytest.raises(lw.InputError, match="No screen ranking"):
        read_screen(tmp_path)


# ---------------------------------------------------------------- folders and the CLI
def test_cli_from_screen_and_graph_folders(tmp_path, demo_graph):
    _, graph = demo_graph
    write_graph_json(graph, _mkdir(tmp_path / "g") / "graph.json")
    runner = CliRunner()
    out = tmp_path / "page.html"
    res = runner.invoke(cli, ["report", "--demo", "--graph", str(tmp_path / "g"), "-o", str(out)])
    assert res.exit_code == 0, res.output
    assert "open it in a browser" in res.output
    doc = json.loads(_parse(out.read_text(encoding="utf-8")).data_text.replace("<\\/", "</"))
    assert doc["graph"]["size"] == graph.node_sizes.tolist() and doc["screen"] is None
    # a screen folder: its ranking and sheet go in, its lenses make the graph
    screen_doc = {"selected": ["pca_1"], "stop_text": "count 1 reached", "settings": {},
                  "ranking": [{"rank": 1, "column": "pca_1", "selected": True, "merit": 0.5,
                               "reason": "selected #1"}],
                  "pair_ties": [{"lenses": ["pca_1", "pca_3"], "score": 0.2,
                                 "difference": 0.01, "se": 0.01}],
                  "data_notes": {"duplicates": {"text": "2 duplicate rows collapsed"}}}
    sdir = _mkdir(tmp_path / "s")
    (sdir / "ranking.json").write_text(json.dumps(screen_doc))
    res = runner.invoke(cli, ["report", "--demo", "--screen", str(sdir), "--graph",
                              str(tmp_path / "g" / "graph.json"), "-o", str(out)])
    assert res.exit_code == 0, res.output
    doc = json.loads(_parse(out.read_text(encoding="utf-8")).data_text.replace("<\\/", "</"))
    assert doc["screen"]["selected"] == ["pca_1"] and doc["screen"]["sheet"] is None
    assert doc["screen"]["ranking"][0]["reason"] == "selected #1"
    assert doc["screen"]["pair_ties"] == [["pca_1", "pca_3"]]
    assert doc["screen"]["data_notes"] == ["2 duplicate rows collapsed"]
    res = runner.invoke(cli, ["report", "--demo", "--screen", str(sdir), "-o", str(out)])
    assert res.exit_code == 1 and "No lens file in the screen folder" in res.output


def _mkdir(path):
    path.mkdir(parents=True, exist_ok=True)
    return path


def test_contrast_sample_keeps_nodes_and_estimates_delta(demo_graph):
    """Above contrast_rows the contrasts use a seeded sample; deltas stay near the full ones."""
    ws, graph = demo_graph
    full = report_data(graph, ws)
    part = report_data(graph, ws, contrast_rows=1000)
    assert part["contrast"]["sampled"] and not full["contrast"]["sampled"]
    assert 1000 <= part["contrast"]["rows"] < graph.n_rows
    from lenswork.report import contrast_sample

    sub, sub_cloud, rows = contrast_sample(graph, ws.cloud, 1000, random_state=0)
    held = np.asarray(graph.membership[rows].sum(axis=0)).ravel()
    assert np.all(held >= np.minimum(50, graph.node_sizes))  # small nodes kept whole
    np.testing.assert_array_equal(sub_cloud.ids, ws.cloud.ids[rows])
    # the sample's Cliff's delta of a column against its full-data value: the standard error
    # of delta is at most about 1 / sqrt(min(n1, n2)) (Cliff 1993); allow 4 of them
    v = int(np.argmax(graph.node_sizes))
    by_col = {r["column"]: r for r in full["node_contrast"][v]}
    n1 = int(held[v])
    for r in part["node_contrast"][v]:
        if r["column"] in by_col and r["type"] == "numeric":
            assert abs(r["delta"] - by_col[r["column"]]["delta"]) < 4 / np.sqrt(n1)
    assert report_data(graph, ws, contrast_rows=None)["contrast"] == full["contrast"]


def test_passthrough_numbers_read_as_text_are_numeric(tmp_path):
    """A numeric column kept out of the features is read as text; the page averages it."""
    rng = np.random.default_rng(31337)
    n = 400
    a = rng.uniform(0, 1, n)
    path = tmp_path / "t.csv"
    lines = ["id,a,b,temp,kind"] + [
        f"r{i},{a[i]:.6f},{rng.normal():.6f},{'' if i == 7 else f'{10 * a[i]:.4f}'},"
        f"{'hi' if a[i] > 0.5 else 'lo'}" for i in range(n)]
    path.write_text("\n".join(lines) + "\n")
    cloud = lw.load_table(path, id_column="id", features=["a", "b"])
    graph = lw.build_graph(cloud.X[:, 0], cloud, intervals=4)
    cols = {c["name"]: c for c in report_data(graph, cloud)["columns"]}
    temp = np.array([float(x) if x else np.nan for x in cloud.passthrough["temp"]])
    expect = [np.nanmean(temp[graph.members(v)]) for v in range(graph.n_nodes)]  # numpy nanmean
    assert cols["temp"]["type"] == "numeric"
    np.testing.assert_allclose(cols["temp"]["mean"], expect, rtol=1e-5)
    assert cols["kind"]["type"] == "categorical" and sorted(cols["kind"]["levels"]) == ["hi", "lo"]


def test_every_ranking_field_the_page_shows_is_in_the_screen_document(demo_cloud):
    # the page's table columns come from SCREEN_FIELDS: each must be a key of the screen's own
    # ranking rows (a renamed field would show as an empty column), with the same values
    from lenswork.report._data import SCREEN_FIELDS

    ws = lw.Workspace(demo_cloud, random_state=0)
    result = lw.screen(ws)
    doc = result.to_dict()
    assert set(SCREEN_FIELDS) <= set(doc["ranking"][0])
    page = report_data(lw.build_graph(result.to_lens_table(), ws), ws, screen=result)
    for shown, row in zip(page["screen"]["ranking"], doc["ranking"], strict=True):
        assert shown["pair_merit"] == row["pair_merit"] and shown["column"] == row["column"]
