"""Data intake: tables and arrays become a validated :class:`PointCloud`."""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field

import numpy as np

from ._errors import InputError

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
        Finite float64 feature values (after optional standardisation).
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
        ``source``, ``sha256``, ``scaling`` and what else was done on intake.

    Examples
    --------
    >>> cloud = PointCloud.from_array(np.eye(3))
    >>> cloud.X.shape, cloud.feature_names
    ((3, 3), ('x0', 'x1', 'x2'))
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

    @classmethod
    def from_array(cls, X, *, feature_names=None, ids=None, passthrough=None):
        """Wrap a finite 2-D numeric array (no file, no scaling)."""
        X = np.ascontiguousarray(np.asarray(X, dtype=np.float64))
        if X.ndim == 1:
            X = X[:, None]
        if X.ndim != 2:
            raise InputError(f"Expected a 2-D array of shape (n_samples, n_features); got {X.ndim}-D.")
        n, d = X.shape
        if feature_names is None:
            feature_names = tuple(f"x{j}" for j in range(d))
        ids = np.arange(1, n + 1) if ids is None else np.asarray(ids)
        digest = hashlib.sha256(X.tobytes()).hexdigest()
        return cls(
            X=X,
            feature_names=tuple(feature_names),
            ids=ids,
            id_name="row",
            passthrough=dict(passthrough or {}),
            row_numbers=np.arange(1, n + 1),
            excluded=(),
            provenance={"source": "array", "sha256": digest, "scaling": None},
        )
