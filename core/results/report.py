"""The study report as one document: its sections, in order, built from the results document.

``report_document`` turns one study's results (core.results.report_results.ReportResults) into a JSON-ready
dict that both writers read: the HTML5 page (core.results.report_html) and the PDF the window's side paints
(gui.report_pdf). It holds

- ``results``: the results document (core.results.document.results_document, without the type code of every
  node) with the ``certified`` object where a certified map was made: the numbers the sections show, with the
  field names ``mixtype classify|probe|trace --json`` use (``results["pins"]`` are the documents
  ``mixtype probe FILE --json`` prints);
- ``sections``: what the reader sees, in order, each ``{"id", "title", "computed", "blocks"}``. A block is a
  ``paragraph`` (``text``), ``math`` (``lines`` of markup from core.equations.math_html), ``table``
  (``columns``, ``rows`` of texts, ``keyed`` when the first column names the row, optional ``caption``),
  ``figure`` (``figure``: the name of a picture the writer is given, ``caption``), ``heading`` (``text``) or
  ``not_computed`` (``text``: one line saying what is missing and why). Every text is plain text (writers
  escape it); only ``math`` lines are markup;
- ``title``, ``created`` (UTC, ISO 8601), ``mixtype_version`` and ``caution`` (the README's caution).

The parts kept with the study or made by other modules (parameter sweeps and critical values kept in the
project, the exact symbolic analysis) come from core.results.report_extras, which also adds their JSON to
``results`` (``sweeps``, ``critical_values``); a part whose module this Mixtype lacks reads ``not computed``.
"""

from __future__ import annotations

import os
from datetime import UTC, datetime

import core
from core.analysis.tracing import END_REASONS
from core.equations.math_html import equation_html
from core.results.certified import certified_document
from core.results.document import results_document
from core.results.readouts import probe_rows
from core.results.report_extras import extra_sections
from core.results.report_results import ReportResults, certified_min_cell
from core.results.report_tables import (
    boundary_rows,
    certified_blocks,
    data_rows,
    fraction_rows,
    not_computed,
    number,
    paragraph,
    pocket_rows,
    section,
    seed_rows,
    table,
)

__all__ = ["CAUTION", "REPORT_FORMAT", "SECTION_IDS", "report_document"]

REPORT_FORMAT = "mixtype-report"
# The README's caution, word for word (tests/core/test_report.py compares them).
CAUTION = ("Mixtype is an analysis aid for model equations. It validates no design. Its results rest on the "
           "equation you type and the data you load; for engineering decisions defer to validated solvers, "
           "applicable codes and standards, and licensed professional practice.")
# Every section of a report, in order (a part without results still has its section, saying so).
SECTION_IDS = ("study", "caution", "equation", "parameters", "domain", "data", "type-map", "field",
               "type-change-lines", "pockets", "certified", "pins", "characteristics", "sweeps", "critical-values",
               "exact", "notes")


def report_document(results: ReportResults, *, project=None, project_file: str | os.PathLike | None = None,
                    unsaved_changes: bool = False, created: datetime | None = None) -> dict:
    """The report of one study (see the module docstring). ``project`` (core.project.model.Project, or None for
    an inline study) gives the notes, the data files as recorded and the parts kept with the study;
    ``project_file`` is where it was read from (its checksum is recorded); ``created`` defaults to now."""
    created = (created or datetime.now(UTC)).astimezone(UTC).replace(microsecond=0)
    equation, domain = results.equation, results.domain
    document = results_document(
        equation=equation, domain=domain, parameters=results.parameters, tolerance=results.tolerance,
        type_map=results.type_map, boundaries=results.boundaries, pockets=results.pockets, pins=results.pins,
        probes=results.probes, trades=results.trades, traced=results.traced,
        data=getattr(results.data, "sources", results.data),     # the window's data: the files that loaded
        project_file=project_file, unsaved_changes=unsaved_changes, include_codes=False)
    if results.certified is not None:
        document["certified"] = certified_document(results.certified)
    title = f"Study report: “{equation.name}” on “{domain.name}”"
    extras, extra_fields = extra_sections(project, results)
    document.update(extra_fields)
    sections = [
        _study_section(document, created),
        section("caution", "Caution", [paragraph(CAUTION)]),
        _equation_section(results),
        _parameters_section(results),
        _domain_section(results),
        _data_section(document, project, project_file),
        _type_map_section(results, document),
        _field_section(results),
        _lines_section(results, document),
        _pockets_section(results, document),
        _certified_section(results),
        _pins_section(results, document),
        _characteristics_section(results),
        *extras,
        _notes_section(project),
    ]
    return {"format": REPORT_FORMAT, "title": title, "created": created.strftime("%Y-%m-%dT%H:%M:%SZ"),
            "mixtype_version": core.__version__, "caution": CAUTION, "sections": sections, "results": document}


# -- the study ------------------------------------------------------------------------------------------------
def _study_section(document: dict, created: datetime) -> dict:
    source = document["source"]
    rows = [("equation", source["equation"]), ("domain", source["domain"])]
    if source["file"] is not None:
        rows.append(("project file", os.path.basename(source["file"])))
        checksum = document["project_checksum"]
        rows.append(("project file SHA-256", checksum if checksum else "unreadable"))
        if document["unsaved_changes"]:
            rows.append(("unsaved changes", "yes: the study differs from the file the checksum is of"))
    else:
        rows.append(("project file", "none (the study was given on the command line)"))
    rows += [("Mixtype version", document["mixtype_version"]), ("report made", created.strftime("%Y-%m-%d %H:%M UTC"))]
    return section("study", "The study", [table(("", ""), rows, keyed=True)])


def _equation_section(results: ReportResults) -> dict:
    equation = results.equation
    lines = equation_html(results.compiled).split("<br>")
    blocks: list[dict] = [{"kind": "math", "lines": lines}]
    if equation.description:
        blocks.append(paragraph(equation.description))
    x, y = equation.variables
    rows = [(f"a (of u_{x}{x})", equation.a), (f"b (of u_{x}{y})", equation.b), (f"c (of u_{y}{y})", equation.c)]
    lower = {"d": f"d (of u_{x})", "e": f"e (of u_{y})", "f": "f (of u)"}
    rows += [(lower[key], text) for key, text in sorted(getattr(equation, "lower_order", {}).items())]
    rows += [(name, text) for name, text in equation.definitions.items()]
    blocks.append(table(("name", "as typed"), rows, keyed=True,
                         caption="The coefficients and definitions as typed (the map evaluates exactly these)"))
    return section("equation", "The equation", blocks)


def _parameters_section(results: ReportResults) -> dict:
    parameters = results.equation.parameters
    if not parameters:
        return section("parameters", "Parameters", [paragraph("The equation has no parameters.")])
    rows = []
    for name, parameter in parameters.items():
        value = results.parameters.get(name, parameter.value)
        span = "" if parameter.minimum is None or parameter.maximum is None else \
            f"{parameter.minimum:g} to {parameter.maximum:g}"
        rows.append((name, number(value, 12), parameter.unit or "", span, parameter.description or ""))
    return section("parameters", "Parameters",
                    [table(("name", "value used", "unit", "slider range", "description"), rows, keyed=True)])


def _domain_section(results: ReportResults) -> dict:
    domain, (x, y) = results.domain, results.equation.variables
    rows = [(x, f"{domain.xmin:.12g} to {domain.xmax:.12g}"), (y, f"{domain.ymin:.12g} to {domain.ymax:.12g}"),
            ("grid", f"{domain.nx} × {domain.ny} nodes"),
            ("parabolic when", f"|D| / (b² + 4|ac|) ≤ {results.tolerance:g}")]
    return section("domain", "Domain and grid", [table(("", ""), rows, keyed=True)])


def _data_section(document: dict, project, project_file) -> dict:
    rows = data_rows(document["data"], project, project_file)
    if not rows:
        return section("data", "Data files", [paragraph("The study reads no data files.")])
    return section("data", "Data files", [table(("file", "quantities", "SHA-256 (as read)", "against the project"),
                                                  rows, caption="Checksums are SHA-256 of the file's bytes")])


# -- the map --------------------------------------------------------------------------------------------------
def _type_map_section(results: ReportResults, document: dict) -> dict:
    x, y = results.equation.variables
    blocks = [{"kind": "figure", "figure": "type_map",
               "caption": "Type map: the zones, the type-change lines refined onto D = 0, the characteristics of the "
                          "study's seeds and its pins."},
              table(("type", "share of grid nodes", f"area of the zones ({x}·{y})"),
                     fraction_rows(document["fractions"], results.zones), keyed=True)]
    return section("type-map", "Type map", blocks)


def _field_section(results: ReportResults) -> dict:
    settings = results.field_settings
    if results.field is None:
        return not_computed("field", "Field layer", results.field_problem or "the field could not be shaded")
    quantity, grid = results.field_quantity, results.field
    rows = [("quantity", quantity.title), ("range on the grid", f"{number(grid.low)} to {number(grid.high)}"),
            ("colour map", settings.colour_map.replace("_", " ")),
            ("iso-lines at", ", ".join(f"{v:g}" for v in settings.iso_values) or "none"),
            ("shown in the window", "yes" if settings.shown else "no (the study's layer is off; shaded for the report)")]
    if grid.coarsened:
        rows.append(("grid", f"{grid.x.size} × {grid.y.size} nodes (coarser than the map's, for display)"))
    blocks = [{"kind": "figure", "figure": "field", "caption": f"Field layer: {quantity.title}."},
              table(("", ""), rows, keyed=True)]
    return section("field", "Field layer", blocks)


def _lines_section(results: ReportResults, document: dict) -> dict:
    boundaries = results.boundaries
    x, y = results.equation.variables
    blocks = []
    refined = "refined onto D = 0" if boundaries.refined else "as contoured (not refined)"
    if boundaries.unrefined:
        refined += f"; {boundaries.unrefined} vertices stayed where the contour put them"
    if document["boundaries"]:
        count = len(document["boundaries"])
        blocks.append(paragraph(f"{count} type-change line{'s' * (count != 1)}, {refined}."))
        blocks.append(table(("line", "vertices", "kind", "left", "right", "length", f"{x} range", f"{y} range"),
                             boundary_rows(document["boundaries"])))
    else:
        blocks.append(paragraph("The type does not change across a line on this grid."))
    regions = document["parabolic_regions"]
    if regions:
        blocks.append(table(("parabolic region", f"area ({x}·{y})", "holes", "grid cells"),
                             [(k, number(r["area"]), len(r["holes"]), r["cells"]) for k, r in enumerate(regions, 1)],
                             caption="Zones where D vanishes on an area"))
    return section("type-change-lines", "Type-change lines", blocks)


def _pockets_section(results: ReportResults, document: dict) -> dict:
    pockets = document["pockets"]
    x, y = results.equation.variables
    if not pockets:
        return section("pockets", "Hyperbolic pockets", [paragraph("The sampled map has no hyperbolic node.")])
    quantity = results.pocket_quantity
    columns = ["pocket", f"area ({x}·{y})", "centroid", f"{x} range", f"{y} range", "nodes", "reaches the edge"]
    if quantity:
        columns.append(f"peak {quantity}")
    return section("pockets", "Hyperbolic pockets",
                    [paragraph(f"{len(pockets)} connected hyperbolic zone{'s' * (len(pockets) != 1)} of the sampled "
                               "map, largest first."),
                     table(columns, pocket_rows(pockets, with_peak=bool(quantity)))])


def _certified_section(results: ReportResults) -> dict:
    title = "Certified bounds"
    if not results.certified_asked:
        return not_computed("certified", title, "the study's certified layer is off (turn it on in the Layers "
                             "panel, or give mixtype report --certify)")
    certified = results.certified
    min_cell = certified_min_cell(results.certified_settings, results.domain)
    figure = {"kind": "figure", "figure": "certified",
              "caption": "Certified layer: proven zones lightly tinted in their type's colour, undecided cells "
                         "hatched, a ring on each pocket the sampled map missed."}
    return section("certified", title, [figure, *certified_blocks(certified, results.equation.variables, min_cell)])


# -- points and curves ----------------------------------------------------------------------------------------
def _pins_section(results: ReportResults, document: dict) -> dict:
    if not results.pins:
        return section("pins", "Pins", [paragraph("The study has no pins.")])
    blocks = []
    shown = (results.equation.name, results.domain.name)
    for number_, (pin, probe, trade) in enumerate(zip(results.pins, results.probes, results.trades, strict=True), 1):
        blocks.append({"kind": "heading", "text": f"Pin {number_}" + (f": {pin.label}" if pin.label else "")})
        if pin.study is not None and tuple(pin.study) != shown:
            blocks.append(paragraph(f"Set in equation “{pin.study[0]}” on domain “{pin.study[1]}”; read here in "
                                     "this study's equation."))
        blocks.append(table(("readout", "value"), probe_rows(probe, trade, results.equation.variables,
                                                              results.domain), keyed=True))
    return section("pins", "Pins", blocks)


def _characteristics_section(results: ReportResults) -> dict:
    if not results.traced:
        return section("characteristics", "Characteristics", [paragraph("The study has no seeds.")])
    bounces = (f"each half goes on as the other family through up to {results.bounces} reflections or turns"
               if results.bounces else "curves stop at the edge, at the type-change line or where undefined")
    reasons = sorted({reason for _seed, curves in results.traced for curve in curves for reason in curve.end_reasons})
    legend = "; ".join(f"{reason}: {END_REASONS.get(reason, reason)}" for reason in reasons)
    return section("characteristics", "Characteristics",
                   [paragraph(f"Traced from the study's seeds; {bounces}."),
                    table(("seed", "from", "families", "curves", "ends", "events"),
                          seed_rows(results.traced, results.domain),
                          caption=f"Ends: how many curve ends stopped for each reason ({legend})")])


def _notes_section(project) -> dict:
    notes = "" if project is None else project.notes.strip()
    if not notes:
        return section("notes", "Notes", [paragraph("The study has no notes.")])
    return section("notes", "Notes", [paragraph(part.strip()) for part in notes.split("\n\n") if part.strip()])

