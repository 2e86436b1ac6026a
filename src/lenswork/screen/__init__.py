"""Screening: rank candidate lenses by spread and redundancy, keep a small non-redundant set.

A lens is worth covering when it *spreads* the points over its range and when
it says something the other chosen lenses do not. The screen measures both
and picks greedily; with the structure probe it also weighs the graph
features each lens reveals.

Public surface
--------------
Entry point
    screen                  compute candidates, score, select (and probe) -> ScreenResult
    ScreenResult            scores, correlations, selection; rows, CSV, JSON, table, write()
Spread (``_spread``)
    spread_score, SpreadScore, histogram_entropy
Redundancy (``_redundancy``)
    spearman_matrix
Selection (``_select``)
    select_lenses, Selection, weighted_merit, DEFAULT_WEIGHTS
Candidates (``_candidates``)
    default_candidates
Sample screen (``_confirm``)
    SampledScreenResult, plan_sample   rank on a seeded sample, confirm the choice on all rows
Probe columns in the ranking (``_result``)
    PROBE_SCORES, PROBE_COUNTS

Each module's docstring holds its part of the method: the spread score and
why it is ``entropy * (1 - largest_tie)`` (``_spread``), Spearman's rho from
one matrix product (``_redundancy``), the merit and the greedy rule
(``_select``), the default lens set (``_candidates``), and what the screen
does with bad input (``_screen``).

References
----------
.. [1] T. M. Cover and J. A. Thomas, "Elements of Information Theory",
   2nd ed., Wiley, 2006.
.. [2] C. Spearman, "The proof and measurement of association between two
   things", American Journal of Psychology 15, 1904.
.. [3] M. Carriere, B. Michel and S. Oudot, "Statistical analysis and
   parameter selection for Mapper", JMLR 19, 2018.

Examples
--------
>>> import numpy as np
>>> from lenswork.screen import spearman_matrix, spread_score
>>> x = np.arange(100.0)
>>> round(spread_score(x).spread, 2), spearman_matrix(np.c_[x, x**3]).round(6).tolist()
(1.0, [[1.0, 1.0], [1.0, 1.0]])
"""

from __future__ import annotations

from ._candidates import default_candidates
from ._confirm import SampledScreenResult, plan_sample
from ._redundancy import spearman_matrix
from ._result import PROBE_COUNTS, PROBE_SCORES, ScreenResult
from ._screen import screen
from ._select import DEFAULT_WEIGHTS, Selection, select_lenses, weighted_merit
from ._spread import SpreadScore, histogram_entropy, spread_score

__all__ = [
    "DEFAULT_WEIGHTS",
    "PROBE_COUNTS",
    "PROBE_SCORES",
    "SampledScreenResult",
    "ScreenResult",
    "Selection",
    "SpreadScore",
    "default_candidates",
    "histogram_entropy",
    "plan_sample",
    "screen",
    "select_lenses",
    "spearman_matrix",
    "spread_score",
    "weighted_merit",
]
