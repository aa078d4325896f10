"""The study's background data files: what each provides, over which region, and whether it is usable.

Each row is one data file (core.data.sources reads CSV, NumPy .npz, NetCDF and VTK/VTU): its format, the quantities
equations may use (renamed ones show their name in the file), the region it covers in the equation's
variables, and its status (ok / changed since saved / missing / cannot be used). Adding, removing, renaming a
quantity and accepting a changed file are undoable edits of the study; reading the files happens in the
background (gui.data_loading).
"""

from __future__ import annotations

import math
import os
from dataclasses import replace

from PySide6.QtCore import Signal
from PySide6.QtGui import QColor
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHBoxLayout,
    QHeaderView,
    QInputDialog,
    QLabel,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from core.equations.language import ExpressionError, check_name
from core.project.data_files import CHANGED, MISSING, OPENED, UNREADABLE, ProjectData, accept_changed_data
from gui.document import Document

__all__ = ["STATUS_TEXT", "DataPanel", "extent_text", "quantities_text"]

# by core.project.data_files state, and "loading" before the first load ends
STATUS_TEXT = {OPENED: "ok", CHANGED: "changed since saved", MISSING: "missing", UNREADABLE: "cannot be used",
               "loading": "loading…"}
_STATUS_COLOUR = {OPENED: "#007A5A", CHANGED: "#8A5A00", MISSING: "#B00020", UNREADABLE: "#B00020",
                  "loading": "#555555"}
_FORMAT_NAMES = {"csv": "CSV", "npz": "NumPy .npz", "netcdf": "NetCDF", "vtu": "VTK .vtu", "vtk": "VTK .vtk"}


def extent_text(dataset, variables: tuple[str, str]) -> str:
    """The region a data set covers, e.g. 'x −3 to 3, y 0 to 3' ('any' along a profile's free variable)."""
    if dataset is None:
        return "—"
    parts = []
    for name, low, high in ((variables[0], *dataset.extent[0:2]), (variables[1], *dataset.extent[2:4])):
        if not (math.isfinite(low) and math.isfinite(high)):
            parts.append(f"{name} any")
        else:
            parts.append(f"{name} {low:.4g} to {high:.4g}")
    return ", ".join(parts).replace("-", "−")


def quantities_text(status) -> str:
    """The quantities of one data file, with their name in the file when renamed and their unit if known."""
    dataset = status.dataset
    if dataset is None:
        names = ", ".join(status.quantities)
        return f"{names} (not read)" if names else "— (not read)"
    items = []
    for quantity in dataset.quantities:
        source = dataset.source_names.get(quantity, quantity)
        unit = dataset.units.get(quantity, "")
        text = quantity + (f" ← {source}" if source != quantity else "") + (f" [{unit}]" if unit else "")
        items.append(text)
    return ", ".join(items)


class DataPanel(QWidget):
    """Lists the study's data files with their load status; buttons edit the list through the document."""

    add_requested = Signal()
    reload_requested = Signal()

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.loaded: ProjectData | None = None
        self.statuses: tuple = ()       # core.project.data_files.DataSourceStatus, one per file
        purpose = QLabel("Data files whose quantities equations use by name (a velocity field, a depth, a "
                         "buoyancy profile), with first derivatives as diff(NAME, VARIABLE). Outside a file's "
                         "region its quantities are undefined (grey on the map).")
        purpose.setWordWrap(True)
        purpose.setObjectName("panelPurpose")
        self.table = QTableWidget(0, 5)
        self.table.setObjectName("dataTable")
        self.table.setHorizontalHeaderLabels(["file", "format", "quantities", "region", "status"])
        self.table.verticalHeader().setVisible(False)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(2, QHeaderView.ResizeMode.Stretch)
        self.table.setMinimumHeight(90)
        self.table.itemSelectionChanged.connect(self._show_details)
        self.details = QLabel("")
        self.details.setObjectName("dataDetails")
        self.details.setWordWrap(True)

        self.add_button = QPushButton("Add…")
        self.add_button.setToolTip("Add a data file (CSV, NumPy .npz, NetCDF, VTK/VTU) to the study")
        self.add_button.clicked.connect(self.add_requested)
        self.remove_button = QPushButton("Remove")
        self.remove_button.setToolTip("Remove the selected data file from the study (the file itself stays)")
        self.remove_button.clicked.connect(self.remove_selected)
        self.rename_button = QPushButton("Rename quantity…")
        self.rename_button.setToolTip("Give one of the selected file's quantities another name, e.g. to match "
                                      "a template or to avoid a clash with another file")
        self.rename_button.clicked.connect(self.rename_dialog)
        self.accept_button = QPushButton("Accept change")
        self.accept_button.setToolTip("Record the selected file as it is now (its new checksum is saved)")
        self.accept_button.clicked.connect(self.accept_selected)
        self.reload_button = QPushButton("Reload")
        self.reload_button.setToolTip("Read the data files again (files changed on disk are read anew)")
        self.reload_button.clicked.connect(self.reload_requested)
        buttons = QVBoxLayout()       # two rows, so that the panel fits a narrow side column
        for row_buttons in ((self.add_button, self.remove_button, self.reload_button),
                            (self.rename_button, self.accept_button)):
            row = QHBoxLayout()
            for button in row_buttons:
                row.addWidget(button)
            row.addStretch(1)
            buttons.addLayout(row)

        layout = QVBoxLayout(self)
        layout.addWidget(purpose)
        layout.addWidget(self.table, 1)
        layout.addLayout(buttons)
        layout.addWidget(self.details)
        document.data_sources_changed.connect(self.refresh)
        document.project_replaced.connect(self.refresh)
        self.refresh()

    # -- display --------------------------------------------------------------------------------------------
    def set_loaded(self, loaded: ProjectData | None) -> None:
        """The study's data as core opened them (gui.data_loading)."""
        self.loaded = loaded
        self.statuses = tuple(loaded.statuses) if loaded is not None else ()
        self.refresh()

    def _status_for(self, ref):
        return next((s for s in self.statuses if s.source == ref), None)

    def refresh(self) -> None:
        refs = self.document.project.data_sources
        variables = tuple(self.document.equation.variables)
        selected = self.selected_index()
        self.table.blockSignals(True)
        try:
            self.table.setRowCount(len(refs))
            for row, ref in enumerate(refs):
                status = self._status_for(ref)
                state = status.state if status is not None else "loading"
                dataset = status.dataset if status is not None else None
                fmt = dataset.format if dataset is not None else (ref.format or os.path.splitext(ref.path)[1][1:])
                cells = (os.path.basename(ref.path), _FORMAT_NAMES.get(fmt, fmt),
                         quantities_text(status) if status is not None else "…",
                         extent_text(dataset, variables), STATUS_TEXT[state])
                for column, text in enumerate(cells):
                    item = QTableWidgetItem(text)
                    item.setToolTip(ref.path if column == 0 else (status.reason if status and column == 4
                                                                   else text))
                    if column == 4:
                        item.setForeground(QColor(_STATUS_COLOUR[state]))
                    self.table.setItem(row, column, item)
        finally:
            self.table.blockSignals(False)
        if 0 <= selected < len(refs):
            self.table.selectRow(selected)
        elif refs:
            self.table.selectRow(0)
        self._show_details()

    def selected_index(self) -> int:
        rows = self.table.selectionModel().selectedRows() if self.table.selectionModel() else []
        return rows[0].row() if rows else -1

    def _show_details(self) -> None:
        refs = self.document.project.data_sources
        index = self.selected_index()
        has = 0 <= index < len(refs)
        status = self._status_for(refs[index]) if has else None
        self.remove_button.setEnabled(has)
        self.rename_button.setEnabled(status is not None and status.dataset is not None)
        self.accept_button.setEnabled(status is not None and status.state == CHANGED)
        self.reload_button.setEnabled(bool(refs))
        if not refs:
            self.details.setText("No data files: equations use formulas only.")
            return
        if not has:
            self.details.setText("")
            return
        lines = [f"File: {refs[index].path}"]
        if status is not None and status.reason:
            lines.append(status.reason)
        if status is not None and status.dataset is not None:
            dataset = status.dataset
            size = " × ".join(str(n) for n in dataset.size)
            what = {"grid": "grid nodes", "profile": "profile levels", "mesh": "points × triangles"}
            lines.append(f"{dataset.layout}: {size} {what.get(dataset.layout, '')}".rstrip())
            lines += list(dataset.notes)
        self.details.setText("\n".join(lines))

    # -- edits ----------------------------------------------------------------------------------------------
    def remove_selected(self) -> bool:
        index = self.selected_index()
        if not 0 <= index < len(self.document.project.data_sources):
            return False
        return self.document.remove_data_source(index)

    def accept_selected(self) -> bool:
        index = self.selected_index()
        refs = self.document.project.data_sources
        if not 0 <= index < len(refs):
            return False
        status = self._status_for(refs[index])
        if self.loaded is None or status is None or status.state != CHANGED:
            return False
        accepted = accept_changed_data(self.document.project, self.loaded, indices=(status.index,))
        return self.document.edit(accepted, f"Accept the changed data file {os.path.basename(refs[index].path)}")

    def ask_quantity_rename(self, quantities: tuple[str, ...]) -> tuple[str, str] | None:
        """Which quantity to rename and its new name (tests replace this method)."""
        old, ok = QInputDialog.getItem(self, "Rename a data quantity", "Quantity:", list(quantities), 0, False)
        if not ok or not old:
            return None
        new, ok = QInputDialog.getText(self, "Rename a data quantity", f"New name for {old}:", text=old)
        return (old, new.strip()) if ok and new.strip() else None

    def rename_dialog(self) -> bool:
        index = self.selected_index()
        refs = self.document.project.data_sources
        status = self._status_for(refs[index]) if 0 <= index < len(refs) else None
        if status is None or status.dataset is None:
            return False
        answer = self.ask_quantity_rename(status.dataset.quantities)
        return self.rename_quantity(index, *answer) if answer else False

    def rename_quantity(self, index: int, old: str, new: str) -> bool:
        """Give quantity ``old`` of data file ``index`` the name ``new`` (an undoable edit)."""
        refs = self.document.project.data_sources
        status = self._status_for(refs[index])
        if status is None or status.dataset is None or old not in status.dataset.quantities or old == new:
            return False
        try:
            check_name(new, what="quantity name")
        except ExpressionError as error:
            self.details.setText(f"Cannot rename {old}: {error}")
            return False
        variables = tuple(self.document.equation.variables)
        if new in variables or new in ("a", "b", "c"):
            self.details.setText(f"Cannot rename {old}: {new!r} is a variable or a coefficient")
            return False
        if new in status.dataset.quantities:
            self.details.setText(f"Cannot rename {old}: the file already provides {new!r}")
            return False
        names = {status.dataset.source_names[q]: (new if q == old else q) for q in status.dataset.quantities}
        try:
            ref = replace(refs[index], names=names)
        except ValueError as error:
            self.details.setText(f"Cannot rename {old}: {error}")
            return False
        return self.document.set_data_source(index, ref, f"Rename data quantity {old} to {new}")
