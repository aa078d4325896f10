"""Target records every benchmark reports: {"figure", "measured", "target", "met"} (plus the unit and sense).

A record states one figure of an issue's targets, what this run measured, the target and whether it was met,
so `python bench/run.py --json` says at a glance which targets hold on this machine today.
"""

from __future__ import annotations

import math

__all__ = ["figure"]


def figure(name: str, measured: float | None, target: float | None, *, at_most: bool = True,
           unit: str = "") -> dict:
    """One record: ``measured`` against ``target`` (at most it by default, at least it with at_most=False).

    ``met`` is None when there is no target or nothing finite was measured.
    """
    value = None if measured is None or not math.isfinite(measured) else float(measured)
    met = None if target is None or value is None else (value <= target if at_most else value >= target)
    return {"figure": name, "measured": value, "target": target, "met": met,
            "sense": "at most" if at_most else "at least", "unit": unit}
