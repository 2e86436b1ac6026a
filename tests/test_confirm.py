"""Tests of the sample screen and its confirmation on all rows (lenswork.screen._confirm)."""

import json
import math
import warnings

import numpy as np
import pytest
import scipy.stats
from click.testing import CliRunner
from sklearn.datasets import load_digits, make_s_curve

from lenswork import LensTable, LensworkWarning, ParameterError, Workspace, screen
from lenswork.cli import cli
from lenswork.lenses._registry import REGISTRY, LensPart, register_lens
from lenswork.screen._confirm import (
    SAMPLE_ALL_MAX,
    SAMPLE_SIZE,
    SampledScreenResult,
    plan_sample,
    spread_bootstrap,
)


def _quiet(*args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        return screen(*args, **kwargs)


@pytest.fixture(scope="module")
def s_curve_runs():
    """scikit-learn's S curve (make_s_curve), 3,000 rows: full screen and a 1,000-row sample."""
    X, _ = make_s_curve(3000, noise=0.05, random_state=0)
    full = _quiet(X, probe=False, sample="all")
    part = _quiet(X, probe=False, sample=1000)
    return X, full, part


def test_sample_screen_picks_what_the_full_screen_picks():
    # scikit-learn's bundled digits (1,797 x 64), small enough to screen fully: the default
    # candidates ranked on 1,200 seeded rows give the choice the screen of all rows gives.
    # (Measured: on 600 or 900 rows laplacian_2 takes the place of laplacian_1 beside
    # laplacian_3; the two pairs' scores are that close on digits.)
    X = load_digits().data
    full = _quiet(X, probe=False, sample="all")
    part = _quiet(X, probe=False, sample=1200)
    assert type(full).__name__ == "ScreenResult" and isinstance(part, SampledScreenResult)
    assert sorted(part.selected) == sorted(full.selected)


def test_stated_sampling_error_covers_the_full_data_scores(s_curve_runs):
    # The bootstrap SE stated for each candidate's spread covers the gap to the score the same
    # candidate gets on all rows: within 4 SE plus the plug-in entropy's bias
    # (B - 1) / (2 N log B) (Miller 1955; Paninski 2003, Neural Computation 15), for the
    # candidates whose parameters do not follow n (PCA, eccentricity).
    _, full, part = s_curve_runs
    se = part.confirmation.spread_se
    bias = 19 / (2 * 1000 * math.log(20))
    checked = 0
    for j, name in enumerate(part.names):
        if not name.startswith(("pca", "eccentricity")):
            continue
        k = full.names.index(name)
        gap = abs(part.scores["spread"][j] - full.scores["spread"][k])
        assert gap <= 4 * se[name] + bias, (name, gap, se[name])
        checked += 1
    assert checked >= 5


def test_sample_rows_and_provenance(s_curve_runs):
    X, _, part = s_curve_runs
    conf = part.confirmation
    rows = np.sort(np.random.default_rng([0, 11]).choice(3000, 1000, replace=False))
    assert conf.sample_size == 1000 and conf.n_rows == 3000
    np.testing.assert_array_equal(part.cloud.X, X[rows])  # the screen saw exactly these rows
    assert part.cloud.provenance["sample"]["size"] == 1000
    doc = json.loads(json.dumps(part.to_dict()))
    assert doc["sample"]["sample_size"] == 1000 and doc["n_rows"] == 3000
    assert doc["sample"]["rule"].startswith("sample=1,000")
    assert "Screened on a seeded sample of 1,000 of 3,000 rows" in part.summary()


def test_agreement_is_spearman_of_sample_run_vs_full_run(s_curve_runs):
    # Reference: scipy.stats.spearmanr (Spearman 1904, average ranks for ties).
    _, _, part = s_curve_runs
    rows = np.sort(np.random.default_rng([0, 11]).choice(3000, 1000, replace=False))
    table = part.to_lens_table()
    assert table.cloud.n == 3000
    for rec in part.confirmation.lenses:
        ref = scipy.stats.spearmanr(part.lenses[rec["screened"]].values,
                                    table[rec["confirmed"]].values[rows]).statistic
        assert math.isclose(rec["spearman"], ref, abs_tol=1e-12)
        assert abs(rec["spearman"]) > 0.9  # the same lens on the same rows


def test_same_seed_same_sample_screen():
    X, _ = make_s_curve(1500, noise=0.05, random_state=1)
    a = _quiet(X, lenses=["pca", "eccentricity"], probe=False, sample=400)
    b = _quiet(X, lenses=["pca", "eccentricity"], probe=False, sample=400)
    assert a.selected == b.selected
    for name in a.to_lens_table().names:
        np.testing.assert_array_equal(a.to_lens_table()[name].values,
                                      b.to_lens_table()[name].values)


def test_auto_rule():
    assert plan_sample(Workspace(np.arange(float(SAMPLE_ALL_MAX))[:, None]), "auto") is None
    big = Workspace(np.arange(SAMPLE_ALL_MAX + 1.0)[:, None], random_state=4)
    plan = plan_sample(big, "auto")
    assert plan.size == SAMPLE_SIZE and plan.workspace.n == SAMPLE_SIZE
    assert len(np.unique(plan.rows)) == SAMPLE_SIZE and "auto" in plan.rule
    assert plan_sample(big, 10 ** 9) is None  # asking for more rows than there are: all rows


@pytest.mark.parametrize("bad", ["some", 50, 2.5, True])
def test_bad_sample_is_a_clear_error(bad):
    X = np.random.default_rng(0).normal(size=(300, 2))
    with pytest.raises(ParameterError, match="sample"):
        screen(X, lenses=["pca"], probe=False, sample=bad)


def test_lens_table_with_sample_size_raises():
    X = np.random.default_rng(0).normal(size=(300, 2))
    table = _quiet(X, lenses=["pca"], probe=False).lenses
    assert isinstance(table, LensTable)
    with pytest.raises(ParameterError, match="LensTable"):
        screen(table, sample=100)


def test_spread_bootstrap_matches_entropy_delta_method():
    # Asymptotic variance of the plug-in entropy: (sum p log^2 p - H^2) / n (Basharin 1959,
    # "On a statistical estimate for the entropy of a sequence of independent random
    # variables"). Values spread uniformly inside 20 equal bins with unequal probabilities,
    # so the spread score is H / log 20 (no ties).
    rng = np.random.default_rng(5)
    p = np.linspace(1.0, 3.0, 20)
    p /= p.sum()
    n = 20_000
    b = rng.choice(20, size=n, p=p)
    x = b + rng.uniform(0.001, 0.999, n)
    x[:2] = [0.0, 20.0]  # pin the range to the 20 bins
    from lenswork import LensColumn, PointCloud

    t = LensTable([LensColumn("x", x)], PointCloud.from_array(x[:, None]))
    reps = spread_bootstrap(t, 20, resamples=300, random_state=2)[:, 0]
    H = -(p * np.log(p)).sum()
    se = math.sqrt(((p * np.log(p) ** 2).sum() - H ** 2) / n) / math.log(20)
    assert reps.std(ddof=1) == pytest.approx(se, rel=0.2)


def _noise_lens(ws):
    """A lens whose values depend on the row count only: no agreement between runs."""
    return [LensPart(np.random.default_rng(ws.n).normal(size=ws.n), "", {})]


def test_low_agreement_warns():
    name = "tnoise_confirm"
    register_lens(name, summary="test: noise seeded by n", cost="O(n)")(_noise_lens)
    try:
        X = np.random.default_rng(0).normal(size=(2000, 2))
        with pytest.warns(LensworkWarning, match="does not agree"):
            # merit by spread alone: a noise lens has smoothness 0 and would not be chosen
            res = screen(X, lenses=[name], count=1, probe=False, sample=500,
                         weights={"robust_spread": 1.0})
        assert abs(res.confirmation.lenses[0]["spearman"]) < 0.2
    finally:
        REGISTRY.pop(name, None)


def test_laplacian_confirmed_by_extension_reports_its_error():
    # The Laplacian is confirmed in its sample mode: landmarks + the Nystrom extension
    # (Bengio et al., NIPS 2004), with the estimated extension error in the record.
    X, _ = make_s_curve(2500, noise=0.02, random_state=3)
    res = _quiet(X, lenses=["laplacian:components=1"], count=1, probe=False, sample=800)
    rec = res.confirmation.lenses[0]
    assert rec["mode"] == "sample" and rec["error"].startswith("extension_error")
    info = res.to_lens_table().columns[0].info
    assert info["landmarks"] == 800 and info["extension_error"] < 0.1
    assert abs(rec["spearman"]) > 0.95


def test_cli_sample_option(tmp_path):
    X, _ = make_s_curve(1200, noise=0.05, random_state=0)
    path = tmp_path / "t.csv"
    np.savetxt(path, X, delimiter=",", header="a,b,c", comments="")
    out = tmp_path / "out"
    res = CliRunner().invoke(cli, ["screen", str(path), "-o", str(out), "--sample", "400",
                                   "--no-figures", "--no-probe", "-l", "pca",
                                   "--no-defaults"])
    assert res.exit_code == 0, res.output
    assert "Screened on a seeded sample of 400 of 1,200 rows" in res.stdout
    assert "Confirmed on all rows" in res.stdout
    lines = (out / "lenses.csv").read_text().splitlines()
    assert len(lines) == 1 + 1200
    doc = json.loads((out / "ranking.json").read_text())
    assert doc["sample"]["sample_size"] == 400
    bad = CliRunner().invoke(cli, ["screen", str(path), "-o", str(tmp_path / "o2"),
                                   "--sample", "lots"])
    assert bad.exit_code != 0 and "Traceback" not in bad.output
    assert "sample must be" in bad.output and not (tmp_path / "o2").exists()


def test_confirmed_columns_keep_their_ranked_names():
    # A Laplacian confirmed by the sample path (Nystrom extension, Bengio et al. 2004) is
    # written under the name it was ranked with; its params say how it was computed.
    X, _ = make_s_curve(3000, noise=0.05, random_state=2)
    res = _quiet(X, lenses=["laplacian:components=2", "pca"], probe=False, sample=800)
    table = res.to_lens_table()
    assert table.names == res.selected
    assert any(table[name].lens == "laplacian" for name in res.selected)
    for rec in res.confirmation.lenses:
        assert rec["confirmed"] == rec["screened"]
        col = table[rec["screened"]]
        if col.lens == "laplacian":
            assert col.params["mode"] == "sample" and "mode=sample" in rec["spec"]
