"""Safe parsing of user-typed expressions into sympy objects (the language itself: core.equations.language).

Text is parsed with Python's ``ast`` module and every node is checked against a whitelist before a sympy
object is built from it directly. Nothing is ever passed to eval, exec, sympify or parse_expr. Constant
sub-expressions are folded to floats here (sympy's own evaluation of huge constants can hang), and the size,
depth and exponents of an expression are bounded.

The tree is built unevaluated: sympy's automatic rewrites (x/x -> 1, sqrt(x)**2 -> x, log(exp(x)) -> x,
x - x -> 0, piecewise conditions merged or dropped) change where an expression is defined, and the typed text
is what gets evaluated on points. ``tidy_expression`` applies those rewrites for symbolic views and display.
It is a little over 400 lines: one tree walk with one method per kind of node, kept together so
the whitelist is read in one place.
"""

from __future__ import annotations

import ast
import io
import itertools
import keyword
import math
import re
import tokenize
from collections.abc import Collection, Mapping
from dataclasses import dataclass

import sympy
from sympy.functions.elementary.piecewise import ExprCondPair

from core.equations.language import (
    CONSTANTS,
    FLOAT_COMPARISONS,
    FUNCTIONS,
    MAX_ABS_EXPONENT,
    MAX_DEPTH,
    MAX_NODES,
    MAX_TEXT_LENGTH,
    SYMBOLIC_COMPARISONS,
    ExpressionError,
    check_name,
    data_derivative_key,
    fold_constant,
    number_literal,
)

__all__ = ["ParsedExpression", "find_data_names", "parse_expression", "tidy_expression"]

@dataclass(frozen=True)
class ParsedExpression:
    """A parsed expression and the names it uses (variables, parameters, definitions, data); ``data_names``
    are the names ``find_data_names`` took as background-data quantities (empty for parse_expression).

    ``value`` is the typed tree, unevaluated (x/x stays x/x); ``tidy_expression(value)`` is sympy's tidied form.
    """

    text: str
    value: sympy.Basic
    names: frozenset[str]
    data_names: frozenset[str] = frozenset()


class _Builder:
    """Walks a checked AST and builds sympy objects, folding constants to floats."""

    def __init__(self, source: str, symbols: Mapping[str, sympy.Symbol], data_names: Collection[str],
                 variables: Collection[str], reserved: Collection[str] | None = None) -> None:
        self.source = source
        self.symbols = symbols
        self.data_names = set(data_names)
        self.variables = set(variables)
        self.reserved = None if reserved is None else frozenset(reserved)  # None: unknown names are errors
        self.found: dict[str, sympy.Symbol] = {}   # names taken as data quantities, and their diff() keys
        self.used: set[str] = set()
        self.nodes = 0

    def _data_symbol(self, name: str) -> sympy.Symbol | None:
        """The symbol of an unknown name taken as a data quantity (find_data_names), else None."""
        if self.reserved is None or name in self.reserved or name in self.symbols:
            return None
        try:
            check_name(name)
        except ExpressionError:
            return None
        return self.found.setdefault(name, sympy.Symbol(name, real=True))

    # Constants are carried as Python floats until they meet a symbol.
    def build(self, node: ast.AST, depth: int = 0):
        self.nodes += 1
        if self.nodes > MAX_NODES:
            raise ExpressionError(f"expression is too large (more than {MAX_NODES} parts)")
        if depth > MAX_DEPTH:
            raise ExpressionError(f"expression is nested too deeply (more than {MAX_DEPTH} levels)",
                                  column=_column(node))
        method = getattr(self, f"_build_{type(node).__name__}", None)
        if method is None:
            raise ExpressionError(_describe_forbidden(node), column=_column(node))
        return method(node, depth + 1)

    def _build_Constant(self, node: ast.Constant, depth: int):
        value = number_literal(node.value, self._text(node, limit=None), _column(node))
        return int(value) if isinstance(value, int) else float(value)

    def _text(self, node: ast.AST, limit: int | None = 30) -> str:
        """The typed text of ``node`` (shortened to ``limit`` characters) for messages."""
        text = self.source[node.col_offset:node.end_col_offset] if hasattr(node, "end_col_offset") else ""
        return text if limit is None else _shortened(text, limit)

    def _operator_column(self, node: ast.BinOp) -> int | None:
        """1-based column of a binary operator: the first character after the left operand and its brackets."""
        position = getattr(node.left, "end_col_offset", None)
        if position is None:
            return _column(node)
        while position < len(self.source) and self.source[position] in " )":
            position += 1
        return position + 1

    def _number_operand(self, value, node: ast.AST):
        if _is_condition(value):
            raise ExpressionError("a comparison is used where a number is expected; "
                                  "comparisons belong inside piecewise()", column=_column(node))
        return value

    def _build_Name(self, node: ast.Name, depth: int):
        name = node.id
        if name in CONSTANTS:
            return CONSTANTS[name]
        if name in self.symbols:
            self.used.add(name)
            return self.symbols[name]
        found = self._data_symbol(name)
        if found is not None:
            self.used.add(name)
            return found
        if name in FUNCTIONS or name in ("piecewise", "diff"):
            raise ExpressionError(f"{name!r} is a function: call it like {name}(...)", column=_column(node))
        raise ExpressionError(f"unknown name {name!r}", column=_column(node))

    def _build_UnaryOp(self, node: ast.UnaryOp, depth: int):
        operand = self.build(node.operand, depth)
        if isinstance(node.op, ast.USub | ast.UAdd):
            self._number_operand(operand, node.operand)
        if isinstance(node.op, ast.USub):
            return -operand if _is_number(operand) else sympy.Mul(sympy.S.NegativeOne, operand, evaluate=False)
        if isinstance(node.op, ast.UAdd):
            return operand
        if isinstance(node.op, ast.Not):
            raise ExpressionError("'not' is not supported; compare with <, <=, >, >= instead",
                                  column=_column(node))
        raise ExpressionError(_describe_forbidden(node), column=_column(node))

    def _build_BinOp(self, node: ast.BinOp, depth: int):
        """A chain of binary operators along the left (a + b - c * d ...), walked without recursion.

        Nodes are counted, depths checked and operands built in the order a recursive walk would take, but a
        sum or product is grown in a list and made a sympy object once (each unevaluated Add of n terms costs
        n, so building it term by term cost n**2: a 95-term sum took 70 ms)."""
        spine = [(node, depth)]
        self._check_operator(node)
        while isinstance(spine[-1][0].left, ast.BinOp):
            inner, inner_depth = spine[-1][0].left, spine[-1][1] + 1
            self.nodes += 1
            if self.nodes > MAX_NODES:
                raise ExpressionError(f"expression is too large (more than {MAX_NODES} parts)")
            if inner_depth - 1 > MAX_DEPTH:
                raise ExpressionError(f"expression is nested too deeply (more than {MAX_DEPTH} levels)",
                                      column=_column(inner))
            self._check_operator(inner)
            spine.append((inner, inner_depth))
        innermost, innermost_depth = spine[-1]
        value = self._number_operand(self.build(innermost.left, innermost_depth), innermost.left)
        growing: _Growing | None = None
        for binop, binop_depth in reversed(spine):
            right = self._number_operand(self.build(binop.right, binop_depth), binop.right)
            value, growing = self._combined(binop, value, growing, right)
        return growing.value() if growing is not None else value

    def _check_operator(self, node: ast.BinOp) -> None:
        op = node.op
        if isinstance(op, ast.BitXor):
            column = self.source.find("^", getattr(node.left, "end_col_offset", 0)) + 1 or None
            raise ExpressionError("'^' is not a power here: write x**2 for x squared", column=column)
        if not isinstance(op, ast.Add | ast.Sub | ast.Mult | ast.Div | ast.Pow):
            raise ExpressionError(f"operator {_OPERATOR_TEXT.get(type(op), '?')!r} is not supported; "
                                  "use + - * / **", column=_column(node))

    def _combined(self, node: ast.BinOp, left, growing: _Growing | None, right):
        """(value, growing sum or product) after ``left op right``; ``growing`` holds ``left`` when not None."""
        op = node.op
        if growing is None and _is_number(left) and _is_number(right):
            function = {ast.Add: lambda p, q: p + q, ast.Sub: lambda p, q: p - q, ast.Mult: lambda p, q: p * q,
                        ast.Div: lambda p, q: p / q, ast.Pow: math.pow}[type(op)]
            return fold_constant(function, (left, right), node, self._text(node),
                                 operator_column=self._operator_column(node)), None
        if isinstance(op, ast.Div) and _is_number(right) and right == 0:
            raise ExpressionError(f"division by zero ({self._text(node)})", column=self._operator_column(node))
        if isinstance(op, ast.Pow) and _is_number(right) and abs(right) > MAX_ABS_EXPONENT:
            raise ExpressionError(f"exponent {right:g} is larger than {MAX_ABS_EXPONENT}", column=_column(node))
        # Built unevaluated: a - b is a + (-1)*b and a/b is a*b**-1, exactly as sympy spells them, but
        # nothing cancels (x/x stays undefined where x is 0). A left operand of the same kind is joined, as
        # a + b + c is evaluated left to right either way (a long sum stays shallow).
        right = _to_sympy(right)
        if isinstance(op, ast.Pow):
            base = growing.value() if growing is not None else _to_sympy(left)
            return sympy.Pow(base, right, evaluate=False), None
        if isinstance(op, ast.Sub):
            right = sympy.Mul(sympy.S.NegativeOne, right, evaluate=False)
        elif isinstance(op, ast.Div):
            right = sympy.Pow(right, sympy.S.NegativeOne, evaluate=False)
        kind = sympy.Add if isinstance(op, ast.Add | ast.Sub) else sympy.Mul
        if growing is not None and growing.kind is not kind:
            left, growing = growing.value(), None
        if growing is None:
            growing = _Growing(kind, _to_sympy(left))
        growing.append(right)
        return None, growing

    def _build_Compare(self, node: ast.Compare, depth: int):
        operands = [node.left, *node.comparators]
        terms = [self._number_operand(self.build(o, depth), o) for o in operands]
        conditions = []
        for op, left, right in zip(node.ops, terms, terms[1:], strict=False):
            if type(op) not in SYMBOLIC_COMPARISONS:
                raise ExpressionError("only <, <=, >, >= comparisons are allowed (no == or !=)",
                                      column=_column(node))
            if _is_number(left) and _is_number(right):
                conditions.append(sympy.true if FLOAT_COMPARISONS[type(op)](left, right) else sympy.false)
            else:   # unevaluated: x < x stays a comparison of x, NaN where x is
                conditions.append(SYMBOLIC_COMPARISONS[type(op)](_to_sympy(left), _to_sympy(right),
                                                                 evaluate=False))
        return _unevaluated_logic(sympy.And, conditions)

    def _build_BoolOp(self, node: ast.BoolOp, depth: int):
        values = [self.build(v, depth) for v in node.values]
        for value, sub in zip(values, node.values, strict=True):
            if not _is_condition(value):
                raise ExpressionError("'and'/'or' join comparisons, not numbers", column=_column(sub))
        return _unevaluated_logic(sympy.And if isinstance(node.op, ast.And) else sympy.Or, values)

    def _build_Call(self, node: ast.Call, depth: int):
        if not isinstance(node.func, ast.Name):
            raise ExpressionError("only plain function names can be called, e.g. sin(x)",
                                  column=_column(node))
        name = node.func.id
        if node.keywords:
            raise ExpressionError(f"{name}() takes no keyword arguments", column=_column(node))
        if any(isinstance(a, ast.Starred) for a in node.args):
            raise ExpressionError("'*' unpacking is not allowed", column=_column(node))
        if name == "piecewise":
            return self._piecewise(node, depth)
        if name == "diff":
            return self._data_derivative(node)
        if name not in FUNCTIONS:
            hint = " (names are case-sensitive)" if name.lower() in FUNCTIONS else ""
            raise ExpressionError(f"unknown function {name!r}{hint}", column=_column(node))
        arity, builder, evaluator = FUNCTIONS[name]
        args = [self.build(a, depth) for a in node.args]
        if arity > 0 and len(args) != arity:
            raise ExpressionError(f"{name}() takes {arity} argument{'s' * (arity > 1)}, got {len(args)}",
                                  column=_column(node))
        if arity < 0 and len(args) < -arity:
            raise ExpressionError(f"{name}() takes at least {-arity} arguments", column=_column(node))
        for arg, sub in zip(args, node.args, strict=True):
            if _is_condition(arg):
                raise ExpressionError(f"{name}() takes numbers, not a comparison", column=_column(sub))
        if all(_is_number(a) for a in args):
            return fold_constant(evaluator, args, node, self._text(node))
        return builder(*[_to_sympy(a) for a in args])

    def _piecewise(self, node: ast.Call, depth: int):
        """piecewise(cond1, value1, cond2, value2, ..., otherwise): the first true condition wins."""
        args = node.args
        if len(args) < 3 or len(args) % 2 == 0:
            raise ExpressionError("piecewise() takes pairs (condition, value) and a final 'otherwise' value, "
                                  "e.g. piecewise(x < 0, 1, x**2)", column=_column(node))
        pairs = []
        for index in range(0, len(args) - 1, 2):
            condition = self.build(args[index], depth)
            if not _is_condition(condition):
                raise ExpressionError("piecewise() conditions must be comparisons such as x < 0",
                                      column=_column(args[index]))
            value = self._number_argument(args[index + 1], depth, "piecewise()")
            pairs.append((value, condition))
        pairs.append((self._number_argument(args[-1], depth, "piecewise()"), sympy.true))
        return _unevaluated_piecewise(pairs)

    def _number_argument(self, node: ast.AST, depth: int, where: str):
        value = self.build(node, depth)
        if _is_condition(value):
            raise ExpressionError(f"{where} values must be numbers, not comparisons", column=_column(node))
        return value

    def _data_derivative(self, node: ast.Call):
        """diff(NAME, VAR): first derivative of a data quantity, supplied by the data layer."""
        args = node.args
        if len(args) != 2 or not all(isinstance(a, ast.Name) for a in args):
            raise ExpressionError("diff() takes a data quantity and a variable, e.g. diff(u, x)",
                                  column=_column(node))
        quantity, variable = args[0].id, args[1].id
        if quantity not in self.data_names and self._data_symbol(quantity) is None:
            raise ExpressionError(f"diff() applies to data quantities; {quantity!r} is not one",
                                  column=_column(args[0]))
        if variable not in self.variables:
            raise ExpressionError(f"diff() needs an independent variable, not {variable!r}",
                                  column=_column(args[1]))
        key = data_derivative_key(quantity, variable)
        self.used.add(key)
        if key in self.symbols:
            return self.symbols[key]
        return self.found.setdefault(key, sympy.Symbol(key, real=True))


class _Growing:
    """An unevaluated sum or product being built term by term: ``value()`` is what calling
    ``kind(*terms, right, evaluate=False)`` after every term would give (a left operand of the same kind
    joined), made once."""

    def __init__(self, kind: type, first: sympy.Basic) -> None:
        self.kind = kind
        self.terms: list = list(first.args) if first.func is kind else [first]

    def append(self, term: sympy.Basic) -> None:
        self.terms.append(term)

    def value(self) -> sympy.Basic:
        return self.kind(*self.terms, evaluate=False)


_OPERATOR_TEXT = {ast.Mod: "%", ast.FloorDiv: "//", ast.MatMult: "@", ast.BitAnd: "&", ast.BitOr: "|",
                  ast.LShift: "<<", ast.RShift: ">>"}


def _describe_forbidden(node: ast.AST) -> str:
    kind = type(node).__name__
    friendly = {
        "Attribute": "attribute access ('.') is not allowed",
        "Subscript": "indexing with [] is not allowed",
        "Lambda": "lambda is not allowed",
        "IfExp": "'if ... else' is not allowed; use piecewise(condition, value, otherwise)",
        "List": "lists are not allowed", "Tuple": "tuples are not allowed", "Dict": "dicts are not allowed",
        "Set": "sets are not allowed", "JoinedStr": "strings are not allowed",
        "NamedExpr": "':=' is not allowed", "Await": "'await' is not allowed",
        "ListComp": "comprehensions are not allowed", "GeneratorExp": "comprehensions are not allowed",
    }
    return friendly.get(kind, f"{kind} is not allowed in an expression")


def _column(node: ast.AST) -> int | None:
    offset = getattr(node, "col_offset", None)
    return None if offset is None else offset + 1


def _is_condition(value) -> bool:
    """True for comparisons and their and/or combinations (sympy's Symbol is a Boolean too, so test kinds)."""
    return isinstance(value, sympy.core.relational.Relational | sympy.logic.boolalg.BooleanFunction
                      | sympy.logic.boolalg.BooleanAtom)


def _is_number(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def _unevaluated_logic(kind: type, conditions: list) -> sympy.Basic:
    """``kind`` (sympy.And or sympy.Or) of ``conditions`` without sympy's merging.

    sympy.And has no evaluate=False and turns And(x < 0, x >= 0) into false, which would drop x from the
    piecewise NaN guard (codegen makes a piecewise NaN wherever a compared quantity is). Constant parts are
    decided here; the others are kept as typed, constants after them (numexpr cannot start with a constant).
    """
    absorbing = sympy.false if kind is sympy.And else sympy.true
    constants = [c for c in conditions if isinstance(c, sympy.logic.boolalg.BooleanAtom)]
    others = [c for c in conditions if not isinstance(c, sympy.logic.boolalg.BooleanAtom)]
    if not others:
        return absorbing if absorbing in constants else ~absorbing
    if len(others) == 1 and not constants:
        return others[0]
    arguments = others + ([absorbing] if absorbing in constants else [])
    if len(arguments) == 1:
        return arguments[0]
    # LatticeOp.__new__ builds its objects this way after its simplifying filter, which is skipped here.
    result = sympy.Basic.__new__(kind, *arguments)
    result._argset = frozenset(arguments)
    return result


def _unevaluated_piecewise(pairs: list[tuple]) -> object:
    """The piecewise value of (value, condition) ``pairs``, the last condition being true, as typed.

    sympy.Piecewise drops every pair after a true condition and (evaluating) merges conditions, both of which
    can drop a compared quantity from the NaN guard. Here only constant-false pairs are dropped (they compare
    no quantity); when every condition is a constant the chosen value is returned, as nothing is compared.
    """
    kept = [(value, condition) for value, condition in pairs if condition is not sympy.false]
    if all(condition is sympy.true for _, condition in kept):
        return kept[0][0]
    # Piecewise.__new__ ends the same way (Basic.__new__ over ExprCondPair tuples); ExprCondPair.__new__
    # would rewrite a condition holding a piecewise into an ITE, which codegen does not evaluate.
    return sympy.Basic.__new__(sympy.Piecewise, *[
        sympy.Tuple.__new__(ExprCondPair, _to_sympy(value), condition) for value, condition in kept])


def tidy_expression(value: sympy.Basic) -> sympy.Basic:
    """``value`` with sympy's automatic simplifications applied (x/x -> 1, like terms collected).

    For symbolic views and display only: the rewrites can change where an expression is defined, so points
    are always evaluated from the typed tree. Rebuilds bottom-up without recursion (trees can be deep).
    """
    done: dict[int, sympy.Basic] = {}
    stack = [value]
    while stack:
        node = stack[-1]
        if id(node) in done:
            stack.pop()
            continue
        pending = [a for a in node.args if id(a) not in done]
        if pending:
            stack.extend(pending)
            continue
        stack.pop()
        done[id(node)] = node.func(*[done[id(a)] for a in node.args]) if node.args else node
    return done[id(value)]


def _to_sympy(value):
    if isinstance(value, bool):
        return sympy.true if value else sympy.false
    if isinstance(value, int):
        return sympy.Integer(value)
    if isinstance(value, float):
        return sympy.Float(value)
    return value


_IMPLICIT_PRODUCT = re.compile(r"(?<![A-Za-z_0-9.])(\d+(?:\.\d*)?)([A-Za-z_(])")


def parse_expression(text: str, symbols: Mapping[str, sympy.Symbol], *, data_names: Collection[str] = (),
                     variables: Collection[str] = ()) -> ParsedExpression:
    """Parse ``text`` into a sympy expression over ``symbols``.

    ``symbols`` maps every name the expression may use (variables, parameters, definitions, data quantities,
    and ``diff(NAME,VAR)`` keys) to its sympy Symbol. Raises ExpressionError with a 1-based column.
    """
    return _parse(text, _Builder(_checked_source(text), symbols, data_names, variables))


def find_data_names(text: str, symbols: Mapping[str, sympy.Symbol], *, variables: Collection[str] = (),
                    reserved: Collection[str] = ()) -> ParsedExpression:
    """Parse ``text`` taking every name it uses that ``symbols`` lacks as a background-data quantity.

    A name becomes a data quantity when it is a valid name (check_name) and not in ``reserved``; also the
    NAME of ``diff(NAME, VAR)``. The result's ``data_names`` lists them. Other problems raise ExpressionError
    as parse_expression does.
    """
    builder = _Builder(_checked_source(text), symbols, (), variables, reserved)
    parsed = _parse(text, builder)
    data = frozenset(name for name in builder.found if not name.startswith("diff("))
    return ParsedExpression(text=parsed.text, value=parsed.value, names=parsed.names, data_names=data)


def _checked_source(text: str) -> str:
    """The stripped text of one expression; ExpressionError when it is no text, too long or not one line."""
    if not isinstance(text, str):
        raise ExpressionError(f"expected text, got {type(text).__name__}")
    if len(text) > MAX_TEXT_LENGTH:
        raise ExpressionError(f"expression is longer than {MAX_TEXT_LENGTH} characters")
    if not text.strip():
        raise ExpressionError("expression is empty")
    if not text.isascii():
        bad = next(i for i, ch in enumerate(text) if not ch.isascii())
        raise ExpressionError(f"character {text[bad]!r} is not allowed (ASCII only)", column=bad + 1)
    if "\n" in text.strip() or "\r" in text:
        raise ExpressionError("an expression is a single line")
    return text.strip()


# Text Python's tokenizer would warn about (a SyntaxWarning for 0and y, a DeprecationWarning for the escape in
# '\d'): a number running into a name, or a string. Rare, so the tokens are read only when this matches.
_WARNED_TEXT = re.compile(r"[0-9.][A-Za-z_]|\\")


def _refuse_warned_tokens(source: str) -> None:
    """Refuse, before Python's parser warns about it, a number run into a keyword (``0and y``, ``1if``) and a
    string holding a backslash; other tokenizer problems are left to ast.parse (syntax errors), and other
    strings to the tree walk, which refuses them where they stand."""
    if not _WARNED_TEXT.search(source):
        return
    try:
        tokens = list(tokenize.generate_tokens(io.StringIO(source).readline))
    except (tokenize.TokenError, SyntaxError, ValueError):
        return
    for token, following in itertools.pairwise(tokens):
        if token.type == tokenize.STRING and "\\" in token.string:
            raise ExpressionError(f"only numbers are allowed here, not {_shortened(token.string)}",
                                  column=token.start[1] + 1)
        if token.type == tokenize.NUMBER and following.type == tokenize.NAME and following.start == token.end \
                and keyword.iskeyword(following.string):
            raise ExpressionError(f"a number runs into {following.string!r}: put a space between "
                                  f"{_shortened(token.string)} and {following.string!r}",
                                  column=following.start[1] + 1)


def _shortened(text: str, limit: int = 30) -> str:
    """``text`` cut to ``limit`` characters for a message, control characters written as escapes."""
    text = text if len(text) <= limit else text[:limit - 3] + "..."
    return "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode("ascii") for ch in text)


def _parse(text: str, builder: _Builder) -> ParsedExpression:
    source = builder.source
    _refuse_warned_tokens(source)
    try:
        tree = ast.parse(source, mode="eval")
    except SyntaxError as error:
        implicit = _IMPLICIT_PRODUCT.search(source)
        if implicit:
            number, name = implicit.groups()
            raise ExpressionError(f"write {number}*{name} for a product, not {number}{name}",
                                  column=implicit.start() + 1) from None
        column = error.offset if error.offset else None
        raise ExpressionError(f"syntax error: {error.msg}", column=column) from None
    except (RecursionError, MemoryError, ValueError):
        raise ExpressionError("expression is nested too deeply or is malformed") from None
    try:
        value = builder.build(tree.body)
    except RecursionError:
        raise ExpressionError("expression is nested too deeply") from None
    except TypeError:
        raise ExpressionError("a comparison is used where a number is expected; "
                              "comparisons belong inside piecewise()") from None
    if _is_condition(value):
        raise ExpressionError("expression is a comparison, not a number; use it inside piecewise()")
    return ParsedExpression(text=text, value=_to_sympy(value), names=frozenset(builder.used))
