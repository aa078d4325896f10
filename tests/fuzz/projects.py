"""Hypothesis strategies for mutated project files, from the demo projects and the sample files of tests/data.

A case starts from one of those files (with the demo's data files copied beside it) and applies one to four
mutations: delete a field, duplicate a list item or a key, give a field another type, put in a huge, tiny or
non-finite number, nest a value deeply, make a text long or fill it with control characters and non-ASCII
text, put a generated expression in a coefficient or definition, point a data source at the canary file
outside the case folder (absolute, or climbing out with ../) or at a special file, or grow the project
towards the schema's limits. The mutated file is then checked, classified, probed or traced.
"""

from __future__ import annotations

import json
from functools import cache
from pathlib import Path

from hypothesis import strategies as st

from core.bundled import bundled_path
from tests.fuzz.cases import CANARY_PLACEHOLDER, CANARY_UP_PLACEHOLDER, Case
from tests.fuzz.expressions import grammar_expressions, hostile_texts

__all__ = ["base_projects", "project_cases"]

_SAMPLES = Path(__file__).resolve().parents[1] / "data"
PROJECT_NAME = "case.mixtype.json"


@cache
def base_projects() -> tuple[tuple[str, str, tuple[tuple[str, bytes], ...]], ...]:
    """(name, text, data files to copy beside it) of every demo project and sample file."""
    demo = bundled_path("demo")
    data = tuple((f"data/{p.name}", p.read_bytes()) for p in sorted((demo / "data").iterdir())
                 if p.suffix in (".csv", ".npz", ".vtu", ".nc"))
    bases = [(p.name, p.read_text(encoding="utf-8"), data) for p in sorted(demo.glob("*.mixtype.json"))]
    bases += [(p.name, p.read_text(encoding="utf-8"), ()) for p in sorted(_SAMPLES.glob("*.mixtype.json"))]
    return tuple(bases)


def _nodes(value, path=()) -> list[tuple]:
    """Every path in a JSON value (root excluded), parents before children."""
    found = []
    items = value.items() if isinstance(value, dict) else enumerate(value) if isinstance(value, list) else ()
    for key, item in items:
        found.append((*path, key))
        found.extend(_nodes(item, (*path, key)))
    return found


def _parent(document, path):
    for key in path[:-1]:
        document = document[key]
    return document


_HUGE_NUMBERS = (1e308, -1e308, 1.7976931348623157e308, 5e-324, -5e-324, 2.2250738585072014e-308, 0.0, -0.0,
                 2**53 + 1, 2**63, 10**30, -(2**31), 8192, 8193, 1, 2, 0, -1, 1000, 1001, 10_000, 1e-320, 0.5)
_NUMBER_TEXTS = ("NaN", "Infinity", "-Infinity", "1e400", "-1e400", "1e-400", "1" + "0" * 500, "1" + "0" * 5000,
                 "0.000000000000000000000000000000000000000000001", "-0", "1E5", "12345678901234567890123")
_SPECIAL_PATHS = (CANARY_PLACEHOLDER, CANARY_UP_PLACEHOLDER, "../outside/secret.csv", "/dev/zero", "/proc/self/environ",
                  "/etc/passwd", "data", ".", "..", "/", "data/", "data/../data/bump_flow.npz", "a" * 300 + ".csv",
                  "dir/" * 80 + "x.csv", "~/x.csv", "C:\\data\\x.csv", "\\\\server\\share\\x.csv", "data\\x.csv",
                  "file:///etc/passwd", "x.csv\u202e", " data/bump_flow.npz", "data/missing.npz", "data/bump_flow.vtu")


def _json_values(depth: int = 2) -> st.SearchStrategy:
    scalars = st.one_of(st.none(), st.booleans(), st.integers(-(2**70), 2**70), st.floats(allow_nan=False,
                        allow_infinity=False), st.text(max_size=30), st.sampled_from(_HUGE_NUMBERS))
    if depth == 0:
        return scalars
    return st.one_of(scalars, st.lists(_json_values(depth - 1), max_size=4),
                     st.dictionaries(st.text(max_size=12), _json_values(depth - 1), max_size=4))


@st.composite
def _mutated(draw) -> tuple[str, tuple[tuple[str, bytes], ...], list[str]]:
    """(file text, data files, what was done) of one mutated project."""
    name, text, data = draw(st.sampled_from(base_projects()))
    document = json.loads(text)
    done = [name]
    text_mutations: list[tuple[str, str]] = []
    for _ in range(draw(st.integers(1, 4))):
        nodes = _nodes(document)
        if not nodes:
            break
        path = draw(st.sampled_from(nodes))
        parent, key = _parent(document, path), path[-1]
        kind = draw(st.sampled_from(("delete", "duplicate", "retype", "number", "number text", "deep",
                                     "long text", "odd text", "expression", "expression", "data path",
                                     "data path", "grow")))
        where = "/".join(map(str, path))
        if kind == "delete":
            del parent[key]
        elif kind == "duplicate":
            if isinstance(parent, list):
                parent.insert(key, json.loads(json.dumps(parent[key])))
            else:   # a repeated key, in the text
                marker = f"@DUPLICATE{len(text_mutations)}@"
                parent[key] = marker
                text_mutations.append((json.dumps(marker), f"{json.dumps(marker)}, {json.dumps(key)}: 1"))
        elif kind == "retype":
            parent[key] = draw(_json_values())
        elif kind == "number":
            parent[key] = draw(st.sampled_from(_HUGE_NUMBERS))
        elif kind == "number text":
            marker = f"@NUMBER{len(text_mutations)}@"
            parent[key] = marker
            text_mutations.append((json.dumps(marker), draw(st.sampled_from(_NUMBER_TEXTS))))
        elif kind == "deep":
            depth = draw(st.sampled_from((20, 25, 100, 1000, 100_000)))
            marker = f"@DEEP{len(text_mutations)}@"
            parent[key] = marker
            opening, closing = draw(st.sampled_from((("[", "]"), ('{"a":', "}"))))
            text_mutations.append((json.dumps(marker), opening * depth + "1" + closing * depth))
        elif kind == "long text":
            parent[key] = draw(st.sampled_from("xé\u202e ")) * draw(st.sampled_from((81, 201, 4001, 100_000,
                                                                                      1_000_001)))
        elif kind == "odd text":
            parent[key] = draw(st.text(max_size=20)) + draw(st.sampled_from(("\x1b[2J", "\x00", "\n", "\ud800",
                                                                             "\u2028", "\t", " ", "")))
        elif kind == "expression":
            target = _expression_slot(document, draw)
            if target is not None:
                holder, slot = target
                holder[slot] = draw(st.one_of(grammar_expressions(), hostile_texts()))
                where = f"expression {slot}"
        elif kind == "data path":
            source = {"path": draw(st.sampled_from(_SPECIAL_PATHS)), "checksum": "0" * 64}
            if draw(st.booleans()):
                source["format"] = draw(st.sampled_from(("csv", "npz", "netcdf", "vtu", "vtk")))
            if isinstance(document.get("data_sources"), list):
                document["data_sources"].append(source)
            else:
                document["data_sources"] = [source]
            where = f"data source {source['path'][:40]!r}"
        else:
            where = _grow(document, draw)
        done.append(f"{kind} {where}"[:80])
    rendered = json.dumps(document, ensure_ascii=draw(st.booleans()))
    for marker, replacement in text_mutations:
        rendered = rendered.replace(marker, replacement, 1)
    return rendered, data, done


def _expression_slot(document, draw):
    """(object, key) of a coefficient or definition of some equation, or None."""
    equations = document.get("equations") if isinstance(document, dict) else None
    if not isinstance(equations, list) or not equations or not isinstance(equations[0], dict):
        return None
    equation = draw(st.sampled_from(equations))
    if not isinstance(equation, dict):
        return None
    holders = [h for h in (equation.get("coefficients"), equation.get("definitions")) if isinstance(h, dict) and h]
    if not holders:
        return None
    holder = draw(st.sampled_from(holders))
    return holder, draw(st.sampled_from(sorted(holder)))


def _grow(document, draw) -> str:
    """Make the project larger: many equations, definitions, pins, seed curves or sweeps (within or past limits)."""
    what = draw(st.sampled_from(("equations", "definitions", "pins", "curves", "sweeps")))
    if not isinstance(document, dict):
        return "grow nothing"
    equations = document.get("equations")
    first = equations[0] if isinstance(equations, list) and equations and isinstance(equations[0], dict) else None
    count = draw(st.sampled_from((10, 99, 100, 101, 200, 201, 1001)))
    if what == "equations" and first is not None:
        equations.extend({**first, "name": f"copy {i}"} for i in range(count))
    elif what == "definitions" and first is not None and isinstance(first.get("definitions"), dict):
        terms = " + ".join(f"{draw(st.sampled_from(('x', 'y', '0.5')))}*{i}" for i in range(draw(st.integers(1, 95))))
        first["definitions"].update({f"d{i}": terms for i in range(count)})
    elif what == "pins":
        document["pins"] = [{"at": [0.1 * i, 0.0], "label": ""} for i in range(count * 10)]
    elif what == "sweeps" and first is not None and isinstance(document.get("domains"), list) and document["domains"]:
        study = {"equation": first.get("name"), "domain": document["domains"][0].get("name")}
        row = {"value": 0.5, "fractions": dict.fromkeys(("elliptic", "parabolic", "hyperbolic", "undefined"), 0.25),
               "areas": dict.fromkeys(("elliptic", "parabolic", "hyperbolic", "undefined"), 1.0), "pockets": 1}
        document["sweeps"] = [{"study": study, "parameter": f"p{i}", "low": 0.0, "high": 1.0, "count": 1000,
                               "log": False, "rows": [row] * 10,
                               "critical_values": [{"value": 0.5, "event": "appears", "at": [0.0, 0.0],
                                                    "type": "hyperbolic"}] * 3} for i in range(count)]
    else:
        document["seeds"] = [{"kind": "segment", "start": [-0.5, -0.5], "end": [0.5, -0.5],
                              "curves": min(count, 1000), "families": [1, 2], "label": ""}]
    return f"grow {what} by {count}"


def _argv(command: str) -> tuple[str, ...]:
    if command == "check":
        return ("check", PROJECT_NAME, "--json")
    if command == "check text":
        return ("check", PROJECT_NAME)
    if command == "classify":
        return ("classify", PROJECT_NAME, "--grid", "8", "--json")
    return (command, PROJECT_NAME, "--json")


def project_cases() -> st.SearchStrategy[Case]:
    """Cases running check (mostly), classify, probe or trace on a mutated project file."""
    commands = st.sampled_from(("check", "check", "check", "check text", "classify", "probe", "trace"))
    return st.builds(lambda mutated, command: Case(
        "project", _argv(command), ((PROJECT_NAME, mutated[0].encode("utf-8", "surrogatepass")), *mutated[1]),
        "; ".join(mutated[2])), _mutated(), commands)
