"""Tests of the cover: interval arithmetic against a brute-force scan of every interval."""

import itertools
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.stats import rankdata

from lenswork import InputError, LensworkWarning, ParameterError
from lenswork.graph import Cover


def brute_intervals(v, n_intervals, overlap):
    """Every interval i with lo_i <= v < hi_i, scanned one by one (the last closed at the top).

    Interval length and step from the uniform cover of [min, max] by N intervals of
    overlap p: L = (max - min) / (1 + (N - 1)(1 - p)), s = L (1 - p) (Carrière, Michel
    and Oudot, JMLR 2018, Section 2: resolution and gain).
    """
    v = np.asarray(v, dtype=np.float64)
    lo_v, hi_v = v.min(), v.max()
    L = (hi_v - lo_v) / (1 + (n_intervals - 1) * (1 - overlap))
    s = L * (1 - overlap)
    out = []
    for x in v:
        hits = set()
        for i in range(n_intervals):
            lo = lo_v + i * s
            hi = lo + L
            if lo <= x < hi or (i == n_intervals - 1 and x == hi_v):
                hits.add(i)
        out.append(hits)
    return out


def ranges_as_sets(cover, j=0):
    return [set(range(a, b + 1)) for a, b in zip(cover.first_[:, j], cover.last_[:, j])]


@pytest.mark.parametrize("n_intervals", [1, 3, 10])
@pytest.mark.parametrize("overlap", [0.0, 0.3, 0.5, 0.7])
def test_assignment_matches_brute_force(n_intervals, overlap):
    rng = np.random.default_rng(101)
    v = rng.normal(size=400)
    cover = Cover(intervals=n_intervals, overlap=overlap, scale="raw").fit(v)
    # brute-force scan over every interval (reference in this file); random values lie on
    # no interval edge, so the two agree exactly
    assert ranges_as_sets(cover) == brute_intervals(v, n_intervals, overlap)


def test_bounds_span_the_range():
    rng = np.random.default_rng(102)
    v = rng.uniform(-3, 5, size=300)
    cover = Cover(intervals=7, overlap=0.25, scale="raw").fit(v)
    b = cover.bounds(0)
    # first interval starts at min, last ends at max, consecutive starts differ by the step
    # (cover arithmetic, Carrière et al. 2018); rounding of a few float operations only
    assert_allclose(b[0, 0], v.min(), rtol=0, atol=1e-12)
    assert_allclose(b[-1, 1], v.max(), rtol=0, atol=1e-12)
    assert_allclose(np.diff(b[:, 0]), (b[0, 1] - b[0, 0]) * 0.75, rtol=1e-12)


@pytest.mark.parametrize("overlap", [0.0, 0.2, 0.5, 0.9])
def test_every_point_in_at_least_one_element_and_extremes(overlap):
    rng = np.random.default_rng(103)
    v = np.concatenate([rng.exponential(size=500), [0.0, 0.0, 7.5]])
    cover = Cover(intervals=12, overlap=overlap, scale="raw").fit(v)
    count = cover.last_[:, 0] - cover.first_[:, 0] + 1
    assert count.min() >= 1  # r = 1 / (1 - p) >= 1: every point is covered (module notes)
    assert cover.last_[np.argmax(v), 0] == 11  # the maximum lies in the last (closed) interval
    assert cover.first_[np.argmin(v), 0] == 0


def test_overlap_zero_is_a_partition():
    rng = np.random.default_rng(104)
    cover = Cover(intervals=9, overlap=0.0, scale="raw").fit(rng.normal(size=1000))
    # p = 0: r = 1, the intervals are [i s, (i+1) s): each point in exactly one
    assert np.array_equal(cover.first_, cover.last_)


@pytest.mark.parametrize("overlap", [0.1, 0.3, 0.5])
def test_overlap_at_most_half_gives_at_most_two_elements(overlap):
    rng = np.random.default_rng(105)
    cover = Cover(intervals=10, overlap=overlap, scale="raw").fit(rng.uniform(size=5000))
    # at most ceil(r) = 2 integers lie in (t - r, t] when r = 1 / (1 - p) <= 2
    assert (cover.last_ - cover.first_).max() <= 1


@pytest.mark.parametrize("overlap", [0.55, 0.7])
def test_overlap_above_half_gives_three_way_overlaps(overlap):
    rng = np.random.default_rng(106)
    cover = Cover(intervals=10, overlap=overlap, scale="raw").fit(rng.uniform(size=5000))
    # r > 2: a share (r - 2) of each step lies in three intervals; 5,000 uniform points hit it
    assert (cover.last_ - cover.first_).max() >= 2


def test_rank_scale_gives_equal_counts():
    rng = np.random.default_rng(107)
    v = rng.lognormal(sigma=2.0, size=2000)  # very skewed: raw intervals would be lopsided
    cover = Cover(intervals=8, overlap=0.3, scale="rank").fit(v)
    rows, elements = cover.incidence()
    counts = np.bincount(elements, minlength=8)
    # ranks (r - 1/2)/n are evenly spaced by 1/n, so a half-open interval of length L holds
    # L n points give or take one (the last, closed at the top, one more)
    expected = cover.length_[0] * v.size
    assert np.abs(counts - expected).max() <= 2


def test_rank_scale_is_invariant_under_monotone_maps():
    rng = np.random.default_rng(108)
    v = rng.normal(size=700)
    a = Cover(intervals=6, overlap=0.4, scale="rank").fit(v)
    b = Cover(intervals=6, overlap=0.4, scale="rank").fit(np.exp(3 * v) + 5)
    # ranks are unchanged by an increasing map (scipy.stats.rankdata), hence the cover too
    assert np.array_equal(a.first_, b.first_) and np.array_equal(a.last_, b.last_)
    assert_allclose(a.values_[:, 0], (rankdata(v) - 0.5) / v.size, rtol=0, atol=0)


def test_ties_share_their_elements():
    rng = np.random.default_rng(109)
    v = rng.integers(0, 12, size=600).astype(float)
    for scale in ("rank", "raw"):
        cover = Cover(intervals=5, overlap=0.3, scale=scale).fit(v)
        for value in np.unique(v):
            same = v == value
            # equal values get the same average rank (rank scale) or the same value (raw)
            assert len({(a, b) for a, b in zip(cover.first_[same, 0], cover.last_[same, 0])}) == 1


def test_product_cover_matches_brute_force():
    rng = np.random.default_rng(110)
    V = rng.normal(size=(300, 2))
    cover = Cover(intervals=[4, 3], overlap=[0.3, 0.5], scale="raw").fit(V)
    rows, elements = cover.incidence()
    got = {(int(r), int(e)) for r, e in zip(rows, elements)}
    a = brute_intervals(V[:, 0], 4, 0.3)
    b = brute_intervals(V[:, 1], 3, 0.5)
    # the product cover: every pair of per-lens intervals, flat index i * 3 + j (C order)
    want = {(r, i * 3 + j) for r in range(300) for i, j in itertools.product(a[r], b[r])}
    assert got == want
    assert cover.n_elements == 12
    assert cover.element_index(7) == (2, 1)


def test_incidence_groups_by_element_and_orders_inside():
    rng = np.random.default_rng(111)
    v = rng.normal(size=200)
    cover = Cover(intervals=5, overlap=0.3, scale="raw").fit(v)
    rows, elements = cover.incidence(order=v)
    assert np.all(np.diff(elements) >= 0)
    for e in range(5):
        inside = rows[elements == e]
        assert np.all(np.diff(v[inside]) >= 0)  # sorted by the given key inside each element
    plain_rows, plain_el = cover.incidence()
    # same pairs whatever the order (set comparison, as NetworkX's component tests do)
    assert set(zip(plain_rows, plain_el)) == set(zip(rows, elements))


def test_constant_lens_warns_and_lands_in_one_element():
    with pytest.warns(LensworkWarning, match="constant"):
        cover = Cover(intervals=5, overlap=0.3, scale="raw").fit(np.full(50, 2.0))
    assert np.all(cover.first_ == 0) and np.all(cover.last_ == 0)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"intervals": 0}, r"'intervals' parameter of Cover must be an int in \[1, inf\)"),
        ({"intervals": 2.5}, "'intervals' parameter of Cover"),
        ({"overlap": 1.0}, r"'overlap' parameter of Cover must be a float in \[0.0, 1.0\)"),
        ({"overlap": -0.1}, "'overlap' parameter of Cover"),
        ({"scale": "log"},
         r"'scale' parameter of Cover must be a str among \{'balanced', 'rank', 'raw'\}"),
        ({"intervals": [3, 4, 5]}, "has 3 values for 2 lens column"),
    ],
)
def test_bad_parameters(kwargs, match):
    rng = np.random.default_rng(112)
    with pytest.raises(ParameterError, match=match):
        Cover(**kwargs).fit(rng.normal(size=(20, 2)))


def test_bad_values():
    v = np.array([[0.0], [1.0], [np.nan], [2.0]])
    with pytest.raises(InputError, match=r"non-finite value \(nan\) in row 3, column 1;"):
        Cover().fit(v)
    with pytest.raises(InputError, match=r"non-finite value \(nan\) in row 3, column 1 \('h'\)"):
        Cover().fit(v, names=["h"])
    with pytest.raises(InputError, match=r"is empty \(shape \(0, 1\)\); expected at least one row"):
        Cover().fit(np.empty((0, 1)))
    with pytest.raises(InputError, match="must be numeric"):
        Cover().fit(["a", "b"])


def test_strings_from_the_cli_are_accepted():
    rng = np.random.default_rng(113)
    v = rng.normal(size=100)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        a = Cover(intervals="6", overlap="0.25", scale="RAW").fit(v)
    b = Cover(intervals=6, overlap=0.25, scale="raw").fit(v)
    assert np.array_equal(a.first_, b.first_)
