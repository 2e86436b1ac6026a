"""Shared fixtures. pynndescent compiles with numba on its first call in a
process (40-55 s), so every test that needs the approximate path uses the one
session-scoped fixture below and pays that cost once."""

import numpy as np
import pytest


@pytest.fixture(scope="session")
def pynndescent_ready():
    """Compile pynndescent once per test session (a tiny approximate build)."""
    from lenswork import neighbor_graph

    X = np.random.default_rng(0).normal(size=(300, 5))
    neighbor_graph(X, k=5, method="approximate", random_state=0)
    return True


@pytest.fixture(scope="session")
def demo_cloud():
    """The bundled demo data as a PointCloud (z-scored, as the CLI's --demo)."""
    from lenswork.demo import load_demo

    return load_demo()
