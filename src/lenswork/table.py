"""The one reading of a ``lenses`` argument: :func:`as_lens_table`.

The graph builder, the structure probe, the bootstrap and the comparison of
views all take lenses in many forms (a LensTable, columns, arrays, registry
specs, a screening result); :func:`as_lens_table` turns any of them into a
LensTable over a workspace's rows. It computes registry specs, so it sits above
the lens registry. :class:`LensColumn`, :class:`LensTable` and ``FORMATS`` are
defined in ``lenswork.lenses`` (below the registry, which builds them) and
re-exported here.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ._errors import InputError, ParameterError
from .lenses import FORMATS, LensColumn, LensTable, compute_lenses

__all__ = ["FORMATS", "LensColumn", "LensTable", "as_lens_table"]

_ACCEPTED = (
    "a LensTable, LensColumn(s), a registry spec such as 'pca' (or a list of them), a dict of "
    "name -> values, an array of shape (n_samples,) or (n_samples, n_lenses), or an object "
    "with to_lens_table()"
)


def _is_spec_list(lenses):
    return isinstance(lenses, (list, tuple)) and bool(lenses) and all(
        isinstance(c, (LensColumn, str)) for c in lenses
    )


def _array_columns(lenses, n, what):
    """LensColumns ``lens``, ``lens_1``... of an array of lens values (one row per data row)."""
    try:
        arr = np.asarray(lenses, dtype=np.float64)
    except (TypeError, ValueError, OverflowError):
        raise ParameterError(
            f"The 'lenses' argument of {what} must be {_ACCEPTED}. Got {type(lenses).__name__}."
        ) from None
    if arr.ndim == 1:
        arr = arr[:, None]
    if arr.ndim != 2 or arr.shape[1] == 0:
        raise InputError(
            f"Lens values given to {what} must have shape (n_samples,) or (n_samples, n_lenses); "
            f"got shape {arr.shape}. Pass one row of lens values per data row."
        )
    if arr.shape[0] != n:
        raise InputError(
            f"The lenses have {arr.shape[0]:,} rows but the workspace has {n:,}; compute the "
            f"lenses on the same data as the workspace."
        )
    m = arr.shape[1]
    names = ["lens"] if m == 1 else [f"lens_{j + 1}" for j in range(m)]
    return [LensColumn(nm, arr[:, j].copy(), lens="array") for j, nm in enumerate(names)]


def as_lens_table(lenses, workspace, *, what="build_graph", finite=True):
    """The ``lenses`` argument of a graph function as a LensTable over the workspace's rows.

    Parameters
    ----------
    lenses : LensTable, LensColumn, list, dict, array-like, str or object
        A LensTable; a LensColumn; an object with ``to_lens_table()`` (a
        screening result); a dict of name -> values; a 1-D or 2-D array with
        one row per data row (columns named ``lens`` or ``lens_1``, ``lens_2``...);
        a registry spec (``"pca"``, ``"dtm:mass=0.05"``) or a list of specs
        and LensColumns, the specs computed on the workspace.
    workspace : Workspace
        The rows (and the lenses computed for specs).
    what : str, default="build_graph"
        The function the lenses are given to, for messages.
    finite : bool, default=True
        Raise on a non-finite lens value (the structure probe gives such a
        column NaN scores instead).

    Returns
    -------
    LensTable
        Over ``workspace.cloud``, with the random state of a given table (else
        the workspace's).

    Raises
    ------
    ParameterError
        An input of none of the accepted kinds, no lens column, or a column name
        that appears twice.
    InputError
        Lens values of the wrong shape, with another number of rows than the
        workspace, or (with ``finite``) with a NaN or infinite value.

    Examples
    --------
    >>> from lenswork import Workspace
    >>> ws = Workspace(np.arange(10.0).reshape(5, 2))
    >>> as_lens_table(ws.X, ws).names
    ['lens_1', 'lens_2']
    >>> as_lens_table({"h": ws.X[:, 0]}, ws)["h"].lens
    'array'
    """
    n = workspace.n
    random_state = workspace.random_state
    if not isinstance(lenses, LensTable) and callable(getattr(lenses, "to_lens_table", None)):
        lenses = lenses.to_lens_table()
    if isinstance(lenses, LensTable):
        cols, random_state = list(lenses.columns), lenses.random_state
    elif isinstance(lenses, LensColumn):
        cols = [lenses]
    elif isinstance(lenses, dict):
        cols = []
        for key, values in lenses.items():
            found = _array_columns(values, n, what)
            if len(found) != 1:
                raise InputError(
                    f"Lens {str(key)!r} given to {what} has {len(found)} columns; a dict of "
                    f"lenses holds one value per data row under each name."
                )
            cols.append(replace(found[0], name=str(key)))
    elif isinstance(lenses, str) or _is_spec_list(lenses):
        cols = []
        for c in [lenses] if isinstance(lenses, str) else lenses:
            cols.extend([c] if isinstance(c, LensColumn)
                        else compute_lenses(workspace, [c]).columns)
    elif isinstance(lenses, (list, tuple)) and not lenses:
        cols = []
    else:
        cols = _array_columns(lenses, n, what)
    if not cols:
        raise ParameterError(f"No lens column given to {what}; pass at least one lens column.")
    for c in cols:
        v = np.asarray(c.values)
        if v.shape != (n,):
            raise InputError(
                f"Lens column {c.name!r} has {v.shape[0] if v.ndim else 0} values but the data "
                f"has {n} rows; expected one lens value per row of the workspace."
            )
        if finite and not np.isfinite(v).all():
            row = int(np.flatnonzero(~np.isfinite(v))[0])
            raise InputError(
                f"Lens column {c.name!r} has a non-finite value in row {row + 1}; expected finite "
                f"lens values. Recompute the lens or drop that row."
            )
    return LensTable(cols, workspace.cloud, random_state=random_state)
