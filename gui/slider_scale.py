"""How a parameter's value maps onto its slider: evenly, or evenly in its logarithm when the range spans decades.

A frequency that runs from the tide (1e-4 rad/s) to the buoyancy frequency (1e-2 rad/s) would crowd its lower
decade into the first percent of an even slider; a logarithmic slider gives each decade the same length. The
mapping only decides where the slider sits and what a slider move sets: a value typed elsewhere stays exactly
as typed (the slider is then placed at the nearest step without writing the value back).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["LOG_SPAN", "SliderScale", "slider_scale"]

LOG_SPAN = 100.0       # a range from m to M with m > 0 and M / m >= LOG_SPAN gets a logarithmic slider


@dataclass(frozen=True)
class SliderScale:
    """A slider of ``steps`` steps from ``minimum`` (position 0) to ``maximum`` (position ``steps``)."""

    minimum: float
    maximum: float
    steps: int
    logarithmic: bool

    def value_at(self, position: int) -> float:
        """The value a slider at ``position`` sets (the ends give the range's ends exactly)."""
        if position <= 0:
            return self.minimum
        if position >= self.steps:
            return self.maximum
        fraction = position / self.steps
        if self.logarithmic:
            return math.exp(math.log(self.minimum) + fraction * (math.log(self.maximum) - math.log(self.minimum)))
        return self.minimum + (self.maximum - self.minimum) * fraction

    def position_of(self, value: float) -> int:
        """The nearest step to ``value``, clamped to the slider (values outside the range sit at an end)."""
        if not math.isfinite(value) or value <= self.minimum:
            return 0
        if value >= self.maximum:
            return self.steps
        if self.logarithmic:
            fraction = (math.log(value) - math.log(self.minimum)) / (math.log(self.maximum) - math.log(self.minimum))
        else:
            fraction = (value - self.minimum) / (self.maximum - self.minimum)
        return round(min(1.0, max(0.0, fraction)) * self.steps)


def slider_scale(minimum: float, maximum: float, steps: int) -> SliderScale:
    """The scale for a range: logarithmic when ``minimum`` > 0 and ``maximum`` / ``minimum`` >= LOG_SPAN."""
    logarithmic = minimum > 0 and maximum / minimum >= LOG_SPAN
    return SliderScale(float(minimum), float(maximum), int(steps), logarithmic)
