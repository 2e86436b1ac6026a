"""Checks on validated feature values shared by PointCloud and the table assembly."""

from __future__ import annotations

import math

import numpy as np

from ._messages import input_error, short, warn_user

__all__ = ["FEW_DISTINCT", "check_distinct_rows", "check_magnitude", "check_unique_ids"]

#: Up to this many distinct rows (twice the default k = 15), the rows are counted exactly and a
#: table with repeated rows gets a warning that says what each kind of lens does with them.
FEW_DISTINCT = 30


_FLOAT_MAX = float(np.finfo(np.float64).max)


def _overflow_limit(d):
    """Largest |x| for which 4 d x^2 (the largest squared distance) stays finite."""
    return math.sqrt(_FLOAT_MAX / (4.0 * d))


#: The smallest spread of a feature column whose squared differences stay normal floats.
_SPREAD_MIN = math.sqrt(float(np.finfo(np.float64).tiny))


def check_magnitude(X, names, rows, label, scaling):
    """Values too large for squared distances, or a spread so small that they underflow."""
    if X.shape[0] > 1:
        spread = X.max(axis=0) - X.min(axis=0)
        tiny = (spread > 0) & (spread < _SPREAD_MIN)
        if tiny.any():
            k = int(np.flatnonzero(tiny)[0])
            after = f" after {scaling} scaling" if scaling else ""
            raise input_error(
                f"Column {names[k]!r} in {label} spans only {spread[k]:.3g}{after} (subnormal or "
                f"near it): squared differences below {_SPREAD_MIN ** 2:.3g} underflow to 0, so "
                f"its distinct rows would count as identical. Rescale that column (e.g. change "
                f"its units), or pass scale='zscore' (CLI: --scale zscore)."
            )
    limit = _overflow_limit(X.shape[1])
    big = np.maximum(X.max(axis=0), -X.min(axis=0)) > limit
    if not big.any():
        return
    k = int(np.flatnonzero(big)[0])
    i = int(np.argmax(np.abs(X[:, k]) > limit))
    after = f" after {scaling} scaling" if scaling else ""
    fix = (
        "rescale that column (e.g. change its units)" if scaling == "zscore"
        else "pass scale='zscore' (CLI: --scale zscore) to standardise the features, or "
        "rescale that column"
    )
    raise input_error(
        f"Column {names[k]!r} in {label} holds {X[i, k]:.6g} at row {rows[i]}{after}: values "
        f"beyond {limit:.3g} in size make squared distances between rows overflow float64. "
        f"To fix it, {fix}."
    )


def check_unique_ids(ids, rows, what, label):
    values = ids.tolist()
    try:
        unique = len(set(values)) == len(values)
    except TypeError:
        raise input_error(
            f"{what} of {label} must be plain values (text or numbers); some are not hashable."
        ) from None
    if unique:
        return
    first = {}
    for i, v in enumerate(values):
        if v in first:
            raise input_error(
                f"Id {short(v)} appears more than once in {what} of {label} (rows "
                f"{rows[first[v]]} and {rows[i]}). Ids must be unique: fix the duplicates, or "
                f"leave id_column out to number the rows 1..n."
            )
        first[v] = i


def check_distinct_rows(X, label):
    """The number of distinct rows when it is small (<= FEW_DISTINCT) and below n, else None.

    A random projection gives a lower bound on the distinct rows in O(n d) (copies project
    alike); only when it is small are the rows compared exactly. Such a table gets a
    warning stating the result per kind of lens.
    """
    n, d = X.shape
    if n <= FEW_DISTINCT:
        return None
    direction = np.random.default_rng(0).normal(size=d)
    if np.unique(X @ direction).size > FEW_DISTINCT:
        return None
    rows = np.ascontiguousarray(X).view(np.dtype((np.void, X.dtype.itemsize * d))).ravel()
    _, copies = np.unique(rows, return_counts=True)
    m = int(copies.size)
    if m >= n or m > FEW_DISTINCT:
        return None
    lo, hi = int(copies.min()), int(copies.max())
    warn_user(
        f"{label} has only {m} distinct rows among {n} used (the others repeat them). "
        f"pca, eccentricity, density and column lenses are defined on them as usual; "
        f"knn_distance and dtm are 0 for a row with more than k copies; laplacian and "
        f"geodesic_eccentricity work on a neighbour graph whose ties among copies are broken "
        f"by position, so copies can get different values, and with k below a row's copies "
        f"(here {lo} to {hi} rows per group) the graph falls apart into the groups, with "
        f"arbitrary values across them. Use lenses of the first kind, or keep one row per "
        f"distinct value."
    )
    return m
