"""Exact symbolic analysis of a u_xx + b u_xy + c u_yy + d u_x + e u_y + f u = 0 with formula coefficients.

``analyze_equation`` gives, as sympy expressions in the study's own symbols:

- D = b^2 - 4ac with every definition substituted, expanded and factored, and the role of each factor
  (core.analysis.discriminant_factors): the type-change curves are the zero sets of the factors of odd
  multiplicity that change sign; factors of even multiplicity (or of one sign) are tangencies;
- the zones, each type with its condition (``y < 0``), written with D's factors;
- per characteristic family, numbered as core.analysis.directions numbers them (family 1 ~ (2a, b + sqrt(D)),
  family 2 ~ (2a, b - sqrt(D)), or (b -+ sqrt(D), 2c) where 2a and b +- sqrt(D) both vanish identically),
  the direction, the slope dy/dx and an invariant constant along its curves (core.analysis.first_integrals);
- the canonical form of each type that has one (core.analysis.canonical_forms).

The analysis covers the whole plane: it needs no domain or grid.

Parameters stay symbols unless ``substitute_parameters``; either way their values (defaults overridden by
``parameters``) are where signs are sampled. Numbers typed as decimals become the simplest exact number with
the same double (0.1 -> 1/10, 0.333...33 -> 1/3). Quantities from background data are symbols of unknown
value: D and the zones are written with them, but no invariant or canonical form is sought (a note says so).

Everything sympy may not finish (factoring, integration, dsolve, simplify) runs through
core.deadline.run_with_deadline within one budget of ``deadline_seconds`` for the whole analysis, shared
between the steps by weight; a step that runs out leaves its part None with a note.
"""

from __future__ import annotations

import time
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction

import sympy

from core.analysis.canonical_forms import NAMES, PRINCIPAL, CanonicalForm, canonical_form
from core.analysis.discriminant_factors import (
    DiscriminantFactor,
    FactoredDiscriminant,
    discriminant_zones,
    factor_discriminant,
    sample_points,
)
from core.analysis.first_integrals import (
    FirstIntegral,
    complex_coordinates,
    family_directions,
    first_integral,
)
from core.deadline import TimedOut, run_with_deadline
from core.equations.compiled import CompiledEquation, compile_equation
from core.equations.equation import Equation
from core.equations.formula_text import NotInLanguage, formula_text
from core.equations.language import ExpressionError
from core.equations.parser import parse_expression, tidy_expression
from core.progress import CancelCheck, Cancelled

__all__ = ["DEFAULT_DEADLINE_SECONDS", "LOWER_ORDER_NAMES", "CharacteristicFamily", "ExactAnalysis", "Zone",
           "analyze_equation"]

DEFAULT_DEADLINE_SECONDS = 30.0
LOWER_ORDER_NAMES = ("d", "e", "f")     # coefficients of u_x, u_y and u
_SHORTEST_STEP = 0.05                   # seconds: a step given less is not started
_LEAST_STEP = 1.0                       # seconds a step is given if that much is left, whatever its share
_WEIGHTS = {"discriminant": 1.0, "directions": 2.0, "family": 3.0, "elliptic": 3.0, "canonical": 1.0}


@dataclass(frozen=True)
class Zone:
    """Where D gives ``type``: ``condition`` a sympy relation (or And of them), None for everywhere."""

    type: str
    condition: sympy.Basic | None


@dataclass(frozen=True)
class CharacteristicFamily:
    """A characteristic family (1 or 2): ``direction`` (dx, dy), ``slope`` dy/dx (None where the family is
    vertical), ``invariant`` constant along its curves (None when none was found), ``method`` how."""

    family: int
    direction: tuple[sympy.Expr, sympy.Expr] | None
    slope: sympy.Expr | None
    invariant: sympy.Expr | None
    method: str = ""


@dataclass(frozen=True)
class ExactAnalysis:
    """The exact analysis of one equation (module docstring). Expressions use the study's symbols; the data
    quantities named in ``data_quantities`` are symbols of unknown value."""

    variables: tuple[str, str]
    coefficients: Mapping[str, sympy.Expr]        # a, b, c, d, e, f as analysed
    parameter_values: Mapping[str, sympy.Expr]    # exact; substituted, or where signs were sampled
    parameters_substituted: bool
    data_quantities: tuple[str, ...]
    discriminant: sympy.Expr
    discriminant_factored: sympy.Expr
    factors: tuple[DiscriminantFactor, ...]
    zones: tuple[Zone, ...]
    characteristics: tuple[CharacteristicFamily, ...]
    canonical: tuple[CanonicalForm, ...]
    notes: tuple[str, ...]
    deadline_seconds: float

    @property
    def type_change(self) -> tuple[sympy.Expr, ...]:
        """Factors whose zero set is a type-change curve: odd multiplicity, not of one sign (including those
        not decided and those holding data)."""
        changing = ("type_change", "undecided", "data")
        return tuple(f.expression for f in self.factors
                     if f.multiplicity > 0 and f.multiplicity % 2 and f.role in changing)

    @property
    def tangencies(self) -> tuple[sympy.Expr, ...]:
        """Factors along which D touches 0 without changing sign."""
        return tuple(f.expression for f in self.factors if f.role == "tangency")


class _Budget:
    """The analysis' one time budget, shared between steps by weight; notes what ran out."""

    def __init__(self, seconds: float, cancel: CancelCheck | None = None) -> None:
        self.end = time.monotonic() + seconds
        self.notes: list[str] = []
        self.cancel = cancel

    def run(self, what: str, weight: float, later: float, function, *args):
        """``function(*args)`` through run_with_deadline with ``weight / (weight + later)`` of the time left,
        but at least _LEAST_STEP (a child process may take a few tenths of a second to start) or what is left;
        None (and a note) when it runs out, fails or no time is left; Cancelled when ``cancel`` says so."""
        if self.cancel is not None and self.cancel():
            raise Cancelled("exact analysis cancelled")
        left = self.end - time.monotonic()
        seconds = min(left, max(left * weight / (weight + later), _LEAST_STEP))
        if seconds < _SHORTEST_STEP:
            self.notes.append(f"{what}: no time left in the deadline")
            return None
        try:
            return run_with_deadline(function, *args, seconds=seconds, cancel=self.cancel)
        except Cancelled:
            raise
        except TimedOut:
            self.notes.append(f"{what}: sympy did not finish within its share of the deadline "
                              f"({seconds:.3g} s)")
        except Exception as error:  # noqa: BLE001 - sympy raises many kinds; the analysis goes on without it
            self.notes.append(f"{what}: sympy failed ({type(error).__name__}: {error})")
        return None


def _exact_number(value: float) -> sympy.Expr:
    """The simplest exact number with the same double: a fraction with a small denominator, a simple
    expression in pi, e or square roots, else the decimal of the shortest repr."""
    fraction = Fraction(value).limit_denominator(10 ** 6)
    if float(fraction) == value:
        return sympy.Rational(fraction.numerator, fraction.denominator)
    guess = sympy.nsimplify(sympy.Float(value, 17), [sympy.pi, sympy.E])
    if guess.is_number and not guess.has(sympy.Float) and float(guess) == value:
        return guess
    return sympy.Rational(repr(value))


def _exact_numbers(expression: sympy.Basic) -> sympy.Basic:
    """``expression`` with every Float replaced by ``_exact_number`` of it."""
    floats = expression.atoms(sympy.Float)
    return expression.xreplace({f: _exact_number(float(f)) for f in floats}) if floats else expression


def _definitions(compiled: CompiledEquation) -> dict[sympy.Symbol, sympy.Expr]:
    """Every definition's symbol -> its expression with the definitions it uses substituted."""
    resolved: dict[sympy.Symbol, sympy.Expr] = {}
    for name in compiled.definition_order:
        resolved[compiled.symbols[name]] = compiled.symbolic[name].xreplace(resolved)
    return resolved


def _lower_order(compiled: CompiledEquation, lower_order: Mapping[str, object] | None,
                 definitions: Mapping[sympy.Symbol, sympy.Expr]) -> dict[str, sympy.Expr]:
    """d, e, f as sympy expressions (0 where not given); text goes through the whitelisted parser."""
    unknown = set(lower_order or {}) - set(LOWER_ORDER_NAMES)
    if unknown:
        raise ValueError(f"lower_order takes {', '.join(LOWER_ORDER_NAMES)}; "
                         f"got {', '.join(sorted(unknown))}")
    variables = set(compiled.variables)
    data_names = [name for name in compiled.symbols if name not in variables and name not in
                  compiled.parameter_defaults and name not in compiled.definition_order and "(" not in name]
    values = {}
    for key in LOWER_ORDER_NAMES:
        given = (lower_order or {}).get(key, 0)
        if isinstance(given, str):
            try:
                given = parse_expression(given, compiled.symbols, data_names=data_names,
                                         variables=compiled.variables).value
            except ExpressionError as error:
                raise error.in_field(key) from None
        elif isinstance(given, int | float):
            given = sympy.Float(given) if isinstance(given, float) else sympy.Integer(given)
        elif not isinstance(given, sympy.Expr):
            raise TypeError(f"lower_order[{key!r}] must be formula text, a number or a sympy expression")
        values[key] = tidy_expression(sympy.S(given).xreplace(dict(definitions)))
    return values


def _text(expression: sympy.Basic) -> str:
    try:
        return formula_text(expression, order=None)
    except NotInLanguage:
        return str(expression)


def _factor_notes(factored: FactoredDiscriminant, checked_at: Mapping[sympy.Symbol, sympy.Expr]) -> list[str]:
    """What the roles of D's factors mean for the reader; ``checked_at`` the parameter values signs were
    sampled at (empty when the parameters were substituted)."""
    notes = []
    for f in factored.factors:
        text, m = _text(f.expression), f.multiplicity
        if f.role == "tangency":
            why = f"a factor of even multiplicity {m}" if m % 2 == 0 else "a factor of one sign"
            notes.append(f"D touches 0 along {text} = 0 without changing sign ({why}): a tangency, the type "
                         "is the same on both sides and parabolic on the curve")
        elif f.role == "undecided":
            notes.append(f"could not establish whether {text} changes sign: listed as a type-change curve")
        elif f.role == "data":
            notes.append(f"{text} holds background data: where it changes sign is known only from the data "
                         "(mixtype classify)")
        elif f.role == "pole":
            change = "changes" if m % 2 else "does not change"
            notes.append(f"D is undefined on {text} = 0 (a pole of order {-m}); the type {change} across it")
    through = [f.expression for f in factored.factors if f.role == "parameters" and f.multiplicity % 2]
    if through:
        notes.append(f"the type depends on the parameters through the sign of {_text(sympy.Mul(*through))}")
    sampled = {symbol for f in factored.factors if f.role not in ("parameters", "data", "pole")
               for symbol in f.expression.free_symbols & set(checked_at)}
    if sampled:
        shown = ", ".join(f"{symbol} = {_text(checked_at[symbol])}" for symbol in sorted(sampled, key=str))
        notes.append(f"whether factors holding parameters change sign was decided at {shown}")
    return notes


def analyze_equation(equation: CompiledEquation | Equation, *, parameters: Mapping[str, float] | None = None,
                     substitute_parameters: bool = False, lower_order: Mapping[str, object] | None = None,
                     data_names: tuple[str, ...] = (), deadline_seconds: float = DEFAULT_DEADLINE_SECONDS,
                     cancel: CancelCheck | None = None) -> ExactAnalysis:
    """The exact analysis of ``equation`` (module docstring). ``parameters`` override the defaults (values
    where signs are sampled, or substituted with ``substitute_parameters``); ``lower_order`` maps "d", "e",
    "f" to formula text, numbers or sympy expressions; ``data_names`` are the data quantities an Equation's
    text may use (a CompiledEquation already knows them). ExpressionError for bad text (its field names
    the coefficient), ValueError for a bad option. ``cancel`` is asked before each sympy step and while it
    runs (its child process is stopped): Cancelled when it returns True."""
    if not deadline_seconds > 0:
        raise ValueError(f"deadline_seconds must be a positive number, got {deadline_seconds!r}")
    compiled = equation if isinstance(equation, CompiledEquation) else compile_equation(equation,
                                                                                        data_names=data_names)
    x, y = (compiled.symbols[v] for v in compiled.variables)
    definitions = _definitions(compiled)
    coefficients = {**compiled.substituted, **_lower_order(compiled, lower_order, definitions)}
    values = {name: _exact_number(value) for name, value in compiled.parameter_vector(parameters).items()}
    by_symbol = {compiled.symbols[name]: value for name, value in values.items()}
    coefficients = {k: _exact_numbers(v) for k, v in coefficients.items()}
    if substitute_parameters:
        coefficients = {k: v.xreplace(by_symbol) for k, v in coefficients.items()}
    data_symbols = frozenset(compiled.symbols[k] for k in compiled.data_keys)
    a, b, c = (coefficients[k] for k in "abc")
    notes: list[str] = []
    budget = _Budget(deadline_seconds, cancel)
    raw = b ** 2 - 4 * a * c
    factored = budget.run("factoring D", _WEIGHTS["discriminant"], 2 * _WEIGHTS["family"],
                          factor_discriminant, raw, x, y, by_symbol, data_symbols)
    if factored is None:
        factored = FactoredDiscriminant(raw, sympy.S.One, (DiscriminantFactor(raw, 1, "undecided"),),
                                        {"hyperbolic": (), "elliptic": ()}, False)
    zones = tuple(Zone(kind, condition) for kind, condition in discriminant_zones(factored))
    notes += _factor_notes(factored, {} if substitute_parameters else by_symbol)
    kinds = {zone.type for zone in zones}
    with_data = bool((a.free_symbols | b.free_symbols | c.free_symbols) & data_symbols)
    if with_data:
        names = ", ".join(sorted(compiled.data_keys))
        notes.append(f"a, b or c hold background data ({names}): the analysis treats them as unknown "
                     "quantities; invariants and canonical forms need formulas (mixtype trace follows the "
                     "characteristic curves on the data)")
    families: list[CharacteristicFamily] = []
    canonical: list[CanonicalForm] = []
    if a == 0 and b == 0 and c == 0:
        notes.append("a = b = c = 0: there is no second-order part to analyse")
    else:
        seek = not with_data
        families, canonical = _characteristics_and_forms(budget, coefficients, factored, kinds, x, y,
                                                         by_symbol, notes=notes, find_invariants=seek)
    return ExactAnalysis(
        variables=tuple(compiled.variables), coefficients=coefficients, parameter_values=values,
        parameters_substituted=substitute_parameters, data_quantities=tuple(compiled.data_keys),
        discriminant=min((factored.expanded, raw), key=sympy.count_ops),
        discriminant_factored=factored.factored, factors=factored.factors, zones=zones,
        characteristics=tuple(families), canonical=tuple(canonical), notes=tuple(notes + budget.notes),
        deadline_seconds=float(deadline_seconds))


class _Plan:
    """What the analysis still has to do after D, and the weight of each step in the time budget."""

    def __init__(self, kinds: set[str], parabolic_everywhere: bool, find_invariants: bool) -> None:
        real = parabolic_everywhere or "hyperbolic" in kinds
        self.invariants = (1 if parabolic_everywhere else 2) if find_invariants and real else 0
        self.elliptic = find_invariants and "elliptic" in kinds
        self.forms = [kind for kind in ("hyperbolic", "parabolic", "elliptic")
                      if find_invariants and kind in kinds and (kind != "parabolic" or parabolic_everywhere)]

    def later(self) -> float:
        return (self.invariants * _WEIGHTS["family"] + self.elliptic * _WEIGHTS["elliptic"]
                + len(self.forms) * _WEIGHTS["canonical"])


def _characteristics_and_forms(budget: _Budget, coefficients, factored: FactoredDiscriminant, kinds: set[str],
                               x, y, fixed, *, find_invariants: bool, notes: list[str]):
    """The families (directions, slopes, invariants) and the canonical form of each type, each step through
    the budget; ``fixed`` the parameter values numerical checks use; notes appended to ``notes``."""
    a, b, c = (coefficients[k] for k in "abc")
    everywhere = factored.identically_zero
    plan = _Plan(kinds, everywhere, find_invariants)
    if not everywhere and "hyperbolic" not in kinds:
        notes.append("D < 0 everywhere: no real characteristics (their slopes are complex)")
    if everywhere:
        notes.append("D = 0 everywhere: parabolic, and the two families are one")
    root = sympy.S.Zero if everywhere else sympy.sqrt(factored.factored)
    directions = ((None, None), (None, None))
    if everywhere or "hyperbolic" in kinds:
        directions = budget.run("the characteristic directions", _WEIGHTS["directions"], plan.later(),
                                family_directions, a, b, c, root)
        if directions is None:
            directions = family_directions(a, b, c, root, False)
            notes.append("the directions and slopes are given as b +- sqrt(D) over 2a, not simplified")
    points = sample_points()[:12] if everywhere else factored.points["hyperbolic"]
    families = []
    for number, (direction, slope) in enumerate(directions, 1):
        found = None
        if direction is not None and plan.invariants and not (everywhere and number == 2):
            plan.invariants -= 1
            found = budget.run(f"family {number}", _WEIGHTS["family"], plan.later(), first_integral,
                               *direction, x, y, points, fixed)
            notes.extend(f"family {number}: {note}" for note in (found.notes if found else ()))
        elif everywhere and number == 2:
            found = FirstIntegral(families[0].invariant, families[0].method)
        families.append(CharacteristicFamily(number, direction, slope, found.invariant if found else None,
                                             found.method if found else ""))
    forms = []
    for kind in tuple(plan.forms):
        if kind == "hyperbolic":
            invariants = tuple(family.invariant for family in families)
            coordinates = invariants if None not in invariants else None
        elif kind == "parabolic":
            phi = families[0].invariant
            coordinates = None if phi is None else (phi, x if a != 0 else y)
        else:
            plan.elliptic = False
            step = budget.run("the complex invariant", _WEIGHTS["elliptic"], plan.later(),
                              complex_coordinates, a, b, c, factored.factored, x, y,
                              factored.points["elliptic"], fixed)
            coordinates, found_notes = step if step is not None else (None, ())
            notes.extend(f"elliptic zone: {note}" for note in found_notes)
        plan.forms.remove(kind)
        zone_points = sample_points()[:12] if kind == "parabolic" else factored.points[kind]
        form = None if coordinates is None else budget.run(
            f"the {kind} canonical form", _WEIGHTS["canonical"], plan.later(), canonical_form, kind,
            tuple(coefficients[k] for k in "abcdef"), coordinates, x, y, zone_points, fixed)
        if form is None:
            why = "its coordinates were not found" if coordinates is None else "see the notes"
            form = CanonicalForm(kind, NAMES[kind], coordinates, PRINCIPAL[kind], None,
                                 (f"no {kind} canonical form: {why}",))
        forms.append(form)
    return families, forms
