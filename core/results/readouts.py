"""What a study reads beyond the type: the trade quantities at a point and the quantity peaked per pocket.

One rule for each, used by the window (gui/analysis.py) and the command line alike, so both show the same
numbers and the same reasons when a number is missing:

- ``read_trade`` reads an equation's trade spec (core.equations.trade) at one point. Every value the
  readout needs is evaluated once; an input that is not finite there is named in ``undefined`` (the values
  then follow NaN arithmetic: mostly NaN), and a readout that cannot be made at all (a name the point does
  not know, a bad spec) leaves ``values`` empty and says why in ``error``.
- ``peak_quantity`` is the equation's ``peak_quantity`` when pockets can report it: a definition, a
  coefficient a, b, c or a data quantity; None otherwise (pockets then have no peak).
- ``probe_rows`` words a probe result and its trade reading as (label, text) rows: ``mixtype probe``'s text
  and the study report's pin tables.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field

import numpy as np

from core.analysis.classify import TypeCode
from core.equations.trade import READOUT_UNITS, point_values, trade_readout
from core.results.readable import direction_rows, point_without_noise

__all__ = ["TradeReading", "peak_quantity", "probe_rows", "read_trade"]


@dataclass(frozen=True)
class TradeReading:
    """The trade quantities at one point.

    ``values`` maps readout keys (core.equations.trade, in its fixed order) to floats, NaN where a quantity
    does not exist there; empty without a trade spec or when ``error`` is set. ``undefined`` names the inputs
    that are not finite at the point; ``error`` is a one-line reason when nothing could be read.
    """

    values: dict[str, float] = field(default_factory=dict)
    undefined: tuple[str, ...] = ()
    error: str = ""

    @property
    def units(self) -> dict[str, str]:
        """The unit of every value (core.equations.trade.READOUT_UNITS)."""
        return {name: READOUT_UNITS.get(name, "") for name in self.values}

    @property
    def problem(self) -> str:
        """One line saying why values are missing, '' when every input was known and finite."""
        if self.error:
            return f"unavailable: {self.error}"
        if self.undefined:
            verb = "is" if len(self.undefined) == 1 else "are"
            return f"undefined here ({', '.join(self.undefined)} {verb} not a finite number at this point)"
        return ""


def read_trade(spec: Mapping[str, Mapping[str, str]] | None, compiled, x: float, y: float, *,
               parameters: Mapping[str, float] | None = None, data=None) -> TradeReading:
    """The trade readout of ``spec`` (an equation's ``trade``) at (x, y); never raises for a bad point or spec.

    ``compiled`` is the equation compiled with the data names (core.equations.equation.CompiledEquation),
    ``data`` the QuantitySource it samples (or None).
    """
    if not spec:
        return TradeReading()
    try:
        sources = list(dict.fromkeys(source for inputs in spec.values() for source in inputs.values()))
        data_names = set(getattr(data, "names", ()))
        with np.errstate(all="ignore"):
            values = point_values(compiled, x, y, parameters=parameters, data=data,
                                  extra_data=tuple(sorted(set(sources) & data_names)))
            undefined = tuple(name for name in sources if name in values and not math.isfinite(values[name]))
            readout = trade_readout(spec, values)
    except (KeyError, ValueError, TypeError) as error:
        text = error.args[0] if isinstance(error, KeyError) and error.args else str(error)
        return TradeReading(error=str(text))
    return TradeReading(values=readout, undefined=undefined)


def peak_quantity(equation, compiled, data_names: Iterable[str] = ()) -> str | None:
    """The name whose peak each pocket reports: ``equation.peak_quantity`` when it is a definition of
    ``compiled``, a coefficient a, b, c or one of ``data_names``; None otherwise."""
    name = getattr(equation, "peak_quantity", None)
    usable = {*compiled.definition_order, "a", "b", "c", *data_names}
    return name if name in usable else None


def probe_rows(result, trade: TradeReading, variables, domain=None) -> list[tuple[str, str]]:
    """Every readout of a probe result (core.analysis.probe.ProbeResult) and its trade reading as (label, text)
    rows, as ``mixtype probe`` prints them: the point (rounding noise read as 0 against ``domain``; None shows it
    as given), type, coefficients, D and D/S, directions and slopes, the angle between them, principal axes and
    anisotropy, every definition, the trade quantities with their units and any note."""
    x_name, y_name = variables
    px, py = point_without_noise(result.point, domain)
    rows = [("point", f"{x_name} = {px:.9g}, {y_name} = {py:.9g}"),
            ("type", TypeCode(result.type).label),
            ("a, b, c", f"{result.a:.9g}, {result.b:.9g}, {result.c:.9g}"),
            ("D = b^2 - 4ac", f"{result.discriminant:.9g}"),
            ("D / (b^2 + 4|ac|)", f"{result.normalized:.6g}")]
    rows += direction_rows(result, variables, spec=".6f")
    if result.angle_between_deg is not None:
        rows.append(("angle between", f"{result.angle_between_deg:.6f} deg"))
    if result.principal_axes_deg is not None:
        rows.append(("principal axes", ", ".join(f"{d:.6f} deg" for d in result.principal_axes_deg)))
    if result.anisotropy is not None:
        rows.append(("anisotropy ratio", f"{result.anisotropy:.6g} (dimensionless)"))
    for name, value in result.definitions.items():
        rows.append((name, f"{value:.9g}"))
    for name, value in trade.values.items():
        shown = f"{value:.9g}" if math.isfinite(value) else "does not exist here"
        rows.append((name.replace("_", " ").removesuffix(" deg"), f"{shown} ({READOUT_UNITS.get(name, '')})"))
    if trade.problem:
        rows.append(("trade note", trade.problem))
    if result.message:
        rows.append(("note", result.message))
    return rows
