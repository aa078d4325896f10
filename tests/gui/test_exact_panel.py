"""The exact analysis panel: analysed in the background a pause after the equation changes, stale results dropped,
every item rendered with a Copy button whose text pastes back into a coefficient, Cancel, lower-order terms.

Tricomi's equation y u_xx + u_yy = 0: hyperbolic for y < 0 with the characteristic invariants
x -+ (2/3)(-y)^(3/2) (L. Bers, "Mathematical Aspects of Subsonic and Transonic Gas Dynamics", 1958; from memory).
"""

from __future__ import annotations

from dataclasses import replace

import pytest
import sympy
from PySide6.QtWidgets import QApplication

from core.equations.parser import parse_expression
from gui.computation_log import CANCELLED, DONE
from gui.panels.exact import CHANNEL, DEBOUNCE_MS
from tests.ceilings import HANG_CEILING_S
from tests.gui.conftest import hump_project, tricomi_project
from tests.gui.test_cauchy_panel import string_project


def _analysed(window, qtbot) -> None:
    """Show the panel and wait for its analysis of the study as it is now (none is made while it is hidden)."""
    panel = window.exact_panel
    if panel.inputs == panel.current_inputs():
        return
    with qtbot.waitSignal(panel.shown, timeout=HANG_CEILING_S * 1000):
        window.exact_dock.raise_()
        panel.flush()


def test_tricomi_is_shown_in_mathematics_with_copyable_formula_text(make_window, qtbot):
    window = make_window(tricomi_project())
    _analysed(window, qtbot)
    panel = window.exact_panel
    assert panel.status.text() == "“Tricomi”: hyperbolic, elliptic, parabolic"
    buttons = panel.rows.copy_buttons
    assert {"Discriminant: D = b² − 4ac =", "Type changes: across", "Zones: hyperbolic where",
            "Characteristics: family 1: constant along it", "Canonical forms: hyperbolic canonical form"} <= set(buttons)
    buttons["Zones: hyperbolic where"].click()
    assert QApplication.clipboard().text() == "y < 0"
    x, y = sympy.symbols("x y", real=True)
    for family, sign in ((1, -1), (2, 1)):
        buttons[f"Characteristics: family {family}: constant along it"].click()
        copied = QApplication.clipboard().text()
        assert panel.rows.copied == copied
        # pasted into a coefficient, the text is accepted, and it is the published invariant
        assert window.document.check_equation(replace(window.document.equation, b=copied)) is None
        value = parse_expression(copied, {"x": x, "y": y}).value
        assert float(value.subs({x: 0.3, y: -0.7})) == pytest.approx(0.3 + sign * 2 / 3 * 0.7 ** 1.5, rel=1e-14)
    labels = [label.text() for label in panel.rows.findChildren(type(panel.status))]
    assert "<i>x</i> &minus; 2&#8201;(&minus;<i>y</i>)<sup>3/2</sup>/3" in "".join(labels)
    assert "<i>y</i> = 0" in labels                       # the parabolic zone |y| <= 0 reads y = 0
    entry = [e for e in window.computation_log.entries if e.what == "Exact analysis"][-1]
    assert entry.outcome == DONE and entry.detail == "3 zones, 2 invariants, 2 canonical forms"


def test_a_hidden_panel_waits_until_it_is_shown(make_window, qtbot):
    window = make_window(tricomi_project(21))
    panel = window.exact_panel
    started = []
    window.runner.started.connect(lambda channel, number, label: started.append(channel))
    qtbot.wait(2 * DEBOUNCE_MS)                         # the pause after opening ends while the tab is hidden
    assert not panel.seen and CHANNEL not in started and panel.analysis is None
    assert panel.visibleRegion().isEmpty()              # a tab behind the pins
    with qtbot.waitSignal(panel.shown, timeout=HANG_CEILING_S * 1000):
        window.exact_dock.raise_()                      # brought to the front: analysed at once
    assert started == [CHANNEL] and panel.inputs == panel.current_inputs()


def test_changes_are_debounced_and_stale_results_dropped(make_window, qtbot):
    window = make_window(tricomi_project(21), synchronous=False)
    panel, document = window.exact_panel, window.document
    window.exact_dock.raise_()                          # the first analysis, asked when the tab is shown
    assert window.runner.wait_idle(HANG_CEILING_S)
    started, shown = [], []
    window.runner.started.connect(lambda channel, number, label: started.append(channel))
    panel.shown.connect(shown.append)
    document.set_coefficient("a", "x")
    document.set_coefficient("a", "x*y")
    assert started.count(CHANNEL) == 0 and panel._timer.isActive()     # waiting for the pause
    first = panel.request()                             # the pause ends: one analysis of a = x*y
    document.set_coefficient("a", "-x")                 # changed while it runs
    second = panel.request()
    assert started.count(CHANNEL) == 2 and first != second
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert len(shown) == 1 and panel.inputs.equation.a == "-x"       # the result for x*y never showed
    assert panel.rows.copy_buttons["Discriminant: D = b² − 4ac ="].toolTip() == "Copy as formula text: 4*x"


def test_lower_order_terms_reach_the_canonical_form(make_window, qtbot):
    window = make_window(string_project())
    _analysed(window, qtbot)
    panel = window.exact_panel
    assert panel.texts["canonical"][0]["form"] == "u_xi_eta = 0"
    window.document.set_lower_order("f", "-1")
    _analysed(window, qtbot)
    assert panel.texts["canonical"][0]["form"] == "u_xi_eta + u*v**2/4 = 0"
    panel.rows.copy_buttons["Canonical forms: hyperbolic canonical form"].click()
    assert QApplication.clipboard().text() == "u_xi_eta + u*v**2/4 = 0"


def test_cancel_stops_a_long_analysis(make_window, qtbot):
    # the hump's D holds exp(-(x^2 + 4y^2)): sympy's steps run to the analysis' deadline
    window = make_window(hump_project(31, 21), synchronous=False)
    panel = window.exact_panel
    number = panel.request()
    assert number and panel.cancel_button.isEnabled() and panel.progress.isVisibleTo(window)
    panel.cancel_button.click()
    assert window.runner.wait_for(number, HANG_CEILING_S)
    assert not panel.progress.isVisibleTo(window) and not panel.cancel_button.isEnabled()
    assert panel.status.text().startswith("Cancelled;")
    entry = [e for e in window.computation_log.entries if e.what == "Exact analysis"][-1]
    assert entry.outcome == CANCELLED
