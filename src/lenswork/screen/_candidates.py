"""Candidates: the screen's default lens set, and computing candidate columns.

:func:`default_candidates` lists every lens family with the parameters a
practitioner would try first; :func:`compute_candidates` computes specs on a
workspace through the lens registry, skipping (with a warning) a default lens
that cannot be computed on the data at hand.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .. import _progress
from .._errors import LensworkError, ParameterError, warn_caller
from ..data import PointCloud
from ..lenses import get_lens, lens_names, lens_request
from ..workspace import Workspace

__all__ = [
    "Candidate",
    "candidate_columns",
    "compute_candidates",
    "default_candidates",
    "parse_spec",
]


def _scott_scale(X):
    """Scott's rule factor n^(-1/(d+4)) times the root-mean feature variance."""
    n, d = X.shape
    sigma = float(np.sqrt(np.mean(X.var(axis=0))))
    return n ** (-1.0 / (d + 4)) * (sigma if sigma > 0 else 1.0)


def default_candidates(data):
    """The default candidate set of the screen, as ``(lens name, params)`` pairs.

    Parameters
    ----------
    data : PointCloud, Workspace or array-like of shape (n_samples, n_features)

    Returns
    -------
    list of (str, dict)

    Notes
    -----
    Every lens family with parameters a practitioner would try first:

    - ``pca``, 3 components (fewer when there are fewer features);
    - ``laplacian``, 3 components, k = 15;
    - ``density`` at Scott's rule and at a bandwidth twice Scott's factor
      (``2 n^(-1/(d+4)) sigma``, sigma the root-mean feature variance): a local
      and a smoother view;
    - ``eccentricity`` with p = 1, 2 and inf;
    - ``dtm`` at two neighbour counts k = ceil(mass n): about 1 % of the rows
      (5 to 10 points) and 5 % (at least twice as many), at most the 31 points
      the shared neighbour graph holds, so no second graph is built: k = 5 and
      25 at 500 rows, 10 and 31 from 620 rows up;
    - ``knn_distance``, k = 10;
    - ``geodesic_eccentricity``, p = 2 (distances along the neighbour graph).

    Raw data columns (the ``column`` lens) are not in the default set; add them
    with ``extra=["column:name=..."]``.

    Examples
    --------
    >>> specs = default_candidates(np.random.default_rng(0).normal(size=(500, 2)))
    >>> specs[0], len(specs)
    (('pca', {'components': 2}), 11)
    """
    if isinstance(data, (Workspace, PointCloud)):
        X = data.X
    else:
        X = np.asarray(data, dtype=np.float64)
        X = X[:, None] if X.ndim == 1 else X
    n, d = X.shape
    broad = float(f"{2.0 * _scott_scale(X):.3g}")
    # DTM by its neighbour count k = ceil(mass n): a local one of about 1 % of the rows (5 to 10
    # points) and a broad one of 5 % (at least twice as many), never more than the shared
    # neighbour graph holds (Workspace(min_neighbors=30) keeps 30 neighbours plus the row
    # itself), so the screen builds one neighbour graph per run.
    k_local = int(min(max(math.ceil(0.01 * n), 5), 10, n))
    k_wide = int(min(max(2 * k_local, math.ceil(0.05 * n)), SHARED_POINTS, n))
    dtm = [("dtm", {"mass": _mass_for(k_local, n)})]
    if k_wide > k_local:
        dtm.append(("dtm", {"mass": _mass_for(k_wide, n)}))
    return [
        ("pca", {"components": min(3, d)}),
        ("laplacian", {"components": 3}),
        ("density", {}),
        ("density", {"bandwidth": broad}),
        ("eccentricity", {"p": 1}),
        ("eccentricity", {}),
        ("eccentricity", {"p": "inf"}),
        *dtm,
        ("knn_distance", {}),
        ("geodesic_eccentricity", {}),
    ]


#: Points (the row and its neighbours) in the shared graph the Workspace builds by default.
SHARED_POINTS = 31


def _mass_for(k, n):
    """A mass with 3 significant digits whose ``ceil(mass n)`` is exactly ``k``."""
    mass = float(f"{(k - 0.5) / n:.3g}")
    return mass if math.ceil(mass * n) == k else (k - 0.5) / n


def _round_down(x, digits=3):
    """``x`` rounded down to ``digits`` significant digits."""
    scale = 10.0 ** (digits - 1 - math.floor(math.log10(x)))
    return math.floor(x * scale) / scale


def _round_up(x, digits=3):
    """``x`` rounded up to ``digits`` significant digits."""
    scale = 10.0 ** (digits - 1 - math.floor(math.log10(x)))
    return math.ceil(round(x * scale, 9)) / scale


def _spec_label(name, params):
    if not params:
        return name
    return name + ":" + ",".join(f"{k}={v}" for k, v in params.items())


def parse_spec(item):
    """A candidate given as a spec string or a ``(name, params)`` pair, as ``(name, dict)``.

    A lens column name (``"laplacian_3"``, ``"eccentricity[p=1]"``) stands for its lens
    (:func:`lenswork.lenses.lens_request`): every column of it is a candidate.
    """
    if isinstance(item, str):
        name, params, _ = lens_request(item)
        return name, params
    try:
        name, params = item
    except (TypeError, ValueError):
        raise ParameterError(
            f"Cannot read lens {item!r}; expected a name, a spec like 'dtm:mass=0.05' or a "
            f"(name, params) pair."
        ) from None
    return str(name), dict(params or {})


def compute_candidates(ws, specs, *, strict):
    """Compute lens columns; with ``strict=False`` a failing lens warns and is skipped.

    Returns the columns (a column asked twice is kept once); for each skipped
    lens, ``{"lens": label, "reason": text}``; and for each column where it
    came from, ``(spec index, part index)``: the position of its spec in
    ``specs`` and its position among that lens call's columns (so a later
    step can compute the same column again without working it out backwards).
    """
    columns, skipped, origins, seen = [], [], [], set()
    known = set(lens_names())
    for i, (name, params) in enumerate(specs, 1):
        label = _spec_label(name, params)
        if not strict and name not in known:
            skipped.append({"lens": label, "reason": "not registered"})
            warn_caller(
                f"Default lens {name!r} is not registered here; screening without it."
            )
            continue
        spec = get_lens(name)
        try:
            with _progress.step(f"lens {i}/{len(specs)}: {label}"):
                cols = spec(ws, **params)
        except LensworkError as err:
            if strict:
                raise
            skipped.append({"lens": label, "reason": str(err)})
            warn_caller(
                f"Default lens {label!r} was skipped: {err}"
            )
            continue
        for part, col in enumerate(cols):
            if col.name in seen:  # the same column asked twice (e.g. a default repeated)
                continue
            seen.add(col.name)
            columns.append(col)
            origins.append((i - 1, part))
    return columns, skipped, origins


@dataclass(frozen=True)
class Candidate:
    """Where one candidate column came from, carried forward to the confirmation.

    Attributes
    ----------
    lens : str
        Registry name of the lens that computed the column.
    params : dict
        The spec's parameters as given (default candidates: as
        :func:`default_candidates` gave them for the screened rows).
    part : int
        Position of the column among the columns of that lens call.
    default_index : int or None
        Position in :func:`default_candidates` for a default candidate (its
        parameters follow the row count: the confirmation on all rows asks
        the same rule again), None for a lens given by the caller.
    """

    lens: str
    params: dict = field(default_factory=dict)
    part: int = 0
    default_index: object = None


def candidate_columns(ws, lenses=None, extra=()):
    """The candidate columns of a screen on ``ws``, and where each came from.

    Parameters
    ----------
    ws : Workspace
    lenses : list of specs, optional
        None: the default candidates (a lens that fails warns and is skipped).
    extra : list of specs, default=()
        Added to the candidates; their errors are raised.

    Returns
    -------
    columns : list of LensColumn
        Defaults first; a given column with the name of a default one is kept once.
    skipped : list of dict
        The default lenses that could not be computed (``compute_candidates``).
    origins : dict of str -> Candidate
        Per column name.
    """
    specs_default = default_candidates(ws) if lenses is None else []
    specs_given = [parse_spec(s) for s in [*(lenses or []), *extra]]
    cols_d, skipped, orig_d = compute_candidates(ws, specs_default, strict=False)
    cols_g, _, orig_g = compute_candidates(ws, specs_given, strict=True)
    origins = {}
    for col, (i, part) in zip(cols_d, orig_d, strict=True):
        origins[col.name] = Candidate(specs_default[i][0], dict(specs_default[i][1]), part, i)
    columns = list(cols_d)
    for col, (i, part) in zip(cols_g, orig_g, strict=True):
        if col.name not in origins:
            origins[col.name] = Candidate(specs_given[i][0], dict(specs_given[i][1]), part)
            columns.append(col)
    return columns, skipped, origins
