"""Outward rounding and corner reuse in certification give the very bits of the plain computations."""

from __future__ import annotations

import numpy as np
import pytest

from core.analysis.classify import classify_points
from core.certify.discriminant_bounds import DiscriminantEncloser
from core.certify.intervals import _step, down, up
from core.certify.refinement import _boxes, _child_corners
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation

_TINY = 5e-324
_LARGEST = np.finfo(np.float64).max
_SPECIAL = np.array([0.0, -0.0, _TINY, -_TINY, 2.2250738585072014e-308, -2.2250738585072014e-308, 1.0, -1.0,
                     _LARGEST, -_LARGEST, np.inf, -np.inf, np.nan, 1e300, -1e-300])


def _values() -> np.ndarray:
    rng = np.random.default_rng(7)
    mixed = np.concatenate([rng.standard_normal(500), rng.standard_normal(200) * 1e-310,
                            rng.standard_normal(200) * 1e305, _SPECIAL])
    return rng.permutation(mixed)


def _same_bits(left: np.ndarray, right: np.ndarray) -> bool:
    return np.array_equal(np.asarray(left).view(np.int64), np.asarray(right).view(np.int64))


@pytest.mark.parametrize("toward", [np.inf, -np.inf])
def test_step_is_nextafter_to_the_bit(toward):
    # reference: numpy's nextafter (IEEE 754 nextUp / nextDown)
    values = _values()
    with np.errstate(over="ignore"):
        assert _same_bits(_step(values, toward), np.nextafter(values, toward))
        assert _same_bits(_step(_SPECIAL, toward), np.nextafter(_SPECIAL, toward))   # below the fast size


@pytest.mark.parametrize("toward", [np.inf, -np.inf])
def test_step_where_moves_only_the_chosen(toward):
    values = _values()
    move = np.random.default_rng(3).random(values.size) < 0.5
    with np.errstate(over="ignore"):
        expected = np.where(move, np.nextafter(values, toward), values)
        assert _same_bits(_step(values, toward, move), expected)


def test_step_on_a_table_of_cells():
    values = _values()[:900].reshape(30, 30)
    with np.errstate(over="ignore"):
        assert _same_bits(_step(values, np.inf), np.nextafter(values, np.inf))


def test_up_and_down_two_steps():
    values = _values()
    with np.errstate(over="ignore"):
        assert _same_bits(up(values, 2), np.nextafter(np.nextafter(values, np.inf), np.inf))
        assert _same_bits(down(values, 2), np.nextafter(np.nextafter(values, -np.inf), -np.inf))


def test_child_corners_are_the_corners_of_the_children():
    compiled = compile_equation(Equation(a="1", b="x*y", c="sin(3*x) + y"))
    encloser = DiscriminantEncloser(compiled)
    domain = Domain(-1.0, 2.0, -0.5, 1.5, 8, 8)
    scale = (12, 8)
    ix, iy = np.array([0, 5, 11, 3]), np.array([0, 7, 2, 4])
    parents = _boxes(domain, ix, iy, *scale)

    def corners(boxes):
        x = np.stack([boxes.x0, boxes.x1, boxes.x0, boxes.x1])
        y = np.stack([boxes.y0, boxes.y0, boxes.y1, boxes.y1])
        return classify_points(compiled, x, y)[1]

    children = _child_corners(encloser, domain, ix, iy, corners(parents), scale, 1e-6, None)
    cx = (2 * ix[:, None] + np.array([0, 1, 0, 1])).ravel()
    cy = (2 * iy[:, None] + np.array([0, 0, 1, 1])).ravel()
    expected = corners(_boxes(domain, cx, cy, 2 * scale[0], 2 * scale[1]))
    assert children.shape == (4, 16)
    assert np.array_equal(children, expected)
