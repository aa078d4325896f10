"""A compiled equation: the program of numexpr steps built from an Equation, and its evaluation on points.

Compiling parses every text through the whitelist parser, orders the definitions (they may use each other in
any order, without cycles) and turns them into one program of numexpr steps over internal names. The compiled
form is built once per text change; parameter values are inputs of every evaluation, so a parameter change
costs no recompilation. Evaluation works on any broadcastable arrays of points: a whole grid, a tile, a list of
cells or one point.
It is a little over 400 lines: the compiled equation and the one function that builds it.
"""

from __future__ import annotations

import math
import threading
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from functools import cached_property

import numexpr
import numpy as np
import sympy

from core.equations.codegen import INF_NAME, NAN_NAME, CodegenError, Statement, build_program
from core.equations.equation import (
    COEFFICIENT_NAMES,
    MAX_DEFINITIONS,
    MAX_PARAMETERS,
    Equation,
    QuantitySource,
)
from core.equations.evaluation import EvaluationBuffers, EvaluationPlan, Step, UfuncProgram
from core.equations.language import ExpressionError, check_name, data_derivative_key
from core.equations.parser import parse_expression, tidy_expression
from core.equations.trade import check_trade_spec

__all__ = ["CompiledEquation", "compile_equation"]


@dataclass(frozen=True, eq=False)
class CompiledEquation:
    """An equation ready to evaluate: definitions in dependency order, compiled into one program of steps.

    The program (``program``) shares every repeated sub-expression, keeps parameter-only parts for ``prepare``
    and one-variable parts for ``along_axes``; ``plan(names)`` picks the steps that some values need.
    """

    equation: Equation
    variables: tuple[str, str]
    parameter_defaults: Mapping[str, float]
    definition_order: tuple[str, ...]
    data_keys: tuple[str, ...]
    symbolic: Mapping[str, sympy.Expr]
    symbols: Mapping[str, sympy.Symbol]
    _steps: tuple[Step, ...]
    _internal: Mapping[str, str]
    _plans: dict = field(default_factory=dict, repr=False)
    _kernels: threading.local = field(default_factory=threading.local, repr=False)

    # -- the program ----------------------------------------------------------------------------------------
    @property
    def program(self) -> tuple[Statement, ...]:
        """Every step as ``target = code`` over internal names, in evaluation order."""
        return tuple(step.statement for step in self._steps)

    @property
    def program_characters(self) -> int:
        """Size of the generated code: grows linearly with the expressions (see core.equations.codegen)."""
        return sum(len(step.statement.code) for step in self._steps)

    def internal_name(self, name: str) -> str:
        """The internal name (a target of ``program``) of a variable, parameter, definition or a, b, c."""
        return self._internal[name]

    def plan(self, names: Iterable[str] | None = None) -> EvaluationPlan:
        """The steps needed for ``names`` (definitions and a, b, c; default: all of them), cached."""
        key = tuple(dict.fromkeys(names)) if names is not None else (*self.definition_order, *COEFFICIENT_NAMES)
        plan = self._plans.get(key)
        if plan is None:
            plan = self._plans[key] = self._make_plan(key)
        return plan

    def _make_plan(self, names: tuple[str, ...]) -> EvaluationPlan:
        for name in names:
            if name not in self.definition_order and name not in COEFFICIENT_NAMES:
                known = ", ".join((*self.definition_order, *COEFFICIENT_NAMES))
                raise ExpressionError(f"unknown quantity {name!r}; expected one of {known}")
        by_target = {step.target: step for step in self._steps}
        needed = {self._internal[name] for name in names}
        for step in reversed(self._steps):
            if step.target in needed:
                needed.update(step.statement.inputs)
        pointwise = [step for step in self._steps if step.target in needed and step.varies]
        first, second = (self._internal[v] for v in self.variables)
        everywhere = [len(s.varies) > 1 or not s.varies <= {first, second} for s in pointwise]
        kept = {self._internal[name] for name in names}
        last_reader: dict[str, int] = {}
        for index, step in enumerate(pointwise):
            for source in step.statement.inputs:
                if source in by_target and by_target[source].varies and source not in kept:
                    last_reader[source] = index
        released: list[list[str]] = [[] for _ in pointwise]
        for source, index in last_reader.items():
            released[index].append(source)
        return EvaluationPlan(
            names=names,
            prepared=tuple(s.target for s in self._steps if s.target in needed and not s.varies),
            along_first=tuple(s.target for s in pointwise if s.varies == {first}),
            along_second=tuple(s.target for s in pointwise if s.varies == {second}),
            pointwise=tuple(s.target for s, e in zip(pointwise, everywhere, strict=True) if e),
            data_keys=tuple(k for k in self.data_keys if self._internal[k] in needed),
            work=tuple(zip(pointwise, (tuple(r) for r in released), everywhere, strict=True)),
        )

    def _run(self, step: Step, env: Mapping[str, object], out: np.ndarray | None = None,
             buffers: EvaluationBuffers | None = None):
        """One step's value from ``env`` (into ``out`` if given); each thread compiles its own numexpr programs.

        A step made only of IEEE-exact operations runs as numpy ufuncs (``UfuncProgram``, the same bits, several
        times faster, intermediates from ``buffers``); the others (exp, sin, pow...) run in numexpr.
        """
        if step.alias is not None:
            return env[step.alias]
        kernels = getattr(self._kernels, "by_target", None)
        if kernels is None:
            kernels = self._kernels.by_target = {}
        kernel = kernels.get(step.target)
        if kernel is None:
            boolean = {s.target for s in self._steps if s.statement.boolean}
            signature = [(n, bool if n in boolean else np.float64) for n in step.statement.inputs]
            compiled = numexpr.NumExpr(step.statement.code, signature=signature)
            kernel = kernels[step.target] = UfuncProgram.from_numexpr(compiled) or compiled
        arguments = [env[n] for n in step.statement.inputs]
        if isinstance(kernel, UfuncProgram):
            return kernel(*arguments, out=out, buffers=buffers)
        if out is None:
            return kernel(*arguments)
        # ex_uses_vml only tunes numexpr's block length for Intel VML builds; the generated code needs none.
        return kernel(*arguments, out=out, order="K", casting="safe", ex_uses_vml=False)

    # -- evaluation -------------------------------------------------------------------------------------
    def evaluate(self, x, y, *, parameters: Mapping[str, float] | None = None,
                 data: QuantitySource | None = None, names: Iterable[str] | None = None
                 ) -> dict[str, np.ndarray]:
        """Definitions and a, b, c (or only ``names``) at the points (x, y), broadcast together (float64).

        Non-finite values are returned as they come (NaN, inf): classification maps them to ``undefined``.
        """
        shape = np.broadcast_shapes(np.shape(x), np.shape(y))
        raw = self.evaluate_raw(x, y, parameters=parameters, data=data, names=names)
        return {name: np.broadcast_to(value, shape) for name, value in raw.items()}

    def evaluate_raw(self, x, y, *, parameters: Mapping[str, float] | None = None,
                     data: QuantitySource | None = None,
                     prepared: Mapping[str, object] | None = None,
                     names: Iterable[str] | None = None,
                     buffers: EvaluationBuffers | None = None) -> dict[str, np.ndarray]:
        """Like ``evaluate`` but each value keeps the smallest shape that broadcasts to the points' shape.

        A coefficient that depends on y alone stays a column; a constant stays 0-d. ``prepared`` (from
        ``prepare``) skips re-evaluating what depends on parameters only: hot loops over blocks use both.
        ``names`` limits the work to what those values need (e.g. ("a", "b", "c") skips readout-only
        definitions and the data quantities only they use). ``buffers`` (one per thread) makes hot loops
        write into reused arrays; the values returned then live in them until the next call.
        """
        plan = self.plan(names)
        x = np.asarray(x, dtype=np.float64)
        y = np.asarray(y, dtype=np.float64)
        env = dict(prepared if prepared is not None else self.prepare(parameters))
        env[self._internal[self.variables[0]]] = x
        env[self._internal[self.variables[1]]] = y
        if plan.data_keys:
            if data is None:
                raise ExpressionError(f"background data are needed for {', '.join(plan.data_keys)}")
            for key in plan.data_keys:
                env[self._internal[key]] = np.asarray(data.sample(key, x, y), dtype=np.float64)
        if buffers is not None:
            buffers.reclaim()
            shape = np.broadcast_shapes(x.shape, y.shape)
        owned: dict[int, int] = {}   # id of a buffer -> how many names in env hold it
        for step, released, everywhere in plan.work:
            if step.target not in env:   # (a grid run may have it from along_axes)
                if buffers is not None and everywhere and step.alias is None:
                    value = self._run(step, env, buffers.take(shape, bool if step.statement.boolean else np.float64),
                                      buffers)
                    owned[id(value)] = 1
                else:
                    value = self._run(step, env)
                    if id(value) in owned:   # an alias of a buffer
                        owned[id(value)] += 1
                env[step.target] = value
            for target in released:
                value = env.pop(target)
                if owned.get(id(value), 0) == 1:
                    del owned[id(value)]
                    buffers.give_back(value)  # type: ignore[union-attr]
                elif id(value) in owned:
                    owned[id(value)] -= 1
        return {name: env[self._internal[name]] for name in plan.names}

    def prepare(self, parameters: Mapping[str, float] | None = None) -> dict[str, object]:
        """Parameter values and every parameter-only step, evaluated once for many blocks of points."""
        env: dict[str, object] = {NAN_NAME: np.float64(np.nan), INF_NAME: np.float64(np.inf)}
        for name, value in self.parameter_vector(parameters).items():
            env[self._internal[name]] = np.float64(value)
        for step in self._steps:
            if not step.varies:
                env[step.target] = np.asarray(self._run(step, env))[()]
        return env

    def along_axes(self, prepared: Mapping[str, object], x_nodes: np.ndarray, y_nodes: np.ndarray, *,
                   names: Iterable[str] | None = None
                   ) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
        """Steps of a grid run that depend on one variable only, evaluated once on that axis.

        Returns ({internal name: (1, nx) row}, {internal name: (ny, 1) column}); a block of rows adds the
        rows to ``prepared`` and the matching slice of the columns, and evaluate_raw skips those steps.
        ``names`` as in ``evaluate_raw``.
        """
        plan = self.plan(names)
        first, second = (self._internal[v] for v in self.variables)
        along_x = dict(prepared)
        along_x[first] = np.asarray(x_nodes, dtype=np.float64)[np.newaxis, :]
        along_y = dict(prepared)
        along_y[second] = np.asarray(y_nodes, dtype=np.float64)[:, np.newaxis]
        rows: dict[str, np.ndarray] = {}
        columns: dict[str, np.ndarray] = {}
        targets_x, targets_y = set(plan.along_first), set(plan.along_second)
        for step, _, _ in plan.work:
            for targets, env, out in ((targets_x, along_x, rows), (targets_y, along_y, columns)):
                if step.target in targets:
                    env[step.target] = out[step.target] = self._run(step, env)
        return rows, columns

    def coefficients(self, x, y, *, parameters: Mapping[str, float] | None = None,
                     data: QuantitySource | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(a, b, c) at the points, each an array of the broadcast shape of x and y."""
        values = self.evaluate(x, y, parameters=parameters, data=data, names=COEFFICIENT_NAMES)
        return values["a"], values["b"], values["c"]

    def coefficients_raw(self, x, y, *, parameters: Mapping[str, float] | None = None,
                         data: QuantitySource | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(a, b, c) at the points, each in its smallest broadcastable shape (see ``evaluate_raw``)."""
        values = self.evaluate_raw(x, y, parameters=parameters, data=data, names=COEFFICIENT_NAMES)
        return values["a"], values["b"], values["c"]

    def parameter_vector(self, parameters: Mapping[str, float] | None) -> dict[str, float]:
        """Defaults overridden by ``parameters``; unknown names or non-finite values are rejected."""
        values = dict(self.parameter_defaults)
        for name, value in (parameters or {}).items():
            if name not in values:
                raise ExpressionError(f"unknown parameter {name!r}")
            value = float(value)
            if not math.isfinite(value):
                raise ExpressionError(f"parameter {name!r} must be a finite number, got {value}")
            values[name] = value
        return values

    # -- symbolic views -----------------------------------------------------------------------------------
    @cached_property
    def substituted(self) -> dict[str, sympy.Expr]:
        """a, b, c with every definition substituted: expressions in variables, parameters and data, tidied by
        sympy (x/x -> 1), so they may be defined where the typed ones are not."""
        resolved: dict[sympy.Symbol, sympy.Expr] = {}
        for name in self.definition_order:
            resolved[self.symbols[name]] = self.symbolic[name].xreplace(resolved)
        return {k: tidy_expression(self.symbolic[k].xreplace(resolved)) for k in COEFFICIENT_NAMES}

    @cached_property
    def coefficient_matrix(self) -> sympy.Matrix:
        """The symmetric second-order coefficient matrix [[a, b/2], [b/2, c]]."""
        a, b, c = (self.substituted[k] for k in COEFFICIENT_NAMES)
        return sympy.Matrix([[a, b / 2], [b / 2, c]])

    @cached_property
    def symbolic_discriminant(self) -> sympy.Expr:
        """D = b^2 - 4ac = -4 det of the coefficient matrix, with definitions substituted."""
        return -4 * self.coefficient_matrix.det()

    @property
    def depends_on_data(self) -> bool:
        return bool(self.data_keys)


def compile_equation(equation: Equation, *, data_names: tuple[str, ...] | frozenset[str] = ()
                     ) -> CompiledEquation:
    """Parse and order everything in ``equation``; raise ExpressionError naming the field at fault.

    ``data_names`` are names of background-data quantities available to expressions (see core.data.sources).
    """
    variables = tuple(equation.variables)
    if len(variables) != 2:
        raise ExpressionError(f"an equation has exactly two independent variables, got {len(variables)}",
                              field="variables")
    if variables[0] == variables[1]:
        raise ExpressionError(f"the two variables must differ, both are {variables[0]!r}", field="variables")
    for v in variables:
        _checked(lambda v=v: check_name(v, what="variable"), "variables")
    if len(equation.definitions) > MAX_DEFINITIONS:
        raise ExpressionError(f"more than {MAX_DEFINITIONS} definitions", field="definitions")
    if len(equation.parameters) > MAX_PARAMETERS:
        raise ExpressionError(f"more than {MAX_PARAMETERS} parameters", field="parameters")

    kinds: dict[str, str] = {v: "variable" for v in variables}
    for group, names in (("parameter", equation.parameters), ("definition", equation.definitions),
                         ("data quantity", data_names)):
        for name in names:
            field_name = {"parameter": "parameters", "definition": "definitions",
                          "data quantity": "data"}[group] + f".{name}"
            _checked(lambda name=name, group=group: check_name(name, what=group), field_name)
            if name in kinds or name in COEFFICIENT_NAMES:
                other = kinds.get(name, "coefficient")
                raise ExpressionError(f"{group} {name!r} has the same name as a {other}", field=field_name)
            kinds[name] = group
    for name, p in equation.parameters.items():
        if not isinstance(p.value, int | float) or not math.isfinite(p.value):
            raise ExpressionError(f"value must be a finite number, got {p.value!r}",
                                  field=f"parameters.{name}")

    symbols = {name: sympy.Symbol(name, real=True) for name in kinds}
    for quantity in data_names:
        for v in variables:
            key = data_derivative_key(quantity, v)
            symbols[key] = sympy.Symbol(key, real=True)

    parsed: dict[str, sympy.Expr] = {}
    uses: dict[str, frozenset[str]] = {}
    sources = [(f"definitions.{n}", n, t) for n, t in equation.definitions.items()]
    sources += [(k, k, equation.coefficient_text(k)) for k in COEFFICIENT_NAMES]
    for field_name, name, text in sources:
        try:
            result = parse_expression(text, symbols, data_names=data_names, variables=variables)
        except ExpressionError as error:
            raise error.in_field(field_name) from None
        parsed[name] = result.value
        uses[name] = result.names

    order = _definition_order(equation.definitions, uses)
    _check_readouts(equation, set(kinds) | set(COEFFICIENT_NAMES))
    used_data = sorted({n for k in parsed for n in uses[k]
                        if kinds.get(n) == "data quantity" or n.startswith("diff(")})
    internal = {name: f"q{i}" for i, name in enumerate(list(symbols) + list(COEFFICIENT_NAMES))}
    by_symbol = {symbols[name]: internal[name] for name in symbols}
    sources = {internal[n]: frozenset({internal[n]}) for n in (*variables, *used_data)}
    roots = [(internal[name], name if name in COEFFICIENT_NAMES else f"definitions.{name}", parsed[name])
             for name in (*order, *COEFFICIENT_NAMES)]
    try:
        program = build_program(roots, by_symbol, axes=[internal[v] for v in variables], sources=sources)
    except CodegenError as error:
        raise ExpressionError(error.message, field=error.field) from None
    steps = []
    varies: dict[str, frozenset[str]] = dict(sources)
    for statement in program:
        depends = frozenset().union(*(varies.get(n, frozenset()) for n in statement.inputs))
        varies[statement.target] = depends
        alias = statement.code if statement.inputs == (statement.code,) else None
        steps.append(Step(statement=statement, alias=alias, varies=depends))
    return CompiledEquation(
        equation=equation,
        variables=variables,  # type: ignore[arg-type]
        parameter_defaults=equation.parameter_values(),
        definition_order=tuple(order),
        data_keys=tuple(used_data),
        symbolic=parsed,
        symbols=symbols,
        _steps=tuple(steps),
        _internal=internal,
    )


def _check_readouts(equation: Equation, known: set[str]) -> None:
    """The trade spec and the peak quantity must name values the equation has."""
    if equation.trade:
        try:
            check_trade_spec(equation.trade)
        except (TypeError, ValueError) as error:
            raise ExpressionError(str(error), field="trade") from None
        for kind, inputs in equation.trade.items():
            for input_name, source in inputs.items():
                if source not in known:
                    raise ExpressionError(f"{kind} input {input_name!r} names {source!r}, which the equation "
                                          "does not define", field=f"trade.{kind}.{input_name}")
    if equation.peak_quantity and equation.peak_quantity not in known:
        raise ExpressionError(f"{equation.peak_quantity!r} is not a definition, parameter or data quantity",
                              field="peak_quantity")


def _checked(check, field_name: str) -> None:
    try:
        check()
    except ExpressionError as error:
        raise error.in_field(field_name) from None


def _definition_order(definitions: Mapping[str, str], uses: Mapping[str, frozenset[str]]) -> list[str]:
    """Definitions sorted so each comes after those it uses; a cycle is reported with its path."""
    order: list[str] = []
    state: dict[str, int] = {}  # 1 = in progress, 2 = done

    def visit(name: str, path: list[str]) -> None:
        if state.get(name) == 2:
            return
        if state.get(name) == 1:
            cycle = path[path.index(name):] + [name]
            raise ExpressionError("definitions form a cycle: " + " -> ".join(cycle),
                                  field=f"definitions.{cycle[0]}")
        state[name] = 1
        for used in sorted(uses[name]):
            if used in definitions:
                visit(used, path + [name])
        state[name] = 2
        order.append(name)

    for name in definitions:
        visit(name, [])
    return order
