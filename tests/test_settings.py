"""Tests of GraphSettings, the CLI options generated from it, and strict JSON in every writer."""

import json
import math
import xml.etree.ElementTree as ET
from dataclasses import FrozenInstanceError, fields

import numpy as np
import pytest
from _shapes import noisy_circle
from _strict_json import strict_loads
from click.testing import CliRunner

from lenswork import (
    BallCover,
    GraphSettings,
    IntervalCover,
    LensColumn,
    ParameterError,
    Workspace,
    bootstrap_graph,
    build_graph,
    compare_views,
    stability_map,
)
from lenswork.cli import cli
from lenswork.graph import grid_settings, write_graph_json, write_graphml


# --------------------------------------------------------------------------- the object
def test_defaults_are_those_of_build_graph():
    s = GraphSettings()
    assert (s.cover, s.intervals, s.overlap, s.scale, s.clusterer, s.cutoff, s.min_size, s.k,
            s.metric, s.fragments, s.gap_bins, s.random_state) == (
        "interval", "auto", 0.3, "auto", "auto", "auto", "auto", 15, "euclidean", "attach", 10,
        None)


@pytest.mark.parametrize(
    ("changes", "message"),
    [
        ({"intervals": 0}, "'intervals' parameter of Cover must be an int in [1, inf)"),
        ({"overlap": 1.0}, "'overlap' parameter of Cover must be a float in [0.0, 1.0)"),
        ({"cover": "boxes"}, "'cover' parameter of GraphSettings must be a str among"),
        ({"cutoff": "far"}, "'cutoff' parameter of build_graph must be a float in [0.0, inf)"),
        ({"k": 0}, "'k' parameter of build_graph must be an int in [1, inf)"),
        ({"metric": "hamming"}, "'metric' parameter of build_graph must be a str among"),
        ({"fragments": "drop"}, "'fragments' parameter of build_graph must be a str among"),
        ({"gap_bins": 1}, "'gap_bins' parameter of build_graph must be an int in [2, 10000]"),
        ({"radius": 0.0}, "'radius' parameter of BallCover must be a float in (0.0, 1.0]"),
        ({"cover": "ball", "overlap": (0.2, 0.3)}, "'overlap' parameter of BallCover"),
    ],
)
def test_bad_settings_raise_once_with_the_house_message(changes, message):
    with pytest.raises(ParameterError, match=message.replace("(", r"\(").replace(")", r"\)")
                       .replace("[", r"\[").replace("]", r"\]")):
        GraphSettings(**changes)


def test_text_values_are_parsed_as_the_cli_gives_them():
    s = GraphSettings(intervals="5,3", overlap="0.25", k="12", cutoff=" Fence ", cover="BALL")
    assert s.intervals == (5, 3) and s.overlap == 0.25 and s.k == 12
    assert s.cutoff == "fence" and s.cover == "ball"


def test_frozen_replace_and_unknown_names():
    s = GraphSettings()
    with pytest.raises(FrozenInstanceError):
        s.k = 3
    sweep = [s.replace(intervals=n) for n in (6, 10, 14)]
    assert [x.intervals for x in sweep] == [6, 10, 14] and s.intervals == "auto"
    with pytest.raises(ParameterError, match="'k' parameter of build_graph"):
        s.replace(k=-1)  # replace validates again
    with pytest.raises(ParameterError, match="has no setting 'colour'"):
        s.replace(colour="red")


@pytest.mark.parametrize(
    "settings",
    [
        GraphSettings(),
        GraphSettings(intervals=(5, 3), overlap=(0.2, 0.4), cutoff=0.7, random_state=3),
        GraphSettings(cover="ball", radius=0.2, centres=30, scale="raw"),
        GraphSettings(cover=BallCover(radius=0.2)),
        GraphSettings(cover=IntervalCover(intervals=6)),
    ],
)
def test_dict_round_trip_through_strict_json(settings):
    text = json.dumps(settings.to_dict(), allow_nan=False)
    assert GraphSettings.from_dict(strict_loads(text)) == settings


def test_from_dict_errors():
    with pytest.raises(ParameterError, match="no setting 'colour'"):
        GraphSettings.from_dict({"colour": 1})
    with pytest.raises(ParameterError, match="Unknown cover kind 'boxes'"):
        GraphSettings.from_dict({"cover": {"kind": "boxes"}})
    with pytest.raises(ParameterError, match="cannot rebuild"):
        GraphSettings.from_dict({"clusterer": {"estimator": "DBSCAN", "params": {}}})


def test_resolve_checks_per_lens_values():
    s = GraphSettings(intervals=(5, 3), min_size=4, clusterer="graph", scale="rank")
    assert s.resolve(100, 2) is s  # nothing "auto" is left: unchanged
    with pytest.raises(ParameterError, match="has 2 values for 3 lens column"):
        s.resolve(100, 3)


def test_grid_settings_for_either_cover():
    # common practice: N intervals on the rank scale are about 1 / N wide
    assert grid_settings(GraphSettings(), 6, 0.2) == GraphSettings(intervals=6, overlap=0.2)
    ball = grid_settings(GraphSettings(cover="ball", centres=9), 4, 0.1)
    assert (ball.radius, ball.overlap, ball.centres) == (0.25, 0.1, None)


def test_build_graph_with_settings_equals_keywords():
    rng = np.random.default_rng(9201)
    X = noisy_circle(500, rng)
    ws = Workspace(X)
    a = build_graph(X[:, 0], ws, intervals=8, overlap=0.35, cutoff="fence")
    b = build_graph(X[:, 0], ws, GraphSettings(intervals=8, overlap=0.35, cutoff="fence"))
    c = build_graph(X[:, 0], ws, GraphSettings(intervals=8), overlap=0.35, cutoff="fence")
    assert a == b == c
    assert a.provenance["graph_settings"] == GraphSettings(
        intervals=8, overlap=0.35, cutoff="fence").resolve(ws.n, 1).to_dict()


# --------------------------------------------------------------------------- the CLI
#: Every command that builds a graph (cluster-graph is graph --scheduler under another name).
GRAPH_COMMANDS = ("graph", "contrast", "stability", "bootstrap", "compare", "cluster-graph")


def _graph_params(name):
    command = cli.commands[name]
    flags = {f.metadata["cli"]["flag"] for f in fields(GraphSettings) if "cli" in f.metadata}
    flags |= {"--neighbors", "--min-neighbors", "--lens", "--lens-file", "--use"}
    out = {}
    for p in command.params:
        flag = next((o for o in p.opts if o in flags), None)
        if flag is not None:
            choices = tuple(p.type.choices) if hasattr(p.type, "choices") else None
            out[flag] = (p.default, choices, p.help)
    return out


def test_every_graph_command_shares_one_option_set():
    every = _graph_params("graph")
    expected = {f.metadata["cli"]["flag"] for f in fields(GraphSettings) if "cli" in f.metadata}
    lens_flags = {"--lens", "--lens-file", "--use"}
    assert set(every) == expected | {"--neighbors", "--min-neighbors"} | lens_flags
    for name in GRAPH_COMMANDS[1:]:
        got = _graph_params(name)
        # the stability map lays its own grid (--interval-counts, --overlaps), not one cover;
        # compare takes one view per --use (its help says so)
        mine = {k: v for k, v in every.items()
                if not (name == "stability" and k in ("--intervals", "--overlap"))
                and not (name == "compare" and k in ("--lens", "--use"))}
        assert set(mine) <= set(got), (name, set(mine) - set(got))
        got = {k: v for k, v in got.items() if k in mine}
        assert got == mine, name
        assert lens_flags <= set(_graph_params(name)), name
    assert "--intervals" not in _graph_params("stability")
    # defaults come from the dataclass (the one place that defines them)
    by_flag = {f.metadata["cli"]["flag"]: f.default for f in fields(GraphSettings)
               if "cli" in f.metadata}
    for flag, (default, _, _) in every.items():
        if flag in by_flag:
            assert default == (str(by_flag[flag]) if flag in ("--intervals", "--overlap")
                               else by_flag[flag])


@pytest.fixture
def circle_csv(tmp_path):
    rng = np.random.default_rng(9202)
    X = noisy_circle(400, rng)
    path = tmp_path / "circle.csv"
    lines = ["id,x,y"] + [f"p{i},{a:.6f},{b:.6f}" for i, (a, b) in enumerate(X)]
    path.write_text("\n".join(lines) + "\n")
    return path


def test_every_setting_reaches_the_graph_from_the_cli(circle_csv, tmp_path):
    out = tmp_path / "g"
    res = CliRunner().invoke(cli, [
        "-q", "graph", str(circle_csv), "--id-column", "id", "--lens", "column:name=x",
        "--lens", "column:name=y", "--cover", "ball", "--radius", "0.2", "--cover-scale", "raw",
        "--cutoff", "fence", "--metric", "manhattan", "--gap-bins", "12", "--fragments",
        "report", "--min-size", "5", "-k", "12", "--no-figure", "-o", str(out)])
    assert res.exit_code == 0, res.output
    doc = strict_loads((out / "graph.json").read_text())
    s = doc["provenance"]["graph_settings"]
    assert (s["cover"], s["radius"], s["scale"], s["cutoff"], s["metric"], s["gap_bins"],
            s["fragments"], s["min_size"], s["k"]) == (
        "ball", 0.2, "raw", "fence", "manhattan", 12, "report", 5, 12)
    assert doc["params"]["cover"]["kind"] == "ball"


def test_cutoff_fence_is_accepted_by_every_graph_command(circle_csv, tmp_path):
    common = [str(circle_csv), "--id-column", "id", "--cutoff", "fence"]
    runs = {
        "stability": ["--lens", "column:name=x", "--interval-counts", "8", "--overlaps", "0.3",
                      "--no-figure"],
        "bootstrap": ["--lens", "column:name=x", "--resamples", "2", "--no-figure"],
        "compare": ["--lens", "column:name=x", "--lens", "column:name=y", "--no-figure"],
    }
    for name, extra in runs.items():
        res = CliRunner().invoke(cli, ["-q", name, *common, *extra, "-o", str(tmp_path / name)])
        assert res.exit_code == 0, (name, res.output)


# --------------------------------------------------------------------------- strict JSON
def _nan_graph():
    """A graph whose lens parameters hold NaN and infinity (they reach the provenance)."""
    rng = np.random.default_rng(9203)
    X = noisy_circle(300, rng)
    lens = LensColumn("x", X[:, 0], params={"bandwidth": math.nan, "scale": math.inf})
    return build_graph(lens, Workspace(X), intervals=6)


def test_graph_json_and_graphml_are_strict(tmp_path):
    g = _nan_graph()
    doc = strict_loads(write_graph_json(g, tmp_path / "g.json").read_text())
    assert doc["provenance"]["lenses"][0]["params"]["bandwidth"] is None
    root = ET.parse(write_graphml(g, tmp_path / "g.graphml")).getroot()
    texts = [d.text for d in root.iter("{http://graphml.graphdrawing.org/xmlns}data")
             if d.text and d.text.startswith(("{", "["))]
    assert len(texts) >= 3  # lens_columns, params, provenance
    for text in texts:
        strict_loads(text)


def test_result_writers_are_strict(tmp_path):
    rng = np.random.default_rng(9204)
    X = noisy_circle(300, rng)
    ws = Workspace(X)
    lens = LensColumn("x", X[:, 0], params={"width": math.nan})
    _, sidecar = stability_map(lens, ws, interval_counts=(6, 8), overlaps=(0.3,)).write(
        tmp_path / "s.csv")
    meta = strict_loads(sidecar.read_text())
    assert meta["settings"] == GraphSettings().to_dict()
    out = bootstrap_graph(lens, ws, resamples=2).write(tmp_path / "b", figures=False)
    meta = strict_loads(out["bootstrap.json"].read_text())
    assert meta["settings"] == GraphSettings().resolve(ws.n, 1).to_dict()  # fixed on all rows
    out = compare_views({"x": X[:, 0], "y": X[:, 1]}, ws, intervals=8).write(
        tmp_path / "c", figures=False)
    meta = strict_loads(out["comparison.json"].read_text())
    assert meta["views"][0]["graph_settings"] == GraphSettings(intervals=8).resolve(
        ws.n, 1).to_dict()


# --------------------------------------------------------------------------- "auto" defaults
def _closed_form(n, m, g=0.3, beta=0.1):
    """Carrière, Michel and Oudot (JMLR 2018) on the rank scale, written out by hand.

    A delta-ball holds q = n / s = (ln n) ** (1 + beta) rows (s = n / (ln n) ** (1 + beta) is
    their subsample size); intervals of the resolution r = omega(delta) / g then hold q / g
    rows, and a product element of m lenses L ** m * n rows, with L = 1 / (N - (N - 1) g) the
    length of N intervals of overlap g on [0, 1].
    """
    q = math.log(n) ** (1 + beta)
    best = 1
    for N in range(1, 11):  # former fixed default 10 as the cap
        length = 1.0 / (N - (N - 1) * g)
        if n * length ** m >= q / g - 1e-9:
            best = N
    return best, min(10, max(3, round(q)))


@pytest.mark.parametrize("n", [150, 178, 300, 569, 1000, 5000])
@pytest.mark.parametrize("m", [1, 2, 3])
def test_auto_rule_is_the_closed_form(n, m):
    intervals, min_size = _closed_form(n, m)
    r = GraphSettings().resolve(n, m)
    assert r.intervals == intervals and r.min_size == min_size and r.clusterer == "graph"
    assert r.auto_fields() == ()
    assert GraphSettings().auto_fields() == ("intervals", "min_size", "clusterer", "scale")
    # every element of the resolved product cover keeps q / g rows on average
    length = 1.0 / (intervals - (intervals - 1) * 0.3)
    q = math.log(n) ** 1.1
    assert n * length ** m >= q / 0.3 or intervals == 1


def test_auto_rule_follows_the_overlap_and_respects_given_values():
    # a larger gain g asks for fewer rows per element (q / g): never fewer intervals
    assert GraphSettings(overlap=0.45).resolve(300, 2).intervals >= \
        GraphSettings(overlap=0.3).resolve(300, 2).intervals
    r = GraphSettings(overlap=(0.3, 0.4)).resolve(300, 2)
    assert isinstance(r.intervals, tuple) and len(r.intervals) == 2
    r = GraphSettings(intervals=7, min_size=12).resolve(150, 2)
    assert (r.intervals, r.min_size) == (7, 12)
    assert GraphSettings(intervals="AUTO", min_size="auto").intervals == "auto"
    with pytest.raises(ParameterError, match="'min_size' parameter of build_graph"):
        GraphSettings(min_size="most")


def _bundled(name):
    from sklearn.datasets import load_iris, load_wine, make_circles
    from sklearn.preprocessing import StandardScaler

    if name == "iris":
        return load_iris().data
    if name == "wine":
        return StandardScaler().fit_transform(load_wine().data)
    return make_circles(300, noise=0.05, factor=0.5, random_state=0)[0]


@pytest.mark.parametrize("name", ["iris", "wine", "circles"])
@pytest.mark.parametrize("lenses", ["pca", "laplacian", ["eccentricity", "density"]])
def test_default_graphs_of_small_bundled_tables_keep_their_rows(name, lenses):
    # scikit-learn's bundled iris (150 rows) and wine (178), make_circles at 300: with the
    # former fixed 10 x 10 cover and min_size 10, iris under pca_1 x pca_2 kept 10 of 150 rows
    ws = Workspace(_bundled(name), random_state=0)
    g = build_graph(lenses, ws)
    assert g.unassigned.size <= 0.05 * ws.n
    expected = GraphSettings().resolve(ws.n, 2)
    assert g.provenance["graph_settings"] == expected.to_dict()
    assert g.provenance["auto_settings"] == {"intervals": expected.intervals,
                                             "min_size": expected.min_size,
                                             "clusterer": "graph", "scale": "balanced"}
    assert "(auto)" in g.summary().text()
    assert "scale balanced (auto)" in g.summary().text()
    assert g.summary().to_dict()["settings"]["auto"] == ["clusterer", "intervals", "min_size",
                                                         "scale"]


def test_resolved_settings_reach_the_graph_files(tmp_path):
    ws = Workspace(_bundled("iris"), random_state=0)
    g = build_graph("pca", ws)
    doc = strict_loads(write_graph_json(g, tmp_path / "g.json").read_text())
    assert doc["provenance"]["auto_settings"]["intervals"] == 3
    root = ET.parse(write_graphml(g, tmp_path / "g.graphml")).getroot()
    texts = [d.text for d in root.iter("{http://graphml.graphdrawing.org/xmlns}data")
             if d.text and '"auto_settings"' in d.text]
    assert strict_loads(texts[0])["auto_settings"]["min_size"] == 6
