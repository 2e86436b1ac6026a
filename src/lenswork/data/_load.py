"""The public entry points: load_table and load_block."""

from __future__ import annotations

import numbers
import os
from pathlib import Path

import numpy as np

from .._errors import ParameterError
from .._validation import check_choice, check_int
from ._arrays import is_frame, list_to_array, raw_from_array, raw_from_frame
from ._assemble import SCALINGS, assemble
from ._files import read_file

__all__ = ["load_block", "load_table"]


def load_table(
    source, *, features=None, id_column=None, scale="auto", invalid="error", delimiter=None,
    min_rows=2,
):
    """Read a table or array into a validated :class:`PointCloud`.

    Parameters
    ----------
    source : str, path-like, ndarray or DataFrame
        A file: ``.csv`` / ``.txt`` (delimited text with a header row; the
        delimiter is detected among ``,`` ``;`` tab ``|``; quoted fields may
        hold delimiters and line breaks), ``.tsv`` / ``.tab`` (tab-separated),
        ``.npy`` (a 2-D numeric array, or a structured array whose field names
        become column names) or ``.parquet`` / ``.pq`` (needs pyarrow: ``pip
        install lenswork[parquet]``). Other endings are read as delimited text.
        Or a numpy array (columns ``x0``, ``x1``...; a 1-D array is one column)
        or a pandas DataFrame (any object with ``.columns`` and column lookup).
    features : list of str or int, or str, optional
        Feature columns, by name or 0-based position. Default: every column but
        the id column whose values are all numbers or missing (and not all
        missing). A string is the command line's selection syntax:
        comma-separated names, 1-based positions (``"3"``), position ranges
        (``"2-53"``), name ranges in table order (``"w00:w51"``) and ``~``
        before any of these to leave columns out (``"~id,~notes"``: every
        numeric column but those); ranges skip the id column. Other columns
        are passthrough: kept as they are (text from a text table) and carried
        to the outputs.
    id_column : str or int, optional
        Column of row ids, by name or 0-based position; ids must be unique.
        Default: ids 1..n in row order. Ids in a text table that are all plain
        integers become ints; other ids stay text.
    scale : {"auto", None, "zscore", "robust"}, default="auto"
        Standardise each feature column on the rows used: ``"zscore"`` is
        ``(x - mean) / std``, ``"robust"`` is ``(x - median) / IQR``. Recorded in
        ``provenance["scaling"]`` with the centre and scale of every column.
        ``"auto"`` z-scores when the columns' ranges differ by more than 100x
        (different units; :func:`lenswork.data.auto_standardise`, which warns and is
        recorded) and otherwise keeps the units; ``None`` (or ``"none"``) keeps
        them always.
    invalid : {"error", "exclude"}, default="error"
        What to do with rows holding a missing, NaN or infinite feature value:
        raise, or report them as :class:`ExcludedRow` (row number, id, reason,
        passthrough values) in ``PointCloud.excluded``, keep them out, and warn.
    delimiter : str, optional
        One character that separates columns of a text table (``"\\t"`` for a
        tab); overrides the detection.
    min_rows : int, default=2
        Fewest usable rows accepted.

    Returns
    -------
    PointCloud
        ``provenance`` holds ``source``, ``format``, ``sha256`` (of the file
        bytes; of the array values for arrays and DataFrames), ``delimiter``,
        ``n_rows_read``, ``n_rows_used``, ``scaling``, ``features``,
        ``id_column`` and ``passthrough``.

    Raises
    ------
    InputError
        The data cannot be used: missing or empty file, header only, ragged
        rows, a value that is not a number in a feature column, missing / NaN /
        inf values (unless ``invalid="exclude"``), duplicate column names or
        ids, fewer than ``min_rows`` rows, no feature column, values so large
        that squared distances overflow, text that is not UTF-8.
    ParameterError
        Unknown column names or positions, or bad option values.

    Warns
    -----
    LensworkWarning
        Constant feature columns; rows kept out; a mostly numeric column left
        out of the default features because of a cell that is not a number.

    Notes
    -----
    Text tables are parsed by the csv module in blocks of rows, and each column
    of a block is converted to float64 by numpy in one call; a cell is located
    one by one only when that call fails. Cost O(n d) time; memory about one
    block of Python strings plus the float64 columns. Missing values are empty
    cells and the texts NA, N/A, NULL, None, #N/A (any case).

    Squared distances between rows overflow float64 once
    ``4 d max|x|^2 > 1.8e308`` (the squared difference of two values can be
    ``(2 max|x|)^2`` in each of the ``d`` columns), so larger magnitudes are
    refused after any scaling.

    Examples
    --------
    >>> import tempfile, warnings
    >>> from pathlib import Path
    >>> path = Path(tempfile.mkdtemp()) / "pumps.csv"
    >>> _ = path.write_text("station,flow,pressure\\nA,1.5,3\\nB,2.5,4\\nC,,5\\nD,0.5,2\\n")
    >>> with warnings.catch_warnings(record=True):
    ...     cloud = load_table(path, id_column="station", invalid="exclude")
    >>> cloud.X.shape, cloud.feature_names, cloud.ids.tolist()
    ((3, 2), ('flow', 'pressure'), ['A', 'B', 'D'])
    >>> [(r.row, r.id, r.reason) for r in cloud.excluded]
    [(4, 'C', "missing value in column 'flow'")]
    >>> load_table(np.arange(6.0).reshape(3, 2), scale="zscore").X.round(3).tolist()
    [[-1.225, -1.225], [0.0, 0.0], [1.225, 1.225]]
    """
    scale = _check_scale(scale)
    invalid = check_choice("invalid", invalid, ("error", "exclude"), context="load_table")
    min_rows = check_int("min_rows", min_rows, lo=1, context="load_table")
    delimiter = _check_delimiter(delimiter)
    features = _check_features_arg(features)
    if id_column is not None and not _is_column_spec(id_column):
        raise ParameterError(
            f"The 'id_column' parameter of load_table must be a column name (str) or a 0-based "
            f"position (int). Got {id_column!r} instead."
        )
    opts = {"features": features, "id_column": id_column, "min_rows": min_rows}
    if isinstance(source, (str, os.PathLike)):
        raw = read_file(Path(source), delimiter, opts)
    else:
        if delimiter is not None:
            raise ParameterError(
                "The 'delimiter' parameter of load_table applies to text files only; "
                "leave it out for arrays and DataFrames."
            )
        if isinstance(source, np.ndarray):
            raw = raw_from_array(source, "the array", {"source": "array", "format": "array"})
        elif is_frame(source):
            raw = raw_from_frame(source)
        elif isinstance(source, (list, tuple)):
            raw = raw_from_array(
                list_to_array(source), "the array", {"source": "array", "format": "array"}
            )
        else:
            raise ParameterError(
                f"load_table reads a file path, a numpy array or a DataFrame; got a "
                f"{type(source).__name__}. Convert it to a numpy array first."
            )
    return assemble(raw, features, id_column, scale, invalid, min_rows)


def load_block(block, *, label, first_row=1, features=None, id_column=None, invalid="error",
               min_rows=1):
    """Validate one block of rows (a partition) with the messages of :func:`load_table`.

    A partitioned reader calls this once per partition, so a bad cell is
    reported with the partition's ``label`` and the row number it has in the
    whole table, exactly as :func:`load_table` reports it for one table.

    Parameters
    ----------
    block : ndarray or DataFrame
        The partition's rows (a 2-D numeric array, a structured array, or a
        pandas DataFrame).
    label : str
        How messages name the block, e.g. ``"partition 3 of the dask DataFrame"``.
    first_row : int, default=1
        Row number (1-based) of the block's first row in the whole table.
    features, id_column, invalid, min_rows
        As in :func:`load_table`. No scaling here: a partitioned reader scales
        with statistics of all partitions.

    Returns
    -------
    PointCloud
        Rows numbered from ``first_row``.

    Examples
    --------
    >>> from lenswork import InputError
    >>> block = np.array([[1.0, 2.0], [3.0, np.nan]])
    >>> try:
    ...     load_block(block, label="partition 2 of the array", first_row=11)
    ... except InputError as err:
    ...     print(str(err)[:63])
    Column 'x1' in partition 2 of the array has NaN at row 12; feat
    """
    invalid = check_choice("invalid", invalid, ("error", "exclude"), context="load_block")
    min_rows = check_int("min_rows", min_rows, lo=1, context="load_block")
    first_row = check_int("first_row", first_row, lo=1, context="load_block")
    features = _check_features_arg(features)
    if is_frame(block):
        raw = raw_from_frame(block)
    else:
        arr = np.asarray(block)
        raw = raw_from_array(arr, str(label), {"source": str(label), "format": "array"})
    raw.label = str(label)
    raw.provenance["source"] = str(label)
    raw.row_numbers = raw.row_numbers - raw.row_numbers[0] + first_row
    return assemble(raw, features, id_column, None, invalid, min_rows)


def _check_scale(scale):
    if scale is None or (isinstance(scale, str) and scale.strip().lower() == "none"):
        return None
    return check_choice("scale", scale, SCALINGS, context="load_table")


def _check_delimiter(delimiter):
    if delimiter is None:
        return None
    if isinstance(delimiter, str):
        text = {"\\t": "\t", "tab": "\t", "space": " "}.get(delimiter.lower(), delimiter)
        if len(text) == 1 and text not in "\"\r\n":
            return text
    raise ParameterError(
        f"The 'delimiter' parameter of load_table must be one character (e.g. ',' ';' '|' or "
        f"'\\t' for a tab), not a quote or a line break. Got {delimiter!r} instead."
    )


def _is_column_spec(value):
    return isinstance(value, str) or (
        isinstance(value, numbers.Integral) and not isinstance(value, (bool, np.bool_))
    )


def _check_features_arg(features):
    if features is None:
        return None
    if isinstance(features, str):
        if not features.strip():
            raise ParameterError(
                "The 'features' parameter of load_table is empty; name at least one column, or "
                "leave it out to use every numeric column."
            )
        return features  # the selection syntax (data._raw.parse_selection), read with the names
    if _is_column_spec(features):
        features = [features]
    try:
        features = list(features)
    except TypeError:
        raise ParameterError(
            f"The 'features' parameter of load_table must be a list of column names or 0-based "
            f"positions. Got {features!r} instead."
        ) from None
    if not features:
        raise ParameterError(
            "The 'features' parameter of load_table is an empty list; name at least one column, "
            "or leave it out to use every numeric column."
        )
    for f in features:
        if not _is_column_spec(f):
            raise ParameterError(
                f"The 'features' parameter of load_table must hold column names (str) or 0-based "
                f"positions (int). Got {f!r} in it."
            )
    return features
