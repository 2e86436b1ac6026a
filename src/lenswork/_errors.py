"""Exception and warning types raised by lenswork.

Every error a user can cause is a :class:`LensworkError`. The concrete
classes also inherit the matching built-in, so ``except ValueError`` works
too. Messages follow one shape: what was wrong, what was expected, what to do.
"""

__all__ = [
    "InputError", "LensworkError", "LensworkWarning", "OutputError", "ParameterError",
    "warn_caller",
]


class LensworkError(Exception):
    """Base class of every error lenswork raises on purpose.

    Examples
    --------
    >>> try:
    ...     raise InputError("row 3: bad value")
    ... except LensworkError as err:
    ...     print(type(err).__name__, err)
    InputError row 3: bad value
    """


class InputError(LensworkError, ValueError):
    """The data (file, table, array) cannot be used as given.

    Examples
    --------
    >>> issubclass(InputError, ValueError)
    True
    """


class ParameterError(LensworkError, ValueError):
    """A parameter of a lens, a cover or a command is out of range or unknown.

    Examples
    --------
    >>> issubclass(ParameterError, LensworkError)
    True
    """


class OutputError(LensworkError, OSError):
    """An output file or folder cannot be written (read-only, full, a file in the path...).

    Examples
    --------
    >>> issubclass(OutputError, OSError)
    True
    """


class LensworkWarning(UserWarning):
    """A soft problem: the computation goes on, but the user should know.

    Examples
    --------
    >>> import warnings
    >>> with warnings.catch_warnings(record=True) as caught:
    ...     warnings.simplefilter("always")
    ...     warnings.warn("graph is disconnected", LensworkWarning)
    >>> caught[0].category.__name__
    'LensworkWarning'
    """


def warn_caller(message, category=LensworkWarning):
    """Warn with the first frame outside lenswork as the location: the caller's own line.

    Every lenswork warning goes through here, so ``python -W`` filters and the
    printed location name the user's script (or notebook cell), not a line
    inside the library, however deep the warning was raised.

    Examples
    --------
    >>> import warnings
    >>> with warnings.catch_warnings(record=True) as caught:
    ...     warnings.simplefilter("always")
    ...     warn_caller("graph is disconnected")
    >>> "lenswork" in caught[0].filename
    False
    """
    import sys
    import warnings

    level, frame = 2, sys._getframe(1)  # stacklevel k + 1 is the frame sys._getframe(k)
    while frame is not None and frame.f_globals.get("__name__", "").startswith("lenswork"):
        frame = frame.f_back
        level += 1
    warnings.warn(message, category, stacklevel=level)
