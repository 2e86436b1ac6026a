"""pandas output without a pandas dependency: one helper every ``to_frame()`` uses."""

from __future__ import annotations

from ._errors import LensworkError

__all__ = ["data_frame", "records_frame"]


def data_frame(columns, index=None, *, what="this result"):
    """A pandas DataFrame from ``{name: 1-d values}``, or a clear error when pandas is missing.

    Parameters
    ----------
    columns : dict of str -> array-like
        Column name to values, all of one length; the order is kept.
    index : array-like, optional
        Row labels.
    what : str
        What is being converted, for the error message.

    Examples
    --------
    >>> data_frame({"a": [1, 2], "b": [0.5, 1.5]}).shape
    (2, 2)
    """
    try:
        import pandas as pd
    except ImportError:
        raise LensworkError(
            f"Converting {what} to a DataFrame needs pandas, which is not installed. "
            f"Install it with 'pip install pandas'."
        ) from None
    return pd.DataFrame(dict(columns), index=None if index is None else pd.Index(index))


def records_frame(records, *, what="this result", columns=None):
    """A pandas DataFrame with one row per record (dict), nested values as JSON text.

    The columns are the keys of the first record, in order (or ``columns``);
    a dict, list or tuple value becomes its JSON text (as the JSON writers
    write it, keys in their order), so every cell is a scalar. This is the shape of a
    result's CSV or of a list in its JSON file.

    Parameters
    ----------
    records : sequence of dict
    what : str
        What is being converted, for the error message when pandas is missing.
    columns : sequence of str, optional
        Column names (default: the first record's keys); needed for no records.

    Examples
    --------
    >>> frame = records_frame([{"a": 1, "b": {"x": 2}}, {"a": 3, "b": [1, 2]}])
    >>> frame.shape, frame["b"].tolist()
    ((2, 2), ['{"x": 2}', '[1, 2]'])
    """
    from ._json import dumps

    records = list(records)
    names = list(columns if columns is not None else (records[0] if records else ()))

    def cell(value):
        if isinstance(value, (dict, list, tuple)):
            return dumps(value, indent=None)
        return value

    return data_frame({name: [cell(r.get(name)) for r in records] for name in names}, what=what)
