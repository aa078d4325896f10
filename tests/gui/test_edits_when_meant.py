"""Nothing changes unless the user means it: real wheel, key and focus events on the window.

The wheel scrolls a panel past its sliders, spin boxes and combo boxes unless one has focus; typed formulas
reach the study only when they settle (a pause, Enter, leaving the field) and compile; Delete and Copy act on
pins only from the pins panel or the map; a merged undo step is named by its last value.
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import QPoint, QPointF, Qt, QTimer
from PySide6.QtGui import QGuiApplication, QWheelEvent
from PySide6.QtWidgets import (
    QAbstractItemView,
    QAbstractSlider,
    QAbstractSpinBox,
    QApplication,
    QComboBox,
    QLineEdit,
    QScrollArea,
    QScrollBar,
    QWidget,
)

from core.domain import Domain
from core.equations.equation import Equation, Parameter
from core.project.model import new_project
from gui.settled_edits import SETTLE_MS, unapplied_text
from gui.widgets import STEADY_WIDGETS
from tests.ceilings import HANG_CEILING_MS
from tests.gui.conftest import hump_project


def flow_project(m_inf: float = 0.75):
    """A small transonic study whose coefficient a is typed from definitions u and c2 (common practice, no
    source: a = c^2 - u^2 for the steady potential equation along x)."""
    equation = Equation(a="1 - M**2", b="0", c="1",
                        definitions={"u": "M_inf*(1 + 0.35*exp(-(x**2 + 4*y**2)))", "c2": "1",
                                     "M": "u/sqrt(c2)"},
                        parameters={"M_inf": Parameter(m_inf, 0.3, 1.3)}, name="flow")
    return new_project(equation, Domain(-3.0, 3.0, -2.0, 2.0, 61, 41, name="near field"))


def _wheel(widget: QWidget, notches: int = -1) -> QWheelEvent:
    """Send a mouse-wheel event of ``notches`` (negative: towards the user) at the centre of ``widget``."""
    centre = QPointF(widget.rect().center())
    event = QWheelEvent(centre, QPointF(widget.mapToGlobal(centre.toPoint())), QPoint(0, 0),
                        QPoint(0, 120 * notches), Qt.MouseButton.NoButton, Qt.KeyboardModifier.NoModifier,
                        Qt.ScrollPhase.NoScrollPhase, False)
    QApplication.sendEvent(widget, event)
    return event


def _focus(qtbot, widget: QWidget) -> None:
    widget.setFocus(Qt.FocusReason.TabFocusReason)
    qtbot.waitUntil(widget.hasFocus, timeout=HANG_CEILING_MS)


def _scroll_area_of(widget: QWidget) -> QScrollArea:
    parent = widget.parentWidget()
    while parent is not None and not isinstance(parent, QScrollArea):
        parent = parent.parentWidget()
    assert parent is not None
    return parent


class _Changes:
    """Counts the document's change signals from the moment it is made."""

    def __init__(self, document) -> None:
        self.seen: list[str] = []
        for name in ("equation_changed", "parameters_changed", "domain_changed", "pins_changed"):
            getattr(document, name).connect(lambda name=name: self.seen.append(name))


# -- the wheel --------------------------------------------------------------------------------------------------

def test_every_value_widget_of_the_window_needs_focus_for_the_wheel(make_window):
    window = make_window(hump_project(41, 31))
    widgets = [w for kind in (QAbstractSlider, QAbstractSpinBox, QComboBox) for w in window.findChildren(kind)
               if not isinstance(w, QScrollBar)]
    assert len(widgets) >= 6        # the slider, node counts, seed count, bounces, two choosers
    assert [w.objectName() or type(w).__name__ for w in widgets if not isinstance(w, STEADY_WIDGETS)] == []
    assert all(w.focusPolicy() == Qt.FocusPolicy.StrongFocus for w in widgets)


def test_wheel_over_an_unfocused_slider_scrolls_the_panel(make_window, qtbot):
    window = make_window(hump_project(41, 31))
    window.resize(1300, 480)                                 # the equation panel must scroll
    slider = window.equation_panel.sliders["M_inf"]
    scroll_bar = _scroll_area_of(window.equation_panel).verticalScrollBar()
    qtbot.waitUntil(lambda: scroll_bar.maximum() > 0, timeout=HANG_CEILING_MS)
    scroll_bar.setValue(0)
    window.pins_panel.table.setFocus()
    assert not slider.hasFocus()
    changes, map_job = _Changes(window.document), window.runner.latest("map")
    position = slider.value()
    for _ in range(9):
        _wheel(slider)
    window.analysis.flush()
    assert slider.value() == position
    assert window.document.equation.parameters["M_inf"].value == 0.8
    assert window.document.undo_stack.count() == 0 and changes.seen == []
    assert window.runner.latest("map") == map_job                          # no recompute was asked for
    assert scroll_bar.value() > 0                                          # the panel scrolled instead

    _focus(qtbot, slider)
    for _ in range(3):
        _wheel(slider)
    window.analysis.flush()
    assert slider.value() != position
    moved = window.document.equation.parameters["M_inf"].value
    assert moved != 0.8 and window.document.undo_stack.count() == 1       # the visit's steps are one undo step
    assert window.document.undo_stack.undoText() == f"Set M_inf = {moved:.6g}"
    assert window.runner.latest("map") > map_job
    _focus(qtbot, window.pins_panel.table)
    _focus(qtbot, slider)
    qtbot.keyClick(slider, Qt.Key.Key_Right)                              # a new visit: a new step
    assert window.document.undo_stack.count() == 2


def test_wheel_over_unfocused_spin_and_combo_boxes_changes_nothing(make_window, qtbot):
    window = make_window(hump_project(41, 31))
    window.document.duplicate_equation()
    window.document.undo_stack.clear()
    nodes, chooser = window.domain_panel.nodes["nx"], window.equation_panel.equation_choice
    bounces = window.layers_panel.bounces
    window.pins_panel.table.setFocus()
    changes = _Changes(window.document)
    for widget in (nodes, chooser, bounces):
        _wheel(widget, 1)
        _wheel(widget, -1)
    assert (nodes.value(), chooser.currentIndex(), bounces.value()) == (41, 1, window.document.bounces)
    assert window.document.undo_stack.count() == 0 and changes.seen == []
    _focus(qtbot, nodes)
    _wheel(nodes, 1)
    assert nodes.value() == 42 and window.document.domain.nx == 42


# -- typed formulas -------------------------------------------------------------------------------------------

def test_a_formula_typed_key_by_key_applies_once_after_the_pause(make_window, qtbot):
    window = make_window(flow_project())
    edit = window.equation_panel.coefficient_edits["a"]
    settling = window.equation_panel.coefficient_box.settling["a"]
    assert settling.timer.interval() == SETTLE_MS
    _focus(qtbot, edit)
    edit.selectAll()
    changes, map_job = _Changes(window.document), window.runner.latest("map")
    for key in "c2 - u**2":                    # "c2", "c2 - u" and "c2 - u*" on the way; two of them compile
        qtbot.keyClicks(edit, key)
        assert window.document.equation.a == "1 - M**2" and changes.seen == []
        assert settling.timer.isActive()       # each key starts the pause again
    with qtbot.waitSignal(settling.settled, timeout=HANG_CEILING_MS):
        pass                                   # the pause ends
    window.analysis.flush()
    assert window.document.equation.a == "c2 - u**2"
    assert changes.seen == ["equation_changed"] and window.document.undo_stack.count() == 1
    assert window.document.undo_stack.undoText() == "Edit coefficient a"
    assert window.runner.latest("map") > map_job
    assert edit.hasFocus() and edit.text() == "c2 - u**2"


def test_a_formula_with_an_error_never_applies_and_the_map_says_so(make_window, qtbot):
    window = make_window(flow_project())
    edit = window.equation_panel.coefficient_edits["a"]
    settling = window.equation_panel.coefficient_box.settling["a"]
    note = window.unapplied_note
    before = window.analysis.type_map
    _focus(qtbot, edit)
    edit.selectAll()
    changes = _Changes(window.document)
    qtbot.keyClicks(edit, "c2 - u^2")          # "c2 - u" on the way compiles; the whole text does not
    assert changes.seen == []
    error = window.equation_panel.coefficient_errors["a"]
    assert error.isVisibleTo(window) and "'^' is not a power here" in error.text()
    assert not note.isVisibleTo(window)        # still typing: the map has nothing to explain yet
    with qtbot.waitSignal(settling.settled, timeout=HANG_CEILING_MS):
        pass
    window.analysis.flush()
    assert window.document.equation.a == "1 - M**2" and changes.seen == []
    assert window.analysis.type_map is before
    assert note.isVisibleTo(window) and note.text().startswith("Showing the last valid formula for a")
    assert window.document.unapplied == {"a": error.text()}
    qtbot.keyClick(edit, Qt.Key.Key_Return)    # Enter does not apply it either
    assert window.document.equation.a == "1 - M**2" and window.document.undo_stack.count() == 0
    for _ in range(2):
        qtbot.keyClick(edit, Qt.Key.Key_Backspace)
    qtbot.keyClicks(edit, "**2")
    qtbot.keyClick(edit, Qt.Key.Key_Return)    # Enter applies at once, without waiting for the pause
    assert window.document.equation.a == "c2 - u**2" and window.document.undo_stack.count() == 1
    assert changes.seen == ["equation_changed"]
    assert not note.isVisibleTo(window) and not error.isVisibleTo(window)
    assert not settling.timer.isActive()


def test_leaving_the_field_applies_and_an_edit_elsewhere_keeps_a_draft(make_window, qtbot):
    window = make_window(flow_project())
    edits = window.equation_panel.coefficient_edits
    _focus(qtbot, edits["a"])
    edits["a"].selectAll()
    qtbot.keyClicks(edits["a"], "c2 - u^2")
    _focus(qtbot, edits["c"])                  # leaving a settles it: refused, and noted
    assert window.document.unapplied.keys() == {"a"}
    edits["c"].selectAll()
    qtbot.keyClicks(edits["c"], "2")
    _focus(qtbot, edits["b"])                  # leaving c applies it; a keeps what was typed there
    assert window.document.equation.c == "2" and window.document.undo_stack.count() == 1
    assert edits["a"].text() == "c2 - u^2" and window.document.unapplied.keys() == {"a"}
    assert window.unapplied_note.isVisibleTo(window)
    window.undo_action.trigger()               # undo leaves a alone too; a new study clears it
    assert window.document.equation.c == "1" and edits["a"].text() == "c2 - u^2"
    window.document.replace_project(flow_project())
    assert edits["a"].text() == "1 - M**2" and window.document.unapplied == {}
    assert not window.unapplied_note.isVisibleTo(window)


def _open_cell_editor(qtbot, table, row: int, column: int) -> QLineEdit:
    table.setFocus()
    table.setCurrentCell(row, column)
    table.editItem(table.item(row, column))
    qtbot.waitUntil(lambda: isinstance(QApplication.focusWidget(), QLineEdit), timeout=HANG_CEILING_MS)
    editor = QApplication.focusWidget()
    assert editor.parentWidget() is table.viewport()
    return editor


def _enter(qtbot, table, editor: QLineEdit) -> None:
    """Press Enter in a cell editor; the table commits and closes it on its next event loop turn."""
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: table.state() != QAbstractItemView.State.EditingState, timeout=HANG_CEILING_MS)


def test_a_definition_cell_applies_after_the_pause_with_its_editor_still_open(make_window, qtbot):
    window = make_window(flow_project())
    table = window.equation_panel.definitions
    assert [table.item(row, 0).text() for row in range(3)] == ["u", "c2", "M"]
    editor = _open_cell_editor(qtbot, table, 1, 1)
    editor.selectAll()
    changes = _Changes(window.document)
    qtbot.keyClicks(editor, "1.2")
    assert changes.seen == [] and window.document.equation.definitions["c2"] == "1"
    timer = editor.findChild(QTimer, "settleTimer")
    assert timer.isActive() and timer.interval() == SETTLE_MS
    with qtbot.waitSignal(timer.timeout, timeout=HANG_CEILING_MS):
        pass
    assert window.document.equation.definitions["c2"] == "1.2"
    assert changes.seen == ["equation_changed"] and window.document.undo_stack.count() == 1
    assert QApplication.focusWidget() is editor and editor.text() == "1.2"   # still typing there
    qtbot.keyClicks(editor, "5*")             # "1.25*" has an error: it settles with Enter and is refused
    _enter(qtbot, table, editor)
    assert window.document.equation.definitions["c2"] == "1.2" and window.document.undo_stack.count() == 1
    assert window.document.unapplied.keys() == {"definitions"}
    assert window.unapplied_note.text().startswith("Showing the last valid definitions")
    assert window.equation_panel.definition_error.isVisibleTo(window)


def test_a_parameter_value_cell_applies_once_after_the_pause(make_window, qtbot):
    window = make_window(flow_project())
    table = window.equation_panel.parameters
    editor = _open_cell_editor(qtbot, table, 0, 1)
    editor.selectAll()
    changes = _Changes(window.document)
    qtbot.keyClicks(editor, "0.90")
    assert changes.seen == []
    with qtbot.waitSignal(editor.findChild(QTimer, "settleTimer").timeout, timeout=HANG_CEILING_MS):
        pass
    assert window.document.equation.parameters["M_inf"].value == 0.9
    assert changes.seen == ["parameters_changed"] and window.document.undo_stack.count() == 1
    assert editor.text() == "0.90"             # the cell being typed in is not rewritten as 0.9
    assert window.equation_panel.sliders["M_inf"].value() == 600


def test_a_domain_bound_applies_after_the_pause_and_an_error_is_noted(make_window, qtbot):
    window = make_window(flow_project())
    panel = window.domain_panel
    edit, settling = panel.bounds["xmax"], panel.settling["xmax"]
    _focus(qtbot, edit)
    edit.selectAll()
    changes = _Changes(window.document)
    qtbot.keyClicks(edit, "2.50")
    assert changes.seen == [] and window.document.domain.xmax == 3.0
    with qtbot.waitSignal(settling.settled, timeout=HANG_CEILING_MS):
        pass
    assert window.document.domain.xmax == 2.5 and changes.seen == ["domain_changed"]
    assert edit.text() == "2.50" and window.document.undo_stack.count() == 1
    qtbot.keyClicks(edit, "e")
    with qtbot.waitSignal(settling.settled, timeout=HANG_CEILING_MS):
        pass
    assert window.document.domain.xmax == 2.5 and window.document.undo_stack.count() == 1
    assert panel.error.isVisibleTo(window) and "'2.50e' is not a number" in panel.error.text()
    assert window.unapplied_note.text() == "Showing the last valid domain: the text typed there has an error."
    window.undo_action.trigger()               # the domain changes: its text replaces the draft
    assert window.document.domain.xmax == 3.0 and edit.text() == "3" and panel.bounds["xmin"].text() == "-3"
    assert window.document.unapplied == {} and not panel.error.isVisibleTo(window)


def test_the_note_lists_every_place_held_back():
    assert unapplied_text({}) == ""
    assert unapplied_text({"a": "x", "definitions": "y", "domain": "z"}).startswith(
        "Showing the last valid formula for a, definitions and domain: ")


# -- Delete and Copy ------------------------------------------------------------------------------------------

def test_delete_in_the_definitions_table_leaves_the_selected_pin(make_window, qtbot):
    window = make_window(flow_project())
    window.document.add_pin(0.0, 0.0)
    window.pins_panel.select(0)
    table = window.equation_panel.definitions
    table.setFocus()
    table.setCurrentCell(1, 1)
    qtbot.waitUntil(table.hasFocus, timeout=HANG_CEILING_MS)
    qtbot.keyClick(table, Qt.Key.Key_Delete)
    assert len(window.document.project.pins) == 1
    editor = _open_cell_editor(qtbot, table, 1, 1)   # Delete while editing the cell deletes a character
    editor.setCursorPosition(0)
    qtbot.keyClick(editor, Qt.Key.Key_Delete)
    qtbot.keyClicks(editor, "2")
    _enter(qtbot, table, editor)
    assert window.document.equation.definitions["c2"] == "2"
    assert len(window.document.project.pins) == 1 and window.pins_panel.selected_index() == 0


def test_delete_in_the_pins_panel_or_on_the_map_removes_the_selected_pin(make_window, qtbot):
    window = make_window(flow_project())
    for x in (-1.0, 0.0, 1.0):
        window.document.add_pin(x, 0.0)
    window.pins_panel.select(1)
    _focus(qtbot, window.pins_panel.table)
    qtbot.keyClick(window.pins_panel.table, Qt.Key.Key_Delete)
    assert [pin.x for pin in window.document.project.pins] == [-1.0, 1.0]
    window.pins_panel.select(0)
    view = window.map_view.plot_widget
    _focus(qtbot, view)
    qtbot.keyClick(view, Qt.Key.Key_Delete)
    assert [pin.x for pin in window.document.project.pins] == [1.0]


def test_copy_takes_pin_readouts_only_from_the_pins_panel(make_window, qtbot):
    window = make_window(flow_project())
    window.document.add_pin(0.0, 0.0, "crest")
    window.analysis.flush()
    clipboard = QGuiApplication.clipboard()
    edit = window.equation_panel.coefficient_edits["b"]
    _focus(qtbot, edit)
    edit.selectAll()
    clipboard.setText("")
    qtbot.keyClick(edit, Qt.Key.Key_C, Qt.KeyboardModifier.ControlModifier)
    assert clipboard.text() == "0"                          # the field's own selection
    _focus(qtbot, window.equation_panel.parameters)
    clipboard.setText("untouched")
    qtbot.keyClick(window.equation_panel.parameters, Qt.Key.Key_C, Qt.KeyboardModifier.ControlModifier)
    assert not clipboard.text().startswith("Pin crest")
    _focus(qtbot, window.pins_panel.table)
    qtbot.keyClick(window.pins_panel.table, Qt.Key.Key_C, Qt.KeyboardModifier.ControlModifier)
    assert clipboard.text().startswith("Pin crest")


# -- undo names -----------------------------------------------------------------------------------------------

def test_a_slider_drag_is_named_by_the_value_it_ends_at(make_window):
    window = make_window(flow_project(0.75))
    slider, stack = window.equation_panel.sliders["M_inf"], window.document.undo_stack
    assert slider.value() == 450                             # 0.3 + 1.0 * 450 / 1000
    slider.setSliderDown(True)
    for position in (462, 475, 488, 500):
        slider.setValue(position)
    slider.setSliderDown(False)
    assert window.document.equation.parameters["M_inf"].value == pytest.approx(0.8, abs=1e-15)
    assert stack.count() == 1 and stack.undoText() == "Set M_inf = 0.8"
    assert window.undo_action.text() == "&Undo Set M_inf = 0.8"
    window.undo_action.trigger()
    assert window.document.equation.parameters["M_inf"].value == 0.75
    assert stack.redoText() == "Set M_inf = 0.8" and window.redo_action.text() == "&Redo Set M_inf = 0.8"
    window.redo_action.trigger()
    assert window.document.equation.parameters["M_inf"].value == pytest.approx(0.8, abs=1e-15)
    assert stack.undoText() == "Set M_inf = 0.8"
