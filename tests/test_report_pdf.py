"""report.pdf read back: pages, text of each sheet, scale truth, rendering, reproducible bytes,
and the [project] table / --revision on the command line."""

from __future__ import annotations

import csv
import io
import shutil
import subprocess

import numpy as np
import pdfplumber
import pytest
from pypdf import PdfReader
from shapely.geometry import LineString

from floorfit.analysis.check import run_check
from floorfit.cli import main
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.plan.stations import Station
from floorfit.report import write_report
from floorfit.report.pdf import appendix_page_count, page_layout, render_pdf
from floorfit.report.project import ProjectInfo
from floorfit.report.sheets import build_sheets
from floorfit.vehicles.rigid import rectangle_vehicle

ROBOT = rectangle_vehicle(0.8, 0.6, margin=0.05, mode="differential", name="0.8 x 0.6 robot")
OPENING = (2.7, 3.3)        # a 0.60 m doorway in the wall at y = 4 (metres)
WALL_RGB = (0x20 / 255, 0x26 / 255, 0x2C / 255)
MM_PER_PT = 25.4 / 72.0


def _plan() -> Plan:
    walls = [LineString([(0, 0), (6, 0), (6, 8), (0, 8), (0, 0)]),
             LineString([(0, 4), (OPENING[0], 4)]), LineString([(OPENING[1], 4), (6, 4)]),
             # a dead-end aisle off the lower room: a no-turn stretch
             LineString([(6, 0.6), (9.5, 0.6), (9.5, 1.5), (6, 1.5)])]
    return Plan.from_geometries(walls, [], source="invented-hall.dxf")


@pytest.fixture(scope="module")
def result():
    stations = [Station("LOW", 3.0, 2.2, None, 5.0), Station("HIGH", 3.0, 6.0, None, 5.0)]
    r = run_check(_plan(), ROBOT, stations, site=Site(required_clearance_m=0.45))
    assert {f.kind for f in r.findings} >= {"blocked"}
    return r


@pytest.fixture(scope="module")
def report(result, tmp_path_factory):
    out = tmp_path_factory.mktemp("pdf") / "report"
    paths = write_report(result, out, quiet=True,
                         project={"name": "Invented hall", "number": "P-7", "revision": "C", "client": "Nobody"})
    return paths


def _pages_text(path) -> list[str]:
    with pdfplumber.open(path) as pdf:
        return [p.extract_text() or "" for p in pdf.pages]


def test_page_count_is_cover_findings_appendix(result, report):
    n = len(PdfReader(report["pdf"]).pages)
    assert n == 1 + len(result.findings) + appendix_page_count(result)
    texts = _pages_text(report["pdf"])
    for i, text in enumerate(texts, start=1):
        assert f"{i} of {n}" in text                       # sheet numbers in every title block
        assert "not a risk assessment" in text             # the cautions in every footer
        assert "Invented hall" in text and "P-7" in text   # project fields in every title block
        assert "invented-hall.dxf" in text and "floorfit" in text
    assert "DOES NOT PASS" in texts[0] and "revision C" in texts[0]
    assert "Settings, tolerances and cautions" in texts[-1]


def test_every_csv_finding_is_on_its_own_sheet(report):
    texts = _pages_text(report["pdf"])
    rows = list(csv.DictReader(io.StringIO(report["csv"].read_text(encoding="utf-8-sig"))))
    assert rows
    for row in rows:
        number = int(row["number"])
        sheet = texts[number]                               # the cover is page 1
        assert f"Finding {number} ({row['id']}) · {row['kind']}" in sheet
        if row["clear_width_m"]:
            assert f"{float(row['clear_width_m']):.2f} m" in sheet
        # and not on the sheet of another finding
        others = [t for i, t in enumerate(texts[1:len(rows) + 1], start=1) if i != number]
        assert not any(f"Finding {number} ({row['id']})" in t for t in others)


def test_doorway_close_up_is_true_to_scale(result, report):
    """The two jambs of the 0.60 m doorway, as drawn on the page, are 600 mm / scale apart."""
    layout = page_layout("a4")
    sheets = build_sheets(result, viewport_mm=layout.viewport)
    sheet = next(s for s in sheets if s.finding.kind == "blocked" and s.finding.cause == "width")
    expected_mm = (OPENING[1] - OPENING[0]) * 1000.0 / sheet.scale
    with pdfplumber.open(report["pdf"]) as pdf:
        page = pdf.pages[sheet.number]
        segments = []
        for obj in page.objects.get("curve", []) + page.objects.get("line", []):
            colour = obj.get("stroking_color")
            if not isinstance(colour, (list, tuple)) or len(colour) != 3:
                continue
            if not np.allclose(colour, WALL_RGB, atol=0.01):
                continue
            pts = np.asarray(obj["pts"], dtype=float)
            if len(pts) >= 2 and np.ptp(pts[:, 1]) < 0.01:               # horizontal: the wall at y = 4
                segments.append((float(pts[:, 0].min()), float(pts[:, 0].max()), float(pts[0, 1])))
    assert segments, "no wall linework found on the sheet"
    # the opening: the gap between two wall pieces on the same line
    gaps = []
    for a in segments:
        for b in segments:
            if abs(a[2] - b[2]) < 0.01 and b[0] > a[1]:
                gaps.append((b[0] - a[1]) * MM_PER_PT)
    assert gaps
    gap = min(gaps, key=lambda g: abs(g - expected_mm))
    assert gap == pytest.approx(expected_mm, abs=0.5)
    assert f"1:{sheet.scale}" in page_text(report["pdf"], sheet.number)


def page_text(path, index):
    with pdfplumber.open(path) as pdf:
        return pdf.pages[index].extract_text() or ""


@pytest.mark.skipif(shutil.which("pdftoppm") is None,
                    reason="poppler's pdftoppm is not installed (.ci/run installs poppler-utils)")
def test_pages_render_and_are_not_blank(report, tmp_path):
    from PIL import Image

    subprocess.run(["pdftoppm", "-r", "24", "-gray", "-png", str(report["pdf"]), str(tmp_path / "p")],
                   check=True, timeout=120)
    images = sorted(tmp_path.glob("p-*.png"))
    assert len(images) == len(PdfReader(report["pdf"]).pages)
    for img in images:
        px = np.asarray(Image.open(img).convert("L"), dtype=float)
        inked = (px < 200).mean()
        assert inked > 0.01, f"{img.name} is blank"
        assert px.std() > 10


def test_same_input_gives_the_same_bytes(result, monkeypatch):
    project = ProjectInfo(name="Invented hall", revision="A")
    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    a = render_pdf(result, project=project)
    b = render_pdf(result, project=project)
    assert a == b and a.startswith(b"%PDF-")
    assert b"CreationDate" not in a                          # no clock in the file
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    c = render_pdf(result, project=project)
    d = render_pdf(result, project=project)
    assert c == d and b"D:20231114" in c
    assert "2023-11-14" in page_text(io.BytesIO(c), 0)     # the date shown when none is given


def test_letter_and_a3_papers(result):
    for paper, (w_mm, h_mm) in (("letter", (279.4, 215.9)), ("a3", (420.0, 297.0))):
        reader = PdfReader(io.BytesIO(render_pdf(result, paper=paper)))
        box = reader.pages[0].mediabox
        assert float(box.width) * MM_PER_PT == pytest.approx(w_mm, abs=0.2)
        assert float(box.height) * MM_PER_PT == pytest.approx(h_mm, abs=0.2)


def test_html_has_a_close_up_per_finding_and_print_rules(result, report):
    page = report["html"].read_text(encoding="utf-8")
    for i in range(1, len(result.findings) + 1):
        assert f'id="sheet-{i}"' in page and f'id="fig-sheet-{i}"' in page
    assert "break-before: page" in page


# -- the command line: [project] and --revision ----------------------------------------------------------
def _write_inputs(tmp_path, project_toml: str):
    import ezdxf

    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 6
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (6, 0), (6, 8), (0, 8)], close=True, dxfattribs={"layer": "A-WALL"})
    msp.add_line((0, 4), (OPENING[0], 4), dxfattribs={"layer": "A-WALL"})
    msp.add_line((OPENING[1], 4), (6, 4), dxfattribs={"layer": "A-WALL"})
    plan = tmp_path / "hall.dxf"
    doc.saveas(plan)
    vehicle = tmp_path / "robot.toml"
    vehicle.write_text('name = "robot"\n[footprint]\nwidth = 0.6\nlength = 0.8\nmargin = 0.05\n'
                       '[motion]\nmode = "differential"\n')
    site = tmp_path / "site.toml"
    site.write_text('[stations]\nLOW = { x = 3.0, y = 2.0 }\nHIGH = { x = 3.0, y = 6.0 }\n' + project_toml)
    return plan, vehicle, site


def test_cli_project_table_and_revision_reach_the_pdf(tmp_path, capsys):
    plan, vehicle, site = _write_inputs(tmp_path, '[project]\nname = "Hall 9"\nnumber = 4471\nrevision = "B"\n'
                                                  'date = 2025-03-14\nprepared_by = "A. Planner"\n')
    out = tmp_path / "out"
    code = main(["check", str(plan), "--vehicle", str(vehicle), "--site", str(site), "--out", str(out), "--quiet",
                 "--revision", "D", "--paper", "letter"])
    assert code == 1                                        # the doorway blocks
    text = page_text(out / "report.pdf", 0)
    assert "Hall 9" in text and "4471" in text and "2025-03-14" in text and "A. Planner" in text
    assert "revision D" in text and "revision B" not in text


@pytest.mark.parametrize("table, key", [
    ('[project]\nname = "x"\ncolour = "red"\n', "project.colour"),
    ('[project]\nname = 5\n', "project.name"),
    ('[project]\ndate = "14/03/2025"\n', "project.date"),
    ('project = "x"\n', "project"),
])
def test_cli_bad_project_table_is_one_line_exit_2(tmp_path, capsys, table, key):
    plan, vehicle, site = _write_inputs(tmp_path, table)
    code = main(["check", str(plan), "--vehicle", str(vehicle), "--site", str(site), "--out", str(tmp_path / "o"),
                 "--quiet"])
    assert code == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and str(site) in err[0] and key in err[0]
    assert not (tmp_path / "o").exists()
