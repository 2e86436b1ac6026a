"""Every JSON file of the lens table and the screen parses with a strict JSON parser.

JSON has no NaN or infinity (RFC 8259, section 6: "Numeric values that cannot
be represented in the grammar below (such as Infinity and NaN) are not
permitted"). Python's ``json.loads`` accepts them unless ``parse_constant``
refuses them (Python documentation of ``json.loads``: it is called with
'-Infinity', 'Infinity' or 'NaN'), so each file here is read with a
``parse_constant`` that raises. Each writer is given NaN or infinite values
where it can hold them: lens info, correlations of a constant column,
reference columns with too few values.
"""

import json
import math
import warnings

import numpy as np
import pytest
from _strict_json import strict_loads
from click.testing import CliRunner

from lenswork import (
    LensColumn,
    LensTable,
    PointCloud,
    Workspace,
    compute_lenses,
    register_lens,
    screen,
)
from lenswork.cli import cli
from lenswork.lenses import LensPart
from lenswork.lenses._registry import REGISTRY


def _strict_file(path):
    text = path.read_text(encoding="utf-8")
    for bad in ("NaN", "Infinity"):  # also as bare words inside the text, e.g. a nested list
        assert bad not in text.replace('"NaN"', "").replace('"Infinity"', ""), path
    return strict_loads(text)


def test_strict_parser_refuses_nan_and_infinity():
    # The check can fail: Python's own writer emits these constants by default.
    for value in (math.nan, math.inf, -math.inf):
        with pytest.raises(ValueError, match="non-standard JSON constant"):
            strict_loads(json.dumps({"x": [1.0, value]}))
    assert strict_loads('{"x": null}') == {"x": None}


def _cloud(rng, n=200):
    X = rng.normal(size=(n, 3))
    return PointCloud.from_array(X, passthrough={"tag": np.where(np.arange(n) < 2, 1.0, np.nan)})


def test_lens_table_sidecar_is_strict_with_nan_info(tmp_path):
    rng = np.random.default_rng(501)
    cloud = _cloud(rng)
    info = {"error": math.nan, "bound": math.inf, "per_part": np.array([-np.inf, 0.5]),
            "scalar": np.float32("nan")}
    cols = [LensColumn("a", cloud.X[:, 0], lens="custom", params={"scale": math.inf}, info=info),
            LensColumn("b", cloud.X[:, 1])]
    for fmt in ("csv", "npy"):
        _, sidecar = LensTable(cols, cloud).write(tmp_path / f"lenses.{fmt}")
        meta = _strict_file(sidecar)
        first = meta["columns"][0]
        assert first["info"] == {"error": None, "bound": None, "per_part": [None, 0.5],
                                 "scalar": None}
        assert first["params"] == {"scale": None}
        assert meta["file"]["lens_columns"] == ["a", "b"]


@pytest.fixture
def nan_info_lens():
    name = "json_strict_probe_lens"

    @register_lens(name, summary="first column; info with NaN and inf", cost="O(n)")
    def _lens(ws):
        return [LensPart(ws.X[:, 0], info={"estimate": math.nan, "worst": -math.inf})]

    yield name
    REGISTRY.pop(name)


def test_registry_lens_info_is_strict_in_memory_and_on_disk(tmp_path, nan_info_lens):
    rng = np.random.default_rng(502)
    ws = Workspace(rng.normal(size=(120, 2)))
    table = compute_lenses(ws, [nan_info_lens])
    col = table[nan_info_lens]
    assert col.info == {"estimate": None, "worst": None}
    json.dumps(col.info, allow_nan=False)  # the lens contract: strict JSON info
    _, sidecar = table.write(tmp_path / "l.csv")
    assert _strict_file(sidecar)["columns"][0]["info"] == {"estimate": None, "worst": None}


def test_screen_result_json_is_strict(tmp_path):
    rng = np.random.default_rng(503)
    cloud = _cloud(rng)
    table = LensTable([LensColumn("x", cloud.X[:, 0]), LensColumn("flat", np.ones(cloud.n)),
                       LensColumn("y", cloud.X[:, 1])], cloud)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the constant column and the short reference warn
        result = screen(table, count=2, references=["tag"], probe=False)
        files = result.write(tmp_path / "out", figures=False)
    doc = _strict_file(files["ranking.json"])
    assert doc == strict_loads(json.dumps(result.to_dict(), allow_nan=False))
    j = doc["correlation"]["columns"].index("flat")
    assert doc["correlation"]["spearman"][j][j] is None  # undefined rho of a constant
    assert all(v is None for row in doc["reference_correlation"]["spearman"] for v in row)
    _strict_file(files["lenses.csv.json"])


def _write_csv(path, rng, n=240):
    X = rng.normal(size=(n, 3)).tolist()
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("id,a,b,c,flat,note\n")
        for i in range(n):
            note = "" if i > 1 else str(i)  # a reference with two values only
            fh.write(f"r{i},{X[i][0]!r},{X[i][1]!r},{X[i][2]!r},1.0,{note}\n")


def test_screen_cli_outputs_are_strict(tmp_path):
    rng = np.random.default_rng(504)
    data = tmp_path / "t.csv"
    _write_csv(data, rng)
    out = tmp_path / "screen"
    run = CliRunner().invoke(cli, [
        "--quiet", "screen", str(data), "--id-column", "id", "-f", "a,b,c,flat",
        "-o", str(out), "--no-figures", "--no-defaults", "-l", "pca:components=2",
        "-l", "eccentricity", "-l", "column:name=flat", "-r", "note", "-r", "a",
    ])
    assert run.exit_code == 0, run.output
    jsons = sorted(p.name for p in out.glob("*.json"))
    assert jsons == ["lenses.csv.json", "lenswork-manifest.json", "ranking.json"]
    for name in jsons:
        _strict_file(out / name)
    ranking = strict_loads((out / "ranking.json").read_text())
    flat = next(r for r in ranking["ranking"] if r["column"] == "column_flat")
    assert flat["outliers"] is None and flat["partner_rho"] is None


def test_compute_cli_sidecar_is_strict(tmp_path, nan_info_lens):
    rng = np.random.default_rng(505)
    data = tmp_path / "t.csv"
    _write_csv(data, rng)
    out = tmp_path / "lenses.csv"
    run = CliRunner().invoke(cli, ["--quiet", "compute", str(data), "--id-column", "id",
                                   "-f", "a,b,c", "-l", nan_info_lens, "-l", "dtm", "-o", str(out)])
    assert run.exit_code == 0, run.output
    meta = _strict_file(out.with_name("lenses.csv.json"))
    assert meta["columns"][0]["info"] == {"estimate": None, "worst": None}
