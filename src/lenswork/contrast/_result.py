"""A column contrast's results: a ColumnContrast per (feature, column), one ContrastResult."""

from __future__ import annotations

import io
import math
import re
from dataclasses import asdict, dataclass, field

import numpy as np  # noqa: F401  (the doctests use np)

from .._errors import ParameterError
from .._frame import data_frame, records_frame
from .._io import csv_writer, write_text
from .._json import dumps
from .._validation import check_choice
from ..columns import node_column_values

__all__ = ["EFFECT_FLOOR", "ColumnContrast", "ContrastResult"]

#: Smallest effect a starred column must show: |Cliff's delta| for numeric columns (the
#: "small" threshold of Romano et al. 2006, 0.147) and Cramér's V for categorical ones (Cohen
#: 1988's small effect w = 0.1; for the 2 x k table of a feature against the rest, V = w).
EFFECT_FLOOR = {"numeric": 0.147, "categorical": 0.1}


@dataclass(frozen=True)
class ColumnContrast:
    """One data column compared between a feature's rows and the rows it is set against.

    Attributes
    ----------
    feature : str
        Feature label (``flare:2``, ``loop:1``, ``nodes:3,5``, ``rows``...).
    kind : str
    column : str
    role : {"feature", "passthrough"}
    type : {"numeric", "categorical"}
    rank : int
        1 = the column that sets the feature apart most (within the feature).
    effect : float
        ``|cliffs_delta|`` (numeric) or ``cramers_v`` (categorical), in [0, 1].
    cliffs_delta, smd : float
        Numeric only (NaN otherwise): Cliff's delta (feature vs against) and the
        standardised mean difference (Cohen's d, pooled SD).
    mean_in, mean_out : float
        Numeric only: means in the cloud's units (after its scaling).
    level : str
        Categorical only: the level most over-represented in the feature.
    share_in, share_out : float
        Categorical only: that level's share inside and outside.
    test : {"ks", "chi2"}
    statistic, pvalue, qvalue : float
        Test statistic, p-value and Benjamini-Hochberg q-value.
    significant : bool
        ``qvalue <= alpha`` and ``large_enough``.
    large_enough : bool
        The effect reaches :data:`EFFECT_FLOOR` (a small effect or more).
    n_in, n_out : int
        Non-missing rows compared on each side.
    along, along_r, along_p : str, float, float
        How the column changes along the feature: ``"spearman"`` (flare / path;
        ``along_r`` is Spearman's rho with the distance from the attachment
        node), ``"circular"`` (loop; the rank circular-linear correlation) or
        ``""`` (no order along the feature).
    along_peak_node : int or None
        Loop only: the loop node nearest to where the column peaks.

    Examples
    --------
    >>> from lenswork import PointCloud, build_graph, contrast_columns
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(300, 2))
    >>> cloud = PointCloud.from_array(X, feature_names=["a", "b"])
    >>> g = build_graph(X[:, 0], cloud, intervals=4)
    >>> row = contrast_columns(g, cloud, nodes=[0]).rows[0]
    >>> row.column, row.test, row.rank
    ('a', 'ks', 1)
    """

    feature: str
    kind: str
    column: str
    role: str
    type: str
    rank: int
    effect: float
    cliffs_delta: float
    smd: float
    mean_in: float
    mean_out: float
    level: str
    share_in: float
    share_out: float
    test: str
    statistic: float
    pvalue: float
    qvalue: float
    significant: bool
    n_in: int
    n_out: int
    large_enough: bool = True
    along: str = ""
    along_r: float = float("nan")
    along_p: float = float("nan")
    along_peak_node: int | None = None


@dataclass(frozen=True)
class ContrastResult:
    """The column contrasts of one or more graph features.

    Attributes
    ----------
    rows : tuple of ColumnContrast
        Ordered by feature, then rank.
    features : tuple of dict
        Per feature: ``label, kind, nodes, n_rows, n_against, attached_to, position``.
    skipped : tuple of dict
        ``{"feature", "column", "reason"}`` for every feature or column left out.
    notes : tuple of str
        Soft remarks (pooled levels, missing values dropped).
    params : dict
        ``against, hops, alpha, max_levels``, library version.
    graph, cloud : LensGraph and PointCloud
        What was contrasted (set by :func:`contrast_columns`; not compared,
        not written): :meth:`plot` and :meth:`write` draw the graph coloured by
        the top columns.

    Examples
    --------
    >>> from lenswork import PointCloud, build_graph, contrast_columns
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(300, 2))
    >>> cloud = PointCloud.from_array(X, feature_names=["a", "b"])
    >>> g = build_graph(X[:, 0], cloud, intervals=4)
    >>> res = contrast_columns(g, cloud, nodes=[0])
    >>> len(res.rows), res.top("nodes", 1), res.significant_features()
    (2, ['a'], ['nodes'])
    """

    rows: tuple
    features: tuple
    skipped: tuple = ()
    notes: tuple = ()
    params: dict = field(default_factory=dict)
    graph: object = field(default=None, repr=False, compare=False)
    cloud: object = field(default=None, repr=False, compare=False)

    def for_feature(self, label):
        """The rows of one feature, by rank."""
        if label not in {f["label"] for f in self.features}:
            names = ", ".join(f["label"] for f in self.features)
            raise ParameterError(f"No feature {label!r} in this result. Features: {names}.")
        return tuple(r for r in self.rows if r.feature == label)

    def top(self, label, n=5, *, significant_only=False):
        """The ``n`` best-ranked columns of one feature (their names)."""
        rows = self.for_feature(label)
        if significant_only:
            rows = [r for r in rows if r.significant]
        return [r.column for r in rows[:n]]

    def significant_features(self):
        """Labels of the features with at least one significant column (q and effect pass)."""
        return [f["label"] for f in self.features
                if any(r.significant for r in self.rows if r.feature == f["label"])]

    def records(self):
        """The table as a list of plain dicts (one per row)."""
        return [asdict(r) for r in self.rows]

    def to_frame(self, what="columns"):
        """A pandas DataFrame (needs pandas): the column table, or one row per feature.

        ``what="columns"``: the rows of ``contrast.csv``; ``"features"``: the
        ``features`` list of ``contrast.json``.
        """
        what = check_choice("what", what, ("columns", "features"), context="ContrastResult")
        if what == "features":
            return records_frame(list(self.features), what="a column contrast's features")
        names = [f.name for f in ColumnContrast.__dataclass_fields__.values()]
        cols = {n: [getattr(r, n) for r in self.rows] for n in names}
        return data_frame(cols, what="a column contrast")

    def to_dict(self):
        """JSON-ready form (NaN written as null by :func:`lenswork._json.dumps`)."""
        return {"params": self.params, "features": list(self.features),
                "columns": self.records(), "skipped": list(self.skipped),
                "notes": list(self.notes)}

    def csv_text(self):
        """The table as CSV text."""
        buf = io.StringIO()
        names = list(ColumnContrast.__dataclass_fields__)
        writer = csv_writer(buf, lineterminator="\n")
        writer.writerow(names)
        for rec in self.records():
            writer.writerow(["" if v is None or (isinstance(v, float) and not math.isfinite(v))
                             else (f"{v:.6g}" if isinstance(v, float) else v)
                             for v in (rec[n] for n in names)])
        return buf.getvalue()

    def write_csv(self, path):
        """Write the table as CSV, atomically; returns the path."""
        write_text(path, self.csv_text())
        return path

    def write_json(self, path):
        """Write :meth:`to_dict` as strict JSON, atomically; returns the path."""
        write_text(path, dumps(self.to_dict()) + "\n")
        return path

    def text(self, top=5, *, all_features=False):
        """A few lines per feature with a significant column (or every feature) for a terminal.

        The first line states the rule of the stars: the q-value and the
        effect-size floor (:data:`EFFECT_FLOOR`, with its sources).
        """
        lines = []
        alpha = self.params.get("alpha", 0.05)
        shown = self.significant_features() if not all_features else \
            [f["label"] for f in self.features]
        for f in self.features:
            if f["label"] not in shown:
                continue
            sig = ""
            if f.get("significance") is not None:
                sig = f", significance {f['significance']:.2f}" + (
                    "" if f.get("significant") or f.get("threshold") is None
                    else f" < {f['threshold']:.2f} needed (small)")
            lines.append(f"{f['label']}: {f['n_rows']:,} rows against {f['n_against']:,} "
                         f"({self.params.get('against')}){sig}, nodes "
                         f"{_short_nodes(f['nodes'])}")
            for r in self.for_feature(f["label"])[:top]:
                if r.type == "numeric":
                    what = (f"delta {r.cliffs_delta:+.2f}  d {r.smd:+.2f}  mean "
                            f"{r.mean_in:.3g} vs {r.mean_out:.3g}")
                else:
                    what = (f"V {r.effect:.2f}  {r.level!r} {r.share_in:.0%} vs "
                            f"{r.share_out:.0%}")
                along = ""
                if r.along and math.isfinite(r.along_r):
                    name = "rho" if r.along == "spearman" else "R"
                    along = f"  along: {name} {r.along_r:+.2f}" if name == "rho" else \
                        f"  along: {name} {r.along_r:.2f} peak node {r.along_peak_node}"
                mark = "*" if r.significant else " "
                lines.append(f"  {r.rank:>2}{mark} {r.column:<20} {what}  q {r.qvalue:.2g}{along}")
        floor = self.params.get("effect_floor", EFFECT_FLOOR)
        rule = (f"* = q <= {alpha} (Benjamini-Hochberg over all {self.params.get('family', 0)} "
                f"tests) and an effect at least small: |Cliff's delta| >= {floor['numeric']:g} "
                f"(Romano et al. 2006), Cramér's V >= {floor['categorical']:g} (Cohen 1988)")
        if not lines:
            lines.append(f"no feature has a significant column ({len(self.features)} features "
                         f"tested)")
        lines.insert(0, rule)
        for s in self.skipped:
            where = f"{s['feature']}: " if s.get("feature") else ""
            col = f"column {s['column']!r} " if s.get("column") else ""
            lines.append(f"  note: {where}{col}{s['reason']}")
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)

    def __str__(self):
        return self.text()

    def write(self, directory, *, figures=True, top=6):
        """Write ``contrast.csv``, ``contrast.json`` (and ``columns_<feature>.png``) into a folder.

        One sheet per feature with a significant column (:meth:`plot`); every
        figure is drawn before the first file is written. Returns the paths.
        """
        from pathlib import Path

        directory = Path(directory)
        if directory.exists() and not directory.is_dir():
            raise ParameterError(
                f"Output directory {str(directory)!r} is a file; give a directory path."
            )
        figs = {}
        if figures and self.graph is not None:
            for label in self.significant_features():
                name = "columns_" + re.sub(r"[^A-Za-z0-9_.-]+", "-", label).strip("-") + ".png"
                figs[name] = self.plot(feature=label, top=top)
        directory.mkdir(parents=True, exist_ok=True)
        written = [self.write_csv(directory / "contrast.csv"),
                   self.write_json(directory / "contrast.json")]
        if figs:
            from ..plot._style import save

            written += [save(fig, directory / name) for name, fig in figs.items()]
        return written

    def plot(self, path=None, *, feature=None, top=6):
        """The graph coloured by each of a feature's top columns (:func:`plot.contrast_sheet`).

        ``feature`` defaults to the first feature with a significant column (else
        the first feature). Needs the graph and cloud :func:`contrast_columns`
        keeps on the result; the plot module is imported here, on the first call.
        """
        if self.graph is None or self.cloud is None:
            raise ParameterError(
                "This ContrastResult holds no graph and data to draw (it was not made by "
                "contrast_columns); call lenswork.plot.contrast_sheet(result, graph, data, "
                "feature)."
            )
        if feature is None:
            sig = self.significant_features()
            feature = sig[0] if sig else self.features[0]["label"]
        values = {}  # computed here, below the plot, and handed to it
        for r in self.for_feature(feature)[:max(1, int(top))]:
            stat, level = ("share", r.level) if r.type == "categorical" else ("mean", None)
            values[r.column] = node_column_values(self.graph, self.cloud, r.column, stat,
                                                  level=level)
        from ..plot._columns import contrast_sheet

        return contrast_sheet(self, self.graph, self.cloud, feature, top=top, path=path,
                              values=values)

    def _repr_png_(self):
        """The ``plot()`` figure as PNG bytes (a notebook shows it); matplotlib's Agg canvas."""
        from ..plot._style import png_bytes

        return png_bytes(self.plot())


def _short_nodes(nodes, k=8):
    nodes = list(nodes)
    return ",".join(map(str, nodes[:k])) + (",..." if len(nodes) > k else "")
