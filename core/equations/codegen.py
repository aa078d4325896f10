"""Translation of the sympy expressions that core.equations.parser builds into a program of numexpr steps.

The input is a sympy tree made only of whitelisted nodes (never raw user text), evaluated or not (the parser
may keep ``Add``, ``Mul`` and ``Pow`` as typed), and every symbol is renamed to an internal name, so the
generated text can neither clash with numexpr's own names nor carry anything a user typed.

The output is a ``Program``: a list of ``Statement``s, each one numexpr text over internal names and the
targets of earlier statements. Every distinct sub-tree that is used more than once, every argument of min,
max, sign and heaviside, and every quantity a piecewise condition compares becomes a statement of its own
(common-subexpression elimination), so no text ever repeats a sub-tree and the program grows linearly with
the expressions. A sub-tree that depends on parameters only, or on one variable only, inside an expression
that depends on more, is a statement too: the evaluator computes it once per parameter set or once per grid
axis instead of at every point. The program's size is bounded (``MAX_PROGRAM_STEPS``,
``MAX_PROGRAM_CHARACTERS``, beside the parser's limits in core.equations.language) and exceeding it raises
``CodegenError`` naming the expression being translated.

Semantics follow IEEE doubles: a square root or logarithm of a negative number gives NaN, a division by zero
gives infinity, and NaN in any argument of min, max, sign, heaviside or a piecewise condition gives NaN. A value
is defined only when every step of the typed text is a finite number: where an operation would take an
infinite or NaN input to a finite value (1/inf, atan(inf), exp(-inf), max(-inf, 1), pow(nan, 0)) the input
poisons the result (``_poisoned``). The caller turns non-finite results into the ``undefined`` type.
It is a little over 400 lines: one program builder whose two passes share their state.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import sympy

__all__ = [
    "INF_NAME",
    "MAX_PROGRAM_CHARACTERS",
    "MAX_PROGRAM_STEPS",
    "MAX_STEP_INPUTS",
    "NAN_NAME",
    "CodegenError",
    "Statement",
    "build_program",
]

NAN_NAME = "qnan"
INF_NAME = "qinf"

MAX_PROGRAM_STEPS = 2000            # statements of one equation (a max of n arguments takes about 2n)
MAX_PROGRAM_CHARACTERS = 200_000    # numexpr text of one equation, all statements together
MAX_STEP_INPUTS = 48                # names one statement reads (numexpr takes at most 64 operands)
MAX_BRACKET_DEPTH = 200             # Python's compile(), which numexpr parses with, refuses deeper brackets

_DIRECT = {
    sympy.sin: "sin", sympy.cos: "cos", sympy.tan: "tan",
    sympy.asin: "arcsin", sympy.acos: "arccos", sympy.atan: "arctan", sympy.atan2: "arctan2",
    sympy.sinh: "sinh", sympy.cosh: "cosh", sympy.tanh: "tanh",
    sympy.exp: "exp", sympy.log: "log", sympy.Abs: "abs",
}
_BOOLEAN_TYPES = (sympy.core.relational.Relational, sympy.And, sympy.Or)
# Functions that take an infinite argument to a finite value: their arguments poison the result.
_FINITE_AT_INFINITY = frozenset({sympy.exp, sympy.atan, sympy.atan2, sympy.tanh})


class CodegenError(ValueError):
    """A sympy construct has no numexpr translation, or the program would exceed its size bounds.

    ``field`` names the expression being translated (as given to ``build_program``)."""

    def __init__(self, message: str, field: str = "") -> None:
        super().__init__(message)
        self.message = message
        self.field = field


@dataclass(frozen=True)
class Statement:
    """``target = code``: numexpr text reading exactly the internal names in ``inputs``."""

    target: str
    code: str
    inputs: tuple[str, ...]     # sorted; numexpr's signature
    boolean: bool               # a comparison (bool array) rather than a float64 value


def _number(value: float) -> str:
    if math.isnan(value):
        return NAN_NAME
    if value in (float("inf"), float("-inf")):
        return INF_NAME if value > 0 else f"(-{INF_NAME})"
    text = repr(float(value))
    return f"({text})" if value < 0 else text


def _trivial(e: sympy.Basic) -> bool:
    """A name or a literal: cheaper to repeat than to store."""
    return bool(e.is_Symbol or e.is_Number or e.is_NumberSymbol or e in (sympy.true, sympy.false)
                or e is sympy.zoo or e is sympy.S.NegativeInfinity)


def _children(e: sympy.Basic) -> tuple[sympy.Basic, ...]:
    if isinstance(e, sympy.Piecewise):
        return tuple(part for pair in e.args for part in pair.args)
    if isinstance(e, sympy.Heaviside):
        return e.args[:1]
    return e.args


def _compared(condition: sympy.Basic) -> list[sympy.Basic]:
    """The quantities a piecewise condition compares, in a fixed order."""
    if isinstance(condition, sympy.core.relational.Relational):
        return [condition.lhs, condition.rhs]
    if isinstance(condition, sympy.And | sympy.Or):
        return [q for arg in condition.args for q in _compared(arg)]
    return []


def build_program(roots: Sequence[tuple[str, str, sympy.Basic]], names: Mapping[sympy.Symbol, str], *,
                  axes: Sequence[str], sources: Mapping[str, frozenset[str]] | None = None,
                  temporary_prefix: str = "t") -> tuple[Statement, ...]:
    """Statements computing every root, in an order where each reads only earlier targets.

    ``roots`` are (target, field, expression) in dependency order (a root may use an earlier root's symbol);
    ``field`` names the expression in errors. ``names`` maps every symbol to its internal name, ``axes`` are
    the internal names of the two variables and ``sources`` maps each internal name that varies from point
    to point (variables, data keys) to the set of such names it stands for (itself).
    """
    try:
        return _Builder(names, tuple(axes), dict(sources or {}), temporary_prefix).build(roots)
    except RecursionError:
        field = roots[-1][1] if roots else ""
        raise CodegenError("the expression is nested too deeply to evaluate", field) from None


class _Builder:
    def __init__(self, names: Mapping[sympy.Symbol, str], axes: tuple[str, ...],
                 sources: dict[str, frozenset[str]], prefix: str) -> None:
        self.names = names
        self.axes = axes
        self.sources = sources
        self.prefix = prefix
        self.uses: dict[sympy.Basic, int] = {}
        self.forced: set[sympy.Basic] = set()
        self.varies: dict[sympy.Basic, frozenset[str]] = {}
        self.done: dict[sympy.Basic, str] = {}
        self.statements: list[Statement] = []
        self.characters = 0
        self.field = ""

    # -- pass 1: how often each distinct sub-tree is used, and where it varies --------------------------------
    def build(self, roots: Sequence[tuple[str, str, sympy.Basic]]) -> tuple[Statement, ...]:
        for target, field, expr in roots:
            self.field = field
            self.sources[target] = self._scan(expr)
        for target, field, expr in roots:
            self.field = field
            try:
                self._root(target, expr)
            except CodegenError as error:
                raise CodegenError(error.message, error.field or field) from None
        return tuple(self.statements)

    def _scan(self, root: sympy.Basic) -> frozenset[str]:
        stack: list[tuple[sympy.Basic, bool]] = [(root, False)]
        while stack:
            node, expanded = stack.pop()
            if node in self.varies:
                continue
            if _trivial(node):
                self.varies[node] = self._symbol_varies(node)
                continue
            children = _children(node)
            if not expanded:
                stack.append((node, True))
                stack.extend((child, False) for child in children if child not in self.varies)
                continue
            varies = frozenset().union(*(self.varies[child] for child in children))
            self.varies[node] = varies
            for child in children:
                self.uses[child] = self.uses.get(child, 0) + 1
                if self._hoistable(child, varies):
                    self.forced.add(child)
            if isinstance(node, sympy.Min | sympy.Max | sympy.sign | sympy.Heaviside):
                self.forced.update(children)
            elif isinstance(node, sympy.Piecewise):
                self.forced.update(q for _, condition in node.args for q in _compared(condition))
        return self.varies[root]

    def _symbol_varies(self, node: sympy.Basic) -> frozenset[str]:
        if not node.is_Symbol:
            return frozenset()
        name = self.names.get(node)
        return self.sources.get(name, frozenset()) if name is not None else frozenset()

    def _hoistable(self, child: sympy.Basic, parent_varies: frozenset[str]) -> bool:
        """A sub-tree worth its own statement because it varies less than its parent (parameters, one axis)."""
        varies = self.varies[child]
        return varies != parent_varies and (not varies or (len(varies) == 1 and next(iter(varies)) in self.axes))

    # -- pass 2: statements ---------------------------------------------------------------------------------
    def _root(self, target: str, expr: sympy.Basic) -> None:
        if expr in self.done:
            self._add(target, self.done[expr], (self.done[expr],), self._boolean(expr))
            return
        text, inputs = self._text(expr)
        self._add(target, text, inputs, self._boolean(expr))
        if not _trivial(expr):
            self.done[expr] = target

    def _name(self, node: sympy.Basic) -> tuple[str, frozenset[str]]:
        """The node as a name or literal: its statement, made now if needed."""
        if _trivial(node):
            return self._text(node)
        if node not in self.done:
            text, inputs = self._text(node)
            self.done[node] = self._temporary(text, inputs, self._boolean(node))
        return self.done[node], frozenset({self.done[node]})

    def _part(self, node: sympy.Basic) -> tuple[str, frozenset[str]]:
        """Text standing for a child: a name if it is shared or must be one, else its own text inline."""
        if node in self.done or (not _trivial(node) and (self.uses.get(node, 0) > 1 or node in self.forced)):
            return self._name(node)
        return self._text(node)

    def _temporary(self, text: str, inputs: frozenset[str], boolean: bool) -> str:
        target = f"{self.prefix}{len(self.statements)}"
        self._add(target, text, inputs, boolean)
        return target

    def _add(self, target: str, text: str, inputs, boolean: bool) -> None:
        depth = deepest = 0
        for character in text:
            depth += (character == "(") - (character == ")")
            deepest = max(deepest, depth)
        if deepest > MAX_BRACKET_DEPTH:
            raise CodegenError(f"the expression is nested too deeply to evaluate ({deepest} levels of brackets, "
                               f"at most {MAX_BRACKET_DEPTH})", self.field)
        self.statements.append(Statement(target, text, tuple(sorted(inputs)), boolean))
        self.characters += len(text)
        if len(self.statements) > MAX_PROGRAM_STEPS or self.characters > MAX_PROGRAM_CHARACTERS:
            raise CodegenError(f"the equation is too large to evaluate (more than {MAX_PROGRAM_STEPS} steps "
                               f"or {MAX_PROGRAM_CHARACTERS} characters of generated code)", self.field)

    def _boolean(self, e: sympy.Basic) -> bool:
        return isinstance(e, _BOOLEAN_TYPES) or e in (sympy.true, sympy.false)

    def _bounded(self, parts: list[tuple[str, frozenset[str]]], boolean: Sequence[bool] = ()
                 ) -> list[tuple[str, frozenset[str]]]:
        """Parts whose names together stay within MAX_STEP_INPUTS: the widest become statements first.

        ``boolean`` says which parts are comparisons (all others are float64 values)."""
        parts = list(parts)
        while len(frozenset().union(*(p[1] for p in parts))) > MAX_STEP_INPUTS:
            widest = max(range(len(parts)), key=lambda i: len(parts[i][1]))
            if len(parts[widest][1]) <= 1:
                raise CodegenError(f"more than {MAX_STEP_INPUTS} quantities in one expression", self.field)
            name = self._temporary(parts[widest][0], parts[widest][1],
                                   widest < len(boolean) and boolean[widest])
            parts[widest] = (name, frozenset({name}))
        return parts

    def _joined(self, e: sympy.Basic, operator: str) -> tuple[str, frozenset[str]]:
        """An n-ary sum, product, and or or, left to right; cut into a chain of statements if too wide."""
        text, inputs = "", frozenset()
        divisors = []
        for arg in e.args:
            joiner = operator
            if operator == "+" and text:
                arg, joiner = self._negated(arg)
            elif operator == "*" and text and self._is_division(arg):
                arg, joiner = arg.base, "/"
                divisors.append(arg)
            part, part_inputs = self._part(arg)
            if text and len(inputs | part_inputs) > MAX_STEP_INPUTS:
                name = self._temporary(f"({text})", inputs, self._boolean(e))
                text, inputs = name, frozenset({name})
            text = part if not text else f"{text} {joiner} {part}"
            inputs |= part_inputs
        return self._poisoned((f"({text})", inputs), divisors)

    def _is_division(self, term: sympy.Basic) -> bool:
        """A factor b**-1 written inline as ``/ b`` (the parser's a / b: one rounding, as typed)."""
        return bool(term.is_Pow and term.exp is sympy.S.NegativeOne and term not in self.done
                    and self.uses.get(term, 0) <= 1 and term not in self.forced)

    def _poisoned(self, part: tuple[str, frozenset[str]], inputs: Sequence[sympy.Basic]
                  ) -> tuple[str, frozenset[str]]:
        """``part`` made NaN wherever one of ``inputs`` is NaN or infinite (0 * inf is NaN), unchanged elsewhere.

        Used where an operation takes a non-finite input to a finite value (1/inf = 0, atan(inf) = pi/2,
        exp(-inf) = 0, max(-inf, 1) = 1, pow(nan, 0) = 1). Each input is a name (its own statement, never
        repeated text) with its own 0 * term, so two large finite inputs cannot overflow into a false NaN.
        """
        poison = [self._name(g) for g in inputs if not (g.is_Number or g.is_NumberSymbol)]
        if not poison:
            return part
        parts = self._bounded([part, *poison])
        text = f"({parts[0][0]} + " + " + ".join(f"0.0 * {p[0]}" for p in parts[1:]) + ")"
        return text, frozenset().union(*(p[1] for p in parts))

    def _negated(self, term: sympy.Basic) -> tuple[sympy.Basic, str]:
        """A term c*X with c < 0 added inline as ``- (-c)*X``: one operation fewer, the same value bit for bit
        (negation is exact). Returns the term to add and the operator."""
        if not term.is_Mul or term in self.done or self.uses.get(term, 0) > 1 or term in self.forced:
            return term, "+"
        coefficient, *rest = term.args
        if not (coefficient.is_Number and coefficient.is_negative) or not rest:
            return term, "+"
        if coefficient == -1:
            return (rest[0] if len(rest) == 1 else sympy.Mul(*rest, evaluate=False)), "-"
        return sympy.Mul(-coefficient, *rest, evaluate=False), "-"

    def _text(self, e: sympy.Basic) -> tuple[str, frozenset[str]]:
        if e is sympy.nan or e is sympy.zoo:
            return NAN_NAME, frozenset({NAN_NAME})
        if e is sympy.oo:
            return INF_NAME, frozenset({INF_NAME})
        if e is sympy.S.NegativeInfinity:
            return f"(-{INF_NAME})", frozenset({INF_NAME})
        if e is sympy.true:
            return "True", frozenset()
        if e is sympy.false:
            return "False", frozenset()
        if e.is_Symbol:
            try:
                name = self.names[e]
            except KeyError:
                raise CodegenError(f"no value for symbol {e}") from None
            return name, frozenset({name})
        if e.is_Number or e.is_NumberSymbol:
            text = _number(float(e))
            return text, frozenset({NAN_NAME} if text == NAN_NAME else {INF_NAME} if INF_NAME in text else ())
        if e.is_Add:
            return self._joined(e, "+")
        if e.is_Mul:
            return self._joined(e, "*")
        if isinstance(e, sympy.And):
            return self._joined(e, "&")
        if isinstance(e, sympy.Or):
            return self._joined(e, "|")
        if e.is_Pow:
            return self._power(e)
        if isinstance(e, sympy.Piecewise):
            return self._piecewise(e)
        if isinstance(e, sympy.Min | sympy.Max):
            return self._extremum(e)
        if isinstance(e, sympy.sign):
            v, inputs = self._name(e.args[0])
            return self._poisoned((f"where({v} > 0, 1.0, where({v} < 0, -1.0, {v} * 0.0))", inputs), e.args)
        if isinstance(e, sympy.Heaviside):
            v, inputs = self._name(e.args[0])
            at_zero = _number(float(e.args[1]))   # the parser always gives H(0) = 1/2
            return self._poisoned((f"where({v} > 0, 1.0, where({v} < 0, 0.0, {at_zero} + {v} * 0.0))", inputs),
                                  e.args[:1])
        if isinstance(e, sympy.core.relational.Relational) and e.rel_op in ("<", "<=", ">", ">="):
            (lhs, left), (rhs, right) = self._bounded([self._part(e.lhs), self._part(e.rhs)])
            return f"({lhs} {e.rel_op} {rhs})", left | right
        function = _DIRECT.get(type(e))
        if function is not None:
            parts = self._bounded([self._part(t) for t in e.args])
            result = f"{function}(" + ", ".join(p[0] for p in parts) + ")", frozenset().union(*(p[1] for p in parts))
            return self._poisoned(result, e.args) if type(e) in _FINITE_AT_INFINITY else result
        raise CodegenError(f"cannot evaluate {type(e).__name__} numerically")

    def _power(self, e: sympy.Pow) -> tuple[str, frozenset[str]]:
        base, exponent = e.args
        positive = exponent.is_Number and exponent > 0     # then an infinite or NaN base stays so
        return self._poisoned(self._power_text(base, exponent), [] if positive else e.args)

    def _power_text(self, base: sympy.Basic, exponent: sympy.Basic) -> tuple[str, frozenset[str]]:
        if exponent == sympy.Rational(1, 2):
            text, inputs = self._part(base)
            return f"sqrt({text})", inputs
        if exponent == sympy.Rational(-1, 2):
            text, inputs = self._part(base)
            return f"(1.0 / sqrt({text}))", inputs
        if exponent == -1:
            text, inputs = self._part(base)
            return f"(1.0 / {text})", inputs
        (b, b_inputs), (x, x_inputs) = self._bounded([self._part(base), self._part(exponent)])
        return f"({b} ** {x})", b_inputs | x_inputs

    def _extremum(self, e: sympy.Basic) -> tuple[str, frozenset[str]]:
        keep = ">=" if isinstance(e, sympy.Max) else "<="
        args = [self._name(t) for t in e.args]
        text, inputs = args[0]
        for index, (other, other_inputs) in enumerate(args[1:], start=1):
            result = text
            if index > 1:   # the running result is read three times: a statement, never repeated text
                result = self._temporary(text, inputs, False)
                inputs = frozenset({result})
            # NaN in either argument gives NaN: a NaN first argument is kept; a NaN second one fails ``keep``.
            # An infinite argument poisons the result (max(-inf, 1) = 1 would hide it): 0 * inf is NaN.
            poison = f" + 0.0 * {args[0][0]}" if index == 1 else ""
            text = f"(where(({result} {keep} {other}) | ({result} != {result}), {result}, {other}){poison}" \
                   f" + 0.0 * {other})"
            inputs = inputs | other_inputs
        return text, inputs

    def _piecewise(self, e: sympy.Piecewise) -> tuple[str, frozenset[str]]:
        result: tuple[str, frozenset[str]] | None = None
        guards: list[sympy.Basic] = []
        for value, condition in reversed(e.args):
            value_part = self._part(value)
            if result is None and condition is sympy.true:
                result = value_part
                continue
            otherwise = result if result is not None else (NAN_NAME, frozenset({NAN_NAME}))
            parts = self._bounded([self._part(condition), value_part, otherwise], (True,))
            result = (f"where({parts[0][0]}, {parts[1][0]}, {parts[2][0]})",
                      frozenset().union(*(p[1] for p in parts)))
            guards.extend(_compared(condition))
        assert result is not None
        # A NaN in any compared quantity makes the whole piecewise value NaN instead of a silent branch.
        return self._poisoned(result, guards)
