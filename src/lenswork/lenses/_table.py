"""Lens columns and the table that carries them to disk with their provenance.

:class:`LensColumn` is one lens output with what produced it; :class:`LensTable`
gathers columns over the rows of one point cloud. :meth:`LensTable.write`
writes a table (CSV, Parquet or NPY plus a strict-JSON sidecar) and
:meth:`LensTable.read` reads a CSV or Parquet one back for the rows of a point
cloud. The registry builds these objects, so they live below it; the reading
of any ``lenses`` argument (``as_lens_table``) lives above, in
:mod:`lenswork.table`, which also re-exports both classes.
"""

from __future__ import annotations

import csv
import json
import warnings
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from .._errors import InputError, LensworkWarning, ParameterError
from .._frame import data_frame
from .._io import atomic_path, check_against_manifest, file_digest, safe_cell, write_text
from .._json import dumps, plain
from .._validation import check_choice
from .._version import __version__
from ..data import load_table
from ..normalize import NORMALIZATIONS, normalize

__all__ = ["ENDINGS", "FORMATS", "LENS_FILE_CHECKS", "LensColumn", "LensTable"]



@dataclass(frozen=True, eq=False)
class LensColumn:
    """One lens column: raw values plus what produced them.

    Attributes
    ----------
    name : str
        Unique column name, e.g. ``"pca_1"`` or ``"dtm[mass=0.05]"``.
    values : ndarray of shape (n_samples,)
        Raw lens values (never overwritten by a normalisation).
    lens : str
        Registry name of the lens.
    params : dict
        Resolved parameters.
    info : dict
        Mode, error estimates, residuals, explained variance...
    normalization : str or None
        Normalisation applied downstream (see :func:`lenswork.normalize`).

    Examples
    --------
    >>> col = LensColumn("x", np.array([3.0, 1.0, 2.0]), lens="column")
    >>> col.normalized("minmax").tolist()
    [1.0, 0.0, 0.5]
    """

    name: str
    values: np.ndarray
    lens: str = "custom"
    params: dict = field(default_factory=dict)
    info: dict = field(default_factory=dict)
    normalization: str | None = None

    def normalized(self, method=None):
        """Values under ``method`` (default: the recorded normalisation; raw if none)."""
        method = method or self.normalization
        return self.values if method is None else normalize(self.values, method)

    def provenance(self):
        """A JSON-ready description of the column."""
        return {
            "name": self.name, "lens": self.lens, "params": self.params, "info": self.info,
            "normalization": self.normalization,
        }


class LensTable:
    """Lens columns over the rows of one point cloud.

    Parameters
    ----------
    columns : list of LensColumn
    cloud : PointCloud
        Supplies row ids, passthrough columns, excluded rows and input provenance.
    random_state : int, default=0

    Examples
    --------
    >>> from lenswork import PointCloud
    >>> cloud = PointCloud.from_array(np.arange(6.0).reshape(3, 2))
    >>> table = LensTable([LensColumn("a", np.array([1.0, 2.0, 3.0]))], cloud)
    >>> table.names, table.values().shape
    (['a'], (3, 1))
    """

    def __init__(self, columns, cloud, *, random_state=0):
        names = [c.name for c in columns]
        dupes = sorted({n for n in names if names.count(n) > 1})
        if dupes:
            raise ParameterError(
                f"Lens column {dupes[0]!r} appears twice; give the lenses different parameters "
                f"or drop one."
            )
        self.columns = list(columns)
        self.cloud = cloud
        self.random_state = random_state

    @property
    def names(self):
        """Column names, in order."""
        return [c.name for c in self.columns]

    def __len__(self):
        return len(self.columns)

    def __iter__(self):
        return iter(self.columns)

    def __getitem__(self, name):
        for c in self.columns:
            if c.name == name:
                return c
        raise ParameterError(f"No lens column {name!r}. Columns: {', '.join(self.names)}.")

    def select(self, names):
        """A table with only the named columns, in the given order."""
        return LensTable([self[n] for n in names], self.cloud, random_state=self.random_state)

    def normalize(self, method="rank"):
        """A table whose columns record ``method`` as their normalisation (raw values kept)."""
        method = check_choice("method", method, NORMALIZATIONS, context="LensTable.normalize")
        cols = [replace(c, normalization=method) for c in self.columns]
        return LensTable(cols, self.cloud, random_state=self.random_state)

    def values(self, normalized=True):
        """(n_samples, n_columns) array; normalised where a column records one."""
        if not self.columns:
            return np.empty((self.cloud.n, 0))
        return np.column_stack(
            [c.normalized() if normalized else c.values for c in self.columns]
        )

    def provenance(self):
        """JSON-ready provenance for the whole table (NaN and infinities as None).

        ``threads`` records numba's thread count when numba is loaded (the
        approximate neighbour search, pynndescent, runs on it and its result
        depends on the count).
        """
        return plain({
            "lenswork_version": __version__,
            "threads": _threads(),
            "input": self.cloud.provenance,
            "random_state": self.random_state,
            "n_rows_used": int(self.cloud.n),
            "excluded_rows": [
                {"row": r.row, "id": r.id, "reason": r.reason} for r in self.cloud.excluded
            ],
            "columns": [c.provenance() for c in self.columns],
        })

    # ------------------------------------------------------------------ output
    def to_frame(self, *, normalized=False, passthrough=False):
        """The lens columns as a pandas DataFrame, one row per row used.

        Parameters
        ----------
        normalized : bool, default=False
            Normalised values (where a column records a normalisation) instead
            of raw ones, as in :meth:`values`.
        passthrough : bool, default=False
            Put the cloud's passthrough columns first, as :meth:`write` does.

        Returns
        -------
        pandas.DataFrame of shape (n_samples, n_columns [+ n_passthrough])
            Indexed by the row ids (index name: the id column); rows in the
            cloud's order. Excluded rows are not in it (see :meth:`write` for
            a file with every input row).

        Raises
        ------
        LensworkError
            pandas is not installed.
        ParameterError
            With ``passthrough``: a passthrough column has a lens column's name.

        Examples
        --------
        >>> from lenswork import PointCloud
        >>> cloud = PointCloud.from_array(np.zeros((3, 1)), ids=["a", "b", "c"])
        >>> table = LensTable([LensColumn("h", np.array([3.0, 1.0, 2.0]))], cloud)
        >>> frame = table.to_frame()
        >>> frame.shape, frame.index.name, float(frame.loc["b", "h"])
        ((3, 1), 'row', 1.0)
        """
        columns = {}
        if passthrough:
            clash = [name for name in self.cloud.passthrough if name in self.names]
            if clash:
                raise ParameterError(
                    f"The passthrough column {clash[0]!r} has the name of a lens column; "
                    f"call to_frame(passthrough=False) or rename one of them."
                )
            columns.update({name: np.asarray(col) for name, col in self.cloud.passthrough.items()})
        lens = self.values(normalized=normalized)
        columns.update({name: lens[:, j] for j, name in enumerate(self.names)})
        frame = data_frame(columns, index=np.asarray(self.cloud.ids), what="a LensTable")
        frame.index.name = self.cloud.id_name
        return frame

    def _full_rows(self, normalized):
        """ids, passthrough and lens values over every input row, excluded rows as missing."""
        cloud = self.cloud
        used = cloud.row_numbers
        ex_rows = np.array([r.row for r in cloud.excluded], dtype=np.int64)
        order = np.argsort(np.concatenate([used, ex_rows]), kind="stable")
        ids = np.concatenate(
            [np.asarray(cloud.ids, dtype=object),
             np.array([r.id for r in cloud.excluded], dtype=object)]
        )[order]
        passthrough = {}
        for name, col in cloud.passthrough.items():
            extra = np.array([r.passthrough.get(name) for r in cloud.excluded], dtype=object)
            passthrough[name] = np.concatenate([np.asarray(col, dtype=object), extra])[order]
        lens = self.values(normalized=normalized)
        lens = np.vstack([lens, np.full((len(ex_rows), lens.shape[1]), np.nan)])[order]
        return ids, passthrough, lens

    def write(self, path, *, format=None, normalized=False):
        """Write id, passthrough and lens columns, plus ``<path>.json`` provenance.

        Parameters
        ----------
        path : str or Path
        format : {"csv", "parquet", "npy"}, optional
            Taken from the file ending when omitted.
        normalized : bool, default=False
            Write normalised values (where a column records a normalisation)
            instead of raw ones.

        Returns
        -------
        (Path, Path)
            The data file and the JSON sidecar. Both are written to temporary
            names and renamed, so a failure leaves no half-written file.
        """
        path = Path(path)
        format, delimiter = _format_of(path, format)
        ids, passthrough, lens = self._full_rows(normalized)
        passthrough = self._unclashed(passthrough)
        meta = self.provenance()
        meta["file"] = {
            "format": format, "values": "normalized" if normalized else "raw",
            "row_order": "input order; excluded rows present with missing lens values",
            "id_column": self.cloud.id_name, "passthrough": list(passthrough),
            "lens_columns": self.names, "rows": int(len(ids)),
        }
        if format == "csv":
            meta["file"]["delimiter"] = delimiter
            meta["file"]["text_cells"] = "formula-neutralised (a leading apostrophe)"
        with atomic_path(path) as tmp:
            _WRITERS[format](tmp, self.cloud.id_name, ids, passthrough, self.names, lens,
                             delimiter=delimiter)
            meta["file"]["bytes"], meta["file"]["sha256"] = file_digest(tmp)
        sidecar = path.with_name(path.name + ".json")
        write_text(sidecar, dumps(meta) + "\n")  # written last: it vouches for the data file
        return path, sidecar

    def _unclashed(self, passthrough):
        """Passthrough columns renamed where a name is a lens column's (a warning says so)."""
        taken = set(self.names) | {self.cloud.id_name}
        if self.cloud.id_name in self.names:
            raise ParameterError(
                f"The lens column {self.cloud.id_name!r} has the name of the id column; give "
                f"the id column another name (--id-column on a renamed column) or the lens "
                f"another parameter."
            )
        out = {}
        for name, col in passthrough.items():
            new = name
            while new in taken:
                new = f"{new}_data"
            if new != name:
                warnings.warn(
                    f"The data column {name!r} has the name of a lens column; it is written as "
                    f"{new!r} beside the lens column.", LensworkWarning, stacklevel=3,
                )
            taken.add(new)
            out[new] = col
        return out

    @classmethod
    def read(cls, path, cloud, *, columns=None, check="warn"):
        """Read lens columns written by :meth:`write` for the rows of ``cloud``.

        Parameters
        ----------
        path : str or Path
            A CSV, TSV or Parquet lens file with its ``<path>.json`` sidecar; the
            sidecar's ``file.lens_columns`` names the lens columns and
            ``file.id_column`` the id column.
        cloud : PointCloud
            The rows the lenses are wanted for; every id of the cloud must be in
            the file with a value in every chosen column.
        columns : list of str, optional
            Lens columns to read (default: every lens column of the sidecar).
        check : {"warn", "error", "off"}, default="warn"
            What a mismatch does: the file's size or SHA-256 against the sidecar
            (a data file from another run than its sidecar), its rows or columns
            against the sidecar, its input checksum against ``cloud``'s (lenses
            of another table with the same ids), or either file against the
            folder's ``lenswork-manifest.json``.

        Returns
        -------
        LensTable
            Columns in the cloud's row order, with the lens, parameters and
            normalisation recorded in the sidecar (a file of normalised values is
            read as it is, with no normalisation to apply again).

        Raises
        ------
        InputError
            No sidecar, an NPY file (no row ids), an unknown column, an id of the
            cloud missing from the file, or a missing value.

        Notes
        -----
        Rows are matched by id (compared as text), so the file may hold its rows
        in any order and rows the cloud does not use. Cost: one read of the file
        (:func:`lenswork.load_table`) and O(n) dictionary look-ups.

        Examples
        --------
        >>> import tempfile
        >>> from lenswork import PointCloud
        >>> cloud = PointCloud.from_array(np.arange(8.0).reshape(4, 2))
        >>> table = LensTable([LensColumn("h", np.array([0.5, 1.5, 2.5, 3.5]))], cloud)
        >>> with tempfile.TemporaryDirectory() as tmp:
        ...     path, _ = table.write(Path(tmp) / "lenses.csv")
        ...     back = LensTable.read(path, cloud)
        >>> back.names, back["h"].values.tolist()
        (['h'], [0.5, 1.5, 2.5, 3.5])
        """
        path = Path(path)
        check = check_choice("check", check, LENS_FILE_CHECKS, context="LensTable.read")
        meta, names, id_column = _read_sidecar(path)
        if check != "off":
            _check_lens_file(path, meta, cloud, check)
        wanted = names if columns is None else list(columns)
        unknown = [c for c in wanted if c not in names]
        if unknown:
            import difflib

            close = difflib.get_close_matches(str(unknown[0]), names, n=1)
            hint = f" Did you mean {close[0]!r}?" if close else ""
            raise InputError(
                f"The lens file {str(path)!r} has no lens column {unknown[0]!r}.{hint} Its lens "
                f"columns: {', '.join(names)}."
            )
        with warnings.catch_warnings():  # rows kept out of the lens file are checked below
            warnings.simplefilter("ignore")
            lens_cloud = load_table(path, features=wanted, id_column=id_column, scale=None,
                                    invalid="exclude", min_rows=1)
        if check != "off" and isinstance(meta["file"].get("rows"), int):
            rows = lens_cloud.n + len(lens_cloud.excluded)
            if rows != meta["file"]["rows"]:
                _mismatch(f"The lens file {str(path)!r} has {rows} rows; its sidecar records "
                          f"{meta['file']['rows']}", check)
        take = _match_ids(lens_cloud.ids, cloud.ids)
        if take is None:
            take = _match_by_text(lens_cloud, cloud, path, id_column)
        provenance = {c.get("name"): c for c in meta.get("columns", []) if isinstance(c, dict)}
        raw = meta["file"].get("values", "raw") == "raw"
        out = []
        for j, name in enumerate(wanted):
            prov = provenance.get(name, {})
            out.append(LensColumn(
                name=name, values=lens_cloud.X[take, j].copy(), lens=prov.get("lens", "file"),
                params=dict(prov.get("params") or {}),
                info={**dict(prov.get("info") or {}), "source": str(path)},
                normalization=prov.get("normalization") if raw else None,
            ))
        return cls(out, cloud, random_state=meta.get("random_state", 0))


#: Values of ``LensTable.read(check=)`` and of the CLI's --lens-file-check.
LENS_FILE_CHECKS = ("warn", "error", "off")


def _threads():
    """{"numba": thread count} when numba is loaded, else {} (importing it costs seconds)."""
    import sys

    numba = sys.modules.get("numba")
    if numba is None:
        return {}
    try:
        return {"numba": int(numba.get_num_threads())}
    except Exception:  # numba's threading layer may fail to start: record nothing
        return {}


def _mismatch(text, check):
    text = (f"{text}. Write the lens file again for this table, or pass --lens-file-check off "
            f"(check='off') to use it anyway.")
    if check == "error":
        raise InputError(text)
    warnings.warn(text, LensworkWarning, stacklevel=3)


def _check_lens_file(path, meta, cloud, check):
    """The lens file against its sidecar, the folder's manifest and the table's checksum."""
    sidecar = path.with_name(path.name + ".json")
    size, digest = file_digest(path)  # once: against the manifest and the sidecar
    for p, known in ((path, (size, digest)), (sidecar, None)):
        problem = check_against_manifest(p, digest=known)
        if problem:
            _mismatch(problem, check)
            return
    info = meta["file"]
    if isinstance(info.get("sha256"), str) and (size != info.get("bytes")
                                                or digest != info["sha256"]):
        _mismatch(f"The lens file {str(path)!r} is not the file its sidecar "
                  f"{sidecar.name!r} describes (size or SHA-256 differs): one was replaced "
                  f"without the other", check)
        return
    mine = (cloud.provenance or {}).get("sha256")
    theirs = (meta.get("input") or {}).get("sha256")
    if isinstance(mine, str) and isinstance(theirs, str) and mine != theirs:
        _mismatch(f"The lens file {str(path)!r} was computed from another table (its sidecar "
                  f"records input SHA-256 {theirs[:12]}..., this table's is {mine[:12]}...)",
                  check)


def _format_of(path, format):
    """(format, CSV delimiter) of ``path``: the ending decides; a ``format`` that disagrees
    with it, and an ending no format has, are refused."""
    ending = path.suffix.lower().lstrip(".")
    known = ", ".join("." + e for e in ENDINGS)
    if format is None:
        if ending not in ENDINGS:
            raise ParameterError(
                f"Cannot tell the lens-file format of {str(path)!r} from its ending; use one of "
                f"{known} (or pass format=)."
            )
        format = ENDINGS[ending]
    format = check_choice("format", format, FORMATS, context="LensTable.write")
    if ending in ENDINGS and ENDINGS[ending] != format:
        raise ParameterError(
            f"The file {str(path)!r} ends in .{ending} but the format asked is {format!r}; "
            f"give a name ending in .{format} or the format of the ending."
        )
    return format, "\t" if ending == "tsv" else ","


def _read_sidecar(path):
    """(sidecar document, lens column names, id column) of the lens file ``path``."""
    sidecar = path.with_name(path.name + ".json")
    if not path.exists():
        raise InputError(f"No lens file {str(path)!r}; check the path.")
    try:
        meta = json.loads(sidecar.read_text(encoding="utf-8"))
        info = meta["file"]
        names = list(info["lens_columns"])
        id_column = info["id_column"]
    except FileNotFoundError:
        raise InputError(
            f"The lens file {str(path)!r} has no sidecar {sidecar.name!r}; lens files are read "
            f"with the sidecar that LensTable.write and the screen command write beside them."
        ) from None
    except (json.JSONDecodeError, KeyError, TypeError) as err:
        raise InputError(
            f"The sidecar {str(sidecar)!r} is damaged or not a lens-file sidecar ({err}); write "
            f"the lens file again."
        ) from None
    if info.get("format") == "npy":
        raise InputError(
            f"{str(path)!r} is an NPY lens file, which holds no row ids to line up with the "
            f"table; write the lens columns as CSV or Parquet."
        )
    return meta, names, id_column


def _match_by_text(lens_cloud, cloud, path, id_column):
    """Positions in the lens file of every id of ``cloud``, ids compared as text."""
    position = {str(_item(i)): j for j, i in enumerate(lens_cloud.ids)}
    blank = {str(_item(r.id)): r.row for r in lens_cloud.excluded}
    take = np.empty(cloud.n, dtype=np.int64)
    for j, i in enumerate(cloud.ids):
        key = str(_item(i))
        if key in position:
            take[j] = position[key]
        elif key in blank:
            raise InputError(
                f"Row {blank[key]} of the lens file {str(path)!r} (id {key}) has a missing "
                f"lens value, but the table uses that row. Compute the lenses on the same rows."
            )
        else:
            raise InputError(
                f"Id {key} of the table is not in the lens file {str(path)!r} (id column "
                f"{id_column!r}). Use the lens file written for this table."
            )
    return take


def _match_ids(file_ids, ids):
    """Positions in ``file_ids`` of every id of ``ids`` when both are integer (or both text)
    arrays and every id is found; None otherwise (the caller's per-id path explains why).

    Integers and text compare as their text does, so this is the dictionary match of
    :meth:`LensTable.read` done by one sort: O(n log n) instead of 2n Python look-ups.
    """
    a, b = np.asarray(file_ids), np.asarray(ids)
    if not ((a.dtype.kind in "iu" and b.dtype.kind in "iu")
            or (a.dtype.kind == "U" and b.dtype.kind == "U")):
        return None
    if a.shape == b.shape and np.array_equal(a, b):
        return np.arange(b.shape[0], dtype=np.int64)
    order = np.argsort(a, kind="stable")
    pos = np.searchsorted(a[order], b)
    pos[pos == a.shape[0]] = 0
    if a.shape[0] == 0 or not np.array_equal(a[order][pos], b):
        return None
    return order[pos].astype(np.int64)


def _item(v):
    """A numpy scalar as the Python value (for CSV and Parquet cells and id keys)."""
    return v.item() if isinstance(v, np.generic) else v


#: Rows of a lens CSV converted to text at a time: the cells of a block are Python strings
#: (about 70 bytes each), so a million rows at once held some 250 MB more than the table.
CSV_BLOCK_ROWS = 65_536


def _write_csv(tmp, id_name, ids, passthrough, names, lens, delimiter=","):
    # Column by column within a block of rows (cells converted once per column, the block's
    # rows handed to csv in one call): the same text as a row loop, about 4x faster on a
    # million rows. Text cells are formula-neutralised (lenswork._io.safe_cell); numbers are
    # written as numbers.
    cols = list(passthrough.values())
    with open(tmp, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, delimiter=delimiter)
        w.writerow([safe_cell(n) for n in (id_name, *passthrough, *names)])
        for a in range(0, lens.shape[0], CSV_BLOCK_ROWS):
            b = a + CSV_BLOCK_ROWS
            cells = [[safe_cell(_item(v)) for v in ids[a:b]]]
            cells += [[safe_cell(_item(v)) for v in col[a:b]] for col in cols]
            for j in range(lens.shape[1]):
                cells.append(["" if v != v else repr(v) for v in lens[a:b, j].tolist()])
            w.writerows(zip(*cells))


def _write_parquet(tmp, id_name, ids, passthrough, names, lens, delimiter=None):
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ImportError:
        raise ParameterError(
            "Writing Parquet needs pyarrow: install it with `pip install lenswork[parquet]`, "
            "or write CSV / NPY instead."
        ) from None
    data = {id_name: _arrow_column(pa, id_name, ids)}
    for name, col in passthrough.items():
        data[name] = _arrow_column(pa, name, col)
    for j, name in enumerate(names):
        data[name] = pa.array(lens[:, j], mask=np.isnan(lens[:, j]))
    pq.write_table(pa.table(data), tmp)


def _arrow_column(pa, name, values):
    """A Parquet column of ids or passthrough cells; mixed or nested cells as text."""
    cells = [_item(v) for v in values]
    try:
        return pa.array(cells)
    except (pa.ArrowInvalid, pa.ArrowTypeError):
        return pa.array([None if v is None else str(v) for v in cells], type=pa.string())


def _write_npy(tmp, id_name, ids, passthrough, names, lens, delimiter=None):
    """Lens values only: an NPY file holds one array, no ids (read back by position)."""
    with open(tmp, "wb") as fh:
        np.save(fh, lens)


#: Lens-file format -> writer ``(tmp, id_name, ids, passthrough, names, lens)``: the one table
#: of output formats (validation, dispatch, the CLI's choices). A new format is one writer
#: function and one entry here (plus a file ending in ENDINGS).
_WRITERS = {"csv": _write_csv, "parquet": _write_parquet, "npy": _write_npy}
FORMATS = tuple(_WRITERS)
#: File ending -> format, for ``LensTable.write(path)`` without ``format=``.
ENDINGS = {"csv": "csv", "tsv": "csv", "parquet": "parquet", "pq": "parquet", "npy": "npy"}
