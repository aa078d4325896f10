"""The JSON field names of ``mixtype classify|probe|trace --json`` are a public interface: only additions.

TODAY holds every key path each command printed before the results document (core.results.document) took
over building them; ADDED the key paths added since. A path names a dict key, ``[]`` marking list items, so
``boundaries[].left`` is the ``left`` field of every type-change line.
"""

from __future__ import annotations

import pytest

from core.project.model import demo_project_path
from tests.core.cli_runner import run_json

BUMP = str(demo_project_path("transonic_bump"))
BUMP_DATA = str(demo_project_path("bump_flow_grid_data"))
TRICOMI = str(demo_project_path("tricomi"))
TRICOMI_INLINE = ("--a", "y", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1")


def key_paths(value, prefix: str = "") -> set[str]:
    """Every dict key in ``value`` as a dotted path, list items marked by ``[]``."""
    paths: set[str] = set()
    if isinstance(value, dict):
        for key, inner in value.items():
            path = f"{prefix}.{key}" if prefix else key
            paths |= {path} | key_paths(inner, path)
    elif isinstance(value, list):
        for item in value:
            paths |= key_paths(item, prefix + "[]")
    return paths


CASES = {
    "classify_inline": ("classify", "--a", "max(x,0)", "--b", "0", "--c", "-1", "--domain", "-1", "1", "-1", "1",
                        "--grid", "21"),
    "classify_file_data": ("classify", BUMP_DATA, "--grid", "21"),
    "classify_certified": ("classify", "--a", "1", "--b", "0", "--c",
                           "piecewise(y < 0, (x - 0.3)**2 + (y + 0.5)**2, -1)", "--domain", "-1", "1", "-1", "1",
                           "--grid", "21", "--certify", "--min-cell", "0.05"),
    "probe_inline": ("probe", *TRICOMI_INLINE, "--at", "0", "-0.5"),
    "probe_file_trade": ("probe", BUMP, "--at", "0", "0.5"),
    "probe_pins_data": ("probe", BUMP_DATA),
    "trace_inline": ("trace", *TRICOMI_INLINE, "--from", "0", "-0.5"),
    "trace_file": ("trace", TRICOMI, "--from", "0", "-0.5"),
    "trace_seeds": ("trace", TRICOMI),
    "cauchy": ("cauchy", "--a", "1", "--b", "0", "--c", "-1", "--line", "y = 0", "--u", "sin(s)", "--du", "s**2",
               "--at", "0.3", "0.5"),
    "sweep_file": ("sweep", BUMP, "--grid", "41", "21", "--sweep", "mach=0.7:0.9:3"),
    "critical_inline": ("critical", "--a", "1", "--b", "0", "--c", "x**2 + y**2 - p", "--domain", "-1", "1", "-1",
                        "1", "--grid", "9", "--vary", "p", "--between", "-1", "1"),
    "critical_file": ("critical", TRICOMI, "--grid", "9", "--vary", "k", "--between", "0", "1", "--no-certify"),
    "analyze_inline": ("analyze", "--a", "1 - M**2", "--b", "0", "--c", "1", "--param", "M=1.6", "--d", "1"),
    "analyze_file": ("analyze", TRICOMI),
}

CLASSIFY_FIELDS = {
    "boundaries", "boundaries[].closed", "boundaries[].left", "boundaries[].points", "boundaries[].right", "domain",
    "fractions", "fractions.elliptic", "fractions.hyperbolic", "fractions.parabolic", "fractions.undefined", "grid",
    "parabolic_regions", "pockets", "pockets[].area", "pockets[].bounding_box", "pockets[].centroid",
    "pockets[].nodes", "pockets[].peak", "pockets[].touches_boundary", "refined", "tolerance", "variables",
}
ANALYZE_FIELDS = {
    "discriminant", "discriminant_factored", "type_change", "zones", "zones[].type", "zones[].condition",
    "zones[].everywhere", "characteristics", "characteristics[].family", "characteristics[].slope",
    "characteristics[].invariant", "characteristics[].direction", "characteristics[].method", "canonical",
    "canonical[].type", "canonical[].coordinates", "canonical[].form", "canonical[].names", "canonical[].terms",
    "canonical[].terms[].derivative", "canonical[].terms[].coefficient", "notes", "tangencies", "factors",
    "factors[].expression", "factors[].multiplicity", "factors[].role", "coefficients", "coefficients.a",
    "coefficients.b", "coefficients.c", "coefficients.d", "coefficients.e", "coefficients.f", "variables",
    "parameter_values", "parameters_substituted", "data_quantities", "deadline_seconds",
}
STUDY_FIELDS = {"mixtype_version", "equation", "equation.name", "equation.variables", "equation.a", "equation.b",
                "equation.c", "equation.definitions", "equation.parameters", "parameters"}
TODAY = {
    "classify_certified": CLASSIFY_FIELDS,
    "classify_inline": {
        "boundaries", "boundaries[].closed", "boundaries[].left", "boundaries[].points",
        "boundaries[].right", "domain", "fractions", "fractions.elliptic", "fractions.hyperbolic",
        "fractions.parabolic", "fractions.undefined", "grid", "parabolic_regions",
        "parabolic_regions[].area", "parabolic_regions[].outline", "pockets", "pockets[].area",
        "pockets[].bounding_box", "pockets[].centroid", "pockets[].nodes", "pockets[].peak",
        "pockets[].touches_boundary", "refined", "tolerance", "variables",
    },
    "classify_file_data": {
        "boundaries", "boundaries[].closed", "boundaries[].left", "boundaries[].points",
        "boundaries[].right", "data", "data[].checksum", "data[].path", "data[].quantities", "domain",
        "fractions", "fractions.elliptic", "fractions.hyperbolic", "fractions.parabolic",
        "fractions.undefined", "grid", "parabolic_regions", "pockets", "pockets[].area",
        "pockets[].bounding_box", "pockets[].centroid", "pockets[].nodes", "pockets[].peak",
        "pockets[].peak.at", "pockets[].peak.quantity", "pockets[].peak.value", "pockets[].touches_boundary",
        "refined", "source", "source.domain", "source.equation", "source.file", "tolerance", "variables",
    },
    "probe_inline": {
        "angle_between_deg", "anisotropy", "coefficients", "coefficients.a", "coefficients.b",
        "coefficients.c", "definitions", "directions_deg", "discriminant", "inside", "message",
        "normalized_discriminant", "point", "principal_axes_deg", "slopes", "type",
    },
    "probe_file_trade": {
        "angle_between_deg", "anisotropy", "coefficients", "coefficients.a", "coefficients.b",
        "coefficients.c", "definitions", "definitions.bump", "definitions.c0sq", "definitions.c2",
        "definitions.decay", "definitions.local_mach", "definitions.u", "definitions.v", "directions_deg",
        "discriminant", "inside", "message", "normalized_discriminant", "point", "principal_axes_deg",
        "slopes", "source", "source.domain", "source.equation", "source.file", "trade",
        "trade.characteristic_minus_deg", "trade.characteristic_plus_deg", "trade.density_ratio",
        "trade.flow_angle_deg", "trade.mach", "trade.mach_angle_deg", "trade.pressure_ratio", "trade.speed",
        "trade.temperature_ratio", "trade_units", "trade_units.characteristic_minus_deg",
        "trade_units.characteristic_plus_deg", "trade_units.density_ratio", "trade_units.flow_angle_deg",
        "trade_units.mach", "trade_units.mach_angle_deg", "trade_units.pressure_ratio", "trade_units.speed",
        "trade_units.temperature_ratio", "type",
    },
    "probe_pins_data": {
        "data", "data[].checksum", "data[].path", "data[].quantities", "pins", "pins[].angle_between_deg",
        "pins[].anisotropy", "pins[].coefficients", "pins[].coefficients.a", "pins[].coefficients.b",
        "pins[].coefficients.c", "pins[].definitions", "pins[].definitions.M", "pins[].definitions.c2",
        "pins[].definitions.q2", "pins[].definitions.sound", "pins[].directions_deg", "pins[].discriminant",
        "pins[].inside", "pins[].label", "pins[].message", "pins[].normalized_discriminant", "pins[].point",
        "pins[].principal_axes_deg", "pins[].slopes", "pins[].trade",
        "pins[].trade.characteristic_minus_deg", "pins[].trade.characteristic_plus_deg",
        "pins[].trade.density_ratio", "pins[].trade.flow_angle_deg", "pins[].trade.mach",
        "pins[].trade.mach_angle_deg", "pins[].trade.pressure_ratio", "pins[].trade.speed",
        "pins[].trade.temperature_ratio", "pins[].trade_units",
        "pins[].trade_units.characteristic_minus_deg", "pins[].trade_units.characteristic_plus_deg",
        "pins[].trade_units.density_ratio", "pins[].trade_units.flow_angle_deg", "pins[].trade_units.mach",
        "pins[].trade_units.mach_angle_deg", "pins[].trade_units.pressure_ratio", "pins[].trade_units.speed",
        "pins[].trade_units.temperature_ratio", "pins[].type", "source", "source.domain", "source.equation",
        "source.file",
    },
    "trace_inline": {
        "curves", "curves[].ends", "curves[].family", "curves[].points", "seed",
    },
    "trace_file": {
        "curves", "curves[].ends", "curves[].family", "curves[].points", "seed", "source", "source.domain",
        "source.equation", "source.file",
    },
    # the fields the sweep command was specified with (issue: parameter sweeps)
    "sweep_file": {
        "parameter", "values", "rows", "rows[].value", "rows[].fractions", "rows[].fractions.elliptic",
        "rows[].fractions.parabolic", "rows[].fractions.hyperbolic", "rows[].fractions.undefined", "rows[].areas",
        "rows[].areas.elliptic", "rows[].areas.parabolic", "rows[].areas.hyperbolic", "rows[].areas.undefined",
        "rows[].pockets", "rows[].peak", "rows[].peak.quantity", "rows[].peak.value", "rows[].peak.at",
    },
    "trace_seeds": {
        "seeds", "seeds[].curves", "seeds[].curves[].ends", "seeds[].curves[].family",
        "seeds[].curves[].points", "seeds[].families", "seeds[].label", "seeds[].points", "source",
        "source.domain", "source.equation", "source.file",
    },
    # mixtype cauchy (issue 14): the four fields the issue names, and what a reader needs to use them
    "cauchy": {
        "at", "characteristics", "characteristics[].direction", "characteristics[].family",
        "characteristics[].invariant", "coefficients", "coefficients.a", "coefficients.b", "coefficients.c",
        "domain_of_dependence", "general_solution", "line", "line.normal", "line.origin", "line.parameter",
        "line.tangent", "notes", "solution", "type", "value",
    },
    # mixtype analyze (exact analysis): the seven fields the issue names (discriminant, discriminant_factored,
    # type_change, zones, characteristics, canonical, notes), the study's fields as every command prints them,
    # and what a reader needs besides
    "analyze_inline": ANALYZE_FIELDS | STUDY_FIELDS | {"parameter_values[].name", "parameter_values[].value"},
    "analyze_file": ANALYZE_FIELDS | STUDY_FIELDS | {"project_checksum", "source", "source.domain",
                                                     "source.equation", "source.file"},
}

# Added by the results document: the Mixtype version, the equation as text and the parameter values used
# (every command), the tolerance (probe: it decides the type), FILE's SHA-256 (project_checksum), parabolic regions'
# holes, and the events where a characteristic went on as the other family (empty unless traced with bounces).
STUDY = {"mixtype_version", "equation", "equation.name", "equation.variables", "equation.a", "equation.b",
         "equation.c", "equation.definitions", "equation.parameters", "parameters"}
# --certify adds the certified map (issue 12): area bounds per type, pockets and tangencies.
CERTIFIED = {"certified", "certified.min_cell", "certified.area", "certified.area.elliptic",
             "certified.area.hyperbolic", "certified.area.parabolic", "certified.area.undefined",
             "certified.undecided_area", "certified.cells", "certified.pockets", "certified.pockets[].type",
             "certified.pockets[].bbox", "certified.pockets[].area", "certified.pockets[].proven",
             "certified.pockets[].missed_by_grid", "certified.tangencies", "certified.tangencies[].points"}
# A sweep also says how its values were spread, the parameter's unit, the variables and area units, the grid,
# tolerance and refinement, and the study as every command does.
SWEEP = {"log", "parameter_unit", "variables", "area_units", "domain", "grid", "refined", "tolerance", "source",
         "source.domain", "source.equation", "source.file", "project_checksum"}
ADDED: dict[str, set[str]] = {
    "sweep_file": STUDY | SWEEP,
    "classify_certified": STUDY | CERTIFIED,
    "classify_inline": STUDY | {"parabolic_regions[].holes", "parabolic_regions[].cells"},
    "classify_file_data": STUDY | {"project_checksum"},
    "probe_inline": STUDY | {"tolerance"},
    "probe_file_trade": STUDY | {"tolerance", "project_checksum"},
    "probe_pins_data": STUDY | {"tolerance", "project_checksum"},
    "trace_inline": STUDY | {"curves[].events"},
    "trace_file": STUDY | {"project_checksum", "curves[].events"},
    "trace_seeds": STUDY | {"project_checksum", "seeds[].curves[].events"},
    "cauchy": set(),
    "analyze_inline": set(),
    "analyze_file": set(),
}
# mixtype critical (issue: critical parameter values): the first event at the top, every event in "events".
CRITICAL_EVENT = {"parameter", "value", "bracket", "event", "at", "type"}
CRITICAL = CRITICAL_EVENT | {f"events[].{key}" for key in CRITICAL_EVENT} | {
    "events", "between", "relative_tolerance", "proven", "notes", "tolerance"}
TODAY["critical_inline"] = CRITICAL | STUDY
TODAY["critical_file"] = CRITICAL - {f"events[].{key}" for key in CRITICAL_EVENT} | STUDY | {
    "source", "source.domain", "source.equation", "source.file", "project_checksum"}
ADDED["critical_inline"] = set()
ADDED["critical_file"] = set()
# Below these fields the keys are the study's own names (definitions, parameters), not field names.
NAMED_BY_THE_STUDY = ("equation.definitions.", "equation.parameters.", "parameters.")


@pytest.mark.parametrize("name", sorted(CASES))
def test_json_keeps_every_field_and_only_adds(name):
    paths = key_paths(run_json(*CASES[name]))
    assert TODAY[name] <= paths, f"removed: {sorted(TODAY[name] - paths)}"
    assert {p for p in paths - TODAY[name] if not p.startswith(NAMED_BY_THE_STUDY)} == ADDED[name]
