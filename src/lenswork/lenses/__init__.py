"""Lens families, the registry, and the lens columns they produce.

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

Each lens is declared once, as a :class:`LensDecl` in its family module
(``_declare``): the function's defaults and checks, the transformer's
parameters, the registry entry and both docstrings' parameter lists follow
from it. ``_registry`` holds the one mapping (validation, dispatch, listing), ``_table``
the :class:`LensColumn` / :class:`LensTable` objects the registry builds, and
``_common`` the helpers the families share. The Laplacian lens keeps its edge
weights in ``_affinity`` and its Nystrom extension and sample mode in
``_nystrom``; its eigensolver is numerical linear algebra, in
:mod:`lenswork.linalg`.

Public surface
--------------
Registry
    compute_lenses, get_lens, lens_names, lens_request, parse_lens, register_lens,
    user_lens, LensDecl, LensPart, LensSpec, Param
Lens columns
    LensColumn, LensTable, FORMATS (lens-file formats), ENDINGS (file ending -> format),
    LENS_FILE_CHECKS (what LensTable.read does with a mismatch)
Lens functions and transformers
    pca_coordinates, PCALens, distance_to_measure, DistanceToMeasure,
    knn_distance, KNNDistance, data_column, gaussian_density, GaussianDensity,
    scott_bandwidth, silverman_bandwidth, eccentricity, Eccentricity,
    geodesic_eccentricity, laplacian_eigenmaps, LaplacianLens
"""

from __future__ import annotations

from ._column import data_column, user_lens
from ._declare import LensDecl
from ._density import GaussianDensity, gaussian_density, scott_bandwidth, silverman_bandwidth
from ._dtm import DistanceToMeasure, KNNDistance, distance_to_measure, knn_distance
from ._eccentricity import Eccentricity, eccentricity, geodesic_eccentricity
from ._laplacian import LaplacianLens, laplacian_eigenmaps
from ._pca import PCALens, pca_coordinates
from ._registry import (
    LensPart,
    LensSpec,
    Param,
    get_lens,
    lens_names,
    lens_request,
    parse_lens,
    register_lens,
)
from ._table import ENDINGS, FORMATS, LENS_FILE_CHECKS, LensColumn, LensTable

__all__ = [
    "DistanceToMeasure",
    "ENDINGS",
    "Eccentricity",
    "FORMATS",
    "GaussianDensity",
    "KNNDistance",
    "LaplacianLens",
    "LENS_FILE_CHECKS",
    "LensColumn",
    "LensDecl",
    "LensPart",
    "LensSpec",
    "LensTable",
    "PCALens",
    "Param",
    "compute_lenses",
    "data_column",
    "distance_to_measure",
    "eccentricity",
    "gaussian_density",
    "geodesic_eccentricity",
    "get_lens",
    "knn_distance",
    "laplacian_eigenmaps",
    "lens_names",
    "lens_request",
    "parse_lens",
    "pca_coordinates",
    "register_lens",
    "scott_bandwidth",
    "silverman_bandwidth",
    "user_lens",
]


def compute_lenses(workspace, lenses):
    """Compute several lenses on one workspace and gather them in a LensTable.

    Parameters
    ----------
    workspace : Workspace
    lenses : list of str or (str, dict)
        Lens names, CLI-style specs (``"dtm:mass=0.05"``), lens column names as
        the screen ranks them (``"pca_2"``, ``"eccentricity[p=1]"``: that one
        column, see :func:`lens_request`) or ``(name, params)`` pairs.

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
    >>> compute_lenses(ws, ["pca_2"]).names
    ['pca_2']
    """
    columns = []
    for item in lenses:
        wanted = None
        if isinstance(item, str):
            name, params, wanted = lens_request(item)
        else:
            name, params = item
        made = get_lens(name)(workspace, **params)
        if wanted is not None:
            made = [c for c in made if c.name == wanted] or made[-1:]
        columns.extend(made)
    return LensTable(columns, workspace.cloud, random_state=workspace.random_state)
