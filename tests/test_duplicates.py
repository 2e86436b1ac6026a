"""Ties and exact duplicate rows: the collapsed neighbour graph, tie-averaged ranks, concentrated
lenses (workspace.DuplicateRows / Workspace.neighbors, criteria.support_factor, the screen)."""

import warnings

import numpy as np
import pytest
import scipy.stats
from numpy.testing import assert_allclose, assert_array_equal
from scipy.sparse.csgraph import connected_components
from sklearn.neighbors import NearestNeighbors

import lenswork as lw
from lenswork.criteria import HANDFUL, robust_spread, support_factor
from lenswork.workspace import DuplicateRows


def _counts_table(rng, n=900):
    """Counts that are mostly zero, as survey or e-mail tables are: many exact duplicates."""
    X = np.column_stack([rng.poisson(0.3, n), rng.poisson(0.2, n), rng.poisson(1.5, n),
                         rng.integers(0, 3, n)]).astype(float)
    return X


def test_duplicate_rows_match_numpy_unique():
    rng = np.random.default_rng(8765678)
    X = _counts_table(rng)
    X[0, 0] = -0.0  # equal to 0.0 as a number: the same point
    dup = DuplicateRows.of(X)
    # Reference: numpy.unique over rows (axis=0), which compares values, not bytes.
    u, first, inverse, counts = np.unique(X, axis=0, return_index=True, return_inverse=True,
                                          return_counts=True)
    assert dup.n_points == u.shape[0]
    assert dup.n_duplicate_rows == X.shape[0] - u.shape[0] > 0
    assert_array_equal(np.sort(dup.counts), np.sort(counts))
    assert_array_equal(X[dup.first][dup.inverse], X)  # every row is its point
    assert_array_equal(np.sort(dup.first), dup.first)  # points numbered by their first row
    assert_array_equal(np.sort(dup.first), np.sort(first))
    assert dup.describe().startswith(f"{dup.n_duplicate_rows} duplicate rows collapsed into "
                                     f"{dup.collapsed_points} points")


def _brute_points(X, k):
    """Brute-force k nearest other distinct points (scikit-learn on the unique rows)."""
    dup = DuplicateRows.of(X)
    P = X[dup.first]
    dist, idx = NearestNeighbors(n_neighbors=k + 1, algorithm="brute").fit(P).kneighbors(P)
    return dup, dist[:, 1:], idx[:, 1:]


@pytest.mark.parametrize("k", [5, 15])
def test_distinct_graph_against_brute_force_on_unique_rows(k):
    rng = np.random.default_rng(4242)
    X = _counts_table(rng)
    ws = lw.Workspace(X)
    g = ws.neighbors(k)
    dup, bd, _ = _brute_points(X, k)
    ring = dup.counts[dup.inverse] > 1
    # A row with copies lists one copy first (distance 0, the same point), then k - 1 points,
    # each stood for by its first row.
    assert np.all(dup.inverse[g.indices[ring, 0]] == dup.inverse[ring])
    assert np.all(g.indices[ring, 0] != np.flatnonzero(ring))
    assert np.all(g.distances[ring, 0] == 0)
    # The other entries are other points, at the brute-force distances of the point's
    # nearest other points (ties may pick different points at the same distance).
    for r, skip in ((ring, 1), (~ring, 0)):
        pts = dup.inverse[g.indices[r, skip:]]
        assert np.all(pts != dup.inverse[r][:, None])
        assert np.all(np.isin(g.indices[r, skip:], dup.first))
        assert_allclose(g.distances[r, skip:], bd[dup.inverse[r], : k - skip], rtol=0,
                        atol=1e-12)
        # each row's listed points are distinct (no point twice)
        srt = np.sort(pts, axis=1)
        assert np.all(srt[:, 1:] != srt[:, :-1])


@pytest.mark.parametrize("k", [4, 15])
def test_mass_graph_against_brute_force_with_multiplicities(k):
    rng = np.random.default_rng(99)
    X = _counts_table(rng)
    ws = lw.Workspace(X)
    g = ws.neighbors(k, mass=True)
    dup, bd, bi = _brute_points(X, 40)
    # Reference 1: the unique rows' brute-force neighbours, each repeated by its multiplicity,
    # after the row's own other copies at distance 0 (the empirical measure).
    for i in range(0, X.shape[0], 7):
        u = dup.inverse[i]
        expect = np.r_[np.zeros(dup.counts[u] - 1), np.repeat(bd[u], dup.counts[bi[u]])][:k]
        assert_allclose(g.distances[i], expect, rtol=0, atol=1e-12)
    # Reference 2: an exact search over all rows (scikit-learn, self dropped by position).
    d_all, _ = NearestNeighbors(n_neighbors=k + 1, algorithm="brute").fit(X).kneighbors(X)
    assert_allclose(g.distances, d_all[:, 1:], rtol=0, atol=1e-12)
    assert np.all(g.indices != np.arange(X.shape[0])[:, None])  # never the row itself
    assert_allclose(np.linalg.norm(X[g.indices] - X[:, None, :], axis=2), g.distances,
                    rtol=0, atol=1e-12)


def test_collapsed_graph_stays_one_piece_where_copies_make_cliques():
    # 30 points of a line, each repeated 20 times (> k = 15): in the row-level k-NN graph
    # every row's 15 neighbours are its own copies, so it falls into 30 cliques.
    X = np.repeat(np.arange(30.0), 20)[:, None]
    d_all, i_all = NearestNeighbors(n_neighbors=16, algorithm="brute").fit(X).kneighbors(X)
    row_level = lw.NeighborGraph(i_all[:, 1:], d_all[:, 1:], 15, "euclidean", "exact")
    ones = np.ones((600, 15))  # unit weights: csgraph drops stored zeros (distance 0)
    assert connected_components(row_level.to_sparse(ones), directed=False)[0] == 30
    ws = lw.Workspace(X)
    assert ws.pieces(15).count == 1
    assert connected_components(ws.neighbors(15).to_sparse(ones), directed=False)[0] == 1
    # the Laplacian lens gives every copy of a point one value, following the line
    with warnings.catch_warnings():
        warnings.simplefilter("error", lw.LensworkWarning)  # no "not connected" warning
        col = lw.compute_lenses(ws, ["laplacian:components=1"]).columns[0]
    v = col.values.reshape(30, 20)
    assert np.all(v == v[:, :1])
    assert abs(scipy.stats.spearmanr(v[:, 0], np.arange(30)).statistic) > 0.99


def test_pieces_are_reported_with_their_sizes():
    rng = np.random.default_rng(7)
    X = np.r_[rng.normal(size=(300, 2)), rng.normal(size=(40, 2)) + 100.0]
    ws = lw.Workspace(X)
    p = ws.pieces(15)
    assert p.sizes == (300, 40)
    assert np.bincount(p.labels).tolist() == [300, 40]
    with pytest.warns(lw.LensworkWarning, match=r"falls into 2 pieces \(sizes 300, 40\)"):
        result = lw.screen(ws, lenses=["pca"], probe=False)
    assert result.data_notes["graph_pieces"]["sizes"] == [300, 40]


def test_screen_reports_the_collapse():
    rng = np.random.default_rng(31)
    X = _counts_table(rng, 600)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = lw.screen(X, lenses=["pca", "dtm"], probe=False)
    dup = DuplicateRows.of(X)
    text = f"{dup.n_duplicate_rows} duplicate rows collapsed into {dup.collapsed_points} points"
    assert text in result.summary()
    assert result.to_dict()["data_notes"]["duplicates"]["duplicate_rows"] == dup.n_duplicate_rows
    # heavy ties: the share of the most common value per column, against numpy's counts
    tied = result.data_notes["tied_columns"]["columns"]
    for j, name in enumerate(["x0", "x1", "x2", "x3"]):
        share = np.bincount(X[:, j].astype(int)).max() / X.shape[0]
        assert (name in [t["name"] for t in tied]) == (share >= 0.5)
    assert "columns hold one value on half the rows or more" in result.summary()


def test_rank_ties_are_averaged_as_in_scipy():
    rng = np.random.default_rng(5)
    X = _counts_table(rng, 700)  # columns 80 %, 82 %, 22 % zero: heavy ties
    # scipy.stats.rankdata(method="average") and spearmanr are the references (Spearman
    # 1904, ties given the mean of the ranks they span).
    assert_allclose(lw.normalize(X[:, 0], "rank"),
                    (scipy.stats.rankdata(X[:, 0], method="average") - 0.5) / 700, atol=1e-15)
    assert_allclose(lw.spearman_matrix(X), scipy.stats.spearmanr(X).statistic, rtol=0,
                    atol=1e-12)


def test_support_is_the_fewest_rows_carrying_half_the_rank_variation():
    rng = np.random.default_rng(12)
    for v in (rng.normal(size=500), rng.poisson(0.4, size=300).astype(float),
              np.r_[np.zeros(400), 1, 2, 9]):
        # brute force: scipy's average ranks, squared deviations from their median, largest
        # first, the fewest rows reaching half of the sum
        r = scipy.stats.rankdata(v, method="average")
        dev = np.sort((r - np.median(r)) ** 2)[::-1]
        need = int(np.argmax(np.cumsum(dev) >= 0.5 * dev.sum() - 1e-9)) + 1
        assert robust_spread(v).support == need
        # on ranks: any monotone map has the same support
        assert robust_spread(np.exp(v)).support == need
    # two equal groups: every row is as far from the median, half the variation is half the rows
    assert robust_spread(np.r_[np.zeros(100), np.ones(100)]).support == 100


def test_concentrated_lens_is_refused():
    # A smooth lens over a 2-D blob, and a lens concentrated on 4 of 800 points (a bump
    # around one corner point, exactly 0 beyond, as a localised eigenvector): smooth on the
    # graph (it changes only within one neighbourhood), and carried by a handful of rows.
    rng = np.random.default_rng(2024)
    X = rng.normal(size=(800, 2))
    far = np.argsort(-X[:, 0])[:4]
    bump = np.zeros(800)
    bump[far] = np.arange(1.0, 5.0)
    cloud = lw.PointCloud.from_array(X)
    table = lw.LensTable([lw.LensColumn("smooth", X[:, 0] + 0.1 * X[:, 1]),
                          lw.LensColumn("other", X[:, 1]),
                          lw.LensColumn("bump", bump)], cloud)
    assert robust_spread(bump).support <= HANDFUL * 15
    result = lw.screen(table, count=2, probe=False)
    j = result.names.index("bump")
    assert result.scores["smoothness"][j] == 0.0 and result.merit[j] == 0.0
    assert "bump" not in result.selected
    # without the support factor its Laplacian score alone calls it smooth
    assert result.scores["laplacian_score"][j] < 0.5
    assert support_factor(np.array([4, 10, 30]), 15).tolist() == [0.0, 10 / 15, 1.0]


def test_value_support_is_the_fewest_rows_carrying_half_the_squared_deviations():
    # brute force with numpy (common practice: half of sum (v - median)^2, largest first)
    rng = np.random.default_rng(5)
    for v in (rng.normal(size=500), rng.lognormal(sigma=2.0, size=400),
              np.r_[np.zeros(300), 4.0, 5.0]):
        dev = np.sort((v - np.median(v)) ** 2)[::-1]
        need = int(np.argmax(np.cumsum(dev) >= 0.5 * dev.sum() * (1 - 1e-12))) + 1
        assert robust_spread(v).value_support == need


def test_lens_concentrated_on_its_values_is_refused_though_its_ranks_spread():
    # A Laplacian-like vector concentrated on one weakly linked row: every other row sits
    # within 1e-7 of -0.0122 (smoothly, along the first coordinate), one row at 81.9. Its
    # ranks are spread (rank support large) but half its value variation is on one row, so
    # the balanced cover spends half its range there: it must not be chosen.
    rng = np.random.default_rng(7)
    X = rng.normal(size=(600, 2))
    hair = -0.0122 + 1e-7 * np.tanh(X[:, 0])
    far = int(np.argmax(X[:, 1]))
    hair[far] = 81.9
    assert robust_spread(hair).value_support == 1  # <= min(5, ceil(0.01 * 600))
    assert robust_spread(hair).support > HANDFUL * 15
    cloud = lw.PointCloud.from_array(X)
    table = lw.LensTable([lw.LensColumn("smooth", X[:, 0] + 0.1 * X[:, 1]),
                          lw.LensColumn("other", X[:, 1]),
                          lw.LensColumn("hair", hair)], cloud)
    result = lw.screen(table, count=2, probe=False)
    j = result.names.index("hair")
    assert result.scores["smoothness"][j] == 0.0 and result.merit[j] == 0.0
    assert "hair" not in result.selected
