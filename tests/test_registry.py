"""The registry's shared behaviour: lookup, parameter parsing and validation."""

from functools import partial

import numpy as np
import pytest

from lenswork import ParameterError, Workspace, get_lens, parse_lens
from lenswork._validation import check_float, check_int
from lenswork.lenses._registry import REGISTRY, LensPart, Param, register_lens


def test_unknown_lens_lists_valid_names():
    with pytest.raises(ParameterError, match=r"Unknown lens 'densty'. Did you mean 'density'\? "
                       r"Registered lenses: .*column"):
        get_lens("densty")


@pytest.mark.parametrize(
    ("text", "match"),
    [("pca:components", "expected key=value"), (":k=3", "No lens name"), ("dtm:=2", "key=value")],
)
def test_parse_errors(text, match):
    with pytest.raises(ParameterError, match=match):
        parse_lens(text)


def test_column_names_and_parameter_checks():
    @register_lens("tscaled", summary="test", cost="O(n)", params=[
        Param("factor", 1.0, partial(check_float, lo=0, lo_open=True), "multiplier"),
        Param("reps", 1, partial(check_int, lo=1), "columns"),
    ])
    def _scaled(ws, *, factor, reps):
        return [LensPart(ws.X[:, 0] * factor, str(i + 1) if reps > 1 else "") for i in range(reps)]

    try:
        ws = Workspace(np.arange(10.0)[:, None])
        spec = get_lens("tscaled")
        assert [c.name for c in spec(ws)] == ["tscaled"]
        cols = spec(ws, factor="2.5", reps="2")  # strings, as the CLI passes them
        assert [c.name for c in cols] == ["tscaled_1[factor=2.5;reps=2]",
                                          "tscaled_2[factor=2.5;reps=2]"]
        assert cols[0].params == {"factor": 2.5, "reps": 2}
        with pytest.raises(ParameterError, match="'factor' parameter of tscaled must be"):
            spec(ws, factor=-1)
        with pytest.raises(ParameterError, match="has no parameter 'scale'. Its parameters are"):
            spec(ws, scale=2)
        with pytest.raises(ParameterError, match="already registered"):
            register_lens("tscaled", summary="", cost="")(_scaled)
    finally:
        REGISTRY.pop("tscaled", None)
