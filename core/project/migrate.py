"""Upgrading project files written in older format versions, one version at a time.

A file carries its integer ``format_version``. ``MIGRATIONS[n]`` turns the plain JSON data of version n into
version n + 1 (dict to dict, no dataclasses involved); ``migrate`` applies the steps in turn up to the current
version, after which the data are validated as current. Adding format version n + 1 means: write
``_vn_to_vn1``, register it here, bump CURRENT_FORMAT_VERSION in core.project.schema, keep the old schema
file and add a sample file of the new version to tests/data.
"""

from __future__ import annotations

import copy
from collections.abc import Callable, Mapping

import core
from core.project.schema import CURRENT_FORMAT_VERSION, FORMAT_NAME, describe_json_value

__all__ = ["MIGRATIONS", "OLDEST_FORMAT_VERSION", "MigrationError", "format_version_of", "migrate"]

OLDEST_FORMAT_VERSION = 1

Migration = Callable[[dict], dict]



def _v1_to_v2(data: dict) -> dict:
    """Version 2 adds the list of data sources (empty for a version-1 file), lets equations name trade
    readouts and a peak quantity (optional, absent here), and splits the characteristics layer switch into
    one per family (both take the old value)."""
    result: dict = {}
    for key, value in data.items():
        result[key] = value
        if key == "domains":
            result["data_sources"] = []
    result.setdefault("data_sources", [])
    result["format_version"] = 2
    view = result.get("view")
    layers = view.get("layers") if isinstance(view, dict) else None
    if isinstance(layers, dict) and "characteristics" in layers:
        split: dict = {}
        for key, value in layers.items():
            if key == "characteristics":
                split["characteristics_family_1"] = value
                split["characteristics_family_2"] = copy.deepcopy(value)
            else:
                split[key] = value
        view["layers"] = split
    return result


def _v2_to_v3(data: dict) -> dict:
    """Version 3 adds how many times characteristics go on past edges and the type-change line
    (``view.characteristic_bounces``): 0 for a version-2 file, whose curves stopped there."""
    result = dict(data)
    result["format_version"] = 3
    view = result.get("view")
    if isinstance(view, dict):
        result["view"] = {**view, "characteristic_bounces": 0}
    return result


def _v3_to_v4(data: dict) -> dict:
    """Version 4 records the study each pin was set in (``pins[k].study``) and adds the field layer
    (``view.field``). A version-3 file showed every pin in every study; its pins are taken to belong to the
    equation and domain it showed when saved, and the field layer starts hidden, on the normalised
    discriminant."""
    result = dict(data)
    result["format_version"] = 4
    shown = result.get("shown")
    pins = result.get("pins")
    if isinstance(shown, dict) and isinstance(pins, list):
        study = {"equation": shown.get("equation"), "domain": shown.get("domain")}
        result["pins"] = [{**pin, "study": dict(study)} if isinstance(pin, dict) else pin for pin in pins]
    view = result.get("view")
    if isinstance(view, dict):
        result["view"] = {**view, "field": {"shown": False, "kind": "discriminant", "quantity": "normalized",
                                            "colour_map": "blue_yellow", "iso_values": []}}
    return result


def _v4_to_v5(data: dict) -> dict:
    """Version 5 adds the certified layer (``view.certified``): hidden in a version-4 file, with the default
    minimum cell (1e-4 of the domain's shorter side) and cell budget (4,000,000 cells): the values of
    core.certify.refinement when format 5 came, written out so that this step never changes."""
    result = dict(data)
    result["format_version"] = 5
    view = result.get("view")
    if isinstance(view, dict):
        result["view"] = {**view, "certified": {"shown": False, "min_cell": 1e-4, "max_cells": 4_000_000}}
    return result


def _v5_to_v6(data: dict) -> dict:
    """Version 6 adds the parameter sweeps of the studies (``sweeps``, after ``seeds``): none in a version-5 file."""
    result: dict = {}
    for key, value in data.items():
        result[key] = value
        if key == "seeds":
            result["sweeps"] = []
    result.setdefault("sweeps", [])
    result["format_version"] = 6
    return result


# version n -> function turning version-n data into version n + 1. Version 1 is the first format.
MIGRATIONS: dict[int, Migration] = {1: _v1_to_v2, 2: _v2_to_v3, 3: _v3_to_v4, 4: _v4_to_v5, 5: _v5_to_v6}


class MigrationError(ValueError):
    """The data cannot be brought to the current format; ``path`` is where (a JSON path such as '$')."""

    def __init__(self, message: str, *, path: str = "$") -> None:
        super().__init__(message)
        self.message = message
        self.path = path


def format_version_of(data: object) -> int:
    """The format version a parsed file declares; MigrationError when it is absent or not a version."""
    if not isinstance(data, Mapping):
        raise MigrationError(f"a project file holds a JSON object, not {describe_json_value(data, show=True)}")
    if data.get("format") != FORMAT_NAME:
        found = data.get("format")
        hint = f"its 'format' is {found!r}" if "format" in data else "it has no 'format' field"
        raise MigrationError(f"this is not a Mixtype project file ({hint}; expected {FORMAT_NAME!r})")
    if "format_version" not in data:
        raise MigrationError("the file does not say its format version ('format_version' is missing)")
    version = data["format_version"]
    if isinstance(version, bool) or not isinstance(version, int):
        raise MigrationError(f"the format version must be a whole number, got {describe_json_value(version, show=True)}",
                             path="$.format_version")
    return version


def migrate(data: Mapping, *, target: int = CURRENT_FORMAT_VERSION,
            migrations: Mapping[int, Migration] | None = None) -> dict:
    """A copy of ``data`` brought from its declared format version to ``target``, one step at a time.

    The input is never modified. A version newer than ``target`` (a file from a newer Mixtype) or older
    than the oldest supported one raises MigrationError with a message for the user. ``migrations``
    replaces the registry (for tests).
    """
    steps = MIGRATIONS if migrations is None else migrations
    version = format_version_of(data)
    if version > target:
        writer = data.get("metadata", {}).get("written_by") if isinstance(data.get("metadata"), Mapping) else None
        by = f" by Mixtype {writer}" if isinstance(writer, str) and writer and len(writer) < 40 else ""
        raise MigrationError(f"the file was written{by} in format version {version}; this Mixtype "
                             f"({core.__version__}) reads format versions up to {target}: please update Mixtype",
                             path="$.format_version")
    if version < OLDEST_FORMAT_VERSION:
        raise MigrationError(f"format version {version} does not exist (the first is {OLDEST_FORMAT_VERSION})",
                             path="$.format_version")
    result = copy.deepcopy(dict(data))
    while version < target:
        if version not in steps:
            raise MigrationError(f"no upgrade from format version {version} to {version + 1} is known",
                                 path="$.format_version")
        result = steps[version](result)
        declared = result.get("format_version")
        if declared != version + 1:
            raise AssertionError(f"the migration from version {version} declared version {declared!r}")
        version += 1
    return result
