"""lenswork: choose, compute, screen and use lens functions for Mapper-style graphs.

Public surface
--------------
Data and shared pieces
    PointCloud, load_table, Workspace, NeighborGraph, neighbor_graph
Lenses
    compute_lenses, get_lens, lens_names, parse_lens, register_lens, user_lens,
    LensColumn, LensTable, normalize
Lens functions and transformers
    pca_coordinates, PCALens, distance_to_measure, DistanceToMeasure,
    knn_distance, KNNDistance, data_column, gaussian_density, GaussianDensity,
    scott_bandwidth, silverman_bandwidth, eccentricity, Eccentricity, geodesic_eccentricity
Screening
    screen, ScreenResult, spread_score, SpreadScore, histogram_entropy, spearman_matrix,
    select_lenses, Selection, default_candidates
Errors
    LensworkError, InputError, ParameterError, LensworkWarning
"""

from __future__ import annotations

__version__ = "0.1.0"

from ._errors import InputError, LensworkError, LensworkWarning, ParameterError
from .data import ExcludedRow, PointCloud, load_table
from .lenses import compute_lenses, get_lens, lens_names, parse_lens, register_lens
from .lenses._column import data_column, user_lens
from .lenses._density import (
    GaussianDensity,
    gaussian_density,
    scott_bandwidth,
    silverman_bandwidth,
)
from .lenses._dtm import DistanceToMeasure, KNNDistance, distance_to_measure, knn_distance
from .lenses._eccentricity import Eccentricity, eccentricity, geodesic_eccentricity
from .lenses._pca import PCALens, pca_coordinates
from .normalize import normalize
from .screen import (
    ScreenResult,
    Selection,
    SpreadScore,
    default_candidates,
    histogram_entropy,
    screen,
    select_lenses,
    spearman_matrix,
    spread_score,
)
from .table import LensColumn, LensTable
from .workspace import NeighborGraph, Workspace, neighbor_graph

__all__ = [
    "DistanceToMeasure",
    "Eccentricity",
    "ExcludedRow",
    "GaussianDensity",
    "InputError",
    "KNNDistance",
    "LensColumn",
    "LensTable",
    "LensworkError",
    "LensworkWarning",
    "NeighborGraph",
    "PCALens",
    "ParameterError",
    "PointCloud",
    "ScreenResult",
    "Selection",
    "SpreadScore",
    "Workspace",
    "__version__",
    "compute_lenses",
    "data_column",
    "default_candidates",
    "distance_to_measure",
    "eccentricity",
    "gaussian_density",
    "geodesic_eccentricity",
    "get_lens",
    "histogram_entropy",
    "knn_distance",
    "lens_names",
    "load_table",
    "neighbor_graph",
    "normalize",
    "parse_lens",
    "pca_coordinates",
    "register_lens",
    "scott_bandwidth",
    "screen",
    "select_lenses",
    "silverman_bandwidth",
    "spearman_matrix",
    "spread_score",
    "user_lens",
]
