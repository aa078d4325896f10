"""Pinned points and everything core knows at each: type, D, a, b, c, characteristic directions, definitions.

Click the map to pin a point. The table lists the pins (label, position, type, D); the label and position can
be edited in place. The selected pin's full readout comes from core.analysis.probe, shown as a table and copyable as
plain text. Numbers carry their units: coordinates are in the equation's own length units, angles in
degrees from the first variable's axis, D in the units of b squared; ratios are marked dimensionless.
"""

from __future__ import annotations

import html
import math

import numpy as np
from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QBrush, QColor, QGuiApplication
from PySide6.QtWidgets import (
    QAbstractItemView,
    QBoxLayout,
    QHeaderView,
    QLabel,
    QTableWidget,
    QTableWidgetItem,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from core.equations.trade import READOUT_UNITS
from core.project.model import Seed
from core.results.readable import direction_rows, point_without_noise
from gui.document import Document
from gui.widgets import button_row, push_button

__all__ = ["OUTSIDE_MARK", "TRADE_LABELS", "PinsPanel", "main_trade_text", "pins_as_text", "probe_rows",
           "trade_rows"]

_COLUMNS = ("label", "x", "y", "type", "D")
OUTSIDE_MARK = "(outside)"     # follows the type of a pin outside the current domain (greyed, with a tooltip)
_OUTSIDE_COLOUR = QColor("#8A8A8A")
LABEL_COLUMN_PIXELS = 200


def _number(value, digits: int = 6) -> str:
    try:
        value = float(value)
    except (TypeError, ValueError):
        return str(value)
    if math.isnan(value):
        return "undefined"
    return f"{value + 0.0:.{digits}g}"  # + 0.0 turns -0.0 into 0.0


def _numbers(values, digits: int = 5, unit: str = "") -> str:
    if values is None:
        return "none"
    array = np.atleast_1d(np.asarray(values, dtype=np.float64))
    if array.size == 0 or np.all(np.isnan(array)):
        return "none (no real direction)"
    text = ", ".join(_number(v, digits) for v in array if not math.isnan(v))
    return f"{text}{unit}"


def _type_label(result) -> str:
    kind = getattr(result, "type", None)
    return getattr(kind, "label", str(kind)) if kind is not None else "?"


def probe_rows(result, variables: tuple[str, str] = ("x", "y"), domain=None) -> list[tuple[str, str]]:
    """(quantity, value with unit) rows for one core.analysis.probe result, in reading order (coordinates
    within rounding noise of 0 against ``domain`` read 0; directions worded by core.results.readable)."""
    x_name, y_name = variables
    point = point_without_noise(getattr(result, "point", (math.nan, math.nan)), domain)
    rows = [
        ("point", f"{x_name} = {_number(point[0])}, {y_name} = {_number(point[1])} (equation length units)"),
        ("type", _type_label(result)),
        ("D = b² − 4ac", f"{_number(getattr(result, 'discriminant', math.nan))} (units of b²)"),
        ("D / (b² + 4|ac|)", f"{_number(getattr(result, 'normalized', math.nan))} (dimensionless)"),
    ]
    for name in ("a", "b", "c"):
        rows.append((name, _number(getattr(result, name, math.nan))))
    for name, value in direction_rows(result, variables, spec=".5g", unit="°", slope_digits=5):
        units = f" ({y_name} units per {x_name} unit)" if name.startswith("slopes") else ""
        rows.append((name, value + units))
    if getattr(result, "directions_deg", None):
        angle = getattr(result, "angle_between_deg", None)
        if angle is not None and not (isinstance(angle, float) and math.isnan(angle)):
            rows.append(("angle between them", f"{_number(angle, 5)}°"))
    axes = getattr(result, "principal_axes_deg", None)
    if axes is not None and np.any(np.isfinite(np.asarray(axes, dtype=np.float64))):
        rows.append(("principal axes", _numbers(axes, 5, "° from the " + x_name + " axis")))
        rows.append(("anisotropy", f"{_number(getattr(result, 'anisotropy', math.nan), 5)} (dimensionless)"))
    for name, value in dict(getattr(result, "definitions", {}) or {}).items():
        rows.append((f"{name} (definition)", _number(value)))
    if not getattr(result, "inside", True):
        rows.append(("note", "outside the domain"))
    message = getattr(result, "message", "")
    if message:
        rows.append(("note", str(message)))
    return rows


# readout key (core.equations.trade) -> (what it is, why it can be missing); units come from core.equations.trade.READOUT_UNITS
TRADE_LABELS: dict[str, tuple[str, str]] = {
    "speed": ("flow speed |V|", ""),
    "mach": ("local Mach number M", ""),
    "flow_angle_deg": ("flow angle θ", "flow at rest"),
    "mach_angle_deg": ("Mach angle μ = asin(1/M)", "subsonic (M < 1): no Mach waves"),
    "characteristic_plus_deg": ("characteristic θ + μ", "none where the flow is subsonic"),
    "characteristic_minus_deg": ("characteristic θ − μ", "none where the flow is subsonic"),
    "pressure_ratio": ("pressure ratio p/p0 (isentropic)", ""),
    "temperature_ratio": ("temperature ratio T/T0 (isentropic)", ""),
    "density_ratio": ("density ratio ρ/ρ0 (isentropic)", ""),
    "celerity": ("wave celerity √(g h)", "no depth"),
    "froude": ("Froude number Fr", ""),
    "wave_angle_deg": ("wave angle β = asin(1/Fr)", "subcritical (Fr < 1): no standing waves"),
    "ray_slope": ("ray slope |dz/dx|", "outside f < ω < N: no propagating waves"),
    "ray_angle_deg": ("ray angle", "outside f < ω < N: no propagating waves"),
    "in_window": ("in the frequency window f < ω < N", ""),
}
_TRADE_TITLES = {"mach": "compressible flow", "small_disturbance": "transonic small disturbance",
                 "froude": "shallow-water flow", "internal_wave": "internal waves"}
_FROUDE_LABELS = {"characteristic_plus_deg": ("characteristic θ + β", "none where the flow is subcritical"),
                  "characteristic_minus_deg": ("characteristic θ − β", "none where the flow is subcritical")}
_DIRECTION_KEYS = ("flow_angle_deg", "characteristic_plus_deg", "characteristic_minus_deg")


def _unit_text(key: str, first_variable: str, spec=None) -> str:
    """The unit after a trade value: core.equations.trade.READOUT_UNITS worded for the panel."""
    unit = READOUT_UNITS.get(key, "")
    if unit == "deg":
        return f"° from the {first_variable} axis" if key in _DIRECTION_KEYS else "°"
    if unit.startswith("deg "):
        return "° " + unit[4:]
    if unit.startswith("dimensionless"):
        return " (dimensionless)"          # the label already names the ratio
    if unit.startswith("velocity unit"):
        inputs = next((dict(v) for v in (spec or {}).values() if "u" in v and "v" in v), {"u": "u", "v": "v"})
        return f" (unit of {inputs['u']}, {inputs['v']})"
    return f" ({unit})" if unit else ""


def trade_rows(readout, trade=None, variables: tuple[str, str] = ("x", "y")) -> list[tuple[str, str]]:
    """(quantity, value with unit) rows for a core.equations.trade readout dict (a str is a reason it is missing).

    ``trade`` is the equation's trade spec (it decides the wording for the shallow-water analogy).
    """
    if isinstance(readout, str):
        return [("trade quantities", readout)] if readout else []
    labels = dict(TRADE_LABELS)
    if trade and "froude" in trade:
        labels.update(_FROUDE_LABELS)
    rows = []
    for key, value in dict(readout or {}).items():
        name, missing = labels.get(key, (key.replace("_", " "), ""))
        if key == "in_window":
            rows.append((name, "yes" if value == 1.0 else "no"))
            continue
        if value is None or not math.isfinite(float(value)):
            rows.append((name, f"none ({missing})" if missing else "undefined"))
            continue
        rows.append((name, f"{_number(value, 5)}{_unit_text(key, variables[0], trade)}"))
    return rows


def main_trade_text(readout) -> str:
    """The one trade number the status bar shows while hovering (M, Fr or the ray angle), or ''."""
    if not isinstance(readout, dict):
        return ""
    for key, symbol, unit in (("mach", "M", ""), ("froude", "Fr", ""), ("ray_angle_deg", "ray angle", "°")):
        if key in readout:
            value = readout[key]
            if value is None or not math.isfinite(float(value)):
                return f"{symbol}: none"
            return f"{symbol} = {_number(value, 4)}{unit}"
    return ""


def pins_as_text(pins, results, variables: tuple[str, str] = ("x", "y"), trades=(), trade=None,
                 domain=None) -> str:
    """Plain text for the clipboard: one block per pin, one 'quantity: value' line each."""
    blocks = []
    for index, pin in enumerate(pins):
        lines = [f"Pin {pin.label or index + 1}"]
        if index < len(results) and results[index] is not None:
            lines += [f"  {name}: {value}" for name, value in probe_rows(results[index], variables, domain)]
            if index < len(trades):
                lines += [f"  {name}: {value}" for name, value in trade_rows(trades[index], trade, variables)]
        else:
            x, y = point_without_noise((pin.x, pin.y), domain)
            lines.append(f"  point: {variables[0]} = {x:.6g}, {variables[1]} = {y:.6g} (not probed yet)")
        blocks.append("\n".join(lines))
    return "\n\n".join(blocks) + ("\n" if blocks else "")


class PinsPanel(QWidget):
    """The pin list and the selected pin's readout."""

    selection_changed = Signal(int)   # selected pin index, -1 for none

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.results: tuple = ()
        self.trades: tuple = ()
        self._updating = False
        purpose = QLabel("Pinned points. Click the map to pin a point (drag a pin to move it); select one to "
                         "read everything known there.")
        purpose.setWordWrap(True)
        purpose.setObjectName("panelPurpose")

        self.table = QTableWidget(0, len(_COLUMNS))
        self._label_columns()
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)   # sized to what they hold
        header.setStretchLastSection(True)
        header.setMaximumSectionSize(LABEL_COLUMN_PIXELS)       # a long label is elided; its tooltip holds it
        self.table.setWordWrap(False)
        self.table.setSizeAdjustPolicy(QAbstractItemView.SizeAdjustPolicy.AdjustToContents)   # wide enough for them
        self.table.verticalHeader().setVisible(False)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setToolTip("Edit a label or a coordinate in place; the readout follows")
        self.table.itemChanged.connect(self._edited)
        self.table.itemSelectionChanged.connect(self._selected)

        self.details = QTextBrowser()
        self.details.setObjectName("pinReadout")
        self.details.setToolTip("Everything core.analysis.probe reports at the selected pin")
        self.details.setMinimumHeight(180)

        self.trace_button = push_button("Trace through pin", "Draw both characteristics through the selected "
                                        "pin (hyperbolic points)", self.trace_selected)
        self.delete_button = push_button("Delete", "Delete the selected pin", self.delete_selected)
        self.copy_button = push_button("Copy as text", "Copy every pin's readout to the clipboard as plain text",
                                       self.copy_text)
        buttons = button_row(self.trace_button, self.delete_button, self.copy_button)

        listing = QVBoxLayout()
        listing.setContentsMargins(0, 0, 0, 0)
        listing.addWidget(purpose)
        listing.addWidget(self.table, 1)
        listing.addLayout(buttons)
        self.body = QBoxLayout(QBoxLayout.Direction.TopToBottom, self)
        self.body.addLayout(listing, 1)
        self.body.addWidget(self.details, 2)
        document.pins_changed.connect(self.refresh)
        document.equation_changed.connect(self._label_columns)
        document.domain_changed.connect(self.refresh)
        document.equation_changed.connect(self._show_details)
        self.refresh()

    # -- display --------------------------------------------------------------------------------------------
    def set_results(self, results) -> None:
        """Probe results from core, one per pin in the document's order."""
        self.results = tuple(results or ())
        self.refresh()

    def set_trade_readouts(self, readouts) -> None:
        """Trade readouts (core.equations.trade dicts, or a reason as text), one per pin; shown with the next results."""
        self.trades = tuple(readouts or ())

    def set_side_by_side(self, side_by_side: bool) -> None:
        """The readout beside the table (a wide, low panel under the map) or under it (a tall side panel)."""
        self.body.setDirection(QBoxLayout.Direction.LeftToRight if side_by_side
                               else QBoxLayout.Direction.TopToBottom)
        self.details.setMinimumHeight(0 if side_by_side else 180)
        self.body.setStretch(0, 0 if side_by_side else 1)     # side by side: the table as wide as its columns
        self.body.setStretch(1, 1 if side_by_side else 2)
        self.details.setMinimumWidth(200 if side_by_side else 0)

    def is_outside(self, index: int) -> bool:
        """Whether pin ``index`` lies outside the current domain (its readout extrapolates the equation)."""
        pin, d = self.document.project.pins[index], self.document.domain
        return not (d.xmin <= pin.x <= d.xmax and d.ymin <= pin.y <= d.ymax)

    def _variables(self) -> tuple[str, str]:
        return tuple(self.document.equation.variables)  # type: ignore[return-value]

    def _label_columns(self) -> None:
        """Column titles: the coordinates are named after the study's variables."""
        x_name, y_name = self._variables()
        self.table.setHorizontalHeaderLabels(["label", x_name, y_name, "type", "D"])
        self.table.horizontalHeaderItem(4).setToolTip("D = b² − 4ac, in the units of b²")

    def refresh(self) -> None:
        pins = self.document.project.pins
        selected = self.selected_index()
        self._label_columns()
        domain = self.document.domain
        self._updating = True
        try:
            self.table.setRowCount(len(pins))
            shown = self.document.project.pins_shown()
            for row, pin in enumerate(pins):
                self.table.setRowHidden(row, not shown[row])     # a pin of another study
                result = self.results[row] if row < len(self.results) else None
                matches = result is not None and np.allclose(getattr(result, "point", (np.nan, np.nan)),
                                                             (pin.x, pin.y))
                outside = self.is_outside(row)
                kind = _type_label(result) if matches else "…"
                kind = f"{kind} {OUTSIDE_MARK}" if outside else kind
                d = _number(getattr(result, "discriminant", math.nan)) if matches else "…"
                x, y = point_without_noise((pin.x, pin.y), domain)
                for column, text in enumerate((pin.label, f"{x:.6g}", f"{y:.6g}", kind, d)):
                    item = QTableWidgetItem(text)
                    if column >= 3:
                        item.setFlags(item.flags() & ~Qt.ItemFlag.ItemIsEditable)
                    if column == 0:
                        item.setToolTip(pin.label)
                    if outside:
                        item.setForeground(QBrush(_OUTSIDE_COLOUR))
                        item.setToolTip(f"{pin.label} lies outside the domain “{self.document.domain.name}”: "
                                        "its readout extrapolates the equation")
                    self.table.setItem(row, column, item)
        finally:
            self._updating = False
        if 0 <= selected < len(pins) and shown[selected]:
            self.table.selectRow(selected)
        elif any(shown):
            self.table.selectRow(len(shown) - 1 - shown[::-1].index(True))
        else:
            self.table.clearSelection()
        self._show_details()

    def selected_index(self) -> int:
        rows = self.table.selectionModel().selectedRows() if self.table.selectionModel() else []
        return rows[0].row() if rows else -1

    def select(self, index: int) -> None:
        """Select pin ``index``, scroll its row into view and show its readout."""
        if 0 <= index < self.table.rowCount():
            self.table.selectRow(index)
            self.table.scrollToItem(self.table.item(index, 0), QAbstractItemView.ScrollHint.EnsureVisible)

    def _selected(self) -> None:
        self._show_details()
        self.selection_changed.emit(self.selected_index())

    def _show_details(self) -> None:
        index = self.selected_index()
        pins = self.document.project.pins
        if not 0 <= index < len(pins):
            self.details.setHtml("<p style='color:#555'>No pin selected. Click the map to pin a point.</p>")
            return
        pin = pins[index]
        result = self.results[index] if index < len(self.results) else None
        if result is None or not np.allclose(getattr(result, "point", (np.nan, np.nan)), (pin.x, pin.y)):
            self.details.setHtml(f"<p><b>{html.escape(pin.label)}</b>: reading…</p>")
            return
        def table(rows) -> str:
            return "".join(f"<tr><td style='padding-right:10px; color:#444'>{html.escape(name)}</td>"
                           f"<td>{html.escape(value)}</td></tr>" for name, value in rows)

        # Where the point is and its type first, then what the trade reads there, then the equation's details.
        rows = probe_rows(result, self._variables(), self.document.domain)
        body = f"<p><b>{html.escape(pin.label)}</b></p><table>{table(rows[:4])}</table>"
        trade = self.document.equation.trade
        readout = self.trades[index] if index < len(self.trades) else None
        if trade and readout is not None:
            kinds = ", ".join(_TRADE_TITLES.get(kind, kind) for kind in trade)
            body += (f"<p style='margin-top:6px'><b>Trade quantities</b> <span style='color:#555'>({kinds})"
                     f"</span></p><table>{table(trade_rows(readout, trade, self._variables()))}</table>"
                     "<p style='margin-top:6px'><b>Equation at the point</b></p>")
        body += f"<table>{table(rows[4:])}</table>"
        self.details.setHtml(body)

    # -- actions --------------------------------------------------------------------------------------------
    def _edited(self, item: QTableWidgetItem) -> None:
        if self._updating:
            return
        row, column = item.row(), item.column()
        pins = self.document.project.pins
        if not 0 <= row < len(pins):
            return
        if column == 0:
            self.document.relabel_pin(row, item.text().strip())
            return
        try:
            value = float(item.text())
            if not math.isfinite(value):
                raise ValueError
        except ValueError:
            self.refresh()
            return
        x, y = (value, pins[row].y) if column == 1 else (pins[row].x, value)
        self.document.move_pin(row, x, y)

    def trace_selected(self) -> bool:
        index = self.selected_index()
        pins = self.document.project.pins
        if not 0 <= index < len(pins):
            return False
        pin = pins[index]
        return self.document.add_seed(Seed(start=(pin.x, pin.y), label=f"through {pin.label}"))

    def delete_selected(self) -> bool:
        index = self.selected_index()
        if not 0 <= index < len(self.document.project.pins):
            return False
        return self.document.remove_pin(index)

    def copy_text(self) -> str:
        text = pins_as_text(self.document.project.pins, self.results, self._variables(), self.trades,
                            self.document.equation.trade, self.document.domain)
        QGuiApplication.clipboard().setText(text)
        return text
