"""The result of a screen: scores, correlations, the selection, and its serialisations.

:class:`ScreenResult` holds every candidate column with its scores and the
greedy selection over them, and gives the ranking as rows
(:meth:`~ScreenResult.rows`), CSV text, a terminal table, a strict-JSON
document (:meth:`~ScreenResult.to_dict`) and an output directory
(:meth:`~ScreenResult.write`: ranking CSV and JSON, the chosen lens columns,
the figure sheet).
"""

from __future__ import annotations

import html
import io
import math
import warnings

import numpy as np

from .. import _progress
from .._errors import LensworkWarning, ParameterError
from .._frame import data_frame
from .._io import MANIFEST, OutputSet, csv_writer, write_text
from .._json import dumps, plain
from .._validation import check_choice, check_float, check_int
from .._version import __version__
from ..lenses import FORMATS, pca_coordinates
from ._select import (
    PAIRINGS,
    Selection,
    check_weights,
    joint_merit,
    select_by_preservation,
    select_lenses,
    tied_pairs,
    weighted_merit,
)
from ._spread import status_text

__all__ = ["PROBE_COUNTS", "PROBE_SCORES", "ScreenResult"]

#: Probe scores added to the screen's table (all in [0, 1]) and the counts shown beside them.
PROBE_SCORES = ("structure", "significance", "loop_significance", "branch_significance",
                "coherence", "count_structure", "revealed", "stability")
PROBE_COUNTS = ("significant_loops", "significant_branches", "loops", "flares",
                "branch_points")


class ScreenResult:
    """Everything a screen found: scores, correlations, the selection and the lens columns.

    Hand it straight to the graph builder: :meth:`to_lens_table` gives the
    chosen columns.

    Attributes
    ----------
    lenses : LensTable
        Every candidate column, in candidate order.
    names : list of str
        Candidate column names.
    scores : dict of str -> ndarray of shape (m,)
        Score and diagnosis columns: the merit's criteria ``robust_spread``,
        ``smoothness`` (and ``structure`` with the probe), their parts
        ``tail_share``, ``laplacian_score``, ``jitter``, the histogram-entropy
        ``spread`` with ``entropy``, ``tied``, ``largest_tie``, ``outliers``,
        the probe's other scores and counts (:data:`PROBE_SCORES`,
        :data:`PROBE_COUNTS`) and any added by :meth:`rescore`.
    pairing : {"preservation", "greedy"}
        The rule that picked the set (see :mod:`lenswork.screen._select`).
    preservation : ndarray of shape (m,)
        Neighbour preservation ``R_NX`` of each candidate together with the
        first chosen lens (for the first chosen lens: of the chosen set); NaN
        where not measured (greedy pairing, unusable candidates).
    weights : dict of str -> float
        Score columns entering the merit and their weights.
    merit : ndarray of shape (m,)
        Weighted geometric mean of the weighted score columns.
    correlation : ndarray of shape (m, m)
        Spearman rho between candidates (NaN for unusable ones).
    reference_names : list of str
    reference_correlation : ndarray of shape (m, p)
        Spearman rho of each candidate with each reference column.
    usable : ndarray of bool, shape (m,)
        False for constant or non-finite columns.
    selection : Selection
    selected : list of str
        Chosen column names, in the order taken.
    count, ceiling, bins : int, float, int
    skipped : list of dict
        Default lenses that could not be computed here, with the reason.

    Examples
    --------
    >>> from lenswork import LensColumn, LensTable, PointCloud, screen
    >>> rng = np.random.default_rng(1)
    >>> cloud = PointCloud.from_array(rng.normal(size=(300, 2)))
    >>> table = LensTable([LensColumn("a", cloud.X[:, 0]), LensColumn("b", cloud.X[:, 1])],
    ...                   cloud)
    >>> result = screen(table, count=1)
    >>> result.to_lens_table().names == result.selected, len(result.rows())
    (True, 2)
    >>> probe = result.rescore(scores={"structure": [0.1, 1.0]},
    ...                        weights={"spread": 1, "structure": 1})
    >>> probe.selected
    ['b']
    """

    def __init__(self, lenses, scores, correlation, *, usable, weights, count, ceiling, bins,
                 reference_names=(), reference_correlation=None, skipped=(), status=None,
                 pairing="greedy", preservation=None, defer=False, selection=None,
                 settings=None):
        self.lenses = lenses
        self.names = lenses.names
        self.scores = {k: np.asarray(v, dtype=np.float64) for k, v in scores.items()}
        self.correlation = correlation
        self.usable = np.asarray(usable, dtype=bool)
        self.status = list(status) if status is not None else ["ok"] * len(self.names)
        self.weights = check_weights(weights, self.scores)
        self.count = count
        self.ceiling = ceiling
        self.bins = bins
        self.reference_names = list(reference_names)
        m = len(self.names)
        self.reference_correlation = (
            np.empty((m, 0)) if reference_correlation is None else reference_correlation
        )
        self.skipped = list(skipped)
        self.merit = weighted_merit(self.scores, self.weights)
        self.merit[~self.usable] = 0.0
        self._joint = None  # the pair rule's joint merit, built once (see _joint_merit)
        self._joint_built = False
        if pairing not in PAIRINGS:
            raise ParameterError(
                f"The 'pairing' parameter of screen must be one of {', '.join(PAIRINGS)}; got "
                f"{pairing!r}."
            )
        if pairing == "preservation" and preservation is None:
            pairing = "greedy"  # too few rows for a neighbour graph of the cover space
        self.pairing = pairing
        self._preservation = preservation
        self.settings = settings  # the ScreenSettings of the screen (None when built by hand)
        if selection is not None:  # already made (a result re-wrapped with the same state)
            self.selection = selection
        elif defer:  # the probe's scores come next: select once they are in
            self.selection = Selection((), (), "candidates")
        elif pairing == "preservation":
            self.selection = select_by_preservation(
                correlation, self.merit, preservation, count=count, ceiling=ceiling,
                usable=self.usable,
                joint_merit=self._joint_merit(),
            )
        else:
            self.selection = select_lenses(
                correlation, self.merit, count=count, ceiling=ceiling, usable=self.usable
            )
        self.selected = [self.names[j] for j in self.selection.indices]
        self._pres = None
        self._ties = None
        self._embedding = None
        self.probe = None  # a StructureProbe when the screen ran one
        self.data_notes = {}  # duplicates / pieces of the neighbour graph (screen.data_notes)

    # ---------------------------------------------------------------- API
    def to_lens_table(self):
        """The chosen lens columns as a LensTable, in the order they were taken.

        Raises
        ------
        ParameterError
            If nothing was selected (every candidate constant or non-finite).
        """
        if not self.selected:
            raise ParameterError(
                "The screen selected no lens: every candidate is constant or non-finite. "
                "Check the input data or add other lenses."
            )
        return self.lenses.select(self.selected)

    def rescore(self, *, scores=None, weights=None, count=None, ceiling=None):
        """A new result with added score columns / weights / count / ceiling; same lenses.

        Parameters
        ----------
        scores : dict of str -> array-like of shape (m,), optional
            Extra score columns in [0, 1] (higher is better), e.g. a structure
            probe; they join :attr:`scores` and the table.
        weights : dict of str -> float, optional
            Weights of the score columns in the merit (default: the current ones).
        count, ceiling : optional
            New selection limits (default: the current ones).

        Returns
        -------
        ScreenResult
        """
        new_scores = dict(self.scores)
        m = len(self.names)
        for name, vals in (scores or {}).items():
            v = np.asarray(vals, dtype=np.float64)
            if v.shape != (m,):
                raise ParameterError(
                    f"Score column {name!r} has shape {v.shape}; expected ({m},), one value per "
                    f"candidate in the order of ScreenResult.names."
                )
            finite = v[np.isfinite(v)]
            if finite.size and (finite.min() < 0 or finite.max() > 1):
                raise ParameterError(
                    f"Score column {name!r} must hold values in [0, 1] (higher is better); got "
                    f"values in [{finite.min():.3g}, {finite.max():.3g}]. Rescale it first."
                )
            new_scores[name] = v
        state = self._state()
        changes = {}
        if weights is not None:
            state["weights"] = changes["weights"] = weights
        if count is not None:
            state["count"] = changes["count"] = check_int("count", count, lo=1,
                                                          context="rescore")
        if ceiling is not None:
            state["ceiling"] = changes["ceiling"] = check_float(
                "ceiling", ceiling, lo=0, hi=1, lo_open=True, context="rescore")
        if changes and self.settings is not None:
            state["settings"] = self.settings.replace(**changes)
        out = ScreenResult(**dict(state, scores=new_scores))
        out._embedding = self._embedding
        out.probe = self.probe
        out.data_notes = self.data_notes
        return out

    def _state(self):
        """The constructor arguments that rebuild this result (selection made again)."""
        return {
            "lenses": self.lenses, "scores": self.scores, "correlation": self.correlation,
            "usable": self.usable, "weights": self.weights, "count": self.count,
            "ceiling": self.ceiling, "bins": self.bins, "reference_names": self.reference_names,
            "reference_correlation": self.reference_correlation, "skipped": self.skipped,
            "status": self.status, "pairing": self.pairing, "preservation": self._preservation,
            "settings": self.settings,
        }

    @property
    def cloud(self):
        """The PointCloud the lenses were computed on."""
        return self.lenses.cloud

    @property
    def embedding(self):
        """First two principal coordinates of the data (n, 2), for the figure sheet.

        From :func:`lenswork.pca_coordinates` (axes signed so that their
        largest-magnitude entry is positive); a second coordinate of zeros when
        the data has one feature.
        """
        if self._embedding is None:
            X = self.cloud.X
            out = np.zeros((X.shape[0], 2))
            m = min(2, *X.shape)
            if X.shape[0] >= 2:
                with warnings.catch_warnings():  # constant data: all-zero coordinates, drawn so
                    warnings.simplefilter("ignore", LensworkWarning)
                    out[:, :m] = pca_coordinates(X, components=m,
                                                 random_state=self.lenses.random_state)
            self._embedding = out
        return self._embedding

    @property
    def preservation(self):
        """``R_NX`` of each candidate with the first chosen lens (see the class notes)."""
        if self._pres is None:
            m = len(self.names)
            out = np.full(m, np.nan)
            sel = list(self.selection.indices)
            if self._preservation is not None and sel:
                first = sel[0]
                for j in range(m):
                    if j == first:
                        out[j] = self._preservation(sel) if len(sel) > 1 else math.nan
                    elif self.usable[j] and self.merit[j] > 0:
                        out[j] = self._preservation((first, j))
            self._pres = out
        return self._pres

    @property
    def pair_ties(self):
        """Pairs the data do not tell apart from the chosen pair (a list of dicts).

        Each allowed pair whose score (``R_NX(K)`` times the joint merit, as the
        pair rule scores it) is within two standard errors of the chosen pair's
        (:func:`lenswork.screen._select.tied_pairs`): ``lenses``, ``score``,
        ``difference`` (the chosen pair's score minus this one's) and ``se``.
        Empty for the greedy rule, fewer than two chosen lenses, or a
        preservation that gives no per-row terms. A long list says the choice
        among these pairs is not the data's: look at more than one.
        """
        if self._ties is None:
            sel = self.selection.indices
            rows = getattr(self._preservation, "rows", None)
            if self.pairing != "preservation" or len(sel) < 2 or rows is None \
                    or getattr(self._preservation, "scale", "k") != "k":
                self._ties = []
            else:
                found = tied_pairs(
                    sel[:2], self.correlation, self.merit, self._preservation,
                    ceiling=self.ceiling, usable=self.usable, joint_merit=self._joint_merit())
                self._ties = [{"lenses": [self.names[i], self.names[j]], "score": score,
                               "difference": diff, "se": se}
                              for i, j, score, diff, se in found]
        return self._ties

    def _joint_merit(self):
        """The pair rule's joint merit (:func:`joint_merit`; None without the probe), built once."""
        if not self._joint_built:
            self._joint = joint_merit(self.scores, self.weights, families=self._families())
            self._joint_built = True
        return self._joint

    def _families(self):
        """The lens family of each candidate (the pair rule's coverage counts kinds two show)."""
        return [col.lens for col in self.lenses.columns]

    def partners(self):
        """For each candidate: (name, rho) of the most correlated other candidate."""
        m = len(self.names)
        out = []
        absr = np.abs(self.correlation)
        for j in range(m):
            row = absr[j].copy()
            row[j] = np.nan
            if m < 2 or not np.isfinite(row).any():
                out.append((None, math.nan))
                continue
            i = int(np.nanargmax(row))
            out.append((self.names[i], float(self.correlation[j, i])))
        return out

    def rows(self):
        """The ranking table as a list of dicts (rank order: chosen first, in pick order)."""
        m = len(self.names)
        sel = list(self.selection.indices)
        absr = np.nan_to_num(np.abs(self.correlation), nan=0.0)
        partners = self.partners()
        pair = np.zeros(m)
        nearest = [(None, math.nan)] * m
        for t, j in enumerate(sel):
            pair[j] = self.selection.pair_merits[t]
            before = sel[:t]
            if before:
                i = before[int(np.argmax(absr[j, before]))]
                nearest[j] = (self.names[i], float(self.correlation[j, i]))
        rest = [j for j in range(m) if j not in sel]
        pres = self.preservation
        joint = self._joint_merit() if self.pairing == "preservation" else None
        for j in rest:
            if sel:
                i = sel[int(np.argmax(absr[j, sel]))]
                nearest[j] = (self.names[i], float(self.correlation[j, i]))
                if self.pairing == "preservation" and np.isfinite(pres[j]):
                    # as the partner of the first chosen lens: R_NX x the two lenses' joint
                    # merit (the rule's own score; sqrt(merit merit) without the probe)
                    both = joint(j, sel[0]) if joint is not None else \
                        math.sqrt(self.merit[j] * self.merit[sel[0]])
                    pair[j] = max(pres[j], 0.0) * both
                elif self.pairing == "preservation":
                    pair[j] = 0.0
                else:
                    pair[j] = self.merit[j] * (1.0 - absr[j, i])
            else:
                pair[j] = self.merit[j]

        def category(j):
            if not self.usable[j] or self.merit[j] <= 0:
                return 2
            return 1 if abs(nearest[j][1]) > self.ceiling else 0

        follows = np.nan_to_num(self.scores.get("smoothness", np.zeros(m)), nan=0.0)
        # merit 0 last; among those, lenses that follow the data's neighbours first
        rest.sort(key=lambda j: (category(j), -pair[j], -self.merit[j], -follows[j], j))
        rows = []
        for rank, j in enumerate(sel + rest, 1):
            col = self.lenses.columns[j]
            row = {
                "rank": rank, "column": col.name, "lens": col.lens, "params": col.params,
                "selected": j in sel, "merit": float(self.merit[j]),
                "preservation": float(pres[j]), "pair_merit": float(pair[j]),
            }
            for name, vals in self.scores.items():
                row[name] = float(vals[j])
            if self.probe is not None:
                found = self.probe.get(col.name, {})
                for key in PROBE_COUNTS:
                    value = found.get(key)
                    row[key] = None if value is None or not np.isfinite(value) else int(value)
            row["partner"] = partners[j][0]
            row["partner_rho"] = partners[j][1]
            row["nearest_selected"] = nearest[j][0]
            row["nearest_selected_rho"] = nearest[j][1]
            for k, ref in enumerate(self.reference_names):
                row[f"rho[{ref}]"] = float(self.reference_correlation[j, k])
            row["reason"] = self._reason(j, sel, nearest[j], pair[j])
            rows.append(row)
        return rows

    def _reason(self, j, sel, nearest, pair):
        if self.status[j] != "ok":
            return f"{status_text(self.status[j])}: spread 0, never selected"
        if j in sel:
            t = sel.index(j)
            if self.pairing == "preservation" and len(sel) > 1:
                what = "pair" if len(sel) == 2 else "set"
                if t == 0:
                    return (f"selected #1: best {what} merit {pair:.2f} (R_NX x joint merit), "
                            f"its higher merit ({self.merit[j]:.2f})")
                return (f"selected #{t + 1}: {what} merit {pair:.2f}, |rho| "
                        f"{abs(nearest[1]):.2f} to {nearest[0]}")
            if t == 0:
                return f"selected #1: highest merit ({self.merit[j]:.2f})"
            return (f"selected #{t + 1}: pair merit {pair:.2f}, |rho| {abs(nearest[1]):.2f} to "
                    f"{nearest[0]}")
        if self.merit[j] <= 0:
            return "merit 0: never selected"
        if nearest[0] is not None and abs(nearest[1]) > self.ceiling:
            return (f"redundant: |rho| {abs(nearest[1]):.2f} with {nearest[0]} (selected) > "
                    f"ceiling {self.ceiling:.2f}")
        if len(sel) >= self.count:
            return f"not needed: count {self.count} reached (pair merit {pair:.2f})"
        return f"not selected (pair merit {pair:.2f})"

    @property
    def stop_text(self):
        """Why the selection stopped, in words."""
        return {
            "count": f"count {self.count} reached",
            "ceiling": f"every other candidate has |rho| > {self.ceiling:.2f} with a chosen lens",
            "candidates": "no other usable candidate",
        }[self.selection.stop]

    def to_dict(self):
        """JSON-ready description: settings, ranking, correlation matrices, provenance.

        Plain JSON values only (:func:`lenswork._json.plain`): NaN and infinities
        are None, so the document is strict JSON.
        """
        return plain({
            "lenswork_version": __version__,
            "kind": "lens screen",
            "settings": {
                "count": self.count, "ceiling": self.ceiling, "bins": self.bins,
                "weights": self.weights, "pairing": self.pairing,
                "references": self.reference_names,
                "random_state": self.lenses.random_state,
            },
            "selected": self.selected,
            "pair_ties": self.pair_ties,
            "stop": self.selection.stop,
            "stop_text": self.stop_text,
            "ranking": self.rows(),
            "correlation": {"columns": self.names, "spearman": self.correlation.tolist()},
            "reference_correlation": {
                "columns": self.names, "references": self.reference_names,
                "spearman": self.reference_correlation.tolist(),
            },
            "screen_settings": None if self.settings is None else self.settings.to_dict(),
            "skipped_lenses": self.skipped,
            "data_notes": self.data_notes,
            "input": self.cloud.provenance,
            "n_rows_used": int(self.cloud.n),
        })

    def to_csv_text(self):
        """The ranking table as CSV text (params as JSON, missing values empty)."""
        rows = self.rows()
        buf = io.StringIO()
        w = csv_writer(buf, lineterminator="\n")
        header = list(rows[0]) if rows else []
        w.writerow(header)
        for r in rows:
            w.writerow([_csv_cell(r[h]) for h in header])
        return buf.getvalue()

    def to_frame(self):
        """The ranking table as a pandas DataFrame, one row per candidate.

        Returns
        -------
        pandas.DataFrame
            Indexed by the candidate column name (index name ``"column"``), in
            rank order (chosen first, in the order taken). Columns: ``rank``,
            ``lens``, ``params`` (JSON text), ``selected`` (bool), ``order``
            (1-based pick order; missing for candidates not chosen), ``merit``,
            ``preservation``, ``pair_merit``, every score column of :attr:`scores`, the probe counts
            when the screen ran the probe, ``partner`` and ``partner_rho``,
            ``nearest_selected`` and ``nearest_selected_rho``, ``rho[<ref>]``
            per reference column, and ``reason``: the columns of
            :meth:`rows` and of ``ranking.csv``.

        Raises
        ------
        LensworkError
            pandas is not installed.

        Examples
        --------
        >>> from lenswork import LensColumn, LensTable, PointCloud, screen
        >>> rng = np.random.default_rng(1)
        >>> cloud = PointCloud.from_array(rng.normal(size=(200, 2)))
        >>> table = LensTable([LensColumn("a", cloud.X[:, 0]), LensColumn("b", cloud.X[:, 1])],
        ...                   cloud)
        >>> frame = screen(table, count=1, probe=False).to_frame()
        >>> frame.shape[0], int(frame["selected"].sum()), int(frame["order"].iloc[0])
        (2, 1, 1)
        """
        rows = self.rows()
        header = [h for h in (rows[0] if rows else {"column": None}) if h != "column"]
        at = header.index("selected") + 1 if "selected" in header else len(header)
        header.insert(at, "order")
        picked = {name: t + 1 for t, name in enumerate(self.selected)}
        columns = {h: [] for h in header}
        for r in rows:
            for h in header:
                if h == "order":
                    value = picked.get(r["column"])
                elif h == "params":
                    value = dumps(r[h], indent=None, sort_keys=True)
                else:
                    value = r[h]
                columns[h].append(value)
        frame = data_frame(columns, index=[r["column"] for r in rows], what="a ScreenResult")
        frame.index.name = "column"
        for h in ("rank", "order", *(PROBE_COUNTS if self.probe is not None else ())):
            if h in frame:
                frame[h] = frame[h].astype("Int64")  # nullable: missing stays missing
        return frame

    def _cells(self, r, refs, probed):
        """(header, text, numeric) of one ranking row in the printed and HTML tables."""
        partner = "-" if r["partner"] is None else f"{r['partner']} ({r['partner_rho']:+.2f})"
        cells = [("rank", str(r["rank"]), True), ("lens column", r["column"], False),
                 ("r.spread", _num(r.get("robust_spread")), True),
                 ("smooth", _num(r.get("smoothness")), True)]
        if probed:
            sig = [r.get("significant_loops"), r.get("significant_branches")]
            every = [r.get(key) for key in ("loops", "flares", "branch_points")]
            cells += [("structure", _num(r.get("structure")), True),
                      ("sig L/B", "-" if sig[0] is None else "/".join(map(str, sig)), True),
                      ("L/F/B", "-" if every[0] is None else "/".join(map(str, every)), True)]
        cells += [("merit", _num(r["merit"]), True), ("R_NX", _num(r["preservation"]), True),
                  ("pair merit", _num(r["pair_merit"]), True), ("partner (rho)", partner, False),
                  *[(f"rho[{x}]", _num(r[f"rho[{x}]"], signed=True), True) for x in refs]]
        return cells

    def _repr_html_(self):
        """The ranking table as HTML for a notebook; chosen lenses marked, names escaped."""
        rows = self.rows()
        refs = self.reference_names[:3]
        probed = self.probe is not None
        picked = {name: t + 1 for t, name in enumerate(self.selected)}
        header = None
        body = []
        for r in rows:
            order = picked.get(r["column"])
            cells = self._cells(r, refs, probed)
            cells.insert(2, ("chosen", "" if order is None else f"\u2713 #{order}", False))
            cells.append(("reason", r["reason"], False))
            header = header or [h for h, _, _ in cells]
            style = ' style="font-weight:bold"' if order is not None else ""
            tds = "".join(
                f'<td style="text-align:{"right" if num else "left"}">{html.escape(c)}</td>'
                for _, c, num in cells
            )
            kind = "chosen" if order is not None else "candidate"
            body.append(f'<tr class="{kind}"{style}>{tds}</tr>')
        chosen = ", ".join(self.selected) if self.selected else "nothing"
        caption = (f"lenswork screen: {self.cloud.n:,} rows, {len(self.names)} candidates, "
                   f"chosen {len(self.selected)}: {chosen} (stopped: {self.stop_text})")
        head = "".join(f"<th>{html.escape(h)}</th>" for h in header or [])
        return (f'<table class="lenswork-screen"><caption>{html.escape(caption)}</caption>'
                f"<thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>")

    def format_table(self, max_rows=None):
        """The ranking as an aligned text table for the terminal.

        Columns: rank, lens column, the merit's criteria (``r.spread``: robust
        spread, ``smooth``: smoothness, ``structure`` with the probe, beside the
        probe's significant loops / branches ``sig L/B`` and all loops / flares /
        branch points ``L/F/B``), merit, ``R_NX`` with the first chosen lens,
        the pair merit (what the pairing maximises: ``R_NX x`` the joint merit
        with the first chosen lens, ``sqrt(merit merit')`` without the probe, or
        ``merit x (1 - max |rho|)`` with ``pairing="greedy"``), the most
        correlated other candidate, the reference correlations and the reason
        for the decision.
        """
        rows = self.rows()[:max_rows]
        refs = self.reference_names[:3]
        probed = self.probe is not None
        table = []
        for r in rows:
            cells = self._cells(r, refs, probed)
            cells.append(("status", r["reason"], False))
            table.append(cells)
        if not table:
            return ""
        header = [h for h, _, _ in table[0]]
        right = [num for _, _, num in table[0]]
        body = [[c for _, c, _ in cells] for cells in table]
        widths = [max(len(h), *(len(b[i]) for b in body)) for i, h in enumerate(header)]

        def line(cells):
            out = [c.rjust(w) if right[i] else c.ljust(w)
                   for i, (c, w) in enumerate(zip(cells, widths, strict=True))]
            return "  ".join(out).rstrip()

        lines = [line(header), line(["-" * w for w in widths])]
        lines += [line(b) for b in body]
        return "\n".join(lines)

    def text(self):
        """The ranking table and the summary: what ``lenswork screen`` prints.

        Examples
        --------
        >>> import numpy as np
        >>> from lenswork import LensColumn, LensTable, PointCloud, screen
        >>> cloud = PointCloud.from_array(np.random.default_rng(0).normal(size=(100, 2)))
        >>> table = LensTable([LensColumn("a", cloud.X[:, 0])], cloud)
        >>> screen(table, count=1, probe=False).text().splitlines()[-1]
        'Selected: a (stopped: count 1 reached; ceiling 0.80).'
        """
        return self.format_table() + "\n\n" + self.summary()

    def figure(self):
        """The figure sheet (a matplotlib Figure; :func:`lenswork.plot.screen_figure`)."""
        from ..plot import screen_figure  # matplotlib on demand only

        return screen_figure(self)

    def summary(self):
        """What was screened, what the data showed, what was kept and why it stopped.

        A last line lists the pairs the data do not tell apart from the chosen one
        (:attr:`pair_ties`), when there are any.
        """
        n_use = int(self.usable.sum())
        head = (f"Screened {len(self.names)} candidate columns ({n_use} usable) on "
                f"{self.cloud.n} rows x {self.cloud.d} features.")
        chosen = ", ".join(self.selected) if self.selected else "nothing"
        notes = [v["text"] for v in self.data_notes.values() if v.get("text")]
        data = f"\nData: {'; '.join(notes)}." if notes else ""
        ties = self.pair_ties
        tied = ""
        if ties:
            shown = ", ".join(" + ".join(t["lenses"]) for t in ties[:3])
            more = f" and {len(ties) - 3} more" if len(ties) > 3 else ""
            tied = (f"\nAs good within the error ({len(ties)} pair{'s' * (len(ties) > 1)} the "
                    f"data do not tell apart from the chosen one: neighbour preservation x "
                    f"structure within 2 standard errors): {shown}{more}.")
        return (f"{head}{data}\nSelected: {chosen} (stopped: {self.stop_text}; "
                f"ceiling {self.ceiling:.2f}).{tied}")

    def write(self, directory, *, figures=True, lens_format="csv"):
        """Write the ranking (CSV, JSON), the chosen lens columns and the figure sheet.

        Parameters
        ----------
        directory : str or Path
            Created if missing. Files: ``ranking.csv``, ``ranking.json``,
            ``lenses.<format>`` with its ``.json`` sidecar, and with ``figures``
            ``sheet.png`` and ``sheet.svg``.
        figures : bool, default=True
        lens_format : {"csv", "parquet", "npy"}, default="csv"

        Returns
        -------
        dict of str -> Path

        Notes
        -----
        The files are one output set (:class:`lenswork._io.OutputSet`): written
        into a hidden staging folder beside ``directory`` and moved in only
        when every one is complete, with ``lenswork-manifest.json`` last; files
        an earlier run wrote there and this one did not (``lenses.csv`` after
        ``lens_format="parquet"``, a figure) are removed. A failure leaves the
        folder as it was.
        """
        lens_format = check_choice("lens_format", lens_format, FORMATS, context="write")
        table = self.to_lens_table()  # raises before anything is written
        output = OutputSet(directory, command="screen")
        with output as staging:
            with _progress.step("writing ranking and lens columns"):
                write_text(staging / "ranking.csv", self.to_csv_text())
                write_text(staging / "ranking.json", dumps(self.to_dict()) + "\n")
                table.write(staging / f"lenses.{lens_format}")
            if figures:
                from ..plot._sheet import screen_sheet  # matplotlib on demand only

                with _progress.step("figure sheet (PNG, SVG)"):
                    screen_sheet(self, [staging / "sheet.png", staging / "sheet.svg"])
        return {p.name: p for p in output.written if p.name != MANIFEST}

    def __repr__(self):
        return (f"ScreenResult({len(self.names)} candidates, selected={self.selected}, "
                f"stop={self.selection.stop!r})")


def _num(v, signed=False):
    if v is None or not np.isfinite(v):
        return "-"
    return f"{v:+.2f}" if signed else f"{v:.2f}"


def _csv_cell(v):
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return "" if not math.isfinite(v) else repr(v)
    if isinstance(v, dict):
        return dumps(v, indent=None, sort_keys=True)
    return v
