"""Table files (delimited text, .npy, Parquet) read into a raw table."""

from __future__ import annotations

import csv
import gc
import itertools
import os

import numpy as np

from .._errors import ParameterError
from .._io import file_digest, unformula
from ._arrays import raw_from_array
from ._messages import input_error, names_list, not_number_error, warn_user
from ._raw import (
    NO_INDEX,
    AllBut,
    NotNumber,
    RawTable,
    check_duplicate_names,
    is_number_text,
    mostly_numbers,
    object_array,
    parse_text_cells,
    resolve_selection,
)

#: Longest field a text table may hold (2**31 - 1 characters, a C long on every platform).
_FIELD_LIMIT = 2**31 - 1

__all__ = ["DELIMITER_LIKE", "DELIMITER_NAMES", "read_file"]


#: Rows parsed per block of a text table (bounded memory for the Python strings).
_CHUNK_ROWS = 65_536


#: Characters of a text table shown to the delimiter sniffer.
_SNIFF_CHARS = 8192


#: Delimiters the sniffer chooses among.
_DELIMITERS = ",;\t|"


#: Characters that separate columns in some files (used for hints only).
DELIMITER_LIKE = ",;\t|: "


DELIMITER_NAMES = {
    ",": "comma", ";": "semicolon", "\t": "tab", "|": "pipe", ":": "colon", " ": "space",
}


def read_file(path, delimiter, opts):
    label = f"'{path}'"
    if not path.exists():
        raise input_error(
            f"File {label} not found (working directory: {os.getcwd()}). Check the path."
        )
    if path.is_dir():
        raise input_error(
            f"{label} is a directory; give the path of a table file (.csv, .tsv, .npy, .parquet)."
        )
    if not path.is_file():
        raise input_error(
            f"{label} is not a regular file (a device, FIFO or socket), which lenswork cannot "
            f"read twice as it needs to; save the table to a file first."
        )
    suffix = path.suffix.lower()
    if suffix in (".xlsx", ".xls", ".ods", ".npz"):
        kind = "an .npz archive" if suffix == ".npz" else "a spreadsheet workbook"
        fix = "save one array with numpy.save (.npy)" if suffix == ".npz" else "export it as CSV"
        raise input_error(f"{label} is {kind}, which lenswork does not read; {fix}.")
    if suffix in (".npy", ".parquet", ".pq") and delimiter is not None:
        raise ParameterError(
            "The 'delimiter' parameter of load_table applies to text files only; leave it out "
            f"for {suffix} files."
        )
    try:
        size = path.stat().st_size
        digest = file_digest(path)[1]
    except OSError as err:
        raise input_error(f"{label} could not be read ({err.strerror}). Check its permissions.") \
            from None
    if size == 0:
        raise input_error(
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


def _read_npy(path, label, prov):
    with open(path, "rb") as fh:
        magic = fh.read(6)
    if magic != b"\x93NUMPY":
        raise input_error(
            f"{label} is not a .npy file (no NumPy header). Save arrays with numpy.save, or give "
            f"a text table a .csv ending."
        )
    try:
        arr = np.load(path, allow_pickle=False)
    except ValueError as err:
        if "pickle" in str(err):
            raise input_error(
                f"{label} holds Python objects (an object array), which lenswork does not load. "
                f"Save a numeric or structured array instead."
            ) from None
        raise input_error(f"{label} could not be read as a .npy file ({err}).") from None
    except (OSError, EOFError) as err:
        raise input_error(f"{label} could not be read as a .npy file ({err}); it may be "
                         f"truncated.") from None
    return raw_from_array(arr, label, prov)


def _read_parquet(path, label, prov):
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ImportError:
        raise input_error(
            f"Reading the Parquet file {label} needs pyarrow, an optional extra: install it with "
            f"`pip install lenswork[parquet]`, or save the table as CSV."
        ) from None
    try:
        table = pq.read_table(path)
    except Exception as err:  # pyarrow raises several types for a damaged file
        raise input_error(
            f"{label} could not be read as Parquet ({err}). Check that it is a Parquet file, or "
            f"save the table as CSV."
        ) from None
    names = [str(c) for c in table.column_names]
    check_duplicate_names(names, label)
    if not names:
        raise input_error(f"{label} has no columns; expected a table with numeric columns.")
    columns = []
    for j in range(table.num_columns):
        col = table.column(j)
        typ = col.type
        plain = pa.types.is_integer(typ) or pa.types.is_floating(typ) or pa.types.is_boolean(typ)
        if plain and col.null_count == 0:
            columns.append(np.asarray(col.to_numpy()))
        elif pa.types.is_nested(typ) or pa.types.is_dictionary(typ) and \
                pa.types.is_nested(typ.value_type):
            # map, list and struct cells: no number and no plain id, but passed through as text
            columns.append(object_array([None if v is None else str(v) for v in col.to_pylist()]))
        else:
            columns.append(object_array(col.to_pylist()))
    n = table.num_rows
    if n == 0:
        raise input_error(
            f"{label} has column names but no data rows; expected rows of data. Check the file."
        )
    return RawTable(names, columns, np.arange(2, n + 2), label, prov)


def _read_delimited(path, label, delimiter, prov, opts):
    with open(path, "rb") as fh:
        head = fh.read(8192)
    if head.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise input_error(
            f"{label} is UTF-16 text; lenswork reads UTF-8. Save it as UTF-8 (in a spreadsheet "
            f"program: 'CSV UTF-8')."
        )
    if b"\x00" in head:
        raise input_error(
            f"{label} looks like a binary file, not a text table (it holds NUL bytes). Export "
            f"the data as CSV, or give a .npy / .parquet file its proper ending."
        )
    reader = None
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            sample = fh.read(_SNIFF_CHARS)
        if not sample.strip():
            raise input_error(
                f"{label} is empty (only blank lines); expected a header row with column names "
                f"and at least {opts['min_rows']} rows of data. Check that this is the right file."
            )
        delim, how = _choose_delimiter(sample, delimiter, prov["format"])
        prov.update(delimiter=delim, delimiter_from=how)
        with open(path, newline="", encoding="utf-8-sig") as fh:
            reader = _csv_reader(fh, delim)
            names = _read_header(reader, label, opts)
            feats, id_j = resolve_selection(names, opts["features"], opts["id_column"], label)
            raw = _read_body(reader, names, label, delim,
                             None if isinstance(feats, AllBut) else feats, id_j, prov)
        if raw.n == 0:
            raise input_error(
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
        raise input_error(
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
        return input_error(
            f"{label} is not UTF-8 text: row {line} holds the byte 0x{byte:02x}, which cannot be "
            f"decoded. Save the file as UTF-8 (in a spreadsheet program: 'CSV UTF-8'), or "
            f"convert it, e.g. `iconv -f latin1 -t utf-8`."
        )
    return input_error(f"{label} is not UTF-8 text. Save the file as UTF-8.")  # pragma: no cover


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
            names = [unformula(cell.strip()) or f"column_{j + 1}" for j, cell in enumerate(record)]
            check_duplicate_names(names, f"The header row of {label}")
            if all(is_number_text(c) for c in names):
                warn_user(
                    f"The first row of {label} holds only numbers ({names_list(names[:5])}) but "
                    f"is read as the header row of column names. If the file has no header, "
                    f"add one."
                )
            return names
    raise input_error(
        f"{label} is empty (only blank lines); expected a header row with column names and at "
        f"least {opts['min_rows']} rows of data. Check that this is the right file."
    )


def _chunks(reader, width, label, delim):
    """Blocks of data records (blank lines dropped, widths checked) and their row numbers."""
    # Rows are numbered as a spreadsheet shows them: one per record (the header is row 1),
    # whatever line breaks quoted fields hold. Up to the header, records are lines.
    prev = reader.line_num
    while True:
        block = list(itertools.islice(reader, _CHUNK_ROWS))
        if not block:
            return
        starts = np.arange(prev + 1, prev + len(block) + 1, dtype=np.int64)
        prev += len(block)
        if any(len(record) != width for record in block):
            block, starts = _drop_blank(block, starts, width, label, delim)
            if not block:
                continue
        yield block, starts


def _text_cells(cells):
    """Text cells as an object array, the formula guard of lenswork's CSV writers undone."""
    out = np.array(cells, dtype=object)
    for i, cell in enumerate(cells):
        if cell[:1] == "'":
            out[i] = unformula(cell)
    return out


def _drop_blank(block, starts, width, label, delim):
    keep_rec, keep_row = [], []
    for record, row in zip(block, starts, strict=True):
        if not record or (width > 1 and len(record) == 1 and not record[0].strip()):
            continue  # a blank line is no row of data
        if len(record) != width:
            name = DELIMITER_NAMES.get(delim, repr(delim))
            raise input_error(
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
                        values, miss = parse_text_cells(cols[j])
                    except NotNumber as err:
                        if role == "feature":
                            raise not_number_error(
                                label, names[j], err.value, starts[err.index]
                            ) from None
                        text[j] = NotNumber(
                            offset + err.index, err.value,
                            had_number[j] or mostly_numbers(cols[j]),
                        )
                        # Text from the first block on: keep the strings; else read them again.
                        roles[j] = "text" if offset == 0 else "late"
                        parts[j] = [_text_cells(cols[j])] if offset == 0 else None
                        continue
                    parts[j].append(values)
                    if len(miss):
                        missing[j].append(miss + offset)
                    had_number[j] = had_number[j] or len(miss) < len(values)
                elif role == "text":
                    parts[j].append(_text_cells(cols[j]))
            rows.append(starts)
            offset += len(block)
    finally:
        if gc_was_enabled:
            gc.enable()
    raw = RawTable(
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
        miss = np.concatenate(missing[j]) if missing[j] else NO_INDEX
        if role == "candidate" and len(miss) == offset:
            continue  # every cell missing: not a feature; its text is read again below
        raw.columns[j] = np.concatenate(parts[j])
        raw.parsed.add(j)
        if len(miss):
            raw.missing[j] = miss
    return raw


def _csv_reader(fh, delim):
    """A csv reader that takes fields of any length (the module's default stops at 128 KiB;
    a long note or a pasted document in one cell is still a cell)."""
    if csv.field_size_limit() < _FIELD_LIMIT:
        csv.field_size_limit(_FIELD_LIMIT)
    return csv.reader(fh, delimiter=delim)


def _reread_text_columns(path, delim, raw, columns):
    """Read the text of ``columns`` again (they turned out not numeric after the first block)."""
    parts = {j: [] for j in columns}
    with open(path, newline="", encoding="utf-8-sig") as fh:
        reader = _csv_reader(fh, delim)
        for record in reader:
            if any(cell.strip() for cell in record):
                break  # the header row
        for block, _ in _chunks(reader, len(raw.names), raw.label, delim):
            for j in columns:
                parts[j].append(_text_cells([record[j] for record in block]))
    for j in columns:
        raw.columns[j] = np.concatenate(parts[j])
