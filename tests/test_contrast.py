"""Tests of lenswork.contrast: which data columns set a graph feature's rows apart."""

import csv
import dataclasses
from pathlib import Path

import numpy as np
import pytest
import scipy.sparse as sp
from _strict_json import strict_loads
from numpy.testing import assert_allclose
from scipy import stats

from lenswork import (
    InputError,
    LensGraph,
    ParameterError,
    PointCloud,
    Workspace,
    benjamini_hochberg,
    build_graph,
    compute_lenses,
    contrast_columns,
    node_column_values,
)
from lenswork.contrast import circular_rank_correlation, cliffs_delta, cramers_v
from lenswork.demo import load_demo

DATA_CSV = Path(__file__).resolve().parents[1] / "data" / "pump_stations.csv"
SENSORS = None  # filled by the fixture: the demo's 12 channel names


@pytest.fixture(scope="module")
def demo():
    """The demo, its screen-chosen lens (the first Laplacian vector) and the default graph."""
    global SENSORS
    cloud = load_demo()
    SENSORS = list(cloud.feature_names)
    ws = Workspace(cloud, random_state=0)
    lenses = compute_lenses(ws, ["laplacian:components=1"])
    graph = build_graph(lenses, ws, scale="rank")  # the contrast command's cover scale
    return cloud, ws, lenses, graph


def _rows(graph, nodes):
    """Rows of a node set, from the graph's own member lists (not the module's code path)."""
    return np.unique(np.concatenate([graph.members(v) for v in nodes]))


def _flare_of(demo, state):
    """The flare feature whose rows are mostly ``state`` (the demo's own label)."""
    cloud, _, _, graph = demo
    labels = np.asarray(cloud.passthrough["state"])
    flares = graph.summary().flares
    share = [np.mean(labels[_rows(graph, f.nodes)] == state) for f in flares]
    best = int(np.argmax(share))
    assert share[best] > 0.9  # the flare is the fault's: its rows carry the fault's label
    return f"flare:{best + 1}", flares[best]


def _sensor_top(result, label, n):
    return [r.column for r in result.for_feature(label) if r.column in SENSORS][:n]


# ---------------------------------------------------------------- Benjamini-Hochberg
# The 15 p-values of the worked example in Benjamini and Hochberg (1995), section 4 (a study of
# myocardial infarction treatment); values from memory. At q* = 0.05 their step-up procedure
# rejects the four smallest (p <= 0.0095), where Bonferroni-type procedures reject three.
BH_1995 = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240,
           0.4262, 0.5719, 0.6528, 0.7590, 1.0000]


def test_bh_worked_example_of_the_1995_paper():
    q = benjamini_hochberg(BH_1995)
    assert np.flatnonzero(q <= 0.05).tolist() == [0, 1, 2, 3]  # BH 1995: four rejections
    assert int(np.sum(np.asarray(BH_1995) <= 0.05 / 15)) == 3  # Bonferroni: three
    # reference implementation: scipy.stats.false_discovery_control (method "bh")
    assert_allclose(q, stats.false_discovery_control(BH_1995, method="bh"), rtol=1e-12)


def _bh_brute(p, alpha):
    """Step-up rule as written in BH 1995: reject H_(1..k), k = max{i : p_(i) <= i alpha / m}."""
    m = len(p)
    order = np.argsort(p)
    k = 0
    for i in range(1, m + 1):
        if p[order[i - 1]] <= i * alpha / m:
            k = i
    out = np.zeros(m, dtype=bool)
    out[order[:k]] = True
    return out


@pytest.mark.parametrize("alpha", [0.01, 0.05, 0.2])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_bh_matches_the_step_up_rule_and_scipy(alpha, seed):
    rng = np.random.default_rng(9100 + seed)
    p = np.concatenate([rng.uniform(0, 1, 30), rng.uniform(0, 0.01, 10)])
    rng.shuffle(p)
    q = benjamini_hochberg(p)
    assert np.array_equal(q <= alpha, _bh_brute(p, alpha))
    assert_allclose(q, stats.false_discovery_control(p), rtol=1e-12)


def test_bh_leaves_missing_p_values_out_of_the_family():
    p = np.array([0.01, np.nan, 0.02, 0.5])
    q = benjamini_hochberg(p)
    assert np.isnan(q[1])
    assert_allclose(q[[0, 2, 3]], stats.false_discovery_control(p[[0, 2, 3]]), rtol=1e-12)
    with pytest.raises(ParameterError, match=r"lie in \[0, 1\]"):
        benjamini_hochberg([0.2, 1.5])


# ---------------------------------------------------------------- effect sizes
def test_cliffs_delta_against_pairs_and_mann_whitney():
    rng = np.random.default_rng(4411)
    x = np.round(rng.normal(0.4, 1, 60), 1)  # rounded: ties on purpose
    y = np.round(rng.normal(0, 1, 45), 1)
    pairs = np.sign(x[:, None] - y[None, :]).mean()  # Cliff 1993: P(X > Y) - P(X < Y)
    assert_allclose(cliffs_delta(x, y), pairs, rtol=1e-12)
    u = stats.mannwhitneyu(x, y).statistic  # rank-biserial r = 2U / (n1 n2) - 1 (Kerby 2014)
    assert_allclose(cliffs_delta(x, y), 2 * u / (x.size * y.size) - 1, rtol=1e-12)


def test_cramers_v_against_scipy():
    rng = np.random.default_rng(4412)
    table = rng.integers(3, 40, size=(2, 5))
    # scipy.stats.contingency.association: Cramér (1946) V without continuity correction
    ref = stats.contingency.association(table, method="cramer")
    assert_allclose(cramers_v(table), ref, rtol=1e-12)


def test_circular_rank_correlation_is_the_multiple_correlation_on_cos_and_sin():
    rng = np.random.default_rng(4413)
    angle = rng.uniform(0, 2 * np.pi, 300)
    x = np.cos(angle - 2.0) + rng.normal(0, 0.5, 300)
    r, p, peak = circular_rank_correlation(angle, x)
    # closed form: R^2 of the least-squares fit of rank(x) on [1, cos, sin] (Mardia 1976)
    design = np.column_stack([np.ones(300), np.cos(angle), np.sin(angle)])
    rx = stats.rankdata(x)
    fit = design @ np.linalg.lstsq(design, rx, rcond=None)[0]
    r2 = 1 - np.sum((rx - fit) ** 2) / np.sum((rx - rx.mean()) ** 2)
    assert_allclose(r * r, r2, rtol=1e-10)
    assert_allclose(p, stats.chi2.sf(300 * r2, 2), rtol=1e-10)
    assert abs(peak - 2.0) < 0.3  # the generated peak, within the noise
    # starting the angle elsewhere changes nothing (a rotation of the circle)
    r_rot, _, peak_rot = circular_rank_correlation((angle + 1.0) % (2 * np.pi), x)
    assert_allclose(r_rot, r, rtol=1e-10)
    assert_allclose((peak_rot - 1.0) % (2 * np.pi), peak, atol=1e-8)


# ---------------------------------------------------------------- table values vs scipy
def test_numeric_and_categorical_values_against_scipy(demo):
    cloud, ws, lenses, graph = demo
    label, flare = _flare_of(demo, "bearing_wear")
    res = contrast_columns(graph, ws, label, lenses=lenses)
    inside = np.zeros(cloud.n, dtype=bool)
    inside[_rows(graph, flare.nodes)] = True
    by_col = {r.column: r for r in res.for_feature(label)}
    for j, name in enumerate(cloud.feature_names):
        x, y = cloud.X[inside, j], cloud.X[~inside, j]
        # reference: scipy.stats.ks_2samp, exact up to n1 n2 = 1e6, asymptotic above
        ks = stats.ks_2samp(x, y, method="exact" if x.size * y.size <= 1e6 else "asymp")
        row = by_col[name]
        assert_allclose(row.statistic, ks.statistic, rtol=1e-12)
        assert_allclose(row.pvalue, ks.pvalue, rtol=1e-9, atol=1e-300)
        u = stats.mannwhitneyu(x, y).statistic
        assert_allclose(row.cliffs_delta, 2 * u / (x.size * y.size) - 1, rtol=1e-12)
        pooled = np.sqrt(((x.size - 1) * x.var(ddof=1) + (y.size - 1) * y.var(ddof=1)) /
                         (x.size + y.size - 2))  # Cohen 1988: d with the pooled SD
        assert_allclose(row.smd, (x.mean() - y.mean()) / pooled, rtol=1e-10)
        assert (row.n_in, row.n_out) == (inside.sum(), (~inside).sum())
    state = np.asarray(cloud.passthrough["state"])
    levels = sorted(set(state))
    table = np.array([[np.sum(state[inside] == s) for s in levels],
                      [np.sum(state[~inside] == s) for s in levels]])
    chi2, p, _, _ = stats.chi2_contingency(table, correction=False)  # reference: scipy
    row = by_col["state"]
    assert_allclose([row.statistic, row.pvalue], [chi2, p], rtol=1e-9, atol=1e-300)
    assert_allclose(row.effect, stats.contingency.association(table, method="cramer"),
                    rtol=1e-10)
    assert row.level == "bearing_wear"
    # q-values: BH over every test of the call, checked against scipy's
    p_all = [r.pvalue for r in res.rows]
    assert_allclose([r.qvalue for r in res.rows], stats.false_discovery_control(p_all),
                    rtol=1e-9, atol=1e-300)


def test_large_groups_use_the_asymptotic_ks_law_of_scipy():
    # above n1 n2 = 1e6 the p-value is Smirnov's asymptotic law, as ks_2samp(method="asymp")
    # (and scipy's own "auto" above 10,000 rows a side); the sorted-once walk must give the
    # distance, the p-value and Mann-Whitney's U
    rng = np.random.default_rng(4414)
    n = 24_000
    X = np.column_stack([rng.uniform(0, 1, n), np.round(rng.normal(0, 1, n), 2)])
    X[:, 1] += 0.05 * (X[:, 0] > 0.5)  # a small shift in half the rows; ties from rounding
    cloud = PointCloud.from_array(X, feature_names=["t", "w"])
    graph = build_graph(X[:, 0], cloud, intervals=2, overlap=0.1, scale="raw")
    res = contrast_columns(graph, cloud, nodes=[graph.n_nodes - 1], columns=["w"])
    row = res.rows[0]
    inside = np.zeros(n, dtype=bool)
    inside[graph.members(graph.n_nodes - 1)] = True
    x, y = X[inside, 1], X[~inside, 1]
    assert min(x.size, y.size) > 10_000
    for method in ("asymp", "auto"):
        ks = stats.ks_2samp(x, y, method=method)  # reference: scipy.stats.ks_2samp
        assert_allclose([row.statistic, row.pvalue], [ks.statistic, ks.pvalue], rtol=1e-9)
    u = stats.mannwhitneyu(x, y).statistic
    assert_allclose(row.cliffs_delta, 2 * u / (x.size * y.size) - 1, rtol=1e-10)


# ---------------------------------------------------------------- the demo's ground truth
@pytest.mark.parametrize("against", ["rest", "neighbours"])
def test_bearing_wear_flare_is_vibration_and_bearing_temperature(demo, against):
    # demo.py: "bearing_wear (flare 1): ... vibration and bearing temperature climb"; in the
    # generator these two carry the largest wear loadings per SD of their channel
    _, ws, lenses, graph = demo
    label, _ = _flare_of(demo, "bearing_wear")
    res = contrast_columns(graph, ws, label, against=against, lenses=lenses)
    assert set(_sensor_top(res, label, 2)) == {"vibration_mm_s", "bearing_temp_c"}
    rows = {r.column: r for r in res.for_feature(label)}
    for col in ("vibration_mm_s", "bearing_temp_c"):
        assert rows[col].qvalue < 1e-50
        assert rows[col].cliffs_delta > 0.9  # they climb
        # "further along the flare the worse the wear": they rise with the distance from the
        # attachment node
        assert rows[col].along == "spearman" and rows[col].along_r > 0.9
    assert rows["state"].significant and rows["state"].level == "bearing_wear"


def test_clogging_flare_is_flow_and_valve_opening_against_its_neighbours(demo):
    # demo.py: "clogging (flare 2): ... flow and valve opening drop, discharge pressure sags".
    # The generator (demo.py _CHANNELS, clog loadings over each channel's SD) also lowers
    # efficiency: its four largest clog loadings are efficiency, valve opening, discharge and
    # flow, and those four are the flare's top sensor columns.
    _, ws, lenses, graph = demo
    label, _ = _flare_of(demo, "clogging")
    res = contrast_columns(graph, ws, label, against="neighbours", lenses=lenses)
    top4 = _sensor_top(res, label, 4)
    assert set(top4) == {"flow_m3h", "valve_open_pct", "discharge_kpa", "efficiency_pct"}
    rows = {r.column: r for r in res.for_feature(label)}
    for col in ("flow_m3h", "valve_open_pct"):
        assert rows[col].qvalue < 1e-50
        assert rows[col].cliffs_delta < -0.9  # they drop
        assert rows[col].along_r < -0.9  # and keep dropping along the flare
    # against every other row the flare's place on the loop (low tank level, driven only by the
    # daily cycle in demo.py) ranks above flow: why the neighbours are the fairer comparison
    rest = contrast_columns(graph, ws, label, against="rest", lenses=lenses)
    assert "tank_level_m" in _sensor_top(rest, label, 3)
    assert "tank_level_m" not in top4


def test_neighbours_are_the_rows_within_hops(demo):
    # reference: networkx shortest-path lengths on the graph's edge list
    import networkx as nx

    cloud, ws, _, graph = demo
    G = nx.Graph()
    G.add_nodes_from(range(graph.n_nodes))
    G.add_edges_from(graph.edge_index.tolist())
    label, flare = _flare_of(demo, "clogging")
    for hops in (1, 2, 3):
        near = set()
        for v in flare.nodes:
            near |= set(nx.single_source_shortest_path_length(G, v, cutoff=hops))
        near -= set(flare.nodes)
        expect = np.setdiff1d(_rows(graph, sorted(near)), _rows(graph, flare.nodes))
        res = contrast_columns(graph, ws, label, against="neighbours", hops=hops)
        assert res.features[0]["n_against"] == expect.size
    # a set of rows: the other rows of its own nodes are neighbours too
    node = flare.attached_to
    half = graph.members(node)[::2]
    res = contrast_columns(graph, ws, rows=half, against="neighbours", hops=1)
    touched = [v for v in range(graph.n_nodes) if np.intersect1d(graph.members(v), half).size]
    near = set()
    for v in touched:
        near |= set(nx.single_source_shortest_path_length(G, v, cutoff=1))
    expect = np.setdiff1d(_rows(graph, sorted(near)), half)
    assert res.features[0]["n_against"] == expect.size


def test_random_rows_of_the_same_size_show_no_column(demo):
    # permutation check: a random set of rows has no column that sets it apart
    cloud, ws, lenses, graph = demo
    _, flare = _flare_of(demo, "bearing_wear")
    size = _rows(graph, flare.nodes).size
    rng = np.random.default_rng(5150)
    hits = 0
    for _ in range(20):
        rows = rng.choice(cloud.n, size=size, replace=False)
        res = contrast_columns(graph, ws, rows=rows)
        q = np.array([r.qvalue for r in res.rows])
        assert q.min() > 0.01
        hits += bool(res.significant_features())
    # BH at 0.05 under the global null rejects anything with probability <= 0.05 (BH 1995,
    # theorem 1): P(4 or more of 20 draws) < 0.016
    assert hits <= 3


def test_loop_columns_follow_the_daily_cycle(demo):
    # demo.py: "the tank fills and drains" through the day: the tank level is a function of the
    # phase angle around the loop, so its rank circular-linear correlation is high
    _, ws, lenses, graph = demo
    res = contrast_columns(graph, ws, "loop:1", lenses=lenses)
    rows = {r.column: r for r in res.for_feature("loop:1")}
    assert rows["tank_level_m"].along == "circular"
    assert rows["tank_level_m"].along_r > 0.9
    assert rows["tank_level_m"].along_peak_node in graph.summary().features_of("loop")[0].nodes


def test_significant_features_by_default_every_feature_on_request(demo):
    _, ws, lenses, graph = demo
    s = graph.summary()
    res = contrast_columns(graph, ws)
    # default: the components and the significant features; the one component holds every row
    expect = [lab for lab, f in s.labelled() if f.kind == "component" or f.significant]
    assert [f["label"] for f in res.features] + ["component:1"] == \
        [lab for lab in expect if lab != "component:1"] + ["component:1"]
    assert all(f["significant"] for f in res.features)
    assert any(s_["feature"] == "component:1" and "every row" in s_["reason"]
               for s_ in res.skipped)
    n_small = len(s.small_features()) + len(s.features_of("path"))
    assert any(f"{n_small} small features" in n and "all_features" in n for n in res.notes)
    every = contrast_columns(graph, ws, all_features=True)
    assert len(every.features) == len(s.labelled()) - 1  # all but the full component
    assert every.params["all_features"] and not res.params["all_features"]
    with pytest.raises(InputError, match="holds every row"):
        contrast_columns(graph, ws, "component:1")
    with pytest.raises(ParameterError, match="no path feature"):
        contrast_columns(graph, ws, "path")


def test_a_named_small_feature_shows_the_threshold_it_missed(demo):
    _, ws, lenses, graph = demo
    s = graph.summary()
    small = s.small_features()
    assert small  # the demo's one-lens graph has small spurs
    label = next(lab for lab, f in s.labelled() if f is small[0])
    res = contrast_columns(graph, ws, label, all_features=True)
    info = res.features[0]
    assert info["significant"] is False and info["threshold"] == s.needed(small[0])
    assert info["significance"] <= info["threshold"]
    text = res.text(all_features=True)
    assert f"significance {info['significance']:.2f} < {info['threshold']:.2f} needed" in text


def test_bh_runs_over_every_test_of_the_call_not_per_feature(demo):
    _, ws, lenses, graph = demo
    res = contrast_columns(graph, ws, all_features=True)
    labels = {r.feature for r in res.rows}
    assert len(labels) >= 3
    p = np.array([r.pvalue for r in res.rows])
    q = np.array([r.qvalue for r in res.rows])
    # reference: scipy.stats.false_discovery_control (Benjamini-Hochberg) over all p-values
    assert_allclose(q, stats.false_discovery_control(p), rtol=1e-9, atol=1e-300)
    assert res.params["family"] == p.size
    # the same procedure applied feature by feature gives other q-values: the test can tell
    per_feature = np.empty_like(q)
    for lab in labels:
        mine = np.array([r.feature == lab for r in res.rows])
        per_feature[mine] = stats.false_discovery_control(p[mine])
    assert not np.allclose(q, per_feature, rtol=1e-6, atol=0)


def _pairs_delta(x, y):
    """Cliff's delta from its definition, P(X > Y) - P(X < Y), counting pairs (Cliff 1993)."""
    ys = np.sort(y)
    below = np.searchsorted(ys, x, side="left")  # y < x
    above = ys.size - np.searchsorted(ys, x, side="right")  # y > x
    return (below.sum() - above.sum()) / (x.size * ys.size)


def test_a_tiny_effect_on_many_rows_is_not_starred():
    # 20,000 rows: a shift of 0.1 SD in half of them gives a KS q-value far below 0.05 but a
    # Cliff's delta near 0.06, under the "small" threshold 0.147 (Romano et al. 2006); a level
    # 4 points more common gives Cramér's V near 0.04, under Cohen's (1988) small w = 0.1
    rng = np.random.default_rng(4415)
    n = 20_000
    t = rng.uniform(0, 1, n)
    w = rng.normal(0, 1, n) + 0.1 * (t > 0.5)
    big = rng.normal(0, 1, n) + 1.0 * (t > 0.5)
    kind = np.where(rng.uniform(0, 1, n) < 0.5 + 0.04 * (t > 0.5), "a", "b").astype(object)
    X = np.column_stack([t, w, big])
    cloud = PointCloud.from_array(X, feature_names=["t", "w", "big"], passthrough={"kind": kind})
    graph = build_graph(X[:, 0], cloud, intervals=2, overlap=0.1, scale="raw")
    last = graph.n_nodes - 1
    res = contrast_columns(graph, cloud, nodes=[last], columns=["w", "big", "kind"])
    rows = {r.column: r for r in res.rows}
    inside = np.zeros(n, dtype=bool)
    inside[graph.members(last)] = True
    assert_allclose(rows["w"].cliffs_delta, _pairs_delta(w[inside], w[~inside]), rtol=1e-9)
    assert rows["w"].qvalue < 1e-5 and abs(rows["w"].cliffs_delta) < 0.147
    assert not rows["w"].large_enough and not rows["w"].significant
    assert rows["kind"].qvalue < 1e-3 and rows["kind"].effect < 0.1
    assert not rows["kind"].significant
    assert rows["big"].significant and abs(rows["big"].cliffs_delta) >= 0.147
    text = res.text()
    assert "|Cliff's delta| >= 0.147 (Romano et al. 2006)" in text
    assert "Cramér's V >= 0.1 (Cohen 1988)" in text
    assert res.params["effect_floor"] == {"numeric": 0.147, "categorical": 0.1}
    starred = [ln for ln in text.splitlines() if ln.startswith("  ") and "*" in ln[:6]]
    assert len(starred) == 1 and "big" in starred[0]


def test_frame_json_and_csv(demo, tmp_path):
    _, ws, lenses, graph = demo
    res = contrast_columns(graph, ws, "flare", lenses=lenses)
    frame = res.to_frame()
    assert frame.shape == (len(res.rows), 26)  # the 26 fields of ColumnContrast
    assert list(frame["rank"][:3]) == [1, 2, 3]
    res.write_json(tmp_path / "c.json")

    doc = strict_loads((tmp_path / "c.json").read_text())  # RFC 8259
    assert len(doc["columns"]) == len(res.rows)
    res.write_csv(tmp_path / "c.csv")
    lines = (tmp_path / "c.csv").read_text().splitlines()
    assert len(lines) == len(res.rows) + 1 and lines[0].startswith("feature,kind,column")


# ---------------------------------------------------------------- per-node values
def test_node_column_values_against_member_lists(demo):
    cloud, ws, _, graph = demo
    j = cloud.feature_names.index("vibration_mm_s")
    mean, label = node_column_values(graph, ws, "vibration_mm_s")
    median, _ = node_column_values(graph, ws, "vibration_mm_s", "median")
    share, label_s = node_column_values(graph, ws, "state", level="clogging")
    state = np.asarray(cloud.passthrough["state"])
    # the reference: the demo table as written on disk (data/pump_stations.csv, read with
    # the csv module), in the table's own units, although the demo cloud is z-scored
    assert cloud.provenance["scaling"]["method"] == "zscore"
    with open(DATA_CSV, newline="", encoding="utf-8") as fh:
        raw = {r["snapshot"]: float(r["vibration_mm_s"]) for r in csv.DictReader(fh)}
    vib = np.array([raw[str(i)] for i in np.asarray(cloud.ids).tolist()])
    for v in range(graph.n_nodes):
        m = graph.members(v)
        # rtol: the CSV holds 4 significant digits of the generated values
        assert_allclose(mean[v], vib[m].mean(), rtol=1e-3)
        assert_allclose(median[v], np.median(vib[m]), rtol=1e-3)
        assert_allclose(share[v], np.mean(state[m] == "clogging"), rtol=1e-12)
    # the same numbers as the graph's own node statistics (build_graph), the row values
    # passed directly, and the z-scored X scaled back by hand
    g2 = build_graph(graph_lens(demo), ws, columns=["vibration_mm_s"], scale="rank")
    assert_allclose(mean, g2.node_values("vibration_mm_s"), rtol=1e-12)
    direct, _ = node_column_values(graph, cloud.unscaled("vibration_mm_s"), "vibration_mm_s")
    assert_allclose(mean, direct, rtol=1e-12)
    rec = cloud.provenance["scaling"]["columns"]["vibration_mm_s"]
    by_hand = [np.mean(cloud.X[graph.members(v), j] * rec["scale"] + rec["centre"])
               for v in range(graph.n_nodes)]
    assert_allclose(mean, by_hand, rtol=1e-12)
    assert label == "vibration_mm_s (node mean)" and label_s == "share of state = clogging"
    with pytest.raises(ParameterError, match="no level 'jammed'"):
        node_column_values(graph, ws, "state", level="jammed")
    with pytest.raises(ParameterError, match="categorical: colour it by 'share'"):
        node_column_values(graph, ws, "state", "median")
    with pytest.raises(ParameterError, match="No data column 'nope'"):
        node_column_values(graph, ws, "nope")


def graph_lens(demo):
    return demo[2]


def test_draw_graph_coloured_by_a_data_column(demo):
    from lenswork.plot import draw_graph

    _, ws, _, graph = demo
    fig = draw_graph(graph, color="state", data=ws, level="bearing_wear", highlight=[0, 1])
    assert fig.axes[1].get_ylabel() == "share of state = bearing_wear"
    fig = draw_graph(graph, color="flow_m3h", stat="median", data=ws)
    assert fig.axes[1].get_ylabel() == "flow_m3h (node median)"
    with pytest.raises(ParameterError, match="needs the rows: pass data="):
        draw_graph(graph, color="laplacian_1", stat="median")
    with pytest.raises(ParameterError, match="'highlight' nodes"):
        draw_graph(graph, highlight=[999])


# ---------------------------------------------------------------- bad input
def _with(cloud, **columns):
    return dataclasses.replace(cloud, passthrough={**cloud.passthrough, **columns})


def test_constant_and_missing_columns_are_skipped_with_a_note(demo):
    cloud, _, lenses, graph = demo
    n = cloud.n
    rng = np.random.default_rng(6021)
    patchy = rng.normal(size=n).astype(object)
    patchy[::7] = None
    patchy[3::14] = "NA"  # a text table's missing marker (common practice)
    data = _with(cloud, site=np.array(["north"] * n, dtype=object),
                 blank=np.array([""] * n, dtype=object),
                 level=np.full(n, 3.5), patchy=patchy)
    label, _ = _flare_of(demo, "bearing_wear")
    res = contrast_columns(graph, data, label)
    reasons = {s["column"]: s["reason"] for s in res.skipped}
    assert "constant" in reasons["site"] and "'north'" in reasons["site"]
    assert reasons["blank"] == "all values missing"
    assert "constant" in reasons["level"]
    assert {"site", "blank", "level"}.isdisjoint(r.column for r in res.rows)
    row = next(r for r in res.rows if r.column == "patchy")
    assert row.type == "numeric"
    assert row.n_in + row.n_out == n - len(range(0, n, 7)) - len(range(3, n, 14))
    assert any("patchy" in note and "missing" in note for note in res.notes)
    assert "note: column 'site' constant" in res.text()


def test_categorical_with_hundreds_of_levels(demo):
    cloud, _, _, graph = demo
    n = cloud.n
    rng = np.random.default_rng(6022)
    many = np.array([f"pump-{i:03d}" for i in rng.integers(0, 300, n)], dtype=object)
    ident = np.array([f"tag-{i}" for i in range(n)], dtype=object)
    data = _with(cloud, pump=many, tag=ident)
    label, _ = _flare_of(demo, "clogging")
    res = contrast_columns(graph, data, label, max_levels=50)
    assert any("'pump'" in note and "300 levels" in note and "pooled" in note
               for note in res.notes)
    row = next(r for r in res.rows if r.column == "pump")
    assert row.test == "chi2" and not row.significant  # random pump tags: no association
    skipped = {s["column"]: s["reason"] for s in res.skipped}
    assert "identifier" in skipped["tag"]


def test_bad_input_messages(demo):
    cloud, ws, _, graph = demo
    with pytest.raises(InputError, match="'rows': the feature has no rows"):
        contrast_columns(graph, ws, rows=[])
    with pytest.raises(InputError, match="has no rows"):
        contrast_columns(graph, ws, nodes=[])
    with pytest.raises(ParameterError, match="No data column 'pressure'"):
        contrast_columns(graph, ws, "flare:1", columns=["pressure"])
    with pytest.raises(ParameterError, match="No graph feature 'flare:99'"):
        contrast_columns(graph, ws, "flare:99")
    with pytest.raises(ParameterError, match="names node 999"):
        contrast_columns(graph, ws, "nodes:1,999")
    with pytest.raises(ParameterError, match="'against' parameter"):
        contrast_columns(graph, ws, "flare:1", against="elsewhere")
    with pytest.raises(ParameterError, match="row position 5000"):
        contrast_columns(graph, ws, rows=[1, 5000])
    with pytest.raises(InputError, match="built on 3,000 rows but the data has 10"):
        contrast_columns(graph, PointCloud.from_array(np.zeros((10, 2))), "flare:1")
    with pytest.raises(ParameterError, match="'categorical' is not a data column"):
        contrast_columns(graph, ws, "flare:1", categorical=["nope"])
    with pytest.raises(InputError, match="No data column can be tested"):
        contrast_columns(graph, _with(cloud, c=np.ones(cloud.n)), "flare:1", columns=["c"])


def test_no_neighbouring_rows_is_a_clear_error():
    # two separate blobs: a component has no neighbouring nodes
    rng = np.random.default_rng(6023)
    X = np.vstack([rng.normal(0, 0.1, (200, 2)), rng.normal(5, 0.1, (200, 2))])
    cloud = PointCloud.from_array(X, feature_names=["a", "b"])
    graph = build_graph(X[:, 0], cloud, intervals=4, scale="raw")
    assert graph.summary().n_components == 2
    with pytest.raises(InputError, match="no neighbouring rows within 2 hops"):
        contrast_columns(graph, cloud, "component:1", against="neighbours")
    res = contrast_columns(graph, cloud, "component:1")  # against the rest it works
    assert res.rows[0].significant


def test_graph_and_rows_must_match():
    M = sp.csr_matrix(np.array([[1, 0], [1, 1], [0, 1]]))
    g = LensGraph(M, [[0], [1]], [[0, 1]], [1], {"h": np.zeros((2, 3))}, lens_columns=["h"],
                  row_ids=np.array([1, 2, 7]))
    cloud = PointCloud.from_array(np.arange(6.0).reshape(3, 2))
    with pytest.raises(InputError, match="differ from the data's at row 3"):
        contrast_columns(g, cloud, nodes=[0])
    with pytest.raises(ParameterError, match="must be a LensGraph"):
        contrast_columns("graph", cloud)
