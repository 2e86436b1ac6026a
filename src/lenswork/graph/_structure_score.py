"""Structure scores from a diagram's significant features: noise features count for nothing.

:func:`significance_total` sums the significance of a diagram's significant
loops, branches and trunks (:mod:`lenswork.graph._trunks`), weighted by kind;
:func:`structure_significance` turns the totals of a few cover settings into a
score in [0, 1] (the structure probe's saturating form, lenswork.probe).
"""

from __future__ import annotations

import numpy as np

from .._errors import ParameterError
from .._validation import check_float
from ._persistence import PERSISTENCE_KINDS, PersistenceDiagram
from ._trunks import diagram_trunks

__all__ = ["STRUCTURE_WEIGHTS", "significance_total", "structure_significance"]

#: Weights of the feature kinds in :func:`structure_significance` (those of the structure
#: probe: a loop counts as much as two branches; a trunk as a branch).
STRUCTURE_WEIGHTS = {"loop": 1.0, "down": 0.5, "up": 0.5}


def significance_total(diagram, edges, values, weights=None, sizes=None, trunks=None):
    """``T = sum w_kind * significance`` over the significant loops, branches and trunks.

    Parameters
    ----------
    diagram : PersistenceDiagram
    edges, values
        The graph and function of the diagram (for the trunks,
        :func:`~lenswork.graph._trunks.diagram_trunks`).
    weights : dict of str -> float, optional
        Per kind (default :data:`STRUCTURE_WEIGHTS`); a trunk weighs as a branch
        of its direction (``"up"`` / ``"down"``).
    sizes : array-like of shape (n_nodes,), optional
        Rows per node (:func:`~lenswork.graph._trunks.trunk_points`).
    trunks : list, optional
        :func:`~lenswork.graph._trunks.diagram_trunks` of the diagram, when already computed.

    Returns
    -------
    float

    Examples
    --------
    >>> from lenswork.graph._persistence import extended_persistence
    >>> Y = [[6, 0], [0, 1], [1, 2], [2, 3], [1, 4], [4, 5]]
    >>> f = [0.0, 1.0, 2.0, 3.0, 2.0, 2.5, -1.0]
    >>> round(significance_total(extended_persistence(Y, f, threshold=0.2), Y, f), 3)
    0.438
    """
    w = dict(STRUCTURE_WEIGHTS if weights is None else weights)
    sig = diagram.significant
    total = sum(wk * float(diagram.significance[sig & (diagram.kind == k)].sum())
                for k, wk in w.items())
    total += sum(w.get(kind, 0.0) * value
                 for kind, _, _, value, thr in (diagram_trunks(diagram, edges, values, sizes)
                                                if trunks is None else trunks)
                 if value > thr)
    return float(total)




def structure_significance(diagrams, *, weights=None, floor=0.25):
    """A structure score from significant features only: noise features count for nothing.

    Parameters
    ----------
    diagrams : PersistenceDiagram or sequence of them
        One diagram per cover setting of the same lens (e.g. a small grid of
        interval counts and overlaps); the median of the per-diagram totals is used.
    weights : dict of str -> float, optional
        Weight per kind (default :data:`STRUCTURE_WEIGHTS`: loops 1, branches 0.5).
    floor : float in [0, 1), default=0.25
        Score of a lens with no significant feature (so that a lens revealing
        nothing can still be the right second lens in a geometric-mean merit).

    Returns
    -------
    float
        ``floor + (1 - floor) (1 - 2^-T)`` with ``T`` the median over the
        diagrams of ``sum w_kind * significance`` over the *significant*
        loops and branches. One loop spanning the whole range gives
        ``T = 1``, halfway between the floor and 1.

    Notes
    -----
    ``1 - 2^-T`` is the probe's saturating form (lenswork.probe), fed with
    significances instead of counts: a tangle of short noise loops adds 0, one
    loop over the whole range adds 1. The median over cover settings keeps a
    feature that one setting alone makes significant from counting.

    Examples
    --------
    >>> from lenswork.graph._persistence import extended_persistence
    >>> ring = extended_persistence([[0, 1], [1, 2], [2, 3], [3, 0]], [0.0, 1, 2, 1],
    ...                             threshold=0.3)
    >>> structure_significance(ring)
    0.625
    """
    if isinstance(diagrams, PersistenceDiagram):
        diagrams = [diagrams]
    diagrams = list(diagrams)
    if not diagrams:
        raise ParameterError("structure_significance needs at least one diagram.")
    w = dict(STRUCTURE_WEIGHTS if weights is None else weights)
    unknown = sorted(set(w) - set(PERSISTENCE_KINDS))
    if unknown:
        raise ParameterError(
            f"No diagram point kind {unknown[0]!r}; kinds are {', '.join(PERSISTENCE_KINDS)}."
        )
    floor = check_float("floor", floor, lo=0, hi=1, hi_open=True,
                        context="structure_significance")
    totals = []
    for d in diagrams:
        sig = d.significant
        totals.append(sum(wk * float(d.significance[sig & (d.kind == k)].sum())
                          for k, wk in w.items()))
    T = float(np.median(totals))
    return floor + (1.0 - floor) * (1.0 - 2.0 ** (-T))
