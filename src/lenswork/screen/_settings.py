"""ScreenSettings: every setting of a lens screen, in one frozen object validated once.

The dataclass is the one place that defines the screen's settings, their
defaults, their checks and their command-line options (the ``cli`` entry of
each field's metadata, read by :func:`lenswork.cli._common.screen_options`).
:func:`lenswork.screen` takes a ``ScreenSettings`` (or keyword overrides of
its fields), the sampled screen hands the same object down to the ranking on
the sample, and ``ranking.json`` records it whole (``screen_settings``). A
sweep over screens is a list of ``settings.replace(...)``.

CLI metadata (``_cli``): ``flags`` (one or more option names), ``help``,
``kind`` -- ``int``, ``float``, ``choice`` (with ``choices``), ``text``,
``multiple`` (repeatable; ``split`` also splits each value at commas) or
``flag`` (an on/off switch that sets the field to ``value``).
"""

from __future__ import annotations

import numbers
from dataclasses import dataclass, field

from .._errors import ParameterError
from .._validation import SettingsRecord, check_bool, check_choice, check_float, check_int
from ..lenses import get_lens
from ._candidates import parse_spec
from ._select import PAIRINGS

__all__ = ["MIN_SAMPLE", "ScreenSettings", "check_sample"]

#: Fewest rows an integer ``sample`` may ask for.
MIN_SAMPLE = 100
_CONTEXT = "screen"


def check_sample(sample):
    """The ``sample`` setting: ``"auto"``, ``"all"`` (also ``None``) or a number of rows >= 100.

    Examples
    --------
    >>> check_sample(" Auto "), check_sample(None), check_sample("20000")
    ('auto', 'all', 20000)
    """
    if sample is None or (isinstance(sample, str) and sample.strip().lower() in ("all", "auto")):
        return "all" if sample is None else sample.strip().lower()
    if isinstance(sample, str):
        try:
            sample = int(float(sample.strip())) if sample.strip() else None
        except ValueError:
            sample = None
        if sample is None:
            raise ParameterError(
                "sample must be 'auto', 'all' or a number of rows (e.g. 20000); got "
                "a string that is none of these."
            )
    if isinstance(sample, (bool,)) or not isinstance(sample, numbers.Integral):
        raise ParameterError(
            f"sample must be 'auto', 'all' or a number of rows (e.g. 20000); got {sample!r}."
        )
    return check_int("sample", sample, lo=MIN_SAMPLE, context=_CONTEXT)


def _cli(flags, help, *, kind="text", metavar=None, choices=None, split=False, value=None):
    """Field metadata for the generated CLI option (see the module notes)."""
    flags = (flags,) if isinstance(flags, str) else tuple(flags)
    return {"cli": {"flags": flags, "help": help, "kind": kind, "metavar": metavar,
                    "choices": choices, "split": split, "value": value}}


def _specs(name, value):
    """A tuple of lens specs (text or (name, params) pairs); each one resolved once."""
    if isinstance(value, str):
        value = [value]
    try:
        items = tuple(value)
    except TypeError:
        raise ParameterError(
            f"The {name!r} parameter of screen must be a list of lens specs (names, "
            f"'name:key=value' text or (name, params) pairs); got {value!r}."
        ) from None
    out = []
    for item in items:
        lens, params = parse_spec(item)  # an unreadable spec names itself
        get_lens(lens).resolve(params)  # unknown lens or bad value: fail before any work
        out.append(item if isinstance(item, str) else (lens, params))
    return tuple(out)


def _references(value):
    if isinstance(value, str):
        return tuple(r.strip() for r in value.split(",") if r.strip())
    if isinstance(value, dict):  # arrays given by name: data, kept as they are
        return dict(value)
    try:
        return tuple(str(r) for r in value)
    except TypeError:
        raise ParameterError(
            f"The 'references' parameter of screen must be column names (a list or a "
            f"comma-separated text) or a dict of name -> values; got {value!r}."
        ) from None


def _weights(value):
    if value is None:
        return None
    if not isinstance(value, dict) or not value:
        raise ParameterError(
            f"The 'weights' parameter of screen must be a non-empty dict of score column -> "
            f"weight (e.g. {{'robust_spread': 1, 'smoothness': 1}}); got {value!r}."
        )
    return {str(k): check_float(f"weights.{k}", v, lo=0.0, context=_CONTEXT)
            for k, v in value.items()}


@dataclass(frozen=True)
class ScreenSettings(SettingsRecord):
    """Every setting of :func:`lenswork.screen`, validated once (see the module notes).

    Parameters
    ----------
    lenses : list of str or (str, dict), optional
        Candidate lenses (registry names or specs like ``"dtm:mass=0.05"``).
        Default (None): :func:`lenswork.screen.default_candidates`, where a lens
        that cannot be computed on the data warns and is skipped; ``()``: no
        default candidates (only ``extra``).
    extra : list of str or (str, dict), default=()
        Lenses added to the candidates; errors in these are raised.
    count : int, default=2
        Lenses to select at most (two lenses give the usual 2-D cover).
    ceiling : float in (0, 1], default=0.8
        Never select two lenses with ``|rho|`` above this (at 0.8 two
        orderings share 64 % of their rank variance).
    references : list of str, comma-separated str, or dict of str -> array-like, default=()
        Reference columns: names of feature or passthrough columns, or arrays
        (one value per row; recorded by name only). NaN / empty values are
        left out pairwise.
    bins : int, default=20
        Histogram bins of the (histogram-entropy) ``spread`` diagnosis column.
    weights : dict of str -> float, optional
        Score columns in the merit, a weighted geometric mean (default
        ``{"robust_spread": 1, "smoothness": 1, "structure": 1}`` with the
        probe, ``{"robust_spread": 1, "smoothness": 1}`` without). Any score
        column of the table may be named, e.g. ``{"spread": 1}``.
    probe : bool, default=True
        Run the structure probe (:func:`lenswork.probe.structure_scores`) and
        fold its scores into the merit.
    pairing : {"preservation", "greedy"}, default="preservation"
        How the set is picked from the merits: the pair (set) with the largest
        neighbour preservation ``R_NX`` times the merits' geometric mean under
        the ceiling, or the greedy ``merit * (1 - max |rho|)`` rule.
    sample : "auto", "all" or int, default="auto"
        Rows the candidates are ranked on (:mod:`lenswork.screen._confirm`):
        ``"auto"`` every row up to 50,000 rows, else a seeded sample of
        20,000; an integer (at least 100) that many; ``"all"`` every row.
    random_state : int, optional
        Seed of the lenses (default: the workspace's, or 0).

    Examples
    --------
    >>> s = ScreenSettings(count=3, references="flow,head")
    >>> s.count, s.references, s.replace(pairing="greedy").pairing
    (3, ('flow', 'head'), 'greedy')
    >>> ScreenSettings.from_dict(s.to_dict()) == s
    True
    """

    lenses: object = field(default=None, metadata=_cli(
        "--no-defaults", "Screen only the --lens candidates, not the default set.",
        kind="flag", value=()))
    extra: tuple = field(default=(), metadata=_cli(
        ("-l", "--lens"), "Add a candidate lens, name or name:key=value,... (repeatable); "
        "`lenswork lenses` lists them.", kind="multiple", metavar="SPEC"))
    count: int = field(default=2, metadata=_cli(
        ("-n", "--count"), "Lenses to select at most.", kind="int"))
    ceiling: float = field(default=0.8, metadata=_cli(
        "--ceiling", "Never select two lenses with |Spearman rho| above this.", kind="float"))
    references: object = field(default=(), metadata=_cli(
        ("-r", "--ref"), "Reference column (feature or passthrough) to correlate every lens "
        "with; repeatable or comma-separated.", kind="multiple", metavar="COL", split=True))
    bins: int = field(default=20, metadata=_cli(
        "--bins", "Histogram bins of the histogram-entropy spread column (a diagnosis).",
        kind="int"))
    weights: object = None
    probe: bool = field(default=True, metadata=_cli(
        "--no-probe", "Merit from robust spread and smoothness alone: skip the structure probe "
        "(graphs over a cover grid).", kind="flag", value=False))
    pairing: str = field(default="preservation", metadata=_cli(
        "--pairing", "preservation: the pair (set) that best keeps each row's data neighbours "
        "(R_NX) weighted by merit; greedy: merit x (1 - |rho|) one lens at a time.",
        kind="choice", choices=PAIRINGS))
    sample: object = field(default="auto", metadata=_cli(
        "--sample", "Rows the candidates are ranked on: auto = every row up to 50,000, else a "
        "seeded sample of 20,000; N rows; all. The chosen lenses are then computed on every "
        "row and checked against the sample run (Spearman rho).", metavar="N|auto|all"))
    random_state: object = None

    coerce_hint = " Lens specs go in lenses=[...] (e.g. screen(data, lenses=['pca']))."
    skip_none = False  # screen(..., sample=None) means every row, lenses=None the defaults

    def __post_init__(self):
        def put(name, value):
            object.__setattr__(self, name, value)

        if self.lenses is not None:
            put("lenses", _specs("lenses", self.lenses))
        put("extra", _specs("extra", self.extra))
        put("count", check_int("count", self.count, lo=1, context=_CONTEXT))
        put("ceiling", check_float("ceiling", self.ceiling, lo=0, hi=1, lo_open=True,
                                   context=_CONTEXT))
        put("references", _references(self.references))
        put("bins", check_int("bins", self.bins, lo=2, context=_CONTEXT))
        put("weights", _weights(self.weights))
        put("probe", check_bool("probe", self.probe, context=_CONTEXT))
        put("pairing", check_choice("pairing", self.pairing, PAIRINGS, context=_CONTEXT))
        put("sample", check_sample(self.sample))
        if self.random_state is not None:
            put("random_state", check_int("random_state", self.random_state, lo=0,
                                          context=_CONTEXT))

    # ---------------------------------------------------------------- records
    def record_value(self, name, value):
        """One setting as JSON (reference arrays by name, spec pairs as lists; see ``to_dict``)."""
        if name in ("lenses", "extra") and value is not None:
            return [v if isinstance(v, str) else [v[0], dict(v[1])] for v in value]
        if name == "references":
            return list(value)  # a dict of arrays: its names
        return dict(value) if isinstance(value, dict) else value

    @classmethod
    def from_dict(cls, doc):
        """Settings from :meth:`to_dict` output (unknown keys raise)."""
        doc = dict(doc)
        cls.check_names(doc)
        for key in ("lenses", "extra"):
            if doc.get(key) is not None:
                doc[key] = tuple(v if isinstance(v, str) else tuple(v) for v in doc[key])
        return cls(**doc)
