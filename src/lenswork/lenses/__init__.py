"""Lens families and the registry.

Each family lives in its own module and registers itself on import:

=================  ====================================================
module             lenses
=================  ====================================================
``_density``       ``density`` (Gaussian kernel density, log by default)
``_eccentricity``  ``eccentricity``, ``geodesic_eccentricity``
``_laplacian``     ``laplacian`` (graph-Laplacian eigenvectors)
``_pca``           ``pca`` (principal coordinates)
``_dtm``           ``dtm`` (distance to a measure), ``knn_distance``
``_column``        ``column`` (any data column); :func:`user_lens` for callables
=================  ====================================================
"""

from __future__ import annotations

from ..table import LensTable
from . import _column, _density, _dtm, _eccentricity, _laplacian, _pca  # noqa: F401  (register)
from ._registry import LensPart, LensSpec, Param, get_lens, lens_names, parse_lens, register_lens

__all__ = [
    "LensPart",
    "LensSpec",
    "Param",
    "compute_lenses",
    "get_lens",
    "lens_names",
    "parse_lens",
    "register_lens",
]


def compute_lenses(workspace, lenses):
    """Compute several lenses on one workspace and gather them in a LensTable.

    Parameters
    ----------
    workspace : Workspace
    lenses : list of str or (str, dict)
        Lens names, CLI-style specs (``"dtm:mass=0.05"``) or ``(name, params)`` pairs.

    Returns
    -------
    LensTable

    Examples
    --------
    >>> import numpy as np
    >>> from lenswork import Workspace
    >>> ws = Workspace(np.random.default_rng(0).normal(size=(300, 3)))
    >>> compute_lenses(ws, ["pca:components=2", "eccentricity"]).names
    ['pca_1', 'pca_2', 'eccentricity']
    """
    columns = []
    for item in lenses:
        if isinstance(item, str):
            name, params = parse_lens(item)
        else:
            name, params = item
        columns.extend(get_lens(name)(workspace, **params))
    return LensTable(columns, workspace.cloud, random_state=workspace.random_state)
