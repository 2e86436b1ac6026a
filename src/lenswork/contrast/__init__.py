"""Which data columns set a graph feature's rows apart.

The package: :mod:`._features` (which rows: a feature, named nodes or rows,
and the rows they are set against; the position along a feature),
:mod:`._contrast` (:func:`contrast_columns`: one test per feature and column),
:mod:`._result` (:class:`ColumnContrast`, :class:`ContrastResult`). The
statistics live in :mod:`lenswork.stats`, the reading of data columns and
:func:`node_column_values` in :mod:`lenswork.columns`; both are re-exported
here.

For a loop, flare, branch, path or component of a :class:`~lenswork.LensGraph`
(or any set of nodes or rows a user names), every data column -- the features
of the point cloud and its passthrough columns, numeric or categorical -- is
compared between the feature's rows and the rows it is set against:

=================  ==========================================================
column             what is reported
=================  ==========================================================
numeric            Cliff's delta (the rank-biserial correlation, ``2 U / (n1
                   n2) - 1`` from the Mann-Whitney U; robust to scale), the
                   standardised mean difference (Cohen's d, pooled SD), the
                   two-sample Kolmogorov-Smirnov test (exact p-value of
                   ``scipy.stats.ks_2samp`` up to ``n1 n2 = 1e6``, Smirnov's
                   asymptotic law above)
categorical        Cramér's V and the chi-square test of the 2 x levels table
                   (``scipy.stats.chi2_contingency``, no continuity
                   correction); the level most over-represented in the feature
every test         the Benjamini-Hochberg (1995) step-up q-value over every
                   (feature, column) test of the call
along the feature  flare / limb / path: Spearman's rho with the position along
                   it (distance from the attachment node: in lens space when the
                   lens values are given, else graph hops); loop: the rank
                   circular-linear correlation with the angle around the
                   cycle (multiple correlation of the column's ranks on cos
                   and sin of the angle, Mardia 1976) and the node where the
                   column peaks
=================  ==========================================================

``against="rest"`` compares with every other row of the graph;
``against="neighbours"`` with the rows of the nodes within ``hops`` graph hops
of the feature that are not in it: a flare is then compared with the part of
the loop it leaves from, so a column that only marks the place on the loop
(the time of day, say) does not rank high.

The rank of a column is by its effect size: ``|Cliff's delta|`` for numeric
columns, Cramér's V for categorical ones (both 0 for no difference and 1 for
complete separation), ties broken by the p-value.

A column is *significant* (starred) only when its q-value is at most
``alpha`` **and** its effect is at least small (:data:`EFFECT_FLOOR`):
``|delta| >= 0.147`` (Romano et al. 2006 [5]_) or ``V >= 0.1`` (Cohen 1988
[6]_). On thousands of rows a test finds differences too small to matter
(a KS test gives q = 3e-55 for a delta of -0.04); the floor keeps them
unstarred.

Which features by default: the components and the significant features of the
graph summary (loops, flares, limbs and branch points above the threshold);
``all_features=True`` adds the small ones and the paths. A feature named --
a kind (``"flare"``: every flare) or a label (``"flare:3"``) -- is tested
whatever its significance; the feature lines show it, with the threshold a
small one missed.

References
----------
.. [1] Y. Benjamini and Y. Hochberg, "Controlling the false discovery rate: a
   practical and powerful approach to multiple testing", JRSS B 57, 1995.
.. [2] N. Cliff, "Dominance statistics: ordinal analyses to answer ordinal
   questions", Psychological Bulletin 114, 1993.
.. [3] H. Cramér, *Mathematical Methods of Statistics*, 1946.
.. [4] K. V. Mardia, "Linear-circular correlation coefficients and rhythmometry",
   Biometrika 63, 1976.
.. [5] J. Romano, J. D. Kromrey, J. Coraggio and J. Skowronek, "Appropriate
   statistics for ordinal level data", annual meeting of the Florida
   Association of Institutional Research, 2006.
.. [6] J. Cohen, *Statistical Power Analysis for the Behavioral Sciences*,
   2nd ed., 1988.
"""

from __future__ import annotations

from ..columns import MISSING_TEXT, node_column_values
from ..stats import (
    KS_EXACT_MAX,
    benjamini_hochberg,
    circular_rank_correlation,
    cliffs_delta,
    cramers_v,
)
from ._contrast import AGAINST, contrast_columns
from ._features import FEATURE_KINDS
from ._result import EFFECT_FLOOR, ColumnContrast, ContrastResult

__all__ = [
    "AGAINST",
    "EFFECT_FLOOR",
    "FEATURE_KINDS",
    "KS_EXACT_MAX",
    "MISSING_TEXT",
    "ColumnContrast",
    "ContrastResult",
    "benjamini_hochberg",
    "circular_rank_correlation",
    "cliffs_delta",
    "contrast_columns",
    "cramers_v",
    "node_column_values",
]
