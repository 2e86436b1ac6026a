"""Numerical linear algebra for graph Laplacians (no lenses, no data objects).

=================  ====================================================
module             what it holds
=================  ====================================================
``_lobpcg``        :func:`block_lobpcg` (block LOBPCG with constraints),
                   :func:`svqb_basis`, :func:`symmetric_part`
``_multigrid``     :func:`graph_hierarchy` (aggregation coarsening),
                   :class:`AggregationPreconditioner` (one V-cycle)
``_graph_eigs``    :func:`laplacian_eigs` (per component: dense below 1,000
                   vertices, else multilevel-started, preconditioned LOBPCG),
                   :func:`component_eigenvalues`, :func:`one_blas_thread`
=================  ====================================================

This layer sits above the foundation and below :mod:`lenswork.workspace`; the
Laplacian lens (:mod:`lenswork.lenses._laplacian`) and its weights
(:mod:`lenswork.lenses._affinity`) call it.
"""

from __future__ import annotations

from ._graph_eigs import component_eigenvalues, laplacian_eigs, one_blas_thread, symmetric_operator
from ._lobpcg import block_lobpcg, svqb_basis, symmetric_part
from ._multigrid import AggregationPreconditioner, graph_hierarchy

__all__ = [
    "AggregationPreconditioner",
    "block_lobpcg",
    "component_eigenvalues",
    "graph_hierarchy",
    "laplacian_eigs",
    "one_blas_thread",
    "svqb_basis",
    "symmetric_operator",
    "symmetric_part",
]
