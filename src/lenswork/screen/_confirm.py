"""Screen on a seeded sample of rows, then confirm the chosen lenses on every row.

On a large table the screen ranks the candidates on a sample, then computes
only the chosen lenses on all rows and checks that they agree with what the
screen saw.

The sample rule
---------------
``sample="auto"`` screens every row up to :data:`SAMPLE_ALL_MAX` (50,000)
rows, else a seeded simple random sample of :data:`SAMPLE_SIZE` (20,000)
rows (``rng.choice(n, size, replace=False)``, ``rng =
numpy.random.default_rng([seed, 11])``, sorted). Reasons for the figure:

- the spread score is a normalised histogram entropy over 20 bins; on 20,000
  rows its plug-in bias is at most ``(B - 1) / (2 N log B)`` = 1.6e-4
  (Miller's correction, Paninski 2003) and its bootstrap standard error on
  the benchmark tables is 1e-3 to 5e-3, well under the gaps between
  candidates that decide a choice (0.02 and up); the error is measured on
  every run, not assumed (below);
- 20,000 rows stay under the exact neighbour threshold (50,000), so the
  sample's neighbour graph needs no approximate index and no compilation;
- it is the Laplacian lens's landmark count, so the sample-mode Laplacian on
  all rows solves on as many rows as the screen saw.

``sample="all"`` (or ``None``) screens every row; an integer screens that many
(all rows when it is at least n).

The sampling error of the scores
--------------------------------
The spread score of every candidate is bootstrapped over the sample rows
(:data:`BOOTSTRAP` = 30 resamples; a resample of a sorted column only changes
how often each value occurs, so it needs no new sort): the standard error of each
candidate's spread, and how often the selection (re-run with the resampled
spread, the other scores held fixed: the structure probe is not re-run)
keeps the same lenses, are reported.

The confirmation
----------------
Each chosen column is recomputed on all rows with the parameters its
candidate rule gives at the full size (a default candidate takes the
parameters :func:`default_candidates` gives for all rows, e.g. the DTM by
its neighbour count, the broad density bandwidth from Scott's factor at n; a
candidate given by name keeps its parameters). The Laplacian lens, whose
``mode="auto"`` solves every row up to 200,000 rows, runs in its sample mode
(landmarks plus the Nystrom extension, Bengio et al. 2004) with as many
landmarks as the screen's sample, and reports its extension error. Then
Spearman's rho of the sample run's values against the full run's values on
the same rows is reported per lens, with a warning below
:data:`AGREEMENT_WARN` in absolute value (a negated lens gives the same
cover, so the sign does not count).
"""

from __future__ import annotations

import dataclasses
import time
import warnings

import numpy as np

from .. import _progress
from .._errors import LensworkWarning, warn_caller
from .._validation import seed_of
from ..criteria import robust_spread_sorted
from ..lenses import LensTable, get_lens
from ..workspace import Workspace
from ._candidates import default_candidates
from ._redundancy import corr_from_unit, unit_row
from ._result import ScreenResult
from ._settings import check_sample
from ._spread import rank_sorted, spread_from_sorted

__all__ = [
    "AGREEMENT_WARN",
    "BOOTSTRAP",
    "SAMPLE_ALL_MAX",
    "SAMPLE_SIZE",
    "Confirmation",
    "SampledScreenResult",
    "confirm_selection",
    "plan_sample",
    "sample_rows",
    "spread_bootstrap",
]

#: ``sample="auto"`` screens every row up to this many rows.
SAMPLE_ALL_MAX = 50_000
#: Rows of the seeded sample above :data:`SAMPLE_ALL_MAX`.
SAMPLE_SIZE = 20_000
#: Bootstrap resamples of the spread scores.
BOOTSTRAP = 30
#: Warn when a chosen lens's |Spearman rho| between sample and full run is below this.
AGREEMENT_WARN = 0.9
#: Second entry of the sample's seed sequence (keeps it apart from the lenses' own draws).
_STREAM = 11
#: Error figures a lens may report in its column info, in the order they are looked up.
_ERROR_KEYS = ("extension_error", "rel_se_median", "rel_gap_median", "rel_hard_width_median",
               "max_residual")


@dataclasses.dataclass(frozen=True)
class SamplePlan:
    """Which rows the screen ranks on, and the rule that chose them."""

    rows: np.ndarray
    n: int
    rule: str
    seed: int
    workspace: Workspace

    @property
    def size(self):
        return int(self.rows.shape[0])


def sample_rows(n, size, random_state=0):
    """Sorted positions of the screen's seeded sample: ``size`` of ``n`` rows, no repeats.

    Parameters
    ----------
    n, size : int
    random_state : int, default=0

    Returns
    -------
    ndarray of int64, shape (min(size, n),)

    Examples
    --------
    >>> rows = sample_rows(1000, 5, random_state=3)
    >>> rows.tolist() == sorted(np.random.default_rng([3, 11]).choice(1000, 5,
    ...                                                                replace=False).tolist())
    True
    """
    if size >= n:
        return np.arange(n, dtype=np.int64)
    rng = np.random.default_rng([int(random_state), _STREAM])
    return np.sort(rng.choice(n, size, replace=False)).astype(np.int64)


def _subset_cloud(cloud, rows, rule, seed):
    """The rows of ``cloud`` at ``rows`` as a PointCloud, the sample noted in its provenance."""
    prov = dict(cloud.provenance)
    prov["sample"] = {"size": int(rows.shape[0]), "of": int(cloud.n), "seed": seed,
                      "rule": rule}
    return dataclasses.replace(
        cloud,
        X=np.ascontiguousarray(cloud.X[rows]),
        ids=np.asarray(cloud.ids)[rows],
        passthrough={k: np.asarray(v)[rows] for k, v in cloud.passthrough.items()},
        row_numbers=np.asarray(cloud.row_numbers)[rows],
        provenance=prov,
    )


def plan_sample(ws, sample="auto"):
    """The screen's sample for this workspace, or None when every row is screened.

    Parameters
    ----------
    ws : Workspace
    sample : "auto", "all", int or None, default="auto"
        See the module notes for the rule.

    Returns
    -------
    SamplePlan or None

    Examples
    --------
    >>> ws = Workspace(np.random.default_rng(0).normal(size=(60_000, 2)))
    >>> plan = plan_sample(ws)
    >>> plan.size, plan.workspace.n, plan.rule.startswith("auto")
    (20000, 20000, True)
    >>> plan_sample(ws, "all") is None, plan_sample(Workspace(np.eye(5))) is None
    (True, True)
    """
    sample = check_sample(sample)
    n = ws.n
    if sample == "all":
        return None
    if sample == "auto":
        if n <= SAMPLE_ALL_MAX:
            return None
        size = SAMPLE_SIZE
        rule = (f"auto: all rows up to {SAMPLE_ALL_MAX:,}, else a seeded sample of "
                f"{SAMPLE_SIZE:,} (n = {n:,})")
    else:
        if sample >= n:
            return None
        size, rule = sample, f"sample={sample:,} of n = {n:,}"
    seed = seed_of(ws.random_state)
    rows = sample_rows(n, size, seed)
    sub = Workspace(
        _subset_cloud(ws.cloud, rows, rule, seed), random_state=ws.random_state,
        neighbor_method=ws.neighbor_method, min_neighbors=ws.min_neighbors,
    )
    return SamplePlan(rows, n, rule, seed, sub)


def spread_bootstrap(table, bins, *, resamples=BOOTSTRAP, random_state=0, robust=None):
    """Bootstrap replicates of every column's spread score, shape (resamples, m).

    With ``robust`` an array of shape (resamples, m), the same resamples also
    fill it with the replicates of the robust spread
    (:func:`lenswork.criteria.robust_spread_sorted`), the spread score the
    default merit uses.

    A resample of n rows with replacement leaves the sorted order intact: it
    only changes how often each value (tie group) occurs, counted with one
    ``bincount`` of the drawn rows, so each replicate costs O(n) without a
    sort. Non-finite or constant columns give 0.

    Examples
    --------
    >>> from lenswork import LensColumn, PointCloud
    >>> x = np.random.default_rng(0).uniform(size=5000)
    >>> t = LensTable([LensColumn("u", x)], PointCloud.from_array(x[:, None]))
    >>> reps = spread_bootstrap(t, 20, resamples=30)
    >>> reps.shape, bool(reps.std() < 0.01)
    ((30, 1), True)
    """
    rng = np.random.default_rng([int(random_state), _STREAM, 1])
    m = len(table)
    out = np.zeros((resamples, m))
    for j, col in enumerate(table.columns):
        v = np.asarray(col.values, dtype=np.float64)
        if not np.isfinite(v).all():
            continue
        _, s, counts = rank_sorted(v)
        n, starts = v.shape[0], np.concatenate(([0], np.cumsum(counts)[:-1]))
        uniq = s[starts]
        group = None if counts.size == n else np.repeat(np.arange(counts.size), counts)
        for r in range(resamples):
            draw = rng.integers(0, n, n)
            c = np.bincount(draw if group is None else group[draw], minlength=counts.size)
            keep = c > 0
            sb = np.repeat(uniq[keep], c[keep])
            score = spread_from_sorted(sb, c[keep], bins)
            out[r, j] = score.spread if score.status == "ok" else 0.0
            if robust is not None:
                robust[r, j] = robust_spread_sorted(sb, c[keep]).robust_spread
    return out


def spearman_pair(a, b):
    """Spearman's rho of two equal-length columns (average ranks for ties)."""
    Z = np.empty((2, a.shape[0]))
    unit_row(rank_sorted(np.asarray(a, dtype=np.float64))[0], Z[0])
    unit_row(rank_sorted(np.asarray(b, dtype=np.float64))[0], Z[1])
    return float(corr_from_unit(Z)[0, 1])


@dataclasses.dataclass
class Confirmation:
    """What the sample screen and the confirmation on all rows found.

    Attributes
    ----------
    n_rows, sample_size : int
    rule : str
        The sample rule in words.
    seed : int
    spread_se : dict of str -> float
        Bootstrap standard error of each candidate's spread (histogram entropy)
        on the sample.
    robust_spread_se : dict of str -> float
        The same for the robust spread, the spread score of the default merit.
    same_selection : float
        Share of bootstrap resamples whose selection is the screen's, both
        spreads taken from the resample and the other scores (smoothness,
        structure) held fixed.
    lenses : list of dict
        Per chosen lens: ``screened`` (column name on the sample),
        ``confirmed`` (on all rows), ``spec``, ``mode``, ``error`` (the
        lens's own error figure, e.g. the Nystrom extension error),
        ``spearman`` (sample run vs full run on the sample rows), ``seconds``.
    table : LensTable
        The chosen lens columns on all rows.
    """

    n_rows: int
    sample_size: int
    rule: str
    seed: int
    spread_se: dict
    same_selection: float
    resamples: int
    lenses: list
    table: LensTable
    robust_spread_se: dict = dataclasses.field(default_factory=dict)

    def to_dict(self):
        """JSON-ready description (no lens values)."""
        return {
            "n_rows": self.n_rows, "sample_size": self.sample_size, "rule": self.rule,
            "seed": self.seed, "bootstrap_resamples": self.resamples,
            "spread_se": self.spread_se, "robust_spread_se": self.robust_spread_se,
            "same_selection": self.same_selection,
            "agreement_warn": AGREEMENT_WARN, "lenses": self.lenses,
        }

    def summary(self):
        """A few lines: the sample, the scores' sampling error, each lens's agreement."""
        se = np.array([v for v in self.robust_spread_se.values() if np.isfinite(v)])
        lines = [
            f"Screened on a seeded sample of {self.sample_size:,} of {self.n_rows:,} rows "
            f"({self.rule}; seed {self.seed}).",
            f"Sampling error: robust spread SE (bootstrap, {self.resamples} resamples) median "
            f"{np.median(se) if se.size else float('nan'):.4f}, max "
            f"{se.max() if se.size else float('nan'):.4f}; same selection in "
            f"{self.same_selection:.0%} of resamples (smoothness and structure held fixed).",
        ]
        for rec in self.lenses:
            err = f", {rec['error']}" if rec.get("error") else ""
            lines.append(
                f"Confirmed on all rows: {rec['confirmed']} (computed as {rec['spec']}; "
                f"mode {rec['mode'] or '-'}{err}): Spearman rho with the sample run "
                f"{rec['spearman']:+.4f}, {rec['seconds']:.1f} s."
            )
        return "\n".join(lines)


def _error_text(info):
    for key in _ERROR_KEYS:
        if info.get(key) is not None:
            return f"{key} {float(info[key]):.2g}"
    return ""


def full_spec(candidate, ws, plan):
    """``(name, params)`` that computes a sample screen's candidate on all rows of ``ws``.

    A default candidate asks :func:`default_candidates` again at the full row
    count (its parameters follow n); a lens given by the caller keeps its
    parameters. The Laplacian lens in ``mode="auto"`` runs in its sample mode
    with at most as many landmarks as the screen's sample (module notes).
    """
    name, params = candidate.lens, dict(candidate.params)
    i = candidate.default_index
    if i is not None:
        defaults = default_candidates(ws)
        if i < len(defaults) and defaults[i][0] == name:
            params = dict(defaults[i][1])
    if name == "laplacian":
        resolved = get_lens(name).resolve(params)
        if resolved["mode"] == "auto":
            params["mode"] = "sample"
            params["landmarks"] = min(int(resolved["landmarks"]), plan.size)
    return name, params


def confirm_selection(result, ws, plan, origins, *, resamples=BOOTSTRAP):
    """Compute the sample screen's chosen lenses on all rows and check them.

    Parameters
    ----------
    result : ScreenResult
        The screen on ``plan.workspace`` (the sample).
    ws : Workspace
        All rows.
    plan : SamplePlan
        From :func:`plan_sample`.
    origins : dict of str -> Candidate
        Where each screened column came from (its spec and part), as
        :func:`~lenswork.screen._candidates.candidate_columns` gives it.
    resamples : int, default=30
        Bootstrap resamples of the spread scores.

    Returns
    -------
    SampledScreenResult

    Examples
    --------
    >>> from lenswork import screen
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(3000, 3)) * [3.0, 1.0, 0.2]
    >>> res = screen(X, lenses=["pca", "eccentricity"], probe=False, sample=1000)
    >>> res.confirmation.sample_size, res.to_lens_table().cloud.n
    (1000, 3000)
    >>> all(abs(r["spearman"]) > 0.99 for r in res.confirmation.lenses)
    True
    """
    robust = np.zeros((resamples, len(result.lenses)))
    reps = spread_bootstrap(result.lenses, result.bins, resamples=resamples,
                            random_state=plan.seed, robust=robust)
    se = reps.std(axis=0, ddof=1) if resamples > 1 else np.full(reps.shape[1], np.nan)
    robust_se = robust.std(axis=0, ddof=1) if resamples > 1 else np.full(robust.shape[1], np.nan)
    same = 0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LensworkWarning)
        for r in range(resamples):  # the other scores (smoothness, structure) held fixed
            alt = result.rescore(scores={"spread": np.clip(reps[r], 0.0, 1.0),
                                         "robust_spread": np.clip(robust[r], 0.0, 1.0)})
            same += alt.selected == result.selected
    records, columns = [], []
    for name in result.selected:
        col = result.lenses[name]
        origin = origins[name]
        lens, params = full_spec(origin, ws, plan)
        label = lens + (":" + ",".join(f"{k}={v}" for k, v in params.items()) if params else "")
        start = time.perf_counter()
        with _progress.step(f"confirming {name} on all {ws.n:,} rows: {label}"):
            cols = get_lens(lens)(ws, **params)
        secs = time.perf_counter() - start
        full = cols[min(origin.part, len(cols) - 1)]
        # the column keeps the name it was ranked under (its params record how it was computed)
        full = dataclasses.replace(full, name=name)
        rho = spearman_pair(col.values, full.values[plan.rows])
        info = full.info
        records.append({
            "screened": name, "confirmed": full.name, "spec": label,
            "mode": str(info.get("mode") or info.get("method") or ""),
            "error": _error_text(info), "spearman": rho, "seconds": round(secs, 3),
        })
        columns.append(full)
        if not abs(rho) >= AGREEMENT_WARN:
            warn_caller(
                f"Lens {name!r} chosen on the sample of {plan.size:,} rows does not agree with "
                f"its computation on all {ws.n:,} rows (Spearman rho {rho:+.3f}, below "
                f"{AGREEMENT_WARN}). Screen on more rows (sample=..., --sample N) or on all "
                f"of them (sample='all')."
            )
    seen, unique = set(), []
    for c in columns:
        if c.name not in seen:
            seen.add(c.name)
            unique.append(c)
    conf = Confirmation(
        n_rows=ws.n, sample_size=plan.size, rule=plan.rule, seed=plan.seed,
        spread_se={n: float(v) for n, v in zip(result.names, se, strict=True)},
        robust_spread_se={n: float(v) for n, v in zip(result.names, robust_se, strict=True)},
        same_selection=same / resamples if resamples else float("nan"),
        resamples=resamples, lenses=records,
        table=LensTable(unique, ws.cloud, random_state=ws.random_state),
    )
    return SampledScreenResult(result, conf)


class SampledScreenResult(ScreenResult):
    """A screen ranked on a sample of rows, its chosen lenses confirmed on all rows.

    Everything a :class:`ScreenResult` holds, about the sample (scores,
    correlations, figures), plus :attr:`confirmation`; :meth:`to_lens_table`
    and :meth:`write` give the chosen lenses on all rows.

    Examples
    --------
    >>> from lenswork import screen
    >>> X = np.random.default_rng(1).normal(size=(2000, 2)) * [2.0, 1.0]
    >>> res = screen(X, lenses=["pca"], count=1, probe=False, sample=500)
    >>> type(res).__name__, res.to_lens_table().names == res.selected, res.to_lens_table().cloud.n
    ('SampledScreenResult', True, 2000)
    """

    def __init__(self, result, confirmation):
        # the sample's result, rebuilt from its constructor arguments with its selection
        # and its computed pieces (the probe, the figure's embedding, R_NX per candidate)
        super().__init__(**result._state(), selection=result.selection)
        self.probe = result.probe
        self._embedding = result._embedding
        self._pres = result._pres
        self.confirmation = confirmation

    def to_lens_table(self):
        """The chosen lens columns computed on all rows (see :class:`Confirmation`)."""
        super().to_lens_table()  # raises when nothing was selected
        return self.confirmation.table

    def rescore(self, **kwargs):
        """As :meth:`ScreenResult.rescore`, on the sample; the result is no longer confirmed.

        A changed selection has not been computed on all rows: the returned
        plain ScreenResult's lens table holds the sample rows only.
        """
        out = super().rescore(**kwargs)
        if out.selected == self.selected:
            return SampledScreenResult(out, self.confirmation)
        return out

    def to_dict(self):
        """As :meth:`ScreenResult.to_dict`, plus the ``sample`` section."""
        out = super().to_dict()
        from .._json import plain

        out["sample"] = plain(self.confirmation.to_dict())
        out["n_rows"] = int(self.confirmation.n_rows)
        return out

    def summary(self):
        """The screen's summary and the sample's lines."""
        return super().summary() + "\n" + self.confirmation.summary()

    def __repr__(self):
        return (f"SampledScreenResult({len(self.names)} candidates on {self.cloud.n} of "
                f"{self.confirmation.n_rows} rows, selected={self.selected})")
