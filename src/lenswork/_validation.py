"""Small parameter and data checks shared by every module (one message shape).

Each parameter checker takes the parameter's name, the value and a context
string (the lens or function it belongs to), and returns the cleaned value or
raises :class:`~lenswork.ParameterError` with the message
``"The 'k' parameter of density must be an int in [1, inf). Got 0 instead."``.
Checkers accept strings as well, so the CLI can pass ``key=value`` text through.

:func:`check_array` turns the data a function is given into a finite float64
(n, d) array, or raises :class:`~lenswork.InputError` naming the first bad row
and column (1-based) and saying what to do.
"""

from __future__ import annotations

import dataclasses
import math
import numbers

import numpy as np

from ._errors import InputError, ParameterError

__all__ = [
    "SettingsRecord",
    "check_array",
    "check_bool",
    "check_choice",
    "check_finite",
    "check_float",
    "check_float_or_choice",
    "check_int",
    "check_random_state",
    "seed_of",
]


def _fail(name, context, expected, value):
    where = f" of {context}" if context else ""
    raise ParameterError(
        f"The {name!r} parameter{where} must be {expected}. Got {value!r} instead."
    )


def _interval(lo, hi, lo_open, hi_open):
    left = "(" if lo_open else "["
    right = ")" if hi_open else "]"
    lo_s = "-inf" if lo is None else repr(lo)
    hi_s = "inf" if hi is None else repr(hi)
    return f"{left}{lo_s}, {hi_s}{right}"


def _from_text(value, convert, name, context, expected):
    """``convert(value)`` for a string (CLI ``key=value`` text); any other value as it is."""
    if not isinstance(value, str):
        return value
    try:
        return convert(value.strip())
    except ValueError:
        _fail(name, context, expected, value)


def check_int(name, value, *, lo=None, hi=None, context=""):
    """Return ``value`` as an int within ``[lo, hi]`` or raise ParameterError."""
    expected = f"an int in {_interval(lo, hi, False, hi is None)}"
    value = _from_text(value, int, name, context, expected)
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        if isinstance(value, numbers.Real) and float(value).is_integer():
            value = int(value)
        else:
            _fail(name, context, expected, value)
    value = int(value)
    if (lo is not None and value < lo) or (hi is not None and value > hi):
        _fail(name, context, expected, value)
    return value


def check_float(name, value, *, lo=None, hi=None, lo_open=False, hi_open=False, context=""):
    """Return ``value`` as a finite float within the interval or raise ParameterError."""
    expected = f"a float in {_interval(lo, hi, lo_open or lo is None, hi_open or hi is None)}"
    value = _from_text(value, float, name, context, expected)
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        _fail(name, context, expected, value)
    value = float(value)
    bad = not math.isfinite(value)
    if lo is not None:
        bad |= value <= lo if lo_open else value < lo
    if hi is not None:
        bad |= value >= hi if hi_open else value > hi
    if bad:
        _fail(name, context, expected, value)
    return value


def check_choice(name, value, choices, *, context=""):
    """Return ``value`` if it is one of ``choices`` (strings), else raise ParameterError."""
    choices = tuple(choices)
    if isinstance(value, str) and value.strip().lower() in choices:
        return value.strip().lower()
    _fail(name, context, "a str among {" + ", ".join(repr(c) for c in choices) + "}", value)


def check_bool(name, value, *, context=""):
    """Return ``value`` as a bool; accepts true/false/yes/no/1/0 strings."""
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, str):
        text = value.strip().lower()
        if text in {"true", "yes", "1", "on"}:
            return True
        if text in {"false", "no", "0", "off"}:
            return False
    if isinstance(value, numbers.Integral) and value in (0, 1):
        return bool(value)
    _fail(name, context, "a bool (true or false)", value)


def check_random_state(random_state):
    """Turn ``None``, an int or a Generator into a ``numpy.random.Generator``.

    ``None`` means seed 0: lenswork is deterministic unless told otherwise.
    """
    if random_state is None:
        return np.random.default_rng(0)
    if isinstance(random_state, np.random.Generator):
        return random_state
    if isinstance(random_state, numbers.Integral) and not isinstance(random_state, bool):
        if random_state < 0:
            _fail("random_state", "", "a non-negative int, a numpy Generator or None", random_state)
        return np.random.default_rng(int(random_state))
    _fail("random_state", "", "a non-negative int, a numpy Generator or None", random_state)


def seed_of(random_state):
    """Return an int seed for libraries that want one (pynndescent, ARPACK start vectors)."""
    if random_state is None:
        return 0
    if isinstance(random_state, numbers.Integral) and not isinstance(random_state, bool):
        return int(random_state)
    return int(check_random_state(random_state).integers(0, 2**31 - 1))


def check_float_or_choice(name, value, choices, *, lo=None, lo_open=True, context=""):
    """Return a float in the interval or one of ``choices`` (e.g. a bandwidth rule)."""
    choices = tuple(choices)
    if isinstance(value, str) and value.strip().lower() in choices:
        return value.strip().lower()
    if "inf" in choices and isinstance(value, numbers.Real) and value == math.inf:
        return "inf"  # float('inf') where the text 'inf' is a valid choice
    try:
        return check_float(name, value, lo=lo, lo_open=lo_open, context=context)
    except ParameterError:
        interval = _interval(lo, None, lo_open or lo is None, True)
        _fail(
            name, context,
            f"a float in {interval} or a str among {{" + ", ".join(repr(c) for c in choices) + "}",
            value,
        )


# ---------------------------------------------------------------- arrays
_ADVICE = "Remove or impute such rows first (lenswork.load_table can report and skip them)."


def _subject(context, label):
    text = label or f"the data given to {context}"
    return text[:1].upper() + text[1:]


def check_array(X, context, *, min_rows=1, names=None, label=None, allow_bool=True,
                finite=True, advice=None):
    """Return ``X`` as a C-contiguous, finite float64 array of shape (n, d).

    A 1-D array is read as one column (as :meth:`PointCloud.from_array` does).
    No copy is made when ``X`` already is such an array.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features) or (n_samples,)
    context : str
        The function the data is given to, for messages (``"pca_coordinates"``).
    min_rows : int, default=1
        Fewer rows raise InputError.
    names : sequence of str, optional
        Column names, quoted beside the column number in messages.
    label : str, optional
        What the data is called in messages (default ``"the data given to
        <context>"``).
    allow_bool : bool, default=True
        Read booleans as 0/1; ``False`` rejects them like complex numbers and dates.
    finite : bool, default=True
        Check that every value is finite (see :func:`check_finite`).
    advice : str, optional
        What to do about a non-finite value (replaces the default advice).

    Returns
    -------
    ndarray of shape (n_samples, n_features), float64

    Raises
    ------
    InputError
        Values that are not real numbers, other than 1 or 2 dimensions, no
        column, fewer than ``min_rows`` rows, or a non-finite value (the first
        one is named by row and column, 1-based).

    Examples
    --------
    >>> check_array([1.0, 2.0, 3.0], "f").shape
    (3, 1)
    >>> try:
    ...     check_array([[1.0, 2.0], [3.0, float("nan")]], "f")
    ... except InputError as err:
    ...     print(str(err).split(";")[0])
    The data given to f has a non-finite value (nan) in row 2, column 2
    """
    subject = _subject(context, label)
    rejected = "cmMV" if allow_bool else "bcmMV"
    try:
        given = np.asarray(X)
        arr = None if given.dtype.kind in rejected else np.asarray(given, dtype=np.float64)
    except (TypeError, ValueError, OverflowError) as err:
        raise InputError(
            f"{subject} must be numeric (an array of shape (n_samples, n_features)); it could "
            f"not be read as numbers ({err}). Select the numeric columns first."
        ) from None
    if arr is None:
        raise InputError(
            f"{subject} holds {given.dtype} values; expected real numbers. Convert them to floats "
            f"first."
        )
    if arr.ndim == 1:
        arr = arr[:, None]
    if arr.ndim != 2:
        raise InputError(
            f"{subject} must be a 2-D array of shape (n_samples, n_features); got {arr.ndim} "
            f"dimensions (shape {arr.shape}). Reshape it first."
        )
    n, d = arr.shape
    if n == 0 or d == 0:
        raise InputError(
            f"{subject} is empty (shape {arr.shape}); expected at least one row and one column."
        )
    if n < min_rows:
        raise InputError(
            f"{subject} has {n} row{'s' if n != 1 else ''}; {context} needs at least {min_rows} "
            f"rows. Use more rows."
        )
    if finite:
        check_finite(arr, context, names=names, label=label, advice=advice)
    return np.ascontiguousarray(arr)


def check_finite(X, context, *, names=None, label=None, advice=None):
    """Raise InputError naming the first non-finite entry (row, column, 1-based) of 2-D ``X``.

    Parameters are those of :func:`check_array`. Cost: one pass over ``X`` when
    it is finite (a finite sum proves every entry finite), a mask otherwise.

    Examples
    --------
    >>> try:
    ...     check_finite(np.array([[1.0, np.inf]]), "f", names=["a", "b"], label="the table")
    ... except InputError as err:
    ...     print(str(err).split(";")[0])
    The table has a non-finite value (inf) in row 1, column 2 ('b')
    """
    # An overflowing sum of finite values falls through to the exact check.
    with np.errstate(over="ignore", invalid="ignore"):
        total = X.sum()
    if np.isfinite(total):
        return
    bad = ~np.isfinite(X)
    if not bad.any():
        return
    row, col = (int(i) for i in np.argwhere(bad)[0])
    name = f" ({names[col]!r})" if names is not None and col < len(names) else ""
    raise InputError(
        f"{_subject(context, label)} has a non-finite value ({float(X[row, col])!r}) in row "
        f"{row + 1}, column {col + 1}{name}; expected finite values. {advice or _ADVICE}"
    )


class SettingsRecord:
    """What every frozen settings dataclass shares: ``replace``, ``field_names``, ``coerce``.

    A subclass is a ``@dataclass(frozen=True)`` that validates its fields in
    ``__post_init__`` (``GraphSettings``, ``ScreenSettings``); unknown setting
    names raise one message naming the valid ones.

    Examples
    --------
    >>> @dataclasses.dataclass(frozen=True)
    ... class Tiny(SettingsRecord):
    ...     k: int = 1
    >>> Tiny().replace(k=3).k, Tiny.field_names()
    (3, ('k',))
    >>> Tiny().replace(j=3)
    Traceback (most recent call last):
    ...
    lenswork._errors.ParameterError: Tiny has no setting 'j'; the settings are: k.
    """

    #: Appended to the error of :meth:`coerce` for a value of the wrong type.
    coerce_hint = ""
    #: Whether :meth:`coerce` skips overrides that are None (a CLI option not given).
    skip_none = True

    def replace(self, **changes):
        """A copy with ``changes`` applied (and validated again)."""
        self.check_names(changes)
        return dataclasses.replace(self, **changes)

    @classmethod
    def field_names(cls):
        """Names of every setting, in order."""
        return tuple(f.name for f in dataclasses.fields(cls))

    @classmethod
    def check_names(cls, names):
        """Raise ParameterError for a name that is not a setting."""
        unknown = sorted(set(names) - set(cls.field_names()))
        if unknown:
            raise ParameterError(
                f"{cls.__name__} has no setting {unknown[0]!r}; the settings are: "
                f"{', '.join(cls.field_names())}."
            )

    def to_dict(self):
        """Every setting as a plain JSON value (:meth:`record_value` of each field)."""
        return {f.name: self.record_value(f.name, getattr(self, f.name))
                for f in dataclasses.fields(self)}

    def record_value(self, name, value):
        """One setting as a JSON value: tuples as lists, dicts copied (a subclass adds rules)."""
        if isinstance(value, tuple):
            return list(value)
        return dict(value) if isinstance(value, dict) else value

    @classmethod
    def coerce(cls, settings=None, **overrides):
        """``settings`` (an instance, a dict or None) with ``overrides`` applied (see skip_none)."""
        if settings is None:
            base = cls()
        elif isinstance(settings, cls):
            base = settings
        elif isinstance(settings, dict):
            base = cls.from_dict(settings)
        else:
            raise ParameterError(
                f"The 'settings' parameter must be a {cls.__name__}, a dict of settings or None. "
                f"Got {type(settings).__name__} instead.{cls.coerce_hint}"
            )
        changes = {k: v for k, v in overrides.items() if v is not None or not cls.skip_none}
        return base.replace(**changes) if changes else base
