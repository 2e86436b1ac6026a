"""Small parameter checks shared by every module (one message shape).

Each checker takes the parameter's name, the value and a context string
(the lens or function it belongs to), and returns the cleaned value or raises
:class:`~lenswork.ParameterError` with the message
``"The 'k' parameter of density must be an int in [1, inf). Got 0 instead."``.
Checkers accept strings as well, so the CLI can pass ``key=value`` text through.
"""

from __future__ import annotations

import math
import numbers

import numpy as np

from ._errors import ParameterError

__all__: list[str] = []


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


def check_int(name, value, *, lo=None, hi=None, context=""):
    """Return ``value`` as an int within ``[lo, hi]`` or raise ParameterError."""
    expected = f"an int in {_interval(lo, hi, False, hi is None)}"
    if isinstance(value, str):
        try:
            value = int(value.strip())
        except ValueError:
            _fail(name, context, expected, value)
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
    if isinstance(value, str):
        try:
            value = float(value.strip())
        except ValueError:
            _fail(name, context, expected, value)
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        _fail(name, context, expected, value)
    value = float(value)
    bad = math.isnan(value)
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
    try:
        return check_float(name, value, lo=lo, lo_open=lo_open, context=context)
    except ParameterError:
        interval = _interval(lo, None, lo_open or lo is None, True)
        _fail(
            name, context,
            f"a float in {interval} or a str among {{" + ", ".join(repr(c) for c in choices) + "}",
            value,
        )
