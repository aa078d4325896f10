"""Project <-> plain JSON data: the fixed layout files use, and the gate every file passes to become a Project.

``project_from_dict`` runs the checks of core.project.form_checks and core.project.checks in order (plain-JSON
sanity, then the format version, migrating older versions, then the schema, then the meaning) and builds the
dataclasses only from data that passed them all. Every problem is one line ``SOURCE: JSON-PATH: what is
wrong``; they are raised together as a ProjectError.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from core.analysis.sweep_values import SweepRow
from core.domain import Domain
from core.equations.equation import Parameter
from core.project.checks import equation_from_dict, meaning_problems
from core.project.form_checks import sanity_problems, schema_problems
from core.project.migrate import MigrationError, migrate
from core.project.model import (
    CertifiedLayerSettings,
    DataSourceRef,
    FieldLayerSettings,
    Metadata,
    Pin,
    Project,
    Seed,
    ViewSettings,
)
from core.project.schema import CURRENT_FORMAT_VERSION, FORMAT_NAME
from core.project.sweeps import TYPE_LABELS, CriticalValue, SavedSweep

__all__ = ["ProjectError", "project_from_dict", "project_to_dict"]


class ProjectError(ValueError):
    """A project cannot be read or written; ``problems`` holds one line per problem, ``str`` all of them."""

    def __init__(self, problems: Iterable[str]) -> None:
        self.problems = list(problems) or ["unknown problem"]
        super().__init__("\n".join(self.problems))

    def __str__(self) -> str:
        return "\n".join(self.problems)


# -- writing ----------------------------------------------------------------------------------------------
def _parameter_to_dict(parameter: Parameter) -> dict:
    result: dict = {"value": float(parameter.value)}
    if parameter.minimum is not None:
        result["minimum"] = float(parameter.minimum)
    if parameter.maximum is not None:
        result["maximum"] = float(parameter.maximum)
    result["unit"] = parameter.unit
    result["description"] = parameter.description
    return result


def _seed_to_dict(seed: Seed) -> dict:
    result: dict = {"kind": "segment" if seed.is_segment else "point", "start": list(seed.start)}
    if seed.end is not None:
        result["end"] = list(seed.end)
        result["curves"] = seed.curves
    result["families"] = list(seed.families)
    result["label"] = seed.label
    return result


def _equation_to_dict(e) -> dict:
    result = {
        "name": e.name,
        "description": e.description,
        "variables": list(e.variables),
        "coefficients": {"a": e.a, "b": e.b, "c": e.c},
        "definitions": dict(e.definitions),
        "parameters": {name: _parameter_to_dict(p) for name, p in e.parameters.items()},
    }
    if e.trade:
        result["trade"] = {kind: dict(inputs) for kind, inputs in e.trade.items()}
    if e.peak_quantity:
        result["peak_quantity"] = e.peak_quantity
    if e.lower_order:
        result["lower_order"] = dict(e.lower_order)
    if e.cauchy_data:
        result["cauchy_data"] = dict(e.cauchy_data)
    return result


def _data_source_to_dict(source: DataSourceRef) -> dict:
    result: dict = {"path": source.path, "checksum": source.checksum}
    if source.format is not None:
        result["format"] = source.format
    if source.names:
        result["names"] = dict(source.names)
    if source.note:
        result["note"] = source.note
    return result


def _layers_to_dict(view: ViewSettings) -> dict:
    """The layer switches; ``seed_segments`` is optional and written only when the segments are hidden, so
    files written before it existed keep their bytes."""
    layers = {"type_map": view.show_type_map, "type_change_lines": view.show_type_change_lines,
              "characteristics_family_1": view.show_characteristics_family_1,
              "characteristics_family_2": view.show_characteristics_family_2,
              "pins": view.show_pins, "legend": view.show_legend}
    if not view.show_seed_segments:
        layers["seed_segments"] = False
    return layers


def _pin_to_dict(pin: Pin) -> dict:
    result: dict = {"at": [float(pin.x), float(pin.y)], "label": pin.label}
    if pin.study is not None:
        result["study"] = {"equation": pin.study[0], "domain": pin.study[1]}
    return result


def _field_to_dict(field: FieldLayerSettings) -> dict:
    return {"shown": field.shown, "kind": field.kind, "quantity": field.quantity, "colour_map": field.colour_map,
            "iso_values": [float(v) for v in field.iso_values]}


def _certified_to_dict(certified: CertifiedLayerSettings) -> dict:
    return {"shown": certified.shown, "min_cell": float(certified.min_cell), "max_cells": certified.max_cells}


def _sweep_row_to_dict(row: SweepRow) -> dict:
    """One row of a sweep's results; ``peak`` only when there is one."""
    result = {"value": float(row.value), "fractions": {k: float(v) for k, v in row.fractions.items()},
              "areas": {k: float(v) for k, v in row.areas.items()}, "pockets": int(row.pockets)}
    if row.peak is not None:
        result["peak"] = {"quantity": row.peak["quantity"], "value": float(row.peak["value"]),
                          "at": [float(v) for v in row.peak["at"]]}
    return result


def _critical_to_dict(critical: CriticalValue) -> dict:
    result: dict = {"value": critical.value, "event": critical.event, "at": list(critical.at), "type": critical.type}
    if critical.bracket is not None:
        result["bracket"] = list(critical.bracket)
    return result


def _sweep_to_dict(sweep: SavedSweep) -> dict:
    """A sweep; its results (``rows``) and ``critical_values`` are written only when it has them."""
    result: dict = {"study": {"equation": sweep.study[0], "domain": sweep.study[1]}, "parameter": sweep.parameter,
                    "low": sweep.low, "high": sweep.high, "count": sweep.count, "log": sweep.log}
    if sweep.rows is not None:
        result["rows"] = [_sweep_row_to_dict(row) for row in sweep.rows]
    if sweep.critical is not None:
        result["critical_values"] = [_critical_to_dict(c) for c in sweep.critical]
    return result


def project_to_dict(project: Project) -> dict:
    """The plain JSON data of a project in the current format, keys in the fixed order files use."""
    view = project.view
    return {
        "format": FORMAT_NAME,
        "format_version": CURRENT_FORMAT_VERSION,
        "metadata": {"created": project.metadata.created, "modified": project.metadata.modified,
                     "written_by": project.metadata.written_by},
        "equations": [_equation_to_dict(e) for e in project.equations],
        "domains": [{"name": d.name, "x_range": [float(d.xmin), float(d.xmax)],
                     "y_range": [float(d.ymin), float(d.ymax)], "nodes": [d.nx, d.ny]} for d in project.domains],
        "data_sources": [_data_source_to_dict(s) for s in project.data_sources],
        "shown": {"equation": project.shown_equation, "domain": project.shown_domain},
        "pins": [_pin_to_dict(p) for p in project.pins],
        "seeds": [_seed_to_dict(s) for s in project.seeds],
        "sweeps": [_sweep_to_dict(s) for s in project.sweeps],
        "view": {
            "layers": _layers_to_dict(view),
            "parabolic_tolerance": float(view.parabolic_tolerance),
            "characteristic_bounces": view.characteristic_bounces,
            "field": _field_to_dict(view.field),
            "certified": _certified_to_dict(view.certified),
        },
        "notes": project.notes,
    }


# -- building --------------------------------------------------------------------------------------------
def _seed(raw: Mapping) -> Seed:
    end = raw.get("end")
    return Seed(start=tuple(raw["start"]), end=None if end is None else tuple(end),
                curves=int(raw.get("curves", 1)), families=tuple(int(f) for f in raw["families"]),
                label=raw["label"])


def _pin(raw: Mapping) -> Pin:
    study = raw.get("study")
    return Pin(float(raw["at"][0]), float(raw["at"][1]), raw["label"],
               None if study is None else (study["equation"], study["domain"]))


def _field(raw: Mapping | None) -> FieldLayerSettings:
    """The field layer; optional in the file (absent: hidden, the normalised discriminant)."""
    if raw is None:
        return FieldLayerSettings()
    return FieldLayerSettings(shown=raw["shown"], kind=raw["kind"], quantity=raw["quantity"],
                              colour_map=raw["colour_map"], iso_values=tuple(float(v) for v in raw["iso_values"]))


def _certified(raw: Mapping | None) -> CertifiedLayerSettings:
    """The certified layer; optional in the file (absent: hidden, with the default cell size and budget)."""
    if raw is None:
        return CertifiedLayerSettings()
    return CertifiedLayerSettings(shown=raw["shown"], min_cell=float(raw["min_cell"]), max_cells=int(raw["max_cells"]))


def _saved_sweep(raw: Mapping) -> SavedSweep:
    rows = raw.get("rows")
    critical = raw.get("critical_values")
    return SavedSweep(
        study=(raw["study"]["equation"], raw["study"]["domain"]), parameter=raw["parameter"],
        low=float(raw["low"]), high=float(raw["high"]), count=int(raw["count"]), log=raw["log"],
        rows=None if rows is None else tuple(
            SweepRow(value=float(r["value"]), fractions={k: float(r["fractions"][k]) for k in TYPE_LABELS},
                     areas={k: float(r["areas"][k]) for k in TYPE_LABELS}, pockets=int(r["pockets"]),
                     peak=None if "peak" not in r else {"quantity": r["peak"]["quantity"],
                                                          "value": float(r["peak"]["value"]),
                                                          "at": [float(v) for v in r["peak"]["at"]]})
            for r in rows),
        critical=None if critical is None else tuple(
            CriticalValue(value=float(c["value"]), event=c["event"], at=tuple(c["at"]), type=c["type"],
                          bracket=None if "bracket" not in c else tuple(c["bracket"])) for c in critical))


def _build(data: Mapping) -> Project:
    view, layers = data["view"], data["view"]["layers"]
    return Project(
        equations=tuple(equation_from_dict(raw) for raw in data["equations"]),
        domains=tuple(Domain(float(d["x_range"][0]), float(d["x_range"][1]), float(d["y_range"][0]),
                             float(d["y_range"][1]), int(d["nodes"][0]), int(d["nodes"][1]), d["name"])
                      for d in data["domains"]),
        shown_equation=data["shown"]["equation"],
        shown_domain=data["shown"]["domain"],
        pins=tuple(_pin(raw) for raw in data["pins"]),
        seeds=tuple(_seed(raw) for raw in data["seeds"]),
        view=ViewSettings(show_type_map=layers["type_map"], show_type_change_lines=layers["type_change_lines"],
                          show_characteristics_family_1=layers["characteristics_family_1"],
                          show_characteristics_family_2=layers["characteristics_family_2"],
                          show_pins=layers["pins"], show_legend=layers["legend"],
                          parabolic_tolerance=float(view["parabolic_tolerance"]),
                          show_seed_segments=layers.get("seed_segments", True),
                          characteristic_bounces=int(view["characteristic_bounces"]),
                          field=_field(view.get("field")), certified=_certified(view.get("certified"))),
        notes=data["notes"],
        metadata=Metadata(created=data["metadata"]["created"], modified=data["metadata"]["modified"],
                          written_by=data["metadata"]["written_by"]),
        data_sources=tuple(DataSourceRef(path=raw["path"], checksum=raw["checksum"], format=raw.get("format"),
                                         names=dict(raw.get("names", {})), note=raw.get("note", ""))
                           for raw in data["data_sources"]),
        sweeps=tuple(_saved_sweep(raw) for raw in data.get("sweeps", ())),
    )


def project_from_dict(data: object, *, source: str = "<data>") -> Project:
    """A Project from plain JSON data of any supported format version, after every check (see module doc).

    Raises ProjectError listing every problem found as ``SOURCE: JSON-PATH: message``.
    """
    def fail(problems: list[tuple[str, str]]) -> ProjectError:
        return ProjectError(f"{source}: {path}: {message}" for path, message in problems)

    problems = sanity_problems(data)
    if problems:
        raise fail(problems)
    try:
        current = migrate(data)
    except MigrationError as error:
        raise fail([(error.path, error.message)]) from None
    problems = schema_problems(current)
    if problems:
        raise fail(problems)
    problems = meaning_problems(current)
    if problems:
        raise fail(problems)
    try:
        return _build(current)
    except (ValueError, TypeError) as error:  # a check the dataclasses make that the gate above missed
        raise fail([("$", str(error)[:160])]) from None
