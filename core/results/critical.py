"""The document of ``mixtype critical --json``: critical parameter values as plain JSON.

Field names are a public interface (tests/core/test_cli_json_fields.py). The top-level ``parameter``,
``value``, ``bracket`` [lo, hi], ``event`` ("appears" | "vanishes", as the parameter increases), ``at`` [x, y]
and ``type`` describe the first event (value, bracket, event and at are null without one); ``events`` lists
every event in parameter order in the same form; ``between`` is the interval searched, ``relative_tolerance``
the tolerance of the values, ``proven`` whether certified maps proved that no other place reaches the
threshold first (null: not tried, or no event), ``notes`` what the search saw and could not see.
"""

from __future__ import annotations

from core.analysis.critical import CriticalEvent, CriticalSearch
from core.results.document import json_number
from core.results.readable import point_without_noise

__all__ = ["critical_document", "event_document"]


def event_document(event: CriticalEvent, domain=None) -> dict:
    """One event: parameter, value, bracket, event, at (rounding noise read as 0 against ``domain``), type."""
    return {"parameter": event.parameter, "value": json_number(event.value),
            "bracket": [json_number(event.bracket[0]), json_number(event.bracket[1])], "event": event.event,
            "at": list(point_without_noise(event.at, domain)) if domain is not None else list(event.at),
            "type": event.type}


def critical_document(search: CriticalSearch, domain=None) -> dict:
    """The fields of ``mixtype critical --json`` (without the study's fields, which the command adds)."""
    events = [event_document(event, domain) for event in search.events]
    first = events[0] if events else {"value": None, "bracket": None, "event": None, "at": None}
    return {"parameter": search.parameter, "value": first["value"], "bracket": first["bracket"],
            "event": first["event"], "at": first["at"], "type": search.type, "events": events,
            "between": [json_number(search.between[0]), json_number(search.between[1])],
            "relative_tolerance": float(search.rtol), "proven": search.proven, "notes": list(search.notes)}
