"""check_array / check_finite: the one reading of data arrays, checked against numpy itself."""

import math

import numpy as np
import pytest
from numpy.testing import assert_array_equal

from lenswork import InputError, ParameterError
from lenswork._validation import check_array, check_finite, check_float, check_float_or_choice


def test_values_and_layout_match_numpy():
    rng = np.random.default_rng(71)
    X = rng.normal(size=(6, 3))
    # no copy for an array that already is C-contiguous float64 (numpy's own no-copy rule)
    assert check_array(X, "f") is X
    F = np.asfortranarray(X.astype(np.float32))
    got = check_array(F, "f")
    assert got.flags.c_contiguous and got.dtype == np.float64
    assert_array_equal(got, np.asarray(F, dtype=np.float64))  # numpy's float32 -> float64 cast
    assert_array_equal(check_array([1, 2, 3], "f"), np.array([[1.0], [2.0], [3.0]]))
    assert_array_equal(check_array(np.array([True, False]), "f"), [[1.0], [0.0]])
    # a finite array whose sum overflows is still finite (the fast path falls through)
    big = np.array([[1e308], [1e308]])
    assert_array_equal(check_array(big, "f"), big)


@pytest.mark.parametrize(
    ("X", "kwargs", "match"),
    [
        (np.array([1 + 2j]), {}, "The data given to f holds complex128 values; expected real"),
        (np.array(["2020-01-01"], dtype="M8[D]"), {}, r"holds datetime64\[D\] values"),
        (np.array([True]), {"allow_bool": False}, "holds bool values"),
        (np.array([["a", "b"]]), {}, "must be numeric .* could not be read as numbers"),
        (np.array([10**400], dtype=object), {}, "could not be read as numbers"),
        ([[1.0, 2.0], [3.0]], {}, "could not be read as numbers"),  # ragged rows
        (np.zeros((2, 2, 2)), {}, r"got 3 dimensions \(shape \(2, 2, 2\)\)"),
        (np.zeros((0, 3)), {}, r"is empty \(shape \(0, 3\)\)"),
        (np.zeros((3, 0)), {}, r"is empty \(shape \(3, 0\)\)"),
        (np.zeros((1, 2)), {"min_rows": 2}, "has 1 row; f needs at least 2 rows. Use more rows."),
        (np.array([[0.0, 1.0], [2.0, -np.inf]]), {},
         r"non-finite value \(-inf\) in row 2, column 2; expected finite values\. Remove or "
         r"impute"),
        (np.array([[0.0, np.nan]]), {"names": ["a", "b"], "label": "the table", "advice": "Fix."},
         r"^The table has a non-finite value \(nan\) in row 1, column 2 \('b'\); expected finite "
         r"values\. Fix\.$"),
    ],
)
def test_bad_arrays_raise_clear_input_errors(X, kwargs, match):
    with pytest.raises(InputError, match=match):
        check_array(X, "f", **kwargs)


def test_first_bad_entry_is_named_in_row_major_order():
    X = np.zeros((5, 4))
    X[3, 1] = np.nan
    X[2, 3] = np.inf  # earlier row: the one reported (np.argwhere order)
    with pytest.raises(InputError, match=r"\(inf\) in row 3, column 4"):
        check_finite(X, "f")
    check_finite(X[:2], "f")  # finite rows pass
    assert check_array(X, "f", finite=False).shape == (5, 4)


@pytest.mark.parametrize("value", [float("inf"), "inf", -math.inf])
def test_check_float_refuses_infinity(value):
    # check_float promises a finite float (its docstring); an unbounded side of the
    # interval does not admit infinity itself (common practice: [0, inf) excludes inf).
    with pytest.raises(ParameterError, match="must be a float in"):
        check_float("width", value, lo=0, context="a test")


def test_float_or_choice_maps_infinity_to_its_text_choice():
    # Eccentricity's p accepts 'inf'; the float infinity means the same choice.
    assert check_float_or_choice("p", math.inf, ("inf",), lo=1.0, lo_open=False) == "inf"
    with pytest.raises(ParameterError, match="'bandwidth'"):
        check_float_or_choice("bandwidth", math.inf, ("scott",), lo=0.0)
