"""Tests of the data-column lens and user-function lenses (lenswork.lenses._column)."""

import sys
import textwrap

import numpy as np
import pytest
from numpy.testing import assert_allclose

import lenswork
from lenswork import (
    InputError,
    LensworkError,
    LensworkWarning,
    ParameterError,
    PointCloud,
    Workspace,
    compute_lenses,
    data_column,
    get_lens,
    lens_names,
    user_lens,
)
from lenswork.lenses import _registry
from lenswork.lenses._registry import REGISTRY, Param


@pytest.fixture
def registry_snapshot():
    """Lenses registered by a test are removed afterwards (the registry is global)."""
    before = dict(REGISTRY)
    yield
    REGISTRY.clear()
    REGISTRY.update(before)


def _cloud(rng, n=12):
    X = rng.normal(size=(n, 3))
    passthrough = {
        "hour": np.arange(n) % 24,  # int column
        "reading": np.array([f"{v:.3f}" for v in rng.normal(size=n)], dtype=object),  # text
        "site": np.array(["north", "south"] * (n // 2), dtype=object),  # labels
    }
    return PointCloud.from_array(X, feature_names=["flow", "temp", "power"],
                                 passthrough=passthrough)


# ---------------------------------------------------------------- column lens
def test_feature_and_passthrough_columns():
    rng = np.random.default_rng(101)
    cloud = _cloud(rng)
    table = compute_lenses(Workspace(cloud), ["column:name=temp", "column:name=hour",
                                              ("column", {"name": "reading"})])
    assert table.names == ["column_temp", "column_hour", "column_reading"]
    # The values themselves are the reference: the feature array's column, and the
    # passthrough values read as numbers (float("0.123") etc., Python's own parser).
    assert np.array_equal(table["column_temp"].values, cloud.X[:, 1])
    assert np.array_equal(table["column_hour"].values, np.arange(12) % 24)
    expected = [float(v) for v in cloud.passthrough["reading"]]
    assert np.array_equal(table["column_reading"].values, expected)
    assert table["column_temp"].info == {"source": "feature", "scaling": None}
    assert table["column_hour"].info == {"source": "passthrough"}
    assert table["column_temp"].params == {"name": "temp"}
    assert_allclose(data_column(cloud, "flow"), cloud.X[:, 0], rtol=0, atol=0)


def test_column_errors_list_the_numeric_columns():
    rng = np.random.default_rng(102)
    ws = Workspace(_cloud(rng))
    lens = get_lens("column")
    listing = r"Numeric columns: flow, temp, power, hour, reading\."
    with pytest.raises(ParameterError, match=r"passthrough column 'site' holds non-numeric "
                                             r"values\. " + listing):
        lens(ws, name="site")
    with pytest.raises(ParameterError, match=r"'name' parameter of column must be one of the "
                                             r"numeric columns \(flow, temp, power, hour, "
                                             r"reading\)\. Got 'pressure' instead"):
        lens(ws, name="pressure")
    with pytest.raises(ParameterError, match=r"'name' parameter of column is required.*"
                                             r"'column:name=flow'\. " + listing):
        lens(ws)
    with pytest.raises(ParameterError, match=r"'name' parameter of column must be a column "
                                             r"name \(a non-empty str\)\. Got 3 instead"):
        lens(ws, name=3)
    with pytest.raises(ParameterError, match="'name' parameter of data_column must be one of"):
        data_column(ws.cloud, "pressure")


def test_missing_passthrough_value_names_the_row():
    rng = np.random.default_rng(103)
    values = rng.normal(size=8)
    values[5] = np.nan
    cloud = PointCloud.from_array(rng.normal(size=(8, 2)), passthrough={"gauge": values})
    with pytest.raises(InputError, match=r"Column 'gauge' has a missing or non-finite value in "
                                         r"row 6 \(id 6\)"):
        get_lens("column")(Workspace(cloud), name="gauge")


# ---------------------------------------------------------------- user lenses
def test_user_lens_one_and_many_columns(registry_snapshot):
    @user_lens("row_power", summary="Row norm raised to a power", params={"power": 1.0},
               cost="O(n d)")
    def row_power(X, power=1.0):
        return np.linalg.norm(X, axis=1) ** power

    @user_lens("first_two", summary="The first two features")
    def first_two(X):
        return X[:, :2]

    assert row_power(np.array([[3.0, 4.0]]), power=2).tolist() == [25.0]  # returned unchanged
    rng = np.random.default_rng(201)
    X = rng.normal(size=(40, 3))
    # CLI strings are converted by the checker the default's type chose (float).
    table = compute_lenses(Workspace(X), ["row_power", "row_power:power=2", "first_two"])
    assert table.names == ["row_power", "row_power[power=2]", "first_two_1", "first_two_2"]
    norms = np.sqrt((X**2).sum(axis=1))  # reference: the norm from its definition
    assert_allclose(table["row_power"].values, norms, rtol=1e-14)
    assert_allclose(table["row_power[power=2]"].values, norms**2, rtol=1e-13)
    assert np.array_equal(table.values()[:, 2:], X[:, :2])
    assert table["row_power[power=2]"].params == {"power": 2.0}
    assert table["first_two_1"].info["columns"] == 2
    spec = get_lens("row_power")
    assert spec.summary == "Row norm raised to a power" and spec.cost == "O(n d)"
    assert spec.family == "user" and spec.source.startswith("user: ")
    with pytest.raises(ParameterError, match=r"'power' parameter of row_power must be a float"):
        spec(Workspace(X), power="strong")


def test_user_lens_with_param_objects_and_int_bool_str_defaults(registry_snapshot):
    from functools import partial

    from lenswork._validation import check_int

    @user_lens("picked", summary="One chosen feature, optionally negated",
               params=[Param("j", 0, partial(check_int, lo=0, hi=2), "feature index")])
    def picked(X, j=0):
        return X[:, j]

    @user_lens("typed", summary="Defaults of several types",
               params={"scale": 2, "flip": False, "label": "a"})
    def typed(X, scale=2, flip=False, label="a"):
        assert isinstance(scale, int) and isinstance(flip, bool) and isinstance(label, str)
        return (-1 if flip else 1) * scale * X[:, 0]

    rng = np.random.default_rng(202)
    X = rng.normal(size=(10, 3))
    ws = Workspace(X)
    assert np.array_equal(get_lens("picked")(ws, j="2")[0].values, X[:, 2])
    with pytest.raises(ParameterError, match=r"'j' parameter of picked must be an int in "
                                             r"\[0, 2\]"):
        get_lens("picked")(ws, j=3)
    (col,) = get_lens("typed")(ws, scale="3", flip="yes", label="b")
    assert np.array_equal(col.values, -3 * X[:, 0])


def test_user_function_output_is_validated(registry_snapshot):
    rng = np.random.default_rng(203)
    ws = Workspace(rng.normal(size=(10, 2)))

    @user_lens("too_short", summary="Wrong length")
    def too_short(X):
        return X[:5, 0]

    @user_lens("has_nan", summary="A NaN in row 4")
    def has_nan(X):
        out = X[:, 0].copy()
        out[3] = np.nan
        return out

    @user_lens("wordy", summary="Not numbers")
    def wordy(X):
        return ["a"] * len(X)

    @user_lens("edits_data", summary="Tries to modify X in place")
    def edits_data(X):
        X[0, 0] = 1.0
        return X[:, 0]

    with pytest.raises(LensworkError, match=r"User lens 'too_short' returned values of shape "
                                            r"\(5,\); expected \(10,\) or \(10, m\)"):
        get_lens("too_short")(ws)
    with pytest.raises(LensworkError, match=r"User lens 'has_nan' returned a non-finite value "
                                            r"\(nan\) in row 4 \(id 4\)"):
        get_lens("has_nan")(ws)
    with pytest.raises(LensworkError, match="User lens 'wordy' returned list values that are "
                                            "not numbers"):
        get_lens("wordy")(ws)
    with pytest.raises(LensworkError, match=r"User lens 'edits_data' \(.*edits_data\) raised "
                                            r"ValueError: assignment destination is read-only"):
        get_lens("edits_data")(ws)


def test_user_lens_declaration_errors(registry_snapshot):
    with pytest.raises(ParameterError, match="declares parameter 'alpha', but the function does "
                                             "not accept"):
        @user_lens("no_alpha", summary="x", params={"alpha": 1.0})
        def no_alpha(X):
            return X[:, 0]

    with pytest.raises(ParameterError, match="the default of parameter 'where' must be a bool, "
                                             "int, float or str"):
        user_lens("bad_default", summary="x", params={"where": None})

    with pytest.raises(ParameterError, match="needs a summary"):
        user_lens("no_summary", summary="")

    with pytest.raises(ParameterError, match="A lens name must start with a letter"):
        @user_lens("2fast", summary="x")
        def fast(X):
            return X[:, 0]

    with pytest.raises(ParameterError, match="A lens named 'pca' is already registered"):
        @user_lens("pca", summary="x")
        def pca(X):
            return X[:, 0]

    assert "no_alpha" not in REGISTRY and get_lens("pca").source == "builtin"


# ---------------------------------------------------------------- entry points
def _fake_distribution(root, dist_name, entry_line, module_name, module_source):
    """A real installed-distribution layout on a sys.path entry: the module and its
    .dist-info with METADATA and entry_points.txt (what pip writes on install)."""
    (root / f"{module_name}.py").write_text(textwrap.dedent(module_source), encoding="utf-8")
    info = root / f"{dist_name.replace('-', '_')}-1.0.dist-info"
    info.mkdir()
    (info / "METADATA").write_text(
        f"Metadata-Version: 2.1\nName: {dist_name}\nVersion: 1.0\n", encoding="utf-8"
    )
    (info / "entry_points.txt").write_text(
        f"[{_registry.ENTRY_POINT_GROUP}]\n{entry_line}\n", encoding="utf-8"
    )


def test_entry_point_plugin_is_loaded(tmp_path, monkeypatch, registry_snapshot):
    _fake_distribution(
        tmp_path, "lenswork-test-plugin", "spread = lenswork_test_plugin_mod",
        "lenswork_test_plugin_mod",
        """
        import numpy as np
        from lenswork import user_lens

        @user_lens("plugin_spread", summary="Range of each row", params={"offset": 0.0})
        def plugin_spread(X, offset=0.0):
            return X.max(axis=1) - X.min(axis=1) + offset
        """,
    )
    monkeypatch.syspath_prepend(str(tmp_path))
    monkeypatch.setattr(_registry, "_ENTRY_POINTS_LOADED", False)
    monkeypatch.delitem(sys.modules, "lenswork_test_plugin_mod", raising=False)
    assert "plugin_spread" not in REGISTRY
    assert "plugin_spread" in lens_names()  # listing imports the group's modules
    rng = np.random.default_rng(301)
    X = rng.normal(size=(15, 4))
    table = compute_lenses(Workspace(X), ["plugin_spread:offset=1.5"])
    # Reference: numpy's own row range (np.ptp).
    assert_allclose(table.values()[:, 0], np.ptp(X, axis=1) + 1.5, rtol=1e-14)
    assert "lenswork_test_plugin_mod.plugin_spread" in get_lens("plugin_spread").source
    sys.modules.pop("lenswork_test_plugin_mod", None)


def test_broken_plugin_warns_and_the_library_goes_on(tmp_path, monkeypatch, registry_snapshot):
    _fake_distribution(
        tmp_path, "lenswork-broken-plugin", "broken = lenswork_broken_plugin_mod",
        "lenswork_broken_plugin_mod", "raise RuntimeError('plugin exploded')\n",
    )
    monkeypatch.syspath_prepend(str(tmp_path))
    monkeypatch.setattr(_registry, "_ENTRY_POINTS_LOADED", False)
    with pytest.warns(LensworkWarning, match=r"Could not load lens plug-in 'broken' "
                                             r"\(lenswork_broken_plugin_mod\): plugin exploded"):
        names = lens_names()
    assert "column" in names and "pca" in names
    sys.modules.pop("lenswork_broken_plugin_mod", None)


def test_public_names_exported():
    for name in ("user_lens", "data_column"):
        assert name in lenswork.__all__ and getattr(lenswork, name) is not None
