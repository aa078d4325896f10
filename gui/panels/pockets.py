"""The hyperbolic pockets of the current map: a table of their areas, centres and peaks.

A pocket is a connected region of hyperbolic grid nodes (a supersonic zone over a wing, a supercritical reach
of a river, the depth band where internal waves propagate). core.analysis.pockets measures them in the background after
each map; this panel lists them, largest first, and asks the map to centre on and highlight the one clicked.
Areas are in (first variable's unit) × (second variable's unit); positions in the equation's length units.

With the certified layer on, a second table lists the certified pockets (core.certify.regions): groups of cells
that may hold a type, with their area bounds, bounding box, whether they are proven to exist and whether the
sampled map missed them.
"""

from __future__ import annotations

import math

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QLabel,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from core.results.readable import point_without_noise
from gui.document import Document

__all__ = ["PocketsPanel", "certified_pocket_row", "pocket_row"]


def _number(value, digits: int = 4) -> str:
    """``value`` to ``digits`` significant digits."""
    if value is None or not math.isfinite(float(value)):
        return "—"
    return f"{float(value) + 0.0:.{digits}g}"


def pocket_row(pocket, domain=None) -> tuple[str, ...]:
    """The table cells of one core.analysis.pockets.Pocket: number, area, nodes, centroid, peak, peak at, edge;
    coordinates within rounding noise of 0 (against ``domain``, core.results.readable) read 0."""
    cx, cy = point_without_noise(pocket.centroid, domain)
    if pocket.peak is None:
        peak, where = "—", "—"
    else:
        peak = _number(pocket.peak)
        px, py = point_without_noise(pocket.peak_at, domain)
        where = f"({_number(px)}, {_number(py)})"
    return (str(pocket.label), _number(pocket.area), str(pocket.node_count), f"({_number(cx)}, {_number(cy)})",
            peak, where, "yes" if pocket.touches_boundary else "no")


def certified_pocket_row(pocket) -> tuple[str, ...]:
    """The table cells of one core.certify.regions.CertifiedPocket: type, area bounds, x and y ranges, proven,
    missed by the grid."""
    x0, x1, y0, y1 = pocket.bbox
    missed = "—" if pocket.missed_by_grid is None else ("yes" if pocket.missed_by_grid else "no")
    return (pocket.type, f"{_number(pocket.area[0], 6)} .. {_number(pocket.area[1], 6)}",
            f"[{_number(x0, 6)}, {_number(x1, 6)}]", f"[{_number(y0, 6)}, {_number(y1, 6)}]",
            "proven" if pocket.proven else "possible", missed)


class PocketsPanel(QWidget):
    """Lists a PocketReport (gui.analysis); emits ``pocket_chosen`` with the pocket clicked (None: none)."""

    pocket_chosen = Signal(object)   # core.analysis.pockets.Pocket or None

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.report = None
        purpose = QLabel("Connected hyperbolic regions of the map (supersonic pockets, supercritical reaches, "
                         "zones where waves propagate), largest first. Click a row to centre the map on it.")
        purpose.setWordWrap(True)
        purpose.setObjectName("panelPurpose")
        self.summary = QLabel("No map yet.")
        self.summary.setObjectName("pocketSummary")
        self.summary.setWordWrap(True)

        self.table = QTableWidget(0, 7)
        self.table.setObjectName("pocketTable")
        self.table.verticalHeader().setVisible(False)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.table.itemSelectionChanged.connect(self._selected)
        self.table.setMinimumHeight(60)

        self.certified = None
        self.certified_summary = QLabel("")
        self.certified_summary.setObjectName("certifiedPocketSummary")
        self.certified_summary.setWordWrap(True)
        self.certified_table = QTableWidget(0, 6)
        self.certified_table.setObjectName("certifiedPocketTable")
        self.certified_table.verticalHeader().setVisible(False)
        self.certified_table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.certified_table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.certified_table.setMinimumHeight(60)
        for widget in (self.certified_summary, self.certified_table):
            widget.setVisible(False)

        layout = QVBoxLayout(self)
        layout.addWidget(purpose)
        layout.addWidget(self.summary)
        layout.addWidget(self.table, 1)
        layout.addWidget(self.certified_summary)
        layout.addWidget(self.certified_table, 1)
        document.equation_changed.connect(self._label_columns)
        self._label_columns()

    # -- display --------------------------------------------------------------------------------------------
    def _label_columns(self, quantity: str | None = None) -> None:
        first, second = self.document.equation.variables
        quantity = quantity or self.document.equation.peak_quantity or ""
        peak = f"peak {quantity}" if quantity else "peak"
        headers = ["#", f"area ({first} unit × {second} unit)", "nodes", f"centroid ({first}, {second})", peak,
                   "peak at", "reaches edge"]
        tips = ["Pocket number, largest area first",
                f"Area of the pocket's grid nodes (trapezoid weights), in {first} units times {second} units",
                "Grid nodes in the pocket: few nodes mean the pocket is barely resolved; refine the grid",
                "Area-weighted centre of the pocket, in the equation's length units",
                (f"Largest value of the definition {quantity} on the pocket's nodes, in {quantity}'s own units"
                 if quantity else "The equation names no peak quantity"),
                "The node where the peak is reached",
                "Whether the pocket reaches the edge of the domain (it may continue outside)"]
        self.table.setHorizontalHeaderLabels(headers)
        for column, tip in enumerate(tips):
            self.table.horizontalHeaderItem(column).setToolTip(tip)
        certified = [("type", "The type the pocket's cells may hold"),
                     (f"area ({first} unit × {second} unit)", "Proven area .. at most (proven plus undecided cells)"),
                     (f"{first} range", "Bounding box of the pocket's cells along the first variable"),
                     (f"{second} range", "Bounding box of the pocket's cells along the second variable"),
                     ("exists", "proven: a cell surely holds the type; possible: only undecided cells may"),
                     ("missed by the grid", "yes: no grid node of the sampled map has this type inside the box")]
        self.certified_table.setHorizontalHeaderLabels([header for header, _ in certified])
        for column, (_, tip) in enumerate(certified):
            self.certified_table.horizontalHeaderItem(column).setToolTip(tip)

    def mark_stale(self, *args) -> None:
        """A new map arrived: the listed pockets are about to be replaced."""
        self.summary.setText("Measuring the pockets of the new map…")

    def set_report(self, report) -> None:
        """Show a gui.analysis.PocketReport (None clears the table)."""
        self.report = report
        self.table.blockSignals(True)
        try:
            pockets = () if report is None else report.pockets
            self._label_columns(None if report is None else report.quantity)
            self.table.clearSelection()
            self.table.setRowCount(len(pockets))
            for row, pocket in enumerate(pockets):
                for column, text in enumerate(pocket_row(pocket, report.type_map.domain)):
                    item = QTableWidgetItem(text)
                    if column in (0, 1, 2, 4):
                        item.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
                    self.table.setItem(row, column, item)
        finally:
            self.table.blockSignals(False)
        self.summary.setText(self._summary_text(report))
        self.pocket_chosen.emit(None)

    def set_certified(self, certified) -> None:
        """Show the pockets of a core.certify.refinement.CertifiedMap (None hides the certified section)."""
        self.certified = certified
        # the pockets the grid missed first: they are what the certified map adds
        pockets = () if certified is None else tuple(sorted(certified.pockets, key=lambda p: not p.missed_by_grid))
        self.certified_table.setRowCount(len(pockets))
        for row, pocket in enumerate(pockets):
            for column, text in enumerate(certified_pocket_row(pocket)):
                self.certified_table.setItem(row, column, QTableWidgetItem(text))
        for widget in (self.certified_summary, self.certified_table):
            widget.setVisible(certified is not None)
        if certified is not None:
            first, second = self.document.equation.variables
            missed = sum(bool(pocket.missed_by_grid) for pocket in pockets)
            self.certified_summary.setText(
                f"Certified pockets: {len(pockets)} ({missed} missed by the grid, ringed on the map); undecided "
                f"area {_number(certified.undecided_area)} ({first} unit × {second} unit)"
                + ("; the cell budget ran out." if certified.budget_reached else "."))

    def _summary_text(self, report) -> str:
        if report is None:
            return "No map yet."
        pockets = report.pockets
        if not pockets:
            return "No hyperbolic pocket on this map."
        first, second = self.document.equation.variables
        total = sum(p.area for p in pockets)
        share = 100.0 * float(report.type_map.fractions.get("hyperbolic", math.nan))
        noun = "pocket" if len(pockets) == 1 else "pockets"
        return (f"{len(pockets)} {noun}, total area {_number(total)} ({first} unit × {second} unit); "
                f"{share:.1f} % of the grid nodes are hyperbolic.")

    def selected_pocket(self):
        rows = self.table.selectionModel().selectedRows()
        if not rows or self.report is None or not 0 <= rows[0].row() < len(self.report.pockets):
            return None
        return self.report.pockets[rows[0].row()]

    def select(self, row: int) -> None:
        if 0 <= row < self.table.rowCount():
            self.table.selectRow(row)

    def _selected(self) -> None:
        self.pocket_chosen.emit(self.selected_pocket())
