"""The meaning checks of a project file's data, each problem located by a JSON path.

The last gate core.project.codec runs, after the checks of form (core.project.form_checks) passed: what the
schema cannot express. Expressions parse through the whitelist parser, definitions form no cycle, names are
unique, ranges are ordered, data quantity names are usable, the shown equation and domain exist. Names an
equation uses but defines nowhere are background-data quantities (``equation_data_names``), found by the same
parse (core.equations.parser.find_data_names). Returns a list of (JSON path, message) pairs; empty means passed.
"""

from __future__ import annotations

from collections.abc import Mapping
from datetime import datetime

import sympy

from core.analysis.cauchy_input import LINE_PARAMETER, CauchyInputError, parse_data_line, parse_line_data
from core.equations.compiled import compile_equation
from core.equations.equation import COEFFICIENT_NAMES, Equation, Parameter
from core.equations.language import ExpressionError, check_name
from core.equations.parser import find_data_names, parse_expression
from core.project.form_checks import clip, json_path
from core.project.model import FIELD_KINDS
from core.project.schema import MAX_EXPRESSION_CHARACTERS

__all__ = ["equation_data_names", "equation_from_dict", "meaning_problems"]


# -- reading: meaning ------------------------------------------------------------------------------------
def _equation_path(index: int, field: str) -> str:
    base = ["equations", index]
    if field in COEFFICIENT_NAMES:
        return json_path([*base, "coefficients", field])
    if field.startswith(("trade.", "lower_order.", "cauchy_data.")) or field in ("trade", "peak_quantity",
                                                                                "cauchy_data"):
        return json_path([*base, *field.split(".")[:3]])
    group, _, name = field.partition(".")
    if group in ("definitions", "parameters") and name:
        return json_path([*base, group, name])
    if group in ("definitions", "parameters", "variables"):
        return json_path([*base, group])
    return json_path(base)


def _expression_message(error: ExpressionError) -> str:
    return (f"column {error.column}: " if error.column is not None else "") + error.message


def _data_names_and_errors(variables, parameters, definitions, texts: list[tuple[str, str]], readouts
                           ) -> tuple[tuple[str, ...], list[tuple[str, ExpressionError]]]:
    """Names the expression ``texts`` ((field, text) pairs) use, or the ``readouts`` (trade inputs, peak quantity)
    name, that are not variables, parameters, definitions, coefficients, constants or functions, in order of
    first use (sorted within a text); and the (field, error) of every text that does not parse."""
    known = {*variables, *parameters, *definitions}
    symbols = {name: sympy.Symbol(name, real=True) for name in known}
    found: dict[str, None] = {}
    errors: list[tuple[str, ExpressionError]] = []
    for field, text in texts:
        try:
            parsed = find_data_names(text, symbols, variables=variables, reserved=COEFFICIENT_NAMES)
        except ExpressionError as error:
            errors.append((field, error))
            continue
        found.update(dict.fromkeys(sorted(parsed.data_names)))
    for name in readouts:
        if isinstance(name, str) and name not in known and name not in COEFFICIENT_NAMES and _valid_name(name):
            found[name] = None
    return tuple(found), errors


def _valid_name(name: str) -> bool:
    try:
        check_name(name)
    except ExpressionError:
        return False
    return True


def _expression_texts(definitions: Mapping[str, str], coefficients: Mapping[str, str]) -> list[tuple[str, str]]:
    return [*((f"definitions.{n}", t) for n, t in definitions.items()),
            *((k, coefficients[k]) for k in COEFFICIENT_NAMES)]


def equation_data_names(equation: Equation) -> tuple[str, ...]:
    """Names the equation's expressions use that it does not define itself: background-data quantities.

    These must come from the project's data sources (core.project.data_files checks that once the data are open).
    Expressions that do not parse add no names.
    """
    texts = _expression_texts(equation.definitions, {k: equation.coefficient_text(k) for k in COEFFICIENT_NAMES})
    names, _ = _data_names_and_errors(equation.variables, equation.parameters, equation.definitions, texts,
                                      _readout_names(equation.trade, equation.peak_quantity))
    return names


def _readout_names(trade: Mapping, peak_quantity: str) -> list[str]:
    names = [source for inputs in trade.values() for source in inputs.values()]
    return [*names, peak_quantity] if peak_quantity else names


def _parameter_problems(index: int, parameters: Mapping) -> list[tuple[str, str]]:
    problems = []
    for name, p in parameters.items():
        low, high, value = p.get("minimum"), p.get("maximum"), p["value"]
        where = _equation_path(index, f"parameters.{name}")
        if low is not None and high is not None and not low < high:
            problems.append((where, f"the slider minimum {low!r} must be less than its maximum {high!r}"))
        elif (low is not None and value < low) or (high is not None and value > high):
            problems.append((where, (f"the value {value!r} lies outside the slider range "
                                    f"[{'' if low is None else repr(low)}, {'' if high is None else repr(high)}]")))
    return problems


def _equation_problems(index: int, raw: Mapping, *, has_data: bool) -> list[tuple[str, str]]:
    return _coefficient_problems(index, raw, has_data=has_data) + _lower_order_problems(index, raw,
                                                                                         has_data=has_data) \
        + _cauchy_problems(index, raw)


def _cauchy_problems(index: int, raw: Mapping) -> list[tuple[str, str]]:
    """Cauchy data that do not read: a line that is not straight, data that use other names than s or the
    variables (core.analysis.cauchy_input, as the window and `mixtype cauchy` read them)."""
    texts = raw.get("cauchy_data", {})
    if not texts:
        return []
    variables = raw["variables"]
    where = _equation_path(index, "cauchy_data")
    if LINE_PARAMETER in variables:
        return [(where, f"a variable is called {LINE_PARAMETER}, the name of the arc length along the data line")]
    symbols = {name: sympy.Symbol(name, real=True) for name in variables}
    s = sympy.Symbol(LINE_PARAMETER, real=True)
    problems = []
    for key, text in texts.items():
        try:
            if key == "line":
                parse_data_line(text, symbols)
            else:
                parse_line_data(text, key, symbols, s)
        except CauchyInputError as error:
            problems.append((_equation_path(index, f"cauchy_data.{key}"), error.message))
    return problems


def _lower_order_problems(index: int, raw: Mapping, *, has_data: bool) -> list[tuple[str, str]]:
    """Texts of d, e, f that do not parse over the equation's names (and data quantities, with data)."""
    lower = raw.get("lower_order", {})
    if not lower:
        return []
    variables = raw["variables"]
    names = [*variables, *raw["parameters"], *raw["definitions"]]
    symbols = {n: sympy.Symbol(n, real=True) for n in names}
    errors = []
    for key, text in lower.items():
        try:
            if has_data:
                find_data_names(text, symbols, variables=variables, reserved=COEFFICIENT_NAMES)
            else:
                parse_expression(text, symbols, variables=variables)
        except ExpressionError as error:
            errors.append((f"lower_order.{key}", error))
    return _located(index, errors, has_data=has_data)


def _coefficient_problems(index: int, raw: Mapping, *, has_data: bool) -> list[tuple[str, str]]:
    problems = _parameter_problems(index, raw["parameters"])
    variables = raw["variables"]
    names = [*variables, *raw["parameters"], *raw["definitions"]]
    texts = _expression_texts(raw["definitions"], raw["coefficients"])
    if len(set(names)) != len(names):
        return problems
    symbols = {n: sympy.Symbol(n, real=True) for n in names}
    if not has_data and not problems:
        # The compiler parses every text itself, so each text is parsed a second time, to list every text's
        # error rather than the compiler's first, only when the equation does not compile (parsing twice made
        # checking a large file take twice as long).
        compiled = _compile_problems(index, raw, ())
        if not compiled:
            return []
        errors = _parse_errors(texts, symbols, variables)
        return _located(index, errors, has_data=False) if errors else compiled
    data_names: tuple[str, ...] = ()
    if has_data:   # names defined nowhere in the equation are data quantities when the project lists data
        data_names, errors = _data_names_and_errors(
            variables, raw["parameters"], raw["definitions"], texts,
            _readout_names(raw.get("trade", {}), raw.get("peak_quantity", "")))
    else:
        errors = _parse_errors(texts, symbols, variables)
    problems += _located(index, errors, has_data=has_data)
    return problems or _compile_problems(index, raw, data_names)


def _located(index: int, errors: list[tuple[str, ExpressionError]], *, has_data: bool) -> list[tuple[str, str]]:
    problems = []
    for field, error in errors:
        message = _expression_message(error)
        if not has_data and error.message.startswith("unknown name"):
            message += " (and the project lists no data source that could provide it)"
        problems.append((_equation_path(index, field), message))
    return problems


def _compile_problems(index: int, raw: Mapping, data_names: tuple[str, ...]) -> list[tuple[str, str]]:
    try:
        compile_equation(equation_from_dict(raw), data_names=data_names)
    except ExpressionError as error:
        return [(_equation_path(index, error.field), _expression_message(error))]
    return []


def _parse_errors(texts: list[tuple[str, str]], symbols: Mapping[str, sympy.Symbol], variables
                  ) -> list[tuple[str, ExpressionError]]:
    errors = []
    for field, text in texts:
        try:
            parse_expression(text, symbols, variables=variables)
        except ExpressionError as error:
            errors.append((field, error))
    return errors


def _repeated_names(items: list, what: str, group: str) -> list[tuple[str, str]]:
    first: dict[str, int] = {}
    problems = []
    for index, item in enumerate(items):
        name = item["name"]
        if name in first:
            problems.append((json_path([group, index, "name"]),
                             f"{what} {clip(name, 40)!r} is already the name of {group}[{first[name]}]"))
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
    size = _expression_characters(data["equations"])
    if size > MAX_EXPRESSION_CHARACTERS:
        problems.append((json_path(["equations"]), (f"the coefficients and definitions hold {size:,} characters "
                                                    f"in all, more than the {MAX_EXPRESSION_CHARACTERS:,} a "
                                                    "project may hold")))
    else:
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
            listed = ", ".join(repr(clip(n, 40)) for n in names[:10])
            problems.append((json_path(["shown", field]), (f"there is no {field} named {clip(shown, 40)!r} "
                                                          f"(the project has {listed})")))
    problems += _pin_study_problems(data)
    problems += _sweep_problems(data)
    problems += _field_layer_problems(data["view"].get("field"))
    return problems


def _pin_study_problems(data: Mapping) -> list[tuple[str, str]]:
    """Each pin's study names an equation and a domain the project holds."""
    problems = []
    names = {"equation": {item["name"] for item in data["equations"]},
             "domain": {item["name"] for item in data["domains"]}}
    for index, pin in enumerate(data["pins"]):
        for field, name in pin.get("study", {}).items():
            if name not in names[field] and name != data["shown"][field]:   # (a bad shown name is said once)
                problems.append((json_path(["pins", index, "study", field]),
                                 f"there is no {field} named {clip(name, 40)!r}"))
    return problems


def _sweep_problems(data: Mapping) -> list[tuple[str, str]]:
    """Each sweep's study exists, one sweep per study and parameter, its range is ordered (above 0 on a
    logarithmic scale) and each critical value lies in its bracket."""
    problems = []
    names = {"equation": {item["name"] for item in data["equations"]},
             "domain": {item["name"] for item in data["domains"]}}
    seen: set[tuple[str, str, str]] = set()
    for index, sweep in enumerate(data.get("sweeps", ())):
        for field, name in sweep["study"].items():
            if name not in names[field]:
                problems.append((json_path(["sweeps", index, "study", field]),
                                 f"there is no {field} named {clip(name, 40)!r}"))
        key = (sweep["study"]["equation"], sweep["study"]["domain"], sweep["parameter"])
        if key in seen:
            problems.append((json_path(["sweeps", index, "parameter"]),
                             f"the study already has a sweep of {sweep['parameter']!r} (one per parameter)"))
        seen.add(key)
        low, high = sweep["low"], sweep["high"]
        if not low < high:
            problems.append((json_path(["sweeps", index, "high"]), f"must be above low ({low!r}), got {high!r}"))
        elif sweep["log"] and low <= 0:
            problems.append((json_path(["sweeps", index, "low"]), f"a logarithmic sweep starts above 0, got {low!r}"))
        for number, critical in enumerate(sweep.get("critical_values", ())):
            bracket = critical.get("bracket")
            if bracket is not None and not bracket[0] <= critical["value"] <= bracket[1]:
                problems.append((json_path(["sweeps", index, "critical_values", number, "bracket"]),
                                 f"must hold the value {critical['value']!r}"))
    return problems


def _field_layer_problems(raw: Mapping | None) -> list[tuple[str, str]]:
    """The field layer's quantity is one its kind takes (core.project.model.FIELD_KINDS)."""
    if raw is None:
        return []
    names = FIELD_KINDS[raw["kind"]]
    quantity = raw["quantity"]
    if names is not None and quantity not in names:
        return [(json_path(["view", "field", "quantity"]),
                 f"a {raw['kind']} field is one of {', '.join(names)}, not {clip(quantity, 40)!r}")]
    if names is None:
        try:
            check_name(quantity, what="field quantity")
        except ExpressionError as error:
            return [(json_path(["view", "field", "quantity"]), error.message)]
    return []


def _expression_characters(equations: list) -> int:
    """How many characters the coefficient and definition texts of schema-valid ``equations`` hold."""
    return sum(len(text) for raw in equations
               for text in (*raw["coefficients"].values(), *raw["definitions"].values()))


def _data_source_problems(sources: list) -> list[tuple[str, str]]:
    """Paths listed once; quantity names usable in expressions and distinct within a file."""
    problems = []
    first: dict[str, int] = {}
    for index, raw in enumerate(sources):
        path = raw["path"].replace("\\", "/")
        if path in first:
            problems.append((json_path(["data_sources", index, "path"]),
                             f"the file {clip(raw['path'], 80)!r} is already data_sources[{first[path]}]"))
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
                    peak_quantity=raw.get("peak_quantity", ""), lower_order=dict(raw.get("lower_order", {})),
                    cauchy_data=dict(raw.get("cauchy_data", {})))
