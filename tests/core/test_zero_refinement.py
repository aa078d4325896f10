"""Roots of point functions on many segments at once: interpolation steps confirmed by a bracket, and the
bracketed search where they cannot be confirmed."""

import numpy as np
import pytest

from core.analysis.zero_refinement import roots_on_segments


class Counted:
    """A point function that counts its calls and points."""

    def __init__(self, function):
        self.function, self.calls, self.points = function, 0, 0

    def __call__(self, x, y):
        self.calls += 1
        self.points += np.size(x)
        return self.function(x, y)


def horizontal_segments(y, x0=0.0, x1=3.0):
    start = np.column_stack([np.broadcast_to(x0, y.shape), y])
    end = np.column_stack([np.broadcast_to(x1, y.shape), y])
    return start, end


def test_smooth_roots_on_short_segments_take_three_evaluations_and_meet_the_tolerance():
    # exp(x) = 1 + y at x = log(1 + y) (algebra): segments one grid spacing long (as a type map's edges)
    # around the roots of a smooth function; each root to within xtol, after three evaluations.
    y = np.linspace(0.5, 15.0, 400)
    root = np.log1p(y)
    offset = np.linspace(0.05, 0.95, y.size) * 0.01
    start, end = horizontal_segments(y, root - offset, root - offset + 0.01)
    function = Counted(lambda x, y: np.exp(x) - (1 + y))
    roots, found = roots_on_segments(function, start, end, xtol=1e-13)
    assert found.all()
    np.testing.assert_allclose(roots[:, 0], root, rtol=0, atol=1e-13)
    np.testing.assert_array_equal(roots[:, 1], y)
    assert function.calls == 2 + 3            # the ends, two interpolation steps, one confirming pair
    assert function.points == 2 * y.size + 4 * y.size


def test_long_segments_still_meet_the_tolerance():
    # The same roots on segments [0, 3]: the interpolation takes longer to settle, the result is as exact.
    y = np.linspace(0.5, 15.0, 400)
    start, end = horizontal_segments(y)
    function = Counted(lambda x, y: np.exp(x) - (1 + y))
    roots, found = roots_on_segments(function, start, end, xtol=1e-13)
    assert found.all()
    np.testing.assert_allclose(roots[:, 0], np.log1p(y), rtol=0, atol=1e-13)


@pytest.mark.parametrize(("name", "function"), [
    ("infinite slope", lambda x, y: np.cbrt(x - y)),
    ("jump", lambda x, y: np.sign(x - y) * (1 + x)),
    ("flat", lambda x, y: (x - y) ** 9),
])
def test_roots_the_interpolation_cannot_confirm_are_bracketed_all_the_same(name, function):
    # Each function changes sign exactly at x = y (by construction); the bracket must close on it.
    y = np.linspace(0.1, 2.9, 57)
    start, end = horizontal_segments(y)
    roots, found = roots_on_segments(function, start, end, xtol=1e-12)
    assert found.all(), name
    assert np.abs(roots[:, 0] - y).max() <= 1e-12, name


def test_a_search_that_meets_an_undefined_value_finds_nothing():
    # f = x^2 - 0.1 on [0, 1], undefined on |x - 0.1| < 0.02: regula falsi's first point (0.1) is undefined
    def function(x, y):
        value = x * x - 0.1
        value[np.abs(x - 0.1) < 0.02] = np.nan
        return value

    _, found = roots_on_segments(function, [[0.0, 0.0]], [[1.0, 0.0]], xtol=1e-13)
    assert not found[0]


def test_a_linear_function_is_hit_exactly():
    # f = x - 0.25 on [0, 1]: regula falsi lands on 0.25, where f is exactly 0
    function = Counted(lambda x, y: x - 0.25)
    roots, found = roots_on_segments(function, [[0.0, 0.0]], [[1.0, 0.0]], xtol=1e-13)
    assert found[0] and roots[0, 0] == 0.25
