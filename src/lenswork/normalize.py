"""Normalisation of lens columns before a cover is laid over their range.

A lens column keeps its raw values; a normalisation is recorded on the column
and applied when values are read for a cover, a ranking or an export.

=========  =============================================  =====================
method     formula                                        range
=========  =============================================  =====================
rank       (average rank - 1/2) / n, ties averaged        (0, 1)
minmax     (v - min) / (max - min)                        [0, 1]
zscore     (v - mean) / sd   (population sd)              unbounded
robust     (v - median) / IQR                             unbounded
=========  =============================================  =====================

A constant column maps to 0.5 (rank, minmax) or 0 (zscore, robust) instead of
dividing by zero.
"""

from __future__ import annotations

import numpy as np
from scipy.stats import rankdata

from ._validation import check_choice

__all__ = ["NORMALIZATIONS", "normalize"]

NORMALIZATIONS = ("rank", "minmax", "zscore", "robust")


def normalize(values, method="rank"):
    """Normalise a 1-D array of lens values.

    Parameters
    ----------
    values : array-like of shape (n_samples,)
    method : {"rank", "minmax", "zscore", "robust"}, default="rank"

    Returns
    -------
    ndarray of shape (n_samples,), float64

    Examples
    --------
    >>> normalize([10.0, 20.0, 20.0, 40.0], "rank").tolist()
    [0.125, 0.5, 0.5, 0.875]
    >>> normalize([1.0, 2.0, 3.0], "minmax").tolist()
    [0.0, 0.5, 1.0]
    """
    method = check_choice("method", method, NORMALIZATIONS, context="normalize")
    v = np.asarray(values, dtype=np.float64)
    n = v.shape[0]
    if method == "rank":
        return (rankdata(v, method="average") - 0.5) / n
    if method == "minmax":
        lo, hi = v.min(), v.max()
        return np.full(n, 0.5) if hi == lo else (v - lo) / (hi - lo)
    if method == "zscore":
        sd = v.std()
        return np.zeros(n) if sd == 0 else (v - v.mean()) / sd
    q1, med, q3 = np.percentile(v, [25, 50, 75])
    return np.zeros(n) if q3 == q1 else (v - med) / (q3 - q1)
