"""lenswork on partitions: lens columns and graphs of data too large for one machine, on Dask.

Needs the ``dask`` extra (``pip install lenswork[dask]``). The work runs on
whatever Dask scheduler is active: a ``distributed.Client`` connected to a
cluster (see :func:`start_client`), or Dask's local threads.

Public surface
--------------
Intake
    open_partitioned, PartitionedCloud, sample_cloud, sample_positions
Lenses
    partitioned_lenses, PartitionedLenses, PARTITIONED_LENSES
Graph
    partitioned_graph, cluster_element, element_ranges
Cluster
    start_client, p2p_buffers, active_client, gather_each

=============  ======================================================
module         concept
=============  ======================================================
``_intake``    partitions, validation by partition, tree reduction
``_sample``    a seeded uniform sample across partitions
``_lenses``    exact and landmark-based lens columns, Parquet output
``_graph``     routing to cover elements, per-element clustering, nerve
``_client``    connecting to a scheduler or starting a local cluster
=============  ======================================================
"""

from __future__ import annotations

from ._client import active_client, gather_each, p2p_buffers, start_client
from ._graph import cluster_element, element_ranges, partitioned_graph
from ._intake import PartitionedCloud, open_partitioned
from ._lenses import PARTITIONED_LENSES, PartitionedLenses, partitioned_lenses
from ._sample import sample_cloud, sample_positions

__all__ = [
    "PARTITIONED_LENSES",
    "PartitionedCloud",
    "PartitionedLenses",
    "active_client",
    "cluster_element",
    "element_ranges",
    "gather_each",
    "open_partitioned",
    "partitioned_graph",
    "p2p_buffers",
    "partitioned_lenses",
    "sample_cloud",
    "sample_positions",
    "start_client",
]
