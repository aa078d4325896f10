"""The study report's parts that other modules compute: parameter sweeps, critical values, exact analysis.

Each part has its section in every report. Where this Mixtype has the module that makes it, the section shows
what the study holds; otherwise it reads one line, "Not computed", saying why. Which modules exist is looked up
once per report (importlib.util.find_spec: nothing is imported for a part that is absent).
"""

from __future__ import annotations

import importlib.util

__all__ = ["extra_sections", "has_module"]


def has_module(name: str) -> bool:
    """True when this Mixtype has the module ``name`` (e.g. "core.analysis.exact")."""
    try:
        return importlib.util.find_spec(name) is not None
    except ModuleNotFoundError:       # a missing parent package
        return False


def _not_computed(section_id: str, title: str, text: str) -> dict:
    return {"id": section_id, "title": title, "computed": False,
            "blocks": [{"kind": "not_computed", "text": f"Not computed: {text}"}]}


def extra_sections(project, results) -> list[dict]:
    """The sweeps, critical values and exact analysis sections of the report of ``results`` (in that order)."""
    return [_not_computed("sweeps", "Parameter sweeps", "this version of Mixtype keeps no parameter sweeps"),
            _not_computed("critical-values", "Critical parameter values",
                          "this version of Mixtype does not search for critical values"),
            _not_computed("exact", "Exact analysis", "this version of Mixtype has no exact symbolic analysis")]
