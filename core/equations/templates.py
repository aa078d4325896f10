"""Equation templates: ready-made mixed-type equations of the trades, stored as small JSON files.

A template file (resources/templates/NAME.json) holds an equation as text (coefficients, definitions,
parameters with units, descriptions and slider ranges), a suggested domain, the data quantities that may
stand in for some definitions (a measured velocity in place of the formula), the trade quantities that
apply (core.equations.trade) and the definition whose peak is reported per hyperbolic pocket. File layout::

    {"mixtype_template": 1, "name": "...", "title": "...", "description": "...",
     "variables": ["x", "y"], "coefficients": {"a": "...", "b": "...", "c": "..."},
     "definitions": {"name": "expression", ...},
     "parameters": {"name": {"value": 1.4, "minimum": 1.05, "maximum": 1.67, "unit": "", "description": ""}},
     "data_quantities": {"u": {"replaces": "u", "unit": "m/s", "description": "..."},
                         "phi": {"replaces": "phix", "expression": "diff(phi, x)", ...}},
     "trade": {"mach": {"u": "u", "v": "v", "c2": "c2"}},
     "domain": {"xmin": -3, "xmax": 3, "ymin": 0, "ymax": 3}, "peak_quantity": "M"}
"""

from __future__ import annotations

import json
import math
import os
import pathlib
import types
from collections.abc import Collection, Mapping
from dataclasses import dataclass

from core.bundled import bundled_path
from core.domain import Domain
from core.equations.equation import COEFFICIENT_NAMES, Equation, Parameter
from core.equations.trade import check_trade_spec

__all__ = [
    "TEMPLATE_DIRECTORY",
    "TEMPLATE_FORMAT_VERSION",
    "DataQuantity",
    "Template",
    "TemplateError",
    "list_templates",
    "load_template",
]

TEMPLATE_FORMAT_VERSION = 1
TEMPLATE_DIRECTORY = bundled_path("templates")  # the repository's resources/templates, or the installed copy
_TOP_KEYS = {"mixtype_template", "name", "title", "description", "variables", "coefficients", "definitions",
             "parameters", "data_quantities", "trade", "domain", "peak_quantity"}
_PARAMETER_KEYS = {"value", "minimum", "maximum", "unit", "description"}
_QUANTITY_KEYS = {"replaces", "expression", "unit", "description"}


class TemplateError(ValueError):
    """A template file is missing or malformed; the message names the file and the field."""


@dataclass(frozen=True)
class DataQuantity:
    """A data quantity a template accepts: loaded under ``name``, it replaces the definition ``replaces``.

    ``expression`` is the replacement text (e.g. ``diff(phi, x)``); when it is the quantity's own name the
    definition is simply dropped and the data value is used under that name.
    """

    name: str
    replaces: str
    expression: str
    unit: str = ""
    description: str = ""


@dataclass(frozen=True, eq=False)
class Template:
    """A named, documented equation ready to compile, with what the trades read from it."""

    name: str
    title: str
    description: str
    equation: Equation
    quantities: Mapping[str, DataQuantity]
    trade: Mapping[str, Mapping[str, str]]
    domain: Domain | None
    peak_quantity: str | None
    path: str

    def equation_with_data(self, data_names: Collection[str]) -> Equation:
        """The equation with each definition that a loaded data quantity stands for replaced by it.

        Pass the result to ``compile_equation(..., data_names=data_names)``. Data names the template does
        not declare are left for the equation's expressions to use directly.
        """
        definitions = dict(self.equation.definitions)
        replaced: dict[str, str] = {}
        for name in data_names:
            quantity = self.quantities.get(name)
            if quantity is None:
                continue
            if quantity.replaces in replaced:
                raise TemplateError(f"template {self.name!r}: data quantities {replaced[quantity.replaces]!r} "
                                    f"and {name!r} both stand for {quantity.replaces!r}; load only one")
            replaced[quantity.replaces] = name
            if quantity.expression == quantity.replaces:
                definitions.pop(quantity.replaces, None)
            else:
                definitions[quantity.replaces] = quantity.expression
        e = self.equation
        return Equation(e.a, e.b, e.c, variables=e.variables, definitions=definitions, parameters=e.parameters,
                        name=e.name, description=e.description, trade=e.trade, peak_quantity=e.peak_quantity)


def list_templates(directory: str | os.PathLike | None = None) -> tuple[str, ...]:
    """Names of the templates in ``directory`` (default: resources/templates), sorted.

    A missing default folder is a broken installation and raises TemplateError rather than listing none.
    """
    folder = pathlib.Path(directory) if directory is not None else TEMPLATE_DIRECTORY
    if directory is None and not folder.is_dir():
        raise TemplateError(f"Mixtype's bundled templates are missing (no folder {folder}); "
                            "reinstall Mixtype")
    return tuple(sorted(p.stem for p in folder.glob("*.json")))


def load_template(name: str, *, directory: str | os.PathLike | None = None) -> Template:
    """The template ``name`` from ``directory``, or from a file when ``name`` is a path to a .json file."""
    if name.endswith(".json") or os.sep in name or "/" in name:
        path = pathlib.Path(name)
    else:
        folder = pathlib.Path(directory) if directory is not None else TEMPLATE_DIRECTORY
        path = folder / f"{name}.json"
        if not path.is_file():
            known = ", ".join(list_templates(folder)) or "none"
            raise TemplateError(f"no template named {name!r} (available: {known})")
    try:
        document = json.loads(path.read_text(encoding="utf-8"))
    except OSError as error:
        raise TemplateError(f"{path}: cannot be read ({error.strerror or error})") from None
    except (json.JSONDecodeError, UnicodeDecodeError) as error:
        raise TemplateError(f"{path}: not valid JSON ({error})") from None
    return _template_from(document, str(path))


def _require(condition: bool, where: str, message: str) -> None:
    if not condition:
        raise TemplateError(f"{where}: {message}")


def _text(document: Mapping, key: str, where: str, *, default: str | None = None) -> str:
    value = document.get(key, default)
    _require(isinstance(value, str), where, f"{key!r} must be text, got {value!r}")
    return value


def _number(value, where: str, *, optional: bool = False) -> float | None:
    if value is None and optional:
        return None
    _require(isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value), where,
             f"must be a finite number, got {value!r}")
    return float(value)


def _template_from(document, path: str) -> Template:
    _require(isinstance(document, dict), path, "a template is a JSON object")
    version = document.get("mixtype_template")
    _require(version == TEMPLATE_FORMAT_VERSION, path,
             f"'mixtype_template' must be {TEMPLATE_FORMAT_VERSION}, got {version!r}")
    unknown = sorted(set(document) - _TOP_KEYS)
    _require(not unknown, path, f"unknown field(s) {', '.join(unknown)}")
    name = _text(document, "name", path)
    variables = document.get("variables", ["x", "y"])
    _require(isinstance(variables, list) and len(variables) == 2 and all(isinstance(v, str) for v in variables),
             path, f"'variables' must be a list of two names, got {variables!r}")
    coefficients = document.get("coefficients")
    _require(isinstance(coefficients, dict) and set(coefficients) == set(COEFFICIENT_NAMES)
             and all(isinstance(t, str) for t in coefficients.values()), path,
             "'coefficients' must give the texts of a, b and c")
    definitions = document.get("definitions", {})
    _require(isinstance(definitions, dict) and all(isinstance(t, str) for t in definitions.values()), path,
             "'definitions' must map names to expression texts")
    parameters = {}
    raw_parameters = document.get("parameters", {})
    _require(isinstance(raw_parameters, dict), path, "'parameters' must be an object")
    for key, spec in raw_parameters.items():
        where = f"{path}: parameters.{key}"
        _require(isinstance(spec, dict) and "value" in spec, where, "needs at least a 'value'")
        extra = sorted(set(spec) - _PARAMETER_KEYS)
        _require(not extra, where, f"unknown field(s) {', '.join(extra)}")
        value = _number(spec["value"], where)
        low = _number(spec.get("minimum"), where + ".minimum", optional=True)
        high = _number(spec.get("maximum"), where + ".maximum", optional=True)
        _require((low is None or low <= value) and (high is None or value <= high), where,
                 f"value {value} lies outside [{low}, {high}]")
        parameters[key] = Parameter(value, low, high, unit=_text(spec, "unit", where, default=""),
                                    description=_text(spec, "description", where, default=""))
    quantities = {}
    raw_quantities = document.get("data_quantities", {})
    _require(isinstance(raw_quantities, dict), path, "'data_quantities' must be an object")
    for key, spec in raw_quantities.items():
        where = f"{path}: data_quantities.{key}"
        _require(isinstance(spec, dict), where, "must be an object")
        extra = sorted(set(spec) - _QUANTITY_KEYS)
        _require(not extra, where, f"unknown field(s) {', '.join(extra)}")
        replaces = _text(spec, "replaces", where)
        _require(replaces in definitions, where, f"replaces {replaces!r}, which is not a definition")
        expression = _text(spec, "expression", where, default=key)
        quantities[key] = DataQuantity(key, replaces, expression, unit=_text(spec, "unit", where, default=""),
                                       description=_text(spec, "description", where, default=""))
    trade = document.get("trade", {})
    try:
        check_trade_spec(trade)
    except (TypeError, ValueError) as error:
        raise TemplateError(f"{path}: trade: {error}") from None
    known = set(variables) | set(definitions) | set(parameters) | set(quantities)
    for kind, inputs in trade.items():
        for source in inputs.values():
            _require(source in known, f"{path}: trade.{kind}", f"{source!r} is not a variable, definition, "
                     f"parameter or data quantity of this template")
    domain = None
    if "domain" in document:
        spec = document["domain"]
        _require(isinstance(spec, dict), path, "'domain' must be an object")
        try:
            domain = Domain(**{"name": name, **spec})
        except (TypeError, ValueError) as error:
            raise TemplateError(f"{path}: domain: {error}") from None
    peak = document.get("peak_quantity")
    _require(peak is None or peak in definitions, path, f"'peak_quantity' {peak!r} is not a definition")
    equation = Equation(coefficients["a"], coefficients["b"], coefficients["c"], variables=tuple(variables),
                        definitions=dict(definitions), parameters=parameters, name=name,
                        description=_text(document, "description", path, default=""),
                        trade={k: dict(v) for k, v in trade.items()}, peak_quantity=peak or "")
    return Template(name=name, title=_text(document, "title", path, default=name),
                    description=equation.description, equation=equation,
                    quantities=types.MappingProxyType(quantities),
                    trade=types.MappingProxyType({k: types.MappingProxyType(dict(v)) for k, v in trade.items()}),
                    domain=domain, peak_quantity=peak, path=path)
