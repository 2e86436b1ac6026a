"""One declaration per lens: parameters, types, ranges, defaults, cost and docs in one place.

A lens family writes one :class:`LensDecl`; everything else follows from it:

* ``@DECL.function`` on the lens function gives it its parameter defaults (the
  ``def`` lists the names without defaults), checks every declared parameter
  before the body runs, and fills the ``{lens_params}`` line of its docstring
  with the numpydoc ``Parameters`` entries;
* ``@DECL.estimator`` on the scikit-learn transformer writes its ``__init__``
  (keyword-only, one attribute per declared parameter, nothing else, as
  scikit-learn's ``get_params`` / ``set_params`` and its estimator checks want)
  and fills the class docstring the same way; ``fit`` calls
  ``DECL.check(self.get_params(), context)``;
* ``DECL.register(compute)`` puts the lens in the registry with the declared
  parameters (those with ``lens=True``: ``random_state`` comes from the
  workspace), so ``lenswork lenses`` lists them and the CLI syntax
  ``name:key=value`` parses and checks them.

Adding a lens touches one declaration; DEVELOPERS.md ("Adding a lens") shows it.
"""

from __future__ import annotations

import functools
import inspect
import textwrap
from dataclasses import dataclass

from ._registry import register_lens

__all__ = ["LensDecl", "keep"]

#: The line of a docstring that the declared parameters replace.
PLACEHOLDER = "{lens_params}"


def keep(name, value, *, context=""):
    """Checker that keeps the value as given (``random_state``: checked where it is used)."""
    return value


@dataclass(frozen=True)
class LensDecl:
    """A lens declared once: registry name, summary, cost, family and parameters.

    Parameters
    ----------
    name : str
        Registry key (``lenswork lenses`` lists it).
    summary, cost : str
        One line each.
    params : tuple of Param
        In the order of the function's and the transformer's parameters.
    family : str, optional
        Registry family (default: ``name``).

    Examples
    --------
    >>> from functools import partial
    >>> from lenswork._validation import check_float
    >>> from lenswork.lenses import Param
    >>> decl = LensDecl("shift", "first column plus c", "O(n)",
    ...                 (Param("c", 0.0, partial(check_float), "shift", type="float"),))
    >>> @decl.function
    ... def shifted(X, *, c):
    ...     '''X[:, 0] + c.
    ...
    ...     Parameters
    ...     ----------
    ...     {lens_params}
    ...     '''
    ...     return X[:, 0] + c
    >>> import numpy as np
    >>> shifted(np.eye(2), c="1").tolist(), str(inspect.signature(shifted))
    ([2.0, 1.0], '(X, *, c=0.0)')
    """

    name: str
    summary: str
    cost: str
    params: tuple
    family: str = ""

    def defaults(self):
        """Every declared default, as a dict (function and transformer parameters)."""
        return {p.name: p.default for p in self.params}

    def check(self, values, context):
        """``values`` (a dict with every declared name) checked and converted, in order."""
        return {p.name: p.clean(values[p.name], context) for p in self.params}

    def doc_params(self, indent):
        """The numpydoc ``Parameters`` entries of the declared parameters."""
        pad = " " * indent
        lines = []
        for p in self.params:
            lines.append(f"{pad}{p.name} : {p.type}, default={p.default!r}")
            text = p.doc[:1].upper() + p.doc[1:].rstrip(".") + "."
            lines.extend(textwrap.wrap(text, 88 - indent, initial_indent=pad + "    ",
                                       subsequent_indent=pad + "    "))
            if p.more:
                lines.extend(f"{pad}    {line}" if line else "" for line in p.more.splitlines())
        return "\n".join(lines).lstrip()

    def _fill_doc(self, doc):
        if not doc or PLACEHOLDER not in doc:
            raise TypeError(f"The docstring of a {self.name!r} lens needs a {PLACEHOLDER} line.")
        line = next(li for li in doc.splitlines() if PLACEHOLDER in li)
        return doc.replace(PLACEHOLDER, self.doc_params(len(line) - len(line.lstrip())))

    def function(self, fn):
        """Decorator: defaults, checks and docstring of a lens function from the declaration.

        The function names every declared parameter without a default; its other
        parameters (``X``, ``return_info``) keep their own. The declared ones are
        checked (context: the function's name) before the body runs.
        """
        sig = inspect.signature(fn)
        declared = self.defaults()
        missing = set(declared) - set(sig.parameters)
        if missing:
            raise TypeError(f"{fn.__name__} does not take the declared {sorted(missing)}.")
        sig = sig.replace(parameters=[
            q.replace(default=declared[q.name]) if q.name in declared else q
            for q in sig.parameters.values()
        ])

        @functools.wraps(fn)
        def wrapper(*args, **kwargs):
            bound = sig.bind(*args, **kwargs)
            bound.apply_defaults()
            bound.arguments.update(self.check(bound.arguments, fn.__name__))
            return fn(*bound.args, **bound.kwargs)

        wrapper.__signature__ = sig
        wrapper.__doc__ = self._fill_doc(fn.__doc__)
        return wrapper

    def estimator(self, cls):
        """Class decorator: the transformer's ``__init__`` and docstring from the declaration."""
        params = self.params

        def __init__(self, **kwargs):
            unknown = sorted(set(kwargs) - {p.name for p in params})
            if unknown:
                raise TypeError(
                    f"{type(self).__name__}() got an unexpected keyword argument {unknown[0]!r}"
                )
            for p in params:
                setattr(self, p.name, kwargs.get(p.name, p.default))

        __init__.__signature__ = inspect.Signature(
            [inspect.Parameter("self", inspect.Parameter.POSITIONAL_OR_KEYWORD)]
            + [inspect.Parameter(p.name, inspect.Parameter.KEYWORD_ONLY, default=p.default)
               for p in params]
        )
        __init__.__qualname__ = f"{cls.__qualname__}.__init__"
        __init__.__doc__ = f"Parameters as declared by the {self.name!r} lens."
        cls.__init__ = __init__
        cls.__doc__ = self._fill_doc(cls.__doc__)
        return cls

    def register(self, compute):
        """Decorator: register ``compute(ws, **lens_params)`` with the declared lens parameters."""
        return register_lens(
            self.name, summary=self.summary, cost=self.cost, family=self.family or self.name,
            params=[p for p in self.params if p.lens],
        )(compute)
