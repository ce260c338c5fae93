"""Validators name the parameter, say what is allowed and echo the value (STYLE.md §6)."""
import numpy as np
import pytest

from identify import ParameterTypeError, ParameterValueError
from identify._validate import (check_array_1d, check_choice, check_fraction, check_int,
                                check_positive)


def test_positive():
    assert check_positive("sample_time_s", 0.5) == 0.5
    with pytest.raises(ParameterValueError, match=r"sample_time_s must be a finite number > 0; got -1"):
        check_positive("sample_time_s", -1)
    with pytest.raises(ParameterTypeError, match="sample_time_s"):
        check_positive("sample_time_s", "fast")


def test_choice_is_case_insensitive_and_lists_options():
    assert check_choice("method", "AUTO", ("auto", "pencil")) == "auto"
    with pytest.raises(ParameterValueError, match=r"method must be one of 'auto', 'pencil'; got 'prony'"):
        check_choice("method", "prony", ("auto", "pencil"))


def test_int_and_fraction():
    assert check_int("modes", 3, minimum=1) == 3
    with pytest.raises(ParameterTypeError, match="modes"):
        check_int("modes", 2.5)
    with pytest.raises(ParameterValueError, match="modes must be >= 1; got 0"):
        check_int("modes", 0, minimum=1)
    with pytest.raises(ParameterValueError, match="holdout"):
        check_fraction("holdout", 1.2)


def test_array_checks():
    np.testing.assert_array_equal(check_array_1d("y", [1, 2, 3]), [1.0, 2.0, 3.0])
    with pytest.raises(ParameterValueError, match="y holds a non-finite value at index 1"):
        check_array_1d("y", [1, np.nan, 3])
    with pytest.raises(ParameterValueError, match="at least 4 samples; got 3"):
        check_array_1d("y", [1, 2, 3], min_length=4)


def test_all_finite_agrees_with_isfinite_including_overflowing_sums():
    # derived: the one-sum shortcut must never call a record with NaN or infinity finite,
    # and a finite record whose sum overflows is still finite
    import numpy as np

    from identify._validate import all_finite

    x = np.linspace(-1.0, 1.0, 1001)
    assert all_finite(x) and all_finite(np.array([]))
    for bad in (np.nan, np.inf, -np.inf):
        y = x.copy()
        y[500] = bad
        assert not all_finite(y)
    big = np.full(10, 1e308)
    assert all_finite(big) and not all_finite(np.append(big, np.inf))
    assert all_finite(np.array([1e308, -1e308, 1e308]))
