"""Selection: merit from the score columns, then greedy non-redundant picks.

Each candidate gets a ``merit``: the weighted geometric mean of named score
columns (by default ``spread`` alone, ``weights={"spread": 1.0}``); a zero in
any weighted score gives merit 0. Greedy selection then repeatedly takes the
candidate with the largest ``gain = merit * (1 - max |rho| to the lenses
already taken)`` among those whose ``max |rho|`` is at most the ceiling, and
stops at ``count`` lenses, or when every remaining candidate is above the
ceiling, or when none is left with merit > 0. A later score column (for
example one from probing the graph each lens gives) enters by adding it to
:attr:`ScreenResult.scores` and to the weights, see :meth:`ScreenResult.rescore`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._errors import ParameterError
from .._validation import check_float, check_int

__all__ = ["DEFAULT_WEIGHTS", "Selection", "check_weights", "select_lenses", "weighted_merit"]

#: Score columns that enter the merit, and their weights (weighted geometric mean).
DEFAULT_WEIGHTS = {"spread": 1.0}


@dataclass(frozen=True)
class Selection:
    """Result of :func:`select_lenses`.

    Attributes
    ----------
    indices : tuple of int
        Chosen candidates, in the order they were taken.
    gains : tuple of float
        ``merit * (1 - max |rho| to those taken before)`` at the moment each was taken.
    stop : {"count", "ceiling", "candidates"}
        Why selection stopped: the count was reached; every remaining usable
        candidate has ``|rho|`` above the ceiling with a chosen one; or no
        usable candidate with merit > 0 was left.

    Examples
    --------
    >>> sel = select_lenses(np.eye(3), [0.2, 0.9, 0.5], count=3)
    >>> sel.indices, sel.stop
    ((1, 2, 0), 'count')
    """

    indices: tuple
    gains: tuple
    stop: str


def select_lenses(correlation, merit, *, count=2, ceiling=0.8, usable=None):
    """Greedy non-redundant selection: best merit, discounted by redundancy.

    Parameters
    ----------
    correlation : array-like of shape (m, m)
        Rank correlations between the candidates (NaN entries count as 0 for
        the discount; mark such candidates unusable).
    merit : array-like of shape (m,)
        Non-negative merit of each candidate (e.g. its spread score).
    count : int, default=2
        Lenses to take at most.
    ceiling : float in (0, 1], default=0.8
        Never take a candidate whose ``|rho|`` with a chosen one exceeds this.
    usable : array-like of bool, shape (m,), optional
        Candidates that may be taken (default: all). Candidates with merit 0
        are never taken.

    Returns
    -------
    Selection

    Notes
    -----
    Step t takes ``argmax_j merit_j * (1 - max_{i in S} |rho_ij|)`` over the
    usable, untaken j with ``max_{i in S} |rho_ij| <= ceiling`` and merit > 0
    (S the lenses taken so far; the max over an empty S is 0, so the first
    pick is the best merit). Equal gains go to the earlier candidate, so the
    result is deterministic. Cost O(count m).

    Examples
    --------
    >>> rho = np.array([[1.0, 0.95, 0.1], [0.95, 1.0, 0.2], [0.1, 0.2, 1.0]])
    >>> sel = select_lenses(rho, [0.9, 0.8, 0.5], count=2, ceiling=0.8)
    >>> sel.indices, sel.stop
    ((0, 2), 'count')
    """
    merit = np.asarray(merit, dtype=np.float64)
    m = merit.shape[0]
    R = np.asarray(correlation, dtype=np.float64)
    if R.shape != (m, m):
        raise ParameterError(
            f"select_lenses got a correlation matrix of shape {R.shape} for {m} merits; "
            f"expected ({m}, {m})."
        )
    if merit.ndim != 1 or (np.isfinite(merit) & (merit >= 0)).sum() != m:
        raise ParameterError(
            "select_lenses expects merits as a 1-D array of finite numbers >= 0."
        )
    count = check_int("count", count, lo=1, context="select_lenses")
    ceiling = check_float("ceiling", ceiling, lo=0, hi=1, lo_open=True, context="select_lenses")
    ok = np.ones(m, dtype=bool) if usable is None else np.asarray(usable, dtype=bool).copy()
    ok &= merit > 0
    absr = np.nan_to_num(np.abs(R), nan=0.0)
    worst = np.zeros(m)  # max |rho| to the chosen set
    chosen, gains = [], []
    stop = "count"
    while len(chosen) < count:
        open_ = ok & (worst <= ceiling)
        if not open_.any():
            stop = "ceiling" if ok.any() else "candidates"
            break
        gain = np.where(open_, merit * (1.0 - worst), -np.inf)
        j = int(np.argmax(gain))
        chosen.append(j)
        gains.append(float(gain[j]))
        ok[j] = False
        worst = np.maximum(worst, absr[:, j])
    return Selection(tuple(chosen), tuple(gains), stop)


def weighted_merit(scores, weights):
    """Weighted geometric mean of the named score columns (each in [0, 1]).

    Parameters
    ----------
    scores : dict of str -> array-like of shape (m,)
        Score columns, higher is better; NaN counts as 0.
    weights : dict of str -> float
        Weight of each score column that enters the merit (0 leaves it out).

    Returns
    -------
    ndarray of shape (m,)
        ``exp(sum_k w_k log s_k / sum_k w_k)``; 0 where any weighted score is
        0 (or NaN).

    Examples
    --------
    >>> m = weighted_merit({"spread": [0.25, 1.0, 0.5], "structure": [1.0, 0.0, 0.5]},
    ...                    {"spread": 1.0, "structure": 1.0})
    >>> np.round(m, 6).tolist()
    [0.5, 0.0, 0.5]
    """
    total = sum(weights.values())
    m = len(next(iter(scores.values())))
    log_sum = np.zeros(m)
    zero = np.zeros(m, dtype=bool)
    for name, w in weights.items():
        if w == 0:
            continue
        s = np.asarray(scores[name], dtype=np.float64)
        s = np.where(np.isfinite(s), s, 0.0)
        zero |= s <= 0
        with np.errstate(divide="ignore"):
            log_sum += w * np.log(np.where(s > 0, s, 1.0))
    merit = np.exp(log_sum / total)
    merit[zero] = 0.0
    return merit


def check_weights(weights, scores):
    """The merit weights, checked against the score columns (default: ``DEFAULT_WEIGHTS``)."""
    weights = dict(DEFAULT_WEIGHTS if weights is None else weights)
    if not weights:
        raise ParameterError(
            "The 'weights' parameter of screen is empty; expected at least one score column, "
            "e.g. {'spread': 1.0}."
        )
    for name, w in weights.items():
        if name not in scores:
            raise ParameterError(
                f"The 'weights' parameter of screen names score column {name!r}, which does "
                f"not exist. Score columns: {', '.join(scores)}."
            )
        check_float(f"weights[{name!r}]", w, lo=0, context="screen")
    if sum(weights.values()) <= 0:
        raise ParameterError("The 'weights' of screen sum to 0; give one a positive weight.")
    return {k: float(v) for k, v in weights.items()}
