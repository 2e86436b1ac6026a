"""Data columns and user functions as lenses.

Two ways to use values the library does not compute itself:

* the ``column`` lens takes any column of the :class:`~lenswork.PointCloud`:
  a feature column (the value the features hold after any scaling on intake)
  or a numeric passthrough column (a column carried along untouched, e.g. a
  timestamp or a label code). :func:`data_column` does the same for scripts.
* :func:`user_lens` registers a Python callable ``f(X, **params)`` as a lens,
  either in a script (the decorator runs on import) or from an installed
  package through the ``lenswork.lenses`` entry-point group, whose modules the
  registry imports the first time lenses are listed or looked up::

      [project.entry-points."lenswork.lenses"]
      my_lenses = "my_package.lenses"

The output of a user function is checked (shape, numbers, finiteness) before it
becomes a lens column, and a failure names the lens and the first bad row.
"""

from __future__ import annotations

import inspect
import numbers

import numpy as np

from .._errors import InputError, LensworkError, ParameterError
from .._validation import check_bool, check_float, check_int
from ._declare import LensDecl
from ._registry import LensPart, Param, register_lens

__all__ = ["data_column", "user_lens"]


# ---------------------------------------------------------------- column lens
def _plain(value):
    """A numpy scalar as the Python value it holds (for messages)."""
    return value.item() if isinstance(value, np.generic) else value


def _numeric(values):
    """``values`` as float64, or None when they are not numbers (text, dates...)."""
    arr = np.asarray(values)
    if arr.dtype.kind in "biuf":
        return arr.astype(np.float64)
    if arr.dtype.kind not in "OUS":
        return None
    try:
        return np.asarray(arr, dtype=np.float64)
    except (TypeError, ValueError):
        return None


def _numeric_names(cloud):
    """Feature names and the numeric passthrough column names of ``cloud``."""
    names = list(cloud.feature_names)
    names += [n for n, col in cloud.passthrough.items() if _numeric(col) is not None]
    return names


def _column_values(cloud, name, context):
    """Values and origin of column ``name`` (feature or numeric passthrough)."""
    if name in cloud.feature_names:
        j = list(cloud.feature_names).index(name)
        return np.ascontiguousarray(cloud.X[:, j]), "feature"
    if name in cloud.passthrough:
        values = _numeric(cloud.passthrough[name])
        if values is None:
            raise ParameterError(
                f"The 'name' parameter of {context} must name a numeric column; passthrough "
                f"column {name!r} holds non-numeric values. Numeric columns: "
                f"{', '.join(_numeric_names(cloud))}."
            )
        if values.shape != (cloud.n,):
            raise InputError(
                f"Passthrough column {name!r} has {values.size} values for {cloud.n} rows; "
                f"expected one value per row."
            )
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            i = bad[0]
            raise InputError(
                f"Column {name!r} has a missing or non-finite value in row "
                f"{cloud.row_numbers[i]} (id {_plain(cloud.ids[i])!r}); a lens needs a finite "
                f"number in every row. Fill the gaps or choose another column."
            )
        return values, "passthrough"
    raise ParameterError(
        f"The 'name' parameter of {context} must be one of the numeric columns "
        f"({', '.join(_numeric_names(cloud))}). Got {name!r} instead."
    )


def _check_name(name, value, *, context=""):
    """A column name: a non-empty string (None means "not given yet")."""
    if value is None:
        return None
    if not isinstance(value, str) or not value.strip():
        where = f" of {context}" if context else ""
        raise ParameterError(
            f"The {name!r} parameter{where} must be a column name (a non-empty str). "
            f"Got {value!r} instead."
        )
    return value.strip()


#: The one declaration of the lens: function, registry, CLI and docs follow.
COLUMN = LensDecl(
    "column",
    summary="A data column: any feature or numeric passthrough column, as it is",
    cost="O(n)",
    params=(
        Param("name", None, _check_name,
              "the column to use: a feature or a numeric passthrough column (required)",
              tag=False, type="str",
              more="A feature column holds its values after any scaling on intake."),
    ),
)


@COLUMN.function
def data_column(cloud, name):
    """The values of one numeric column of a point cloud, as a lens.

    Parameters
    ----------
    cloud : PointCloud
    {lens_params}

    Returns
    -------
    ndarray of shape (n_samples,), float64

    Raises
    ------
    ParameterError
        If ``name`` is not a column, or names a non-numeric passthrough column
        (the message lists the numeric columns).
    InputError
        If a numeric passthrough column has a missing or non-finite value
        (the message names the row).

    Notes
    -----
    Cost: O(n). This is the plain-function form of the ``column`` lens.

    Examples
    --------
    >>> import numpy as np
    >>> from lenswork import PointCloud
    >>> cloud = PointCloud.from_array(
    ...     np.arange(6.0).reshape(3, 2), passthrough={"hour": np.array([7, 8, 9])})
    >>> data_column(cloud, "x1").tolist(), data_column(cloud, "hour").tolist()
    ([1.0, 3.0, 5.0], [7.0, 8.0, 9.0])
    """
    if name is None:
        raise ParameterError(
            "The 'name' parameter of data_column must be a column name (a non-empty str). "
            "Got None instead."
        )
    return _column_values(cloud, name, "data_column")[0]


@COLUMN.register
def _column_lens(ws, *, name):
    cloud = ws.cloud
    if name is None:
        raise ParameterError(
            f"The 'name' parameter of column is required: give a column name, as in "
            f"'column:name={cloud.feature_names[0]}'. Numeric columns: "
            f"{', '.join(_numeric_names(cloud))}."
        )
    values, origin = _column_values(cloud, name, "column")
    info = {"source": origin}
    if origin == "feature":
        info["scaling"] = cloud.provenance.get("scaling")
    return [LensPart(values, name, info)]


# ---------------------------------------------------------------- user functions
def _check_text(name, value, *, context=""):
    if isinstance(value, str):
        return value
    where = f" of {context}" if context else ""
    raise ParameterError(f"The {name!r} parameter{where} must be a str. Got {value!r} instead.")


def _param_from_default(lens, pname, default):
    """A Param whose checker follows the type of its default value."""
    if isinstance(default, (bool, np.bool_)):
        check = check_bool
    elif isinstance(default, numbers.Integral):
        check = check_int
    elif isinstance(default, numbers.Real):
        check = check_float
    elif isinstance(default, str):
        check = _check_text
    else:
        raise ParameterError(
            f"User lens {lens!r}: the default of parameter {pname!r} must be a bool, int, float "
            f"or str (its checker follows that type). Got {default!r}; pass a "
            f"lenswork.lenses.Param with its own checker instead."
        )
    return Param(pname, default, check, f"user parameter (default {default!r})")


def _user_params(lens, params):
    if params is None:
        return ()
    if isinstance(params, dict):
        return tuple(_param_from_default(lens, k, v) for k, v in params.items())
    out = tuple(params)
    for p in out:
        if not isinstance(p, Param):
            raise ParameterError(
                f"User lens {lens!r}: 'params' must be a dict of name -> default or a list of "
                f"lenswork.lenses.Param. Got an item {p!r}."
            )
    return out


def _check_signature(lens, func, params):
    """Every declared parameter must be a keyword the function accepts."""
    try:
        sig = inspect.signature(func)
    except (TypeError, ValueError):  # builtins without a signature: trust the caller
        return
    kinds = {p.name: p.kind for p in sig.parameters.values()}
    if any(k == inspect.Parameter.VAR_KEYWORD for k in kinds.values()):
        return
    positional = [
        n for n, k in kinds.items()
        if k in (inspect.Parameter.POSITIONAL_ONLY, inspect.Parameter.POSITIONAL_OR_KEYWORD)
    ]
    if not positional and inspect.Parameter.VAR_POSITIONAL not in kinds.values():
        raise ParameterError(
            f"User lens {lens!r}: the function must take the data array X as its first argument."
        )
    accepted = {
        n for n, k in kinds.items()
        if k in (inspect.Parameter.POSITIONAL_OR_KEYWORD, inspect.Parameter.KEYWORD_ONLY)
    }
    accepted.discard(positional[0] if positional else None)
    for p in params:
        if p.name not in accepted:
            raise ParameterError(
                f"User lens {lens!r} declares parameter {p.name!r}, but the function does not "
                f"accept a keyword argument of that name. Add it to the function's signature."
            )


def _validate_output(lens, out, cloud):
    """(n,) or (n, m) finite float64 output of a user function, as a 2-D array."""
    n = cloud.n
    try:
        if np.iscomplexobj(out):
            raise TypeError("complex values")
        arr = np.asarray(out, dtype=np.float64)
    except (TypeError, ValueError):
        raise LensworkError(
            f"User lens {lens!r} returned {type(out).__name__} values that are not numbers; "
            f"expected an array of shape ({n},) or ({n}, m). Fix the function."
        ) from None
    if arr.ndim == 1:
        arr2 = arr[:, None]
    elif arr.ndim == 2:
        arr2 = arr
    else:
        arr2 = None
    if arr2 is None or arr2.shape[0] != n or arr2.shape[1] == 0:
        raise LensworkError(
            f"User lens {lens!r} returned values of shape {arr.shape}; expected ({n},) or "
            f"({n}, m): one row per data row. Fix the function."
        )
    bad = ~np.isfinite(arr2)
    if bad.any():
        i, j = np.argwhere(bad)[0]
        where = f"row {cloud.row_numbers[i]} (id {_plain(cloud.ids[i])!r})"
        col = f", output column {j + 1}" if arr.ndim == 2 else ""
        raise LensworkError(
            f"User lens {lens!r} returned a non-finite value ({float(arr2[i, j])!r}) in "
            f"{where}{col}; a lens must give a finite number for every row. Fix the function."
        )
    return arr2, arr.ndim


def user_lens(name, *, summary, params=None, cost="user function", replace=False):
    """Decorator: register a Python function ``f(X, **params)`` as a lens.

    Parameters
    ----------
    name : str
        Registry name (letters, digits and '_', starting with a letter).
    summary : str
        One line shown in lens listings.
    params : dict of str -> default, or list of Param, optional
        The lens parameters. With a dict, each value is the default and its
        type (bool, int, float, str) chooses the checker, so CLI strings such
        as ``"0.5"`` are converted. Every name must be a keyword argument of
        the function.
    cost : str, default="user function"
        A cost note for listings, e.g. ``"O(n d)"``.
    replace : bool, default=False
        Replace a lens already registered under ``name``.

    Returns
    -------
    callable
        A decorator that registers the function and returns it unchanged.

    Raises
    ------
    ParameterError
        On a bad or taken name, bad ``params``, or a declared parameter the
        function does not accept.

    Notes
    -----
    The function receives the workspace's feature array X of shape
    (n_samples, n_features) as a read-only float64 array, and the validated
    parameters as keywords. It must return one value per row: shape (n,) for
    one column (named ``<name>``), or (n, m) for m columns (named
    ``<name>_1`` ... ``<name>_m``). Values must be finite; a failure names the
    lens and the first bad row. An exception inside the function is re-raised
    as a :class:`~lenswork.LensworkError` naming the lens (the original is
    chained).

    Packages can ship lenses through the ``lenswork.lenses`` entry-point group:
    lenswork imports each listed module the first time lenses are listed or
    looked up, which runs its ``@user_lens`` decorators.

    Examples
    --------
    >>> import numpy as np
    >>> from lenswork import Workspace, compute_lenses
    >>> @user_lens("norm_demo", summary="Euclidean norm of each row", params={"power": 1.0},
    ...            replace=True)
    ... def row_norm(X, power=1.0):
    ...     return np.linalg.norm(X, axis=1) ** power
    >>> ws = Workspace(np.array([[3.0, 4.0], [0.0, 1.0]]))
    >>> table = compute_lenses(ws, ["norm_demo", "norm_demo:power=2"])
    >>> table.names, table.values().tolist()
    (['norm_demo', 'norm_demo[power=2]'], [[5.0, 25.0], [1.0, 1.0]])
    """
    declared = _user_params(name, params)
    if not isinstance(summary, str) or not summary.strip():
        raise ParameterError(
            f"User lens {name!r} needs a summary: a one-line description (non-empty str)."
        )

    def decorator(func):
        if not callable(func):
            raise ParameterError(
                f"@user_lens({name!r}) must decorate a function; got {type(func).__name__}."
            )
        _check_signature(name, func, declared)
        label = f"{getattr(func, '__module__', '?')}.{getattr(func, '__qualname__', repr(func))}"

        def compute(ws, **kwargs):
            X = ws.X.view()
            X.flags.writeable = False  # the workspace's data is shared: no in-place edits
            try:
                out = func(X, **kwargs)
            except LensworkError:
                raise
            except Exception as err:
                raise LensworkError(
                    f"User lens {name!r} ({label}) raised {type(err).__name__}: {err}"
                ) from err
            values, ndim = _validate_output(name, out, ws.cloud)
            info = {"function": label, "columns": int(values.shape[1])}
            if ndim == 1:
                return [LensPart(np.ascontiguousarray(values[:, 0]), "", info)]
            return [
                LensPart(np.ascontiguousarray(values[:, j]), str(j + 1), info)
                for j in range(values.shape[1])
            ]

        compute.__qualname__ = f"user_lens[{label}]"
        register_lens(
            name, summary=summary, cost=cost, params=declared, family="user",
            source=f"user: {label}", replace=replace,
        )(compute)
        return func

    return decorator

