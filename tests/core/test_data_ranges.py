"""Ranges of data quantities over boxes (core.data.ranges, ``value_range`` of the fields): every value the
interpolation gives in a box lies in its range; missing values and points outside the data are flagged.

Linear and bilinear interpolation are convex combinations of the nodal values they read (common practice,
no source), so the least and greatest nodal value a box touches bound the field there.
"""

from __future__ import annotations

import numpy as np
import pytest

from core.data.fields import GridField, MeshField, ProfileField, triangulate_points
from core.data.ranges import MinMaxPyramid, index_span


def _fields():
    rng = np.random.default_rng(1)
    x, y = np.sort(rng.uniform(0, 1, 30)), np.sort(rng.uniform(0, 1, 25))
    grid_values = np.sin(3 * x)[None, :] * np.cos(2 * y)[:, None]
    grid_values[5, 7] = np.nan
    points = rng.uniform(size=(600, 2))
    mesh_values = np.sin(4 * points[:, 0]) + points[:, 1] ** 2
    mesh_values[3] = np.nan
    triangles = triangulate_points(points[:, 0], points[:, 1], where="test")
    return {"grid": GridField(x, y, {"u": grid_values}),
            "mesh": MeshField(points[:, 0], points[:, 1], triangles, {"u": mesh_values}),
            "profile": ProfileField(x, {"u": np.sin(3 * x)}, axis=0)}


FIELDS = _fields()


@pytest.mark.parametrize("layout", sorted(FIELDS))
@pytest.mark.parametrize("axis", [None, 0, 1])
def test_the_range_holds_every_sampled_value_and_flags_missing_ones(layout, axis):
    field = FIELDS[layout]
    rng = np.random.default_rng(2)
    x0, y0 = rng.uniform(-0.1, 1, 200), rng.uniform(-0.1, 1, 200)
    width = rng.uniform(0, 0.12, 200)
    found = field.value_range("u", axis, x0, x0 + width, y0, y0 + width)
    flagged = inside = 0
    for k in range(200):
        sx, sy = rng.uniform(x0[k], x0[k] + width[k], 300), rng.uniform(y0[k], y0[k] + width[k], 300)
        values = field.sample("u", sx, sy) if axis is None else field.sample_derivative("u", axis, sx, sy)
        defined = np.isfinite(values)
        if defined.any():
            assert found.low[k] <= values[defined].min() and values[defined].max() <= found.high[k], k
            assert not found.surely_undefined[k], k
            inside += 1
        if not defined.all():
            assert found.maybe_undefined[k], k
            flagged += 1
    assert inside > 100 and flagged > 10          # both kinds of box were met
    assert not found.maybe_undefined.all() and found.surely_undefined.any()


def test_the_pyramid_answers_over_a_superset_of_each_rectangle():
    values = np.arange(64.0).reshape(8, 8)
    values[2, 3] = np.nan
    pyramid = MinMaxPyramid(values)
    found = pyramid.query(np.array([0, 4, 2, 1]), np.array([0, 7, 2, 3]), np.array([0, 4, 3, 0]),
                          np.array([7, 7, 3, 5]))
    assert list(found.low) == [0.0, 36.0, np.inf, 8.0] or found.low[2] == np.inf
    assert found.low[0] == 0.0 and found.high[0] >= 7.0
    assert found.low[1] <= 36.0 and found.high[1] == 63.0
    assert found.surely_undefined[2] and found.maybe_undefined[2]          # the one missing value alone
    assert found.maybe_undefined[3] and not found.surely_undefined[3] and found.low[3] <= 8.0 <= found.high[3]


def test_index_span_reads_the_next_node_at_a_node_and_flags_outside():
    nodes = np.array([0.0, 1.0, 2.0, 3.0])
    first, last, outside, missed = index_span(nodes, np.array([0.5, 1.0, -1.0, 5.0]), np.array([1.0, 1.5, 0.5, 6.0]))
    assert list(first) == [0, 1, 0, 2] and list(last) == [2, 2, 1, 3]
    assert list(outside) == [False, False, True, True] and list(missed) == [False, False, False, True]
