"""Screening: rank candidate lenses by merit, keep a small set that keeps the neighbours.

A lens is worth covering when many rows carry it (robust spread), when it
follows the data's neighbour graph (smoothness: the Laplacian score of He,
Cai and Niyogi, NIPS 2005) and when its graphs show significant structure
(loops and branches spanning more of its range than the cover can make,
by extended persistence: Carrière and Oudot, FoCM 2018; the structure
probe). The merit is their geometric mean. The chosen pair is the one whose
two-dimensional cover space best keeps each row's K data neighbours
(``R_NX(K)``, Lee and Verleysen 2009, K the shared neighbour graph's) weighted
by the structure the two lenses show together, never two lenses with
``|rho|`` above the redundancy ceiling.

Public surface
--------------
Entry point
    screen                  compute candidates, score, select (and probe) -> ScreenResult
    ScreenResult            scores, correlations, selection; rows, CSV, JSON, table, write()
Spread (``_spread``)
    spread_score, SpreadScore, histogram_entropy (a diagnosis column, ``spread``)
Redundancy (``_redundancy``)
    spearman_matrix
Selection (``_select``)
    select_by_preservation, select_lenses, PairPreservation, Selection, weighted_merit,
    DEFAULT_WEIGHTS
Candidates (``_candidates``)
    default_candidates
Settings (``_settings``)
    ScreenSettings   every setting of the screen, validated once; the CLI options follow it
Sample screen (``_confirm``)
    SampledScreenResult, plan_sample   rank on a seeded sample, confirm the choice on all rows
Probe columns in the ranking (``_result``)
    PROBE_SCORES, PROBE_COUNTS

Each module's docstring holds its part of the method: the criteria
(:mod:`lenswork.criteria`), the merit, why it is a geometric mean, and the
pair rule (``_select``), the histogram-entropy spread kept as a diagnosis
(``_spread``), Spearman's rho from one matrix product (``_redundancy``), the
default lens set (``_candidates``), and what the screen does with bad input
(``_screen``).

References
----------
.. [1] T. M. Cover and J. A. Thomas, "Elements of Information Theory",
   2nd ed., Wiley, 2006.
.. [2] C. Spearman, "The proof and measurement of association between two
   things", American Journal of Psychology 15, 1904.
.. [3] M. Carriere, B. Michel and S. Oudot, "Statistical analysis and
   parameter selection for Mapper", JMLR 19, 2018.
.. [4] X. He, D. Cai and P. Niyogi, "Laplacian Score for Feature Selection",
   NIPS 2005.
.. [5] J. A. Lee and M. Verleysen, "Quality assessment of dimensionality
   reduction: rank-based criteria", Neurocomputing 72, 2009.
.. [6] M. Carriere and S. Oudot, "Structure and stability of the
   one-dimensional Mapper", Foundations of Computational Mathematics 18, 2018.

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
from ._screen import min_screen_rows, screen
from ._select import (
    DEFAULT_WEIGHTS,
    PairPreservation,
    Selection,
    select_by_preservation,
    select_lenses,
    weighted_merit,
)
from ._settings import ScreenSettings
from ._spread import SpreadScore, histogram_entropy, spread_score

__all__ = [
    "DEFAULT_WEIGHTS",
    "PROBE_COUNTS",
    "PairPreservation",
    "PROBE_SCORES",
    "SampledScreenResult",
    "ScreenResult",
    "ScreenSettings",
    "Selection",
    "SpreadScore",
    "default_candidates",
    "histogram_entropy",
    "min_screen_rows",
    "plan_sample",
    "screen",
    "select_by_preservation",
    "select_lenses",
    "spearman_matrix",
    "spread_score",
    "weighted_merit",
]
