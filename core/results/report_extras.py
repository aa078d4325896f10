"""The study report's parts kept with the study or made by other modules: sweeps, critical values, exact analysis.

- Parameter sweeps (core.project.sweeps, project format 6): each sweep the project keeps for the study's
  equation and domain, with the rows of its last run (fractions, areas, pockets, largest peak at each value)
  as the results document writes them (core.results.document.sweep_document). A sweep never run says so.
- Critical parameter values (core.analysis.critical): those kept with the sweeps (where a zone of a type
  appears or vanishes as the parameter grows), in the field names of ``mixtype critical --json`` events.
- The exact symbolic analysis (core.analysis.exact, computed with the report's results within a deadline):
  the discriminant factored, type-change curves, zones, characteristic slopes and invariants, canonical forms.

Each part has its section in every report; ``extra_sections`` also returns the JSON the results document
gains (``sweeps``, ``critical_values``).
"""

from __future__ import annotations

from core.analysis.sweep_values import Sweep
from core.results.document import sweep_document
from core.results.readable import point_without_noise
from core.results.report_tables import not_computed, number, paragraph, section, table

__all__ = ["extra_sections"]

_SHORT = {"elliptic": "ell.", "parabolic": "par.", "hyperbolic": "hyp.", "undefined": "und."}


def extra_sections(project, results) -> tuple[list[dict], dict]:
    """The sweeps, critical values and exact analysis sections of the report of ``results`` (in that order),
    and the fields they add to the results document."""
    equation, domain = results.equation, results.domain
    saved = () if project is None else project.sweeps_of(equation.name, domain.name)
    sweeps = [(sweep, _sweep_json(sweep, results)) for sweep in saved]
    fields = {"sweeps": [document for _sweep, document in sweeps],
              "critical_values": [_critical_json(sweep, value, domain) for sweep in saved
                                  for value in (sweep.critical or ())]}
    sections = [_sweeps_section(sweeps, results), _critical_section(saved, fields["critical_values"], results),
                _exact_section(results)]
    return sections, fields


# -- sweeps ---------------------------------------------------------------------------------------------------
def _sweep_json(sweep, results) -> dict:
    """A kept sweep as the results document writes one (``rows`` empty when it was never run), with its range."""
    parameter = results.equation.parameters.get(sweep.parameter)
    rows = sweep.rows or ()
    document = sweep_document(Sweep(parameter=sweep.parameter, values=tuple(row.value for row in rows),
                                    rows=tuple(rows), log=sweep.log),
                              results.equation.variables, results.domain,
                              parameter_unit=parameter.unit if parameter is not None else "")
    document.update(low=sweep.low, high=sweep.high, count=sweep.count, run=sweep.rows is not None)
    return document


def _sweeps_section(sweeps, results) -> dict:
    title = "Parameter sweeps"
    if not sweeps:
        return section("sweeps", title, [paragraph("The study keeps no parameter sweep for this equation and "
                                                     "domain.")])
    x, y = results.equation.variables
    blocks = []
    for sweep, document in sweeps:
        unit = f" ({document['parameter_unit']})" if document["parameter_unit"] else ""
        spread = "on a logarithmic scale" if sweep.log else "evenly spaced"
        blocks.append({"kind": "heading", "text": f"Sweep of {sweep.parameter}{unit}"})
        blocks.append(paragraph(f"{sweep.count} values from {sweep.low:g} to {sweep.high:g}, {spread}."))
        if not document["rows"]:
            blocks.append({"kind": "not_computed", "text": "Not computed: the sweep has not been run (or its results "
                           "were not kept); run it in the window's sweep panel or with mixtype sweep."})
            continue
        labels = list(document["rows"][0]["fractions"])
        columns = [sweep.parameter, *(f"{_SHORT.get(k, k)} %" for k in labels),
                   *(f"{_SHORT.get(k, k)} area ({x}·{y})" for k in labels if k in ("elliptic", "hyperbolic")),
                   "pockets", "largest peak"]
        rows = []
        for row in document["rows"]:
            peak = row["peak"]
            rows.append([number(row["value"]), *(f"{100 * row['fractions'][k]:.3f}" for k in labels),
                         *(number(row["areas"][k]) for k in labels if k in ("elliptic", "hyperbolic")),
                         str(row["pockets"]),
                         "—" if peak is None else f"{peak['quantity']} = {number(peak['value'])} at "
                                                  f"({number(peak['at'][0])}, {number(peak['at'][1])})"])
        blocks.append({"kind": "table", "columns": columns, "rows": rows, "keyed": False,
                       "caption": "Shares of the grid nodes by type, areas on the refined lines, hyperbolic pockets"})
    return section("sweeps", title, blocks)


# -- critical values ------------------------------------------------------------------------------------------
def _critical_json(sweep, value, domain) -> dict:
    """One kept critical value in the field names of ``mixtype critical --json`` events."""
    bracket = None if value.bracket is None else [float(value.bracket[0]), float(value.bracket[1])]
    return {"parameter": sweep.parameter, "value": float(value.value), "bracket": bracket, "event": value.event,
            "at": list(point_without_noise(value.at, domain)), "type": value.type}


def _critical_section(saved, values: list[dict], results) -> dict:
    title = "Critical parameter values"
    searched = [sweep for sweep in saved if sweep.critical is not None]
    if not searched:
        text = "No sweep of this study has been searched for critical values (the sweep panel's “Find critical " \
               "values”, or mixtype critical)." if saved else "The study keeps no sweep, so no critical values."
        return section("critical-values", title, [paragraph(text)])
    x, y = results.equation.variables
    rows = [[value["parameter"], number(value["value"], 9), f"a {value['type']} zone {value['event']}",
             f"({number(value['at'][0])}, {number(value['at'][1])})",
             "—" if value["bracket"] is None else f"{number(value['bracket'][0], 9)} to {number(value['bracket'][1], 9)}"]
            for value in values]
    blocks = [paragraph("Where a zone of a type appears or vanishes as the parameter grows, found in the range of "
                         "the study's sweeps.")]
    if rows:
        blocks.append({"kind": "table", "columns": ["parameter", "value", "event", f"first at ({x}, {y})", "bracket"],
                       "rows": rows, "keyed": False})
    else:
        blocks.append(paragraph("None in the ranges searched."))
    return section("critical-values", title, blocks)


# -- the exact analysis ---------------------------------------------------------------------------------------
def _exact_section(results) -> dict:
    """The formulas of `mixtype analyze` for the study's equation, as formula text."""
    title = "Exact analysis"
    exact = getattr(results, "exact", None)
    if exact is None:
        return not_computed("exact", title, getattr(results, "exact_problem", "") or "not computed for this report")
    blocks = [paragraph("Over the whole plane, from the equation's formulas (each formula below is written in "
                        "Mixtype's formula language and can be pasted into a coefficient)."),
              table(["quantity", "formula"], [
                  ["D = b² − 4ac", _formula(exact["discriminant"])],
                  ["D factored", _formula(exact["discriminant_factored"])],
                  *(["type changes where", f"{_formula(text)} = 0"] for text in exact["type_change"]),
                  *([f"{zone['type']} where", "everywhere" if zone["everywhere"] else _formula(zone["condition"])]
                    for zone in exact["zones"])], keyed=True)]
    if exact["characteristics"]:
        x, y = results.equation.variables
        blocks.append(table(["family", f"slope d{y}/d{x}", "invariant (constant along the family)"],
                            [[str(family["family"]), _formula(family["slope"]), _formula(family["invariant"])]
                             for family in exact["characteristics"]], caption="Characteristic families"))
    if exact["canonical"]:
        blocks.append(table(["type", "coordinates", "canonical form"],
                            [[form["type"], ", ".join(_formula(c) for c in (form["coordinates"] or [])) or "—",
                              _formula(form["form"])] for form in exact["canonical"]], caption="Canonical forms"))
    blocks.extend(paragraph(f"Note: {note}") for note in exact["notes"])
    return section("exact", title, blocks)


def _formula(text: str | None) -> str:
    return "not found" if text is None else text
