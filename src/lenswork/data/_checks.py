"""Checks on validated feature values shared by PointCloud and the table assembly."""

from __future__ import annotations

import math

import numpy as np

from ._messages import input_error, short

__all__ = ["check_magnitude", "check_unique_ids"]


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
