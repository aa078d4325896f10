"""One edit of the open study: the undo command holding the project before and after, and what it changed.

The document pushes a ``ProjectEdit`` for every edit; edits that share a merge key (one slider drag, one burst
of typing in one field) merge into one undo step, named by the last of them ("Set mach = 0.8" after a drag
to 0.8: the state that redo restores). ``changed_parts`` compares two projects and names the
document signals the change calls for, in the order they are emitted, so each is emitted once and only on
real change.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace

from PySide6.QtGui import QUndoCommand

from core.equations.equation import Equation
from core.project.model import Project

__all__ = ["ProjectEdit", "changed_parts", "equation_structure"]

_MERGEABLE_ID = 4711


class ProjectEdit(QUndoCommand):
    """One edit: the project before and after. Edits with the same non-empty merge key merge into one.

    ``apply`` puts a project in place (the document's); undo applies ``before``, redo ``after``.
    """

    def __init__(self, apply: Callable[[Project], None], before: Project, after: Project, text: str,
                 merge_key: str) -> None:
        super().__init__(text)
        self.apply = apply
        self.before = before
        self.after = after
        self.merge_key = merge_key

    def id(self) -> int:
        return _MERGEABLE_ID if self.merge_key else -1

    def mergeWith(self, other: QUndoCommand) -> bool:
        if not isinstance(other, ProjectEdit) or other.merge_key != self.merge_key:
            return False
        self.after = other.after
        self.setText(other.text())
        return True

    def redo(self) -> None:
        self.apply(self.after)

    def undo(self) -> None:
        self.apply(self.before)


def equation_structure(equation: Equation) -> tuple:
    """Everything about an equation except parameter values: a change here needs a new compilation."""
    parameters = tuple((n, p.minimum, p.maximum, p.unit, p.description) for n, p in equation.parameters.items())
    trade = tuple((kind, tuple(inputs.items())) for kind, inputs in equation.trade.items())
    return (equation.a, equation.b, equation.c, tuple(equation.variables),
            tuple(equation.definitions.items()), parameters, equation.name, equation.description, trade,
            equation.peak_quantity)


def changed_parts(before: Project, after: Project) -> tuple[str, ...]:
    """Names of the document signals the change from ``before`` to ``after`` calls for, each at most once.

    A new shown equation or a change of its structure is ``equation_changed``; a change of parameter values
    alone is ``parameters_changed``; a change of the shown equation's lower-order terms or Cauchy data (which
    never change the map) is ``lower_order_changed`` or ``cauchy_data_changed``, unless ``equation_changed``
    already says that everything about the equation changed; the view's parabolic tolerance counts as part of
    the domain, its characteristic bounces with the seeds (the curves change), the other view switches as layers.
    """
    parts: list[str] = []
    (old_equation, old_domain), (new_equation, new_domain) = before.shown(), after.shown()
    if before.shown_equation_index != after.shown_equation_index \
            or equation_structure(old_equation) != equation_structure(new_equation):
        parts.append("equation_changed")
    else:
        if old_equation.parameters != new_equation.parameters:
            parts.append("parameters_changed")
        if old_equation.lower_order != new_equation.lower_order:
            parts.append("lower_order_changed")
        if old_equation.cauchy_data != new_equation.cauchy_data:
            parts.append("cauchy_data_changed")
    if before.equation_names != after.equation_names or before.domain_names != after.domain_names:
        parts.append("equations_listed")
    if old_domain != new_domain or before.view.parabolic_tolerance != after.view.parabolic_tolerance:
        parts.append("domain_changed")
    if before.pins != after.pins or before.pins_shown() != after.pins_shown():   # (pins belong to a study)
        parts.append("pins_changed")
    if before.seeds != after.seeds or before.view.characteristic_bounces != after.view.characteristic_bounces:
        parts.append("seeds_changed")
    if replace(before.view, parabolic_tolerance=0.0, characteristic_bounces=0) \
            != replace(after.view, parabolic_tolerance=0.0, characteristic_bounces=0):
        parts.append("layers_changed")
    if before.notes != after.notes:
        parts.append("notes_changed")
    if before.data_sources != after.data_sources:
        parts.append("data_sources_changed")
    if before.sweeps != after.sweeps:
        parts.append("sweeps_changed")
    return tuple(parts)
