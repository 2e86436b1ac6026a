"""The raw table: columns as read, before features are chosen, and cell-to-number parsing."""

from __future__ import annotations

import decimal
import difflib
import hashlib
import itertools
import math
import numbers
import re
import warnings
from dataclasses import dataclass, field

import numpy as np

from .._errors import ParameterError
from ._messages import input_error, names_list

__all__ = [
    "AllBut", "DECIMAL_COMMA", "MISSING_TEXT", "NO_INDEX", "NotNumber", "RawTable",
    "check_duplicate_names", "column_numbers", "digest_columns", "is_missing_object",
    "is_number_text", "mostly_numbers", "object_array", "parse_selection", "parse_text_cells",
    "resolve_selection",
]


#: Cell texts read as a missing value (compared after strip() and lower()).
MISSING_TEXT = frozenset({"", "na", "n/a", "null", "none", "#n/a"})


DECIMAL_COMMA = re.compile(r"^\s*[-+]?\d+,\d+\s*$")


NO_INDEX = np.empty(0, dtype=np.intp)


@dataclass
class RawTable:
    """A table as read, before features are chosen (one array per column)."""

    names: list
    columns: list  # float64 arrays (parsed, NaN = missing) or the cells as read
    row_numbers: np.ndarray
    label: str
    provenance: dict
    is_text: bool = False
    parsed: set = field(default_factory=set)  # columns already float64
    text: dict = field(default_factory=dict)  # column -> NotNumber of its first non-number
    missing: dict = field(default_factory=dict)  # column -> indices of missing cells
    selection: tuple = None  # (feature indices or None, id index or None) once resolved

    @property
    def n(self):
        return len(self.row_numbers)


class NotNumber(Exception):
    """A cell that is not a number: its index and value (and whether most cells are numbers)."""

    def __init__(self, index, value, mostly_numbers=False):
        super().__init__(index, value)
        self.index, self.value, self.mostly_numbers = index, value, mostly_numbers


def check_duplicate_names(names, label):
    seen = {}
    for j, name in enumerate(names):
        if name in seen:
            raise input_error(
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
            f"Unknown {what} {spec!r} in {label}.{hint} Valid columns: {names_list(names)}."
        )
    pos = int(spec)
    if not 0 <= pos < len(names):
        raise ParameterError(
            f"The {what} position {pos} is out of range: {label} has {len(names)} columns "
            f"(0-based positions 0-{len(names) - 1}; 1-{len(names)} on the command line). "
            f"Valid columns: {names_list(names)}."
        )
    return pos


class AllBut(tuple):
    """A feature selection of exclusions only: every numeric column but these positions."""


_POSITION_RANGE = re.compile(r"^(\d+)\s*-\s*(\d+)$")


def _selection_item(item, names, label, id_j):
    """Positions (0-based) one item of the selection syntax names, in table order."""
    if item in names:
        return [names.index(item)]
    if item.isdigit():
        return [_resolve(int(item) - 1, names, label, "feature column")]
    m = _POSITION_RANGE.match(item)
    if m:
        a, b = int(m[1]), int(m[2])
        if a > b:
            raise ParameterError(
                f"The column range {item!r} runs backwards; give the lower position first "
                f"({b}-{a})."
            )
        _resolve(a - 1, names, label, "feature column")
        _resolve(b - 1, names, label, "feature column")
        return [j for j in range(a - 1, b) if j != id_j]
    if ":" in item:
        first, _, last = item.partition(":")
        a = _resolve(first.strip(), names, label, "feature column") if first.strip() else 0
        b = (_resolve(last.strip(), names, label, "feature column") if last.strip()
             else len(names) - 1)
        if a > b:
            raise ParameterError(
                f"The column range {item!r} runs backwards: {names[a]!r} comes after "
                f"{names[b]!r} in {label}; write {names[b]}:{names[a]}."
            )
        return [j for j in range(a, b + 1) if j != id_j]
    return [_resolve(item, names, label, "feature column")]


def parse_selection(text, names, label, id_j=None):
    """Feature positions (0-based) from the selection syntax, or :class:`AllBut` exclusions.

    Comma-separated items, each a column name, a 1-based position (``3``), a
    position range (``2-53``), a name range in table order (``w00:w51``; an
    open end runs to the first or last column) or any of these after ``~``,
    which leaves those columns out. Ranges skip the id column. With
    exclusions only, the features are every numeric column but those.

    Examples
    --------
    >>> names = ["id", "a", "b", "c", "d"]
    >>> parse_selection("b:d", names, "t"), parse_selection("2-3,~a", names, "t")
    ([2, 3, 4], [2])
    >>> parse_selection("~id,~d", names, "t")
    (0, 4)
    """
    keep, drop = [], []
    if str(text).strip() in names:
        return [names.index(str(text).strip())]
    for raw_item in str(text).split(","):
        item = raw_item.strip()
        if not item:
            continue
        target = keep
        if item.startswith("~") and item not in names:
            target, item = drop, item[1:].strip()
        for j in _selection_item(item, names, label, id_j):
            if j not in target:
                target.append(j)
    if not keep:
        if not drop:
            raise ParameterError(f"The feature selection {text!r} names no column.")
        return AllBut(sorted(drop))
    return [j for j in keep if j not in drop]


def resolve_selection(names, features, id_column, label):
    """(feature indices, :class:`AllBut` or None; id index or None), with every argument check.

    ``features`` is a list of names or 0-based positions, or a string in the
    selection syntax of :func:`parse_selection` (1-based positions).
    """
    id_j = None if id_column is None else _resolve(id_column, names, label, "id column")
    if features is None:
        return None, id_j
    if isinstance(features, str):
        feats = parse_selection(features, names, label, id_j)
        if isinstance(feats, AllBut):
            return feats, id_j
        features = feats
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


def parse_text_cells(cells):
    """Cells of text -> (float64 values with NaN where missing, missing indices)."""
    n = len(cells)
    if n:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                values = np.loadtxt(cells, dtype=np.float64, comments=None, ndmin=1)
            if values.shape == (n,):  # blank cells are skipped by loadtxt: parse slowly
                return values, NO_INDEX
        except (ValueError, TypeError):
            pass
    return _parse_cells(cells)


def is_missing_object(value):
    return value is None or type(value).__name__ in ("NAType", "NaTType")


def _parse_cells(cells):
    """Cell by cell (text or Python objects); raises NotNumber at the first non-number."""
    out = np.empty(len(cells), dtype=np.float64)
    missing = []
    for i, cell in enumerate(cells):
        if isinstance(cell, (bytes, np.bytes_)):
            cell = cell.decode("utf-8", "replace")
        if isinstance(cell, str):
            try:
                out[i] = float(cell)
            except ValueError:
                if cell.strip().lower() in MISSING_TEXT:
                    out[i] = np.nan
                    missing.append(i)
                    continue
                raise NotNumber(i, cell) from None
        elif is_missing_object(cell):
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
                raise NotNumber(i, cell) from None
        else:
            raise NotNumber(i, cell)
    return out, np.asarray(missing, dtype=np.intp)


def mostly_numbers(cells, limit=1000):
    """True when most of the first ``limit`` cells that are not missing are numbers."""
    counts = [0, 0]
    for cell in itertools.islice(cells, limit):
        try:
            _, miss = _parse_cells([cell])
        except NotNumber:
            counts[1] += 1
            continue
        counts[0] += not len(miss)
    return counts[0] > 0 and counts[0] >= counts[1]


def column_numbers(raw, j):
    """Column ``j`` as float64 (NaN where missing) and its missing indices, or NotNumber."""
    if j in raw.parsed:
        return raw.columns[j], raw.missing.get(j, NO_INDEX)
    if j in raw.text:
        raise raw.text[j]
    col = raw.columns[j]
    kind = col.dtype.kind
    if kind in "iuf":
        return col.astype(np.float64, copy=False), NO_INDEX  # read only: no copy of a float column
    if kind == "U":
        return parse_text_cells(col.tolist())
    if kind in "OS":
        return _parse_cells(col)
    # booleans, complex numbers, dates, raw bytes: not feature values
    raise NotNumber(0, col[0], False)


def object_array(values):
    out = np.empty(len(values), dtype=object)
    for i, v in enumerate(values):
        out[i] = v
    return out


def is_number_text(text):
    try:
        float(text)
    except ValueError:
        return False
    return True


def digest_columns(names, columns):
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
