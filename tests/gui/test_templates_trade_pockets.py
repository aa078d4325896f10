"""Templates added and undone, trade readouts at pins and under the mouse, and the hyperbolic pockets table."""

from __future__ import annotations

import math

import numpy as np
import pytest

from core.analysis.pockets import pocket_statistics
from core.equations.compiled import compile_equation
from core.equations.templates import load_template
from core.results.readouts import read_trade
from gui.panels.pins import trade_rows
from gui.panels.pockets import pocket_row
from gui.panels.template_dialog import TemplateChoice, TemplateDialog
from tests.gui.conftest import hump_project


def _cylinder_crest_mach(y: float, *, c0=340.3, gamma=1.4, m_inf=0.55, radius=1.0) -> float:
    """Local Mach number on the symmetry line x = 0 above a circular bump, by hand.

    Incompressible potential flow past a cylinder: u = U (1 + R^2/y^2) on x = 0 (closed form, common practice);
    isentropic sound speed c^2 = c0^2 - (gamma - 1)/2 q^2 and c_inf = c0 / sqrt(1 + (gamma - 1)/2 M_inf^2)
    (NACA Report 1135, 1953, the energy equation).
    """
    c_inf = c0 / math.sqrt(1 + (gamma - 1) / 2 * m_inf**2)
    speed = m_inf * c_inf * (1 + radius**2 / y**2)
    return speed / math.sqrt(c0**2 - (gamma - 1) / 2 * speed**2)


def test_template_is_added_as_one_undo_step_and_undone(make_window):
    window = make_window(hump_project(nx=61, ny=41))
    before = window.document.project
    chosen = []
    window.choose_template = lambda: chosen.append(1) or TemplateChoice("full_potential")
    window.template_action.trigger()
    assert chosen == [1]
    template = load_template("full_potential")
    project = window.document.project
    equation, domain = project.shown()
    assert len(project.equations) == 2 and project.shown_equation_index == 1
    assert equation.name == template.title
    assert equation.a == "c2 - u**2" and equation.trade == template.equation.trade
    assert (domain.xmin, domain.xmax, domain.ymin, domain.ymax) == (-3.0, 3.0, 0.0, 3.0)
    assert window.document.undo_stack.count() == 1
    assert window.equation_panel.equation_choice.currentText() == template.title
    window.analysis.flush()
    assert window.analysis.type_map.domain == domain

    # The same template again: a second equation with a fresh name, the region with the same bounds reused.
    assert window.add_template("full_potential")
    again = window.document.project
    assert [e.name for e in again.equations][-1] == f"{template.title} (2)"
    assert len(again.domains) == 2 and again.shown_domain_index == 1
    window.document.undo_stack.undo()
    window.document.undo_stack.undo()
    assert window.document.project == before
    window.analysis.flush()
    assert window.analysis.type_map.domain == before.shown()[1]


def test_template_dialog_lists_every_template_and_describes_it(qtbot):
    dialog = TemplateDialog(("u", "v"))
    qtbot.addWidget(dialog)
    titles = [dialog.listing.item(i).text() for i in range(dialog.listing.count())]
    assert "Full potential flow with an isentropic sound speed" in titles and len(titles) >= 6
    dialog.listing.setCurrentRow(titles.index("Full potential flow with an isentropic sound speed"))
    text = dialog.description.toPlainText()
    assert "Mach angle" in text and "m/s" in text and "loaded" in text
    assert dialog.choice() == TemplateChoice("full_potential", use_data=True)
    dialog.use_data.setChecked(False)
    assert dialog.choice().use_data is False
    dialog.listing.setCurrentRow(titles.index("Tricomi model equation"))
    assert dialog.choice() == TemplateChoice("tricomi", use_data=False)


def test_pin_shows_mach_angle_at_a_supersonic_point(make_window):
    window = make_window(hump_project(nx=61, ny=41))
    window.add_template("full_potential")
    window.document.add_pin(0.0, 1.05, "crest")
    window.analysis.flush()
    expected_mach = _cylinder_crest_mach(1.05)
    assert expected_mach > 1.0
    readout = window.analysis.trade_readouts[0]
    assert readout["mach"] == pytest.approx(expected_mach, rel=1e-12)
    # Mach angle mu = asin(1/M) (NACA Report 1135, 1953).
    assert readout["mach_angle_deg"] == pytest.approx(math.degrees(math.asin(1 / expected_mach)), rel=1e-12)
    equation = window.document.equation
    core_readout = read_trade(equation.trade, compile_equation(equation), 0.0, 1.05, parameters=equation.parameter_values()).values
    assert readout == core_readout
    text = window.pins_panel.details.toPlainText()
    assert f"Mach angle μ = asin(1/M)\n{math.degrees(math.asin(1 / expected_mach)):.5g}°\n" in text
    assert f"local Mach number M\n{expected_mach:.5g} (dimensionless)\n" in text
    assert "flow speed |V|\n" in text and "(unit of u, v)" in text
    assert "characteristic θ + μ" in text and "from the x axis" in text
    copied = window.pins_panel.copy_text()
    assert "Mach angle μ = asin(1/M):" in copied

    # A subsonic pin says why there is no Mach angle instead of showing a number.
    window.document.add_pin(-2.5, 2.5, "upstream")
    window.analysis.flush()
    rows = dict(trade_rows(window.analysis.trade_readouts[1], equation.trade))
    assert rows["Mach angle μ = asin(1/M)"].startswith("none (subsonic")

    window.analysis.request_hover(0.0, 1.05)
    assert f"M = {expected_mach:.4g}" in window.hover_label.text()


def test_equation_without_trade_shows_no_trade_rows(make_window):
    window = make_window(hump_project(nx=61, ny=41))
    window.document.add_pin(0.0, 0.0, "centre")
    window.analysis.flush()
    assert window.analysis.trade_readouts == ({},)
    assert "Trade quantities" not in window.pins_panel.details.toPlainText()


def test_pocket_table_matches_core_and_click_centres_the_map(make_window):
    window = make_window(hump_project(nx=61, ny=41))
    window.add_template("full_potential")
    window.analysis.flush()
    compiled = compile_equation(window.document.equation)
    expected = pocket_statistics(compiled, window.analysis.type_map, quantity="M")
    assert len(expected) == 1          # one supersonic pocket on the crest of the bump
    report = window.analysis.pockets
    assert report.pockets == expected and report.type_map is window.analysis.type_map
    table = window.pockets_panel.table
    assert table.rowCount() == len(expected)
    for row, pocket in enumerate(expected):
        assert tuple(table.item(row, c).text() for c in range(7)) == pocket_row(pocket)
    assert table.horizontalHeaderItem(1).text() == "area (x unit × y unit)"
    assert table.horizontalHeaderItem(4).text() == "peak M"
    # The peak Mach number of the pocket is on the crest (0, R): u = 2U there (cylinder flow, closed form).
    assert expected[0].peak == pytest.approx(_cylinder_crest_mach(1.0), rel=1e-12)
    assert expected[0].peak_at == (0.0, 1.0)

    window.map_view.view_box.setRange(xRange=(-3, 3), yRange=(0, 3), padding=0)
    window.pockets_panel.select(0)
    (x0, x1), (y0, y1) = window.map_view.view_box.viewRange()
    cx, cy = expected[0].centroid
    assert (x0 + x1) / 2 == pytest.approx(cx, abs=1e-6) and (y0 + y1) / 2 == pytest.approx(cy, abs=1e-6)
    outline_x, outline_y = window.map_view.pocket_outline.getData()
    dx, dy = window.document.domain.spacing
    x0, x1, y0, y1 = expected[0].bounding_box
    # The halo runs half-way between the pocket's edge nodes and their neighbours outside it.
    assert np.nanmin(outline_x) == pytest.approx(x0 - dx / 2) and np.nanmax(outline_x) == pytest.approx(x1 + dx / 2)
    assert np.nanmin(outline_y) == pytest.approx(y0 - dy / 2) and np.nanmax(outline_y) == pytest.approx(y1 + dy / 2)
    assert window.map_view.pocket_peak.getData()[0].tolist() == [expected[0].peak_at[0]]
    assert (x1 - x0) < (window.map_view.view_box.viewRange()[0][1] - window.map_view.view_box.viewRange()[0][0])
    window.pockets_panel.table.clearSelection()
    assert len(window.map_view.pocket_outline.getData()[0]) == 0


def test_no_pocket_says_so(make_window):
    window = make_window(hump_project(nx=61, ny=41, m_inf=0.5))
    assert window.analysis.pockets.pockets == ()
    assert window.pockets_panel.table.rowCount() == 0
    assert window.pockets_panel.summary.text() == "No hyperbolic pocket on this map."


def test_trade_readout_where_its_inputs_are_undefined_says_so(make_window):
    window = make_window(hump_project(nx=61, ny=41))
    window.add_template("full_potential")
    window.document.add_pin(0.0, 0.5, "inside the bump")      # r < R: the template leaves u, v undefined
    window.analysis.flush()
    readout = window.analysis.trade_readouts[0]
    assert readout == "undefined here (u, v, c2 are not a finite number at this point)"
    assert "Mach angle" not in window.pins_panel.details.toPlainText()
    assert readout in window.pins_panel.details.toPlainText()
