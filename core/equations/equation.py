"""The equation a u_xx + b u_xy + c u_yy + (lower order) = 0 as the user typed it: coefficients, named
definitions and parameters as text, and the protocol background data offer. core.equations.compiled turns it
into something that evaluates.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Protocol

import numpy as np

__all__ = ["COEFFICIENT_NAMES", "LOWER_ORDER_NAMES", "MAX_DEFINITIONS", "MAX_PARAMETERS", "Equation", "Parameter",
           "QuantitySource"]

COEFFICIENT_NAMES = ("a", "b", "c")
# d u_x + e u_y + f u: the lower-order part's coefficients, named as fields only (never symbols of the equation:
# a definition or parameter may be called d or f)
LOWER_ORDER_NAMES = ("d", "e", "f")
MAX_DEFINITIONS = 200
MAX_PARAMETERS = 100


@dataclass(frozen=True)
class Parameter:
    """A named number in the equation, with an optional slider range, unit and description."""

    value: float
    minimum: float | None = None
    maximum: float | None = None
    unit: str = ""
    description: str = ""


@dataclass(frozen=True)
class Equation:
    """a u_xx + b u_xy + c u_yy + ... = 0 in two independent variables, as text.

    ``definitions`` maps names to expressions usable in a, b, c and in each other; ``parameters`` maps names
    to numbers. ``variables`` are the names of the first and second independent variable. ``trade`` says
    which of the trade's quantities (core.equations.trade: Mach number, Froude number, ray angle...) a probe reads
    and from which names; ``peak_quantity`` names the definition whose maximum is reported per pocket.
    ``lower_order`` maps "d", "e", "f" to the text of the coefficients of u_x, u_y and u where the study states
    them (empty: not stated); they never change the type, only the canonical forms of the exact analysis.
    ``cauchy_data`` maps "line", "u", "du" to the texts of a Cauchy problem stated for the equation (the data
    line ALPHA*x + BETA*y = GAMMA, u and its normal derivative on it, in s or the variables:
    core.analysis.cauchy_input); empty: none. Neither changes the type or the map.
    """

    a: str
    b: str
    c: str
    variables: tuple[str, str] = ("x", "y")
    definitions: Mapping[str, str] = field(default_factory=dict)
    parameters: Mapping[str, Parameter] = field(default_factory=dict)
    name: str = "equation"
    description: str = ""
    trade: Mapping[str, Mapping[str, str]] = field(default_factory=dict)
    peak_quantity: str = ""
    lower_order: Mapping[str, str] = field(default_factory=dict)
    cauchy_data: Mapping[str, str] = field(default_factory=dict)

    def coefficient_text(self, which: str) -> str:
        return {"a": self.a, "b": self.b, "c": self.c}[which]

    def parameter_values(self) -> dict[str, float]:
        return {name: float(p.value) for name, p in self.parameters.items()}


class QuantitySource(Protocol):
    """Supplies background-data quantities (and their first derivatives) at points.

    ``key`` is a quantity name or ``diff(NAME,VAR)``; the result has the broadcast shape of x and y and is NaN
    wherever the data do not define the quantity.
    """

    def sample(self, key: str, x: np.ndarray, y: np.ndarray) -> np.ndarray: ...
