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
    scott_bandwidth, silverman_bandwidth, eccentricity, Eccentricity, geodesic_eccentricity,
    laplacian_eigenmaps, LaplacianLens
Screening
    screen, ScreenResult, ScreenSettings, spread_score, SpreadScore, histogram_entropy,
    spearman_matrix, select_lenses, Selection, default_candidates
Structure probe, stability, bootstrap, comparison
    structure_scores, StructureProbe, feature_counts, stability_map, StabilityMap,
    bootstrap_graph, BootstrapResult, suggest_cover, CoverSuggestion, compare_views,
    ViewComparison, node_correspondence, induced_partition, adjusted_rand_index,
    variation_of_information, contingency_table
Graphs
    build_graph, GraphSettings, Cover, IntervalCover, BallCover, LensGraph, GraphSummary,
    read_graph_json
Which columns set a feature apart
    contrast_columns, ContrastResult, ColumnContrast, benjamini_hochberg, node_column_values
The report page
    write_report
Errors
    LensworkError, InputError, ParameterError, OutputError, LensworkWarning
"""

from __future__ import annotations

from ._errors import InputError, LensworkError, LensworkWarning, OutputError, ParameterError
from ._version import __version__
from .bootstrap import BootstrapResult, CoverSuggestion, bootstrap_graph, suggest_cover
from .compare import (
    ViewComparison,
    adjusted_rand_index,
    compare_views,
    contingency_table,
    induced_partition,
    node_correspondence,
    variation_of_information,
)
from .contrast import (
    ColumnContrast,
    ContrastResult,
    benjamini_hochberg,
    contrast_columns,
    node_column_values,
)
from .data import ExcludedRow, PointCloud, load_table
from .graph import (
    BallCover,
    Cover,
    GraphSettings,
    GraphSummary,
    IntervalCover,
    LensGraph,
    build_graph,
    read_graph_json,
)
from .lenses import (
    DistanceToMeasure,
    Eccentricity,
    GaussianDensity,
    KNNDistance,
    LaplacianLens,
    LensColumn,
    LensTable,
    PCALens,
    compute_lenses,
    data_column,
    distance_to_measure,
    eccentricity,
    gaussian_density,
    geodesic_eccentricity,
    get_lens,
    knn_distance,
    laplacian_eigenmaps,
    lens_names,
    parse_lens,
    pca_coordinates,
    register_lens,
    scott_bandwidth,
    silverman_bandwidth,
    user_lens,
)
from .normalize import normalize
from .probe import StructureProbe, feature_counts, structure_scores
from .report import write_report
from .screen import (
    ScreenResult,
    ScreenSettings,
    Selection,
    SpreadScore,
    default_candidates,
    histogram_entropy,
    screen,
    select_lenses,
    spearman_matrix,
    spread_score,
)
from .stability import StabilityMap, stability_map
from .workspace import NeighborGraph, Workspace, neighbor_graph

__all__ = [
    "BallCover",
    "BootstrapResult",
    "ColumnContrast",
    "ContrastResult",
    "Cover",
    "CoverSuggestion",
    "DistanceToMeasure",
    "Eccentricity",
    "ExcludedRow",
    "GaussianDensity",
    "GraphSettings",
    "GraphSummary",
    "InputError",
    "IntervalCover",
    "KNNDistance",
    "LaplacianLens",
    "LensColumn",
    "LensGraph",
    "LensTable",
    "LensworkError",
    "LensworkWarning",
    "NeighborGraph",
    "OutputError",
    "PCALens",
    "ParameterError",
    "PointCloud",
    "ScreenResult",
    "ScreenSettings",
    "Selection",
    "SpreadScore",
    "StabilityMap",
    "StructureProbe",
    "ViewComparison",
    "Workspace",
    "__version__",
    "adjusted_rand_index",
    "benjamini_hochberg",
    "bootstrap_graph",
    "build_graph",
    "compare_views",
    "compute_lenses",
    "contingency_table",
    "contrast_columns",
    "data_column",
    "default_candidates",
    "distance_to_measure",
    "eccentricity",
    "feature_counts",
    "gaussian_density",
    "geodesic_eccentricity",
    "get_lens",
    "histogram_entropy",
    "induced_partition",
    "knn_distance",
    "laplacian_eigenmaps",
    "lens_names",
    "load_table",
    "neighbor_graph",
    "node_column_values",
    "node_correspondence",
    "normalize",
    "parse_lens",
    "pca_coordinates",
    "read_graph_json",
    "register_lens",
    "scott_bandwidth",
    "screen",
    "select_lenses",
    "silverman_bandwidth",
    "spearman_matrix",
    "spread_score",
    "stability_map",
    "structure_scores",
    "suggest_cover",
    "user_lens",
    "variation_of_information",
    "write_report",
]
