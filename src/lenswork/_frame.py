"""pandas output without a pandas dependency: one helper every ``to_frame()`` uses."""

from __future__ import annotations

from ._errors import LensworkError

__all__ = ["data_frame"]


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
