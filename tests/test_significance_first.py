"""Every output leads with what is significant: summary, drawing, comparison and graph files.

The significance itself is lenswork.graph's (extended persistence of the lens on the graph,
Carrière and Oudot, FoCM 2018); these tests check that every output states the same
significant counts, marks only the significant features, and names raw counts as raw. Raw
counts are checked against networkx (cycle basis, degrees).
"""

import json
import re
import warnings
import xml.etree.ElementTree as ET

import networkx as nx
import numpy as np
import pytest
from _shapes import noisy_circle

from lenswork import LensworkWarning, Workspace, build_graph, compare_views
from lenswork.graph import write_graph_json, write_graphml
from lenswork.plot import draw_graph

#: Words of the headline -> keys of GraphSummary.significant_counts.
KEYS = {"component": "components", "loop": "loops", "hole": "holes", "flare": "flares",
        "limb": "limbs", "branch point": "branch_points"}


def _counts(text):
    """``{key: n}`` from a headline such as ``1 component · 2 loops · 0 flares``."""
    found = re.findall(r"(\d+) (component|loop|hole|flare|limb|branch point)s?\b", text)
    return {KEYS[word]: int(n) for n, word in found}


def _circle_with_tail(seed):
    """A noisy unit circle and a dense straight tail leaving it at (1, 0) along x."""
    rng = np.random.default_rng(seed)
    X = noisy_circle(600, rng, noise=0.05)
    tail = np.column_stack([np.linspace(1.0, 3.0, 150), rng.normal(0, 0.03, 150)])
    return np.vstack([X, tail])


def _y_tree():
    """A Y (three unit arms from the origin at 90, 210, 330 degrees), and each row's radius."""
    rng = np.random.default_rng(1)
    arm = rng.integers(0, 3, 900)
    r = rng.uniform(0, 1, 900)
    ang = np.deg2rad(np.array([90.0, 210.0, 330.0]))[arm]
    X = np.column_stack([r * np.cos(ang), r * np.sin(ang)]) + rng.normal(0, 0.03, (900, 2))
    return X, r


def _graph(X, lens, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)  # a few rows in no node
        return build_graph(lens, Workspace(X), **kw)


@pytest.fixture(scope="module")
def ring():
    X = _circle_with_tail(8101)
    return _graph(X, X[:, 0], scale="raw")


@pytest.fixture(scope="module")
def noise():
    # a 5-d Gaussian blob under its first coordinate, finely covered: clusters that split and
    # rejoin make short loops and spurs, none significant
    rng = np.random.default_rng(8104)
    Y = rng.normal(size=(1500, 5))
    return _graph(Y, Y[:, 0], intervals=20, min_size=5, scale="rank")


def test_summary_first_line_is_the_significant_structure(ring, noise):
    for g in (ring, noise):
        s = g.summary()
        lines = s.text().splitlines()
        assert lines[0].startswith("significant: ")
        assert _counts(lines[0]) == s.significant_counts()
        # the raw counts follow, named as raw, and they are the graph's: networkx's cycle basis
        # has E - V + C cycles, and its degrees give the branch points
        G = nx.Graph()
        G.add_nodes_from(range(g.n_nodes))
        G.add_edges_from(g.edge_index.tolist())
        assert lines[1].startswith("  raw cycle and degree counts")
        assert f"loops {len(nx.cycle_basis(G))} (b1" in lines[1]
        assert f"branch points {sum(d >= 3 for _, d in G.degree())} (degree" in lines[1]
    # the noise lens: its raw cycles are many, its significant loops none
    s = noise.summary()
    assert s.loops >= 5 and len(s.branch_points) >= 5 and s.significant_counts()["loops"] == 0
    assert s.text().splitlines()[0].startswith("significant: 1 component, 0 loops")


def test_every_small_feature_prints_the_threshold_it_missed(noise):
    s = noise.summary()
    small = s.small_features()
    assert small
    (lens, bar), = s.thresholds.items()
    for f in small:
        assert s.needed(f) == bar and f.significance <= bar  # one lens: its threshold
    text = s.text(max_features=400)
    lines = [ln for ln in text.splitlines() if "significance" in ln]
    small_lines = [ln for ln in lines if "needed" in ln or "needs more than" in ln]
    assert len(small_lines) == min(len(small), 100)
    assert all(f"< {bar:.2f} needed" in ln or f"{bar:.3f}" in ln for ln in small_lines)


def test_drawing_title_states_the_summary_counts(ring, noise):
    for g in (ring, noise):
        s = g.summary()
        fig = draw_graph(g)
        title = fig.axes[0].get_title(loc="left")
        name, line = title.split("\n")
        assert line.startswith("significant: ")
        # the picture and the text beside it never disagree
        assert _counts(line) == s.significant_counts() == _counts(s.text().splitlines()[0])


def _rings(ax):
    """Nodes ringed (open markers) in a drawing."""
    from matplotlib.collections import PathCollection

    return sum(len(c.get_offsets()) for c in ax.collections
               if isinstance(c, PathCollection) and len(c.get_facecolors()) == 0)


def test_only_significant_features_are_marked(ring, noise):
    s = ring.summary()
    sig = s.significant_features()
    assert s.significant_counts()["loops"] == 1  # the circle
    ax = draw_graph(ring).axes[0]
    tails = {f.nodes[0] for f in sig if f.kind in ("flare", "limb")}  # tips ringed
    assert _rings(ax) == len(tails) + sum(f.kind == "branch" for f in sig)
    labels = {t.get_text() for t in ax.texts}
    marked = {lab for lab, f in s.labelled() if f.significant}
    assert marked <= labels and "loop:1" in labels
    small = {lab for lab, f in s.labelled() if f.significant is False}
    assert not small & labels
    assert ax.get_legend() is not None
    # a graph of noise: nothing marked, no legend, though it has small loops and branch points
    ax = draw_graph(noise).axes[0]
    assert noise.summary().small_features("loop") and noise.summary().branch_points
    assert _rings(ax) == 0 and ax.get_legend() is None
    assert not {t.get_text() for t in ax.texts} & {lab for lab, _ in noise.summary().labelled()}


@pytest.mark.filterwarnings("ignore::lenswork.LensworkWarning")  # a few rows in no node
def test_compare_lists_significant_differences_and_counts_small_ones_apart():
    # a noisy circle in 5-d: under x one loop; under a noise coordinate, a tangle of small
    # loops and spurs
    rng = np.random.default_rng(8103)
    X = noisy_circle(900, rng, noise=0.05)
    X = np.column_stack([X, rng.normal(0, 0.3, (900, 3))])
    ws = Workspace(X)
    cmp = compare_views({"x": X[:, 0], "noise": X[:, 2]}, ws, intervals=20, min_size=5)
    p = cmp.pair("x", "noise")
    sx, sn = cmp.summaries
    assert sx.significant_counts()["loops"] == 1 and sn.significant_counts()["loops"] == 0
    assert sn.small_features()  # the noise view's many small features ...
    # ... are not listed as differences: only significant features and components are
    assert all(f["kind"] == "component" or f["significance"] > 0 for f in p["only_b"])
    listed = {lab for lab, f in sn.labelled() if f.significant is not False}
    assert {f["label"] for f in p["only_b"]} <= listed
    assert [f["label"] for f in p["only_a"]] == ["loop:1"]
    assert 0 < p["small_only_b"] <= len(sn.small_features())
    text = cmp.format_text()
    assert f"{p['small_only_b']} in noise" in text and "significant only in x: loop:1" in text
    # the headline agreement is the co-membership one, in the text and on the figure
    lines = text.splitlines()
    assert lines[2].startswith(f"x vs noise: co-membership ARI {p['co_ari']:.3f}")
    from lenswork.plot._compare import comparison_figure

    title = comparison_figure(cmp).get_suptitle()
    assert title.startswith(f"x vs noise:  co-membership ARI {p['co_ari']:.2f}")
    assert "component partition" not in title


def test_graph_files_carry_the_same_split_with_the_threshold(ring, tmp_path):
    s = ring.summary()
    doc = json.loads(write_graph_json(ring, tmp_path / "g.json").read_text())["summary"]
    root = ET.parse(write_graphml(ring, tmp_path / "g.graphml")).getroot()
    ns = {"g": "http://graphml.graphdrawing.org/xmlns"}
    key = next(k.get("id") for k in root.findall("g:key", ns)
               if k.get("attr.name") == "summary" and k.get("for") == "graph")
    graphml = json.loads(root.find(f"g:graph/g:data[@key='{key}']", ns).text)
    assert graphml == doc  # GraphML and JSON carry one record
    assert doc["significant_counts"] == s.significant_counts()
    assert doc["headline"] == s.headline()
    (lens, bar), = doc["thresholds"].items()
    assert lens == ring.lens_columns[0]
    assert len(doc["significant_features"]) == len(s.significant_features())
    assert len(doc["small_features"]) == len(s.small_features())
    for f in doc["significant_features"]:
        assert f["significance"] > f["threshold"] == bar
    for f in doc["small_features"]:
        assert f["significance"] <= f["threshold"] == bar
    labels = {lab for lab, _ in s.labelled()}
    assert {f["label"] for f in doc["significant_features"] + doc["small_features"]} <= labels


def test_tails_are_drawn_along_their_edges():
    # a Y with its stem up under the height (its Reeb graph is the Y): both feet are significant
    # limbs and flares (the younger foot by the elder rule, the elder one as the trunk of the
    # minimum), and the fork (Carrière and Oudot 2018)
    X, _ = _y_tree()
    g = _graph(X, X[:, 1], scale="raw", intervals=20)
    s = g.summary()
    tails = [f for f in s.significant_features() if f.kind in ("flare", "limb")]
    assert {f.kind for f in tails} == {"flare", "limb"}
    ax = draw_graph(g).axes[0]
    assert _rings(ax) == len({f.nodes[0] for f in tails}) + len(s.significant_features("branch"))
    # the tails' edges are drawn over in the second accent: a flare's chain to its fork, a
    # limb's shortest path from tip to join (networkx as reference)
    G = nx.Graph(g.edge_index.tolist())
    want = 0
    for f in tails:
        if f.kind == "flare":
            want += len(f.nodes)  # chain edges plus the edge to the branch point
        else:
            want += nx.shortest_path_length(G, f.nodes[0], f.attached_to)
    from matplotlib.collections import LineCollection
    from matplotlib.colors import to_hex

    from lenswork.plot._style import ACCENT_2

    drawn = [c for c in ax.collections if isinstance(c, LineCollection)
             and to_hex(c.get_colors()[0]) == ACCENT_2]
    assert len(drawn) == 1 and len(drawn[0].get_segments()) == want


def test_contrast_takes_a_limb_from_its_tip_to_where_it_joins():
    # the Y of the test above, with the distance from the fork as a data column: a limb (one
    # foot) is the rows of its region (the nodes past the level where it joins), set against
    # the node where it joins, and that distance grows along it (Spearman's rho, scipy)
    from scipy import stats

    from lenswork import PointCloud, contrast_columns

    X, r = _y_tree()
    cloud = PointCloud.from_array(np.column_stack([X, r]), feature_names=["x", "y", "r"])
    g = _graph(X, X[:, 1], scale="raw", intervals=20)
    s = g.summary()
    label, limb = [(lab, f) for lab, f in s.labelled() if f.kind == "limb" and f.significant][0]
    res = contrast_columns(g, cloud, label, lenses=X[:, 1])
    G = nx.Graph(g.edge_index.tolist())
    region, join = list(limb.nodes), limb.attached_to
    assert nx.has_path(G.subgraph(region + [join]), region[0], join)  # the tip reaches the join
    assert res.features[0]["nodes"] == region and res.features[0]["attached_to"] == join
    rows = np.unique(np.concatenate([g.members(v) for v in region]))
    assert res.features[0]["n_rows"] == rows.size
    row = {x.column: x for x in res.rows}["r"]
    assert row.along == "spearman" and row.along_r > 0.8
    centre = X[g.members(join), 1].mean()
    ref = stats.spearmanr(np.abs(X[rows, 1] - centre) / X[:, 1].std(), r[rows]).statistic
    np.testing.assert_allclose(row.along_r, ref, rtol=1e-10)
