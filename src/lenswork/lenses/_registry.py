"""The lens registry: one mapping used to validate, dispatch, list and test lenses.

A lens family registers a *compute* function with :func:`register_lens`::

    @register_lens("dtm", summary="Distance to a measure", cost="O(n k) once the graph exists",
                   params=[Param("mass", 0.01, partial(check_float, lo=0, hi=1, lo_open=True),
                                 "share of the points in the local mean")])
    def _dtm_lens(ws, *, mass):
        return [LensPart(values, info={"k": k})]

``compute(ws, **params)`` receives a :class:`~lenswork.Workspace` and the
validated parameters, and returns a list of :class:`LensPart` (one per output
column). The registry turns them into named :class:`~lenswork.LensColumn`
objects with their parameters recorded. Column names are the lens name, then
``_<part>`` for multi-column lenses, then ``[key=value;...]`` for every
parameter that differs from its default: ``pca_2``, ``dtm[mass=0.05]``. A
compute function that used other values than asked (``dtm`` capped by the
shared graph) returns them in ``info["params_used"]``: the column is named and
its parameters recorded by what was computed, the values asked for stay in the
info.
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, NamedTuple

import numpy as np

from .._errors import LensworkError, ParameterError, warn_caller
from .._json import plain
from ._table import LensColumn

__all__ = [
    "ENTRY_POINT_GROUP",
    "LensPart",
    "LensSpec",
    "Param",
    "REGISTRY",
    "get_lens",
    "lens_names",
    "lens_request",
    "parse_lens",
    "register_lens",
]


@dataclass(frozen=True)
class Param:
    """One lens parameter: name, default, checker ``check(name, value, *, context)``, doc.

    ``tag=False`` keeps the parameter out of the column name (for a parameter
    the compute function already puts into the part label). ``type`` is the
    numpydoc type of the docstring entry (``"int >= 1"``), ``more`` further
    docstring lines, and ``lens=False`` keeps a parameter of the function and
    the transformer out of the registry and the CLI (``random_state``: the
    workspace gives it); see :class:`~lenswork.lenses._declare.LensDecl`.
    """

    name: str
    default: Any
    check: Callable
    doc: str
    tag: bool = True
    type: str = ""
    more: str = ""
    lens: bool = True

    def clean(self, value, context):
        return self.check(self.name, value, context=context)


class LensPart(NamedTuple):
    """One output column of a compute function: values, part label, extra info."""

    values: np.ndarray
    part: str = ""
    info: dict = {}


@dataclass(frozen=True)
class LensSpec:
    """A registered lens: name, one-line summary, cost, parameters and compute function."""

    name: str
    summary: str
    cost: str
    params: tuple
    compute: Callable
    family: str = ""
    source: str = "builtin"
    _by_name: dict = field(default=None, repr=False, compare=False)

    def defaults(self):
        """The default parameter values, as a dict."""
        return {p.name: p.default for p in self.params}

    def resolve(self, given=None):
        """Validate ``given`` (values may be strings from the CLI) and fill defaults."""
        given = dict(given or {})
        known = {p.name: p for p in self.params}
        unknown = sorted(set(given) - set(known))
        if unknown:
            valid = ", ".join(sorted(known)) or "none"
            raise ParameterError(
                f"Lens {self.name!r} has no parameter {unknown[0]!r}. Its parameters are: {valid}."
            )
        out = {}
        for p in self.params:
            out[p.name] = p.clean(given[p.name], self.name) if p.name in given else p.default
        return out

    def column_name(self, params, part=""):
        """The column name for these resolved parameters and part label."""
        name = self.name + (f"_{part}" if part else "")
        tags = [
            f"{p.name}={_fmt(params[p.name])}"
            for p in self.params
            if p.tag and params[p.name] != p.default
        ]
        return name + (f"[{';'.join(tags)}]" if tags else "")

    def __call__(self, ws, **params):
        """Compute the lens on a workspace; returns a list of LensColumn."""
        resolved = self.resolve(params)
        parts = self.compute(ws, **resolved)
        columns = []
        for part in parts:
            values = np.asarray(part.values, dtype=np.float64)
            if values.shape != (ws.n,):
                raise LensworkError(
                    f"Lens {self.name!r} returned values of shape {values.shape}; "
                    f"expected ({ws.n},). This is a bug in the lens."
                )
            if self.family not in ROW_FAMILIES:
                values, part = _one_value_per_point(ws, values, part)
            info = dict(part.info)
            # a lens that computed with other values than asked (a capped dtm mass) says so in
            # info["params_used"]: the column is named and recorded by what was computed
            used = dict(resolved, **info.pop("params_used", {}))
            columns.append(
                LensColumn(
                    name=self.column_name(used, part.part),
                    values=values,
                    lens=self.name,
                    params=plain(used),
                    info=plain(info),
                )
            )
        return columns


#: Families whose values are not a function of the row's coordinates (a data column, a
#: user's function): exact duplicate rows may hold different values there.
ROW_FAMILIES = ("column", "user")


def _one_value_per_point(ws, values, part):
    """Give the rows of one distinct point one value: their mean (a lens is a function of
    the point). A graph-based lens can differ slightly between copies (each copy lists
    the neighbouring points through different rows); other lenses are left unchanged."""
    dup = ws.duplicates
    if not dup.n_duplicate_rows or np.array_equal(values, values[dup.first][dup.inverse]):
        return values, part
    with np.errstate(invalid="ignore"):
        mean = np.bincount(dup.inverse, weights=values, minlength=dup.n_points) / dup.counts
    info = dict(part.info, duplicates="values averaged over the rows of each distinct point")
    return mean[dup.inverse], LensPart(part.values, part.part, info)


def _fmt(value):
    if isinstance(value, bool):
        return str(value).lower()
    if isinstance(value, float):
        return f"{value:g}"
    return str(value)


#: name -> LensSpec. The one table of lenses.
REGISTRY: dict = {}
_ENTRY_POINTS_LOADED = False
ENTRY_POINT_GROUP = "lenswork.lenses"


def register_lens(name, *, summary, cost, params=(), family=None, source="builtin", replace=False):
    """Decorator: register ``compute(ws, **params) -> list[LensPart]`` under ``name``.

    Parameters
    ----------
    name : str
        Registry key: a letter, then letters, digits or ``_``.
    summary, cost : str
        One line each, shown by ``lenswork lenses``.
    params : sequence of Param
    family : str, optional
    source : str, default="builtin"
    replace : bool, default=False
        Allow overwriting an existing entry.

    Examples
    --------
    >>> from functools import partial
    >>> from lenswork._validation import check_float
    >>> @register_lens("shifted_first", summary="first column plus c", cost="O(n)",
    ...                params=[Param("c", 0.0, partial(check_float), "shift")])
    ... def _shifted(ws, *, c):
    ...     return [LensPart(ws.X[:, 0] + c)]
    >>> from lenswork import Workspace
    >>> [col.name for col in get_lens("shifted_first")(Workspace(np.eye(3)), c="1")]
    ['shifted_first[c=1]']
    >>> _ = REGISTRY.pop("shifted_first")
    """
    if not name or not name.replace("_", "").isalnum() or not name[0].isalpha():
        raise ParameterError(
            f"A lens name must start with a letter and hold only letters, digits and '_'. "
            f"Got {name!r}."
        )

    def decorator(compute):
        if name in REGISTRY and not replace:
            raise ParameterError(
                f"A lens named {name!r} is already registered ({REGISTRY[name].source}). "
                f"Choose another name or pass replace=True."
            )
        REGISTRY[name] = LensSpec(
            name=name, summary=summary, cost=cost, params=tuple(params), compute=compute,
            family=family or name, source=source,
        )
        return compute

    return decorator


def _load_entry_points():
    """Import lenses that installed packages declare in the ``lenswork.lenses`` group."""
    global _ENTRY_POINTS_LOADED
    if _ENTRY_POINTS_LOADED:
        return
    _ENTRY_POINTS_LOADED = True
    from importlib.metadata import entry_points

    for ep in entry_points(group=ENTRY_POINT_GROUP):
        try:
            ep.load()  # importing the module runs its @register_lens / @user_lens decorators
        except Exception as err:  # a broken plug-in must not break the library
            warn_caller(
                f"Could not load lens plug-in {ep.name!r} ({ep.value}): {err}"
            )


def lens_names():
    """Sorted names of every registered lens (built-in and plug-in).

    Examples
    --------
    >>> "pca" in lens_names()
    True
    """
    _load_entry_points()
    return sorted(REGISTRY)


def get_lens(name):
    """The LensSpec registered under ``name``; the error lists the valid names.

    Examples
    --------
    >>> spec = get_lens("dtm")
    >>> spec.name, [p.name for p in spec.params]
    ('dtm', ['mass'])
    """
    _load_entry_points()
    try:
        return REGISTRY[name]
    except KeyError:
        close = difflib.get_close_matches(str(name), list(REGISTRY), n=1, cutoff=0.6) or [
            n for n in REGISTRY if n.lower() == str(name).strip().lower()
        ][:1]
        hint = f" Did you mean {close[0]!r}?" if close else ""
        raise ParameterError(
            f"Unknown lens {_shown(str(name))}.{hint} Registered lenses: "
            f"{', '.join(sorted(REGISTRY))}; "
            f"a column name of theirs (pca_2, laplacian_1, eccentricity[p=1]) works too."
        ) from None


def parse_lens(text):
    """Parse the CLI lens syntax ``name`` or ``name:key=value,key=value``.

    Examples
    --------
    >>> parse_lens("density:bandwidth=0.5,log=false")
    ('density', {'bandwidth': '0.5', 'log': 'false'})
    >>> parse_lens("pca")
    ('pca', {})
    """
    text = text.strip()
    if len(text) > _LONGEST_SPEC:
        raise ParameterError(
            f"The lens spec {_shown(text)} has {len(text):,} characters; a lens spec is a name "
            f"and a few key=value pairs (at most {_LONGEST_SPEC}). `lenswork lenses` lists them."
        )
    name, _, rest = text.partition(":")
    name = name.strip()
    params = {}
    if rest.strip():
        for item in rest.split(","):
            key, eq, value = item.partition("=")
            if not eq or not key.strip():
                raise ParameterError(
                    f"Cannot read lens parameter {item!r} in {text!r}: expected key=value, "
                    f"as in 'density:bandwidth=0.5,log=false'."
                )
            if key.strip() in params:
                raise ParameterError(
                    f"The lens parameter {key.strip()!r} is given twice in {text!r}; give it "
                    f"once (a second lens is a second --lens)."
                )
            params[key.strip()] = value.strip()
    if not name:
        raise ParameterError(f"No lens name in {text!r}; expected e.g. 'pca:components=2'.")
    return name, params


#: Longest lens spec read (a name and its parameters; longer text is not a lens spec).
_LONGEST_SPEC = 500


def _shown(text, width=60):
    """``text`` quoted for a message, cut to ``width`` characters."""
    return repr(text) if len(text) <= width else repr(text[:width]) + "..."


#: A lens column name as the registry writes it: name, optional ``_<part>``, optional ``[tags]``.
_COLUMN_NAME = re.compile(r"^(?P<base>[A-Za-z]\w*?)(?:_(?P<part>\d+))?(?:\[(?P<tags>[^\]]*)\])?$")


def lens_request(text):
    """``(name, params, column)`` for a lens spec or a lens column name.

    A spec (``"pca:components=2"``, ``"dtm"``) gives ``column=None``: every
    column of the lens. A column name as the registry writes it, and as the
    screen's ranking and lens files list it, is read back into its lens:
    ``"pca_2"`` is the second column of ``pca`` (computed with
    ``components=2``), ``"laplacian_1[k=10]"`` the first of ``laplacian:k=10``,
    ``"eccentricity[p=1]"`` the lens ``eccentricity:p=1``, ``"column_flow"``
    the lens ``column:name=flow``; ``column`` is then the name of the one
    column wanted.

    Examples
    --------
    >>> lens_request("pca:components=3")
    ('pca', {'components': '3'}, None)
    >>> lens_request("pca_2")
    ('pca', {'components': '2'}, 'pca_2')
    >>> lens_request("eccentricity[p=1]")
    ('eccentricity', {'p': '1'}, 'eccentricity[p=1]')
    >>> lens_request("column_flow")
    ('column', {'name': 'flow'}, 'column_flow')
    """
    name, params = parse_lens(text)
    _load_entry_points()
    if name in REGISTRY or params:
        return name, params, None
    for spec in REGISTRY.values():  # a lens whose part is a parameter: column_flow
        named = [p.name for p in spec.params if not p.tag and p.name != "components"]
        if named and name.startswith(spec.name + "_") and len(name) > len(spec.name) + 1:
            return spec.name, {named[0]: name[len(spec.name) + 1:]}, name
    match = _COLUMN_NAME.match(name)
    if match is None or match["base"] not in REGISTRY:
        return name, params, None  # get_lens names the error (with a close match)
    spec = REGISTRY[match["base"]]
    given = {}
    for item in (match["tags"] or "").split(";"):
        key, eq, value = item.partition("=")
        if eq and key.strip():
            given[key.strip()] = value.strip()
        elif item.strip():
            raise ParameterError(
                f"Cannot read the lens column name {text!r}: {item!r} is not key=value "
                f"(column names read as name_<part>[key=value;...], e.g. 'laplacian_1[k=10]')."
            )
    part = match["part"]
    if part is not None:
        if "components" not in {p.name for p in spec.params}:
            raise ParameterError(
                f"Lens {spec.name!r} has one column, so {name!r} names no column of it; give "
                f"{spec.name!r}."
            )
        if int(part) < 1:
            raise ParameterError(f"Lens columns count from 1: {name!r} names no column.")
        given["components"] = part
    return spec.name, given, name.strip()
