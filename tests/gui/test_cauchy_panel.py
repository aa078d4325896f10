"""The Cauchy panel: enabled only for constant coefficients (saying why not), data checked as typed and saved as
one undo step each, solved in the background (Cancel stops it), the solution rendered, copyable as formula text
and lent to the map's field layer, the selected pin's domain of dependence drawn, refusals as messages.

The study is a string, u_xx - u_tt / v^2 = 0 with v = 1, data on t = 0: u = f, u_t = g there. d'Alembert's
formula u = (f(x - t) + f(x + t))/2 + (1/2) * integral of g over [x - t, x + t] (standard; from memory) is the
reference.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication

from core.domain import Domain
from core.equations.equation import Equation, Parameter
from core.equations.parser import parse_expression
from core.project.io import load_project
from core.project.model import new_project
from gui.computation_log import DONE
from gui.panels.cauchy import CHANNEL, FIELD_CHANNEL
from tests.ceilings import HANG_CEILING_S
from tests.gui.conftest import hump_project

DATA = {"line": "t = 0", "u": "exp(-4*s**2)", "du": "sin(s)"}


def string_project(cauchy_data=None, *, c: str = "-1/v**2", nx: int = 61, ny: int = 21):
    equation = Equation(a="1", b="0", c=c, variables=("x", "t"), parameters={"v": Parameter(1.0, 0.5, 2.0)},
                        name="string", cauchy_data=dict(DATA if cauchy_data is None else cauchy_data))
    return new_project(equation, Domain(-3.0, 3.0, 0.0, 2.0, nx, ny, name="slab"))


def dalembert(x, t, v: float = 1.0):
    """u_xx = u_tt / v^2 with u = exp(-4 s^2), u_t = sin(s) on t = 0 (the normal (0, 1) is +t): waves of speed v,
    u = (f(x - vt) + f(x + vt))/2 + (1/(2v)) * integral of g over [x - vt, x + vt]."""
    def f(s):
        return np.exp(-4 * s ** 2)
    return (f(x - v * t) + f(x + v * t)) / 2 + (np.cos(x - v * t) - np.cos(x + v * t)) / (2 * v)


def _type(qtbot, edit, text: str, *, enter: bool = True) -> None:
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClick(edit, Qt.Key.Key_Delete)
    qtbot.keyClicks(edit, text)
    if enter:
        qtbot.keyClick(edit, Qt.Key.Key_Return)


def _formula_values(text: str, points) -> list[float]:
    x, t = sympy.symbols("x t", real=True)
    value = parse_expression(text, {"x": x, "t": t}).value
    return [float(value.subs({x: px, t: pt})) for px, pt in points]


def test_a_stated_problem_is_solved_in_the_background_and_shown(make_window, qtbot):
    window = make_window(string_project(), synchronous=False)
    panel = window.cauchy_panel
    started = []
    window.runner.started.connect(lambda channel, number, label: started.append(channel))
    with qtbot.waitSignal(panel.runs.solved, timeout=HANG_CEILING_S * 1000):
        panel.solve_button.click()
    assert started == [CHANNEL]
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert panel.status.text().startswith("Constant coefficients a = 1, b = 0, c = -1: hyperbolic")
    assert panel.heading.text().startswith("Hyperbolic: d'Alembert's solution")
    assert "general solution: <i>u</i> = F(" in panel.rendered.text() and "exp" in panel.rendered.text()
    points = [(0.5, 1.0), (-2.0, 0.3), (1.7, 1.9)]
    assert _formula_values(panel.formula.text(), points) == pytest.approx(
        [dalembert(*p) for p in points], rel=1e-13)
    assert panel.copy_button.isEnabled() and panel.copy_formula() == panel.formula.text()
    assert QApplication.clipboard().text() == panel.formula.text()
    assert not panel.refusal.isVisibleTo(window) and not panel.progress.isVisibleTo(window)
    assert window.field_layer.lent is None                   # the map keeps its types until asked
    entry = [e for e in window.computation_log.entries if e.what == "Cauchy problem"][-1]
    assert entry.outcome == DONE and entry.detail == "hyperbolic, in closed form" and entry.grid == "61 × 21 nodes"

    panel.show_field.setChecked(True)
    grid = window.field_layer.lent[0]
    xx, tt = np.meshgrid(grid.x, grid.y)
    assert grid.values.shape == (21, 61)
    assert np.allclose(grid.values, dalembert(xx, tt), rtol=1e-12, atol=1e-13)
    assert window.field_layer.colour_bar.axis.labelText == "u (Cauchy solution)"
    assert window.field_layer.image.isVisible()
    window.field_layer._hovered(0.5, 1.0)
    assert window.field_layer.readout.text() == f"u (Cauchy solution) = {dalembert(0.5, 1.0):.5g}"
    panel.show_field.setChecked(False)
    assert window.field_layer.lent is None and not window.field_layer.image.isVisible()


def test_the_selected_pins_domain_of_dependence_is_drawn(make_window, qtbot):
    window = make_window(string_project())
    panel, overlay = window.cauchy_panel, window.cauchy_overlay
    window.document.add_pin(0.5, 1.0)
    window.pins_panel.select(0)
    assert panel.sketch is not None and panel.sketch.feet == pytest.approx([(-0.5, 0.0), (1.5, 0.0)], abs=1e-15)
    assert panel.pin_text.text() == (f"At pin P1 (0.5, 1): u = {dalembert(0.5, 1.0):.10g}; it depends on the data "
                                     "between (-0.5, 0) and (1.5, 0).")
    family_1 = overlay.characteristics[1].getData()
    family_2 = overlay.characteristics[2].getData()
    assert np.allclose(np.column_stack(family_1), [(0.5, 1.0), (-0.5, 0.0)], atol=1e-15)
    assert np.allclose(np.column_stack(family_2), [(0.5, 1.0), (1.5, 0.0)], atol=1e-15)
    assert np.allclose(np.column_stack(overlay.data_segment.getData()), [(-0.5, 0.0), (1.5, 0.0)], atol=1e-15)
    assert np.allclose(np.column_stack(overlay.data_line.getData()), [(-3.0, 0.0), (3.0, 0.0)])
    window.document.move_pin(0, 0.0, 2.0)                    # a moved pin redraws
    assert np.allclose(np.column_stack(overlay.data_segment.getData()), [(-2.0, 0.0), (2.0, 0.0)], atol=1e-15)
    panel.show_dependence.setChecked(False)
    assert overlay.data_segment.getData()[0] is None or len(overlay.data_segment.getData()[0]) == 0
    assert overlay.data_line.getData()[0] is None or len(overlay.data_line.getData()[0]) == 0


def test_typed_data_are_checked_saved_one_step_each_and_solved_once_complete(make_window, qtbot, tmp_path):
    window = make_window(string_project({}))
    panel, document = window.cauchy_panel, window.document
    assert panel.heading.text() == "State the data line, u on the line, ∂u/∂n on the line to solve."
    steps = document.undo_stack.count()
    _type(qtbot, panel.edits["line"], "t**2 = 0", enter=False)
    assert panel.errors["line"].text() == "'t**2 = 0' is not a straight line (expected ALPHA*x + BETA*t = GAMMA with " \
                                          "numbers ALPHA, BETA, GAMMA)"
    qtbot.keyClick(panel.edits["line"], Qt.Key.Key_Return)
    assert document.equation.cauchy_data == {} and "cauchy.line" in document.unapplied
    _type(qtbot, panel.edits["line"], "t = 0")
    _type(qtbot, panel.edits["u"], "exp(-4*s**2) + x", enter=False)
    assert panel.errors["u"].text() == "use either s (along the line) or x and t, not both"
    _type(qtbot, panel.edits["u"], "exp(-4*s**2)")
    assert document.equation.cauchy_data == {"line": "t = 0", "u": "exp(-4*s**2)"} and document.unapplied == {}
    assert document.undo_stack.count() == steps + 2
    assert document.undo_stack.undoText() == "Edit Cauchy u on the data line"
    assert panel.runs.current is None
    with qtbot.waitSignal(panel.runs.solved):
        _type(qtbot, panel.edits["du"], "sin(s)")
        panel.flush()
    assert panel.runs.current is not None and panel.formula.text()
    with qtbot.waitSignal(panel.runs.solved) as cleared:
        document.undo_stack.undo()
        panel.flush()
    assert cleared.args == [None] and panel.formula.text() == "" and panel.edits["du"].text() == ""
    document.undo_stack.redo()
    panel.flush()
    path = tmp_path / "string.mixtype.json"
    window.save_to(path)
    assert load_project(path).equation("string").cauchy_data == DATA


def test_a_parameter_change_solves_again_and_lower_order_terms_do_not(make_window, qtbot):
    window = make_window(string_project())
    panel, document = window.cauchy_panel, window.document
    started = []
    window.runner.started.connect(lambda channel, number, label: started.append(channel))
    document.set_lower_order("f", "-1")
    panel.flush()
    assert CHANNEL not in started
    with qtbot.waitSignal(panel.runs.solved):
        document.set_parameter_value("v", 2.0)
        panel.flush()
    assert panel.status.text().startswith("Constant coefficients a = 1, b = 0, c = -1/4: hyperbolic")
    points = [(0.5, 1.0), (-1.0, 0.25)]
    assert _formula_values(panel.formula.text(), points) == pytest.approx(
        [dalembert(*p, v=2.0) for p in points], rel=1e-13)
    before = panel.runs.current.grid
    with qtbot.waitSignal(panel.runs.solved):
        document.set_domain(Domain(-1.0, 1.0, 0.0, 1.0, 11, 6, name="slab"))
    assert started[-1] == FIELD_CHANNEL and panel.runs.current.grid is not before
    assert panel.runs.current.grid.x[0] == -1.0 and panel.runs.current.grid.values.shape == (6, 11)


def test_varying_coefficients_disable_the_panel_saying_why(make_window):
    window = make_window(hump_project())
    panel = window.cauchy_panel
    assert panel.status.text() == ("Disabled: a = 1 - M**2 depends on x and y once the definitions are "
                                   "substituted: the Cauchy problem is solved here only for constant a, b, c.")
    assert not panel.edits["line"].isEnabled() and not panel.solve_button.isEnabled()
    assert panel.solve() == 0 and panel.runs.current is None


@pytest.mark.parametrize(("c", "line", "expected"), [
    ("1", "t = 0", ("Not solved: the equation is elliptic (b^2 - 4ac = -4): its Cauchy problem is ill-posed. "
                    "Hadamard's example")),
    ("-1", "x - t = 2", ("Not solved: the data line runs along the family-1 characteristic direction (dx, dy) = "
                         "(2, 2), slope dy/dx = 1")),
])
def test_refusals_are_messages_not_tracebacks(make_window, c, line, expected):
    window = make_window(string_project({**DATA, "line": line}, c=c))
    panel = window.cauchy_panel
    assert panel.refusal.isVisibleTo(window) and panel.refusal.text().startswith(expected)
    assert "Traceback" not in panel.refusal.text() and panel.runs.current is None and panel.formula.text() == ""


def test_cancel_stops_a_slow_integral(make_window, qtbot):
    # sympy finds no antiderivative of exp(cos(s)) and would work on it until its deadline
    window = make_window(string_project({"line": "t = 0", "u": "0"}), synchronous=False)
    panel = window.cauchy_panel
    cancelled = []
    window.runner.cancelled.connect(lambda channel, number: cancelled.append(channel))
    window.document.set_cauchy_data("du", "exp(cos(s))")
    panel.flush()                                             # complete: solved by itself
    number = window.runner.latest(CHANNEL)
    assert number and panel.cancel_button.isEnabled() and panel.progress.isVisibleTo(window)
    assert panel.progress.maximum() == 0                      # busy: sympy reports no progress
    qtbot.mouseClick(panel.cancel_button, Qt.MouseButton.LeftButton)
    assert window.runner.wait_for(number, HANG_CEILING_S)
    assert cancelled == [CHANNEL] and panel.runs.current is None
    assert not panel.progress.isVisibleTo(window) and not panel.cancel_button.isEnabled()
