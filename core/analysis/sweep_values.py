"""What a parameter sweep is, apart from how it is computed: its values and its result records.

``sweep_values`` spreads the values (evenly or geometrically, ends exact); ``SweepRow`` and ``Sweep`` hold what
core.analysis.sweep.run_sweep measured. Only numpy: the project layer (core.project.sweeps) keeps these records
without importing the analysis that makes them (contourpy, lines and polygons: about 6 ms of every project
load by python -X importtime). core.analysis.sweep re-exports every name here.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

__all__ = ["MAX_SWEEP_VALUES", "Sweep", "SweepRow", "sweep_values"]

MAX_SWEEP_VALUES = 1000     # values in one sweep: 1000 maps of 201 x 201 nodes take about a minute


@dataclass(frozen=True)
class SweepRow:
    """What the study looks like at one value of the swept parameter.

    ``fractions``: each type's share of the grid nodes by type name (elliptic, parabolic, hyperbolic,
    undefined), exactly what ``mixtype classify --json`` prints as "fractions" at that value. ``areas``: the
    area of each type in the same order, in units of the product of the two variables' units (core.analysis.sweep
    module docstring: how). ``pockets``: the number of connected hyperbolic regions (core.analysis.pockets).
    ``peak``: ``{"quantity": name, "value": v, "at": [x, y]}``, the largest pocket peak of the peak quantity
    over every pocket (the first pocket, largest area first, on ties); None without a quantity or a finite peak.
    """

    value: float
    fractions: Mapping[str, float]
    areas: Mapping[str, float]
    pockets: int
    peak: Mapping | None


@dataclass(frozen=True)
class Sweep:
    """A parameter's values in the order swept and one SweepRow per value; ``log`` says the values were spread
    evenly on a logarithmic scale (sweep_values)."""

    parameter: str
    values: tuple[float, ...]
    rows: tuple[SweepRow, ...]
    log: bool


def sweep_values(low: float, high: float, count: int, *, log: bool = False) -> np.ndarray:
    """``count`` values from ``low`` to ``high``, both ends included, evenly spread (geometrically with ``log``).

    ValueError, saying which input and why, for a count that is not a whole number from 2 to MAX_SWEEP_VALUES,
    ends that are not finite numbers or not in increasing order, or a logarithmic sweep not above 0.
    """
    if isinstance(count, bool) or not isinstance(count, int | np.integer) or not 2 <= count <= MAX_SWEEP_VALUES:
        raise ValueError(f"the number of values must be a whole number from 2 to {MAX_SWEEP_VALUES}, got {count!r}")
    for name, end in (("low", low), ("high", high)):
        if not isinstance(end, int | float | np.number) or isinstance(end, bool) or not math.isfinite(end):
            raise ValueError(f"the sweep's {name} end must be a finite number, got {end!r}")
    low, high = float(low), float(high)
    if not low < high:
        raise ValueError(f"the sweep's low end must be below its high end, got {low:g} to {high:g}")
    if not math.isfinite(high - low):
        raise ValueError(f"the sweep's range {low:g} to {high:g} is too wide (its width is not a finite number)")
    if log:
        if low <= 0:
            raise ValueError(f"a logarithmic sweep needs a low end above 0, got {low:g}")
        values = np.geomspace(low, high, int(count))
    else:
        values = np.linspace(low, high, int(count))
    values[0], values[-1] = low, high       # the ends exactly as given
    if np.unique(values).size != values.size:
        raise ValueError(f"{count} values from {low!r} to {high!r} are not all distinct numbers; widen the range "
                         "or take fewer values")
    return values
