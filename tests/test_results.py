"""Every result object speaks one protocol: text, to_dict, to_frame, write(folder), plot.

The protocol (DEVELOPERS.md, "Result objects") is checked two ways: each method
is defined in the class body of the result class (or of a lenswork base class
in its MRO), so reading the class shows what it can do; and each runs on a
small result. ``to_dict`` must survive a strict JSON writer and reader (RFC
8259: no NaN or Infinity), ``write`` must write into a folder it creates.
"""

import inspect
import json

import matplotlib
import numpy as np
import pytest
from _strict_json import strict_loads

import lenswork as lw
from lenswork._json import dumps

matplotlib.use("Agg")

PROTOCOL = ("text", "to_dict", "to_frame", "write", "plot")
RESULTS = [lw.LensGraph, lw.GraphSummary, lw.ContrastResult, lw.ViewComparison,
           lw.BootstrapResult, lw.StabilityMap]


@pytest.mark.parametrize("cls", RESULTS, ids=lambda c: c.__name__)
@pytest.mark.parametrize("method", PROTOCOL)
def test_protocol_method_is_defined_in_the_class_body(cls, method):
    owner = next((k for k in cls.__mro__ if method in vars(k)), None)
    assert owner is not None and owner.__module__.startswith("lenswork"), (cls, method)
    fn = vars(owner)[method]
    # defined in the class body, not attached from outside at import time: its qualified
    # name is <Class>.<method> and its source lies inside the class's source
    assert fn.__qualname__ == f"{owner.__name__}.{method}", fn.__qualname__
    assert inspect.getsourcefile(fn) == inspect.getsourcefile(owner)
    assert fn.__doc__, (cls, method)


@pytest.fixture(scope="module")
def results():
    # a noisy circle (common practice: the shape with one loop); 240 rows keep it fast
    rng = np.random.default_rng(20)
    t = rng.uniform(0, 2 * np.pi, 240)
    X = np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, 0.03, (240, 2))
    cloud = lw.PointCloud.from_array(
        X, feature_names=["x", "y"],
        passthrough={"side": np.where(X[:, 0] > 0, "east", "west").astype(object)})
    ws = lw.Workspace(cloud, random_state=0)
    lens = lw.LensColumn("x", X[:, 0])
    graph = lw.build_graph(lens, ws, intervals=8, overlap=0.3, min_size=3)
    return {
        "LensGraph": graph,
        "GraphSummary": graph.summary(),
        "ContrastResult": lw.contrast_columns(graph, ws, nodes=[0, 1]),
        "ViewComparison": lw.compare_views({"x": X[:, 0], "y": X[:, 1]}, ws, intervals=8,
                                           min_size=3),
        "BootstrapResult": lw.bootstrap_graph(lens, ws, resamples=3, intervals=8,
                                              min_size=3, random_state=0),
        "StabilityMap": lw.stability_map(lens, ws, interval_counts=(6, 8), overlaps=(0.3,),
                                         min_size=3),
    }


@pytest.mark.parametrize("cls", RESULTS, ids=lambda c: c.__name__)
def test_protocol_runs(cls, results, tmp_path):
    res = results[cls.__name__]
    assert isinstance(res, cls)
    text = res.text()
    assert isinstance(text, str) and text.strip()
    doc = res.to_dict()
    assert isinstance(doc, dict) and doc
    assert strict_loads(dumps(doc)) == json.loads(dumps(doc))
    pytest.importorskip("pandas")
    frame = res.to_frame()
    assert len(frame) > 0
    folder = tmp_path / cls.__name__ / "out"  # a folder that does not exist yet
    written = res.write(folder, figures=False)
    paths = list(written.values()) if isinstance(written, dict) else list(written)
    assert paths and all(p.exists() and p.parent == folder for p in map(_path, paths))


def _path(p):
    from pathlib import Path

    return Path(p)


@pytest.mark.parametrize("cls", RESULTS, ids=lambda c: c.__name__)
def test_plot_gives_a_figure(cls, results):
    from matplotlib.figure import Figure

    fig = results[cls.__name__].plot()
    assert isinstance(fig, Figure)
    import matplotlib.pyplot as plt

    plt.close(fig)


def test_column_plot_draws_the_values_it_is_handed(results):
    # the plot computes nothing when the caller hands it the node values: no data at all
    import matplotlib.pyplot as plt

    from lenswork.plot import column_multiples

    graph = results["LensGraph"]
    vals = np.arange(graph.n_nodes, dtype=float)
    fig = column_multiples(graph, None, ["made up"], values={"made up": (vals, "given label")})
    labels = [ax.get_ylabel() for ax in fig.axes]
    assert "given label" in labels
    mapped = [c for ax in fig.axes for c in ax.collections if c.get_array() is not None]
    assert any(np.array_equal(np.sort(np.asarray(c.get_array())), vals) for c in mapped)
    plt.close(fig)
