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

from ._assemble import auto_standardise
from ._cloud import ExcludedRow, PointCloud
from ._load import load_block, load_table
from ._raw import MISSING_TEXT

__all__ = [
    "ExcludedRow", "MISSING_TEXT", "PointCloud", "auto_standardise", "load_block", "load_table",
]
