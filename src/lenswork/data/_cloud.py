"""The validated point cloud and the record of a row kept out."""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field

import numpy as np

from .._errors import ParameterError
from .._validation import check_array, check_finite
from ._checks import check_magnitude, check_unique_ids
from ._messages import check_rows

__all__ = ["ExcludedRow", "PointCloud"]


@dataclass(frozen=True)
class ExcludedRow:
    """A row kept out of every computation (only with an explicit option).

    Attributes
    ----------
    row : int
        1-based row number as a spreadsheet shows it (header = row 1 for files;
        first array row = row 1 for arrays).
    id : object
        The row's id.
    reason : str
        Why it was kept out, e.g. ``"NaN in column 'flow'"``.
    passthrough : dict
        The row's passthrough values, so outputs can still write the row.

    Examples
    --------
    >>> import warnings
    >>> from lenswork import load_table
    >>> X = np.array([[1.0, 2.0], [np.nan, 3.0], [4.0, 5.0]])
    >>> with warnings.catch_warnings(record=True):
    ...     cloud = load_table(X, invalid="exclude")
    >>> cloud.excluded
    (ExcludedRow(row=2, id=2, reason="NaN in column 'x0'", passthrough={}),)
    """

    row: int
    id: object
    reason: str
    passthrough: dict = field(default_factory=dict)


@dataclass(frozen=True, eq=False)
class PointCloud:
    """A validated point cloud: features, row ids, passthrough columns, provenance.

    Attributes
    ----------
    X : ndarray of shape (n_samples, n_features)
        Finite float64 feature values (after optional standardisation),
        C-contiguous.
    feature_names : tuple of str
    ids : ndarray of shape (n_samples,)
        Row ids (the id column, or 1..n).
    id_name : str
    passthrough : dict of str -> ndarray
        Non-feature columns carried to the outputs untouched.
    row_numbers : ndarray of shape (n_samples,)
        1-based source row number of each row.
    excluded : tuple of ExcludedRow
    provenance : dict
        ``source``, ``format``, ``sha256``, ``scaling`` and what else was done
        on intake (see :func:`load_table`).

    Examples
    --------
    >>> cloud = PointCloud.from_array(np.eye(3))
    >>> cloud.X.shape, cloud.feature_names
    ((3, 3), ('x0', 'x1', 'x2'))
    >>> cloud.require_rows(2, "A density lens")
    """

    X: np.ndarray
    feature_names: tuple
    ids: np.ndarray
    id_name: str
    passthrough: dict
    row_numbers: np.ndarray
    excluded: tuple
    provenance: dict

    @property
    def n(self):
        """Number of rows used."""
        return self.X.shape[0]

    @property
    def d(self):
        """Number of feature columns."""
        return self.X.shape[1]

    def require_rows(self, needed, what):
        """Raise :class:`~lenswork.InputError` when fewer than ``needed`` rows are usable.

        Parameters
        ----------
        needed : int
            Rows the computation needs.
        what : str
            The computation, for the message (e.g. ``"A neighbour graph with k=15"``).
        """
        source = self.provenance.get("source")
        label = "the data" if source in (None, "array", "DataFrame") else f"{source!r}"
        check_rows(self.n, needed, what, label, len(self.excluded))

    def unscaled(self, name):
        """A feature column in the table's own units: the intake's scaling undone.

        ``X[:, j] * scale + centre`` with the centre and scale that
        ``provenance["scaling"]`` records for the column (``scale="zscore"`` or
        ``"robust"`` on intake); the column of ``X`` itself when nothing was
        scaled. Node statistics and colour bars use it, so they read in the
        user's units.

        Examples
        --------
        >>> from lenswork import load_table
        >>> cloud = load_table(np.array([[1.0], [2.0], [6.0]]), scale="zscore")
        >>> np.round(cloud.X[:, 0], 2).tolist(), cloud.unscaled("x0").tolist()
        ([-0.93, -0.46, 1.39], [1.0, 2.0, 6.0])
        """
        j = list(self.feature_names).index(name)
        values = self.X[:, j]
        record = ((self.provenance.get("scaling") or {}).get("columns") or {}).get(name)
        if not record:
            return values
        return values * float(record["scale"]) + float(record["centre"])

    @classmethod
    def from_array(cls, X, *, feature_names=None, ids=None, passthrough=None):
        """Wrap a finite 2-D numeric array (no file, no scaling).

        A 1-D array is one feature column. Raises :class:`~lenswork.InputError`
        for non-numeric, non-finite or overflow-prone values and for arrays of
        other shapes; :func:`load_table` is the way to report and skip bad rows.
        """
        label, context = "the array", "PointCloud.from_array"
        X = check_array(X, context, label=label, allow_bool=False, finite=False)
        n, d = X.shape
        if feature_names is None:
            feature_names = tuple(f"x{j}" for j in range(d))
        feature_names = tuple(str(f) for f in feature_names)
        if len(feature_names) != d:
            raise ParameterError(
                f"feature_names has {len(feature_names)} names but the array has {d} columns; "
                f"give one name per column."
            )
        rows = np.arange(1, n + 1)
        check_finite(
            X, context, names=feature_names, label=label,
            advice="Fix or remove such rows, or load them with lenswork.load_table(..., "
            "invalid='exclude') to report them and keep them out.",
        )
        check_magnitude(X, feature_names, rows, label, None)
        if ids is None:
            ids = np.arange(1, n + 1)
        else:
            ids = np.asarray(ids)
            if ids.shape != (n,):
                raise ParameterError(
                    f"ids must hold one id per row ({n}); got shape {ids.shape}."
                )
            check_unique_ids(ids, rows, "the ids", label)
        passthrough = dict(passthrough or {})
        for name, col in passthrough.items():
            if len(col) != n:
                raise ParameterError(
                    f"Passthrough column {name!r} has {len(col)} values; the array has {n} rows."
                )
        return cls(
            X=X,
            feature_names=feature_names,
            ids=ids,
            id_name="row",
            passthrough=passthrough,
            row_numbers=rows,
            excluded=(),
            provenance={
                "source": "array", "format": "array", "sha256": hashlib.sha256(X).hexdigest(),
                "scaling": None, "n_rows_read": n, "features": list(feature_names),
                "id_column": None,
            },
        )
