"""Regions labelled on runs: the same labels, numbered the same way, as scipy.ndimage.label."""

import numpy as np
import pytest
from scipy import ndimage

from core.analysis.run_labels import bounding_slices, connect_runs, find_runs, label_runs, paint_labels


def _reference(mask: np.ndarray, connectivity: int) -> tuple[np.ndarray, int]:
    """scipy.ndimage.label, the reference library: 4-connectivity is its default structure, 8 a 3 x 3 block."""
    structure = np.ones((3, 3), dtype=bool) if connectivity == 8 else None
    labels, count = ndimage.label(mask, structure=structure)
    return labels, count


def _spiral(n: int) -> np.ndarray:
    """A square spiral one node wide, walls one node apart: one region whose path crosses the map n/2 times."""
    mask = np.zeros((n, n), dtype=bool)
    row = column = 0
    step_row, step_column = 0, 1
    mask[0, 0] = True

    def inside(r, c):
        return 0 <= r < n and 0 <= c < n

    while True:
        for _ in range(2):                       # straight on, else turn right; stop when neither goes
            r, c = row + step_row, column + step_column
            beyond = (row + 2 * step_row, column + 2 * step_column)
            if inside(r, c) and not mask[r, c] and not (inside(*beyond) and mask[beyond]):
                row, column = r, c
                mask[row, column] = True
                break
            step_row, step_column = step_column, -step_row
        else:
            return mask


def _maps() -> list[tuple[str, np.ndarray]]:
    rng = np.random.default_rng(20240611)
    maps = [(f"random {density}", rng.random((37, 53)) < density) for density in (0.05, 0.3, 0.5, 0.7, 0.95)]
    rows, columns = np.indices((24, 31))
    maps += [
        ("checkerboard", (rows + columns) % 2 == 0),           # 8-connected: one region; 4-connected: every node
        ("stripes", columns % 3 == 0),
        ("diagonals", (rows - columns) % 4 == 0),
        ("spiral", _spiral(41)),
        ("spiral's complement", ~_spiral(41)),
        ("one row", rng.random((1, 40)) < 0.5),
        ("one column", rng.random((40, 1)) < 0.5),
        ("one node", np.ones((1, 1), dtype=bool)),
        ("empty", np.zeros((9, 7), dtype=bool)),
        ("full", np.ones((9, 7), dtype=bool)),
        ("runs across row ends", np.tile([True, True, False, True], (6, 1))),
    ]
    # a "U" whose two arms are labelled apart until the bottom row joins them: a late merge renumbers
    u = np.zeros((6, 7), dtype=bool)
    u[:, 1] = u[:, 5] = True
    u[5, 1:6] = True
    maps.append(("u", u))
    return maps


@pytest.mark.parametrize("connectivity", [4, 8])
@pytest.mark.parametrize(("name", "mask"), _maps(), ids=[name for name, _ in _maps()])
def test_labels_match_scipy_ndimage(name, mask, connectivity):
    codes = np.where(mask, 3, 1).astype(np.int8)
    runs = label_runs(codes, 3, connectivity)
    expected, count = _reference(mask, connectivity)
    assert runs.count == count
    np.testing.assert_array_equal(paint_labels(runs), expected)       # same regions, same numbering
    assert np.all(np.diff(runs.row) >= 0) and np.all(runs.stop > runs.start)
    assert int((runs.stop - runs.start).sum()) == np.count_nonzero(mask)
    assert bounding_slices(runs) == ndimage.find_objects(expected)      # the reference's boxes


def test_known_counts():
    # closed forms (common practice, no source): a spiral is one region; a checkerboard is one region with
    # diagonal neighbours and one region a node without them
    assert label_runs(_spiral(41), True, 4).count == 1
    rows, columns = np.indices((6, 8))
    board = (rows + columns) % 2 == 0
    assert label_runs(board, True, 8).count == 1
    assert label_runs(board, True, 4).count == 24


def test_runs_of_a_row_and_their_limit():
    values = np.array([[1, 1, 0, 1, 0, 0, 1],
                       [1, 0, 0, 0, 0, 1, 0]])
    row, start, stop = find_runs(values, 1)
    assert row.tolist() == [0, 0, 0, 1, 1]
    assert start.tolist() == [0, 3, 6, 0, 5] and stop.tolist() == [2, 4, 7, 1, 6]   # cut at the row end
    assert find_runs(values, 1, max_runs=4) is None
    assert find_runs(values, 1, max_runs=5) is not None
    # row 1's last run touches row 0's last only diagonally: joined with 8 neighbours, apart with 4
    label, count = connect_runs(row, start, stop, 8)
    assert label.tolist() == [1, 2, 3, 1, 3] and count == 3
    label, count = connect_runs(row, start, stop, 4)
    assert label.tolist() == [1, 2, 3, 1, 4] and count == 4


def test_many_blocks_and_relabelling(monkeypatch):
    # blocks of a few rows, so that runs are found and painted across blocks
    monkeypatch.setattr("core.analysis.run_labels._BLOCK_NODES", 3 * 53 + 5)
    mask = np.random.default_rng(7).random((37, 53)) < 0.4
    runs = label_runs(mask, True, 8)
    expected, count = _reference(mask, 8)
    np.testing.assert_array_equal(paint_labels(runs), expected)
    relabel = np.arange(count + 1)[::-1]
    relabel[0] = 0
    np.testing.assert_array_equal(paint_labels(runs, relabel), relabel[expected])


def test_bad_connectivity():
    with pytest.raises(ValueError, match="connectivity must be 4 or 8, got 6"):
        label_runs(np.ones((2, 2)), 1, 6)
