"""The Workspace: one place for the shared, expensive pieces of a point cloud.

Every lens and the graph builder ask the workspace for what they need (the
k-nearest-neighbour graph, the column means, the PCA basis...), and the
workspace computes each piece once and caches it. The neighbour graph is the
most expensive piece and the most shared: distance to a measure, k-NN
distance, the scalable density, the Laplacian lenses and the clustering step
all read the same :class:`NeighborGraph`.
"""

from __future__ import annotations

from contextlib import contextmanager
from dataclasses import dataclass, field

import numpy as np

from . import _progress
from ._errors import InputError, ParameterError, warn_caller
from ._validation import check_choice, check_int, seed_of
from .data import PointCloud

__all__ = ["DuplicateRows", "GraphPieces", "NeighborGraph", "Workspace", "neighbor_graph"]

#: Metrics both back ends (scikit-learn and pynndescent) support under these names.
METRICS = ("euclidean", "manhattan", "chebyshev", "cosine")

# Crossover between exact scikit-learn and pynndescent, measured on this
# project's reference machine (2 cores) by tests/benchmarks/bench_neighbors.py;
# see DEVELOPERS.md, "Neighbour graph: exact or approximate".
EXACT_MAX_ROWS = 50_000  # any d: exact below this many rows
EXACT_MAX_DIM_TREE = 6  # d <= this: kd-tree, exact at any n
# pynndescent build settings tuned for recall: building with more neighbours than asked and
# keeping the first k is what lifts recall (k=15 on 1e5 x 20 Gaussian: build 16 -> 0.88,
# 20 -> 0.94, 24 -> 0.97, 30 -> 0.99; measured by tests/benchmarks/bench_neighbors.py).
_NND_MIN_BUILD_K = 24


@dataclass(frozen=True, eq=False)
class NeighborGraph:
    """The k nearest neighbours of every row, self excluded, sorted by distance.

    Attributes
    ----------
    indices : ndarray of shape (n_samples, k), int64
    distances : ndarray of shape (n_samples, k), float64, ascending along each row
    k : int
    metric : str
    method : {"exact", "approximate", "hnsw"}
    info : dict
        Back-end details (algorithm, build settings, seconds, recall when measured).

    Examples
    --------
    >>> X = np.arange(10.0)[:, None]
    >>> g = neighbor_graph(X, k=2)
    >>> g.indices[0].tolist(), g.distances[0].tolist()
    ([1, 2], [1.0, 2.0])
    """

    indices: np.ndarray
    distances: np.ndarray
    k: int
    metric: str
    method: str
    info: dict = field(default_factory=dict)

    @property
    def n(self):
        """Number of rows."""
        return self.indices.shape[0]

    def first(self, k):
        """The graph restricted to the first ``k`` neighbours of each row."""
        k = check_int("k", k, lo=1, hi=self.k, context="NeighborGraph.first")
        if k == self.k:
            return self
        return NeighborGraph(
            self.indices[:, :k].copy(), self.distances[:, :k].copy(), k, self.metric,
            self.method, dict(self.info, sliced_from=self.k),
        )

    def to_sparse(self, values=None, *, symmetric=True):
        """Edges as a sparse (n, n) CSR matrix; ``symmetric`` keeps an edge either end has.

        ``values`` (shape (n, k)) replaces the distances as edge values, e.g. kernel weights.
        """
        return knn_matrix(self.indices, self.distances if values is None else values,
                          symmetric=symmetric)

    def recall(self, X, sample=1000, random_state=0):
        """Share of true k nearest neighbours found, on a random sample of rows.

        A found neighbour counts as correct when its distance is within the true
        k-th distance (so ties do not count as misses). Exact graphs return 1.0.
        """
        if self.method == "exact":
            return 1.0
        rng = np.random.default_rng(random_state)
        n = self.n
        rows = rng.choice(n, size=min(sample, n), replace=False)
        true_kth = _exact_kth_distance(np.asarray(X, dtype=np.float64), rows, self.k, self.metric)
        hits = self.distances[rows] <= true_kth[:, None] * (1 + 1e-9) + 1e-12
        return float(hits.mean())


@dataclass(frozen=True, eq=False)
class DuplicateRows:
    """Exact duplicate rows of a table, collapsed into weighted distinct points.

    Attributes
    ----------
    inverse : ndarray of shape (n_rows,), int64
        The distinct point of each row (points numbered by their first row).
    first : ndarray of shape (n_points,), int64
        The first row of each distinct point, ascending.
    counts : ndarray of shape (n_points,), int64
        Rows on each point (its weight, or multiplicity).

    Examples
    --------
    >>> dup = DuplicateRows.of(np.array([[0.0, 1], [2, 3], [0, 1], [0, 1]]))
    >>> dup.inverse.tolist(), dup.counts.tolist(), dup.describe()
    ([0, 1, 0, 0], [3, 1], '2 duplicate rows collapsed into 1 point (4 rows on 2 distinct points)')
    """

    inverse: np.ndarray
    first: np.ndarray
    counts: np.ndarray

    @classmethod
    def of(cls, X):
        """Find the exact duplicates among the rows of ``X`` (``-0.0`` equals ``0.0``).

        One sort of the rows' bytes, O(n d log n).
        """
        X = np.asarray(X, dtype=np.float64)
        n = X.shape[0]
        if n == 0:
            empty = np.zeros(0, dtype=np.int64)
            return cls(empty, empty, empty)
        # Rows with distinct projections on a fixed direction are distinct: one O(n d) product
        # and a sort of n floats settle the common case (no duplicates; 1e6 x 20: the byte
        # sort below took 2.2 s on the reference machine). No copy of X is made for it.
        proj = np.sort(X @ np.random.default_rng(0).normal(size=X.shape[1]))
        if n < 2 or np.all(proj[1:] != proj[:-1]):
            rows = np.arange(n, dtype=np.int64)
            return cls(rows, rows.copy(), np.ones(n, dtype=np.int64))
        X = np.ascontiguousarray(X + 0.0)  # -0.0 -> 0.0 before the rows' bytes are compared
        keys = X.view(np.dtype((np.void, X.dtype.itemsize * X.shape[1]))).ravel()
        _, first, inverse, counts = np.unique(keys, return_index=True, return_inverse=True,
                                              return_counts=True)
        order = np.argsort(first, kind="stable")  # number points by their first row
        rank = np.empty_like(order)
        rank[order] = np.arange(order.size)
        return cls(rank[np.ravel(inverse)].astype(np.int64), first[order].astype(np.int64),
                   counts[order].astype(np.int64))

    @property
    def n_rows(self):
        return int(self.inverse.size)

    @property
    def n_points(self):
        """Distinct points."""
        return int(self.first.size)

    @property
    def n_duplicate_rows(self):
        """Rows that repeat an earlier row: ``n_rows - n_points``."""
        return self.n_rows - self.n_points

    @property
    def collapsed_points(self):
        """Distinct points that stand for two or more rows."""
        return int(np.count_nonzero(self.counts > 1))

    def describe(self):
        """One sentence for reports ("" when no row repeats)."""
        if not self.n_duplicate_rows:
            return ""
        p = self.collapsed_points
        return (f"{self.n_duplicate_rows} duplicate rows collapsed into {p} "
                f"point{'s' if p != 1 else ''} ({self.n_rows} rows on {self.n_points} "
                f"distinct points)")

    def to_dict(self):
        """JSON-ready summary (counts only, no per-row arrays)."""
        return {"rows": self.n_rows, "distinct_points": self.n_points,
                "duplicate_rows": self.n_duplicate_rows,
                "collapsed_points": self.collapsed_points,
                "largest_group": int(self.counts.max()) if self.counts.size else 0}

    def groups(self):
        """``(order, start)``: rows sorted by point, and where each point's rows begin."""
        order = np.argsort(self.inverse, kind="stable")
        start = np.concatenate([[0], np.cumsum(self.counts)[:-1]]).astype(np.int64)
        return order, start


@dataclass(frozen=True)
class GraphPieces:
    """Connected pieces of the symmetric k-NN graph.

    Attributes
    ----------
    k : int
    sizes : tuple of int
        Rows in each piece, largest first.
    labels : ndarray of shape (n_rows,)
        The piece of each row (0 = the largest).

    Examples
    --------
    >>> X = np.r_[np.arange(10.0), 100 + np.arange(5.0)][:, None]
    >>> p = Workspace(X).pieces(k=2)
    >>> p.count, p.sizes, p.describe()
    (2, (10, 5), 'the 2-NN graph falls into 2 pieces (sizes 10, 5)')
    """

    k: int
    sizes: tuple
    labels: np.ndarray = field(repr=False, compare=False)

    @property
    def count(self):
        return len(self.sizes)

    def describe(self):
        """One sentence for warnings and reports ("" for a connected graph)."""
        if self.count <= 1:
            return ""
        shown = ", ".join(str(s) for s in self.sizes[:5]) + (", ..." if self.count > 5 else "")
        return f"the {self.k}-NN graph falls into {self.count} pieces (sizes {shown})"

    def to_dict(self):
        return {"k": self.k, "pieces": self.count, "sizes": list(self.sizes[:10])}


def knn_matrix(indices, values, keep=None, *, symmetric=True):
    """Sparse (n, n) CSR matrix of k-NN edges ``i -> indices[i, j]`` carrying ``values[i, j]``.

    ``keep`` (bool, shape (n, k)) leaves edges out; ``symmetric`` takes the
    elementwise maximum with the transpose, so an edge either end lists is kept.
    """
    import scipy.sparse as sp

    n = indices.shape[0]
    rows = np.broadcast_to(np.arange(n)[:, None], indices.shape)
    if keep is None:
        data, r, c = np.ravel(values), rows.ravel(), indices.ravel()
    else:
        data, r, c = values[keep], rows[keep], indices[keep]
    A = sp.csr_matrix((data, (r, c)), shape=(n, n))
    return A.maximum(A.T).tocsr() if symmetric else A


def _exact_kth_distance(X, rows, k, metric):
    """Brute-force k-th neighbour distance (self excluded) for the given rows."""
    from sklearn.metrics import pairwise_distances

    out = np.empty(len(rows))
    for start in range(0, len(rows), 256):
        block = rows[start:start + 256]
        D = pairwise_distances(X[block], X, metric=metric)
        D[np.arange(len(block)), block] = np.inf
        out[start:start + 256] = np.partition(D, k - 1, axis=1)[:, k - 1]
    return out


def _exact_distances(X, idx, metric, chunk=8192):
    """float64 distances from each row to its listed neighbours, rows re-sorted ascending."""
    from sklearn.metrics.pairwise import paired_distances

    n, k = idx.shape
    dist = np.empty((n, k))
    for start in range(0, n, chunk):
        rows = np.arange(start, min(start + chunk, n))
        a = np.repeat(rows, k)
        b = idx[rows].ravel()
        dist[rows] = paired_distances(X[a], X[b], metric=metric).reshape(len(rows), k)
    order = np.argsort(dist, axis=1, kind="stable")
    return (np.ascontiguousarray(np.take_along_axis(idx, order, axis=1)),
            np.ascontiguousarray(np.take_along_axis(dist, order, axis=1)))


def _drop_self(indices, distances, k, own=None):
    """Remove each row's own index from (n, k+1) results, keeping k columns.

    ``own`` : the row position of each result row (default ``0..n-1``).
    """
    n = indices.shape[0]
    own = np.arange(n) if own is None else np.asarray(own)
    is_self = indices == own[:, None]
    # Rows where self was not returned (many exact duplicates): drop the last column.
    missing = ~is_self.any(axis=1)
    is_self[missing, -1] = True
    # A row could list itself twice only with broken input; keep the first occurrence.
    first = np.argmax(is_self, axis=1)
    keep = np.ones_like(is_self)
    keep[np.arange(n), first] = False
    idx = indices[keep].reshape(n, k)
    dist = distances[keep].reshape(n, k)
    return np.ascontiguousarray(idx, dtype=np.int64), np.ascontiguousarray(dist, dtype=np.float64)


def _choose_method(n, d, metric):
    if n <= EXACT_MAX_ROWS:
        return "exact"
    if d <= EXACT_MAX_DIM_TREE and metric in ("euclidean", "manhattan", "chebyshev"):
        return "exact"
    return "approximate"


# ---------------------------------------------------------------- back ends
# Each back end: (X float64 C-contiguous, k, metric, seed) -> (indices, distances, info) with
# k + 1 columns per row, the row itself usually first; neighbor_graph drops self and, for the
# float32 back ends, recomputes the distances in float64.


def exact_algorithm(d, metric):
    """scikit-learn's algorithm for an exact search in ``d`` dimensions: kd-tree or brute force.

    Examples
    --------
    >>> [exact_algorithm(d, m) for d, m in [(3, "euclidean"), (20, "euclidean"), (3, "cosine")]]
    ['kd_tree', 'brute', 'brute']
    """
    return "kd_tree" if (d <= EXACT_MAX_DIM_TREE and metric != "cosine") else "brute"


def _exact_backend(X, k, metric, seed):
    from sklearn.neighbors import NearestNeighbors

    n, d = X.shape
    algorithm = exact_algorithm(d, metric)
    with _progress.step(f"neighbour graph: exact {algorithm}, n={n}, k={k}"):
        nn = NearestNeighbors(n_neighbors=k + 1, metric=metric, algorithm=algorithm)
        nn.fit(X)
        dist, idx = nn.kneighbors(X)
    return idx, dist, {"backend": "scikit-learn", "algorithm": algorithm}


def _pynndescent_backend(X, k, metric, seed):
    import pynndescent

    n = X.shape[0]
    build_k = max(k + 1, _NND_MIN_BUILD_K)
    # The descent splits its candidate updates into one block per numba thread, and the
    # blocks decide which candidates survive: 1 and 2 threads give different graphs (about
    # half the rows of 20,000 x 30 differ). The descent therefore runs on DESCENT_THREADS
    # numba threads whatever the machine has; the random-projection forest (one seeded tree
    # per job, joblib threads) stays parallel.
    step = f"neighbour graph: pynndescent, n={n}, k={k} (first call in a process compiles, ~50 s)"
    with _progress.step(step), _numba_threads(DESCENT_THREADS):
        index = pynndescent.NNDescent(
            X, n_neighbors=build_k, metric=metric, random_state=seed,
            low_memory=True, compressed=False, n_jobs=-1, verbose=False,
        )
        idx, dist = index.neighbor_graph
    return (idx[:, : k + 1], dist[:, : k + 1],
            {"backend": "pynndescent", "build_k": build_k, "random_state": seed,
             "descent_threads": DESCENT_THREADS})


#: numba threads for pynndescent's descent: a constant, so the graph does not depend on
#: NUMBA_NUM_THREADS or the core count (1 is the only count every process can have).
DESCENT_THREADS = 1


@contextmanager
def _numba_threads(count):
    """Run the body with ``count`` numba threads, restoring the previous count after."""
    import numba

    before = numba.get_num_threads()
    numba.set_num_threads(count)
    try:
        yield
    finally:
        numba.set_num_threads(before)


#: HNSW settings (faiss IndexHNSWFlat): links per node, candidate list while building and
#: while searching (as a multiple of the k + 1 asked for). Measured by
#: tests/benchmarks/bench_backends.py; see DEVELOPERS.md, "Neighbour back ends".
HNSW_M = 16
HNSW_EF_CONSTRUCTION = 200
HNSW_EF_SEARCH_FACTOR = 2


def _hnsw_backend(X, k, metric, seed):
    try:
        import faiss
    except ImportError:
        raise ParameterError(
            "method='hnsw' needs the optional package faiss-cpu, which is not installed. "
            "Install it with `pip install faiss-cpu` (or lenswork's extra: "
            "`pip install lenswork[hnsw]`), or use method='approximate'."
        ) from None
    if metric not in ("euclidean", "cosine"):
        raise ParameterError(
            f"method='hnsw' supports metric 'euclidean' or 'cosine'; got {metric!r}. "
            f"Use method='approximate' (pynndescent) or 'exact' for {metric!r}."
        )
    n, d = X.shape
    X32 = np.ascontiguousarray(X, dtype=np.float32)
    if metric == "cosine":  # on unit vectors, squared L2 = 2 (1 - cos): the same order
        X32 /= np.maximum(np.linalg.norm(X32, axis=1, keepdims=True), np.float32(1e-30))
    with _progress.step(f"neighbour graph: hnsw (faiss), n={n}, k={k}"):
        index = faiss.IndexHNSWFlat(d, HNSW_M)
        index.hnsw.efConstruction = HNSW_EF_CONSTRUCTION
        # Insertion order decides the graph; one thread while adding keeps it the same from
        # run to run (several threads insert in a schedule-dependent order). Searching is
        # read-only and uses every thread.
        threads = faiss.omp_get_max_threads()
        faiss.omp_set_num_threads(1)
        try:
            index.add(X32)
        finally:
            faiss.omp_set_num_threads(threads)
        index.hnsw.efSearch = HNSW_EF_SEARCH_FACTOR * (k + 1)
        dist, idx = index.search(X32, k + 1)
    if np.any(idx < 0):
        raise InputError(
            f"The HNSW search found fewer than {k + 1} neighbours for some rows (n={n}). "
            f"Use method='approximate' or 'exact'."
        )
    return (idx.astype(np.int64), dist, {
        "backend": "faiss-cpu " + getattr(faiss, "__version__", "?"), "algorithm": "hnsw",
        "M": HNSW_M, "ef_construction": HNSW_EF_CONSTRUCTION,
        "ef_search": HNSW_EF_SEARCH_FACTOR * (k + 1)})


#: The neighbour back ends, one table: validation (METHODS), dispatch, and whether the
#: back end is exact (its distances kept as returned) or approximate in float32 (found
#: distances recomputed in float64).
BACKENDS = {
    "exact": (_exact_backend, True),
    "approximate": (_pynndescent_backend, False),
    "hnsw": (_hnsw_backend, False),
}
METHODS = ("auto", *BACKENDS)


def neighbor_graph(X, k=15, *, metric="euclidean", method="auto", random_state=0):
    """Compute the k-nearest-neighbour graph of ``X`` (self excluded).

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
    k : int, default=15
        Neighbours per row; needs ``n_samples >= k + 1``.
    metric : {"euclidean", "manhattan", "chebyshev", "cosine"}, default="euclidean"
    method : {"auto", "exact", "approximate", "hnsw"}, default="auto"
        ``"exact"`` uses scikit-learn (kd-tree for d <= 6, brute force above);
        ``"approximate"`` uses pynndescent with a fixed seed, built with
        ``max(k + 1, 24)`` neighbours of which the first k are kept (this lifts
        recall), its float32 distances recomputed in float64. ``"hnsw"`` uses
        faiss-cpu's HNSW index (optional extra ``lenswork[hnsw]``; euclidean
        and cosine), inserted by one thread so the graph is the same on every
        run, searched by all. ``"auto"`` is exact below 50,000 rows, and at any
        size when d <= 6 (kd-trees stay fast in low dimension), else
        approximate.
    random_state : int, default=0
        Seed for pynndescent; the same seed gives the same graph, bit for
        bit, whatever the number of threads (the descent runs on one numba
        thread, the forest on all). The HNSW build has no random choice
        left to seed (faiss draws node levels from its own fixed seed).

    Returns
    -------
    NeighborGraph

    Notes
    -----
    Cost: exact brute force O(n^2 d); kd-tree about O(n log n) for small d;
    pynndescent about O(n^1.14 d) plus a one-off numba compilation of 25-55 s
    in every fresh process (numba's on-disk cache does not remove it: the
    descent's own functions are not cached); HNSW about O(n log n d), no
    compilation.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> g = neighbor_graph(rng.normal(size=(200, 3)), k=5)
    >>> g.indices.shape, g.method
    ((200, 5), 'exact')
    """
    X = np.ascontiguousarray(np.asarray(X, dtype=np.float64))
    n, d = X.shape
    k = check_int("k", k, lo=1, context="neighbor_graph")
    metric = check_choice("metric", metric, METRICS, context="neighbor_graph")
    method = check_choice("method", method, METHODS, context="neighbor_graph")
    if n < k + 1:
        raise InputError(
            f"A neighbour graph with k={k} needs at least {k + 1} rows; the data has {n}. "
            f"Use a smaller k or more rows."
        )
    if method == "auto":
        method = _choose_method(n, d, metric)
    import time

    build, exact = BACKENDS[method]
    start = time.perf_counter()
    idx, dist, info = build(X, k, metric, seed_of(random_state))
    idx, dist = _drop_self(np.asarray(idx), np.asarray(dist, dtype=np.float64), k)
    if not exact:
        # The approximate back ends work in float32: recompute the found distances in float64
        # so every back end reports the same numbers for the same pair, and re-sort each row.
        idx, dist = _exact_distances(X, idx, metric)
    info["seconds"] = round(time.perf_counter() - start, 3)
    return NeighborGraph(idx, dist, k, metric, method, info)


# ---------------------------------------------------------------- duplicate rows
# With exact duplicates the k nearest rows of a point can all be its own copies (distance 0):
# the graph then falls into cliques of copies. The graph is searched on the distinct points
# and expanded back to rows in one of two ways (see Workspace.neighbors).


def _positions(dup):
    """Each row's place among the rows of its point (0 for the first row)."""
    order, start = dup.groups()
    pos = np.empty(dup.n_rows, dtype=np.int64)
    pos[order] = np.arange(dup.n_rows) - np.repeat(start, dup.counts)
    return order, start, pos


def expand_distinct(points_graph, dup, k):
    """Row graph of distinct locations: one link to the point's own first row, then other points.

    Each point is stood for by its first row. A row whose point holds c >= 2 rows lists
    first the point's first row (the first row itself lists the second; distance 0: the
    copies form a star and stay one piece) and then its point's k - 1 nearest other
    points; any other row lists its point's k nearest other points. So the copies of a
    point are linked alike to the same neighbours (the later copies are interchangeable,
    and a point is linked from every row of the points that list it: its weight), and no
    row's k neighbours are all copies of one point.

    Examples
    --------
    >>> X = np.array([[0.0], [0.0], [0.0], [1.0], [3.0]])
    >>> dup = DuplicateRows.of(X)
    >>> g = expand_distinct(neighbor_graph(X[dup.first], k=2), dup, 2)
    >>> g.indices.tolist(), g.distances[:, 0].tolist()
    ([[1, 3], [0, 3], [0, 3], [0, 4], [3, 0]], [0.0, 0.0, 0.0, 1.0, 2.0])
    """
    order, start, pos = _positions(dup)
    u = dup.inverse
    n = u.size
    ring = dup.counts[u] > 1
    rows = dup.first[points_graph.indices[u, :k]]
    dist = points_graph.distances[u, :k]
    idx = np.empty((n, k), dtype=np.int64)
    out = np.empty((n, k))
    plain = ~ring
    idx[plain], out[plain] = rows[plain], dist[plain]
    if ring.any():
        r = np.flatnonzero(ring)
        ur = u[r]
        idx[r, 0] = np.where(pos[r] == 0, order[start[ur] + 1], dup.first[ur])
        out[r, 0] = 0.0
        idx[r, 1:], out[r, 1:] = rows[r, : k - 1], dist[r, : k - 1]
    info = dict(points_graph.info, duplicates=dup.to_dict(), rows="distinct points",
                rule="a link to the point's first row, then the point's nearest other points")
    return NeighborGraph(idx, out, k, points_graph.metric, points_graph.method, info)


def expand_mass(points_graph, dup, k):
    """Row graph of the weighted points: each point counts as many times as it has rows.

    Row i lists the other rows of its own point (distance 0), then every row of its point's
    nearest other point, and so on, the first k in all: the k nearest other rows of an
    exact search, in a fixed order among ties. Distance to a measure and the k-NN distance
    read this graph (they are defined on the empirical measure, copies included).

    Examples
    --------
    >>> X = np.array([[0.0], [0.0], [0.0], [1.0], [3.0]])
    >>> dup = DuplicateRows.of(X)
    >>> g = expand_mass(neighbor_graph(X[dup.first], k=2), dup, 3)
    >>> g.distances.tolist()[0], g.distances.tolist()[3]
    ([0.0, 0.0, 1.0], [1.0, 1.0, 1.0])
    """
    order, start, pos = _positions(dup)
    u = dup.inverse
    n = u.size
    c = dup.counts[u]
    pts, dist = points_graph.indices[u], points_graph.distances[u]
    cum = (c - 1)[:, None] + np.cumsum(dup.counts[pts], axis=1)
    before = np.column_stack([c - 1, cum[:, :-1]])
    idx = np.empty((n, k), dtype=np.int64)
    out = np.empty((n, k))
    for t in range(k):
        own = t < c - 1
        j = np.minimum((cum <= t).sum(axis=1), pts.shape[1] - 1)
        v = pts[np.arange(n), j]
        off = t - before[np.arange(n), j]
        idx[:, t] = np.where(own, order[start[u] + (pos + 1 + t) % c],
                             order[start[v] + np.clip(off, 0, dup.counts[v] - 1)])
        out[:, t] = np.where(own, 0.0, dist[np.arange(n), j])
    info = dict(points_graph.info, duplicates=dup.to_dict(), rows="weighted points")
    return NeighborGraph(idx, out, k, points_graph.metric, points_graph.method, info)


class Workspace:
    """Shared, cached pieces of one point cloud, computed on first use.

    Parameters
    ----------
    data : PointCloud or array-like of shape (n_samples, n_features)
    random_state : int, default=0
        The one seed every lens and the graph builder use.
    neighbor_method : {"auto", "exact", "approximate", "hnsw"}, default="auto"
    min_neighbors : int, default=30
        The first neighbour graph is built with at least this many neighbours,
        so later requests for a smaller or slightly larger k (DTM, k-NN distance,
        Laplacian, clustering) are slices of one graph, not new builds.

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> ws = Workspace(rng.normal(size=(100, 4)))
    >>> ws.neighbors(10) is ws.neighbors(10)
    True
    >>> ws.neighbors(5).k
    5
    """

    def __init__(self, data, *, random_state=0, neighbor_method="auto", min_neighbors=30):
        cloud = data if isinstance(data, PointCloud) else PointCloud.from_array(data)
        self.cloud = cloud
        self.random_state = random_state
        self.neighbor_method = check_choice(
            "neighbor_method", neighbor_method, METHODS, context="Workspace"
        )
        self.min_neighbors = check_int("min_neighbors", min_neighbors, lo=1, context="Workspace")
        self._cache = {}

    @property
    def X(self):
        """The feature array, (n_samples, n_features) float64."""
        return self.cloud.X

    @property
    def n(self):
        return self.cloud.X.shape[0]

    @property
    def d(self):
        return self.cloud.X.shape[1]

    @property
    def shared_k(self):
        """Neighbours the shared graph holds at least: ``min(min_neighbors, n - 1)``.

        A lens that asks :meth:`neighbors` for at most this many neighbours
        reads a slice of the one shared graph; more means a second build. The
        value depends on the settings only, not on what was computed before,
        so a lens capped by it gives the same result in any order.
        """
        return max(1, min(self.min_neighbors, self.n - 1))

    def require_rows(self, needed, what):
        """Raise InputError when the data has fewer than ``needed`` rows for ``what``."""
        if self.n < needed:
            raise InputError(
                f"{what} needs at least {needed} rows; the data has {self.n}. "
                f"Use more rows or smaller parameters."
            )

    def cached(self, key, compute):
        """Return the cached value for ``key``, computing it with ``compute()`` once."""
        if key not in self._cache:
            self._cache[key] = compute()
        return self._cache[key]

    def has_neighbors(self, k=15, metric="euclidean"):
        """Whether a neighbour graph with at least ``k`` neighbours is cached (nothing is built).

        Examples
        --------
        >>> ws = Workspace(np.arange(40.0).reshape(20, 2))
        >>> ws.has_neighbors(5), ws.neighbors(8).k, ws.has_neighbors(5)
        (False, 8, True)
        """
        return any(key[0] == "knn" and key[1] == metric and key[2] >= k for key in self._cache)

    def neighbors_of(self, rows, k=15, metric="euclidean"):
        """Each given row's ``k`` exact nearest neighbours among all rows (itself left out).

        No neighbour graph of all rows is built: one exact search of ``len(rows)``
        queries, O(len(rows) n d) by brute force (a kd-tree up to
        :data:`EXACT_MAX_DIM_TREE` dimensions), in blocks of 64 MiB.

        Returns
        -------
        ndarray of int64, shape (len(rows), min(k, n - 1))

        Examples
        --------
        >>> ws = Workspace(np.array([[0.0], [1.0], [3.0], [7.0], [12.0]]))
        >>> ws.neighbors_of(np.array([0, 2]), k=2).tolist()
        [[1, 2], [1, 0]]
        """
        from sklearn import config_context
        from sklearn.neighbors import NearestNeighbors

        rows = np.asarray(rows, dtype=np.int64)
        kk = min(check_int("k", k, lo=1, context="Workspace.neighbors_of"), self.n - 1)
        nn = NearestNeighbors(n_neighbors=kk + 1, metric=metric,
                              algorithm=exact_algorithm(self.d, metric))
        with config_context(working_memory=64):
            dist, idx = nn.fit(self.X).kneighbors(self.X[rows])
        return _drop_self(idx, dist, kk, own=rows)[0]

    @property
    def duplicates(self):
        """The exact duplicate rows (:class:`DuplicateRows`), found once.

        Examples
        --------
        >>> Workspace(np.array([[1.0, 2], [1, 2], [3, 4]])).duplicates.n_duplicate_rows
        1
        """
        return self.cached(("duplicates",), lambda: DuplicateRows.of(self.X))

    def neighbors(self, k=15, metric="euclidean", *, mass=False):
        """The shared k-NN graph; a cached graph with more neighbours is sliced, not recomputed.

        Parameters
        ----------
        k : int, default=15
        metric : str, default="euclidean"
        mass : bool, default=False
            Only matters when rows repeat exactly (:attr:`duplicates`). The search then
            runs once on the distinct points, and the row graph is expanded from it:
            by default to distinct locations (each row's k neighbours are other points,
            plus one link to its own point's first row; :func:`expand_distinct`:
            what the Laplacian, the smoothness criterion and the clustering read, so
            copies neither crowd out the neighbours nor cut the graph into cliques);
            with ``mass=True`` to the weighted points (copies counted, the k nearest
            other rows of an exact search; :func:`expand_mass`: what distance to a
            measure and the k-NN distance read).

        Examples
        --------
        >>> X = np.r_[np.zeros((20, 1)), np.arange(1.0, 21.0)[:, None]]
        >>> ws = Workspace(X)
        >>> distinct, weighted = ws.neighbors(5), ws.neighbors(5, mass=True)
        >>> float(distinct.distances[0, 1]), float(weighted.distances[0, 1])
        (1.0, 0.0)
        """
        k = check_int("k", k, lo=1, context="Workspace.neighbors")
        metric = check_choice("metric", metric, METRICS, context="Workspace.neighbors")
        self.require_rows(k + 1, f"A neighbour graph with k={k}")
        dup = self.duplicates
        kind = "knn-mass" if (mass and dup.n_duplicate_rows) else "knn"
        if (kind, metric, k) in self._cache:
            return self._cache[(kind, metric, k)]
        best = None
        for key, g in self._cache.items():
            larger = key[0] == kind and key[1] == metric and key[2] >= k
            if larger and (best is None or key[2] < best.k):
                best = g
        if best is None:
            build_k = min(max(k, self.min_neighbors), self.n - 1)
            if kind == "knn" and k < dup.n_points:  # distinct points: at most n_points - 1
                build_k = min(build_k, dup.n_points - 1)
            best = self._build_graph(build_k, metric, kind)
            self._cache[(kind, metric, build_k)] = best
        self._cache[(kind, metric, k)] = graph = best.first(k)
        return graph

    def _build_graph(self, k, metric, kind):
        dup = self.duplicates
        if not dup.n_duplicate_rows:
            return neighbor_graph(self.X, k, metric=metric, method=self.neighbor_method,
                                  random_state=self.random_state)
        kp = min(k, dup.n_points - 1)
        if kp < 1:
            raise InputError(
                f"Every row of the data is the same point ({self.n} copies); a neighbour graph "
                f"needs at least two distinct rows."
            )
        points = self.cached(("points-knn", metric, kp), lambda: neighbor_graph(
            self.X[dup.first], kp, metric=metric, method=self.neighbor_method,
            random_state=self.random_state))
        if kind == "knn-mass" or kp < k:  # too few distinct points for k of them: copies fill
            graph = expand_mass(points, dup, k)
            if kind == "knn":
                graph.info["rows"] = (f"weighted points (only {dup.n_points} distinct points "
                                      f"for k={k})")
            return graph
        return expand_distinct(points, dup, k)

    def tied_columns(self, share=0.5):
        """Feature columns with one value on at least ``share`` of the rows (heavy ties).

        Returns
        -------
        list of (name, value, share), largest share first

        Examples
        --------
        >>> X = np.c_[np.r_[np.zeros(8), 1.0, 2.0], np.arange(10.0)]
        >>> Workspace(X).tied_columns()
        [('x0', 0.0, 0.8)]
        """
        def compute():
            out = []
            for j, name in enumerate(self.cloud.feature_names):
                vals, counts = np.unique(self.X[:, j], return_counts=True)
                top = int(np.argmax(counts))
                out.append((name, float(vals[top]), float(counts[top] / self.n)))
            return sorted(out, key=lambda t: -t[2])

        return [t for t in self.cached(("tied_columns",), compute) if t[2] >= share]

    def pieces(self, k=15, metric="euclidean"):
        """Connected pieces of the symmetric k-NN graph (:class:`GraphPieces`), cached."""
        from scipy.sparse.csgraph import connected_components

        k = min(check_int("k", k, lo=1, context="Workspace.pieces"), self.n - 1)

        def compute():
            g = self.neighbors(k, metric)  # unit weights: a 0-distance link is a link
            count, labels = connected_components(g.to_sparse(np.ones(g.indices.shape)),
                                                 directed=False)
            sizes = np.bincount(labels, minlength=count)
            order = np.argsort(-sizes, kind="stable")
            relabel = np.empty_like(order)
            relabel[order] = np.arange(count)
            return GraphPieces(k, tuple(int(v) for v in sizes[order]), relabel[labels])

        return self.cached(("pieces", metric, k), compute)

    @property
    def mean(self):
        """Column means of X."""
        return self.cached(("mean",), lambda: self.X.mean(axis=0))

    def warn(self, message):
        """Issue a :class:`~lenswork.LensworkWarning` (soft problem; work goes on)."""
        warn_caller(message)
