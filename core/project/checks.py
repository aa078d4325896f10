"""The checks a project file's data must pass, each problem located by a JSON path.

Three gates, in order (core.project.codec runs them): plain-JSON sanity (finite numbers, depth, no repeated
keys, text UTF-8 can hold), the JSON Schema of core.project.schema (all structural errors at once, in short
words that never quote a whole value), and the meaning the schema cannot express (expressions parse through
the whitelist parser, definitions form no cycle, names are unique, ranges are ordered, the shown equation and
domain exist). Each gate returns a list of (JSON path, message) pairs; empty means passed.
"""

from __future__ import annotations

import ast
import json
import math
import re
from collections.abc import Iterable, Mapping
from datetime import datetime
from functools import cache

import jsonschema
import sympy

from core.equations.equation import COEFFICIENT_NAMES, Equation, Parameter, compile_equation
from core.equations.parser import (
    CONSTANT_NAMES,
    FUNCTION_NAMES,
    ExpressionError,
    check_name,
    data_derivative_key,
    parse_expression,
)
from core.project.schema import (
    CHECKSUM_PATTERN,
    IDENTIFIER_PATTERN,
    PATH_PATTERN,
    TIMESTAMP_PATTERN,
    TITLE_PATTERN,
    describe_json_value,
    project_schema,
)

__all__ = [
    "MAX_JSON_DEPTH",
    "NonFiniteNumber",
    "RepeatedKeys",
    "equation_data_names",
    "equation_from_dict",
    "json_path",
    "meaning_problems",
    "sanity_problems",
    "schema_problems",
]

MAX_JSON_DEPTH = 24
_MAX_MESSAGE = 160
_SIMPLE_KEY = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


class NonFiniteNumber:
    """Stands in for NaN, Infinity or a number beyond double precision met while parsing JSON text."""

    def __init__(self, text: str) -> None:
        self.text = text if len(text) <= 24 else text[:20] + "..."


class RepeatedKeys(dict):
    """A JSON object in which some keys appeared more than once (``repeated`` names them)."""

    repeated: tuple[str, ...] = ()


def json_path(parts: Iterable[str | int]) -> str:
    """'$.equations[1].coefficients.b' from ('equations', 1, 'coefficients', 'b')."""
    text = "$"
    for part in parts:
        if isinstance(part, int):
            text += f"[{part}]"
        elif _SIMPLE_KEY.match(part):
            text += f".{part}"
        else:
            text += f"[{json.dumps(_clip(part, 40), ensure_ascii=True)}]"
    return text


def _clip(text: str, limit: int = _MAX_MESSAGE) -> str:
    return text if len(text) <= limit else text[: limit - 3] + "..."



# -- reading: plain JSON sanity -----------------------------------------------------------------------------
def sanity_problems(data: object) -> list[tuple[str, str]]:
    """Depth, repeated keys, non-finite numbers, text UTF-8 cannot hold, non-JSON values (iteratively)."""
    problems: list[tuple[str, str]] = []
    stack: list[tuple[object, tuple]] = [(data, ())]
    while stack:
        value, parts = stack.pop()
        if len(parts) > MAX_JSON_DEPTH:
            problems.append((json_path(parts), f"nested more than {MAX_JSON_DEPTH} levels deep"))
            continue
        if isinstance(value, Mapping):
            for key in getattr(value, "repeated", ()):
                problems.append((json_path(parts), f"the key {_clip(key, 40)!r} appears more than once"))
            for key, item in value.items():
                if not isinstance(key, str):
                    problems.append((json_path(parts), f"keys must be text, got {describe_json_value(key)}"))
                    continue
                if not _encodable(key):
                    problems.append((json_path(parts), "a key holds a lone UTF-16 surrogate"))
                    continue
                stack.append((item, (*parts, key)))
        elif isinstance(value, list | tuple):
            stack.extend((item, (*parts, index)) for index, item in enumerate(value))
        elif isinstance(value, NonFiniteNumber):
            problems.append((json_path(parts), f"{value.text} is not a finite double-precision number"))
        elif isinstance(value, float):
            if not math.isfinite(value):
                problems.append((json_path(parts), f"{value} is not a finite number"))
        elif isinstance(value, int) and not isinstance(value, bool):
            try:
                float(value)
            except OverflowError:
                problems.append((json_path(parts), "an integer too large for double precision"))
        elif isinstance(value, str):
            if not _encodable(value):
                problems.append((json_path(parts), "text holds a lone UTF-16 surrogate (not valid Unicode)"))
        elif value is not None and not isinstance(value, bool):
            problems.append((json_path(parts), f"{describe_json_value(value)} is not a JSON value"))
    return sorted(problems)


def _encodable(text: str) -> bool:
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return False
    return True


# -- reading: schema -------------------------------------------------------------------------------------
@cache
def _validator() -> jsonschema.Draft202012Validator:
    schema = project_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


_PATTERN_TEXT = {
    IDENTIFIER_PATTERN: "must start with a letter and hold only ASCII letters, digits and '_'",
    TITLE_PATTERN: "must not be empty, start or end with white space, or hold control characters",
    TIMESTAMP_PATTERN: "must be a UTC time written like 2024-03-05T14:07:09Z",
    CHECKSUM_PATTERN: "must be a SHA-256 checksum: 64 hexadecimal digits",
    PATH_PATTERN: "must name a file: not blank, and without control characters",
}


def _describe(error: jsonschema.ValidationError) -> str:
    """A short message for one schema error; never quotes a whole (possibly huge) value."""
    kind, expected, instance = error.validator, error.validator_value, error.instance
    if kind == "type":
        names = {"string": "text", "number": "a number", "integer": "a whole number", "boolean": "true or false",
                 "array": "a list", "object": "an object", "null": "null"}
        if isinstance(instance, float) and expected == "integer":
            return f"must be a whole number, not {instance!r}"
        return f"must be {names.get(expected, expected)}, not {describe_json_value(instance)}"
    if kind == "required":
        missing = [name for name in expected if isinstance(instance, Mapping) and name not in instance]
        return f"the field {missing[0]!r} is missing" if missing else "a required field is missing"
    if kind == "additionalProperties" and expected is False:
        known = set(error.schema.get("properties", {}))
        extra = sorted(k for k in instance if k not in known) if isinstance(instance, Mapping) else []
        names = ", ".join(repr(_clip(k, 40)) for k in extra[:5])
        return f"unknown field{'s' * (len(extra) != 1)} {names} (fields allowed: {', '.join(sorted(known))})"
    if kind == "const":
        return f"must be {json.dumps(expected)}" + (f", not {_clip(repr(instance), 40)}"
                                                     if isinstance(instance, int | float | str) else "")
    if kind == "enum":
        return f"must be one of {', '.join(json.dumps(v) for v in expected)}"
    if kind == "pattern":
        return _PATTERN_TEXT.get(expected, f"must match the pattern {expected}")
    if kind == "maxLength":
        return f"is longer than {expected} characters"
    if kind == "minLength":
        return "must not be empty"
    if kind in ("minItems", "maxItems"):
        if error.schema.get("minItems") == error.schema.get("maxItems") == len(error.schema.get("prefixItems", ())):
            return f"must hold exactly {expected} items"
        return f"must hold {'at least' if kind == 'minItems' else 'at most'} {expected} item" + "s" * (expected != 1)
    if kind == "items" and expected is False:
        return f"must hold exactly {len(error.schema.get('prefixItems', []))} items"
    if kind == "uniqueItems":
        return "must not list the same item twice"
    if kind == "maxProperties":
        return f"must hold at most {expected} entries"
    if kind == "not":
        return "a single-point seed has no 'end' or 'curves' (use \"kind\": \"segment\")"
    if kind in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"):
        words = {"minimum": "at least", "maximum": "at most", "exclusiveMinimum": "more than",
                 "exclusiveMaximum": "less than"}[kind]
        return f"must be {words} {expected}, not {instance!r}"
    return _clip(error.message)


def schema_problems(data: object) -> list[tuple[str, str]]:
    problems = []
    for error in _validator().iter_errors(data):
        if "propertyNames" in error.absolute_schema_path:  # a bad name: point at it, the value is fine
            path = json_path([*error.absolute_path, str(error.instance)])
            problems.append((path, "the name " + _describe(error)))
        else:
            problems.append((json_path(error.absolute_path), _describe(error)))
    return _unique(problems)


def _unique(problems: list[tuple[str, str]]) -> list[tuple[str, str]]:
    seen, result = set(), []
    for item in problems:
        if item not in seen:
            seen.add(item)
            result.append(item)
    return result


# -- reading: meaning ------------------------------------------------------------------------------------
def _equation_path(index: int, field: str) -> str:
    base = ["equations", index]
    if field in COEFFICIENT_NAMES:
        return json_path([*base, "coefficients", field])
    if field.startswith("trade.") or field in ("trade", "peak_quantity"):
        return json_path([*base, *field.split(".")[:3]])
    group, _, name = field.partition(".")
    if group in ("definitions", "parameters") and name:
        return json_path([*base, group, name])
    if group in ("definitions", "parameters", "variables"):
        return json_path([*base, group])
    return json_path(base)


def _expression_message(error: ExpressionError) -> str:
    return (f"column {error.column}: " if error.column is not None else "") + error.message


def _free_names(text: object) -> set[str]:
    """Names an expression text uses as values (not as functions); empty when the text does not parse.

    Only Python's ``ast`` reads the text here (nothing is evaluated); the whitelist parser still checks it.
    """
    if not isinstance(text, str):
        return set()
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        return set()
    names: set[str] = set()
    stack: list[ast.AST] = [tree.body]
    while stack:
        node = stack.pop()
        if isinstance(node, ast.Call):
            if isinstance(node.func, ast.Name) and node.func.id == "diff" and node.args \
                    and isinstance(node.args[0], ast.Name):
                names.add(node.args[0].id)   # diff(NAME, VAR): NAME is data; VAR a variable
                continue
            stack.extend(node.args)
            if not isinstance(node.func, ast.Name):
                stack.append(node.func)
        elif isinstance(node, ast.Name):
            names.add(node.id)
        else:
            stack.extend(ast.iter_child_nodes(node))
    return names


def _unknown_names(variables, parameters, definitions, texts, readouts=()) -> tuple[str, ...]:
    """Names used in ``texts`` (expressions) or named in ``readouts`` (trade inputs, peak quantity) that are
    not variables, parameters, definitions, coefficients, constants or functions; in order of first use."""
    known = {*variables, *parameters, *definitions, *COEFFICIENT_NAMES, *CONSTANT_NAMES, *FUNCTION_NAMES,
             "piecewise", "diff"}
    found: dict[str, None] = {}
    for names in [*(sorted(_free_names(text)) for text in texts), [r for r in readouts if isinstance(r, str)]]:
        for name in names:
            if name not in known:
                try:
                    check_name(name)
                except ExpressionError:
                    continue
                found[name] = None
    return tuple(found)


def equation_data_names(equation: Equation) -> tuple[str, ...]:
    """Names the equation's expressions use that it does not define itself: background-data quantities.

    These must come from the project's data sources (core.project.data_files checks that once the data are open).
    """
    texts = [*equation.definitions.values(), equation.a, equation.b, equation.c]
    return _unknown_names(equation.variables, equation.parameters, equation.definitions, texts,
                          _readout_names(equation.trade, equation.peak_quantity))


def _readout_names(trade: Mapping, peak_quantity: str) -> list[str]:
    names = [source for inputs in trade.values() for source in inputs.values()]
    return [*names, peak_quantity] if peak_quantity else names


def _equation_problems(index: int, raw: Mapping, *, has_data: bool) -> list[tuple[str, str]]:
    problems = []
    for name, p in raw["parameters"].items():
        low, high, value = p.get("minimum"), p.get("maximum"), p["value"]
        where = _equation_path(index, f"parameters.{name}")
        if low is not None and high is not None and not low < high:
            problems.append((where, f"the slider minimum {low!r} must be less than its maximum {high!r}"))
        elif (low is not None and value < low) or (high is not None and value > high):
            problems.append((where, (f"the value {value!r} lies outside the slider range "
                                    f"[{'' if low is None else repr(low)}, {'' if high is None else repr(high)}]")))
    variables = raw["variables"]
    names = [*variables, *raw["parameters"], *raw["definitions"]]
    texts = [(f"definitions.{n}", t) for n, t in raw["definitions"].items()]
    texts += [(k, raw["coefficients"][k]) for k in COEFFICIENT_NAMES]
    # names defined nowhere in the equation are data quantities when the project lists data sources
    data_names = _unknown_names(variables, raw["parameters"], raw["definitions"], [t for _, t in texts],
                                _readout_names(raw.get("trade", {}), raw.get("peak_quantity", ""))
                                ) if has_data else ()
    if len(set(names)) == len(names):
        symbols = {n: sympy.Symbol(n, real=True) for n in (*names, *data_names)}
        for quantity in data_names:
            for v in variables:
                key = data_derivative_key(quantity, v)
                symbols[key] = sympy.Symbol(key, real=True)
        for field, text in texts:
            try:
                parse_expression(text, symbols, data_names=data_names, variables=variables)
            except ExpressionError as error:
                message = _expression_message(error)
                if not has_data and error.message.startswith("unknown name"):
                    message += " (and the project lists no data source that could provide it)"
                problems.append((_equation_path(index, field), message))
    if not problems:
        try:
            compile_equation(equation_from_dict(raw), data_names=data_names)
        except ExpressionError as error:
            problems.append((_equation_path(index, error.field), _expression_message(error)))
    return problems


def _repeated_names(items: list, what: str, group: str) -> list[tuple[str, str]]:
    first: dict[str, int] = {}
    problems = []
    for index, item in enumerate(items):
        name = item["name"]
        if name in first:
            problems.append((json_path([group, index, "name"]),
                             f"{what} {_clip(name, 40)!r} is already the name of {group}[{first[name]}]"))
        else:
            first[name] = index
    return problems


def meaning_problems(data: Mapping) -> list[tuple[str, str]]:
    problems = []
    for field in ("created", "modified"):
        try:
            datetime.strptime(data["metadata"][field], "%Y-%m-%dT%H:%M:%SZ")
        except ValueError:
            problems.append((json_path(["metadata", field]), "is not a real date and time"))
    problems += _repeated_names(data["equations"], "equation", "equations")
    problems += _repeated_names(data["domains"], "domain", "domains")
    has_data = bool(data["data_sources"])
    for index, raw in enumerate(data["equations"]):
        problems += _equation_problems(index, raw, has_data=has_data)
    problems += _data_source_problems(data["data_sources"])
    for index, raw in enumerate(data["domains"]):
        for axis in ("x_range", "y_range"):
            low, high = raw[axis]
            if not low < high:
                problems.append((json_path(["domains", index, axis]),
                                 f"the minimum {low!r} must be less than the maximum {high!r}"))
    for group, field in (("equations", "equation"), ("domains", "domain")):
        names = [item["name"] for item in data[group]]
        shown = data["shown"][field]
        if shown not in names:
            listed = ", ".join(repr(_clip(n, 40)) for n in names[:10])
            problems.append((json_path(["shown", field]), (f"there is no {field} named {_clip(shown, 40)!r} "
                                                          f"(the project has {listed})")))
    return problems


def _data_source_problems(sources: list) -> list[tuple[str, str]]:
    """Paths listed once; quantity names usable in expressions and distinct within a file."""
    problems = []
    first: dict[str, int] = {}
    for index, raw in enumerate(sources):
        path = raw["path"].replace("\\", "/")
        if path in first:
            problems.append((json_path(["data_sources", index, "path"]),
                             f"the file {_clip(raw['path'], 80)!r} is already data_sources[{first[path]}]"))
        else:
            first[path] = index
        taken: dict[str, str] = {}
        for source, quantity in raw.get("names", {}).items():
            where = json_path(["data_sources", index, "names", source])
            try:
                check_name(quantity, what="quantity name")
            except ExpressionError as error:
                problems.append((where, error.message))
                continue
            if quantity in COEFFICIENT_NAMES:
                problems.append((where, f"quantity name {quantity!r} is reserved for a coefficient"))
            elif quantity in taken:
                problems.append((where, f"{source!r} and {taken[quantity]!r} both become {quantity!r}"))
            else:
                taken[quantity] = source
    return problems


def equation_from_dict(raw: Mapping) -> Equation:
    """The Equation of one schema-valid ``equations[i]`` entry (floats made float)."""
    parameters = {name: Parameter(value=float(p["value"]),
                                  minimum=None if p.get("minimum") is None else float(p["minimum"]),
                                  maximum=None if p.get("maximum") is None else float(p["maximum"]),
                                  unit=p["unit"], description=p["description"])
                  for name, p in raw["parameters"].items()}
    coefficients = raw["coefficients"]
    return Equation(a=coefficients["a"], b=coefficients["b"], c=coefficients["c"],
                    variables=tuple(raw["variables"]), definitions=dict(raw["definitions"]),
                    parameters=parameters, name=raw["name"], description=raw["description"],
                    trade={kind: dict(inputs) for kind, inputs in raw.get("trade", {}).items()},
                    peak_quantity=raw.get("peak_quantity", ""))
