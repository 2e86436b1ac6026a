"""Strict JSON for every file lenswork writes.

JSON has no NaN or infinity (RFC 8259, section 6), so Python's ``json`` module,
which writes them by default, produces files that strict readers refuse.
:func:`plain` turns numpy scalars and arrays, tuples and non-finite floats into
plain JSON values (NaN and infinities become ``null``); :func:`dumps` writes with
``allow_nan=False`` so a value that slipped through raises instead of writing
invalid JSON. Every writer in the package goes through these two functions.
"""

from __future__ import annotations

import json
import math

import numpy as np

__all__ = ["dumps", "plain"]


def plain(obj):
    """Plain JSON types: dict keys as str, tuples to lists, numpy to Python, NaN/inf to None.

    Callables are written by their qualified name (a user lens in a sidecar).

    Examples
    --------
    >>> plain({"a": np.float64("nan"), "b": (np.int64(2), 1.5), 3: np.array([np.inf, 1.0])})
    {'a': None, 'b': [2, 1.5], '3': [None, 1.0]}
    """
    if isinstance(obj, dict):
        return {str(k): plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple, set, frozenset)):
        return [plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return plain(obj.tolist())
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    if callable(obj):
        return getattr(obj, "__qualname__", repr(obj))
    return obj


def dumps(obj, *, indent=2, sort_keys=False):
    """``json.dumps`` of :func:`plain` ``(obj)`` that never writes NaN or Infinity.

    Examples
    --------
    >>> dumps({"x": float("inf"), "y": [np.float32(0.5)]}, indent=None)
    '{"x": null, "y": [0.5]}'
    """
    return json.dumps(plain(obj), indent=indent, sort_keys=sort_keys, allow_nan=False)
