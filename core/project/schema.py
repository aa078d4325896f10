"""The JSON Schema (draft 2020-12) of Mixtype project files, built here so code and schema cannot drift.

``project_schema()`` is the single source: core.project.io validates every file against it, and
resources/schema/mixtype-project-v<N>.schema.json is its text as written by ``schema_text()`` (a test checks
the file on disk equals it; regenerate with ``python -m core.project.schema``). The schema checks structure
and types; what it cannot say (expressions parse, names are unique, ranges are ordered) is checked in
core.project.codec.
"""

from __future__ import annotations

import json
from pathlib import Path

from core.analysis.sweep_values import MAX_SWEEP_VALUES
from core.analysis.tracing import MAX_BOUNCES
from core.bundled import bundled_path
from core.domain import MAX_GRID, MIN_GRID
from core.equations.equation import MAX_DEFINITIONS, MAX_PARAMETERS
from core.equations.language import MAX_NAME_LENGTH, MAX_TEXT_LENGTH
from core.equations.trade import TRADE_INPUTS
from core.project.model import (
    DATA_FORMATS,
    FAMILIES,
    FIELD_COLOUR_MAPS,
    FIELD_KINDS,
    MAX_CELLS_RANGE,
    MAX_ISO_VALUES,
    MAX_SEED_CURVES,
    MIN_CELL_FRACTION_RANGE,
)
from core.project.sweeps import CRITICAL_EVENTS, MAX_CRITICAL_VALUES, MAX_SWEEPS, TYPE_LABELS

__all__ = [
    "CHECKSUM_PATTERN",
    "CURRENT_FORMAT_VERSION",
    "FORMAT_NAME",
    "MAX_DATA_SOURCES",
    "MAX_DOMAINS",
    "MAX_EQUATIONS",
    "MAX_EXPRESSION_CHARACTERS",
    "MAX_LABEL_LENGTH",
    "MAX_NOTES_LENGTH",
    "MAX_PINS",
    "MAX_SEEDS",
    "describe_json_value",
    "project_schema",
    "schema_path",
    "schema_text",
]

CURRENT_FORMAT_VERSION = 6
FORMAT_NAME = "mixtype-project"
MAX_EQUATIONS = 100
MAX_DOMAINS = 100
MAX_PINS = 10_000
MAX_SEEDS = 1_000
MAX_TITLE_LENGTH = 80
MAX_LABEL_LENGTH = 200
MAX_DESCRIPTION_LENGTH = 4_000
MAX_NOTES_LENGTH = 1_000_000
MAX_DATA_SOURCES = 100
MAX_PATH_LENGTH = 4_000
# All coefficient and definition texts of a project together (the schema cannot say it; core.project.checks
# does). Checking costs about 4 microseconds a character for sums and up to 35 for long min/max lists, whose
# arguments sympy sorts (measured on a shared 2-core machine): within this limit any file checks in a few
# seconds, where 100 equations of 200 definitions of 2000 characters would take many minutes.
MAX_EXPRESSION_CHARACTERS = 100_000

# A title: no control characters, no white space at either end.
TITLE_PATTERN = r"^[^\s\u0000-\u001f\u007f](?:[^\u0000-\u001f\u007f]*[^\s\u0000-\u001f\u007f])?$"
IDENTIFIER_PATTERN = r"^[A-Za-z][A-Za-z0-9_]*$"
TIMESTAMP_PATTERN = r"^[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9]{2}:[0-9]{2}:[0-9]{2}Z$"
CHECKSUM_PATTERN = r"^[0-9a-fA-F]{64}$"
PATH_PATTERN = r"^[^\u0000-\u001f\u007f]*[^\s\u0000-\u001f\u007f][^\u0000-\u001f\u007f]*$"


def _object(properties: dict, *, required: list[str] | None = None, description: str = "") -> dict:
    schema = {"type": "object"}
    if description:
        schema["description"] = description
    schema["properties"] = properties
    schema["required"] = list(properties) if required is None else required
    schema["additionalProperties"] = False
    return schema


def _text(max_length: int, description: str, **extra) -> dict:
    return {"type": "string", "maxLength": max_length, "description": description, **extra}


def _identifier(description: str) -> dict:
    return _text(MAX_NAME_LENGTH, description, pattern=IDENTIFIER_PATTERN)


def _title(description: str) -> dict:
    return _text(MAX_TITLE_LENGTH, description, minLength=1, pattern=TITLE_PATTERN)


def _expression(description: str) -> dict:
    return _text(MAX_TEXT_LENGTH, description, minLength=1)


def _number(description: str, **extra) -> dict:
    return {"type": "number", "description": description, **extra}


def _point(description: str) -> dict:
    return {"type": "array", "description": description, "prefixItems": [{"type": "number"}, {"type": "number"}],
            "minItems": 2, "maxItems": 2, "items": False}


def _range(description: str) -> dict:
    return {"type": "array", "description": description + " as [minimum, maximum] (minimum < maximum)",
            "prefixItems": [{"type": "number"}, {"type": "number"}], "minItems": 2, "maxItems": 2,
            "items": False}


def _equation_schema() -> dict:
    parameter = _object({
        "value": _number("the value used for computation"),
        "minimum": _number("lower end of the slider range (optional)"),
        "maximum": _number("upper end of the slider range (optional)"),
        "unit": _text(MAX_LABEL_LENGTH, "unit of the value, free text; empty when dimensionless"),
        "description": _text(MAX_DESCRIPTION_LENGTH, "what the parameter stands for"),
    }, required=["value", "unit", "description"])
    return _object({
        "name": _title("the equation's name, unique in the project"),
        "description": _text(MAX_DESCRIPTION_LENGTH, "free text"),
        "variables": {"type": "array", "description": "names of the first and second independent variable",
                      "prefixItems": [_identifier("first variable"), _identifier("second variable")],
                      "minItems": 2, "maxItems": 2, "items": False},
        "coefficients": _object({
            "a": _expression("coefficient of u_(first variable)(first variable)"),
            "b": _expression("coefficient of the mixed derivative u_(first)(second)"),
            "c": _expression("coefficient of u_(second variable)(second variable)"),
        }, description="a, b, c of a u_xx + b u_xy + c u_yy + (lower order) = 0, as expressions"),
        "definitions": {"type": "object", "description": "named expressions, in the order shown to the user",
                        "maxProperties": MAX_DEFINITIONS, "propertyNames": {"pattern": IDENTIFIER_PATTERN,
                                                                            "maxLength": MAX_NAME_LENGTH},
                        "additionalProperties": _expression("an expression")},
        "parameters": {"type": "object", "description": "named numbers, in the order shown to the user",
                       "maxProperties": MAX_PARAMETERS, "propertyNames": {"pattern": IDENTIFIER_PATTERN,
                                                                          "maxLength": MAX_NAME_LENGTH},
                       "additionalProperties": parameter},
        "trade": _trade_schema(),
        "peak_quantity": _identifier("the definition, parameter or data quantity whose largest value is reported "
                                     "for each hyperbolic pocket (optional)"),
        "lower_order": _object({
            "d": _expression("coefficient of u_(first variable)"),
            "e": _expression("coefficient of u_(second variable)"),
            "f": _expression("coefficient of u"),
        }, required=[], description="the lower-order part d u_x + e u_y + f u where the study states it "
                                    "(optional, format 6): it never changes the type, only the canonical forms"),
        "cauchy_data": _object({
            "line": _expression("the data line, ALPHA*x + BETA*y = GAMMA in the equation's variables"),
            "u": _expression("u on the data line, in s (arc length along it) or in the variables"),
            "du": _expression("the derivative of u along the line's unit normal (ALPHA, BETA)/|(ALPHA, BETA)|, "
                              "in s or in the variables"),
        }, required=[], description="a Cauchy problem stated for the equation, solved in closed form where a, b, "
                                    "c are constant (optional, format 6; a field not typed yet is left out)"),
    }, required=["name", "description", "variables", "coefficients", "definitions", "parameters"],
        description="a second-order equation in two independent variables")


def _trade_schema() -> dict:
    kinds = {}
    for kind, (required, optional) in TRADE_INPUTS.items():
        kinds[kind] = _object({name: _identifier(f"the name whose value is the input {name!r}")
                               for name in (*required, *optional)}, required=list(required),
                              description=f"inputs of the {kind.replace('_', ' ')} readout")
    return _object(kinds, required=[], description="the trade quantities a probe reads off the equation "
                   "(optional): for each kind, which value names feed its inputs")


def _data_source_schema() -> dict:
    return _object({
        "path": _text(MAX_PATH_LENGTH, "the data file, relative to the project file's folder with '/' between "
                      "folders (absolute only when on another drive)", pattern=PATH_PATTERN),
        "checksum": {"type": "string", "pattern": CHECKSUM_PATTERN,
                     "description": "SHA-256 of the file when the project was saved, 64 hexadecimal digits"},
        "format": {"enum": list(DATA_FORMATS), "description": "the file's format when its extension does not "
                   "say it (optional)"},
        "names": {"type": "object", "description": "which quantities to take from the file, as {name in the "
                  "file: quantity name}; every usable quantity under its own name when absent",
                  "maxProperties": MAX_PARAMETERS, "propertyNames": {"pattern": IDENTIFIER_PATTERN,
                                                                     "maxLength": MAX_NAME_LENGTH},
                  "additionalProperties": _identifier("the quantity name equations use")},
        "note": _text(MAX_DESCRIPTION_LENGTH, "free text (optional)"),
    }, required=["path", "checksum"], description="a background data file the equations read quantities from")


def _seed_schema() -> dict:
    seed = _object({
        "kind": {"enum": ["point", "segment"], "description": "one seed point, or points along a segment"},
        "start": _point("the seed point, or the segment's first end"),
        "end": _point("the segment's second end (segments only)"),
        "curves": {"type": "integer", "minimum": 1, "maximum": MAX_SEED_CURVES,
                   "description": "number of seed points spread along the segment, ends included"},
        "families": {"type": "array", "items": {"enum": list(FAMILIES)}, "minItems": 1,
                     "maxItems": len(FAMILIES), "uniqueItems": True,
                     "description": "which characteristic families to trace from each seed point"},
        "label": _text(MAX_LABEL_LENGTH, "free text"),
    }, required=["kind", "start", "families", "label"], description="where characteristic curves start")
    seed["allOf"] = [
        {"if": {"properties": {"kind": {"const": "segment"}}},
         "then": {"required": ["end", "curves"]},
         "else": {"not": {"anyOf": [{"required": ["end"]}, {"required": ["curves"]}]}}},
    ]
    return seed


def _field_schema() -> dict:
    return _object({
        "shown": {"type": "boolean", "description": "draw the field over the map (the type zones are the default)"},
        "kind": {"enum": list(FIELD_KINDS), "description": "what the quantity is: the discriminant, a "
                 "coefficient, a value the equation knows (definition, parameter, data quantity) or a trade "
                 "quantity"},
        "quantity": _identifier("which one: normalized or D; a, b or c; a name the equation knows; or a trade "
                                "field (" + ", ".join(FIELD_KINDS["trade"] or ()) + ")"),
        "colour_map": {"enum": list(FIELD_COLOUR_MAPS), "description": "the colour map shading the values"},
        "iso_values": {"type": "array", "items": {"type": "number"}, "maxItems": MAX_ISO_VALUES,
                       "description": "values at which iso-lines are drawn (none: no iso-lines)"},
    }, description="the field layer: one quantity of the study shaded over the map (optional; absent: hidden, "
       "the normalised discriminant)")


def _certified_schema() -> dict:
    return _object({
        "shown": {"type": "boolean", "description": "compute and draw the certified layer: zones proven by "
                  "interval bounds, undecided cells, and pockets the sampled map misses"},
        "min_cell": _number("smallest cell side refined, as a fraction of the domain's shorter side "
                            "(dimensionless)", minimum=MIN_CELL_FRACTION_RANGE[0], maximum=MIN_CELL_FRACTION_RANGE[1]),
        "max_cells": {"type": "integer", "minimum": MAX_CELLS_RANGE[0], "maximum": MAX_CELLS_RANGE[1],
                      "description": "how many cells the refinement may examine in all"},
    }, required=["shown", "min_cell", "max_cells"], description="the certified layer (optional; absent: hidden, "
       "minimum cell 1e-4 of the shorter side)")


def _per_type(description: str, **bounds) -> dict:
    return _object({label: _number(f"{description} of the {label} type", minimum=0, **bounds)
                    for label in TYPE_LABELS}, description=description + " by type")


def _sweep_schema() -> dict:
    peak = _object({
        "quantity": _identifier("the quantity peaked"),
        "value": _number("its largest value over the hyperbolic pockets"),
        "at": _point("where that value is reached"),
    }, description="the largest pocket peak of the study's peak quantity (optional: absent when there is no peak "
       "quantity or no pocket)")
    row = _object({
        "value": _number("the parameter's value"),
        "fractions": _per_type("share of the grid nodes", maximum=1),
        "areas": _per_type("area, in units of the product of the variables' units"),
        "pockets": {"type": "integer", "minimum": 0, "description": "number of connected hyperbolic regions"},
        "peak": peak,
    }, required=["value", "fractions", "areas", "pockets"], description="what the study looked like at one value")
    critical = _object({
        "value": _number("the parameter's value where the zone appears or vanishes"),
        "event": {"enum": list(CRITICAL_EVENTS), "description": "whether the zone appears or vanishes as the "
                  "parameter grows"},
        "at": _point("where it first appears or last remains"),
        "type": {"enum": list(TYPE_LABELS), "description": "the type of the zone"},
        "bracket": _range("the parameter values known to hold the critical value (optional)"),
    }, required=["value", "event", "at", "type"], description="a parameter value where a zone of a type appears "
       "or vanishes")
    return _object({
        "study": _object({
            "equation": _title("name of the equation swept"),
            "domain": _title("name of the domain swept"),
        }, description="the study the sweep belongs to"),
        "parameter": _identifier("the parameter swept"),
        "low": _number("the first value"),
        "high": _number("the last value (above low)"),
        "count": {"type": "integer", "minimum": 2, "maximum": MAX_SWEEP_VALUES,
                  "description": "how many values, both ends included"},
        "log": {"type": "boolean", "description": "values evenly spread on a logarithmic scale (low above 0)"},
        "rows": {"type": "array", "items": row, "maxItems": MAX_SWEEP_VALUES,
                 "description": "the last results, one per value (optional: absent when not run or not kept)"},
        "critical_values": {"type": "array", "items": critical, "maxItems": MAX_CRITICAL_VALUES,
                            "description": "critical values found in the range (optional: absent when not "
                                           "searched)"},
    }, required=["study", "parameter", "low", "high", "count", "log"],
        description="a sweep of one parameter of a study over a range of values")


def project_schema() -> dict:
    """The JSON Schema of the current project file format, as a dict (keys in a fixed order)."""
    version = CURRENT_FORMAT_VERSION
    domain = _object({
        "name": _title("the domain's name, unique in the project"),
        "x_range": _range("extent along the first independent variable"),
        "y_range": _range("extent along the second independent variable"),
        "nodes": {"type": "array", "description": "grid nodes along the first and second variable, ends included",
                  "prefixItems": [{"type": "integer", "minimum": MIN_GRID, "maximum": MAX_GRID}] * 2,
                  "minItems": 2, "maxItems": 2, "items": False},
    }, description="a rectangle of the plane and the grid laid over it")
    layers = {name: {"type": "boolean", "description": f"show the {text}"} for name, text in (
        ("type_map", "map of elliptic, parabolic and hyperbolic zones"),
        ("type_change_lines", "lines where the type changes"),
        ("characteristics_family_1", "characteristic curves of family 1"),
        ("characteristics_family_2", "characteristic curves of family 2"),
        ("pins", "pinned points"),
        ("legend", "legend"),
        ("seed_segments", "segments characteristics start from (optional, shown when absent)"))}
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": f"https://mixtype.invalid/schema/mixtype-project-v{version}.schema.json",
        "title": f"Mixtype project file, format version {version}",
        "description": "A study of where a second-order PDE in two variables is elliptic, parabolic or "
                       "hyperbolic. Expressions are text for Mixtype's own expression parser.",
        **_object({
            "format": {"const": FORMAT_NAME, "description": "marks the file as a Mixtype project"},
            "format_version": {"const": version, "description": "version of this file format"},
            "metadata": _object({
                "created": _text(20, "creation time, ISO 8601 UTC", pattern=TIMESTAMP_PATTERN),
                "modified": _text(20, "time of the last change, ISO 8601 UTC", pattern=TIMESTAMP_PATTERN),
                "written_by": _text(MAX_NAME_LENGTH, "version of Mixtype that wrote the file"),
            }),
            "equations": {"type": "array", "items": _equation_schema(), "minItems": 1, "maxItems": MAX_EQUATIONS},
            "domains": {"type": "array", "items": domain, "minItems": 1, "maxItems": MAX_DOMAINS},
            "data_sources": {"type": "array", "items": _data_source_schema(), "maxItems": MAX_DATA_SOURCES},
            "shown": _object({
                "equation": _title("name of the equation shown"),
                "domain": _title("name of the domain shown"),
            }, description="the equation and domain the window shows"),
            "pins": {"type": "array", "maxItems": MAX_PINS, "items": _object({
                "at": _point("the pinned point"),
                "label": _text(MAX_LABEL_LENGTH, "free text"),
                "study": _object({
                    "equation": _title("name of the equation the pin was set in"),
                    "domain": _title("name of the domain the pin was set in"),
                }, description="the study the pin belongs to; it is shown only with that equation and domain "
                   "(optional: absent, it belongs to every study)"),
            }, required=["at", "label"], description="a probed point")},
            "seeds": {"type": "array", "maxItems": MAX_SEEDS, "items": _seed_schema()},
            "sweeps": {"type": "array", "maxItems": MAX_SWEEPS, "items": _sweep_schema(),
                       "description": "parameter sweeps of the studies, one per equation, domain and parameter "
                                      "(optional: absent, none)"},
            "view": _object({
                "layers": _object(layers, required=[n for n in layers if n != "seed_segments"],
                                  description="which layers of the map are visible"),
                "parabolic_tolerance": _number("points with |D| / (b^2 + 4|ac|) at most this are parabolic",
                                               minimum=0, exclusiveMaximum=1),
                "characteristic_bounces": {
                    "type": "integer", "minimum": 0, "maximum": MAX_BOUNCES,
                    "description": "how many times each half of a characteristic goes on as the other family "
                                   "where it meets the domain edge (reflected) or the type-change line (turned "
                                   "back); 0 stops it there"},
                "field": _field_schema(),
                "certified": _certified_schema(),
            }, required=["layers", "parabolic_tolerance", "characteristic_bounces"],
                description="what the map shows and how characteristics are traced"),
            "notes": _text(MAX_NOTES_LENGTH, "free-text notes"),
        }, required=["format", "format_version", "metadata", "equations", "domains", "data_sources", "shown", "pins",
                     "seeds", "view", "notes"]),
    }


def schema_text() -> str:
    """The schema as the text stored in resources/schema (2-space indent, trailing newline)."""
    return json.dumps(project_schema(), indent=2, ensure_ascii=False) + "\n"


def schema_path(version: int = CURRENT_FORMAT_VERSION) -> Path:
    """Where the schema of format ``version`` is stored (older versions are kept as they were)."""
    return bundled_path("schema", f"mixtype-project-v{version}.schema.json")


if __name__ == "__main__":
    schema_path().write_text(schema_text(), encoding="utf-8")
    print(f"wrote {schema_path()}")


def describe_json_value(value: object, *, show: bool = False) -> str:
    """What kind of JSON value this is, for messages ('a number', 'text'...); ``show`` quotes short values."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true/false"
    if isinstance(value, int | float):
        return f"the number {value!r}" if show else "a number"
    if isinstance(value, str):
        return f"the text {value!r}" if show and len(value) <= 40 else "text"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "an object"
    return type(value).__name__
