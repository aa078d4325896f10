"""The lower-order terms d, e, f in the equation panel: checked as typed, applied when settled as one undo step
each, shown in the rendered equation, saved with the study, and never recomputing the map."""

from __future__ import annotations

from PySide6.QtCore import Qt

from core.project.io import load_project
from gui.settled_edits import unapplied_text
from tests.ceilings import HANG_CEILING_S
from tests.gui.conftest import hump_project


def _type(qtbot, edit, text: str, *, enter: bool = True) -> None:
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClick(edit, Qt.Key.Key_Delete)
    qtbot.keyClicks(edit, text)
    if enter:
        qtbot.keyClick(edit, Qt.Key.Key_Return)


def test_a_typed_term_is_checked_applied_once_settled_and_shown_without_recomputing(make_window, qtbot):
    window = make_window(hump_project(), synchronous=False)
    panel, document = window.equation_panel, window.document
    assert [panel.lower_order_edits[k].text() for k in "def"] == ["", "", ""]
    assert "+ (lower order) = 0" in panel.rendered.text()
    started = []
    window.runner.started.connect(lambda channel, number, label: started.append(channel))
    steps = document.undo_stack.count()

    edit, error = panel.lower_order_edits["d"], panel.lower_order_errors["d"]
    _type(qtbot, edit, "M_inf*(1 + q)", enter=False)
    assert error.isVisibleTo(window) and error.text() == "column 12: unknown name 'q'"
    assert "border: 2px solid" in edit.styleSheet()
    qtbot.keyClick(edit, Qt.Key.Key_Return)                    # settles with an error: held back and said so
    assert document.equation.lower_order == {}
    assert document.unapplied == {"lower_order.d": "column 12: unknown name 'q'"}
    assert window.unapplied_note.text() == unapplied_text(document.unapplied)
    assert "lower-order term d" in window.unapplied_note.text()

    with qtbot.waitSignal(document.lower_order_changed):
        _type(qtbot, edit, "2*M")
    assert document.equation.lower_order == {"d": "2*M"} and document.unapplied == {}
    assert not error.isVisibleTo(window) and edit.styleSheet() == ""
    assert document.undo_stack.count() == steps + 1 and document.undo_stack.undoText() == "Edit lower-order term d"
    with qtbot.waitSignal(document.lower_order_changed):
        _type(qtbot, panel.lower_order_edits["f"], "-1")
    assert document.equation.lower_order == {"d": "2*M", "f": "-1"}
    assert document.undo_stack.count() == steps + 2
    rendered = panel.rendered.text()
    assert "(lower order)" not in rendered
    assert "+ 2&#8201;<i>M</i>&#8201;<i>u</i><sub>x</sub> &minus; <i>u</i> = 0" in rendered

    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert started == []                                       # no map, lines, field or probe job at all

    with qtbot.waitSignal(document.lower_order_changed):
        document.undo_stack.undo()
    assert panel.lower_order_edits["f"].text() == "" and document.equation.lower_order == {"d": "2*M"}
    with qtbot.waitSignal(document.lower_order_changed):
        _type(qtbot, edit, "")                                 # an empty field states no term
    assert document.equation.lower_order == {}
    assert "+ (lower order) = 0" in panel.rendered.text()
    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S) and started == []


def test_terms_may_use_definitions_parameters_and_variables_and_are_saved(make_window, qtbot, tmp_path):
    window = make_window(hump_project())
    panel, document = window.equation_panel, window.document
    with qtbot.waitSignal(document.lower_order_changed):
        _type(qtbot, panel.lower_order_edits["e"], "x*M_inf - y")
    assert document.equation.lower_order == {"e": "x*M_inf - y"}
    assert "<i>u</i><sub>y</sub> = 0" in panel.rendered.text()
    path = tmp_path / "lower.mixtype.json"
    window.save_to(path)
    assert load_project(path).equation("hump flow").lower_order == {"e": "x*M_inf - y"}
    with qtbot.waitSignal(document.equation_changed):       # another equation shows its own (empty) terms
        document.duplicate_equation()
    assert panel.lower_order_edits["e"].text() == "x*M_inf - y"
    with qtbot.waitSignal(document.equation_changed):
        document.undo_stack.undo()
    with qtbot.waitSignal(document.lower_order_changed):
        document.undo_stack.undo()
    assert panel.lower_order_edits["e"].text() == "" and document.equation.lower_order == {}
