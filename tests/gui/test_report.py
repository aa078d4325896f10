"""The study report as files: `mixtype report FILE --out study.html|study.pdf` and the window's export.

The HTML page must parse as HTML5, refer to nothing outside itself and carry figures librsvg draws; the PDF must
have pages poppler turns into A4 pictures, with the type map as vector paths (no picture of it); bad input is one
line and exit status 2, and a failed report never leaves a half-written file. The window writes the same report
as the command line.
"""

from __future__ import annotations

import io
import json
import re
import shutil
import subprocess
import sys
import zlib
from collections import Counter
from pathlib import Path

import html5lib
import pytest
from PySide6.QtGui import QColor, QImage

import gui.report
from core.analysis.classify import TypeCode
from core.project.model import demo_project_path
from core.project.safe_write import TEMPORARY_SUFFIX
from core.results.report import SECTION_IDS
from gui import launcher
from gui.palette import TYPE_COLOURS
from gui.project_bridge import open_project_file
from tests.ceilings import HANG_CEILING_S

ROOT = Path(__file__).resolve().parents[2]
BUMP = demo_project_path("transonic_bump")
RSVG = shutil.which("rsvg-convert")
PDFTOPPM = shutil.which("pdftoppm")
PDFIMAGES = shutil.which("pdfimages")
PDFTOTEXT = shutil.which("pdftotext")
needs_poppler = pytest.mark.skipif(None in (PDFTOPPM, PDFIMAGES, PDFTOTEXT),
                                   reason="poppler-utils is not installed (pdftoppm, pdfimages, pdftotext)")


def mixtype(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    status = launcher.main(list(argv), out=out, err=err)
    return status, out.getvalue(), err.getvalue()


def tool(*argv: str) -> str:
    return subprocess.run(argv, capture_output=True, text=True, check=True, timeout=HANG_CEILING_S).stdout


@pytest.fixture(scope="module")
def reports(tmp_path_factory, qapp) -> dict[str, Path]:
    folder = tmp_path_factory.mktemp("reports")
    written = {}
    for suffix in ("html", "pdf"):
        path = folder / f"study.{suffix}"
        status, out, err = mixtype("report", str(BUMP), "--out", str(path))
        assert (status, out, err) == (0, f"wrote {path}\n", "")
        written[suffix] = path
    return written


def figures_of(page: str) -> list[str]:
    return re.findall(r"<svg\b.*?</svg>", page, re.DOTALL)


def test_the_page_parses_as_html5_holds_every_section_and_refers_to_nothing_outside(reports):
    page = reports["html"].read_text(encoding="utf-8")
    parser = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False)
    tree = parser.parse(page)
    assert parser.errors == []
    assert [s.get("id") for s in tree.iter("section")] == list(SECTION_IDS)
    assert not re.search(r"https?://", page)
    assert not re.search(r"<(script|link|iframe|object)\b", page) and " src=" not in page
    text = "".join(tree.find("body").itertext())
    assert "Caution. Mixtype is an analysis aid for model equations. It validates no design." in text
    assert "Pin 1: bump crest (supersonic)" in text and "Not computed: the study's certified layer is off" in text


@pytest.mark.skipif(RSVG is None, reason="rsvg-convert is not installed (Debian package librsvg2-bin)")
def test_librsvg_draws_each_figure_of_the_page(reports, tmp_path):
    page = reports["html"].read_text(encoding="utf-8")
    type_map, field = figures_of(page)
    assert "<image" not in type_map                          # zones, lines, pins and text all vector
    assert field.count("<image") == 2                        # the shading and its colour bar: pictures by nature
    for name, svg in (("type_map", type_map), ("field", field)):
        standalone = tmp_path / f"{name}.svg"
        standalone.write_text(svg.replace("<svg ", '<svg xmlns="http://www.w3.org/2000/svg" ', 1), encoding="utf-8")
        png = tmp_path / f"{name}.png"
        subprocess.run([RSVG, str(standalone), "-o", str(png)], check=True, timeout=HANG_CEILING_S)
        width, height = (int(v) for v in re.search(r'width="(\d+)" height="(\d+)"', svg).groups())
        image = QImage(str(png))
        assert (image.width(), image.height()) == (width, height) and width == 900
        if name == "type_map":
            colours = Counter(image.pixel(x, y) for x in range(0, width, 3) for y in range(0, height, 3))
            for code in (TypeCode.ELLIPTIC, TypeCode.HYPERBOLIC):   # both zones of the demo are drawn
                assert colours[QColor(TYPE_COLOURS[code]).rgb()] > 50


def pdf_pages(path: Path) -> list[bytes]:
    """The decompressed content stream of each page of a PDF written by Qt (one stream per page)."""
    data = path.read_bytes()
    objects = {int(m.group(1)): m.group(2) for m in re.finditer(rb"(\d+) 0 obj(.*?)endobj", data, re.DOTALL)}
    pages = []
    for body in objects.values():
        if re.search(rb"/Type\s*/Page\b", body):
            stream = objects[int(re.search(rb"/Contents (\d+) 0 R", body).group(1))]
            raw = re.search(rb"stream\r?\n(.*?)\r?\nendstream", stream, re.DOTALL).group(1)
            pages.append(zlib.decompress(raw) if b"FlateDecode" in stream else raw)
    return pages


@needs_poppler
def test_the_pdf_has_a4_pages_and_its_type_map_is_vector_paths(reports, tmp_path):
    pdf = reports["pdf"]
    contents = pdf_pages(pdf)
    tool(PDFTOPPM, "-r", "72", "-png", str(pdf), str(tmp_path / "page"))
    pictures = sorted(tmp_path.glob("page-*.png"))
    assert len(pictures) == len(contents) >= 3
    for picture in pictures:                                 # A4 is 595 x 842 points: one pixel each at 72 dpi
        image = QImage(str(picture))
        assert (image.width(), image.height()) == (595, 842)
    texts = [tool(PDFTOTEXT, "-f", str(n), "-l", str(n), str(pdf), "-") for n in range(1, len(contents) + 1)]
    map_page = next(n for n, text in enumerate(texts, 1) if "Type map: the zones" in text)
    field_page = next(n for n, text in enumerate(texts, 1) if "Field layer: D / (b" in text)
    images = [line.split() for line in tool(PDFIMAGES, "-list", str(pdf)).splitlines()[2:]]
    assert images and {int(row[0]) for row in images} == {field_page} != {map_page}
    operators = Counter(re.findall(rb"(?<=\s)(l|c|re|f|f\*|S|Do)(?=\s)", contents[map_page - 1]))
    assert operators[b"l"] > 1000 and operators[b"f"] + operators[b"f*"] > 20 and operators[b"Do"] == 0
    whole = "".join(texts)
    for title in ("The study", "Caution", "The equation", "Data files", "Type-change lines", "Hyperbolic pockets",
                  "Certified bounds", "Pins", "Characteristics", "Parameter sweeps", "Exact analysis", "Notes"):
        assert title in whole
    assert f"page {len(contents)} of {len(contents)}" in texts[-1]


@pytest.mark.parametrize("case", ["missing file", "bad suffix", "unknown equation"])
def test_bad_input_is_one_line_with_exit_status_2_and_no_file(case, tmp_path, qapp):
    folder = tmp_path / "reports"
    folder.mkdir()
    out = folder / ("study.docx" if case == "bad suffix" else "study.pdf")
    project = tmp_path / "missing.mixtype.json" if case == "missing file" else BUMP
    extra = ("--equation", "nothing such") if case == "unknown equation" else ()
    status, printed, err = mixtype("report", str(project), "--out", str(out), *extra)
    assert status == 2 and printed == "" and err.count("\n") == 1 and err.startswith("mixtype: ")
    expected = {"missing file": "missing.mixtype.json: no such project file",
                "bad suffix": "the report's name must end in .html or .pdf", "unknown equation": "nothing such"}
    assert expected[case] in err
    assert list(folder.iterdir()) == []


@pytest.mark.parametrize("stage", ["making the PDF", "replacing the file"])
def test_a_failed_report_leaves_the_old_file_whole_and_nothing_half_written(stage, tmp_path, monkeypatch, qapp):
    folder = tmp_path / "reports"
    folder.mkdir()
    out = folder / "study.pdf"
    out.write_bytes(b"the report of yesterday")

    def broken(*args, **kwargs):
        raise OSError("No space left on device")

    if stage == "making the PDF":
        monkeypatch.setattr(gui.report, "report_pdf_bytes", broken)
    else:
        monkeypatch.setattr("core.project.safe_write.os.replace", broken)
    status, printed, err = mixtype("report", str(BUMP), "--out", str(out))
    assert status == 2 and printed == "" and "No space left on device" in err and err.count("\n") == 1
    assert out.read_bytes() == b"the report of yesterday"
    assert [p.name for p in folder.iterdir()] == ["study.pdf"]         # no temporary file left behind
    assert not any(p.name.endswith(TEMPORARY_SUFFIX) for p in folder.iterdir())


def without_dates(page: str) -> str:
    """The page without its dates, and without the exact analysis' body: what sympy finishes within the
    analysis' deadline (and so its notes) may differ from run to run on a study as large as the bump's."""
    page = re.sub(r'(<section id="exact">).*?(</section>)', r"\1\2", page, flags=re.DOTALL)
    return re.sub(r"\d{4}-\d\d-\d\d[ T]\d\d:\d\d(:\d\d)?( UTC|Z)?", "DATE", page)


def test_the_window_exports_the_same_report_in_the_background_with_progress(make_window, reports, tmp_path):
    window = make_window(open_project_file(BUMP), path=BUMP)
    progress = []
    window.runner.progressed.connect(lambda channel, fraction, label: progress.append((channel, fraction, label)))
    assert window.export_report_action.text() == "Study &report (HTML or PDF)…"
    out = tmp_path / "from the window.html"
    assert window.export_report(out) is not None
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert without_dates(out.read_text(encoding="utf-8")) == without_dates(reports["html"].read_text(encoding="utf-8"))
    # (classify reports from its pool's threads: their signals may arrive after later ones, so no order here)
    fractions = [fraction for channel, fraction, label in progress if channel == "report"]
    assert len(fractions) > 5 and max(fractions) == 1.0 and min(fractions) < 0.3
    assert {label for channel, _, label in progress if channel == "report"} == {"Making the study report"}
    assert "Study report written to" in window.statusBar().currentMessage()


def test_the_launcher_knows_the_report_suffixes_without_loading_qt():
    assert launcher.REPORT_SUFFIXES == gui.report.REPORT_SUFFIXES


def test_report_help_loads_no_numpy_and_no_qt():
    script = """
import io, json, sys
from gui.launcher import main
out = io.StringIO()
sys.stdout = out
status = main(["report", "--help"], out=out, err=io.StringIO())
sys.stdout = sys.__stdout__
loaded = sorted(name for name in ("numpy", "sympy", "PySide6", "gui.report") if name in sys.modules)
print(json.dumps({"status": status, "loaded": loaded, "help": out.getvalue()}))
"""
    completed = subprocess.run([sys.executable, "-c", script], cwd=ROOT, capture_output=True, text=True,
                               timeout=HANG_CEILING_S, check=True)
    result = json.loads(completed.stdout)
    assert result["status"] == 0 and result["loaded"] == []
    assert "--certify" in result["help"] and ".html" in result["help"]


def test_an_equation_with_an_error_is_refused_in_the_window(make_window, tmp_path):
    window = make_window()
    window.document.set_coefficient("a", "1 - M**2 +")
    assert window.document.compiled is None
    assert window.export_report(tmp_path / "r.html") is None
    assert not (tmp_path / "r.html").exists()
    assert window.notice.text().startswith("Could not make the report: ")
