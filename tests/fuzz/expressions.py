"""Hypothesis strategies for expression text: the whole language of core.equations.language, and hostile text.

``grammar_expressions`` covers every function of the whitelist with its arity (min/max with several
arguments), every operator, every literal form Python reads as a number, comparisons (chained too) joined
with and/or inside piecewise, diff() of a name, the constants and the names a case defines. ``hostile_texts``
adds what a user or a file could type to break the parser: control characters, non-ASCII text, huge and tiny
literals, deep nesting of every kind, long names, Python constructs outside the language, and text at and
beyond the documented limits. ``expression_cases`` places a text in a coefficient or a definition of a
classify, probe or trace command on a small grid.
"""

from __future__ import annotations

from hypothesis import strategies as st

from core.equations.language import FUNCTIONS, MAX_NAME_LENGTH, MAX_NODES, MAX_TEXT_LENGTH
from tests.fuzz.cases import Case

__all__ = ["expression_cases", "grammar_expressions", "hostile_texts"]

# Names every case defines: the variables, a parameter (--param k=...) and a definition (--let q=...).
KNOWN_NAMES = ("x", "y", "k", "q")
_NAMES = st.sampled_from((*KNOWN_NAMES, "x", "y", "pi", "e", "zeta", "u2", "Mach_1"))
_LITERALS = (
    "0", "1", "2", "10", "0.5", ".5", "5.", "1e3", "1E-3", "2.5e+2", "1_000", "0x1F", "0o17", "0b101", "00",
    "1e308", "1.7976931348623157e308", "5e-324", "2.2250738585072014e-308", "9007199254740992",
    "9007199254740993", "1e-320", "0.0", "0e0", "1e-400", "1e309", "123456789012345678901234567890", "1j",
)
_COMPARISONS = ("<", "<=", ">", ">=")
_BINARY = ("+", "-", "*", "/", "**")


def _number() -> st.SearchStrategy[str]:
    return st.one_of(
        st.sampled_from(_LITERALS),
        st.integers(min_value=0, max_value=10**6).map(str),
        st.floats(min_value=0, allow_nan=False, allow_infinity=False).map(repr),
        st.builds(lambda mantissa, exponent: f"{mantissa}e{exponent}", st.integers(1, 99),
                  st.integers(-330, 330)),
    )


def _bracketed(text: str, bracket: bool) -> str:
    return f"({text})" if bracket else text


def _extend(children: st.SearchStrategy[str]) -> st.SearchStrategy[str]:
    unary = st.builds(lambda sign, text, b: f"{sign}{_bracketed(text, b)}", st.sampled_from(("-", "+")),
                      children, st.booleans())
    binary = st.builds(lambda left, op, right, bl, br: f"{_bracketed(left, bl)} {op} {_bracketed(right, br)}",
                       children, st.sampled_from(_BINARY), children, st.booleans(), st.booleans())
    fixed = [name for name, (arity, _, _) in FUNCTIONS.items() if arity > 0]
    calls = st.sampled_from(fixed).flatmap(
        lambda name: st.lists(children, min_size=FUNCTIONS[name][0], max_size=FUNCTIONS[name][0]).map(
            lambda args: f"{name}({', '.join(args)})"))
    extremes = st.builds(lambda name, args: f"{name}({', '.join(args)})", st.sampled_from(("min", "max")),
                         st.lists(children, min_size=2, max_size=5))
    comparison = st.builds(lambda parts, ops: " ".join(p for pair in zip(parts, ops, strict=False) for p in pair)
                           + f" {parts[-1]}", st.lists(children, min_size=2, max_size=3),
                           st.lists(st.sampled_from(_COMPARISONS), min_size=2, max_size=2))
    condition = st.builds(lambda parts, joins: parts[0] + "".join(f" {j} ({p})" for j, p in
                                                                  zip(joins, parts[1:], strict=False)),
                          st.lists(comparison, min_size=1, max_size=3),
                          st.lists(st.sampled_from(("and", "or")), min_size=2, max_size=2))
    piecewise = st.builds(lambda pairs, otherwise: "piecewise(" + ", ".join(f"{c}, {v}" for c, v in pairs)
                          + f", {otherwise})", st.lists(st.tuples(condition, children), min_size=1, max_size=3),
                          children)
    derivative = st.builds(lambda name, variable: f"diff({name}, {variable})", _NAMES,
                           st.sampled_from(("x", "y", "k")))
    return st.one_of(unary, binary, calls, extremes, piecewise, derivative)


def grammar_expressions(max_leaves: int = 12) -> st.SearchStrategy[str]:
    """Expressions of the language (and near it: unknown names, literals doubles cannot hold)."""
    return st.recursive(st.one_of(_NAMES, _number()), _extend, max_leaves=max_leaves)


_FORBIDDEN = (
    "__import__('os')", "x.real", "[x]", "(x, y)", "{x: 1}", "{x}", "lambda: 1", "'text'", "b'x'", "f'{x}'",
    "x if y else 1", "(z := 1)", "0and y", "1if x else 2", "1or y", "x @ y", "x % y", "x // y", "x & y",
    "x | y", "x ^ y", "x << 1", "~x", "not x", "x == y", "x != y", "x is y", "x in y", "sin(x=1)", "max(*x)",
    "sin(*[x])", "True", "None", "...", "x[0]", "await x", "yield x", "sin", "Sin(x)", "exec('1')",
    "eval('x')", "open('/etc/passwd')", "getattr(x, 'y')", "x;y", "x\ny", "x\r", "#x", "x # note",
    "(x for x in y)", "[x for x in y]", "sin()", "atan2(x)", "max(x)", "piecewise(x)", "piecewise(x < 0, 1)",
    "piecewise(1, 2, 3)", "diff(x, y)", "diff(zeta)", "diff(zeta, q)", "x < y", "x < y < 1", "sqrt(-1)",
    "log(0)", "1/0", "0**-1", "(-8)**(1/3)", "10**400", "2**64", "exp(1000)", "x**65", "x**-65", "acos(2)",
    "-(-(-x))", "+-+-x", "x**x**x**x**x", "\\x", "x\\\ny", "x\x00", "\x1b[2Jx", "x\u202e", "\ufeffx", "\u00e9",
    "x\u00a0+ y", "\uff58", "x\t+\ty", "\t", "", " ", "()", "(", ")", "x)", "(x", "1e", "1e+", "0x", "1__0",
    "1.2.3", "09", "1_", "k=1", "x =y", "x: int",
)


def _deep(opening: str, middle: str, closing: str) -> st.SearchStrategy[str]:
    return st.integers(min_value=20, max_value=MAX_TEXT_LENGTH + 200).map(
        lambda n: opening * n + middle + closing * n)


def hostile_texts() -> st.SearchStrategy[str]:
    """Text that must be refused with a located one-line message, or evaluated in bounded time."""
    control = st.characters(min_codepoint=0, max_codepoint=31) | st.sampled_from("\x7f\x85\u2028\u2029\u200b")
    unicode = st.characters(min_codepoint=128, max_codepoint=0x10FFFF, exclude_categories=("Cs",))

    def inserted(text: str, extra: str, where: int) -> str:
        spot = where % (len(text) + 1)
        return text[:spot] + extra + text[spot:]

    return st.one_of(
        st.sampled_from(_FORBIDDEN),
        st.builds(inserted, grammar_expressions(6), control, st.integers(0, 200)),
        st.builds(inserted, grammar_expressions(6), unicode, st.integers(0, 200)),
        _deep("(", "x", ")"),
        _deep("-", "x", ""),
        _deep("sin(", "x", ")"),
        _deep("max(x, ", "y", ")"),
        _deep("x**", "x", ""),
        _deep("(x**", "x", ")"),
        _deep("piecewise(x < 0, ", "x", ", 1)"),
        st.integers(1, 3000).map(lambda n: "9" * n),
        st.integers(1, 400).map(lambda n: "0." + "0" * n + "1"),
        st.integers(300, 5000).map(lambda n: f"1e{n}"),
        st.integers(MAX_NAME_LENGTH - 2, 3000).map(lambda n: "a" * n),
        st.integers(MAX_NODES // 3, MAX_NODES * 2).map(lambda n: " + ".join(["x*y"] * n)),
        st.integers(MAX_NODES // 4, MAX_NODES).map(lambda n: "max(" + ", ".join(f"x + {i}" for i in range(n)) + ")"),
        st.integers(MAX_TEXT_LENGTH - 5, MAX_TEXT_LENGTH + 5).map(lambda n: ("x+" * n)[:n - 1] + "1"),
        st.text(st.characters(min_codepoint=32, max_codepoint=126), max_size=60),
        st.text(max_size=40),
    )


_COMMANDS = ("classify", "probe", "trace")


def _argv(command: str, slot: str, text: str, grid: int, raw: bool) -> tuple[str, ...]:
    """The command line placing ``text`` in ``slot`` (a, b, c or the definition q)."""
    coefficients = {"a": "1 + y*y", "b": "x", "c": "q"}
    definition = "k*x - y"
    if slot == "q":
        definition = text
    else:
        coefficients[slot] = text
    argv = [command, *(f"--{name}={value}" for name, value in coefficients.items()),
            f"--let=q={definition}", "--param=k=0.5", "--domain", "-1", "1", "-1", "1"]
    if command == "classify":
        argv += ["--grid", str(grid)] + (["--raw"] if raw else [])
    elif command == "probe":
        argv += ["--at", "0.25", "0.5"]
    else:
        argv += ["--from", "0.1", "-0.3"]
    return (*argv, "--json")


def expression_cases(*, hostile_share: float = 0.4) -> st.SearchStrategy[Case]:
    """Cases running one generated text as a coefficient or definition (hostile text ``hostile_share``
    of the time)."""
    text = st.one_of(grammar_expressions(), hostile_texts()) if hostile_share >= 0.5 else st.one_of(
        grammar_expressions(), grammar_expressions(), hostile_texts())
    return st.builds(lambda command, slot, expression, grid, raw: Case(
        "expression", _argv(command, slot, expression, grid, raw), description=f"expression in {slot}"),
        st.sampled_from(_COMMANDS), st.sampled_from(("a", "b", "c", "q")), text, st.integers(3, 16),
        st.booleans())
