"""The checks of form a project file's JSON data must pass, each problem located by a JSON path.

The first two gates core.project.codec runs: plain-JSON sanity (finite numbers, depth, no repeated keys,
text UTF-8 can hold) and the JSON Schema of core.project.schema (all structural errors at once, in short words
that never quote a whole value). Each returns a list of (JSON path, message) pairs; empty means passed. What
the data mean is checked afterwards by core.project.checks.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Iterable, Mapping
from functools import cache
from typing import TYPE_CHECKING

from core.project.schema import (
    CHECKSUM_PATTERN,
    IDENTIFIER_PATTERN,
    PATH_PATTERN,
    TIMESTAMP_PATTERN,
    TITLE_PATTERN,
    describe_json_value,
    project_schema,
)

if TYPE_CHECKING:
    import jsonschema

__all__ = [
    "MAX_JSON_DEPTH",
    "NonFiniteNumber",
    "RepeatedKeys",
    "clip",
    "json_path",
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
            text += f"[{json.dumps(clip(part, 40), ensure_ascii=True)}]"
    return text


def clip(text: str, limit: int = _MAX_MESSAGE) -> str:
    """``text`` cut to ``limit`` characters (ending in '...' when cut), for messages."""
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
                problems.append((json_path(parts), f"the key {clip(key, 40)!r} appears more than once"))
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
    import jsonschema  # lazy: 45-80 ms to import (python -X importtime), only when a project file is read

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
        names = ", ".join(repr(clip(k, 40)) for k in extra[:5])
        return f"unknown field{'s' * (len(extra) != 1)} {names} (fields allowed: {', '.join(sorted(known))})"
    if kind == "const":
        return f"must be {json.dumps(expected)}" + (f", not {clip(repr(instance), 40)}"
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
    return clip(error.message)


def schema_problems(data: object) -> list[tuple[str, str]]:
    """Every place where ``data`` breaks the project JSON Schema, each said once in short words."""
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
