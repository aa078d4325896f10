"""A study's Cauchy problem from typed text to what a window shows: solved, written as formula text, evaluated on
the study's grid; or refused with the field at fault and the reason.

``solve_study_cauchy`` reads the study's constant coefficients and the typed data (core.analysis.cauchy_input),
solves (core.analysis.cauchy), writes the closed form as formula text where the language can say it, and
evaluates u on the domain's display grid (core.analysis.cauchy_field). Nothing here raises for a problem of the
input: a CauchyRefusal names the field ("coefficients", "line", "u", "du", or "problem" for an elliptic
equation, a characteristic data line or no second-order terms) and says why.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from core.analysis.cauchy import (
    INTEGRATION_SECONDS,
    CauchyError,
    CauchySolution,
    solution_formula,
    solve_cauchy,
)
from core.analysis.cauchy_field import SolutionEvaluator, solution_evaluator, solution_on_grid
from core.analysis.cauchy_input import CauchyInput, CauchyInputError, read_cauchy_input
from core.analysis.field_values import FieldGrid
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = ["CauchyRefusal", "StudyCauchy", "solve_study_cauchy", "study_cauchy_on"]


@dataclass(frozen=True)
class CauchyRefusal:
    """Why a study's Cauchy problem was not solved: ``field`` at fault and a ``message`` for the user."""

    field: str
    message: str


@dataclass(frozen=True, eq=False)
class StudyCauchy:
    """A solved problem of a study: the ``problem`` read, its ``solution``, the closed form as ``formula`` text
    (None when there is no closed form, or ``formula_problem`` says why the language cannot write it), and u
    as a numpy function (``evaluator``) and on the ``grid`` of the domain it was evaluated for."""

    problem: CauchyInput
    solution: CauchySolution
    formula: str | None
    formula_problem: str
    evaluator: SolutionEvaluator
    grid: FieldGrid

    @property
    def notes(self) -> tuple[str, ...]:
        return self.solution.notes + ((self.formula_problem,) if self.formula_problem else ())


def _box(domain: Domain) -> tuple[float, float, float, float]:
    return domain.xmin, domain.xmax, domain.ymin, domain.ymax


def solve_study_cauchy(compiled: CompiledEquation, texts: Mapping[str, str], domain: Domain, *,
                       parameters: Mapping[str, float] | None = None,
                       integration_seconds: float = INTEGRATION_SECONDS, cancel: CancelCheck | None = None,
                       progress: ProgressReport | None = None) -> StudyCauchy | CauchyRefusal:
    """Solve the Cauchy problem ``texts`` ("line", "u", "du") states for the compiled study at ``parameters``
    (default: its own values) and evaluate u on ``domain``; Cancelled when ``cancel`` says so. The symbolic
    steps report no progress; the grid reports the second half."""
    try:
        problem = read_cauchy_input(compiled, texts, parameters=parameters)
    except CauchyInputError as error:
        return CauchyRefusal(error.field, error.message)
    if progress is not None:
        progress(0.05)
    try:
        solution = solve_cauchy(*problem.coefficients, problem.line, problem.u, problem.du, problem.s,
                                x=problem.x, y=problem.y, integration_seconds=integration_seconds, cancel=cancel)
    except CauchyError as error:
        return CauchyRefusal("problem", str(error))
    if cancel is not None and cancel():
        raise Cancelled("Cauchy problem cancelled")
    formula, why = solution_formula(solution, problem.names)
    if progress is not None:
        progress(0.5)
    evaluator, grid = _on_domain(solution, domain, cancel,
                                 None if progress is None else (lambda done: progress(0.5 + 0.5 * done)))
    return StudyCauchy(problem=problem, solution=solution, formula=formula, formula_problem=why or "",
                       evaluator=evaluator, grid=grid)


def _on_domain(solution: CauchySolution, domain: Domain, cancel: CancelCheck | None,
               progress: ProgressReport | None) -> tuple[SolutionEvaluator, FieldGrid]:
    evaluator = solution_evaluator(solution, _box(domain))
    return evaluator, solution_on_grid(evaluator, domain, cancel=cancel, progress=progress)


def study_cauchy_on(study: StudyCauchy, domain: Domain, *, cancel: CancelCheck | None = None,
                    progress: ProgressReport | None = None) -> StudyCauchy:
    """The same solution evaluated for another domain (the integral's table covers the new box)."""
    evaluator, grid = _on_domain(study.solution, domain, cancel, progress)
    return StudyCauchy(problem=study.problem, solution=study.solution, formula=study.formula,
                       formula_problem=study.formula_problem, evaluator=evaluator, grid=grid)
