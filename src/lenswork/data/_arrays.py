"""numpy arrays, lists and DataFrames read into a raw table."""

from __future__ import annotations

import hashlib

import numpy as np

from ._messages import input_error
from ._raw import RawTable, check_duplicate_names, digest_columns

__all__ = ["is_frame", "list_to_array", "raw_from_array", "raw_from_frame"]


def list_to_array(source):
    try:
        return np.asarray(source)
    except (ValueError, TypeError) as err:
        raise input_error(
            f"The list given to load_table could not be turned into a table ({err}); give "
            f"rows of equal length, or a numpy array."
        ) from None


def raw_from_array(arr, label, prov):
    if arr.dtype.names:
        if arr.ndim != 1:
            raise input_error(
                f"{label} is a structured array of shape {arr.shape}; expected one record per "
                f"row (a 1-D structured array). Flatten it first."
            )
        names = [str(nm) for nm in arr.dtype.names]
        columns = []
        for nm in arr.dtype.names:
            col = arr[nm]
            if col.ndim != 1:
                raise input_error(
                    f"Field {nm!r} of {label} holds sub-arrays of shape {col.shape[1:]}; expected "
                    f"one value per row. Split it into separate fields."
                )
            columns.append(np.array(col))
    else:
        if arr.ndim == 1:
            arr = arr[:, None]
        if arr.ndim != 2:
            raise input_error(
                f"{label} has {arr.ndim} dimensions (shape {arr.shape}); expected a 2-D array of "
                f"shape (n_samples, n_features) or a 1-D array of one feature. Reshape it first."
            )
        names = [f"x{j}" for j in range(arr.shape[1])]
        columns = [arr[:, j] for j in range(arr.shape[1])]
    n = len(columns[0]) if columns else 0
    if not columns:
        raise input_error(
            f"{label} has no feature columns (shape {arr.shape}); expected at least one column."
        )
    if n == 0:
        raise input_error(f"{label} has no rows (shape {arr.shape}); expected rows of data.")
    if "sha256" not in prov:
        if arr.dtype.kind in "biuf":
            prov["sha256"] = hashlib.sha256(np.ascontiguousarray(arr)).hexdigest()
        else:
            prov["sha256"] = digest_columns(names, columns)
    return RawTable(names, columns, np.arange(1, n + 1), label, prov)


def is_frame(obj):
    return hasattr(obj, "columns") and hasattr(obj, "__getitem__") and hasattr(obj, "shape")


def raw_from_frame(frame):
    label = "the DataFrame"
    keys = list(frame.columns)
    names = [str(k) for k in keys]
    check_duplicate_names(names, label)
    if not names:
        raise input_error(f"{label} has no columns; expected a table with numeric columns.")
    columns = []
    for key in keys:
        try:
            col = np.asarray(frame[key])
        except (TypeError, ValueError) as err:
            raise input_error(f"Column {str(key)!r} of {label} could not be read ({err}).") \
                from None
        if col.ndim != 1:
            raise input_error(
                f"Column {str(key)!r} of {label} is not one value per row (shape {col.shape}). "
                f"Give a flat table."
            )
        columns.append(col)
    n = len(columns[0])
    if n == 0:
        raise input_error(f"{label} has no rows; expected rows of data.")
    prov = {"source": "DataFrame", "format": "dataframe",
            "sha256": digest_columns(names, columns)}
    return RawTable(names, columns, np.arange(1, n + 1), label, prov)
