"""The demo scenario: generated data equals the bundled CSV; built-in structure is there."""

from pathlib import Path

import numpy as np
from click.testing import CliRunner

from lenswork.cli import cli
from lenswork.demo import demo_arrays, demo_csv_text

DATA = Path(__file__).resolve().parents[1] / "data" / "pump_stations.csv"


def test_bundled_csv_equals_generator():
    assert DATA.read_text(encoding="utf-8") == demo_csv_text()


def test_same_seed_same_data_other_seed_differs():
    a, b, c = demo_arrays(), demo_arrays(), demo_arrays(seed=1)
    assert np.array_equal(a[1], b[1])
    assert not np.array_equal(a[1], c[1])


def test_demo_shape_and_labels(demo_cloud):
    assert demo_cloud.X.shape == (3000, 12)
    assert 8 <= demo_cloud.d <= 20
    assert set(demo_cloud.passthrough) == {"state"}
    assert len(set(demo_cloud.ids)) == 3000
    assert demo_cloud.provenance["scaling"]["method"] == "zscore"


def test_standby_core_is_denser_than_the_rest(demo_cloud):
    # The dense core: mean distance to the 10th neighbour is much smaller for standby rows.
    from lenswork import neighbor_graph

    g = neighbor_graph(demo_cloud.X, k=10)
    state = np.asarray(demo_cloud.passthrough["state"])
    kth = g.distances[:, -1]
    assert np.median(kth[state == "standby"]) < 0.5 * np.median(kth[state == "running"])


def test_running_rows_form_a_loop(demo_cloud):
    # The loop: in the first two principal coordinates the running rows surround
    # an empty centre (no running row near the centroid of the ring).
    state = np.asarray(demo_cloud.passthrough["state"])
    Z = demo_cloud.X[state == "running"]
    Z = Z - Z.mean(axis=0)
    _, _, vt = np.linalg.svd(Z, full_matrices=False)
    P = Z @ vt[:2].T
    r = np.hypot(*(P / P.std(axis=0)).T)
    assert np.quantile(r, 0.01) > 0.4 * np.median(r)


def test_make_demo_command(tmp_path):
    out = tmp_path / "demo.csv"
    result = CliRunner().invoke(cli, ["make-demo", str(out)])
    assert result.exit_code == 0, result.output
    assert out.read_text(encoding="utf-8") == demo_csv_text()
