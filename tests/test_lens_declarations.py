"""One declaration per lens: the function, the transformer, the registry and the docs agree.

For every built-in lens, the defaults of the plain function's signature, of the
transformer's ``get_params()``, of the registry's ``Param`` list and of the
``Parameters`` sections of both docstrings are compared with each other, so a
default changed in one place and not another fails here. The reference for the
docstring form is the numpydoc standard ("name : type, default=value").
"""

import ast
import inspect
import re

import numpy as np
import pytest

from lenswork import ParameterError, Workspace
from lenswork._validation import check_int
from lenswork.lenses import (
    DistanceToMeasure,
    Eccentricity,
    GaussianDensity,
    KNNDistance,
    LaplacianLens,
    Param,
    PCALens,
    compute_lenses,
    data_column,
    distance_to_measure,
    eccentricity,
    gaussian_density,
    geodesic_eccentricity,
    get_lens,
    knn_distance,
    laplacian_eigenmaps,
    lens_names,
    pca_coordinates,
)
from lenswork.lenses._declare import LensDecl
from lenswork.lenses._registry import REGISTRY

#: Every built-in lens: its plain function and its transformer (None: it has none).
API = {
    "column": (data_column, None),
    "density": (gaussian_density, GaussianDensity),
    "dtm": (distance_to_measure, DistanceToMeasure),
    "eccentricity": (eccentricity, Eccentricity),
    "geodesic_eccentricity": (geodesic_eccentricity, None),
    "knn_distance": (knn_distance, KNNDistance),
    "laplacian": (laplacian_eigenmaps, LaplacianLens),
    "pca": (pca_coordinates, PCALens),
}
_SECTION = re.compile(r"\n\s*Parameters\n\s*-+\n(?P<body>.*?)(?:\n\s*\n\s*[A-Z][a-z ]+\n\s*-+\n|$)",
                      re.S)
_ENTRY = re.compile(r"^ {4,8}(?P<name>\w+) : (?P<type>.*?)(?:, default=(?P<default>.*))?$")


def _doc_defaults(doc):
    """``{name: default}`` of a numpydoc Parameters section (``...``: none given)."""
    body = _SECTION.search(doc)["body"]
    out = {}
    for line in body.splitlines():
        m = _ENTRY.match(line)
        if m and not line.startswith(" " * 9):
            if m["default"]:
                out[m["name"]] = ast.literal_eval(m["default"])
            else:  # numpydoc: "optional" without a default means None
                out[m["name"]] = None if m["type"].endswith("optional") else ...
    return out


def _signature_defaults(fn):
    return {
        p.name: p.default for p in inspect.signature(fn).parameters.values()
        if p.default is not inspect.Parameter.empty
    }


def _disagreements(name, fn, est):
    """Every place where a default of lens ``name`` differs between its declarations."""
    spec = get_lens(name)
    found = []
    sig = _signature_defaults(fn)
    doc = _doc_defaults(fn.__doc__)
    for p in spec.params:
        if sig.get(p.name, ...) != p.default:
            found.append(f"{fn.__name__} signature {p.name}={sig.get(p.name, '<none>')!r} "
                         f"vs registry {p.default!r}")
    for key, value in sig.items():
        if doc.get(key, ...) != value and key in doc:
            found.append(f"{fn.__name__} docstring {key}={doc[key]!r} vs signature {value!r}")
        if key not in doc:
            found.append(f"{fn.__name__} docstring does not list {key!r}")
    if est is not None:
        params = est().get_params()
        est_doc = _doc_defaults(est.__doc__)
        for key, value in params.items():
            if key in sig and sig[key] != value:
                found.append(f"{est.__name__} {key}={value!r} vs {fn.__name__} {sig[key]!r}")
            if est_doc.get(key, ...) != value:
                found.append(f"{est.__name__} docstring {key}={est_doc.get(key, '<none>')!r} "
                             f"vs get_params {value!r}")
        for p in spec.params:
            if p.name in params and params[p.name] != p.default:
                found.append(f"{est.__name__} {p.name}={params[p.name]!r} vs registry "
                             f"{p.default!r}")
    return found


def test_every_builtin_lens_is_listed():
    builtin = {n for n in lens_names() if REGISTRY[n].source == "builtin"}
    assert builtin == set(API)


@pytest.mark.parametrize("name", sorted(API))
def test_defaults_agree_everywhere(name):
    fn, est = API[name]
    assert _disagreements(name, fn, est) == []


def test_a_drifted_default_is_caught():
    """The comparison above can fail: a function whose docstring and signature disagree."""

    def drifted(X, *, k=10, random_state=0):
        """Toy.

        Parameters
        ----------
        X : array
        k : int, default=12
        random_state : int, default=0
        """

    assert _disagreements("knn_distance", drifted, None) == [
        "drifted docstring k=12 vs signature 10"
    ]

    class Drifted(KNNDistance):
        __doc__ = KNNDistance.__doc__

        def __init__(self, *, k=11, random_state=0):
            self.k, self.random_state = k, random_state

    problems = _disagreements("knn_distance", knn_distance, Drifted)
    assert "Drifted k=11 vs knn_distance 10" in problems
    assert "Drifted k=11 vs registry 10" in problems


def test_one_declaration_makes_function_transformer_and_entry():
    """A toy lens declared once: its function, transformer and registry entry follow."""
    from sklearn.base import BaseEstimator

    decl = LensDecl("toy_shift", "first column plus c", "O(n)", (
        Param("c", 3, check_int_lo0, "shift", type="int >= 0"),
    ))

    @decl.function
    def shifted(X, *, c):
        """Shift.

        Parameters
        ----------
        X : array
        {lens_params}
        """
        return np.asarray(X)[:, 0] + c

    @decl.estimator
    class Shift(BaseEstimator):
        """Shift.

        Parameters
        ----------
        {lens_params}
        """

    @decl.register
    def _toy(ws, *, c):
        from lenswork.lenses import LensPart
        return [LensPart(shifted(ws.X, c=c))]

    try:
        assert _signature_defaults(shifted) == {"c": 3}
        assert Shift().get_params() == {"c": 3} and Shift(c=5).set_params(c=1).c == 1
        assert _doc_defaults(shifted.__doc__) == {"X": ..., "c": 3}
        assert _doc_defaults(Shift.__doc__) == {"c": 3}
        assert [p.name for p in get_lens("toy_shift").params] == ["c"]
        with pytest.raises(ParameterError, match="'c' parameter of shifted"):
            shifted(np.eye(2), c=-1)
        with pytest.raises(TypeError, match="unexpected keyword argument 'd'"):
            Shift(d=1)
        ws = Workspace(np.eye(3))
        assert compute_lenses(ws, ["toy_shift:c=1"]).names == ["toy_shift[c=1]"]
    finally:
        REGISTRY.pop("toy_shift", None)


def check_int_lo0(name, value, *, context=""):
    return check_int(name, value, lo=0, context=context)


def test_laplacian_solver_settings_reach_the_cli():
    """tol and max_iter, once hidden from the registry, are lens parameters now."""
    rng = np.random.default_rng(0)
    ws = Workspace(rng.normal(size=(120, 3)))
    table = compute_lenses(ws, ["laplacian:components=1,tol=1e-4,max_iter=300"])
    assert table.names == ["laplacian_1[tol=0.0001;max_iter=300]"]
    default = compute_lenses(ws, ["laplacian:components=1"])
    assert default.names == ["laplacian_1"]
    with pytest.raises(ParameterError, match="'tol' parameter of laplacian"):
        compute_lenses(ws, ["laplacian:tol=2"])


def test_lenses_command_shows_declared_types():
    from click.testing import CliRunner

    from lenswork.cli import cli

    out = CliRunner().invoke(cli, ["lenses", "--name", "laplacian"]).output
    assert "tol=0.001, max_iter=200" in out
    assert "- tol (float in (0, 1)): stop when each residual" in out
