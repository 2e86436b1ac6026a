"""Mapper-style graphs (Mapper, 2007) over lens columns, on the shared neighbour graph.

Public surface
--------------
Building
    build_graph, GraphSettings, grid_settings, neighbor_cutoff, node_statistics
Covers (one table, :data:`COVERS`)
    CoverBase, Cover (= IntervalCover), BallCover
The graph
    LensGraph, GraphNode, GraphEdge, GraphSummary, GraphFeature, graph_layout, auto_layout
Nerve
    membership_matrix, nerve_edges, nerve_triangles
Files (:mod:`lenswork.graph.io`)
    write_graphml, write_graph_json, read_graph_json, write_memberships, read_lens_file

===================  ==========================================================
module               concept
===================  ==========================================================
``_settings``        GraphSettings: every build setting, validated once
``_cover``           the cover interface, the interval product cover, the ball cover
``_cluster``         clusters of each cover element: the rule table, the element loop
``_cluster_*``       one module per clustering rule family, the rule interface
``_cutoff``          the edge-length cut-off rules
``_fragments``       groups below min_size attached to a kept cluster nearby
``_nerve``           membership matrix, edges from ``M^T M``, triangles
``_lensgraph``       the LensGraph object
``_persistence``     extended persistence diagrams of a function on a graph
``_thresholds``      the cover's significance rule, a lens's diagram on a graph
``_trunks``          the branches that hold a component's extremes
``_summary``         components, loops, branch points, flares (GraphSummary)
``_feature_list``    the features of a graph (GraphFeature)
``_layout``          level, lens, spring and spectral layouts
``_build``           build_graph: cover -> clusters -> nerve
``io``               GraphML, JSON, memberships CSV
===================  ==========================================================
"""

from __future__ import annotations

from ._build import build_graph, hole_scale_settings, node_jitter, node_statistics
from ._cluster import CLUSTERERS
from ._cover import COVER_SCALES, COVERS, BallCover, Cover, CoverBase, IntervalCover
from ._cutoff import CUTOFF_WORDS, neighbor_cutoff
from ._feature_list import GraphFeature
from ._fragments import FRAGMENT_RULES
from ._layout import LAYOUTS, auto_layout, graph_layout
from ._lensgraph import GraphEdge, GraphNode, LensGraph
from ._nerve import membership_matrix, nerve_edges, nerve_triangles
from ._read import read_graph_json
from ._settings import GraphSettings, grid_settings
from ._summary import GraphSummary
from .io import (
    read_lens_file,
    write_graph_json,
    write_graphml,
    write_memberships,
)

__all__ = [
    "CLUSTERERS",
    "COVERS",
    "COVER_SCALES",
    "CUTOFF_WORDS",
    "FRAGMENT_RULES",
    "LAYOUTS",
    "BallCover",
    "Cover",
    "CoverBase",
    "GraphEdge",
    "GraphFeature",
    "GraphNode",
    "GraphSettings",
    "GraphSummary",
    "IntervalCover",
    "LensGraph",
    "auto_layout",
    "build_graph",
    "graph_layout",
    "grid_settings",
    "hole_scale_settings",
    "membership_matrix",
    "neighbor_cutoff",
    "nerve_edges",
    "nerve_triangles",
    "node_jitter",
    "node_statistics",
    "read_graph_json",
    "read_lens_file",
    "write_graph_json",
    "write_graphml",
    "write_memberships",
]
