"""Wording shared by the data-intake messages (row and name lists, the InputError shape)."""

from __future__ import annotations

import numpy as np

from .._errors import InputError, warn_caller

__all__ = [
    "as_python", "check_rows", "describe_bad", "input_error", "names_list", "not_number_error",
    "rows_list", "short", "warn_user",
]


_LISTED = 10  # rows / names listed in a message before "..."


def input_error(message):
    """An InputError whose message starts with a capital ("The array has ...")."""
    return InputError(message[:1].upper() + message[1:])


def short(value, width=40):
    value = as_python(value)
    text = repr(value) if isinstance(value, str) else str(value)
    return text if len(text) <= width else text[: width - 3] + "..."


def names_list(names):
    shown = ", ".join(repr(n) for n in names[:30])
    return shown + (f", ... ({len(names)} in all)" if len(names) > 30 else "")


def rows_list(rows):
    shown = ", ".join(str(int(r)) for r in rows[:_LISTED])
    return shown + (f" and {len(rows) - _LISTED} more" if len(rows) > _LISTED else "")


def describe_bad(value, missing):
    if missing:
        return "a missing value"
    if np.isnan(value):
        return "NaN"
    return "-inf" if value < 0 else "inf"


def warn_user(message):
    """Warn with the first frame outside lenswork as the location."""
    warn_caller(message)


def check_rows(n, needed, what, label, n_excluded=0):
    if n < needed:
        kept_out = f" ({n_excluded} more kept out as invalid)" if n_excluded else ""
        raise input_error(
            f"{what} needs at least {needed} rows; {label} has {n} usable"
            f" row{'s' if n != 1 else ''}{kept_out}. Use more rows"
            f"{', fix the rows kept out' if n_excluded else ''} or smaller parameters."
        )


def not_number_error(label, name, value, row):
    return input_error(
        f"Column {name!r} in {label} holds {short(value)} at row {row}, which is not a number. "
        f"Choose numeric feature columns (features=[...]; CLI: --features), or fix the cell."
    )


def as_python(value):
    """numpy numbers and text as Python values; dates and other objects unchanged."""
    plain = isinstance(value, (np.number, np.bool_, np.str_, np.bytes_))
    return value.item() if plain else value
