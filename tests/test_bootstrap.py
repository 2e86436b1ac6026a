"""Tests of lenswork.bootstrap: resampled graph features and the cover suggestion."""

import json
import math

import numpy as np
import pytest
from _shapes import noisy_circle
from numpy.testing import assert_allclose
from scipy.spatial.distance import cdist

from lenswork import (
    InputError,
    LensColumn,
    ParameterError,
    Workspace,
    bootstrap_graph,
    suggest_cover,
)
from lenswork.bootstrap import _draw
from lenswork.suggest import _count_for_length, _hausdorff_scale, _max_lens_gap


# --------------------------------------------------------------------------- confidence
@pytest.mark.parametrize("scheme", ["subsample", "bootstrap"])
def test_noisy_circle_loop_recurs(scheme):
    rng = np.random.default_rng(31)
    X = noisy_circle(500, rng, noise=0.05)
    res = bootstrap_graph(LensColumn("x", X[:, 0]), Workspace(X), resamples=60, scheme=scheme,
                          random_state=1)
    freq = res.frequency("loops")
    # b1 = 1 is the most frequent outcome and recurs in at least 90 % of the resamples
    assert res.mode("loops")[0] == 1 == max(freq, key=freq.get)
    assert freq[1] >= 0.9
    assert res.full_counts["loops"] == 1 and res.recurrence("loops") == freq[1]
    assert sum(freq.values()) == pytest.approx(1.0, abs=1e-12)
    assert res.settings["intervals"] == 10 and res.settings["overlap"] == 0.3


def test_bootstrap_is_deterministic_under_a_seed(tmp_path):
    rng = np.random.default_rng(32)
    X = noisy_circle(300, rng, noise=0.05)
    ws = Workspace(X)
    a = bootstrap_graph(X[:, 0], ws, resamples=8, random_state=5)
    b = bootstrap_graph(X[:, 0], ws, resamples=8, random_state=5)
    assert all(np.array_equal(a.counts[f], b.counts[f]) for f in a.features)
    assert np.array_equal(a.sizes, b.sizes) and (a.sizes == 240).all()
    out = a.write(tmp_path / "boot")
    lines = out["bootstrap.csv"].read_text().splitlines()
    assert lines[0] == "resample,rows,components,loops,branch_points,flares"
    assert len(lines) == 9
    meta = json.loads(out["bootstrap.json"].read_text())
    assert meta["resamples"] == 8 and meta["scheme"] == "subsample"
    loops = next(f for f in meta["features"] if f["feature"] == "loops")
    assert loops["mode"] == a.mode("loops")[0]
    assert out["bootstrap.png"].read_bytes()[:4] == b"\x89PNG"


def test_draws():
    rng = np.random.default_rng(33)
    idx = _draw(rng, 1000, "subsample", 0.8, 17)
    assert idx.size == 800 and np.unique(idx).size == 800 and np.all(np.diff(idx) > 0)
    # distinct rows of n draws with replacement: expected n (1 - (1 - 1/n)^n) (the classical
    # occupancy result, e.g. Feller, "An Introduction to Probability Theory", vol. 1, II.11),
    # sd about 13 at n = 1000 (from memory), so a mean over 20 draws lies within 10 of it
    sizes = [_draw(rng, 1000, "bootstrap", None, 17).size for _ in range(20)]
    expected = 1000 * (1 - (1 - 1 / 1000) ** 1000)
    assert abs(np.mean(sizes) - expected) < 10


def test_bootstrap_errors():
    rng = np.random.default_rng(34)
    X = noisy_circle(100, rng, noise=0.05)
    ws = Workspace(X)
    with pytest.raises(ParameterError, match="'scheme' parameter of bootstrap_graph"):
        bootstrap_graph(X[:, 0], ws, scheme="jackknife")
    with pytest.raises(ParameterError, match="'fraction' parameter of bootstrap_graph"):
        bootstrap_graph(X[:, 0], ws, fraction=0.0)
    with pytest.raises(ParameterError, match="'resamples' parameter of bootstrap_graph"):
        bootstrap_graph(X[:, 0], ws, resamples=0)
    with pytest.raises(InputError, match="too small for a neighbour graph with k=15"):
        bootstrap_graph(X[:, 0], ws, fraction=0.1)
    with pytest.raises(ParameterError, match="No feature 'holes'"):
        bootstrap_graph(X[:, 0], ws, resamples=2).frequency("holes")


# --------------------------------------------------------------------------- suggestion
def test_hausdorff_scale_matches_brute_force():
    rng = np.random.default_rng(35)
    X = rng.normal(size=(300, 3))
    a = np.random.default_rng(7)
    b = np.random.default_rng(7)
    got = _hausdorff_scale(X, 40, 5, a)
    # brute force with scipy.spatial.distance.cdist, same subsamples (same generator stream)
    ref = []
    for _ in range(5):
        pick = b.choice(300, size=40, replace=False)
        ref.append(cdist(X, X[pick]).min(axis=1).max())
    assert_allclose(got, np.mean(ref), rtol=1e-12)


def test_max_lens_gap_matches_brute_force():
    rng = np.random.default_rng(36)
    X = rng.normal(size=(400, 2))
    F = np.column_stack([X[:, 0] ** 2, rng.uniform(size=400)])
    got, pairs = _max_lens_gap(X, F, 0.3, chunk=97)
    D = cdist(X, X)
    close = D <= 0.3
    ref = [np.abs(F[:, j][:, None] - F[:, j][None, :])[close].max() for j in range(2)]
    assert_allclose(got, ref, rtol=1e-12)  # cdist brute force as reference
    assert pairs == (close.sum() - 400) // 2


def test_count_for_length_against_the_cover_formula():
    # Interval length of N intervals with overlap g over a span S:
    # L(N) = S / (1 + (N - 1)(1 - g)); the count is the largest N with L(N) >= r, and 1
    # (one interval over the whole span) when even that is shorter than r
    for span, gain, r in [(1.0, 0.4, 0.05), (2.0, 0.35, 0.6), (1.0, 0.45, 0.999), (3.0, 0.4, 5)]:
        brute = max((N for N in range(1, 1000) if span / (1 + (N - 1) * (1 - gain)) >= r),
                    default=1)
        assert _count_for_length(r, span, gain) == brute


def test_suggest_cover_on_a_circle():
    rng = np.random.default_rng(37)
    X = noisy_circle(800, rng, noise=0.05)
    ws = Workspace(X)
    s = suggest_cover(X[:, 0], ws, random_state=0)
    n = 800
    assert s.subsample_size == math.ceil(n / math.log(n) ** 1.1)
    assert s.overlap == 0.4 and s.scale == "raw" and s.cutoff == s.delta > 0
    assert s.intervals >= 3  # enough intervals for the loop on raw values
    res = bootstrap_graph(X[:, 0], ws, resamples=10, suggest=True, random_state=0)
    assert res.suggestion == s
    assert res.settings["intervals"] == s.intervals and res.settings["scale"] == "raw"
    assert res.full_counts["loops"] == 1


def test_suggest_cover_errors():
    rng = np.random.default_rng(38)
    X = noisy_circle(100, rng, noise=0.05)
    ws = Workspace(X)
    with pytest.raises(ParameterError, match="'gain' parameter of suggest_cover"):
        suggest_cover(X[:, 0], ws, gain=0.6)
    with pytest.raises(ParameterError, match="'scale' parameter of suggest_cover"):
        suggest_cover(X[:, 0], ws, scale="zscore")
    with pytest.raises(InputError, match="at least 10 rows"):
        suggest_cover(X[:5, 0], Workspace(X[:5]))
