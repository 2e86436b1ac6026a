"""Data intake: tables and arrays become a validated :class:`PointCloud`.

:func:`load_table` reads a delimited text table (CSV with a header row, the
delimiter detected among ``,`` ``;`` tab ``|``; TSV), a ``.npy`` array (plain
2-D numeric or structured with field names), a Parquet file (with the
``parquet`` extra), a numpy array or a pandas DataFrame. It picks the feature
columns, an optional id column and carries every other column along untouched
(passthrough), so outputs can write them beside the lens values.

Rows are numbered as a spreadsheet shows them: in a text table the header is
row 1 and the first data row is row 2 (a record whose quoted fields span
several lines is numbered by its first line, as a text editor shows it); in
Parquet files the header is row 1 as well; in ``.npy`` files, numpy arrays and
DataFrames the first row is row 1. Every problem with the data raises
:class:`~lenswork.InputError` naming the file, the row and the column, and
what to do; bad arguments raise :class:`~lenswork.ParameterError`.
"""

from __future__ import annotations

import csv
import decimal
import difflib
import gc
import hashlib
import itertools
import math
import numbers
import os
import re
import sys
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ._errors import InputError, LensworkWarning, ParameterError
from ._validation import check_array, check_choice, check_finite, check_int

__all__ = ["ExcludedRow", "PointCloud", "load_block", "load_table"]

#: Rows parsed per block of a text table (bounded memory for the Python strings).
_CHUNK_ROWS = 65_536
#: Characters of a text table shown to the delimiter sniffer.
_SNIFF_CHARS = 8192
#: Delimiters the sniffer chooses among.
_DELIMITERS = ",;\t|"
#: Characters that separate columns in some files (used for hints only).
_DELIMITER_LIKE = ",;\t|: "
_DELIMITER_NAMES = {
    ",": "comma", ";": "semicolon", "\t": "tab", "|": "pipe", ":": "colon", " ": "space",
}
#: Cell texts read as a missing value (compared after strip() and lower()).
_MISSING_TEXT = frozenset({"", "na", "n/a", "null", "none", "#n/a"})
_DECIMAL_COMMA = re.compile(r"^\s*[-+]?\d+,\d+\s*$")
_SCALINGS = ("zscore", "robust")
_LISTED = 10  # rows / names listed in a message before "..."
_NO_INDEX = np.empty(0, dtype=np.intp)
_FLOAT_MAX = float(np.finfo(np.float64).max)


@dataclass(frozen=True)
class ExcludedRow:
    """A row kept out of every computation (only with an explicit option).

    Attributes
    ----------
    row : int
        1-based row number as a spreadsheet shows it (header = row 1 for files;
        first array row = row 1 for arrays).
    id : object
        The row's id.
    reason : str
        Why it was kept out, e.g. ``"NaN in column 'flow'"``.
    passthrough : dict
        The row's passthrough values, so outputs can still write the row.

    Examples
    --------
    >>> import warnings
    >>> X = np.array([[1.0, 2.0], [np.nan, 3.0], [4.0, 5.0]])
    >>> with warnings.catch_warnings(record=True):
    ...     cloud = load_table(X, invalid="exclude")
    >>> cloud.excluded
    (ExcludedRow(row=2, id=2, reason="NaN in column 'x0'", passthrough={}),)
    """

    row: int
    id: object
    reason: str
    passthrough: dict = field(default_factory=dict)


@dataclass(frozen=True, eq=False)
class PointCloud:
    """A validated point cloud: features, row ids, passthrough columns, provenance.

    Attributes
    ----------
    X : ndarray of shape (n_samples, n_features)
        Finite float64 feature values (after optional standardisation),
        C-contiguous.
    feature_names : tuple of str
    ids : ndarray of shape (n_samples,)
        Row ids (the id column, or 1..n).
    id_name : str
    passthrough : dict of str -> ndarray
        Non-feature columns carried to the outputs untouched.
    row_numbers : ndarray of shape (n_samples,)
        1-based source row number of each row.
    excluded : tuple of ExcludedRow
    provenance : dict
        ``source``, ``format``, ``sha256``, ``scaling`` and what else was done
        on intake (see :func:`load_table`).

    Examples
    --------
    >>> cloud = PointCloud.from_array(np.eye(3))
    >>> cloud.X.shape, cloud.feature_names
    ((3, 3), ('x0', 'x1', 'x2'))
    >>> cloud.require_rows(2, "A density lens")
    """

    X: np.ndarray
    feature_names: tuple
    ids: np.ndarray
    id_name: str
    passthrough: dict
    row_numbers: np.ndarray
    excluded: tuple
    provenance: dict

    @property
    def n(self):
        """Number of rows used."""
        return self.X.shape[0]

    @property
    def d(self):
        """Number of feature columns."""
        return self.X.shape[1]

    def require_rows(self, needed, what):
        """Raise :class:`~lenswork.InputError` when fewer than ``needed`` rows are usable.

        Parameters
        ----------
        needed : int
            Rows the computation needs.
        what : str
            The computation, for the message (e.g. ``"A neighbour graph with k=15"``).
        """
        source = self.provenance.get("source")
        label = "the data" if source in (None, "array", "DataFrame") else f"{source!r}"
        _check_rows(self.n, needed, what, label, len(self.excluded))

    @classmethod
    def from_array(cls, X, *, feature_names=None, ids=None, passthrough=None):
        """Wrap a finite 2-D numeric array (no file, no scaling).

        A 1-D array is one feature column. Raises :class:`~lenswork.InputError`
        for non-numeric, non-finite or overflow-prone values and for arrays of
        other shapes; :func:`load_table` is the way to report and skip bad rows.
        """
        label, context = "the array", "PointCloud.from_array"
        X = check_array(X, context, label=label, allow_bool=False, finite=False)
        n, d = X.shape
        if feature_names is None:
            feature_names = tuple(f"x{j}" for j in range(d))
        feature_names = tuple(str(f) for f in feature_names)
        if len(feature_names) != d:
            raise ParameterError(
                f"feature_names has {len(feature_names)} names but the array has {d} columns; "
                f"give one name per column."
            )
        rows = np.arange(1, n + 1)
        check_finite(
            X, context, names=feature_names, label=label,
            advice="Fix or remove such rows, or load them with lenswork.load_table(..., "
            "invalid='exclude') to report them and keep them out.",
        )
        _check_magnitude(X, feature_names, rows, label, None)
        if ids is None:
            ids = np.arange(1, n + 1)
        else:
            ids = np.asarray(ids)
            if ids.shape != (n,):
                raise ParameterError(
                    f"ids must hold one id per row ({n}); got shape {ids.shape}."
                )
            _check_unique_ids(ids, rows, "the ids", label)
        passthrough = dict(passthrough or {})
        for name, col in passthrough.items():
            if len(col) != n:
                raise ParameterError(
                    f"Passthrough column {name!r} has {len(col)} values; the array has {n} rows."
                )
        return cls(
            X=X,
            feature_names=feature_names,
            ids=ids,
            id_name="row",
            passthrough=passthrough,
            row_numbers=rows,
            excluded=(),
            provenance={
                "source": "array", "format": "array", "sha256": hashlib.sha256(X).hexdigest(),
                "scaling": None, "n_rows_read": n, "features": list(feature_names),
                "id_column": None,
            },
        )


# ---------------------------------------------------------------- public entry
def load_table(
    source, *, features=None, id_column=None, scale=None, invalid="error", delimiter=None,
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
    features : list of str or int, optional
        Feature columns, by name or 0-based position. Default: every column but
        the id column whose values are all numbers or missing (and not all
        missing). Other columns are passthrough: kept as they are (text from a
        text table) and carried to the outputs.
    id_column : str or int, optional
        Column of row ids, by name or 0-based position; ids must be unique.
        Default: ids 1..n in row order. Ids in a text table that are all plain
        integers become ints; other ids stay text.
    scale : {None, "zscore", "robust"}, default=None
        Standardise each feature column on the rows used: ``"zscore"`` is
        ``(x - mean) / std``, ``"robust"`` is ``(x - median) / IQR``. Recorded in
        ``provenance["scaling"]`` with the centre and scale of every column.
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
        raw = _read_file(Path(source), delimiter, opts)
    else:
        if delimiter is not None:
            raise ParameterError(
                "The 'delimiter' parameter of load_table applies to text files only; "
                "leave it out for arrays and DataFrames."
            )
        if isinstance(source, np.ndarray):
            raw = _raw_from_array(source, "the array", {"source": "array", "format": "array"})
        elif _is_frame(source):
            raw = _raw_from_frame(source)
        elif isinstance(source, (list, tuple)):
            raw = _raw_from_array(
                _list_to_array(source), "the array", {"source": "array", "format": "array"}
            )
        else:
            raise ParameterError(
                f"load_table reads a file path, a numpy array or a DataFrame; got a "
                f"{type(source).__name__}. Convert it to a numpy array first."
            )
    return _finish(raw, features, id_column, scale, invalid, min_rows)


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
    if _is_frame(block):
        raw = _raw_from_frame(block)
    else:
        arr = np.asarray(block)
        raw = _raw_from_array(arr, str(label), {"source": str(label), "format": "array"})
    raw.label = str(label)
    raw.provenance["source"] = str(label)
    raw.row_numbers = raw.row_numbers - raw.row_numbers[0] + first_row
    return _finish(raw, features, id_column, None, invalid, min_rows)


# ---------------------------------------------------------------- argument checks
def _check_scale(scale):
    if scale is None or (isinstance(scale, str) and scale.strip().lower() == "none"):
        return None
    return check_choice("scale", scale, _SCALINGS, context="load_table")


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


# ---------------------------------------------------------------- messages
def _input_error(message):
    """An InputError whose message starts with a capital ("The array has ...")."""
    return InputError(message[:1].upper() + message[1:])


def _short(value, width=40):
    value = _plain(value)
    text = repr(value) if isinstance(value, str) else str(value)
    return text if len(text) <= width else text[: width - 3] + "..."


def _names_list(names):
    shown = ", ".join(repr(n) for n in names[:30])
    return shown + (f", ... ({len(names)} in all)" if len(names) > 30 else "")


def _rows_list(rows):
    shown = ", ".join(str(int(r)) for r in rows[:_LISTED])
    return shown + (f" and {len(rows) - _LISTED} more" if len(rows) > _LISTED else "")


def _describe_bad(value, missing):
    if missing:
        return "a missing value"
    if np.isnan(value):
        return "NaN"
    return "-inf" if value < 0 else "inf"


def _warn(message):
    """Warn with the first frame outside lenswork as the location."""
    level, frame = 1, sys._getframe(0)
    while frame is not None and frame.f_globals.get("__name__", "").startswith("lenswork"):
        frame = frame.f_back
        level += 1
    warnings.warn(message, LensworkWarning, stacklevel=level)


def _check_rows(n, needed, what, label, n_excluded=0):
    if n < needed:
        kept_out = f" ({n_excluded} more kept out as invalid)" if n_excluded else ""
        raise _input_error(
            f"{what} needs at least {needed} rows; {label} has {n} usable"
            f" row{'s' if n != 1 else ''}{kept_out}. Use more rows"
            f"{', fix the rows kept out' if n_excluded else ''} or smaller parameters."
        )


def _not_number_error(label, name, value, row):
    return _input_error(
        f"Column {name!r} in {label} holds {_short(value)} at row {row}, which is not a number. "
        f"Choose numeric feature columns (features=[...]; CLI: --features), or fix the cell."
    )


# ---------------------------------------------------------------- the raw table
@dataclass
class _Raw:
    """A table as read, before features are chosen (one array per column)."""

    names: list
    columns: list  # float64 arrays (parsed, NaN = missing) or the cells as read
    row_numbers: np.ndarray
    label: str
    provenance: dict
    is_text: bool = False
    parsed: set = field(default_factory=set)  # columns already float64
    text: dict = field(default_factory=dict)  # column -> _NotNumber of its first non-number
    missing: dict = field(default_factory=dict)  # column -> indices of missing cells
    selection: tuple = None  # (feature indices or None, id index or None) once resolved

    @property
    def n(self):
        return len(self.row_numbers)


class _NotNumber(Exception):
    """A cell that is not a number: its index and value (and whether most cells are numbers)."""

    def __init__(self, index, value, mostly_numbers=False):
        super().__init__(index, value)
        self.index, self.value, self.mostly_numbers = index, value, mostly_numbers


def _check_duplicate_names(names, label):
    seen = {}
    for j, name in enumerate(names):
        if name in seen:
            raise _input_error(
                f"{label} has two columns named {name!r} (columns {seen[name] + 1} and {j + 1}); "
                f"column names must be unique. Rename one of them."
            )
        seen[name] = j


def _resolve(spec, names, label, what):
    """Index of the column ``spec`` (name or 0-based position) or ParameterError."""
    if isinstance(spec, str):
        for key in (spec, spec.strip()):
            if key in names:
                return names.index(key)
        key = spec.strip()
        close = difflib.get_close_matches(key, names, n=1) or [
            n for n in names if n.lower() == key.lower()
        ][:1]
        hint = f" Did you mean {close[0]!r}?" if close else ""
        raise ParameterError(
            f"Unknown {what} {spec!r} in {label}.{hint} Valid columns: {_names_list(names)}."
        )
    pos = int(spec)
    if not 0 <= pos < len(names):
        raise ParameterError(
            f"The {what} position {pos} is out of range: {label} has {len(names)} columns "
            f"(0-based positions 0-{len(names) - 1}; 1-{len(names)} on the command line). "
            f"Valid columns: {_names_list(names)}."
        )
    return pos


def _resolve_selection(names, features, id_column, label):
    """(feature indices or None, id index or None), with every argument check."""
    id_j = None if id_column is None else _resolve(id_column, names, label, "id column")
    if features is None:
        return None, id_j
    feats = []
    for spec in features:
        j = _resolve(spec, names, label, "feature column")
        if j in feats:
            raise ParameterError(
                f"Feature column {names[j]!r} is listed twice in features; list each column once."
            )
        if j == id_j:
            raise ParameterError(
                f"Column {names[j]!r} is chosen both as the id column and as a feature; "
                f"drop it from features or choose another id column."
            )
        feats.append(j)
    return feats, id_j


# ---------------------------------------------------------------- number parsing
def _parse_text_cells(cells):
    """Cells of text -> (float64 values with NaN where missing, missing indices)."""
    n = len(cells)
    if n:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                values = np.loadtxt(cells, dtype=np.float64, comments=None, ndmin=1)
            if values.shape == (n,):  # blank cells are skipped by loadtxt: parse slowly
                return values, _NO_INDEX
        except (ValueError, TypeError):
            pass
    return _parse_cells(cells)


def _is_missing_object(value):
    return value is None or type(value).__name__ in ("NAType", "NaTType")


def _parse_cells(cells):
    """Cell by cell (text or Python objects); raises _NotNumber at the first non-number."""
    out = np.empty(len(cells), dtype=np.float64)
    missing = []
    for i, cell in enumerate(cells):
        if isinstance(cell, (bytes, np.bytes_)):
            cell = cell.decode("utf-8", "replace")
        if isinstance(cell, str):
            try:
                out[i] = float(cell)
            except ValueError:
                if cell.strip().lower() in _MISSING_TEXT:
                    out[i] = np.nan
                    missing.append(i)
                    continue
                raise _NotNumber(i, cell) from None
        elif _is_missing_object(cell):
            out[i] = np.nan
            missing.append(i)
            continue
        elif isinstance(cell, (numbers.Real, decimal.Decimal)) and not isinstance(
            cell, (bool, np.bool_)
        ):
            try:
                out[i] = float(cell)
            except OverflowError:  # an int beyond float range
                out[i] = math.inf if cell > 0 else -math.inf
            except (ValueError, TypeError):
                raise _NotNumber(i, cell) from None
        else:
            raise _NotNumber(i, cell)
    return out, np.asarray(missing, dtype=np.intp)


def _mostly_numbers(cells, limit=1000):
    """True when most of the first ``limit`` cells that are not missing are numbers."""
    counts = [0, 0]
    for cell in itertools.islice(cells, limit):
        try:
            _, miss = _parse_cells([cell])
        except _NotNumber:
            counts[1] += 1
            continue
        counts[0] += not len(miss)
    return counts[0] > 0 and counts[0] >= counts[1]


def _column_numbers(raw, j):
    """Column ``j`` as float64 (NaN where missing) and its missing indices, or _NotNumber."""
    if j in raw.parsed:
        return raw.columns[j], raw.missing.get(j, _NO_INDEX)
    if j in raw.text:
        raise raw.text[j]
    col = raw.columns[j]
    kind = col.dtype.kind
    if kind in "iuf":
        return col.astype(np.float64), _NO_INDEX
    if kind == "U":
        return _parse_text_cells(col.tolist())
    if kind in "OS":
        return _parse_cells(col)
    # booleans, complex numbers, dates, raw bytes: not feature values
    raise _NotNumber(0, col[0], False)


# ---------------------------------------------------------------- files
def _read_file(path, delimiter, opts):
    label = f"'{path}'"
    if not path.exists():
        raise _input_error(
            f"File {label} not found (working directory: {os.getcwd()}). Check the path."
        )
    if path.is_dir():
        raise _input_error(
            f"{label} is a directory; give the path of a table file (.csv, .tsv, .npy, .parquet)."
        )
    suffix = path.suffix.lower()
    if suffix in (".xlsx", ".xls", ".ods", ".npz"):
        kind = "an .npz archive" if suffix == ".npz" else "a spreadsheet workbook"
        fix = "save one array with numpy.save (.npy)" if suffix == ".npz" else "export it as CSV"
        raise _input_error(f"{label} is {kind}, which lenswork does not read; {fix}.")
    if suffix in (".npy", ".parquet", ".pq") and delimiter is not None:
        raise ParameterError(
            "The 'delimiter' parameter of load_table applies to text files only; leave it out "
            f"for {suffix} files."
        )
    try:
        size = path.stat().st_size
        digest = _sha256_file(path)
    except OSError as err:
        raise _input_error(f"{label} could not be read ({err.strerror}). Check its permissions.") \
            from None
    if size == 0:
        raise _input_error(
            f"{label} is empty (0 bytes); expected a header row with column names and at least "
            f"{opts['min_rows']} rows of data. Check that this is the right file."
        )
    prov = {"source": str(path), "sha256": digest}
    if suffix == ".npy":
        return _read_npy(path, label, dict(prov, format="npy"))
    if suffix in (".parquet", ".pq"):
        return _read_parquet(path, label, dict(prov, format="parquet"))
    fmt = "tsv" if suffix in (".tsv", ".tab") else "csv"
    return _read_delimited(path, label, delimiter, dict(prov, format=fmt), opts)


def _sha256_file(path):
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _read_npy(path, label, prov):
    with open(path, "rb") as fh:
        magic = fh.read(6)
    if magic != b"\x93NUMPY":
        raise _input_error(
            f"{label} is not a .npy file (no NumPy header). Save arrays with numpy.save, or give "
            f"a text table a .csv ending."
        )
    try:
        arr = np.load(path, allow_pickle=False)
    except ValueError as err:
        if "pickle" in str(err):
            raise _input_error(
                f"{label} holds Python objects (an object array), which lenswork does not load. "
                f"Save a numeric or structured array instead."
            ) from None
        raise _input_error(f"{label} could not be read as a .npy file ({err}).") from None
    except (OSError, EOFError) as err:
        raise _input_error(f"{label} could not be read as a .npy file ({err}); it may be "
                         f"truncated.") from None
    return _raw_from_array(arr, label, prov)


def _read_parquet(path, label, prov):
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ImportError:
        raise _input_error(
            f"Reading the Parquet file {label} needs pyarrow, an optional extra: install it with "
            f"`pip install lenswork[parquet]`, or save the table as CSV."
        ) from None
    try:
        table = pq.read_table(path)
    except Exception as err:  # pyarrow raises several types for a damaged file
        raise _input_error(
            f"{label} could not be read as Parquet ({err}). Check that it is a Parquet file, or "
            f"save the table as CSV."
        ) from None
    names = [str(c) for c in table.column_names]
    _check_duplicate_names(names, label)
    if not names:
        raise _input_error(f"{label} has no columns; expected a table with numeric columns.")
    columns = []
    for j in range(table.num_columns):
        col = table.column(j)
        typ = col.type
        plain = pa.types.is_integer(typ) or pa.types.is_floating(typ) or pa.types.is_boolean(typ)
        if plain and col.null_count == 0:
            columns.append(np.asarray(col.to_numpy()))
        else:
            columns.append(_object_array(col.to_pylist()))
    n = table.num_rows
    if n == 0:
        raise _input_error(
            f"{label} has column names but no data rows; expected rows of data. Check the file."
        )
    return _Raw(names, columns, np.arange(2, n + 2), label, prov)


def _object_array(values):
    out = np.empty(len(values), dtype=object)
    for i, v in enumerate(values):
        out[i] = v
    return out


# ---------------------------------------------------------------- delimited text
def _read_delimited(path, label, delimiter, prov, opts):
    with open(path, "rb") as fh:
        head = fh.read(8192)
    if head.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise _input_error(
            f"{label} is UTF-16 text; lenswork reads UTF-8. Save it as UTF-8 (in a spreadsheet "
            f"program: 'CSV UTF-8')."
        )
    if b"\x00" in head:
        raise _input_error(
            f"{label} looks like a binary file, not a text table (it holds NUL bytes). Export "
            f"the data as CSV, or give a .npy / .parquet file its proper ending."
        )
    reader = None
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            sample = fh.read(_SNIFF_CHARS)
        if not sample.strip():
            raise _input_error(
                f"{label} is empty (only blank lines); expected a header row with column names "
                f"and at least {opts['min_rows']} rows of data. Check that this is the right file."
            )
        delim, how = _choose_delimiter(sample, delimiter, prov["format"])
        prov.update(delimiter=delim, delimiter_from=how)
        with open(path, newline="", encoding="utf-8-sig") as fh:
            reader = csv.reader(fh, delimiter=delim)
            names = _read_header(reader, label, opts)
            feats, id_j = _resolve_selection(names, opts["features"], opts["id_column"], label)
            raw = _read_body(reader, names, label, delim, feats, id_j, prov)
        if raw.n == 0:
            raise _input_error(
                f"{label} has a header row but no data rows; expected at least "
                f"{opts['min_rows']} rows of data below the header. Add the data rows."
            )
        prov["first_row"] = int(raw.row_numbers[0])
        late = [j for j, col in enumerate(raw.columns) if col is None]
        if late:
            _reread_text_columns(path, delim, raw, late)
        raw.selection = (feats, id_j)
        return raw
    except UnicodeDecodeError:
        raise _decode_error(path, label) from None
    except csv.Error as err:
        where = f" near row {reader.line_num}" if reader is not None else ""
        raise _input_error(
            f"{label} could not be read as delimited text{where} ({err}). Check the quotes in "
            f"that row."
        ) from None


def _decode_error(path, label):
    data = path.read_bytes()
    try:
        data.decode("utf-8")
    except UnicodeDecodeError as err:
        line = data.count(b"\n", 0, err.start) + 1
        byte = data[err.start]
        return _input_error(
            f"{label} is not UTF-8 text: row {line} holds the byte 0x{byte:02x}, which cannot be "
            f"decoded. Save the file as UTF-8 (in a spreadsheet program: 'CSV UTF-8'), or "
            f"convert it, e.g. `iconv -f latin1 -t utf-8`."
        )
    return _input_error(f"{label} is not UTF-8 text. Save the file as UTF-8.")  # pragma: no cover


def _choose_delimiter(sample, given, fmt):
    if given is not None:
        return given, "given"
    if fmt == "tsv":
        return "\t", "format"
    if len(sample) >= _SNIFF_CHARS and "\n" in sample:  # drop the cut-off last line
        sample = sample[: sample.rindex("\n") + 1]
    first = next((line for line in sample.splitlines() if line.strip()), "")
    try:
        found = csv.Sniffer().sniff(sample, delimiters=_DELIMITERS).delimiter
    except Exception:  # the sniffer is a heuristic; any failure means "not detected"
        found = None
    if found is None or found not in first:
        counts = {c: first.count(c) for c in _DELIMITERS}
        best = max(_DELIMITERS, key=lambda c: counts[c])
        found = best if counts[best] else ","
    return found, "detected"


def _read_header(reader, label, opts):
    for record in reader:
        if any(cell.strip() for cell in record):
            names = [cell.strip() or f"column_{j + 1}" for j, cell in enumerate(record)]
            _check_duplicate_names(names, f"The header row of {label}")
            if all(_is_number_text(c) for c in names):
                _warn(
                    f"The first row of {label} holds only numbers ({_names_list(names[:5])}) but "
                    f"is read as the header row of column names. If the file has no header, "
                    f"add one."
                )
            return names
    raise _input_error(
        f"{label} is empty (only blank lines); expected a header row with column names and at "
        f"least {opts['min_rows']} rows of data. Check that this is the right file."
    )


def _is_number_text(text):
    try:
        float(text)
    except ValueError:
        return False
    return True


def _chunks(reader, width, label, delim):
    """Blocks of data records (blank lines dropped, widths checked) and their row numbers."""
    prev = reader.line_num
    while True:
        block = list(itertools.islice(reader, _CHUNK_ROWS))
        if not block:
            return
        end = reader.line_num
        if end - prev == len(block):
            starts = np.arange(prev + 1, end + 1, dtype=np.int64)
        else:  # quoted fields span lines: count the line breaks inside them
            starts = np.empty(len(block), dtype=np.int64)
            line = prev + 1
            for i, record in enumerate(block):
                starts[i] = line
                line += 1 + sum(f.count("\n") + f.count("\r") - f.count("\r\n") for f in record)
        prev = end
        if any(len(record) != width for record in block):
            block, starts = _drop_blank(block, starts, width, label, delim)
            if not block:
                continue
        yield block, starts


def _drop_blank(block, starts, width, label, delim):
    keep_rec, keep_row = [], []
    for record, row in zip(block, starts, strict=True):
        if not record or (width > 1 and len(record) == 1 and not record[0].strip()):
            continue  # a blank line is no row of data
        if len(record) != width:
            name = _DELIMITER_NAMES.get(delim, repr(delim))
            raise _input_error(
                f"Row {row} of {label} has {len(record)} fields, but the header has {width}. "
                f"Check that row for a stray or missing delimiter ({name}) or an unclosed quote; "
                f"if {name} is not the file's delimiter, pass delimiter=... ."
            )
        keep_rec.append(record)
        keep_row.append(row)
    return keep_rec, np.asarray(keep_row, dtype=np.int64)


def _read_body(reader, names, label, delim, feats, id_j, prov):
    """Parse the data rows: feature candidates become float64, other columns stay text."""
    width = len(names)
    if feats is None:
        roles = ["candidate" if j != id_j else "text" for j in range(width)]
    else:
        roles = ["feature" if j in feats else "text" for j in range(width)]
    parts = [[] for _ in range(width)]
    missing = [[] for _ in range(width)]
    had_number = [False] * width
    text = {}
    rows, offset = [], 0
    gc_was_enabled = gc.isenabled()
    gc.disable()  # millions of short-lived strings: the cycle collector only costs time here
    try:
        for block, starts in _chunks(reader, width, label, delim):
            cols = list(zip(*block, strict=True))
            for j, role in enumerate(roles):
                if role in ("feature", "candidate"):
                    try:
                        values, miss = _parse_text_cells(cols[j])
                    except _NotNumber as err:
                        if role == "feature":
                            raise _not_number_error(
                                label, names[j], err.value, starts[err.index]
                            ) from None
                        text[j] = _NotNumber(
                            offset + err.index, err.value,
                            had_number[j] or _mostly_numbers(cols[j]),
                        )
                        # Text from the first block on: keep the strings; else read them again.
                        roles[j] = "text" if offset == 0 else "late"
                        parts[j] = [np.array(cols[j], dtype=object)] if offset == 0 else None
                        continue
                    parts[j].append(values)
                    if len(miss):
                        missing[j].append(miss + offset)
                    had_number[j] = had_number[j] or len(miss) < len(values)
                elif role == "text":
                    parts[j].append(np.array(cols[j], dtype=object))
            rows.append(starts)
            offset += len(block)
    finally:
        if gc_was_enabled:
            gc.enable()
    raw = _Raw(
        list(names), [None] * width,
        np.concatenate(rows) if rows else np.empty(0, dtype=np.int64), label, prov,
        is_text=True, text=text,
    )
    for j, role in enumerate(roles):
        if role == "late" or offset == 0:
            continue
        if role == "text":
            raw.columns[j] = np.concatenate(parts[j])
            continue
        miss = np.concatenate(missing[j]) if missing[j] else _NO_INDEX
        if role == "candidate" and len(miss) == offset:
            continue  # every cell missing: not a feature; its text is read again below
        raw.columns[j] = np.concatenate(parts[j])
        raw.parsed.add(j)
        if len(miss):
            raw.missing[j] = miss
    return raw


def _reread_text_columns(path, delim, raw, columns):
    """Read the text of ``columns`` again (they turned out not numeric after the first block)."""
    parts = {j: [] for j in columns}
    with open(path, newline="", encoding="utf-8-sig") as fh:
        reader = csv.reader(fh, delimiter=delim)
        for record in reader:
            if any(cell.strip() for cell in record):
                break  # the header row
        for block, _ in _chunks(reader, len(raw.names), raw.label, delim):
            for j in columns:
                parts[j].append(np.array([record[j] for record in block], dtype=object))
    for j in columns:
        raw.columns[j] = np.concatenate(parts[j])


# ---------------------------------------------------------------- arrays and frames
def _list_to_array(source):
    try:
        return np.asarray(source)
    except (ValueError, TypeError) as err:
        raise _input_error(
            f"The list given to load_table could not be turned into a table ({err}); give "
            f"rows of equal length, or a numpy array."
        ) from None


def _raw_from_array(arr, label, prov):
    if arr.dtype.names:
        if arr.ndim != 1:
            raise _input_error(
                f"{label} is a structured array of shape {arr.shape}; expected one record per "
                f"row (a 1-D structured array). Flatten it first."
            )
        names = [str(nm) for nm in arr.dtype.names]
        columns = []
        for nm in arr.dtype.names:
            col = arr[nm]
            if col.ndim != 1:
                raise _input_error(
                    f"Field {nm!r} of {label} holds sub-arrays of shape {col.shape[1:]}; expected "
                    f"one value per row. Split it into separate fields."
                )
            columns.append(np.array(col))
    else:
        if arr.ndim == 1:
            arr = arr[:, None]
        if arr.ndim != 2:
            raise _input_error(
                f"{label} has {arr.ndim} dimensions (shape {arr.shape}); expected a 2-D array of "
                f"shape (n_samples, n_features) or a 1-D array of one feature. Reshape it first."
            )
        names = [f"x{j}" for j in range(arr.shape[1])]
        columns = [arr[:, j] for j in range(arr.shape[1])]
    n = len(columns[0]) if columns else 0
    if not columns:
        raise _input_error(
            f"{label} has no feature columns (shape {arr.shape}); expected at least one column."
        )
    if n == 0:
        raise _input_error(f"{label} has no rows (shape {arr.shape}); expected rows of data.")
    if "sha256" not in prov:
        if arr.dtype.kind in "biuf":
            prov["sha256"] = hashlib.sha256(np.ascontiguousarray(arr)).hexdigest()
        else:
            prov["sha256"] = _digest_columns(names, columns)
    return _Raw(names, columns, np.arange(1, n + 1), label, prov)


def _is_frame(obj):
    return hasattr(obj, "columns") and hasattr(obj, "__getitem__") and hasattr(obj, "shape")


def _raw_from_frame(frame):
    label = "the DataFrame"
    keys = list(frame.columns)
    names = [str(k) for k in keys]
    _check_duplicate_names(names, label)
    if not names:
        raise _input_error(f"{label} has no columns; expected a table with numeric columns.")
    columns = []
    for key in keys:
        try:
            col = np.asarray(frame[key])
        except (TypeError, ValueError) as err:
            raise _input_error(f"Column {str(key)!r} of {label} could not be read ({err}).") \
                from None
        if col.ndim != 1:
            raise _input_error(
                f"Column {str(key)!r} of {label} is not one value per row (shape {col.shape}). "
                f"Give a flat table."
            )
        columns.append(col)
    n = len(columns[0])
    if n == 0:
        raise _input_error(f"{label} has no rows; expected rows of data.")
    prov = {"source": "DataFrame", "format": "dataframe",
            "sha256": _digest_columns(names, columns)}
    return _Raw(names, columns, np.arange(1, n + 1), label, prov)


def _digest_columns(names, columns):
    """sha256 over column names and values (bytes of numeric columns, text of the others)."""
    h = hashlib.sha256()
    for name, col in zip(names, columns, strict=True):
        h.update(name.encode("utf-8", "backslashreplace") + b"\x00")
        if col.dtype.kind in "biufcmM":
            h.update(np.ascontiguousarray(col).tobytes())
        else:
            text = "\x1f".join(map(str, col.tolist()))
            h.update(text.encode("utf-8", "backslashreplace"))
        h.update(b"\x1e")
    return h.hexdigest()


# ---------------------------------------------------------------- shared checks
def _overflow_limit(d):
    """Largest |x| for which 4 d x^2 (the largest squared distance) stays finite."""
    return math.sqrt(_FLOAT_MAX / (4.0 * d))


def _check_magnitude(X, names, rows, label, scaling):
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
    raise _input_error(
        f"Column {names[k]!r} in {label} holds {X[i, k]:.6g} at row {rows[i]}{after}: values "
        f"beyond {limit:.3g} in size make squared distances between rows overflow float64. "
        f"To fix it, {fix}."
    )


def _check_unique_ids(ids, rows, what, label):
    values = ids.tolist()
    try:
        unique = len(set(values)) == len(values)
    except TypeError:
        raise _input_error(
            f"{what} of {label} must be plain values (text or numbers); some are not hashable."
        ) from None
    if unique:
        return
    first = {}
    for i, v in enumerate(values):
        if v in first:
            raise _input_error(
                f"Id {_short(v)} appears more than once in {what} of {label} (rows "
                f"{rows[first[v]]} and {rows[i]}). Ids must be unique: fix the duplicates, or "
                f"leave id_column out to number the rows 1..n."
            )
        first[v] = i


def _clean_ids(raw, j):
    name = raw.names[j]
    col = raw.columns[j]
    what = f"the id column {name!r}"
    kind = col.dtype.kind
    if kind in "f":
        bad = ~np.isfinite(col)
        if bad.any():
            i = int(np.argmax(bad))
            raise _input_error(
                f"{what[0].upper()}{what[1:]} of {raw.label} has no id (a missing or non-finite "
                f"value) at row {raw.row_numbers[i]}. Give every row an id."
            )
        if np.all(col == np.round(col)) and np.all(np.abs(col) < 2**53):
            col = col.astype(np.int64)
    elif kind == "O":
        values = col.tolist()
        for i, v in enumerate(values):
            if _is_missing_object(v) or (isinstance(v, str) and not v.strip()) or (
                isinstance(v, float) and math.isnan(v)
            ):
                raise _input_error(
                    f"{what[0].upper()}{what[1:]} of {raw.label} has no id at row "
                    f"{raw.row_numbers[i]}. Give every row an id."
                )
        if raw.is_text:
            col = _int_ids(values, col)
    _check_unique_ids(col, raw.row_numbers, what, raw.label)
    return col


def _int_ids(values, col):
    """Text ids that are all plain integers ("12", "-3", not "007") become int64."""
    try:
        ints = [int(v) for v in values]
        if all(str(i) == v for i, v in zip(ints, values, strict=True)):
            return np.array(ints, dtype=np.int64)
    except (ValueError, OverflowError):
        pass
    return col


def _plain(value):
    """numpy numbers and text as Python values; dates and other objects unchanged."""
    plain = isinstance(value, (np.number, np.bool_, np.str_, np.bytes_))
    return value.item() if plain else value


# ---------------------------------------------------------------- assembly
def _finish(raw, features, id_column, scale, invalid, min_rows):
    names, label, n_read = raw.names, raw.label, raw.n
    _check_duplicate_names(names, label)
    selection = getattr(raw, "selection", None)
    feats, id_j = selection or _resolve_selection(names, features, id_column, label)
    numbers_of = {}
    if feats is None:
        feats, first_text = [], None
        for j in range(len(names)):
            if j == id_j:
                continue
            try:
                values, miss = _column_numbers(raw, j)
            except _NotNumber as err:
                first_text = first_text or (j, err)
                if j in raw.text and err.mostly_numbers or (
                    j not in raw.text and _mostly_numbers(raw.columns[j])
                ):
                    comma = (
                        " (decimal commas are not read: write 1.5, not 1,5)"
                        if isinstance(err.value, str) and _DECIMAL_COMMA.match(err.value) else ""
                    )
                    _warn(
                        f"Column {names[j]!r} in {label} is left out of the features: row "
                        f"{raw.row_numbers[err.index]} holds {_short(err.value)}, which is not a "
                        f"number{comma}, though other cells are. Fix the cell, or choose the "
                        f"features (features=[...]; CLI: --features)."
                    )
                continue
            if len(miss) == n_read:
                continue  # every cell missing: passthrough
            feats.append(j)
            numbers_of[j] = (values, miss)
        if not feats:
            raise _no_features(raw, id_j, first_text)
    else:
        for j in feats:
            try:
                numbers_of[j] = _column_numbers(raw, j)
            except _NotNumber as err:
                raise _not_number_error(
                    label, names[j], err.value, raw.row_numbers[err.index]
                ) from None
    feature_names = tuple(names[j] for j in feats)
    d = len(feats)
    X = np.empty((n_read, d), dtype=np.float64)
    missing_masks = {}
    for k, j in enumerate(feats):
        values, miss = numbers_of.pop(j)
        X[:, k] = values
        if len(miss):
            mask = np.zeros(n_read, dtype=bool)
            mask[miss] = True
            missing_masks[k] = mask
    ids_all = np.arange(1, n_read + 1) if id_j is None else _clean_ids(raw, id_j)
    pass_js = [j for j in range(len(names)) if j != id_j and j not in feats]
    finite = np.isfinite(X)
    bad_rows = ~finite.all(axis=1)
    excluded = ()
    if bad_rows.any():
        bad_idx = np.flatnonzero(bad_rows)

        def reason(i):
            parts = []
            for k in np.flatnonzero(~finite[i]):
                missing = k in missing_masks and missing_masks[k][i]
                what = "missing value" if missing else _describe_bad(X[i, k], False)
                parts.append(f"{what} in column {feature_names[k]!r}")
            return "; ".join(parts)

        if invalid == "error":
            i = int(bad_idx[0])
            k = int(np.flatnonzero(~finite[i])[0])
            missing = k in missing_masks and missing_masks[k][i]
            more = (
                f" ({len(bad_idx)} rows in all have missing, NaN or infinite feature values.)"
                if len(bad_idx) > 1 else ""
            )
            raise _input_error(
                f"Column {feature_names[k]!r} in {label} has {_describe_bad(X[i, k], missing)} "
                f"at row {raw.row_numbers[i]}; features must be finite numbers.{more} Fill in or "
                f"remove such rows, or pass invalid='exclude' (CLI: --skip-invalid) to report "
                f"them and keep them out."
            )
        excluded = tuple(
            ExcludedRow(
                row=int(raw.row_numbers[i]),
                id=_plain(ids_all[i]),
                reason=reason(i),
                passthrough={names[j]: _plain(raw.columns[j][i]) for j in pass_js},
            )
            for i in bad_idx
        )
        _warn(
            f"Kept {len(excluded)} of {n_read} rows of {label} out: they hold missing, NaN or "
            f"infinite feature values (rows {_rows_list(raw.row_numbers[bad_idx])}). They are "
            f"listed in PointCloud.excluded and written to outputs with missing lens values."
        )
        keep = ~bad_rows
        X = np.ascontiguousarray(X[keep])
    else:
        keep = np.ones(n_read, dtype=bool)
    n = X.shape[0]
    if n < min_rows:
        kept_out = f", {len(excluded)} more kept out as invalid" if excluded else ""
        raise _input_error(
            f"{label} has {n} usable row{'s' if n != 1 else ''} ({n_read} read{kept_out}); at "
            f"least {min_rows} are needed (min_rows={min_rows}). Add rows"
            f"{' or fix the rows kept out' if excluded else ''}."
        )
    rows = raw.row_numbers[keep]
    lo, hi = X.min(axis=0), X.max(axis=0)
    constant = lo == hi
    if constant.any() and n > 1:
        _warn(
            f"Feature column{'s' if constant.sum() > 1 else ''} "
            f"{_names_list([feature_names[k] for k in np.flatnonzero(constant)])} in {label} "
            f"{'are' if constant.sum() > 1 else 'is'} constant (one value in every row used): "
            f"such columns add nothing to distances. Leave them out of the features."
        )
    scaling = None
    if scale is not None:
        X, scaling = _standardise(X, scale, feature_names, label)
    _check_magnitude(X, feature_names, rows, label, scale)
    id_name = names[id_j] if id_j is not None else (
        "row" if "row" not in names else "row_number"
    )
    provenance = dict(raw.provenance)
    provenance.setdefault("delimiter", None)
    provenance.update(
        n_rows_read=int(n_read), n_rows_used=int(n), n_rows_excluded=len(excluded),
        features=list(feature_names), id_column=None if id_j is None else names[id_j],
        passthrough=[names[j] for j in pass_js], scaling=scaling, invalid=invalid,
    )
    return PointCloud(
        X=X,
        feature_names=feature_names,
        ids=ids_all[keep],
        id_name=id_name,
        passthrough={names[j]: raw.columns[j][keep] for j in pass_js},
        row_numbers=rows,
        excluded=excluded,
        provenance=provenance,
    )


def _no_features(raw, id_j, first_text):
    names, label = raw.names, raw.label
    if len(names) == 1 and id_j == 0:
        return _input_error(
            f"{label} has no feature columns: its only column, {names[0]!r}, is the id column. "
            f"Add numeric feature columns, or leave id_column out to use it as a feature."
        )
    example = ""
    if first_text is not None:
        j, err = first_text
        example = (
            f" (e.g. column {names[j]!r} holds {_short(err.value)} at row "
            f"{raw.row_numbers[err.index]})"
        )
    if len(names) == 1 and raw.is_text:
        used = raw.provenance.get("delimiter")
        found = [c for c in _DELIMITER_LIKE if c in names[0] and c != used]
        if found:
            c = found[0]
            return _input_error(
                f"{label} has no feature columns: it was read as a single column named "
                f"{_short(names[0])} holding text{example}. The header holds "
                f"{_DELIMITER_NAMES[c]}s ({c!r}), so the columns may be separated by them: pass "
                f"delimiter={c!r}, or save the file comma-separated."
            )
    besides = " besides the id column" if id_j is not None else ""
    return _input_error(
        f"{label} has no feature columns: no column{besides} holds only numbers{example}. "
        f"Choose the feature columns (features=[...]; CLI: --features), or fix the cells."
    )


def _standardise(X, method, names, label):
    """Per-column z-score or median/IQR scaling, computed without overflow."""
    out = np.empty_like(X)
    record = {}
    notes = []
    for k, name in enumerate(names):
        col = X[:, k]
        m = float(np.max(np.abs(col)))
        if m == 0.0:  # all zeros: nothing to centre or scale
            out[:, k] = 0.0
            record[name] = {"centre": 0.0, "scale": 1.0}
            continue
        u = col / m  # in [-1, 1]: sums and squares cannot overflow
        if method == "zscore":
            c, s = float(u.mean()), float(u.std())
        else:
            q1, c, q3 = (float(v) for v in np.percentile(u, [25, 50, 75]))
            s = q3 - q1
            if s == 0.0 and u.std() > 0:
                s = float(u.std())
                notes.append(name)
        if s == 0.0:  # constant column: centred only
            out[:, k] = 0.0
            record[name] = {"centre": c * m, "scale": 1.0}
            continue
        out[:, k] = (u - c) / s
        with np.errstate(over="ignore"):
            record[name] = {"centre": c * m, "scale": float(np.float64(s) * m)}
    info = {"method": method, "columns": record}
    if method == "robust":
        info["formula"] = "(x - median) / (q75 - q25)"
        if notes:
            info["std_fallback"] = notes
            _warn(
                f"Robust scaling: column{'s' if len(notes) > 1 else ''} {_names_list(notes)} in "
                f"{label} {'have' if len(notes) > 1 else 'has'} an interquartile range of 0 (more "
                f"than half the values are equal) and {'were' if len(notes) > 1 else 'was'} "
                f"scaled by the standard deviation instead."
            )
    else:
        info["formula"] = "(x - mean) / std (ddof=0)"
    return out, info
