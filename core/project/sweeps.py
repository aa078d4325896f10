"""The parameter sweeps a project keeps (format version 6): what to sweep, and the last results found.

A ``SavedSweep`` belongs to one study (an equation and a domain, by name, as pins do): which parameter, from
``low`` to ``high`` in ``count`` values, evenly or on a logarithmic scale (core.analysis.sweep_values),
and optionally the rows the last run gave (core.analysis.sweep_values.SweepRow) and the critical values found in
its range (``CriticalValue``: where a zone of a type appears or vanishes). A project holds at most one sweep
per study and parameter. The parameter is not required to exist in the equation (it may have been renamed
since): such a sweep is kept in the file, and the window shows only the sweeps of parameters the equation has.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from core.analysis.classify import FRACTION_ORDER, TypeCode
from core.analysis.sweep_values import MAX_SWEEP_VALUES, SweepRow, sweep_values
from core.equations.language import ExpressionError, check_name

__all__ = ["CRITICAL_EVENTS", "MAX_CRITICAL_VALUES", "MAX_SWEEPS", "CriticalValue", "SavedSweep", "checked_row"]

MAX_SWEEPS = 100
MAX_CRITICAL_VALUES = 1000
CRITICAL_EVENTS = ("appears", "vanishes")
TYPE_LABELS = tuple(code.label for code in FRACTION_ORDER)


def _finite(value: Any, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise ValueError(f"{what} must be a finite number, got {value!r}")
    return float(value)


def _pair(value: Any, what: str) -> tuple[float, float]:
    try:
        x, y = value
    except (TypeError, ValueError):
        raise ValueError(f"{what} must be a pair of numbers (x, y), got {value!r}") from None
    return _finite(x, what), _finite(y, what)


@dataclass(frozen=True)
class CriticalValue:
    """A parameter value where a zone of ``type`` (a type name) ``event``s ("appears" or "vanishes") as the
    parameter grows, first at the point ``at`` (x, y); ``bracket`` (low, high) holds the value, when known."""

    value: float
    event: str
    at: tuple[float, float]
    type: str = TypeCode.HYPERBOLIC.label
    bracket: tuple[float, float] | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "value", _finite(self.value, "a critical value"))
        if self.event not in CRITICAL_EVENTS:
            raise ValueError(f"a critical value's event is 'appears' or 'vanishes', got {self.event!r}")
        object.__setattr__(self, "at", _pair(self.at, "a critical value's point"))
        if self.type not in TYPE_LABELS:
            raise ValueError(f"a critical value's type is one of {', '.join(TYPE_LABELS)}, got {self.type!r}")
        if self.bracket is not None:
            low, high = _pair(self.bracket, "a critical value's bracket")
            if not low <= self.value <= high:
                raise ValueError(f"a critical value's bracket [{low:g}, {high:g}] must hold it ({self.value:g})")
            object.__setattr__(self, "bracket", (low, high))


def checked_row(row: SweepRow) -> SweepRow:
    """``row`` when its numbers are usable (finite value, a fraction in [0, 1] and an area >= 0 per type name,
    pockets >= 0, a peak with a quantity name, a value and a point); ValueError saying what is wrong otherwise."""
    if not isinstance(row, SweepRow):
        raise TypeError(f"a sweep's rows are SweepRow objects, got {type(row).__name__}")
    _finite(row.value, "a sweep row's value")
    for name, table, top in (("fractions", row.fractions, 1.0), ("areas", row.areas, math.inf)):
        if list(table) != list(TYPE_LABELS):
            raise ValueError(f"a sweep row's {name} are given for {', '.join(TYPE_LABELS)}, got {list(table)!r}")
        for label, amount in table.items():
            if not 0.0 <= _finite(amount, f"a sweep row's {name} of {label}") <= top:
                raise ValueError(f"a sweep row's {name} of {label} must be in [0, {top:g}], got {amount!r}")
    if isinstance(row.pockets, bool) or not isinstance(row.pockets, int) or row.pockets < 0:
        raise ValueError(f"a sweep row's pocket count is a whole number >= 0, got {row.pockets!r}")
    if row.peak is not None:
        if set(row.peak) != {"quantity", "value", "at"}:
            raise ValueError(f"a sweep row's peak holds quantity, value and at, got {sorted(row.peak)!r}")
        _finite(row.peak["value"], "a sweep row's peak value")
        _pair(row.peak["at"], "a sweep row's peak point")
        try:
            check_name(row.peak["quantity"], what="peak quantity")
        except ExpressionError as error:
            raise ValueError(str(error)) from None
    return row


@dataclass(frozen=True)
class SavedSweep:
    """A sweep of one study's parameter: ``study`` (equation name, domain name), ``parameter``, ``count``
    values from ``low`` to ``high`` (geometrically spread with ``log``); ``rows`` the last results (None: not
    run, or not kept) and ``critical`` the critical values found in the range (None: not searched)."""

    study: tuple[str, str]
    parameter: str
    low: float
    high: float
    count: int
    log: bool = False
    rows: tuple[SweepRow, ...] | None = None
    critical: tuple[CriticalValue, ...] | None = None

    def __post_init__(self) -> None:
        study = tuple(self.study)
        if len(study) != 2 or not all(isinstance(name, str) and name for name in study):
            raise ValueError(f"a sweep's study is an (equation name, domain name) pair, got {self.study!r}")
        object.__setattr__(self, "study", study)
        try:
            check_name(self.parameter, what="swept parameter")
        except ExpressionError as error:
            raise ValueError(str(error)) from None
        if not isinstance(self.log, bool):
            raise TypeError(f"a sweep's log switch is True or False, got {self.log!r}")
        sweep_values(_finite(self.low, "a sweep's low end"), _finite(self.high, "a sweep's high end"), self.count,
                     log=self.log)          # the same checks as a sweep that runs: ValueError saying why
        object.__setattr__(self, "low", float(self.low))
        object.__setattr__(self, "high", float(self.high))
        if self.rows is not None:
            rows = tuple(checked_row(row) for row in self.rows)
            if len(rows) > MAX_SWEEP_VALUES:
                raise ValueError(f"a sweep keeps at most {MAX_SWEEP_VALUES} rows, got {len(rows)}")
            object.__setattr__(self, "rows", rows)
        if self.critical is not None:
            critical = tuple(self.critical)
            if len(critical) > MAX_CRITICAL_VALUES or not all(isinstance(c, CriticalValue) for c in critical):
                raise ValueError(f"a sweep keeps at most {MAX_CRITICAL_VALUES} CriticalValue objects")
            object.__setattr__(self, "critical", critical)

    @property
    def key(self) -> tuple[str, str, str]:
        """(equation name, domain name, parameter): a project holds one sweep per key."""
        return (*self.study, self.parameter)

    def values(self):
        """The values the sweep runs at (core.analysis.sweep_values.sweep_values)."""
        return sweep_values(self.low, self.high, self.count, log=self.log)
