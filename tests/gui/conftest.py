"""Fixtures for window tests: a temporary preferences folder and small projects computed synchronously."""

from __future__ import annotations

import pytest

from core.domain import Domain
from core.equations.equation import Equation, Parameter
from core.project.model import Project, new_project
from tests.ceilings import HANG_CEILING_MS, HANG_CEILING_S


@pytest.fixture(autouse=True)
def settings_folder(tmp_path, monkeypatch):
    """Every test gets its own empty preferences folder (recent files, recovery file)."""
    folder = tmp_path / "settings"
    folder.mkdir()
    monkeypatch.setenv("MIXTYPE_SETTINGS_DIR", str(folder))
    return folder


def hump_project(nx: int = 121, ny: int = 81, m_inf: float = 0.8) -> Project:
    """Demo scenario: (1 - M^2) u_xx + u_yy with M = M_inf (1 + 0.35 exp(-(x^2 + 4 y^2))) on [-3,3]x[-2,2]."""
    equation = Equation(a="1 - M**2", b="0", c="1",
                        definitions={"M": "M_inf*(1 + 0.35*exp(-(x**2 + 4*y**2)))"},
                        parameters={"M_inf": Parameter(m_inf, 0.3, 1.2)}, name="hump flow")
    return new_project(equation, Domain(-3.0, 3.0, -2.0, 2.0, nx, ny, name="near field"))


def tricomi_project(n: int = 81) -> Project:
    """The Tricomi equation y u_xx + u_yy = 0 on [-2,2]x[-2,2]: hyperbolic below y = 0, elliptic above."""
    equation = Equation(a="y", b="0", c="1", name="Tricomi")
    return new_project(equation, Domain(-2.0, 2.0, -2.0, 2.0, n, n, name="square"))


@pytest.fixture
def make_window(qtbot, settings_folder):
    """Build a MainWindow (synchronous by default) registered with qtbot; dialogs answer 'discard'."""
    from gui.main_window import MainWindow
    from gui.preferences import Preferences

    def build(project: Project | None = None, *, synchronous: bool = True, **options):
        window = MainWindow(project or hump_project(), preferences=Preferences(settings_folder),
                            synchronous=synchronous, **options)
        window.ask_unsaved = lambda: "discard"
        qtbot.addWidget(window)
        window.resize(1300, 850)
        with qtbot.waitExposed(window, timeout=HANG_CEILING_MS):   # a bare call would not wait at all
            window.show()
        window.analysis.flush()
        assert window.runner.wait_idle(HANG_CEILING_S)
        return window

    return build
