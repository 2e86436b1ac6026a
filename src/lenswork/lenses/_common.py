"""Helpers shared by the lens modules: row sampling, threaded row tiles, query checks.

* :func:`sample_rows` draws a simple random subsample keyed on the rows'
  own values, so a lens estimated from it does not depend on the row order.
* :func:`calibrate_error` scales an estimated lens's stated error on probe rows
  whose exact value is known (the scalable density, the partitioned lenses).
* :func:`parallel_rows` runs a worker over blocks of rows on a few threads
  (BLAS at one thread each); :func:`zero_self` clears the self pairs of a
  tile of an all-pairs reduction. Tiles are ``TILE_ROWS x TILE_COLS``.
* :func:`check_input` checks the rows given to a transformer's ``fit`` or
  ``transform`` (scikit-learn's contract plus lenswork's messages);
  :class:`LensOutputMixin` gives the transformers ``get_feature_names_out``.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from .._errors import InputError
from .._validation import check_finite, seed_of

__all__ = [
    "TILE_COLS",
    "TILE_ROWS",
    "ONE_SD_SHARE",
    "PROBES",
    "LensOutputMixin",
    "calibrate_error",
    "check_input",
    "parallel_rows",
    "probe_positions",
    "sample_keys",
    "sample_rows",
    "zero_self",
]

# Tile shape (rows x reference points) of the fused all-pairs reductions; 256 x 2048
# float64 = 4 MB, measured fastest at d = 20 among 64..1024 x 1024..30000
# (tests/benchmarks/bench_density.py).
TILE_ROWS = 256
TILE_COLS = 2048


def sample_rows(X, m, rng):
    """Sorted indices of a simple random subsample of ``m`` rows, chosen by row content.

    Each row gets a pseudo-random key computed from its own values (a seeded
    random projection, scaled up and reduced modulo 1), and the ``m`` rows with
    the smallest keys are taken. The subsample is uniform like
    ``rng.choice(n, m, replace=False)`` but does not depend on the row order, so
    permuting the rows permutes the lens values and changes nothing else.

    Examples
    --------
    >>> X = np.arange(20.0).reshape(10, 2)
    >>> a = sample_rows(X, 4, np.random.default_rng(0))
    >>> b = sample_rows(X[::-1], 4, np.random.default_rng(0))
    >>> a.size, sorted(X[a, 0].tolist()) == sorted(X[::-1][b, 0].tolist())
    (4, True)
    """
    n = X.shape[0]
    if m >= n:
        return np.arange(n)
    w = rng.standard_normal(X.shape[1])
    s = np.empty(n)
    for a in range(0, n, 65_536):  # in blocks: no (n, d) temporary (160 MB at 1e6 x 20)
        s[a:a + 65_536] = (X[a:a + 65_536] * w).sum(axis=1)
    key = sample_keys(X, w, float(np.std(s)), rng.random(), s)
    order = np.lexsort((np.arange(n), key))  # duplicate rows: ties are exchangeable anyway
    return np.sort(order[:m])


def sample_keys(X, w, scale, shift, s=None):
    """The keys :func:`sample_rows` ranks rows by: ``(X w) 1e6 / scale + shift`` modulo 1.

    ``w`` (a standard normal vector) and ``shift`` (uniform in [0, 1)) are drawn
    in that order from the seeded generator; ``scale`` is the sd of ``X w`` over
    all rows (ddof 0). Shared with the partitioned density, which ranks each
    partition's rows by these keys and keeps the ``m`` smallest overall, so
    both paths take the same reference rows.

    Examples
    --------
    >>> X = np.arange(6.0).reshape(3, 2)
    >>> sample_keys(X, np.array([1.0, 0.0]), 1e6, 0.5).tolist()
    [0.5, 0.5, 0.5]
    """
    if s is None:
        s = (X * w).sum(axis=1)
    return np.mod(s * (1e6 / (scale or 1.0)) + shift, 1.0)


#: The share of a normal within 1 sd (standard normal table): a stated error band's coverage.
ONE_SD_SHARE = 0.6827
#: Seeded rows at which an estimated lens is also computed exactly, to calibrate its error.
PROBES = 200


def probe_positions(n, random_state, size=PROBES):
    """Sorted positions of the ``min(size, n)`` probe rows of a seed.

    ``default_rng(seed + 1).choice(n, size, replace=False)``: the rows the
    partitioned lenses draw with :func:`lenswork.partitioned.sample_cloud` at
    seed + 1, so both paths calibrate on the same rows.

    Examples
    --------
    >>> probe_positions(1000, 0).size, probe_positions(5, 0).tolist()
    (200, [0, 1, 2, 3, 4])
    """
    size = min(size, n)
    rng = np.random.default_rng(seed_of(random_state) + 1)
    return np.sort(rng.choice(n, size, replace=False)).astype(np.int64)


def calibrate_error(exact, est, err):
    """(scale of the stated error, figures for the provenance) from the probe rows.

    The stated error of a row is a one-sd-like band: about 68.27% of rows (the share of a
    normal within 1 sd, standard normal table) have an actual error below it. With a per-row
    standard error ``err`` the band is ``error_scale * err``, error_scale = the 68.27%
    quantile of |estimate - exact| / err over the probes (1 when the se is right; a
    subsample's own variance is blind to the rare large kernel terms of a sum in high
    dimension, so it can be several times too small there). Without one (``err`` None) the
    band is that quantile of |estimate - exact|, the same for every row. ``tail_factor_90``
    / ``tail_factor_99``: the multiples of the band that cover 90% / 99% of the probes (1.64
    / 2.58 for a normal error). Shared by the single machine's scalable density and the
    partitioned lenses.

    Examples
    --------
    >>> exact = np.zeros(5)
    >>> scale, fig = calibrate_error(exact, np.array([1.0, -1, 2, -2, 4]), np.full(5, 2.0))
    >>> round(scale, 4), fig["probe_rows"]
    (1.0, 5)
    """
    actual = np.abs(est - exact)
    figures = {"probe_rows": int(exact.size), "probe_rms_error": float(np.sqrt(np.mean(
        actual**2))), "probe_max_error": float(actual.max())}
    if err is None:
        z, scale = actual, float(np.quantile(actual, ONE_SD_SHARE))
    else:
        ok = err > 0
        z = actual[ok] / err[ok] if ok.any() else np.zeros(1)
        scale = float(np.quantile(z, ONE_SD_SHARE))
    if not scale > 0:
        scale = 1.0 if err is not None else float(actual.max())
    figures.update(tail_factor_90=float(np.quantile(z, 0.9) / scale) if scale else 0.0,
                   tail_factor_99=float(np.quantile(z, 0.99) / scale) if scale else 0.0)
    if err is not None:
        figures["error_scale"] = scale
    return scale, figures


def _n_threads():
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cores = os.cpu_count() or 1
    return max(1, min(cores, 8))


def parallel_rows(work, n_rows, block=TILE_ROWS):
    """Run ``work(i0, i1)`` over blocks of rows on a few threads, BLAS at one thread each.

    ``work`` writes its results into rows ``i0:i1`` of arrays it owns, so the
    blocks never overlap; each row's arithmetic does not depend on the thread.

    Examples
    --------
    >>> out = np.zeros(1000)
    >>> def work(i0, i1):
    ...     out[i0:i1] = np.arange(i0, i1)
    >>> parallel_rows(work, 1000)
    >>> bool(np.array_equal(out, np.arange(1000)))
    True
    """
    starts = list(range(0, n_rows, block))
    threads = min(_n_threads(), len(starts))
    if threads <= 1:
        for i0 in starts:
            work(i0, min(i0 + block, n_rows))
        return
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"), ThreadPoolExecutor(threads) as pool:
        for _ in pool.map(lambda i0: work(i0, min(i0 + block, n_rows)), starts):
            pass


def zero_self(T, i0, i1, query_rows, ref_rows, j0, j1, value=0.0):
    """Set the tile entries that pair a query row with itself.

    The tile holds query rows ``i0:i1`` and reference columns ``j0:j1``;
    ``ref_rows`` (sorted) is the data index of each reference column and
    ``query_rows`` (sorted) that of each query row, ``None`` meaning 0..n-1.
    """
    cols = ref_rows[j0:j1]
    if query_rows is None:
        lo, hi = np.searchsorted(cols, (i0, i1))
        if hi > lo:
            T[cols[lo:hi] - i0, np.arange(lo, hi)] = value
        return
    _, qi, ci = np.intersect1d(query_rows[i0:i1], cols, assume_unique=True, return_indices=True)
    if qi.size:
        T[qi, ci] = value


class LensOutputMixin:
    """``get_feature_names_out`` for the lens transformers (place it before TransformerMixin).

    A transformer lists its output column names in ``_output_names()`` (the
    lens column names, e.g. ``pca_1, pca_2``); ``set_output(transform="pandas")``
    then labels the DataFrame columns with them.
    """

    def get_feature_names_out(self, input_features=None):
        """The output column names (lens names), an object array of str.

        ``input_features``, when given, must match the fitted columns (as in
        scikit-learn); it does not change the output names, which are the lens's.
        """
        from sklearn.utils.validation import check_is_fitted

        check_is_fitted(self, "n_features_in_")
        if input_features is not None:
            given = np.asarray(input_features, dtype=object)
            if given.ndim != 1 or len(given) != self.n_features_in_:
                raise InputError(
                    f"input_features should have length equal to number of features "
                    f"({self.n_features_in_}), got {given.size}. Pass the names of the columns "
                    f"{type(self).__name__} was fitted on."
                )
            fitted = getattr(self, "feature_names_in_", None)
            if fitted is not None and not np.array_equal(fitted, given):
                raise InputError(
                    f"input_features is not equal to feature_names_in_ of "
                    f"{type(self).__name__}: {list(given)} != {list(fitted)}."
                )
        return np.asarray(self._output_names(), dtype=object)


# Appended to the non-finite message of a transformer's input check; the words NaN and inf
# are what scikit-learn's estimator checks (check_estimators_nan_inf) look for.
_NONFINITE_ADVICE = "NaN and inf are not allowed: remove or impute such rows first."


def check_input(est, X, *, reset, min_rows=1, why=""):
    """``X`` checked as a transformer's ``fit`` (``reset=True``) or ``transform`` input.

    scikit-learn's ``validate_data`` does the estimator contract: 2-D input
    (1-D raises "Reshape your data"), real numbers (complex, sparse and
    non-numeric objects are refused), at least one row and one column, the
    column count of ``fit`` (``n_features_in_``) and the column names of a
    DataFrame (``feature_names_in_``). lenswork's own checks follow: the first
    non-finite entry named by row and column, and the rows the estimator needs
    (``min_rows``; ``why`` says why). Errors are :class:`InputError` (also a
    ValueError), except the TypeError numpy raises for values that are not
    numbers at all.
    """
    from sklearn.utils.validation import check_is_fitted, validate_data

    name = type(est).__name__
    method = "fit" if reset else "transform"
    if not reset:
        check_is_fitted(est, "n_features_in_")
    try:
        X = validate_data(
            est, X, reset=reset, dtype=np.float64, order="C", ensure_all_finite=False
        )
    except ValueError as err:
        text = str(err)
        advice = ""
        if "convert" in text:
            advice = " Select the numeric columns first."
        elif "is expecting" in text:
            advice = f" Pass data with the columns {name} was fitted on."
        raise InputError(f"{name}.{method}: {err}{advice}") from None
    names = getattr(est, "feature_names_in_", None)
    check_finite(
        X, f"{name}.{method}", names=None if names is None else list(names),
        advice=_NONFINITE_ADVICE,
    )
    n = X.shape[0]
    if n < min_rows:
        raise InputError(
            f"{name}.{method} got n_samples={n} row{'s' if n != 1 else ''}; it needs at least "
            f"{min_rows}{f' ({why})' if why else ''}. Use more rows."
        )
    return X
