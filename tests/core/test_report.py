"""The study report's document and HTML page (core.results.report, report_html), without Qt.

The figures need Qt (tests/gui/test_report.py checks them, the files and the command); here the report is
built from the demo studies with stand-in figures, and its numbers are checked against the commands that
print the same results (probe, classify, critical) and against closed forms.
"""

from __future__ import annotations

import argparse
import hashlib
import re
from dataclasses import replace
from datetime import UTC, datetime
from pathlib import Path

import html5lib
import numpy as np
import pytest

from core.analysis.critical import find_critical_values
from core.analysis.sweep import run_sweep, sweep_values
from core.cli.command import compiled_study
from core.cli.options import add_equation_options
from core.cli.study import build_study
from core.project.io import load_project, save_project
from core.project.model import demo_project_path
from core.project.sweeps import CriticalValue, SavedSweep
from core.results.readouts import peak_quantity
from core.results.report import CAUTION, REPORT_FORMAT, SECTION_IDS, report_document
from core.results.report_html import inline_svg, report_html
from core.results.report_results import project_report_results
from tests.core.cli_runner import run_json

ROOT = Path(__file__).resolve().parents[2]
BUMP = demo_project_path("transonic_bump")
BUMP_DATA = demo_project_path("bump_flow_grid_data")
TRICOMI = demo_project_path("tricomi")
MADE = datetime(2026, 3, 4, 5, 6, 7, tzinfo=UTC)
FIGURE = ('<?xml version="1.0" encoding="UTF-8"?>\n<svg xmlns="http://www.w3.org/2000/svg" '
          'xmlns:xlink="http://www.w3.org/1999/xlink" width="10" height="10" viewBox="0 0 10 10">'
          '<defs><clipPath id="plot0-clip"><rect width="10" height="10"/></clipPath></defs>'
          '<g id="plot0" clip-path="url(#plot0-clip)"><image width="1" height="1" xlink:href="data:image/png;base64,AA=="/>'
          '<use href="#plot0"/></g></svg>\n')


def study_of(path, *argv: str):
    """The study a FILE names, read as the commands read it (core.cli.study), and its compiled equation."""
    parser = argparse.ArgumentParser()
    add_equation_options(parser)
    study = build_study(parser.parse_args([str(path), *argv]))
    return study, compiled_study(study)


def report_of(path, *argv: str, certify: bool | None = None) -> dict:
    study, compiled = study_of(path, *argv)
    results = project_report_results(compiled, study, certify=certify)
    return report_document(results, project=study.project, project_file=path, created=MADE)


@pytest.fixture(scope="module")
def bump_report() -> dict:
    return report_of(BUMP)


def section(report: dict, section_id: str) -> dict:
    return next(s for s in report["sections"] if s["id"] == section_id)


def table_rows(report: dict, section_id: str, index: int = 0) -> list[list[str]]:
    return [b for b in section(report, section_id)["blocks"] if b["kind"] == "table"][index]["rows"]


def test_every_section_in_order_with_the_parts_not_computed_saying_so(bump_report):
    assert bump_report["format"] == REPORT_FORMAT and bump_report["created"] == "2026-03-04T05:06:07Z"
    assert [s["id"] for s in bump_report["sections"]] == list(SECTION_IDS)
    computed = {s["id"]: s["computed"] for s in bump_report["sections"]}
    # the demo's certified layer is off: one line, no more
    assert [k for k, v in computed.items() if not v] == ["certified"]
    blocks = section(bump_report, "certified")["blocks"]
    assert len(blocks) == 1 and blocks[0]["kind"] == "not_computed"
    assert blocks[0]["text"].startswith("Not computed: ")
    figures = [b["figure"] for s in bump_report["sections"] for b in s["blocks"] if b["kind"] == "figure"]
    assert figures == ["type_map", "field"]


def test_the_caution_is_the_readmes_word_for_word(bump_report):
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    quoted = " ".join(line[2:].strip() for line in readme.splitlines() if line.startswith("> "))
    assert quoted == f"**Caution.** {CAUTION}"
    assert section(bump_report, "caution")["blocks"][0]["text"] == CAUTION == bump_report["caution"]


def test_the_study_the_equation_and_the_notes(bump_report):
    project = load_project(BUMP)
    equation, domain = project.shown()
    study = dict(table_rows(bump_report, "study"))
    assert study["equation"] == equation.name and study["domain"] == domain.name
    # SHA-256 of the file's bytes, by hashlib (the reference)
    assert study["project file SHA-256"] == hashlib.sha256(BUMP.read_bytes()).hexdigest()
    math_lines = section(bump_report, "equation")["blocks"][0]["lines"]
    assert math_lines[0].endswith("+ (lower order) = 0") and "<sub>xx</sub>" in math_lines[0]
    assert dict(table_rows(bump_report, "equation")) == {
        "a (of u_xx)": equation.a, "b (of u_xy)": equation.b, "c (of u_yy)": equation.c, **equation.definitions}
    parameters = {row[0]: row[1:] for row in table_rows(bump_report, "parameters")}
    assert parameters["height"] == ["0.07", "chord", "0 to 0.12", "height of the bump"]
    notes = " ".join(b["text"] for b in section(bump_report, "notes")["blocks"])
    assert notes == " ".join(project.notes.split())


def test_pins_are_the_documents_probe_prints_and_their_tables_every_readout(bump_report):
    printed = run_json("probe", str(BUMP))
    assert bump_report["results"]["pins"] == printed["pins"]
    headings = [b["text"] for b in section(bump_report, "pins")["blocks"] if b["kind"] == "heading"]
    assert headings == [f"Pin {k}: {pin['label']}" for k, pin in enumerate(printed["pins"], 1)]
    crest = dict(table_rows(bump_report, "pins", 0))
    pin = printed["pins"][0]
    assert crest["type"] == pin["type"] == "hyperbolic"
    assert float(crest["D = b^2 - 4ac"]) == pytest.approx(pin["discriminant"], rel=1e-8)
    assert float(crest["local_mach"]) == pytest.approx(pin["definitions"]["local_mach"], rel=1e-8)
    assert crest["mach angle"].startswith(f"{pin['trade']['mach_angle_deg']:.9g}")
    # every definition and trade quantity of the probe has its row
    assert set(pin["definitions"]) <= set(crest)


def test_the_map_sections_hold_what_classify_prints(bump_report):
    printed = run_json("classify", str(BUMP))
    assert bump_report["results"]["fractions"] == printed["fractions"]
    shares = {row[0]: row[1] for row in table_rows(bump_report, "type-map")}
    assert shares == {k: f"{100 * v:.3f} %" for k, v in printed["fractions"].items()}
    lines = table_rows(bump_report, "type-change-lines")
    assert len(lines) == len(printed["boundaries"]) == 1
    points = np.asarray(printed["boundaries"][0]["points"])
    assert float(lines[0][5]) == pytest.approx(np.hypot(*np.diff(points, axis=0).T).sum(), rel=1e-5)
    pockets = table_rows(bump_report, "pockets")
    assert [float(row[1]) for row in pockets] == pytest.approx([p["area"] for p in printed["pockets"]], rel=1e-5)
    assert pockets[0][-1].startswith(f"{printed['pockets'][0]['peak']['value']:.6g} at")


def test_data_files_are_listed_with_their_checksums():
    report = report_of(BUMP_DATA)
    project = load_project(BUMP_DATA)
    (row,) = table_rows(report, "data")
    recorded = project.data_sources[0]
    assert row[0] == recorded.path
    path = Path(BUMP_DATA).parent / recorded.path
    assert row[2] == hashlib.sha256(path.read_bytes()).hexdigest() == recorded.checksum
    assert row[3] == "the file the project recorded (same checksum)"


def test_a_changed_data_file_is_named_as_changed(tmp_path):
    project = load_project(BUMP_DATA)
    source = project.data_sources[0]
    data_file = tmp_path / source.path
    data_file.parent.mkdir(parents=True)
    data_file.write_bytes((Path(BUMP_DATA).parent / source.path).read_bytes())
    path = tmp_path / "study.mixtype.json"
    save_project(replace(project, data_sources=(replace(source, checksum="0" * 64),)), path)
    (row,) = table_rows(report_of(path), "data")
    assert row[3] == f"changed since the project was saved (recorded {'0' * 64})"


def test_certified_bounds_hold_the_tricomi_zones_exact_areas():
    """y u_xx + u_yy = 0 is elliptic where y > 0 and hyperbolic where y < 0 (Tricomi; common practice, no
    source): on the demo's rectangle each zone's exact area is its width times its height."""
    report = report_of(TRICOMI, certify=True)
    project = load_project(TRICOMI)
    equation, domain = project.shown()
    assert (equation.a, equation.b, equation.c) == ("y", "0", "1")
    bounds = report["results"]["certified"]["area"]
    width = domain.xmax - domain.xmin
    for label, height in (("elliptic", domain.ymax), ("hyperbolic", -domain.ymin)):
        low, high = bounds[label]
        assert low <= width * height <= high and high - low < 1e-3 * width * height
    blocks = section(report, "certified")["blocks"]
    assert blocks[0] == {"kind": "figure", "figure": "certified", "caption": blocks[0]["caption"]}
    rows = {row[0]: row[1:] for row in next(b for b in blocks if b["kind"] == "table")["rows"]}
    assert rows["elliptic"] == [f"{bounds['elliptic'][0]:.6g}", f"{bounds['elliptic'][1]:.6g}"]


def test_kept_sweeps_and_critical_values_are_reported(tmp_path):
    project = load_project(BUMP)
    equation, domain = project.shown()
    path = tmp_path / "swept.mixtype.json"
    study, compiled = study_of(BUMP, "--grid", "61", "31")
    values = sweep_values(0.7, 0.9, 3)
    sweep = run_sweep(compiled, study.domain, "mach", values, parameters=study.parameters,
                      quantity=peak_quantity(equation, compiled), tolerance=study.tolerance)
    found = find_critical_values(compiled, study.domain, "mach", (0.7, 0.9), parameters=study.parameters,
                                 tolerance=study.tolerance, certify=False)
    saved = SavedSweep(study=(equation.name, domain.name), parameter="mach", low=0.7, high=0.9, count=3,
                       rows=sweep.rows, critical=tuple(CriticalValue(e.value, e.event, e.at, e.type, e.bracket)
                                                       for e in found.events))
    never_run = SavedSweep(study=(equation.name, domain.name), parameter="height", low=0.0, high=0.1, count=4)
    save_project(project.with_sweep(saved).with_sweep(never_run), path)
    report = report_of(path, "--grid", "61", "31")
    kept = report["results"]["sweeps"]
    assert [s["parameter"] for s in kept] == ["mach", "height"] and kept[1]["rows"] == [] and not kept[1]["run"]
    assert [row["fractions"] for row in kept[0]["rows"]] == [dict(row.fractions) for row in sweep.rows]
    rows = table_rows(report, "sweeps")
    assert [row[0] for row in rows] == [f"{v:.6g}" for v in values]
    hyperbolic = [row[3] for row in rows]
    assert hyperbolic == [f"{100 * row.fractions['hyperbolic']:.3f}" for row in sweep.rows]
    blocks = section(report, "sweeps")["blocks"]
    assert blocks[-1]["kind"] == "not_computed" and "has not been run" in blocks[-1]["text"]
    # the critical values in the field names of `mixtype critical --json` events
    assert len(found.events) == 1 and found.events[0].event == "appears"
    (value,) = report["results"]["critical_values"]
    assert set(value) == {"parameter", "value", "bracket", "event", "at", "type"}
    assert value["value"] == found.events[0].value and 0.7 < value["value"] < 0.9
    (row,) = table_rows(report, "critical-values")
    assert row[:3] == ["mach", f"{found.events[0].value:.9g}", "a hyperbolic zone appears"]


def test_inline_svg_keeps_ids_apart_and_leaves_no_namespace_declarations():
    markup = inline_svg(FIGURE, "map-")
    assert markup.startswith("<svg ") and "<?xml" not in markup and "xmlns" not in markup
    assert 'id="map-plot0-clip"' in markup and "url(#map-plot0-clip)" in markup and 'href="#map-plot0"' in markup
    assert "xlink:" not in markup and 'href="data:image/png;base64,AA=="' in markup
    with pytest.raises(ValueError, match="no <svg> element"):
        inline_svg("<html></html>", "x-")


def test_the_page_is_html5_without_errors_and_refers_to_nothing_outside(bump_report):
    figures = {name: inline_svg(FIGURE, f"{name}-") for name in ("type_map", "field")}
    page = report_html(bump_report, figures)
    parser = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False)
    tree = parser.parse(page)                     # strict: raises on the first parse error
    assert parser.errors == []
    assert not re.search(r"https?://", page) and "<script" not in page and "<link" not in page
    assert [s.get("id") for s in tree.iter("section")] == list(SECTION_IDS)
    ids = [element.get("id") for element in tree.iter() if element.get("id")]
    assert len(ids) == len(set(ids))              # two figures never share an id
    assert page.count("<figure>") == 2 and page.count("<svg ") == 2
    assert "&lt;" not in page.split("<body>")[1].split("<section")[0]


def test_plain_texts_are_escaped_in_the_page(bump_report):
    report = {**bump_report, "sections": [{"id": "notes", "title": "Notes <b>", "computed": True,
                                           "blocks": [{"kind": "paragraph", "text": "a < b & <script>x</script>"}]}]}
    page = report_html(report, {})
    assert "a &lt; b &amp; &lt;script&gt;x&lt;/script&gt;" in page and "Notes &lt;b&gt;" in page
    assert "<script" not in page


def test_the_exact_analysis_is_mixtype_analyzes():
    # Tricomi's equation y u_xx + u_yy = 0 changes type on y = 0 (L. Bers, "Mathematical Aspects of Subsonic and
    # Transonic Gas Dynamics", Wiley 1958); the report shows what `mixtype analyze FILE --json` prints
    report = report_of(TRICOMI)
    rows = dict(table_rows(report, "exact"))
    analyzed = run_json("analyze", str(TRICOMI))
    assert rows["D = b² − 4ac"] == analyzed["discriminant"] == "-4*y"
    assert rows["type changes where"] == "y = 0"
    invariants = [row[2] for row in table_rows(report, "exact", 1)]
    assert invariants == [family["invariant"] for family in analyzed["characteristics"]]
