"""Tests of lenswork.probe: feature counts, the structure probe and the stability map."""

import csv
import json
from collections import Counter

import networkx as nx
import numpy as np
import pytest
from _shapes import noisy_circle, torus
from numpy.testing import assert_allclose
from scipy import ndimage

from lenswork import (
    InputError,
    LensColumn,
    LensTable,
    LensworkWarning,
    ParameterError,
    PointCloud,
    Workspace,
    compute_lenses,
    feature_counts,
    screen,
    stability_map,
    structure_scores,
)
from lenswork.graph import build_graph
from lenswork.probe import FEATURE_WEIGHTS, _mode, _score
from lenswork.stability import _region


def _networkx_counts(graph):
    """Counts by networkx, from the node and edge lists (independent reference)."""
    G = nx.Graph()
    G.add_nodes_from(range(graph.n_nodes))
    G.add_edges_from(graph.edge_index.tolist())
    deg = dict(G.degree())
    flares = 0
    for leaf in (v for v, d in deg.items() if d == 1):
        prev, cur = leaf, next(iter(G[leaf]))
        while deg[cur] == 2:
            prev, cur = cur, next(w for w in G[cur] if w != prev)
        flares += deg[cur] >= 3
    return {
        "components": nx.number_connected_components(G),
        "loops": len(nx.cycle_basis(G)),  # rank of the cycle space = E - V + C
        "branch_points": sum(1 for d in deg.values() if d >= 3),
        "flares": flares,
    }


# --------------------------------------------------------------------------- helpers
def test_region_matches_scipy_label():
    rng = np.random.default_rng(11)
    for _ in range(30):
        grid = rng.integers(0, 3, size=(8, 5))
        cell = (int(rng.integers(0, 8)), int(rng.integers(0, 5)))
        # scipy.ndimage.label with its default cross structure = 4-connectivity, as reference
        labels, _ = ndimage.label(grid == grid[cell])
        assert np.array_equal(_region(grid, cell), labels == labels[cell])


def test_mode_takes_the_smaller_value_on_ties():
    values = np.array([[3, 1, 1], [2, 2, 5]])
    counts = Counter(values.ravel().tolist())  # collections.Counter as reference
    top = max(counts.values())
    assert _mode(values) == (min(v for v, c in counts.items() if c == top), top / 6)


def test_score_formula():
    grid = {
        "loops": np.array([[1, 1], [1, 0]]), "flares": np.array([[2, 2], [2, 2]]),
        "branch_points": np.array([[0, 1], [1, 1]]), "extra_components": np.zeros((2, 2)),
        "empty": np.zeros((2, 2)), "unassigned": np.zeros((2, 2)),
        "significance_total": np.array([[0.5, 1.0], [0.8, 0.2]]),
    }
    row = _score(grid, FEATURE_WEIGHTS, 0.25, n_rows=100)
    # The module docstring's formulas, evaluated by hand: modes 1, 2, 1, 0;
    # agreements 3/4, 1, 3/4, 1; weighted count 1 + 0.5*2 + 0.25*1 = 2.25
    revealed = 1 - 2 ** -2.25
    stability = (0.75 + 1 + 0.75 + 1) / 4
    assert (row["loops"], row["flares"], row["branch_points"]) == (1, 2, 1)
    assert_allclose(row["revealed"], revealed, rtol=1e-15)
    assert_allclose(row["stability"], stability, rtol=1e-15)
    assert_allclose(row["count_structure"], 0.25 + 0.75 * revealed * stability, rtol=1e-15)
    # significance: T = median(0.5, 1.0, 0.8, 0.2) = 0.65 (numpy.median of an even count:
    # the mean of the middle two), every row kept and no extra component: coherence 1
    significance = 1 - 2 ** -0.65
    assert_allclose(row["significance"], significance, rtol=1e-15)
    assert row["coherence"] == 1.0
    assert_allclose(row["structure"], 0.25 + 0.75 * significance, rtol=1e-15)
    grid["extra_components"] = np.full((2, 2), 3)
    # coherence 1 / (1 + 3) divides both structure scores
    row = _score(grid, FEATURE_WEIGHTS, 0.25, n_rows=100)
    assert_allclose(row["count_structure"], 0.25 + 0.75 * revealed * stability / 4, rtol=1e-15)
    assert_allclose(row["structure"], (0.25 + 0.75 * significance) / 4, rtol=1e-15)
    grid["extra_components"] = np.array([[3, 1], [0, 0]])
    grid["empty"] = np.array([[0, 0], [0, 1]])
    grid["unassigned"] = np.array([[10, 0], [30, 100]])
    # one empty cell of four (all 100 rows in no node); mean extra over the three others
    # = 4 / 3; rows kept: 1 - (0.1 + 0 + 0.3 + 1) / 4 = 0.65
    assert_allclose(_score(grid, FEATURE_WEIGHTS, 0.25, n_rows=100)["coherence"],
                    0.65 / (1 + 4 / 3), rtol=1e-15)


def test_probe_grid_follows_the_rows():
    # interval length L = 1 / (1 + (N - 1)(1 - p)) (N intervals, consecutive ones L (1 - p)
    # apart, span [0, 1]); the rule keeps N while n L^d >= 2 min_size
    from lenswork.probe import interval_length, probe_intervals

    for n, d in [(150, 1), (178, 1), (569, 1), (400, 2), (3000, 2)]:
        got = probe_intervals(n, 10, 0.25, columns=d)
        brute = max([N for N in range(2, 15) if n * interval_length(N, 0.25) ** d >= 20],
                    default=2)
        assert got == tuple(sorted({min(N, brute) for N in (6, 10, 14)}))
    assert probe_intervals(150, 10, 0.25) == (6, 9)
    assert probe_intervals(10_000, 10, 0.25) == (6, 10, 14)


# --------------------------------------------------------------------------- counts
@pytest.mark.filterwarnings("ignore::lenswork.LensworkWarning")  # a few rows in no node
@pytest.mark.parametrize("intervals,overlap", [(6, 0.2), (10, 0.3), (16, 0.5)])
def test_feature_counts_match_networkx(demo_cloud, intervals, overlap):
    ws = Workspace(demo_cloud)
    lens = compute_lenses(ws, ["pca:components=1"])
    g = build_graph(lens, ws, intervals=intervals, overlap=overlap)
    got = feature_counts(g)
    ref = _networkx_counts(g)
    assert {k: got[k] for k in ref} == ref
    assert got["loops"] == g.n_edges - g.n_nodes + got["components"]  # b1 = E - V + C


def test_feature_counts_extra_components():
    rng = np.random.default_rng(12)
    X = noisy_circle(400, rng)
    g = build_graph(X[:, 0], Workspace(X))
    c = feature_counts(g, data_components=1)
    assert c["extra_components"] == max(c["components"] - 1, 0)


# --------------------------------------------------------------------------- probe
def test_probe_prefers_the_loop_lens_on_a_circle():
    rng = np.random.default_rng(13)
    X = noisy_circle(600, rng)
    ws = Workspace(X)
    lenses = [LensColumn("x", X[:, 0]), LensColumn("noise", rng.uniform(size=600))]
    probe = structure_scores(lenses, ws)
    assert probe["x"]["loops"] == 1 and probe["x"]["loops_agreement"] == 1.0
    # a lens of pure noise is not continuous along the circle: its graphs fall apart
    grid = probe.counts["noise"]
    assert grid["extra_components"][grid["empty"] == 0].mean() > 1
    assert probe["noise"]["coherence"] < 0.5 and probe["x"]["coherence"] == 1.0
    assert probe["x"]["structure"] > probe["noise"]["structure"]
    assert probe.data_components == 1
    # the circle under a coordinate: one loop over the whole range (Cohen-Steiner,
    # Edelsbrunner and Harer 2009), significant at every cell
    assert probe["x"]["significant_loops"] == 1 and probe["noise"]["significant_loops"] == 0
    for scores in probe.values():
        assert 0 <= scores["structure"] <= scores["coherence"] * 1
        assert scores["structure"] >= probe.floor * scores["coherence"]


def test_probe_ranks_the_loop_lens_above_density_on_the_demo(demo_cloud):
    ws = Workspace(demo_cloud)
    table = compute_lenses(ws, ["pca:components=2", "density"])
    probe = structure_scores(table, ws)
    # pca_1 shows the daily loop at every cell of the grid; density does not show
    # one stable loop count (its graphs change with every setting)
    assert probe["pca_1"]["loops"] == 1 and probe["pca_1"]["loops_agreement"] == 1.0
    assert probe["density"]["loops_agreement"] < 0.5
    assert probe["pca_1"]["structure"] > probe["density"]["structure"]
    best = max(probe.names, key=lambda nm: probe[nm]["structure"])
    assert best in ("pca_1", "pca_2")


def test_probe_columns_feed_the_screen():
    rng = np.random.default_rng(14)
    X = noisy_circle(500, rng)
    cloud = PointCloud.from_array(X)
    table = LensTable([LensColumn("x", X[:, 0]), LensColumn("r", np.hypot(*X.T))], cloud)
    probe = structure_scores(table, Workspace(cloud), interval_counts=(6, 10), overlaps=(0.3,))
    cols = probe.columns(["structure"])
    assert cols["structure"].shape == (2,)
    result = screen(table).rescore(scores=cols, weights={"spread": 1.0, "structure": 1.0})
    assert_allclose(result.scores["structure"], [probe["x"]["structure"],
                                                 probe["r"]["structure"]], rtol=0)
    text = probe.to_csv_text().splitlines()
    assert text[0].startswith("column,loops,loops_agreement") and len(text) == 3


def test_probe_is_deterministic_and_permutation_invariant():
    rng = np.random.default_rng(15)
    X = noisy_circle(500, rng)
    perm = rng.permutation(500)
    a = structure_scores(X[:, 0], Workspace(X))
    b = structure_scores(X[:, 0], Workspace(X))
    c = structure_scores(X[perm, 0], Workspace(X[perm]))
    assert dict(a) == dict(b)
    # a graph does not depend on the order of the rows (common practice: relabelling
    # rows relabels nodes, counts stay)
    assert a["lens"] == c["lens"]


def test_probe_gives_nan_scores_to_a_nan_column():
    rng = np.random.default_rng(20)
    X = noisy_circle(300, rng)
    bad = X[:, 1].copy()
    bad[7] = np.nan
    with pytest.warns(LensworkWarning, match="'bad' holds NaN or infinite values"):
        probe = structure_scores([LensColumn("x", X[:, 0]), LensColumn("bad", bad)],
                                 Workspace(X), interval_counts=(8,), overlaps=(0.3,))
    assert np.isnan(probe["bad"]["structure"]) and np.isfinite(probe["x"]["structure"])
    assert set(probe["bad"]) == set(probe["x"])


def test_probe_errors():
    rng = np.random.default_rng(16)
    X = noisy_circle(100, rng)
    ws = Workspace(X)
    with pytest.raises(ParameterError, match="'interval_counts' parameter of structure_scores"):
        structure_scores(X[:, 0], ws, interval_counts=(0, 5))
    with pytest.raises(ParameterError, match="'overlaps' parameter of structure_scores"):
        structure_scores(X[:, 0], ws, overlaps=(1.0,))
    with pytest.raises(ParameterError, match="has no setting 'colour'"):
        structure_scores(X[:, 0], ws, colour="red")
    with pytest.raises(ParameterError, match="No feature type 'holes'"):
        structure_scores(X[:, 0], ws, weights={"holes": 1.0})
    with pytest.raises(InputError, match="has 99 values but the data has 100 rows"):
        structure_scores(LensColumn("short", X[:99, 0]), ws)
    with pytest.raises(ParameterError, match="appears twice"):
        structure_scores([LensColumn("a", X[:, 0]), LensColumn("a", X[:, 1])], ws)
    with pytest.raises(ParameterError, match="has no score 'merit'"):
        structure_scores(X[:, 0], ws, interval_counts=(6,), overlaps=(0.3,)).columns(["merit"])


# --------------------------------------------------------------------------- stability map
def test_torus_height_map_has_one_stable_loop_region():
    rng = np.random.default_rng(17)
    # Torus R = 3, r = 1 around the z axis; the height across the hole axis (x) has
    # four critical points (min, two saddles, max), so its Reeb graph is a circle
    X = torus(2500, rng)
    smap = stability_map(X[:, 0], Workspace(X))
    loops = smap.counts["loops"]
    cell = smap.default_cell
    assert (smap.interval_counts[cell[0]], smap.overlaps[cell[1]]) == (10, 0.3)
    assert loops[cell] == 1
    # scipy.ndimage.label (default cross structure: 4-connectivity) as reference
    labels, count = ndimage.label(loops == 1)
    assert count == 1 and labels[cell] == 1
    assert np.array_equal(smap.region("loops"), loops == 1)


def test_stability_map_table_and_figure(tmp_path):
    rng = np.random.default_rng(18)
    X = noisy_circle(400, rng)
    smap = stability_map(LensColumn("x", X[:, 0]), Workspace(X), interval_counts=(4, 10, 12),
                         overlaps=(0.2, 0.3))
    path, sidecar = smap.write(tmp_path / "map.csv")
    with open(path, newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == 6
    # the significant counts lead (the summary's first line), the raw ones follow
    assert list(rows[0])[:10] == ["intervals", "overlap", "components", "significant_loops",
                                  "significant_flares", "significant_limbs",
                                  "significant_branch_points", "loops", "branch_points",
                                  "flares"]
    for r in rows:
        i = smap.interval_counts.index(int(r["intervals"]))
        j = smap.overlaps.index(float(r["overlap"]))
        for feature in ("components", "significant_loops", "loops", "branch_points", "flares"):
            assert int(r[feature]) == smap.counts[feature][i, j]
    meta = json.loads(sidecar.read_text())
    assert meta["lens"] == "x" and meta["default"] == [10, 0.3] and meta["n_rows"] == 400
    png = smap.plot(tmp_path / "map.png")[0]
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_stability_map_default_outside_the_grid():
    rng = np.random.default_rng(19)
    X = noisy_circle(300, rng)
    smap = stability_map(X[:, 0], Workspace(X), interval_counts=(6, 8), overlaps=(0.2,))
    assert smap.default_cell is None
    with pytest.raises(ParameterError, match="does not hold the default setting"):
        smap.region("loops")
    assert smap.region("loops", cell=(0, 0))[0, 0]
    with pytest.raises(ParameterError, match="No feature 'holes'"):
        smap.region("holes", cell=(0, 0))


def _circle_with_tail(n, rng):
    """A noisy circle of radius 1 with a straight tail of length 2 leaving it at (1, 0)."""
    t = rng.uniform(0, 2 * np.pi, n - n // 4)
    s = rng.uniform(0, 2, n // 4)
    X = np.vstack([np.column_stack([np.cos(t), np.sin(t)]), np.column_stack([1 + s, 0 * s])])
    return X + rng.normal(scale=0.03, size=X.shape)


@pytest.mark.parametrize("columns", [(0,), (0, 1)])
def test_stability_cells_state_the_graph_summary_significant_counts(columns):
    # The reference is the project's own graph summary: every cell's significant counts are
    # those build_graph(...).summary() gives at that cell's settings (for two lenses the holes
    # over the coarser cover scales, which build_graph builds itself), its raw counts too.
    from lenswork.graph import grid_settings
    from lenswork.probe import merged_settings

    rng = np.random.default_rng(20261204)
    X = _circle_with_tail(900, rng)
    ws = Workspace(X)
    lens = X[:, columns[0]] if len(columns) == 1 else X[:, list(columns)]
    smap = stability_map(lens, ws, interval_counts=(6, 10, 14), overlaps=(0.2, 0.4))
    lead = "significant_loops" if len(columns) == 1 else "significant_holes"
    assert smap.features[:2] == ("components", lead)
    settings = merged_settings(None, None, {})
    for i, n_int in enumerate(smap.interval_counts):
        for j, overlap in enumerate(smap.overlaps):
            s = build_graph(lens, ws, grid_settings(settings, n_int, overlap)).summary()
            want = s.significant_counts()
            got = {k: int(smap.counts[f"significant_{k}" if k != "components" else k][i, j])
                   for k in want}
            assert got == want, (n_int, overlap)
            assert smap.counts["loops"][i, j] == s.loops
            assert smap.counts["flares"][i, j] == s.n_flares
    # the tail is a flare (or, for the x lens, the trunk holding the maximum) somewhere
    assert smap.counts["significant_flares"].max() + smap.counts["significant_limbs"].max() >= 1


def test_stability_map_counts_one_significant_hole_per_circle():
    # scikit-learn's make_circles: two concentric circles, each with first Betti number 1
    # (closed form); both loops span more than the cover's resolution threshold at 10 and 12
    # intervals (the inner circle spans 60 % of the x range, the threshold is at most 0.32
    # plus the lens jitter: lenswork.graph._thresholds.resolution_threshold).
    from sklearn.datasets import make_circles

    X, _ = make_circles(n_samples=1200, noise=0.03, factor=0.6, random_state=0)
    ws = Workspace(X)
    one = stability_map(X[:, 0], ws, interval_counts=(10, 12), overlaps=(0.3, 0.4))
    assert (one.counts["components"] == 2).all()
    assert (one.counts["significant_loops"] == 2).all()
    both = stability_map(X, ws, interval_counts=(10, 12), overlaps=(0.3, 0.4))
    assert (both.counts["significant_holes"] == 2).all()
    assert (both.counts["loops"] > 2).all()  # the raw cycles of a product cover are not holes
    text = both.text()
    assert text.index("significant holes:") < text.index("raw loops")
    rec = both.to_dict()["cells"][0]
    assert list(rec)[2:4] == ["components", "significant_holes"]
