"""Lens columns on partitions, each with its error stated in the provenance.

Exact (equal to the single-machine lenses up to rounding)
    ``pca`` -- principal coordinates from the covariance of the tree reduction;
    ``eccentricity`` with p = 2 -- the closed form
    ``E_2(x)^2 = ||x - mean||^2 + (1/N) sum_y ||y - mean||^2``; ``column`` -- a
    feature column.

The single machine's density
    ``density`` -- Gaussian kernel density (Scott's full-covariance bandwidth
    from the exact covariance, or a number) by the single machine's estimator
    :func:`lenswork.lenses._density.subsample_log_density` on the same
    reference rows (:func:`._sample.keyed_sample`): exact up to 50,000 rows
    (every row a reference), above it the own term exact and the other
    ``N - 1`` terms from the mean over 20,000 seeded reference rows, with the
    relative standard error ``sd / sqrt(m) * sqrt(1 - m / N)`` per row
    (that of ``log f`` by the delta method). Values and error column equal the
    single machine's.

Estimated against a broadcast seeded uniform sample of ``landmarks`` rows
    ``eccentricity`` with p != 2 -- the sample mean of ``||x - y||^p`` (own term
    exact), its Monte Carlo standard error carried to ``E_p`` by the delta
    method; ``dtm`` -- the distance to the measure ``nu`` that puts on each
    landmark the share of all rows nearest to it (a Voronoi quantisation of
    the data), at the mass asked (no neighbour graph here, so no cap on k),
    with the hard bound
    ``sup |d_{mu,m} - d_{nu,m}| <= W_2(mu, nu) / sqrt(m) <= Q / sqrt(m)``,
    ``Q^2 = (1/N) sum_x ||x - q(x)||^2`` (q: nearest landmark; the map x -> q(x)
    is a transport plan from mu to nu), by the stability theorem of Chazal,
    Cohen-Steiner and Mérigot (2011, Theorem 3.5; theorem number from memory); ``laplacian`` -- the
    landmark solution extended by :func:`lenswork.lenses._nystrom.nystrom_extend`,
    its error measured on held-out landmarks.

The density (scalable), eccentricity (p != 2) and DTM estimates are also computed
exactly at ``PROBES`` seeded rows (``DENSITY_PROBES`` for the density; one pass
over all rows), and the error column they write is calibrated there: a band
about 68% of rows lie within (the standard error times ``error_scale``; for the
DTM the actual error's quantile itself), with the tail factors that cover 90%
and 99% (see :func:`lenswork.lenses._common.calibrate_error`).
"""

from __future__ import annotations

import math

import numpy as np

from .. import __version__
from .._errors import ParameterError
from .._io import OutputSet, atomic_path, check_output_file, write_text
from .._json import dumps
from .._validation import (
    check_choice,
    check_float,
    check_float_or_choice,
    check_int,
    seed_of,
)
from ..lenses import get_lens, lens_request
from ..lenses._common import PROBES, calibrate_error
from ..lenses._density import (
    DENSITY_PROBES,
    EXACT_MAX_ROWS,
    MODES,
    REFERENCE_SIZE,
    check_bandwidth,
    fixed_kernel,
    kernel_cholesky,
    log_kernel_sum,
    subsample_log_density,
    whiten_rows,
)
from ..lenses._laplacian import laplacian_eigenmaps
from ..lenses._nystrom import nystrom_extend
from ._intake import require_dask, tree_reduce
from ._sample import keyed_sample, sample_cloud

__all__ = ["PARTITIONED_LENSES", "PartitionedLenses", "partitioned_lenses"]

_BLOCK = 2048

#: The manifest of a Parquet dataset folder (a leading underscore: Parquet readers skip it).
DATASET_MANIFEST = "_lenswork-manifest.json"


def _pca_basis(cloud, m):
    C = cloud.scatter / (cloud.n - 1)
    C = (C + C.T) / 2
    evals, evecs = np.linalg.eigh(C)
    comps = evecs[:, ::-1].T[:m].copy()
    for j in range(m):  # largest-magnitude entry positive (as the single-machine lens)
        i = int(np.argmax(np.abs(comps[j])))
        if comps[j, i] < 0:
            comps[j] = -comps[j]
    return comps, np.clip(evals[::-1], 0, None)


def _sq_dist(A, B):
    D = (A * A).sum(1)[:, None] + (B * B).sum(1)[None, :] - 2.0 * A @ B.T
    return np.maximum(D, 0.0)


def _self_mask(pos, lpos):
    """(rows, cols) where a row's global position is a landmark's."""
    _, qi, ci = np.intersect1d(pos, lpos, assume_unique=True, return_indices=True)
    return qi, ci


def _landmark_mean(X, pos, L, lpos, N, value):
    """Per row: estimate of (1/N) sum_y g(x, y), own term exact, and its standard error."""
    s = L.shape[0]
    est = np.empty(X.shape[0])
    se = np.empty(X.shape[0])
    for a in range(0, X.shape[0], _BLOCK):
        G, own = value(X[a:a + _BLOCK], L)  # g(x, l) and g(x, x)
        cnt = np.full(G.shape[0], float(s))
        qi, ci = _self_mask(pos[a:a + _BLOCK], lpos)
        G[qi, ci] = 0.0
        cnt[qi] -= 1
        mu = G.sum(1) / cnt
        var = (np.square(G).sum(1) - cnt * mu**2) / np.maximum(cnt - 1, 1)
        fpc = np.maximum(0.0, 1.0 - cnt / (N - 1))
        est[a:a + _BLOCK] = (own + (N - 1) * mu) / N
        se[a:a + _BLOCK] = (N - 1) / N * np.sqrt(np.maximum(var, 0) / cnt * fpc)
    return est, se


def _part_lens(part, offset, spec, ctx):
    """Lens values (n_i, m) and per-row error (n_i, m) or None, for one partition.

    ``offset``: the global position of the partition's first row, or an array of the
    global positions of its rows (the probe rows). The error column of an estimated
    lens is scaled by its probe calibration ``ctx["error_scale"]`` when set.
    """
    vals, err = _raw_part_lens(part, offset, spec, ctx)
    if err is not None and "error_scale" in ctx:
        err = err * ctx["error_scale"]
    elif err is None and "error_rms" in ctx:
        err = np.full_like(vals, ctx["error_rms"])
    return vals, err


def _raw_part_lens(part, offset, spec, ctx):
    X = part[0]
    pos = (offset + np.arange(X.shape[0]) if np.isscalar(offset)
           else np.asarray(offset, dtype=np.int64))
    kind, p = spec["kind"], spec["params"]
    if kind == "column":
        return X[:, [spec["j"]]], None
    if kind == "pca":
        return (X - ctx["mean"]) @ ctx["components"].T, None
    if kind == "eccentricity" and p["p"] == 2.0:
        Xc = X - ctx["mean"]
        return np.sqrt(np.einsum("ij,ij->i", Xc, Xc) + ctx["spread"])[:, None], None
    if kind == "eccentricity":
        L, lpos, N = ctx["landmarks"], ctx["positions"], ctx["n"]
        pp = p["p"]

        def value(Q, L):
            G = np.sqrt(_sq_dist(Q, L)) ** pp
            return G, np.zeros(Q.shape[0])

        mu, se = _landmark_mean(X, pos, L, lpos, N, value)
        vals = mu ** (1.0 / pp)
        with np.errstate(divide="ignore", invalid="ignore"):
            err = np.where(mu > 0, vals * se / (pp * mu), 0.0)
        return vals[:, None], err[:, None]
    if kind == "density":  # the single machine's estimator and reference rows
        logf, rel, _ = subsample_log_density(
            whiten_rows(X, ctx["mean"], ctx["chol"]), ctx["ref_z"], ctx["n"], ctx["log_norm"],
            ref_rows=ctx["ref_positions"], query_rows=pos)
        rel = None if ctx["ref_positions"].size >= ctx["n"] else rel  # exact: no error
        if p["log"]:
            return logf[:, None], None if rel is None else rel[:, None]
        f = np.exp(logf)
        return f[:, None], None if rel is None else (rel * f)[:, None]
    L = ctx.get("landmarks")
    if kind == "dtm":
        w, mass, near = ctx["weights"], ctx["mass"], ctx["dtm_candidates"]
        out = np.empty(X.shape[0])
        for a in range(0, X.shape[0], _BLOCK):
            D = _sq_dist(X[a:a + _BLOCK], L)
            if near < D.shape[1]:  # the `near` nearest landmarks carry at least the mass
                cand = np.argpartition(D, near - 1, axis=1)[:, :near]
                sub = np.take_along_axis(D, cand, 1)
                order = np.take_along_axis(cand, np.argsort(sub, axis=1, kind="stable"), 1)
            else:
                order = np.argsort(D, axis=1, kind="stable")
            Ds = np.take_along_axis(D, order, 1)
            ws = w[order]
            cum = np.cumsum(ws, axis=1)
            take = np.clip(mass - (cum - ws), 0.0, ws)  # the mass taken from each landmark
            out[a:a + _BLOCK] = np.sqrt((take * Ds).sum(1) / mass)
        return out[:, None], None
    if kind == "laplacian":
        vals = nystrom_extend(ctx["lap_X"], ctx["lap_vectors"], ctx["lap_eigenvalues"], X,
                              k=p["k"], weights=p["weights"], sigma=ctx["lap_sigma"])
        return vals, None
    raise AssertionError(kind)


#: The DTM's exact pass keeps the k = ceil(m N) smallest squared distances per probe: at most
#: this many values (32 MB) per partial result, so fewer probes when k is large (a 1e7-row
#: table with m = 0.01 keeps 40), never fewer than _MIN_PROBES.
_PROBE_DTM_VALUES = 4_000_000
_MIN_PROBES = 20


def _probe_piece(part, offset, P, ppos, spec, ctx):
    """One partition's share of the exact value at the probe rows P (global positions ppos).

    eccentricity: sum of d^p; density: (row max, sum of exp(e - max)) of the kernel
    exponents e; dtm: the k smallest squared distances. A probe's own row counts at
    distance 0 (the single machine's convention).
    """
    X = part[0]
    kind, p = spec["kind"], spec["params"]
    rows = offset + np.arange(X.shape[0])
    _, qi, ci = np.intersect1d(ppos, rows, assume_unique=True, return_indices=True)
    if kind == "density":  # log of the kernel sum over the partition's rows
        return log_kernel_sum(whiten_rows(P, ctx["mean"], ctx["chol"]),
                              whiten_rows(X, ctx["mean"], ctx["chol"]))
    D = _sq_dist(P, X)
    D[qi, ci] = 0.0
    if kind == "eccentricity":
        return (np.sqrt(D) ** p["p"]).sum(1)
    k = min(ctx["dtm_k"], D.shape[1])
    return np.partition(D, k - 1, axis=1)[:, :k] if k < D.shape[1] else D


def _probe_merge(kind, k):
    """The pairwise merge of two _probe_piece results."""
    if kind == "eccentricity":
        return lambda a, b: a + b
    if kind == "density":
        return np.logaddexp

    def smallest(a, b):
        D = np.concatenate([a, b], axis=1)
        return np.partition(D, k - 1, axis=1)[:, :k] if k < D.shape[1] else D
    return smallest


def _probe_exact(kind, p, total, n, k):
    """Exact lens values at the probe rows from the merged pieces."""
    if kind == "eccentricity":
        return (total / n) ** (1.0 / p["p"])
    if kind == "density":
        return total  # finished by the caller (log, constant)
    return np.sqrt(total.sum(1) / k)


def _calibrate(cloud, parts, spec, sctx, probes):
    """Exact values at the probe rows and the estimate there: the error the lens states.

    Returns (exact, estimate, raw error column or None) at the probe rows.
    """
    dask = require_dask()
    kind, p = spec["kind"], spec["params"]
    P, ppos = probes
    n = cloud.n
    k = sctx.get("dtm_k", 0)
    if k and len(ppos) * k > _PROBE_DTM_VALUES:  # the k smallest per probe stay in memory
        keep = np.linspace(0, len(ppos) - 1, max(_MIN_PROBES, _PROBE_DTM_VALUES // k)).astype(int)
        P, ppos = P[np.unique(keep)], ppos[np.unique(keep)]
    piece = dask.delayed(_probe_piece, pure=True)
    pieces = [piece(pt, int(cloud.offsets[i]), P, ppos, spec, sctx)
              for i, pt in enumerate(parts)]
    total = dask.compute(tree_reduce(pieces, dask.delayed(_probe_merge(kind, k), pure=True)))[0]
    if kind == "density":
        logf = total - math.log(n) + sctx["log_norm"]
        exact = logf if p["log"] else np.exp(logf)
    else:
        exact = _probe_exact(kind, p, total, n, k)
    est, err = _raw_part_lens((P,), ppos, spec, sctx)
    return exact, est[:, 0], None if err is None else err[:, 0]


def _quantise(part, L):
    """Per landmark: how many rows have it as nearest; sum of squared distances to it."""
    X = part[0]
    counts = np.zeros(L.shape[0])
    total = 0.0
    for a in range(0, X.shape[0], _BLOCK):
        D = _sq_dist(X[a:a + _BLOCK], L)
        j = D.argmin(1)
        counts += np.bincount(j, minlength=L.shape[0])
        total += float(D[np.arange(j.size), j].sum())
    return counts, total


def _add(a, b):
    return a[0] + b[0], a[1] + b[1]


#: Lens names on partitions -> (parameter defaults, exact?).
PARTITIONED_LENSES = {
    "pca": {"components": 2},
    "eccentricity": {"p": 2.0},
    "column": {"name": None},
    "density": {"bandwidth": "scott", "log": True, "mode": "auto",
                "reference_size": REFERENCE_SIZE},
    "dtm": {"mass": 0.01},
    "laplacian": {"components": 2, "k": 15, "weights": "heat"},
}


def _parse(item, cloud):
    name, params, wanted = lens_request(item) if isinstance(item, str) else (*item, None)
    spec = _parse_spec(name, params, cloud)
    if wanted is not None and spec["names"] != [wanted]:
        raise ParameterError(
            f"On partitions a lens is computed whole: {wanted!r} is one of the columns "
            f"{', '.join(spec['names'])}. Give the lens ({name}:components="
            f"{spec['params'].get('components')}) or a name of one whole lens such as "
            f"{spec['names'][0]!r}."
        )
    return spec


def _parse_spec(name, params, cloud):
    if name not in PARTITIONED_LENSES:
        raise ParameterError(
            f"Lens {name!r} is not offered on partitions; choose among "
            f"{', '.join(PARTITIONED_LENSES)}."
        )
    p = dict(PARTITIONED_LENSES[name])
    unknown = set(params) - set(p)
    if unknown:
        raise ParameterError(
            f"Lens {name!r} on partitions has no parameter {sorted(unknown)[0]!r}; its "
            f"parameters: {', '.join(p)}."
        )
    p.update(params)
    ctx = f"partitioned lens {name}"
    spec = {"kind": name, "params": p}
    if name == "pca":
        p["components"] = check_int("components", p["components"], lo=1, hi=cloud.d, context=ctx)
        spec["names"] = _column_names(name, p, [str(j + 1) for j in range(p["components"])])
    elif name == "eccentricity":
        p["p"] = check_float_or_choice("p", p["p"], ("inf",), lo=1.0, lo_open=False, context=ctx)
        if p["p"] == "inf":
            raise ParameterError(
                "Eccentricity with p = inf is not offered on partitions (its landmark bound "
                "needs every landmark's exact eccentricity, a pass over all pairs); use a finite "
                "p such as 2 or 8."
            )
        spec["names"] = _column_names(name, p)
    elif name == "column":
        if p["name"] not in cloud.feature_names:
            raise ParameterError(
                f"Lens 'column' needs name=<a feature column>; got {p['name']!r}. Feature "
                f"columns: {', '.join(cloud.feature_names)}."
            )
        spec["j"] = cloud.feature_names.index(p["name"])
        spec["names"] = _column_names(name, p, [str(p["name"])])
    elif name == "density":
        p["bandwidth"] = check_bandwidth("bandwidth", p["bandwidth"], context=ctx)
        if isinstance(p["bandwidth"], str) and p["bandwidth"] != "scott":
            raise ParameterError(
                f"The density on partitions takes bandwidth 'scott' or a number; "
                f"{p['bandwidth']!r} needs the rows in one place (a percentile or a "
                f"cross-validation sample). Give 'scott' or a number h."
            )
        if isinstance(p["log"], str):
            p["log"] = p["log"].strip().lower() in ("1", "true", "yes")
        p["reference_size"] = check_int("reference_size", p["reference_size"], lo=2, context=ctx)
        p["mode"] = check_choice("mode", p["mode"], MODES, context=ctx)
        spec["names"] = _column_names(name, p)
    elif name == "dtm":
        p["mass"] = check_float("mass", p["mass"], lo=0.0, hi=1.0, lo_open=True, context=ctx)
        spec["names"] = _column_names(name, p)
    else:
        p["components"] = check_int("components", p["components"], lo=1, context=ctx)
        p["k"] = check_int("k", p["k"], lo=1, context=ctx)
        spec["names"] = _column_names(name, p, [str(j + 1) for j in range(p["components"])])
    return spec


def _column_names(kind, params, parts=("",)):
    """The column names the one-machine registry gives this lens and these parameters.

    One name per thing on both paths: ``eccentricity[p=1]``, ``density`` (log
    density, the default), ``density[log=false]``, ``column_flow``, ``pca_2``.
    """
    spec = get_lens(kind)
    resolved = spec.defaults()
    resolved.update({k: v for k, v in params.items() if k in resolved})
    return [spec.column_name(resolved, part) for part in parts]


class PartitionedLenses:
    """Lens columns over partitions: delayed blocks, names and provenance.

    Attributes
    ----------
    names : list of str
    provenance : list of dict
        One per column: lens, parameters, ``exact`` (bool), ``error`` (what
        bounds or estimates the error), summary figures of the error, version,
        input checksum, seed.
    parts : list of dask delayed
        Per partition, ``(values (n_i, m), errors (n_i, m) with NaN where exact)``.
    """

    def __init__(self, cloud, names, provenance, parts):
        self.cloud, self.names, self.provenance, self.parts = cloud, names, provenance, parts

    def compute(self):
        """All values in memory: ``(values (n, m), errors (n, m))``."""
        dask = require_dask()
        out = dask.compute(*self.parts)
        return np.concatenate([o[0] for o in out]), np.concatenate([o[1] for o in out])

    def write(self, directory, compute=None):
        """Write a Parquet dataset folder (one file per partition) and its provenance beside it.

        The folder ``directory`` holds ``part-00000.parquet``... (ids, lens
        columns and, for an estimated lens, its per-row error column
        ``<name>_error``) and ``_lenswork-manifest.json`` (a name Parquet
        readers skip), so ``pandas.read_parquet(directory)`` reads the whole
        table. It is written as one output set (:class:`lenswork._io.OutputSet`)
        in a staging folder beside it and swapped in with one rename: no part
        of an earlier run survives. The provenance ``<directory>.json`` (strict
        JSON, beside the folder) is written last and records the set's
        checksum.

        Parameters
        ----------
        directory : path
        compute : callable, optional
            ``compute(list of delayed) -> list of results``; default ``dask.compute``.

        Returns
        -------
        list of str
            The files written: the parts, then the provenance.
        """
        from pathlib import Path

        dask = require_dask()
        directory = Path(directory)
        sidecar = directory.with_name(directory.name + ".json")
        check_output_file(sidecar)
        output = OutputSet(directory, command="compute --scheduler", manifest=DATASET_MANIFEST,
                           replace_folder=True)
        write = dask.delayed(_write_part, pure=False)
        errors = [bool(not p.get("exact", False)) for p in self.provenance]
        # without an id column each partition numbers its rows from 1: the files get the
        # global 1-based position instead, so the dataset's ids are unique
        numbered = self.cloud.options.get("id_column") is None
        compute = compute or (lambda items: list(dask.compute(*items)))
        with output as stage:
            tasks = [
                write(self.cloud.delayed_parts()[i], part, self.names, self.cloud.id_name,
                      str(stage / f"part-{i:05d}.parquet"), errors,
                      int(self.cloud.offsets[i]) if numbered else None)
                for i, part in enumerate(self.parts)
            ]
            names = [Path(f).name for f in compute(tasks)]
        doc = {
            "lenswork_version": __version__, "input": self.cloud.provenance,
            "columns": dict(zip(self.names, self.provenance)), "files": names,
            "dataset": {"folder": directory.name, "manifest": DATASET_MANIFEST,
                        "set_sha256": output.document["set_sha256"],
                        "error_columns": [f"{n}_error" for n, e in zip(self.names, errors) if e]},
        }
        write_text(sidecar, dumps(doc))
        return [str(directory / n) for n in names] + [str(sidecar)]


def _write_part(data, part, names, id_name, path, errors=None, offset=None):
    import pyarrow as pa
    import pyarrow.parquet as pq

    values, errs = part[0], part[1]
    ids = data[1] if offset is None else offset + np.arange(1, len(data[1]) + 1)
    cols = {id_name: ids}
    for j, name in enumerate(names):
        cols[name] = values[:, j]
    for j, name in enumerate(names):
        if errors is not None and errors[j]:
            cols[f"{name}_error"] = errs[:, j]
    with atomic_path(path) as tmp:
        pq.write_table(pa.table(cols), tmp)
    return path


def _assemble(*pieces):
    vals = [p[0] for p in pieces]
    errs = [np.full_like(p[0], np.nan) if p[1] is None else p[1] for p in pieces]
    return np.column_stack(vals), np.column_stack(errs)


def partitioned_lenses(cloud, lenses, *, landmarks=2000, random_state=0):
    """Compute lens columns on every partition.

    Parameters
    ----------
    cloud : PartitionedCloud
    lenses : list of str or (str, dict)
        Specs as on the command line: ``"pca:components=2"``, ``"eccentricity"``,
        ``"eccentricity:p=1"``, ``"column:name=flow"``, ``"density"``,
        ``"dtm:mass=0.05"``, ``"laplacian:components=2,k=15"``.
    landmarks : int, default=2000
        Size of the broadcast seeded uniform sample (drawn by
        :func:`sample_cloud`) the eccentricity (p != 2), DTM and Laplacian
        estimates use; the density uses its own ``reference_size`` (20,000
        above 50,000 rows), as on one machine.
    random_state : int, default=0

    Returns
    -------
    PartitionedLenses

    Notes
    -----
    See the module notes for what is exact and the stated error of each
    estimated lens. Cost per partition of n_i rows: O(n_i d m) for PCA, O(n_i d)
    for the closed-form eccentricity, O(n_i m d) for the density (m = its
    reference rows, all rows up to 50,000), O(n_i s d) for the sample-based ones (s
    landmarks), plus one extra pass for the DTM's Voronoi weights and one
    Laplacian solve on the s landmarks (and one on half of them for the
    held-out error).

    References
    ----------
    .. [1] F. Chazal, D. Cohen-Steiner and Q. Mérigot, "Geometric inference for
       probability measures", Foundations of Computational Mathematics 11, 2011.
    .. [2] Y. Bengio et al., "Out-of-sample extensions for LLE, Isomap, MDS,
       Eigenmaps, and Spectral Clustering", NIPS 2004.

    Examples
    --------
    >>> import dask.array as da
    >>> from lenswork.partitioned import open_partitioned
    >>> X = np.random.default_rng(0).normal(size=(300, 3))
    >>> cloud = open_partitioned(da.from_array(X, chunks=(100, 3)))
    >>> lens = partitioned_lenses(cloud, ["pca:components=1", "eccentricity"])
    >>> values, errors = lens.compute()
    >>> lens.names, values.shape, [p["exact"] for p in lens.provenance]
    (['pca_1', 'eccentricity'], (300, 2), [True, True])
    """
    dask = require_dask()
    specs = [_parse(item, cloud) for item in lenses]
    landmarks = check_int("landmarks", landmarks, lo=2, context="partitioned_lenses")
    n, d = cloud.n, cloud.d
    ctx = {"n": n, "mean": cloud.mean, "spread": float(np.trace(cloud.scatter) / n)}
    base = {"lenswork_version": __version__, "input_sha256": cloud.provenance["sha256"],
            "random_state": random_state, "n_rows": n}
    needs_sample = any(
        s["kind"] in ("dtm", "laplacian")
        or (s["kind"] == "eccentricity" and s["params"]["p"] != 2.0) for s in specs
    )
    parts = cloud.delayed_parts()
    if needs_sample:
        sample = sample_cloud(cloud, landmarks, random_state=random_state)
        L = sample.X
        ctx["landmarks"] = L
        ctx["positions"] = sample.provenance["sample_positions"]
    provs, per_spec, probes = [], [], {}
    for spec in specs:
        kind, p = spec["kind"], spec["params"]
        prov = [dict(base, lens=kind, column=name, params=dict(p)) for name in spec["names"]]
        sctx = dict(ctx)
        if kind == "pca":
            comps, evals = _pca_basis(cloud, p["components"])
            sctx["components"] = comps
            for j, pr in enumerate(prov):
                pr.update(exact=True, explained_variance=float(evals[j]),
                          error="none: exact (covariance from a tree reduction of count, mean "
                          "and scatter; Chan, Golub and LeVeque 1979)")
        elif kind == "column" or (kind == "eccentricity" and p["p"] == 2.0):
            prov[0].update(exact=True, error="none: exact" + (
                " closed form E_2(x)^2 = ||x - mean||^2 + (1/N) sum ||y - mean||^2"
                if kind == "eccentricity" else " (the feature column)"))
        elif kind == "density":
            H = cloud.scatter / (n - 1) * n ** (-2.0 / (d + 4))
            if p["bandwidth"] != "scott":  # the single machine's checks and refusals
                spread = float(np.sqrt(max(float(np.max(np.diag(cloud.scatter))) / n, 0.0)))
                H = fixed_kernel(float(p["bandwidth"]), spread, d)[0]
            Lc = kernel_cholesky(H, p["bandwidth"] if isinstance(p["bandwidth"], str)
                                 else "fixed")  # the single machine's refusal
            sctx["chol"] = Lc
            sctx["log_norm"] = float(-0.5 * d * math.log(2 * math.pi) - np.log(np.diag(Lc)).sum())
            # the single machine's mode "auto": every row a reference up to its exact size,
            # else its seeded reference subsample (the same rows, by the same keyed rule)
            exact = p["mode"] == "exact" or (
                p["mode"] == "auto" and n <= max(EXACT_MAX_ROWS, p["reference_size"]))
            m = n if exact else min(n, p["reference_size"])
            R, rpos = keyed_sample(cloud, m, random_state=random_state)
            sctx["ref_z"], sctx["ref_positions"] = whiten_rows(R, cloud.mean, Lc), rpos
            prov[0]["bandwidth_matrix"] = H
            if m >= n:
                prov[0].update(exact=True, mode="exact", error="none: exact sum over all rows "
                               "(every row broadcast as a reference, as the single machine's "
                               f"exact mode up to {EXACT_MAX_ROWS:,} rows)")
            else:
                prov[0].update(
                    exact=False, mode="scalable", reference_size=int(m),
                    error=f"the single machine's scalable estimate: own term exact, the other "
                    f"N - 1 terms from the mean over the same seeded subsample of {m} rows "
                    f"(lenswork.lenses._common.sample_rows' keyed rule); the error column holds "
                    f"the relative standard error of the density (that of log density, delta "
                    f"method), se = sd / sqrt(m) * sqrt(1 - m/N)")
        elif kind == "eccentricity":
            prov[0].update(
                exact=False, landmarks=int(L.shape[0]),
                error=f"Monte Carlo: own term exact, the other N - 1 terms from the mean over "
                f"a seeded uniform sample of s = {L.shape[0]} rows; se = sd / sqrt(s) * "
                f"sqrt(1 - s/N); the error column holds the standard error of E_p carried "
                f"from mean d^p by the delta method",
            )
        elif kind == "dtm":
            counts, total = dask.compute(tree_sum(
                [dask.delayed(_quantise, pure=True)(pt, L) for pt in parts]))[0]
            mass = p["mass"]
            sctx["weights"], sctx["mass"] = counts / n, mass
            sctx["dtm_k"] = max(1, math.ceil(round(mass * n, 9)))  # exact DTM's k at the probes
            # any `near` landmarks weigh at least the `near` lightest ones, so a row's `near`
            # nearest landmarks hold its mass m: the rest need no sorting
            light = np.cumsum(np.sort(counts / n))
            sctx["dtm_candidates"] = int(min(L.shape[0], np.searchsorted(light, mass) + 1))
            Q = math.sqrt(total / n)
            # the mass asked is the mass used: no neighbour graph here, so no cap on k (the
            # single machine caps k at its graph's, warns and names the column by its mass)
            prov[0].update(mass=mass, mass_used=mass, k_requested=sctx["dtm_k"], capped=False)
            prov[0].update(
                exact=False, landmarks=int(L.shape[0]), quantisation_error=Q,
                error_bound=Q / math.sqrt(mass),
                error="hard bound: sup |d_mu,m - d_nu,m| <= W2(mu, nu) / sqrt(m) <= Q / sqrt(m) "
                "(Chazal, Cohen-Steiner and Merigot 2011, Theorem 3.5); nu puts on each "
                "landmark the share of rows nearest to it, Q^2 = mean squared distance of a "
                "row to its nearest landmark; error_bound = Q / sqrt(m)",
            )
        else:
            vec, info = laplacian_eigenmaps(L, p["components"], k=p["k"], weights=p["weights"],
                                            random_state=random_state, return_info=True)
            sctx.update(lap_X=L, lap_vectors=vec, lap_eigenvalues=info["eigenvalues"],
                        lap_sigma=info.get("sigma"))
            held = _held_out(L, vec, p, random_state)
            for j, pr in enumerate(prov):
                pr.update(exact=False, landmarks=int(L.shape[0]),
                          eigenvalue=info["eigenvalues"][j], held_out_abs_corr=held[j],
                          error="Nystrom extension (Bengio et al. 2004) of the solution on the "
                          "landmarks; held_out_abs_corr: |corr| on the landmarks of one half "
                          "between the solution on all landmarks and the extension of the "
                          "solution on the other half")
        if kind in ("eccentricity", "density", "dtm") and not prov[0]["exact"]:
            size = DENSITY_PROBES if kind == "density" else PROBES
            if size not in probes:  # probe_positions' rows: the single machine's probes
                probe = sample_cloud(cloud, min(size, n), random_state=seed_of(random_state) + 1)
                probes[size] = (probe.X, np.asarray(probe.provenance["sample_positions"]))
            exact, est, err = _calibrate(cloud, parts, spec, sctx, probes[size])
            scale, figures = calibrate_error(exact, est, err)
            if err is None:
                sctx["error_rms"] = scale
                what = ("the error column holds the 68.27% quantile of the actual error over "
                        "the probe rows (the same for every row)")
            else:
                sctx["error_scale"] = scale
                what = ("the error column holds the standard error times error_scale, the "
                        "68.27% quantile of |estimate - exact| / se over the probe rows")
            what += ("; about 68% of rows lie within it, 90% within tail_factor_90 times it "
                     "(1.64 for a normal error)")
            prov[0].update(figures)
            prov[0]["error"] += (
                f"; calibrated on {figures['probe_rows']} seeded probe rows whose exact value "
                f"is computed by a pass over all rows: {what}")
        per_spec.append((spec, sctx))
        provs.extend(prov)
    lens_part = dask.delayed(_part_lens, pure=True)
    assemble = dask.delayed(_assemble, pure=True)
    out_parts = []
    for i, pt in enumerate(parts):
        pieces = [lens_part(pt, int(cloud.offsets[i]), spec, sctx) for spec, sctx in per_spec]
        out_parts.append(assemble(*pieces))
    names = [name for spec in specs for name in spec["names"]]
    return PartitionedLenses(cloud, names, provs, out_parts)


def tree_sum(items):
    """Pairwise tree of delayed ``_add`` over (counts, total) pairs."""
    return tree_reduce(items, require_dask().delayed(_add, pure=True))


def _held_out(L, vec, p, seed):
    """|corr| per vector on half B: full landmark solution vs extension from half A."""
    rng = np.random.default_rng(seed)
    perm = rng.permutation(L.shape[0])
    a, b = np.sort(perm[: L.shape[0] // 2]), np.sort(perm[L.shape[0] // 2:])
    try:
        va, ia = laplacian_eigenmaps(L[a], p["components"], k=p["k"], weights=p["weights"],
                                     random_state=seed, return_info=True)
    except Exception:  # too few landmarks for a half: no held-out figure
        return [None] * p["components"]
    ext = nystrom_extend(L[a], va, ia["eigenvalues"], L[b], k=p["k"], weights=p["weights"],
                         sigma=ia.get("sigma"))
    return [float(abs(np.corrcoef(ext[:, j], vec[b, j])[0, 1])) for j in range(vec.shape[1])]
