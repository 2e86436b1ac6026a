"""Gaussian kernel density: bandwidth rules, an exact and a scalable evaluation.

The density of the sample ``x_1..x_n`` at ``x`` is
``f(x) = (1/n) sum_i N(x - x_i; 0, H)`` with a Gaussian kernel of covariance
``H`` (the *bandwidth matrix*). ``H`` comes from a rule (Scott, Silverman,
likelihood cross-validation) or from a number ``h`` (``H = h^2 I``).

Both evaluations whiten by the Cholesky factor of ``H`` (``H = L L^T``,
``z = L^-1 (x - mean)``), so every kernel value is ``exp(-||z - z_i||^2 / 2)``
up to one constant, and compute ``-||z - z_i||^2 / 2`` for a tile of pairs in
one BLAS product of augmented vectors ``[z, -|z|^2/2, 1] . [z_i, 1, -|z_i|^2/2]``;
the exponential and the row sums then run in place on the tile, which is
sized to stay in cache, and tiles of rows run on a few threads.

* ``mode="exact"`` sums over all n reference points: O(n^2 d).
* ``mode="scalable"`` keeps each training point's own kernel term exactly and
  estimates the other n - 1 terms from a simple random subsample of
  ``reference_size`` points, with a per-point standard error: O(n m d).
"""

from __future__ import annotations

import math
from functools import partial

import numpy as np
from sklearn.base import BaseEstimator, TransformerMixin

from .._errors import InputError, ParameterError, warn_caller
from .._validation import (
    check_array,
    check_bool,
    check_choice,
    check_float_or_choice,
    check_int,
    check_random_state,
)
from ._common import (
    TILE_COLS,
    TILE_ROWS,
    LensOutputMixin,
    calibrate_error,
    check_input,
    parallel_rows,
    probe_positions,
    sample_rows,
    zero_self,
)
from ._declare import LensDecl, keep
from ._registry import LensPart, Param

__all__ = [
    "GaussianDensity", "gaussian_density", "kernel_cholesky", "scott_bandwidth",
    "silverman_bandwidth", "subsample_log_density", "whiten_rows", "DENSITY_PROBES",
    "check_bandwidth", "fixed_kernel",
    "log_kernel_sum",
]

BANDWIDTH_RULES = ("scott", "silverman", "cv")
MODES = ("auto", "exact", "scalable")
PRECISIONS = ("float64", "float32")

#: "auto" sums exactly up to this many rows (about 3 s at d = 20 on 2 cores,
#: tests/benchmarks/bench_density.py), then switches to the scalable estimate.
EXACT_MAX_ROWS = 50_000
#: Default size of the reference subsample of the scalable mode.
REFERENCE_SIZE = 20_000
#: Probe rows that calibrate the scalable mode's stated error (exact there: probes x n x d
#: flops, under a tenth of the estimate's n x reference_size x d). More than other lenses'
#: 200: the error's distribution is heavy-tailed in many dimensions, and 200 probes put the
#: band's coverage within about +-0.07 of 68%, 1000 within about +-0.03 (binomial 2 sd).
DENSITY_PROBES = 1000
#: The largest numeric bandwidth: its square must stay a finite float.
MAX_BANDWIDTH = 1e100
#: A numeric bandwidth above this many times the data's widest sd makes the kernel flat over
#: the data: log-density differences ~ (sd / h)^2 fall under float64 rounding near 1e6.
FLAT_RATIO = 1e6
#: A numeric bandwidth below this many times the data's widest sd: the whitened coordinates
#: pass 1e6, their squares 1e12, and the tile sums' cancellation error (1e-16 relative) is
#: no longer small against the kernel exponents.
NARROW_RATIO = 1e-6

#: Rows of the data used for likelihood cross-validation of the bandwidth.
CV_SUBSAMPLE = 2_000
#: Multipliers of Scott's bandwidth tried by likelihood cross-validation.
CV_GRID = np.geomspace(1 / 8, 8, 25)
# Row sums below these values may have lost terms to underflow: such rows are
# summed again with a per-row shift (log-sum-exp style).
_UNDERFLOW = {"float64": 1e-250, "float32": 1e-25}


# ---------------------------------------------------------------------------
# bandwidth rules
# ---------------------------------------------------------------------------


def _warn(message):

    warn_caller(message)


def _covariance(X, what):
    n = X.shape[0]
    if n < 2:
        raise InputError(f"{what} needs at least 2 rows to estimate a spread; got {n}.")
    return np.atleast_2d(np.cov(X, rowvar=False, ddof=1))


def scott_bandwidth(X):
    """Scott's rule: the kernel covariance ``cov(X) * n^(-2/(d+4))``.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        A 1-D array is read as one feature.

    Returns
    -------
    H : ndarray of shape (n_features, n_features)
        Kernel covariance (bandwidth matrix); in 1-D ``H = [[h^2]]``.

    Raises
    ------
    InputError
        Fewer than 2 rows, or non-finite values.

    Notes
    -----
    The full sample covariance (``ddof=1``) times the squared Scott factor
    ``n^(-1/(d+4))``, the convention of ``scipy.stats.gaussian_kde``. Cost O(n d^2).

    References
    ----------
    .. [1] D. W. Scott, "Multivariate Density Estimation: Theory, Practice, and
       Visualization", Wiley, 1992, eq. 6.42.

    Examples
    --------
    >>> X = np.random.default_rng(0).normal(size=(1000, 2))
    >>> H = scott_bandwidth(X)
    >>> H.shape, bool(np.allclose(H, np.cov(X.T) * 1000 ** (-1 / 3)))
    ((2, 2), True)
    """
    X = check_array(X, "scott_bandwidth", min_rows=2)
    n, d = X.shape
    return _covariance(X, "scott_bandwidth") * n ** (-2.0 / (d + 4))


def _robust_sd(X):
    """Per column ``min(sd, IQR / 1.349)``; the sd alone where the IQR is 0."""
    sd = X.std(axis=0, ddof=1)
    q75, q25 = np.percentile(X, [75, 25], axis=0)
    iqr = (q75 - q25) / 1.349
    # common practice: a zero IQR (many tied values) falls back on the sd
    return np.where(iqr > 0, np.minimum(sd, iqr), sd)


def silverman_bandwidth(X):
    """Silverman's rule of thumb, per feature: a diagonal kernel covariance.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        A 1-D array is read as one feature.

    Returns
    -------
    H : ndarray of shape (n_features, n_features)
        Diagonal kernel covariance ``diag(h_1^2, ..., h_d^2)``.

    Raises
    ------
    InputError
        Fewer than 2 rows, or non-finite values.

    Notes
    -----
    With ``s_j = min(sd_j, IQR_j / 1.349)`` (the sd alone when the IQR is 0;
    ``ddof=1``, numpy's linear percentiles):

    * d = 1: ``h = 0.9 s n^(-1/5)``, the rule of thumb of [1]_ (eq. 3.31);
    * d > 1: ``h_j = (4 / (d + 2))^(1/(d+4)) n^(-1/(d+4)) s_j``, the
      normal-reference rule of [1]_ (eq. 4.14) with a robust scale per feature.
      The 1-D formula applied per feature would shrink like ``n^(-1/5)``, far too
      narrow in several dimensions.

    Cost O(n d log n) (percentiles).

    References
    ----------
    .. [1] B. W. Silverman, "Density Estimation for Statistics and Data
       Analysis", Chapman and Hall, 1986.

    Examples
    --------
    >>> H = silverman_bandwidth(np.array([-7.0, -5.0, 1.0, 4.0, 5.0]))
    >>> round(float(np.sqrt(H[0, 0])), 6)
    3.500618
    """
    X = check_array(X, "silverman_bandwidth", min_rows=2)
    n, d = X.shape
    s = _robust_sd(X)
    if d == 1:
        h = 0.9 * s * n ** (-0.2)
    else:
        h = (4.0 / (d + 2)) ** (1.0 / (d + 4)) * n ** (-1.0 / (d + 4)) * s
    return np.diag(h**2)


# ---------------------------------------------------------------------------
# the fused kernel sums
# ---------------------------------------------------------------------------


def _augment(Z, dtype):
    """Query and reference factors of ``-||q - r||^2 / 2`` as one product ``Qa @ RaT``."""
    n, d = Z.shape
    half_sq = -0.5 * np.einsum("ij,ij->i", Z, Z)
    Qa = np.empty((n, d + 2), dtype=dtype)
    Qa[:, :d] = Z
    Qa[:, d] = half_sq
    Qa[:, d + 1] = 1.0
    RaT = np.empty((d + 2, n), dtype=dtype)
    RaT[:d] = Z.T
    RaT[d] = 1.0
    RaT[d + 1] = half_sq
    return Qa, RaT


def _kernel_sums(Qa, RaT, *, shift=None, second=False, self_pairs=None):
    """Row sums of ``exp(T + shift)`` over the tiles of ``T = Qa @ RaT``.

    ``shift`` (per query row) avoids underflow for far-out rows; ``second``
    also returns the sums of squares (for standard errors); ``self_pairs =
    (query_rows, ref_rows)`` (see :func:`zero_self`) drops the pairs of a point
    with itself. Accumulation is in float64 whatever the tile precision.
    """
    nq, nr = Qa.shape[0], RaT.shape[1]
    dtype = Qa.dtype
    s1 = np.zeros(nq)
    s2 = np.zeros(nq) if second else None

    def work(i0, i1):
        buf = np.empty((i1 - i0, TILE_COLS), dtype=dtype)
        sh = None if shift is None else shift[i0:i1, None].astype(dtype)
        acc1 = np.zeros(i1 - i0)
        acc2 = np.zeros(i1 - i0) if second else None
        for j0 in range(0, nr, TILE_COLS):
            j1 = min(j0 + TILE_COLS, nr)
            T = buf if j1 - j0 == TILE_COLS else np.empty((i1 - i0, j1 - j0), dtype=dtype)
            np.matmul(Qa[i0:i1], RaT[:, j0:j1], out=T)
            if sh is not None:
                T += sh
            np.exp(T, out=T)
            if self_pairs is not None:
                zero_self(T, i0, i1, *self_pairs, j0, j1)
            acc1 += T.sum(axis=1)
            if second:
                acc2 += np.einsum("ij,ij->i", T, T)
        s1[i0:i1] = acc1
        if second:
            s2[i0:i1] = acc2

    parallel_rows(work, nq)
    return s1, s2


def _row_max(Qa, RaT, self_pairs=None):
    """Row maxima of ``Qa @ RaT`` (self pairs left out when ``self_pairs`` is given)."""
    nq, nr = Qa.shape[0], RaT.shape[1]
    out = np.full(nq, -np.inf)
    for i0 in range(0, nq, TILE_ROWS):
        i1 = min(i0 + TILE_ROWS, nq)
        for j0 in range(0, nr, TILE_COLS):
            j1 = min(j0 + TILE_COLS, nr)
            T = (Qa[i0:i1] @ RaT[:, j0:j1]).astype(np.float64)
            if self_pairs is not None:
                zero_self(T, i0, i1, *self_pairs, j0, j1, value=-np.inf)
            np.maximum(out[i0:i1], T.max(axis=1), out=out[i0:i1])
    return out


def _log_kernel_sums(Qa, RaT, precision, *, second=False, ref_rows=None, query_rows=None):
    """``log sum_j exp(T_ij)`` (and ``log sum_j exp(2 T_ij)``), safe against underflow.

    ``ref_rows`` (the data index of each reference column, sorted) is given when
    self pairs must be left out; ``query_rows`` (sorted) is the data index of
    each query row, None meaning the data rows 0..n-1. Rows whose sum falls
    below the underflow threshold are summed again with the shift
    ``-max_j T_ij``.
    """
    pairs = None if ref_rows is None else (query_rows, ref_rows)
    s1, s2 = _kernel_sums(Qa, RaT, second=second, self_pairs=pairs)
    with np.errstate(divide="ignore"):
        log1 = np.log(s1)
        log2 = np.log(s2) if second else None
    low = np.flatnonzero(s1 < _UNDERFLOW[precision])
    if low.size:
        pairs = None if ref_rows is None else (
            low if query_rows is None else query_rows[low], ref_rows)
        shift = -_row_max(Qa[low], RaT, pairs)
        shift[~np.isfinite(shift)] = 0.0  # a row with no term at all keeps log 0 = -inf
        t1, t2 = _kernel_sums(Qa[low], RaT, shift=shift, second=second, self_pairs=pairs)
        with np.errstate(divide="ignore"):
            log1[low] = np.log(t1) - shift
            if second:
                log2[low] = np.log(t2) - 2 * shift
    return log1, log2


# ---------------------------------------------------------------------------
# the worker
# ---------------------------------------------------------------------------


def _kernel_covariance(X, bandwidth, rng):
    """Resolve ``bandwidth`` into (H, info) for the data X."""
    n, d = X.shape
    if isinstance(bandwidth, str):
        if bandwidth == "scott":
            factor = n ** (-1.0 / (d + 4))
            H = _covariance(X, "The 'scott' bandwidth") * factor**2
            return H, {"bandwidth_rule": "scott", "bandwidth_factor": factor}
        if bandwidth == "silverman":
            return silverman_bandwidth(X), {"bandwidth_rule": "silverman"}
        return _cv_covariance(X, rng)
    return fixed_kernel(float(bandwidth), float(np.sqrt(np.max(np.var(X, axis=0)))), d)


def fixed_kernel(h, spread, d):
    """``(h^2 I, info)`` for a numeric bandwidth h; refused when h is far off the data's spread.

    ``spread``: the widest column sd (ddof 0). Shared by the partitioned density, so
    both paths refuse with one message.

    Examples
    --------
    >>> H, info = fixed_kernel(0.5, 1.0, 2)
    >>> H.tolist(), info["bandwidth_rule"]
    ([[0.25, 0.0], [0.0, 0.25]], 'fixed')
    """
    if spread > 0 and h < NARROW_RATIO * spread:
        raise ParameterError(
            f"The bandwidth {h:g} is below {NARROW_RATIO:g} times the widest spread of the data "
            f"(sd {spread:.4g}): squared distances in units of h pass 1e12, the kernel sums "
            f"lose their precision, and each row's density would be its own kernel alone, a "
            f"constant lens. Give a bandwidth near the distances between neighbouring rows, or "
            f"a rule such as 'scott'."
        )
    if spread > 0 and h > FLAT_RATIO * spread:
        raise ParameterError(
            f"The bandwidth {h:g} is more than {FLAT_RATIO:g} times the widest spread of the "
            f"data (sd {spread:.4g}): the kernel is flat over the data and every row's density "
            f"differs from the next by less than float rounding, a constant lens. Give a "
            f"bandwidth near {spread:.3g} or a rule such as 'scott'."
        )
    return np.eye(d) * h**2, {"bandwidth_rule": "fixed", "bandwidth_h": h}


def kernel_cholesky(H, rule):
    """Cholesky factor of a kernel covariance; InputError (what to do) when it is singular.

    Shared by the partitioned density, so both paths refuse with one message.

    Examples
    --------
    >>> kernel_cholesky(np.eye(2) * 4.0, "fixed").tolist()
    [[2.0, 0.0], [0.0, 2.0]]
    """
    try:
        L = np.linalg.cholesky(H)
    except np.linalg.LinAlgError:
        L = None
    if L is None or not np.all(np.diag(L) > 0) or not np.all(np.isfinite(L)):
        raise InputError(
            f"The kernel covariance from the {rule!r} bandwidth is singular: some feature is "
            f"constant or the features are linearly dependent (or there are fewer rows than "
            f"features). Drop constant or duplicate columns, or pass a number as bandwidth "
            f"(an isotropic kernel)."
        )
    return L


def whiten_rows(X, mean, L):
    """``L^-1 (x - mean)`` for each row x: the coordinates in which the kernel is round.

    Examples
    --------
    >>> whiten_rows(np.array([[3.0, 4.0]]), np.array([1.0, 0.0]), np.eye(2) * 2).tolist()
    [[1.0, 2.0]]
    """
    from scipy.linalg import solve_triangular

    return np.ascontiguousarray(solve_triangular(L, (X - mean).T, lower=True).T)


def _cv_covariance(X, rng):
    """Likelihood cross-validation of a multiplier of Scott's bandwidth.

    On a subsample of ``s = min(n, CV_SUBSAMPLE)`` rows, pick the multiplier
    ``c`` in CV_GRID maximising the leave-one-out log-likelihood of the KDE of
    the subsample with kernel ``c^2 cov(X) s^(-2/(d+4))``; return
    ``c^2 cov(X) n^(-2/(d+4))`` (the chosen multiplier kept on Scott's n-rate).
    """
    n, d = X.shape
    C = _covariance(X, "The 'cv' bandwidth")
    rows = sample_rows(X, CV_SUBSAMPLE, rng)
    S = X[rows]
    s = S.shape[0]
    if s < 3:
        raise InputError(f"The 'cv' bandwidth needs at least 3 rows; got {n}.")
    base = C * s ** (-2.0 / (d + 4))
    L = kernel_cholesky(base, "cv")
    Z = whiten_rows(S, S.mean(axis=0), L)
    sq = np.einsum("ij,ij->i", Z, Z)
    D2 = np.maximum(sq[:, None] + sq[None, :] - 2.0 * (Z @ Z.T), 0.0)
    np.fill_diagonal(D2, np.inf)
    from scipy.special import logsumexp

    log_det = 2.0 * np.log(np.diag(L)).sum()
    scores = np.empty(len(CV_GRID))
    for i, c in enumerate(CV_GRID):
        loo = logsumexp(-0.5 * D2 / c**2, axis=1) - math.log(s - 1)
        log_k0 = -d * math.log(c) - 0.5 * (log_det + d * math.log(2 * math.pi))
        scores[i] = float(np.sum(loo)) + s * log_k0
    best = int(np.argmax(scores))
    c = float(CV_GRID[best])
    info = {
        "bandwidth_rule": "cv", "bandwidth_factor": c * n ** (-1.0 / (d + 4)),
        "cv_multiplier": c, "cv_subsample": s,
        "cv_grid": [float(CV_GRID[0]), float(CV_GRID[-1]), len(CV_GRID)],
    }
    if best in (0, len(CV_GRID) - 1):
        info["cv_at_grid_edge"] = True
        _warn(
            f"Likelihood cross-validation chose the multiplier {c:g} of Scott's bandwidth, at "
            f"the edge of the grid [{CV_GRID[0]:g}, {CV_GRID[-1]:g}]; the best bandwidth may lie "
            f"beyond it. Consider a numeric bandwidth."
        )
    return C * (c * n ** (-1.0 / (d + 4))) ** 2, info


class _Kernel:
    """A fitted Gaussian kernel: reference data, whitening, normalising constant."""

    def __init__(self, X, bandwidth, rng):
        self.X = X
        self.n, self.d = X.shape
        self.H, self.info = _kernel_covariance(X, bandwidth, rng)
        rule = self.info["bandwidth_rule"]
        self.L = kernel_cholesky(self.H, rule)
        self.mean = X.mean(axis=0)
        self.Z = whiten_rows(X, self.mean, self.L)
        # log of the kernel's value at 0: -(d log 2 pi + log det H) / 2
        self.log_k0 = -0.5 * (self.d * math.log(2 * math.pi) + 2.0 * np.log(np.diag(self.L)).sum())
        self.info["kernel_sd"] = np.sqrt(np.diag(self.H)).tolist()


def _evaluate(kernel, Q, *, self_query, log, mode, precision, reference_size, rng,
              probe_seed=0):
    """Log-density (or density) of the fitted kernel at Q.

    Returns ``(values, info, rel_se)``; ``rel_se`` is the per-point relative
    standard error of the scalable estimate (None in exact mode).
    """
    n = kernel.n
    if mode == "auto":
        mode = "exact" if n <= max(EXACT_MAX_ROWS, reference_size) else "scalable"
    dtype = np.float32 if precision == "float32" else np.float64
    Zq = kernel.Z if self_query else whiten_rows(Q, kernel.mean, kernel.L)
    info = dict(kernel.info, precision=precision, log=log)
    rel_se = None
    if mode == "exact" or reference_size >= n:
        Qa, RaT = _augment(kernel.Z, dtype)
        if not self_query:
            Qa, _ = _augment(Zq, dtype)
        log_sum, _ = _log_kernel_sums(Qa, RaT, precision)
        out = log_sum - math.log(n) + kernel.log_k0
        info.update(mode="exact", error="none: exact sum over all reference points")
        if self_query:
            # share of the density due to each point's own kernel term (exp(0) = 1)
            info["self_share_median"] = float(np.median(np.exp(-log_sum)))
    else:
        rows = sample_rows(kernel.X, reference_size, rng)
        out, rel_se, parts = subsample_log_density(
            Zq, kernel.Z[rows], n, kernel.log_k0, ref_rows=rows, self_query=self_query,
            precision=precision)
        if self_query:
            info["self_share_median"] = float(np.median(1.0 - parts["share"]))
            info["others_rel_se_median"] = float(np.median(parts["se_rel_mean"]))
            # the se is blind to rare large terms: scaled on exact probe rows (see
            # calibrate_error), the partitioned density's probes
            probes = probe_positions(n, probe_seed, DENSITY_PROBES)
            exact = log_kernel_sum(kernel.Z[probes], kernel.Z) - math.log(n) + kernel.log_k0
            scale, figures = calibrate_error(exact, out[probes], rel_se[probes])
            rel_se = rel_se * scale
            info.update(figures)
        info.update(
            mode="scalable", reference_size=int(rows.size),
            error="estimated relative standard error of f (statistical, not a hard bound)"
            + ("; scaled by error_scale, calibrated on probe rows whose exact value is summed "
               "over all rows: about 68% of rows lie within it" if self_query else ""),
            rel_se_median=float(np.median(rel_se)), rel_se_p90=float(np.quantile(rel_se, 0.9)),
            rel_se_max=float(np.max(rel_se)),
        )
    if not log:
        out = np.exp(out)
    return out, info, rel_se


def log_kernel_sum(Zq, Zr, chunk=65_536):
    """``log sum_r exp(-||z - r||^2 / 2)`` per whitened query row z over whitened rows Zr.

    Exact (float64 tiles, underflow-safe), by chunks of reference rows: O(chunk d)
    extra memory. A query row that is also a reference row counts its own term.

    Examples
    --------
    >>> Z = np.array([[0.0], [1.0]])
    >>> bool(np.allclose(log_kernel_sum(Z, Z), np.log(1 + np.exp(-0.5))))
    True
    """
    Pa, _ = _augment(Zq, np.float64)
    total = np.full(Zq.shape[0], -np.inf)
    for a in range(0, Zr.shape[0], chunk):
        _, RaT = _augment(Zr[a:a + chunk], np.float64)
        total = np.logaddexp(total, _log_kernel_sums(Pa, RaT, "float64")[0])
    return total


def subsample_log_density(Zq, Zr, n, log_k0, *, ref_rows, query_rows=None, self_query=True,
                          precision="float64"):
    """Log-density at whitened query rows from a reference subsample, own term exact.

    The estimator of the scalable mode, shared by the partitioned density so the
    two paths give one lens: ``f(x) = (1/n) [K(0) + (pool) mean_{r != x} K(x - r)]``
    over the reference rows ``Zr`` (whitened; ``ref_rows`` their sorted data
    index), pool = n - 1 other rows for a data row (``self_query``) and n for a
    new point. ``query_rows``: sorted data index of the query rows (None: 0..n-1).
    With every row as a reference the sum is exact (its se 0).

    Returns
    -------
    log_f : ndarray
    rel_se : ndarray
        Relative standard error of f (sample variance, finite-population correction).
    parts : dict
        ``share`` (others' share of f) and ``se_rel_mean`` (relative se of their mean).

    Examples
    --------
    >>> Z = np.random.default_rng(0).normal(size=(50, 2))
    >>> logf, se, _ = subsample_log_density(Z, Z, 50, 0.0, ref_rows=np.arange(50))
    >>> from scipy.special import logsumexp
    >>> D = ((Z[:, None] - Z[None]) ** 2).sum(-1)
    >>> bool(np.allclose(logf, logsumexp(-D / 2, axis=1) - np.log(50))), float(se.max())
    (True, 0.0)
    """
    dtype = np.float32 if precision == "float32" else np.float64
    m = ref_rows.size
    Qa, _ = _augment(Zq, dtype)
    _, RaT = _augment(Zr, dtype)
    log1, log2 = _log_kernel_sums(Qa, RaT, precision, second=True,
                                  ref_rows=ref_rows if self_query else None,
                                  query_rows=query_rows)
    m_i = np.full(Zq.shape[0], float(m))
    if self_query:
        qpos = np.arange(Zq.shape[0]) if query_rows is None else query_rows
        _, qi, _ = np.intersect1d(qpos, ref_rows, assume_unique=True, return_indices=True)
        m_i[qi] -= 1.0  # a point never samples itself
        pool = n - 1  # the other points of the full sum
    else:
        pool = n
    m_i = np.maximum(m_i, 1.0)
    # mean kernel value over the sample and its relative standard error
    # (sample variance, finite-population correction)
    log_mean = log1 - np.log(m_i)
    with np.errstate(invalid="ignore", over="ignore"):
        ratio = np.exp(log2 - 2.0 * log_mean - np.log(m_i))  # mean(K^2) / mean(K)^2
    ratio = np.where(np.isfinite(ratio), ratio, 1.0)  # rows with no mass at all
    var_rel = np.maximum(ratio - 1.0, 0.0) * m_i / np.maximum(m_i - 1.0, 1.0)
    se_rel_mean = np.sqrt(var_rel / m_i * max(0.0, 1.0 - m / pool))
    log_others = log_mean + math.log(pool)
    if self_query:
        log_total = np.logaddexp(0.0, log_others)  # own term exp(0) = 1, plus the others
        share = np.exp(log_others - log_total)
    else:
        log_total, share = log_others, np.ones_like(log_others)
    out = log_total - math.log(n) + log_k0
    return out, se_rel_mean * share, {"share": share, "se_rel_mean": se_rel_mean}


def check_bandwidth(name, value, *, context=""):
    """A rule name or a number h in (0, 1e100]: h squared stays a finite float.

    Examples
    --------
    >>> check_bandwidth("bandwidth", "Scott"), check_bandwidth("bandwidth", 2)
    ('scott', 2.0)
    """
    value = check_float_or_choice(name, value, BANDWIDTH_RULES, lo=0.0, lo_open=True,
                                  context=context)
    if not isinstance(value, str) and value > MAX_BANDWIDTH:
        raise ParameterError(
            f"The bandwidth {value:g} of {context or 'density'} is above {MAX_BANDWIDTH:g}: its "
            f"square (the kernel covariance) would overflow. Give a bandwidth near the spread "
            f"of the data, or a rule such as 'scott'."
        )
    return value


#: The one declaration of the lens: function, transformer, registry, CLI and docs follow.
DENSITY = LensDecl(
    "density",
    summary="Gaussian kernel density (log by default)",
    cost="exact O(n^2 d) up to 50,000 rows; scalable O(n m d), m = 20,000",
    params=(
        Param("bandwidth", "scott", check_bandwidth,
              "kernel width: a number h (isotropic), 'scott', 'silverman' or 'cv'",
              type='float or {"scott", "silverman", "cv"}',
              more="``\"scott\"``: full covariance ``cov(X) n^(-2/(d+4))`` (as\n"
                   "``scipy.stats.gaussian_kde``); ``\"silverman\"``: diagonal, see\n"
                   ":func:`silverman_bandwidth`; ``\"cv\"``: the multiplier of Scott's\n"
                   "bandwidth (1/8 to 8, 25 steps) that maximises the leave-one-out\n"
                   "log-likelihood on a random subsample of ``s = min(n, 2000)`` rows (with\n"
                   "Scott's covariance for s rows), then applied to Scott's covariance for\n"
                   "all n rows; a warning when it lands on the edge of the grid; a float\n"
                   "``h``: isotropic kernel ``h^2 I``."),
        Param("log", True, check_bool, "log-density (true) or density (false)", type="bool",
              more="The density spans many orders of magnitude."),
        Param("mode", "auto", partial(check_choice, choices=MODES),
              "exact sum, subsample estimate with standard error, or auto by size",
              type='{"auto", "exact", "scalable"}',
              more='``"auto"`` is exact up to 50,000 rows, scalable above.'),
        Param("precision", "float64", partial(check_choice, choices=PRECISIONS),
              "tile arithmetic; float32 is about twice as fast",
              type='{"float64", "float32"}',
              more="Relative error about 1e-5 (sums are accumulated in float64)."),
        Param("reference_size", REFERENCE_SIZE, partial(check_int, lo=2),
              "subsample size of the scalable mode", type="int >= 2"),
        Param("random_state", 0, keep, 'seeds the subsamples (scalable mode, "cv")',
              type="int, numpy Generator or None", lens=False),
    ),
)


@DENSITY.function
def gaussian_density(
    X, *, bandwidth, log, mode, precision, reference_size, random_state, return_info=False,
):
    """Gaussian kernel density of the sample at each of its own points.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        A 1-D array is read as one feature.
    {lens_params}
    return_info : bool, default=False
        Also return a dict: mode, bandwidth rule and factor, kernel sd per
        feature, error estimate, ``self_share_median``; in scalable mode also
        ``rel_se``, the per-point relative standard error (an array).

    Returns
    -------
    values : ndarray of shape (n_samples,)
    info : dict
        Only with ``return_info=True``.

    Raises
    ------
    ParameterError
        A parameter out of range.
    InputError
        Non-finite data, too few rows, or a singular kernel covariance.

    Notes
    -----
    ``f(x) = (1/n) sum_i N(x - x_i; 0, H)``, each point's own term included
    (as in ``scipy.stats.gaussian_kde``). With ``H = L L^T`` and
    ``z = L^-1 (x - mean)``, ``log f(x) = log sum_i exp(-||z - z_i||^2 / 2) -
    log n - (d log 2 pi + log det H) / 2``; rows whose sum underflows are summed
    again shifted by their largest term, so far-out points never give -inf.

    Exact mode: O(n^2 d) flops, O(tile) extra memory. Scalable mode: each
    point's own term exactly plus ``(n - 1)`` times the mean kernel value over
    a random subsample of ``m = reference_size`` other points: O(n m d). It is
    unbiased; ``info["rel_se_median"]`` and ``rel_se_max`` give the estimated
    relative standard error of ``f`` (sample variance with finite-population
    correction) times ``info["error_scale"]``: when the kernel is narrow
    against the spacing of the points (many dimensions) a few near neighbours
    carry the sum and the sample variance understates the error, so the se is
    calibrated on 1,000 seeded probe rows whose exact density is summed over
    all rows (about 68% of rows lie within the stated error;
    ``tail_factor_90`` times it holds 90%). A statistical estimate, not a hard
    bound; the partitioned density states the same column. ``self_share_median``
    is the median share of ``f`` due to the point's own term; near 1 the lens
    hardly varies and a wider bandwidth (``"cv"``) shows more.

    References
    ----------
    .. [1] B. W. Silverman, "Density Estimation for Statistics and Data
       Analysis", Chapman and Hall, 1986.
    .. [2] D. W. Scott, "Multivariate Density Estimation", Wiley, 1992.

    Examples
    --------
    >>> from scipy.stats import gaussian_kde
    >>> X = np.random.default_rng(0).normal(size=(500, 2))
    >>> logf = gaussian_density(X)
    >>> logf.shape, bool(np.allclose(logf, gaussian_kde(X.T).logpdf(X.T)))
    ((500,), True)
    """
    X = check_array(X, "gaussian_density", min_rows=2)
    rng = check_random_state(random_state)
    kernel = _Kernel(X, bandwidth, rng)
    values, info, rel_se = _evaluate(
        kernel, X, self_query=True, log=log, mode=mode, precision=precision,
        reference_size=reference_size, rng=rng, probe_seed=random_state,
    )
    _refuse_constant(values, kernel.info)
    if not return_info:
        return values
    if rel_se is not None:
        info["rel_se"] = rel_se
    return values, info


def _refuse_constant(values, info):
    """ParameterError when a fixed bandwidth gives every row the same density."""
    if info.get("bandwidth_rule") != "fixed" or values.size < 2:
        return
    top = float(np.max(np.abs(values)))
    if float(np.ptp(values)) <= 1e-12 * max(1.0, top):
        raise ParameterError(
            f"The bandwidth {info['bandwidth_h']:g} gives every row the same density: each "
            f"row's kernel reaches no other row (a bandwidth far below the distances between "
            f"rows), or all rows are identical. A constant lens is refused; give a larger "
            f"bandwidth or a rule such as 'scott'."
        )


@DENSITY.estimator
class GaussianDensity(LensOutputMixin, TransformerMixin, BaseEstimator):
    """Gaussian kernel density as a transformer (one output column).

    Parameters
    ----------
    {lens_params}

    Attributes
    ----------
    covariance_ : ndarray of shape (n_features, n_features)
        Kernel covariance used.
    n_features_in_ : int
    feature_names_in_ : ndarray of str
        Column names of a DataFrame given to ``fit`` (only then).
    info_ : dict
        Bandwidth rule and factor, kernel sd (set by ``fit``); after
        ``fit_transform`` also mode and error estimate (``transform`` leaves
        the fitted estimator unchanged).

    Notes
    -----
    ``fit_transform(X)`` evaluates at the training points with their own
    kernel term handled exactly (equal to :func:`gaussian_density`);
    ``transform(Y)`` treats the rows of ``Y`` as new points. The output
    column is named ``density`` (``get_feature_names_out``).

    Examples
    --------
    >>> X = np.random.default_rng(0).normal(size=(300, 3))
    >>> est = GaussianDensity()
    >>> est.fit_transform(X).shape, est.transform(X[:5]).shape
    ((300, 1), (5, 1))
    >>> bool(np.allclose(est.transform(X), est.fit_transform(X)))
    True
    """

    def _params(self):
        return DENSITY.check(self.get_params(), "GaussianDensity")

    def fit(self, X, y=None):
        """Choose the kernel for ``X`` and keep ``X`` as the reference sample."""
        bandwidth = self._params()["bandwidth"]
        X = check_input(self, X, reset=True, min_rows=2, why="a kernel covariance")
        self._kernel = _Kernel(X, bandwidth, check_random_state(self.random_state))
        self.covariance_ = self._kernel.H
        self.info_ = dict(self._kernel.info)
        return self

    def _run(self, Q, self_query):
        p = self._params()
        values, info, _ = _evaluate(
            self._kernel, Q, self_query=self_query, log=p["log"], mode=p["mode"],
            precision=p["precision"], reference_size=p["reference_size"],
            rng=check_random_state(self.random_state), probe_seed=self.random_state,
        )
        return values[:, None], info

    def _output_names(self):
        return ["density"]

    def transform(self, X):
        """Density of the fitted sample at the rows of ``X`` (new points), shape (n, 1)."""
        return self._run(check_input(self, X, reset=False), self_query=False)[0]

    def fit_transform(self, X, y=None, **fit_params):
        """Fit on ``X`` and return its density at its own points, shape (n, 1)."""
        self.fit(X)
        values, self.info_ = self._run(self._kernel.X, self_query=True)
        return values


@DENSITY.register
def _density_lens(ws, *, bandwidth, log, mode, precision, reference_size):
    ws.require_rows(2, "The density lens")
    values, info = gaussian_density(
        ws.X, bandwidth=bandwidth, log=log, mode=mode, precision=precision,
        reference_size=reference_size,
        random_state=ws.random_state, return_info=True,
    )
    info.pop("rel_se", None)  # per-point array: the summary figures stay in info
    return [LensPart(values, "", info)]
