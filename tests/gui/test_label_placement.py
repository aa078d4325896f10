"""Pin labels on the map: inside the plot, clear of each other and of the pins (gui.label_placement)."""

from __future__ import annotations

import itertools

from gui.label_placement import ANCHORS, Box, place_labels

PLOT = Box(0.0, 0.0, 400.0, 300.0)
SIZE = (120.0, 20.0)


def _clear(boxes, pins, radius):
    shown = [b for b in boxes if b is not None]
    for first, second in itertools.combinations(shown, 2):
        assert first.overlap(second) == 0.0
    for box in shown:
        assert box.inside(PLOT)
        for x, y in pins:
            assert box.overlap(Box(x - radius, y - radius, 2 * radius, 2 * radius)) == 0.0


def test_a_free_label_takes_the_first_choice_above_right():
    (box,) = place_labels([(100.0, 100.0)], [SIZE], PLOT, marker_radius=5.0, gap=4.0)
    assert ANCHORS[0] == (0.0, 1.0)
    # 5 px of marker and a gap of 4 px from the pin's centre, right and up.
    assert (box.left, box.top, box.width, box.height) == (109.0, 71.0, 120.0, 20.0)


def test_labels_at_the_edges_turn_inwards():
    pins = [(395.0, 150.0), (200.0, 3.0), (5.0, 297.0), (398.0, 298.0)]
    boxes = place_labels(pins, [SIZE] * 4, PLOT, marker_radius=5.0)
    _clear(boxes, pins, 5.0)
    for (x, y), box in zip(pins, boxes):                     # each stays beside its own pin
        assert box.left - 10 <= x <= box.right + 10 and box.top - 10 <= y <= box.bottom + 10


def test_crowded_pins_get_labels_that_do_not_overlap():
    # Three pins stacked 12 px apart (as "bump crest" and "above the pocket" were): each label finds its own place.
    pins = [(200.0, 150.0), (200.0, 138.0), (200.0, 162.0)]
    boxes = place_labels(pins, [SIZE] * 3, PLOT, marker_radius=5.5)
    _clear(boxes, pins, 5.5)
    assert len({(b.left, b.top) for b in boxes}) == 3


def test_a_label_never_covers_another_pin():
    pins = [(100.0, 100.0), (130.0, 88.0)]                  # the second pin sits where the first label would go
    first, second = place_labels(pins, [SIZE] * 2, PLOT, marker_radius=5.0)
    assert first.overlap(Box(125.0, 83.0, 10.0, 10.0)) == 0.0
    assert first.left < 100.0 or first.top > 100.0           # not its first choice, above right
    _clear([first, second], pins, 5.0)


def test_pins_outside_the_plot_have_no_label_and_a_full_plot_gives_the_least_overlap():
    boxes = place_labels([(-10.0, 50.0), (50.0, 400.0)], [SIZE] * 2, PLOT)
    assert boxes == [None, None]
    tiny = Box(0.0, 0.0, 130.0, 30.0)                       # room for one label only
    first, second = place_labels([(60.0, 15.0), (70.0, 15.0)], [SIZE] * 2, tiny, marker_radius=2.0)
    assert first.inside(tiny) and second.inside(tiny)       # squeezed in, overlapping as little as it can


def test_many_pins_on_a_grid_get_clear_labels_where_there_is_room():
    # 60 pins 100 px apart: every label fits beside its pin, none overlapping (the obstacle filter misses none).
    pins = [(50.0 + 100.0 * i, 40.0 + 50.0 * j) for i in range(10) for j in range(6)]
    plot = Box(0.0, 0.0, 1000.0, 300.0)
    boxes = place_labels(pins, [(60.0, 16.0)] * len(pins), plot, marker_radius=5.0)
    for first, second in itertools.combinations(boxes, 2):
        assert first.overlap(second) == 0.0
    for box in boxes:
        assert box.inside(plot)
        for x, y in pins:
            assert box.overlap(Box(x - 5.0, y - 5.0, 10.0, 10.0)) == 0.0
