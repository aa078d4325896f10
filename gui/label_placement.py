"""Where each pin's label goes on screen: inside the plot and clear of the other labels and pins.

A simple greedy placement in pixels: each label tries a few positions around its pin in a fixed order of
preference and takes the first one that lies inside the plot and overlaps neither an earlier label nor another
pin's marker; when none is free, the position inside the plot with the least overlap. Pure geometry (no Qt), so
the map view (gui.map_view) only measures the labels and applies the result.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["ANCHORS", "Box", "place_labels"]

# Where the label's box sits relative to its pin, as the fraction (of the box's width, height) of the box that
# lies left of and above the pin: (0, 1) puts the box up and to the right. Order = preference.
ANCHORS: tuple[tuple[float, float], ...] = (
    (0.0, 1.0),    # above right
    (0.0, 0.0),    # below right
    (1.0, 1.0),    # above left
    (1.0, 0.0),    # below left
    (0.5, 1.0),    # above, centred
    (0.5, 0.0),    # below, centred
    (0.0, 0.5),    # right, centred
    (1.0, 0.5),    # left, centred
)


@dataclass(frozen=True)
class Box:
    """An axis-aligned rectangle in screen pixels (y grows downwards)."""

    left: float
    top: float
    width: float
    height: float

    @property
    def right(self) -> float:
        return self.left + self.width

    @property
    def bottom(self) -> float:
        return self.top + self.height

    def overlap(self, other: Box) -> float:
        """Area shared with ``other`` (0 when they only touch)."""
        wide = min(self.right, other.right) - max(self.left, other.left)
        high = min(self.bottom, other.bottom) - max(self.top, other.top)
        return wide * high if wide > 0 and high > 0 else 0.0

    def inside(self, other: Box) -> bool:
        return (self.left >= other.left and self.top >= other.top
                and self.right <= other.right and self.bottom <= other.bottom)


def _candidate(pin: tuple[float, float], size: tuple[float, float], anchor: tuple[float, float],
               gap: float) -> Box:
    """The label box at ``anchor`` around ``pin``, ``gap`` pixels from the pin's centre each way it is moved."""
    width, height = size
    ax, ay = anchor
    shift_x = gap if ax == 0.0 else -gap if ax == 1.0 else 0.0
    shift_y = -gap if ay == 1.0 else gap if ay == 0.0 else 0.0
    return Box(pin[0] + shift_x - ax * width, pin[1] + shift_y - ay * height, width, height)


def place_labels(pins: list[tuple[float, float]], sizes: list[tuple[float, float]], plot: Box, *,
                 marker_radius: float = 6.0, gap: float = 2.0) -> list[Box | None]:
    """One box per label (None for a pin outside ``plot``, whose label is not shown).

    ``pins`` are the pins' centres and ``sizes`` the labels' (width, height), all in pixels; labels are placed
    in the order given, so earlier pins get their preferred places. A box is free when it lies inside
    ``plot`` and overlaps no earlier box and no pin's marker (a square of ``marker_radius`` around each pin);
    boxes keep ``gap`` pixels from their own pin's marker.
    """
    markers = [Box(x - marker_radius, y - marker_radius, 2 * marker_radius, 2 * marker_radius) for x, y in pins]
    placed: list[Box | None] = []
    for index, (pin, size) in enumerate(zip(pins, sizes, strict=True)):
        if not (plot.left <= pin[0] <= plot.right and plot.top <= pin[1] <= plot.bottom):
            placed.append(None)
            continue
        # Only what lies within reach of this label's candidates can be in the way (keeps many pins cheap).
        reach = Box(pin[0] - size[0] - marker_radius - gap, pin[1] - size[1] - marker_radius - gap,
                    2 * (size[0] + marker_radius + gap), 2 * (size[1] + marker_radius + gap))
        obstacles = [box for box in placed if box is not None and box.overlap(reach) > 0.0]
        obstacles += [marker for other, marker in enumerate(markers)
                      if other != index and marker.overlap(reach) > 0.0]
        best, best_cost = None, float("inf")
        for anchor in ANCHORS:
            box = _candidate(pin, size, anchor, marker_radius + gap)
            if not box.inside(plot):
                box = _pushed_inside(box, plot)
            cost = sum(box.overlap(obstacle) for obstacle in obstacles)
            cost += box.overlap(markers[index])         # a box pushed back over its own pin hides it
            if cost < best_cost:
                best, best_cost = box, cost
            if cost == 0.0:
                break
        placed.append(best)
    return placed


def _pushed_inside(box: Box, plot: Box) -> Box:
    """``box`` moved the least distance that puts it inside ``plot`` (its top-left corner when it is larger)."""
    left = min(max(box.left, plot.left), max(plot.left, plot.right - box.width))
    top = min(max(box.top, plot.top), max(plot.top, plot.bottom - box.height))
    return Box(left, top, box.width, box.height)
