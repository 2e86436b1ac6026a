"""lenswork: choose, compute, screen and use lens functions for Mapper-style graphs.

Public surface
--------------
Data and shared pieces
    PointCloud, load_table, Workspace, NeighborGraph, neighbor_graph
Lenses
    compute_lenses, get_lens, lens_names, parse_lens, register_lens, user_lens,
    LensColumn, LensTable, normalize
Errors
    LensworkError, InputError, ParameterError, LensworkWarning
"""

from __future__ import annotations

__version__ = "0.1.0"

from ._errors import InputError, LensworkError, LensworkWarning, ParameterError
from .data import ExcludedRow, PointCloud
from .lenses import compute_lenses, get_lens, lens_names, parse_lens, register_lens
from .normalize import normalize
from .table import LensColumn, LensTable
from .workspace import NeighborGraph, Workspace, neighbor_graph

__all__ = [
    "ExcludedRow",
    "InputError",
    "LensColumn",
    "LensTable",
    "LensworkError",
    "LensworkWarning",
    "NeighborGraph",
    "ParameterError",
    "PointCloud",
    "Workspace",
    "__version__",
    "compute_lenses",
    "get_lens",
    "lens_names",
    "neighbor_graph",
    "normalize",
    "parse_lens",
    "register_lens",
]
