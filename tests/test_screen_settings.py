"""Tests of ScreenSettings, the screen CLI options generated from it, and the sampled pipeline."""

import json
import warnings
from dataclasses import FrozenInstanceError, fields

import numpy as np
import pytest
from _strict_json import strict_loads
from click.testing import CliRunner
from scipy.stats import spearmanr

from lenswork import ParameterError, ScreenSettings, Workspace, screen
from lenswork.cli import cli
from lenswork.cli._common import screen_option_fields
from lenswork.cli._screen import screen_command
from lenswork.demo import load_demo
from lenswork.screen import plan_sample


def _quiet(*args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return screen(*args, **kwargs)


# --------------------------------------------------------------------------- the object
def test_defaults_are_the_screens_documented_defaults():
    # The defaults screen() documented before the settings object (count 2, ceiling 0.8,
    # 20 bins, the probe on, the preservation pairing, sample "auto").
    s = ScreenSettings()
    assert (s.lenses, s.extra, s.count, s.ceiling, s.references, s.bins, s.weights, s.probe,
            s.pairing, s.sample, s.random_state) == (
        None, (), 2, 0.8, (), 20, None, True, "preservation", "auto", None)


def _escaped(text):
    for c in "()[]{}":
        text = text.replace(c, "\\" + c)
    return text


@pytest.mark.parametrize(
    ("changes", "message"),
    [
        ({"count": 0}, "'count' parameter of screen must be an int in [1, inf)"),
        ({"ceiling": 0.0}, "'ceiling' parameter of screen must be a float in (0, 1]"),
        ({"ceiling": 1.5}, "'ceiling' parameter of screen must be a float in (0, 1]"),
        ({"bins": 1}, "'bins' parameter of screen must be an int in [2, inf)"),
        ({"pairing": "best"}, "'pairing' parameter of screen must be a str among"),
        ({"probe": "maybe"}, "'probe' parameter of screen must be a bool"),
        ({"sample": 50}, "'sample' parameter of screen must be an int in [100, inf)"),
        ({"sample": "some"}, "sample must be 'auto', 'all' or a number of rows"),
        ({"random_state": -1}, "'random_state' parameter of screen must be an int in [0, inf)"),
        ({"weights": {"smoothness": -1}}, "'weights.smoothness' parameter of screen must be"),
        ({"weights": []}, "'weights' parameter of screen must be a non-empty dict"),
        ({"extra": ["nosuchlens"]}, "nosuchlens"),
        ({"lenses": ["dtm:mass=2"]}, "mass"),
    ],
)
def test_bad_settings_raise_once_with_a_clear_message(changes, message):
    with pytest.raises(ParameterError, match=_escaped(message)):
        ScreenSettings(**changes)


def test_text_values_are_parsed_as_the_cli_gives_them():
    s = ScreenSettings(count="3", ceiling="0.9", bins="10", probe="false", sample=" 20000 ",
                       references="flow, head", pairing="GREEDY")
    assert (s.count, s.ceiling, s.bins, s.probe, s.sample, s.references, s.pairing) == (
        3, 0.9, 10, False, 20000, ("flow", "head"), "greedy")
    assert ScreenSettings(sample=None).sample == "all"
    # a keyword None is a value, as screen() always took it (sample=None: every row)
    assert ScreenSettings.coerce(ScreenSettings(sample=500), sample=None).sample == "all"
    assert ScreenSettings.coerce(ScreenSettings(lenses=["pca"]), lenses=None).lenses is None


def test_frozen_replace_and_unknown_names():
    s = ScreenSettings()
    with pytest.raises(FrozenInstanceError):
        s.count = 3
    sweep = [s.replace(ceiling=c) for c in (0.5, 0.7, 0.9)]
    assert [x.ceiling for x in sweep] == [0.5, 0.7, 0.9] and s.ceiling == 0.8
    with pytest.raises(ParameterError, match="'count' parameter of screen"):
        s.replace(count=0)  # replace validates again
    with pytest.raises(ParameterError, match="has no setting 'colour'"):
        s.replace(colour="red")
    with pytest.raises(ParameterError, match="has no setting 'colour'"):
        ScreenSettings.from_dict({"colour": 1})


@pytest.mark.parametrize(
    "settings",
    [
        ScreenSettings(),
        ScreenSettings(lenses=["pca", ("dtm", {"mass": 0.05})], extra=("eccentricity:p=1",),
                       count=3, references=["flow"], weights={"spread": 1.0}, probe=False,
                       pairing="greedy", sample=5000, random_state=4),
        ScreenSettings(lenses=(), extra=["density"], sample="all"),
    ],
)
def test_dict_round_trip_through_strict_json(settings):
    text = json.dumps(settings.to_dict(), allow_nan=False)
    assert ScreenSettings.from_dict(strict_loads(text)) == settings


def test_settings_in_place_of_the_lens_list_is_a_clear_error():
    X = np.random.default_rng(0).normal(size=(50, 2))
    with pytest.raises(ParameterError, match=r"lenses=\[\.\.\.\]"):
        screen(X, ["pca"])


# --------------------------------------------------------------------------- screen()
def test_screen_with_settings_equals_screen_with_keywords_on_the_demo():
    ws = Workspace(load_demo(), random_state=0)
    kwargs = {"count": 2, "ceiling": 0.75, "references": ["flow_m3h"], "pairing": "greedy"}
    a = _quiet(ws, **kwargs)
    b = _quiet(ws, ScreenSettings(**kwargs))
    c = _quiet(ws, ScreenSettings(count=5, pairing="greedy"), ceiling=0.75, count=2,
               references="flow_m3h")  # overrides applied over the settings
    da, db, dc = a.to_dict(), b.to_dict(), c.to_dict()
    assert da == db == dc
    assert da["screen_settings"] == ScreenSettings(**kwargs).to_dict()
    assert a.settings == ScreenSettings(**kwargs)


def test_the_sampled_screen_is_the_screen_of_the_sample_then_a_confirmation():
    # sample -> screen -> confirm: the ranking equals screen() of the sample rows alone, and
    # each confirmed lens's recorded rho is Spearman's rho (scipy.stats.spearmanr as the
    # reference) of the sample run against the all-rows run on the sample rows.
    rng = np.random.default_rng(7310)
    X = rng.normal(size=(2400, 3)) * [3.0, 1.0, 0.3]
    ws = Workspace(X, random_state=2)
    settings = ScreenSettings(lenses=["pca", "eccentricity", "dtm:mass=0.05"], probe=False,
                              sample=600)
    sampled = _quiet(ws, settings)
    plan = plan_sample(ws, 600)
    alone = _quiet(plan.workspace, settings.replace(sample="all"))
    assert sampled.selected == alone.selected and sampled.names == alone.names
    for key, values in alone.scores.items():
        np.testing.assert_array_equal(sampled.scores[key], values)
    assert sampled.settings == settings and sampled.to_dict()["screen_settings"]["sample"] == 600
    full = sampled.to_lens_table()
    assert full.cloud.n == 2400
    for rec in sampled.confirmation.lenses:
        rho = spearmanr(sampled.lenses[rec["screened"]].values,
                        full[rec["screened"]].values[plan.rows]).statistic
        assert rec["spearman"] == pytest.approx(rho, abs=1e-12)
    # A rescore that keeps the selection stays confirmed, with the same settings.
    again = sampled.rescore(count=2)
    assert type(again).__name__ == "SampledScreenResult" and again.settings.count == 2


# --------------------------------------------------------------------------- the CLI
def test_screen_options_agree_with_the_settings_fields_and_defaults():
    params = {p.name: p for p in screen_command.params}
    with_option = {f.name for f in screen_option_fields()}
    # weights (a dict) and random_state (--seed, through the Workspace) have no option
    assert {f.name for f in fields(ScreenSettings)} - with_option == {"weights", "random_state"}
    for f in screen_option_fields():
        meta = f.metadata["cli"]
        p = params[f"screen_{f.name}"]
        assert set(meta["flags"]) <= set(p.opts), f.name
        if meta["kind"] == "flag":
            assert p.is_flag, f.name  # off unless given; given, it sets meta["value"]
        elif meta["kind"] == "multiple":
            assert p.multiple, f.name
        else:
            assert p.default == f.default, f.name
            if meta["kind"] == "choice":
                assert tuple(p.type.choices) == tuple(meta["choices"])


def test_cli_screen_writes_the_settings_the_api_takes(tmp_path):
    out = tmp_path / "s"
    res = CliRunner().invoke(cli, [
        "screen", "--demo", "-n", "1", "--no-probe", "--pairing", "greedy", "-r", "flow_m3h",
        "--ceiling", "0.7", "--no-figures", "-o", str(out),
    ])
    assert res.exit_code == 0, res.output
    doc = strict_loads((out / "ranking.json").read_text())
    settings = ScreenSettings(count=1, probe=False, pairing="greedy", references=["flow_m3h"],
                              ceiling=0.7)
    assert doc["screen_settings"] == settings.to_dict()
    api = _quiet(Workspace(load_demo(), random_state=0), ScreenSettings.from_dict(
        doc["screen_settings"]))
    assert api.to_dict()["ranking"] == doc["ranking"] and api.selected == doc["selected"]


def test_cli_bad_screen_setting_is_a_one_line_error(tmp_path):
    res = CliRunner().invoke(cli, ["screen", "--demo", "--sample", "12", "-o", str(tmp_path)])
    assert res.exit_code != 0
    assert "The --sample option must be an int in [100, inf)" in res.output  # named as typed
    assert "Traceback" not in res.output


# --------------------------------------------------------------------------- result protocol
@pytest.mark.parametrize("sample", ["all", 300])
def test_screen_results_speak_the_result_protocol(tmp_path, sample):
    # text / to_dict / to_frame / write(folder) / figure, defined in the class bodies (not
    # attached from outside), for the full and the sampled screen alike.
    import inspect

    import matplotlib.pyplot as plt

    X = np.random.default_rng(7311).normal(size=(900, 3)) * [2.0, 1.0, 0.5]
    res = _quiet(X, lenses=["pca", "eccentricity"], probe=False, sample=sample)
    for name in ("text", "to_dict", "to_frame", "write", "figure"):
        owner = next(k for k in type(res).__mro__ if name in vars(k))
        assert inspect.getsourcefile(owner) == inspect.getsourcefile(getattr(res, name)), name
    assert res.text() == res.format_table() + "\n\n" + res.summary()
    assert len(res.to_frame()) == len(res.names)
    files = res.write(tmp_path, figures=False)
    assert strict_loads(files["ranking.json"].read_text()) == strict_loads(
        json.dumps(res.to_dict(), allow_nan=False))
    fig = res.figure()
    try:
        assert len(fig.axes) >= len(res.names)  # a card per candidate at least
    finally:
        plt.close(fig)
