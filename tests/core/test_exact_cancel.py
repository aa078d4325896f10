"""The exact analysis (core.analysis.exact) stops when its caller cancels: before a sympy step, or while a step's
child process works (core.deadline stops it), instead of running on to its deadline."""

from __future__ import annotations

import pytest

from core.analysis.exact import analyze_equation
from core.equations.equation import Equation
from core.progress import Cancelled


def test_cancel_before_the_first_step_and_during_one():
    equation = Equation(a="y", b="0", c="1")
    asked = []
    with pytest.raises(Cancelled):
        analyze_equation(equation, cancel=lambda: asked.append(True) or True)
    assert len(asked) == 1                          # asked once, before factoring D: nothing ran

    def later() -> bool:
        asked.append(True)
        return len(asked) > 4                       # stopped at a later ask: while a step runs, or before one

    with pytest.raises(Cancelled):
        analyze_equation(equation, cancel=later, deadline_seconds=600.0)
    never = analyze_equation(equation, cancel=lambda: False)
    assert [zone.type for zone in never.zones] == ["hyperbolic", "elliptic", "parabolic"]
