"""Figures a reader can trust: the comparison, stability and bootstrap figures.

Rendered on matplotlib's Agg canvas and read back: text boxes from
``Text.get_window_extent`` (display pixels), node markers from the scatter
offsets through ``Axes.transData``, the correspondence panels from their
image arrays, checked against member sets intersected in plain Python.
"""

import contextlib
import itertools

import numpy as np
import pytest
from _shapes import noisy_circle
from matplotlib.collections import PathCollection
from matplotlib.image import AxesImage

from lenswork import Workspace, compare_views

pytestmark = pytest.mark.filterwarnings("ignore:.*rows are in no node:lenswork.LensworkWarning")


@pytest.fixture(scope="module")
def sheets():
    """Two parallel noisy sheets in 3-d: a view of (x, y) puts both sheets' nodes of one
    cover cell at the same lens means, so a drawing at the lens means stacks them."""
    rng = np.random.default_rng(50321)
    n = 700
    u, v = rng.uniform(0, 1, n), rng.uniform(0, 1, n)
    sheet = rng.integers(0, 2, n) * 3.0
    X = np.column_stack([u, v, sheet + rng.normal(0, 0.02, n)])
    return X, Workspace(X)


def _views(X, V):
    views = {"x": X[:, 0], "x and y": X[:, :2], "x cubed": X[:, 0] ** 7, "y": X[:, 1]}
    return dict(list(views.items())[:V])


@contextlib.contextmanager
def _drawn(fig):
    """The figure, closed when the test is done with it."""
    import matplotlib.pyplot as plt

    try:
        yield fig
    finally:
        plt.close(fig)


def _texts(fig):
    """Every visible, non-empty, upright text of a drawn figure."""
    out = [t for t in fig.texts]
    for ax in fig.axes:
        if not ax.get_visible():
            continue
        out += [ax.title, ax._left_title, ax._right_title] + list(ax.texts)
        if not ax.axison:  # axis("off"): no labels or ticks drawn
            continue
        out += [ax.xaxis.label, ax.yaxis.label]
        # tick labels the axis draws: those inside its view limits
        for labels, lim, k in ((ax.get_xticklabels(), ax.get_xlim(), 0),
                               (ax.get_yticklabels(), ax.get_ylim(), 1)):
            lo, hi = sorted(lim)
            out += [t for t in labels if lo <= t.get_position()[k] <= hi]
    # a slanted label's box is not its outline (slanted neighbours' boxes overlap): left out
    return [t for t in out if t.get_visible() and t.get_text().strip()
            and t.get_rotation() % 90 == 0]


def _render(fig):
    fig.canvas.draw()
    return fig.canvas.get_renderer()


def _overlaps(fig):
    """Pairs of text boxes that overlap by more than one pixel each way."""
    renderer = _render(fig)
    boxes = [(t.get_text(), t.get_window_extent(renderer)) for t in _texts(fig)]
    bad = []
    for (ta, a), (tb, b) in itertools.combinations(boxes, 2):
        dx = min(a.x1, b.x1) - max(a.x0, b.x0)
        dy = min(a.y1, b.y1) - max(a.y0, b.y0)
        if dx > 1 and dy > 1:
            bad.append((ta, tb))
    return bad


def _outside(fig):
    """Texts that run past the figure's edges (cut off in a file written without a tight box)."""
    renderer = _render(fig)
    W, H = fig.canvas.get_width_height()
    out = []
    for t in _texts(fig):
        box = t.get_window_extent(renderer)
        if box.x0 < -1 or box.y0 < -1 or box.x1 > W + 1 or box.y1 > H + 1:
            out.append(t.get_text())
    return out


def _pair_panels(fig):
    return [ax for ax in fig.axes if any(isinstance(im, AxesImage) for im in ax.images)]


def _view_panels(fig):
    return [ax for ax in fig.axes if any(isinstance(c, PathCollection) for c in ax.collections)]


def _shares_by_sets(ga, gb):
    """|rows(i) & rows(j)| / |rows(i)| from the member lists (Python sets, no sparse product)."""
    out = np.zeros((ga.n_nodes, gb.n_nodes))
    rows_b = [set(gb.members(j).tolist()) for j in range(gb.n_nodes)]
    for i in range(ga.n_nodes):
        rows_a = set(ga.members(i).tolist())
        for j in range(gb.n_nodes):
            out[i, j] = len(rows_a & rows_b[j]) / max(len(rows_a), 1)
    return out


@pytest.mark.parametrize("V", [2, 3, 4])
def test_comparison_figure_has_every_pair_and_no_overprinted_text(sheets, V):
    from lenswork.plot import comparison_figure

    X, ws = sheets
    cmp = compare_views(_views(X, V), ws, intervals=8, min_size=5)
    with _drawn(comparison_figure(cmp)) as fig:
        n_pairs = V * (V - 1) // 2
        panels = _pair_panels(fig)
        assert len(panels) == n_pairs
        # each pair panel is headed by its own pair and draws that pair's correspondence
        heads = {}
        for ax in panels:
            head = [t.get_text() for t in ax.texts if "co-membership ARI" in t.get_text()]
            assert len(head) == 1
            heads[head[0].split(":")[0]] = ax
        for a, b in itertools.combinations(range(V), 2):
            key = f"{'ABCD'[a]} vs {'ABCD'[b]}"
            assert key in heads, (key, sorted(heads))
            p = cmp.pair(a, b)
            assert f"co-membership ARI {p['co_ari']:.2f}" in \
                [t.get_text() for t in heads[key].texts if t.get_text().startswith(key)][0]
            shown = heads[key].images[0].get_array()
            np.testing.assert_allclose(shown, _shares_by_sets(cmp.graphs[a], cmp.graphs[b]),
                                       rtol=0, atol=1e-12)
        # the telling agreement leads the figure, as it leads format_text()
        title = fig.get_suptitle()
        if V == 2:
            p = cmp.pairs[0]
            assert title.startswith(f"x vs x and y:  co-membership ARI {p['co_ari']:.2f}")
        else:
            best = max(cmp.pairs, key=lambda p: p["co_ari"])
            assert f"to {best['co_ari']:.2f}" in title and "co-membership ARI from" in title
        assert _overlaps(fig) == [] and _outside(fig) == []


@pytest.mark.parametrize("V", [2, 4])
def test_every_node_of_every_view_shows(sheets, V):
    from lenswork.plot import comparison_figure

    X, ws = sheets
    cmp = compare_views(_views(X, V), ws, intervals=8, min_size=5)
    # the (x, y) view's drawing at the lens means stacks the two sheets' nodes
    means = np.column_stack([cmp.graphs[1].node_values(c) for c in cmp.graphs[1].lens_columns])
    assert np.unique(np.round(means, 1), axis=0).shape[0] < cmp.graphs[1].n_nodes
    with _drawn(comparison_figure(cmp)) as fig:
        _render(fig)
        views = _view_panels(fig)
        assert len(views) == V
        for ax, g, s in zip(views, cmp.graphs, cmp.summaries, strict=True):
            xy = ax.transData.transform(ax.collections[-1].get_offsets())
            assert xy.shape[0] == g.n_nodes
            gap = np.sqrt(((xy[:, None] - xy[None]) ** 2).sum(-1))
            gap[np.diag_indices_from(gap)] = np.inf
            assert gap.min() >= 3.0, (g.lens_columns, gap.min())  # pixels at 100 dpi
            # every marker inside its panel
            box = ax.get_window_extent()
            assert (xy[:, 0] >= box.x0).all() and (xy[:, 0] <= box.x1).all()
            assert (xy[:, 1] >= box.y0).all() and (xy[:, 1] <= box.y1).all()
            # the panel's title leads with the significant counts
            words = " ".join(" ".join(t.get_text().replace("\u00b7", " ").split())
                             for t in ax.texts)
            head = " ".join(s.headline(" ").split())
            assert f"significant: {head}" in words


# --------------------------------------------------------------------------- stability map
@pytest.fixture(scope="module")
def circle_map():
    from lenswork import LensColumn, stability_map

    rng = np.random.default_rng(2718)
    X = noisy_circle(500, rng)
    return stability_map(LensColumn("x", X[:, 0]), Workspace(X), interval_counts=(6, 10),
                         overlaps=(0.2, 0.3))


def test_stability_figure_names_raw_counts_raw(circle_map):
    import dataclasses

    from lenswork.plot import stability_figure

    # a map without per-cell significance (as a map of a ball cover, or an older map)
    raw = {k: v for k, v in circle_map.counts.items() if not k.startswith("significant_")}
    circle_map = dataclasses.replace(circle_map, counts=raw)
    with _drawn(stability_figure(circle_map)) as fig:
        titles = [ax.get_title(loc="left") for ax in fig.axes]
        assert titles == ["components", "raw cycles (b1)", "raw nodes of degree \u2265 3",
                          "raw leaf chains"]
        # the map records no significant count, and the figure says so instead of hiding it
        assert any("records no significance" in t.get_text() for t in fig.texts)
        # each panel shows the map's own counts, cell by cell
        for ax, name in zip(fig.axes, ("components", "loops", "branch_points", "flares"),
                            strict=True):
            np.testing.assert_array_equal(ax.images[0].get_array(), circle_map.counts[name])
        assert _overlaps(fig) == [] and _outside(fig) == []
    with _drawn(stability_figure(circle_map, ["loops"])) as fig:  # one narrow panel
        assert _overlaps(fig) == [] and _outside(fig) == []


def test_stability_figure_leads_with_significant_counts_when_the_map_holds_them(circle_map):
    """A map carrying per-cell significant counts (the structure probe's grid keys) draws
    them first, in the count colours; the raw panels follow in grey."""
    import dataclasses

    from lenswork.plot import stability_figure

    counts = {k: v for k, v in circle_map.counts.items() if not k.startswith("significant_")}
    counts["significant_loops"] = np.ones_like(counts["loops"])
    counts["significant_branches"] = np.zeros_like(counts["loops"])
    smap = dataclasses.replace(circle_map, counts=counts)
    with _drawn(stability_figure(smap)) as fig:
        titles = [ax.get_title(loc="left") for ax in fig.axes]
        assert titles[:3] == ["components", "significant loops", "significant branches"]
        assert all(t.startswith("raw ") for t in titles[3:]) and len(titles) == 6
        top = [ax.images[0].cmap(1.0)[:3] for ax in fig.axes]
        grey = [abs(r - g) < 0.1 and abs(g - b) < 0.1 for r, g, b in top]
        assert grey == [False, False, False, True, True, True]
        assert _overlaps(fig) == [] and _outside(fig) == []


def test_stability_figure_draws_the_maps_own_significant_counts_first(circle_map):
    """stability_map records the summary's significant counts per cell: the figure leads
    with them, each panel the map's own counts, the raw panels after them."""
    from lenswork.plot import stability_figure

    with _drawn(stability_figure(circle_map)) as fig:
        titles = [ax.get_title(loc="left") for ax in fig.axes]
        assert titles == ["components", "significant loops", "significant flares",
                          "significant limbs", "significant branch points", "raw cycles (b1)",
                          "raw nodes of degree \u2265 3", "raw leaf chains"]
        names = ("components", "significant_loops", "significant_flares", "significant_limbs",
                 "significant_branch_points", "loops", "branch_points", "flares")
        for ax, name in zip(fig.axes, names, strict=True):
            np.testing.assert_array_equal(ax.images[0].get_array(), circle_map.counts[name])
        assert not any("records no significance" in t.get_text() for t in fig.texts)
        assert _overlaps(fig) == [] and _outside(fig) == []


# --------------------------------------------------------------------------- bootstrap
def test_bootstrap_figure_leads_with_the_significant_counts():
    from collections import Counter

    from lenswork import bootstrap_graph, build_graph
    from lenswork.plot import bootstrap_figure
    from lenswork.plot._style import ACCENT

    rng = np.random.default_rng(3141)
    X = noisy_circle(400, rng, noise=0.04)
    ws = Workspace(X)
    res = bootstrap_graph(X[:, 0], ws, resamples=6, random_state=2)
    with _drawn(bootstrap_figure(res)) as fig:
        # the title states the full-data graph's significant counts, as its summary does
        head = build_graph(X[:, 0], ws).summary().headline(" \u00b7 ")
        assert head in " ".join(fig.get_suptitle().split("\n")).replace("  ", " ")
        panels = {ax.get_title(loc="left"): ax for ax in fig.axes if ax.get_visible()}
        assert list(panels)[:2] == ["components", "significant loops"]
        assert {"raw cycles (b1)", "raw leaf chains"} <= set(panels)
        # significant loops: bar heights are the shares of resamples (Counter as reference)
        ax = panels["significant loops"]
        share = {c: k / res.resamples for c, k in Counter(res.significant_counts["loops"]).items()}
        bars = {int(round(p.get_x() + p.get_width() / 2)): p for p in ax.patches}
        for count, p in bars.items():
            assert p.get_height() == pytest.approx(share.get(count, 0.0), abs=1e-12)
        from matplotlib.colors import to_hex

        amber = [c for c, p in bars.items() if to_hex(p.get_facecolor()) == ACCENT.lower()]
        assert amber == [sum(f["kind"] == "loop" for f in res.full_features)]
        assert _overlaps(fig) == [] and _outside(fig) == []


# --------------------------------------------------------------------------- screen sheet
def test_screen_sheet_cards_state_the_significant_counts():
    import lenswork.plot._sheet as sheet
    from lenswork import screen

    rng = np.random.default_rng(1618)
    X = noisy_circle(500, rng, noise=0.04)
    X = np.column_stack([X, rng.normal(0, 0.05, (500, 1))])
    result = screen(Workspace(X), count=2)
    with _drawn(sheet._draw(result)) as fig:
        texts = [t.get_text() for ax in fig.axes for t in ax.texts]
        for r in result.rows():
            loops, branches = r["significant_loops"], r["significant_branches"]
            want = (f"significant: {loops} loop{'' if loops == 1 else 's'}, {branches} "
                    f"branch{'' if branches == 1 else 'es'}")
            assert want in texts, (r["column"], want)
        # the card titles (rank and name) never overprint the lines under them
        assert _overlaps(fig) == []


# --------------------------------------------------------------------------- graph drawing
def test_feature_labels_stand_beside_their_nodes_not_on_them():
    from lenswork import build_graph
    from lenswork.plot import draw_graph

    rng = np.random.default_rng(4242)
    X = noisy_circle(800, rng, noise=0.03)
    g = build_graph(X[:, 0], Workspace(X), intervals=12)
    s = g.summary()
    assert s.significant_counts()["loops"] == 1
    # large markers: a label set at a fixed offset from the centre would land on them
    with _drawn(draw_graph(g, node_scale=2.0)) as fig:
        renderer = _render(fig)
        ax = fig.axes[0]
        pos = g.layout()
        centre = ax.transData.transform(pos)
        # draw_graph's marker areas (points^2): node_scale * (16 + 340 * size / largest)
        area = 2.0 * (16.0 + 340.0 * g.node_sizes / g.node_sizes.max())
        radius = 0.5 * np.sqrt(area) * fig.dpi / 72.0  # pixels
        names = {lab for lab, _ in s.labelled()}
        labels = [t for t in ax.texts if t.get_text() in names]
        assert labels
        for t in labels:
            at = int(np.argmin(np.hypot(*(pos - np.asarray(t.xy)).T)))  # the node it labels
            box = t.get_window_extent(renderer)
            # the point of the label's box nearest the node's centre lies outside the marker
            near = np.clip(centre[at], [box.x0, box.y0], [box.x1, box.y1])
            assert np.hypot(*(near - centre[at])) >= radius[at] - 0.5, t.get_text()
