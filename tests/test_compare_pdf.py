"""``floorfit compare`` writes report.pdf: a cover and one finding sheet per finding that appeared,
got worse or disappeared, each naming its change, its kind and its number in its own layout's report,
with the same title block as a check's report."""

from __future__ import annotations

import io

import pdfplumber
import pytest
import shapely

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.compare import compare_results
from floorfit.analysis.findings import Station
from floorfit.cli import main
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.report.compare_html import write_comparison
from floorfit.report.compare_pdf import changed_findings, render_comparison_pdf
from floorfit.report.kinds import kind_style, numbered_findings
from floorfit.report.project import ProjectInfo

ROOM, WALL_T, HEIGHT = 5.0, 0.2, 4.0
SITE = Site(required_clearance_m=0.0, clearance_reference="none")
VEHICLE = ff.rectangle_vehicle(0.9, 0.62, margin=0.05)          # needs 0.72 m
STATIONS = [Station(n, 2.5 + i * (ROOM + WALL_T), 2.0) for i, n in enumerate("ABCD")]
STEP = 5.0


def _rooms(doors, source) -> Plan:
    """Rooms in a row, ``doors[i]`` the width of the door (centred) in internal wall i, metres."""
    boxes = []
    for i, d in enumerate(doors):
        x0 = (i + 1) * ROOM + i * WALL_T
        boxes += [(x0, 0, x0 + WALL_T, HEIGHT / 2 - d / 2), (x0, HEIGHT / 2 + d / 2, x0 + WALL_T, HEIGHT)]
    width = (len(doors) + 1) * ROOM + len(doors) * WALL_T
    return Plan.from_geometries(walls=[shapely.box(0, 0, width, HEIGHT)], solids=[shapely.box(*b) for b in boxes],
                                source=source)


@pytest.fixture(scope="module")
def comparison():
    # door 1 widened (its block is gone), door 2 narrowed (a block appears), door 3 narrower still (worse)
    before = run_check(_rooms([0.70, 1.00, 0.68], "before-hall.dxf"), VEHICLE, STATIONS, site=SITE,
                       heading_step_deg=STEP)
    after = run_check(_rooms([1.00, 0.66, 0.62], "after-hall.dxf"), VEHICLE, STATIONS, site=SITE,
                      heading_step_deg=STEP)
    return compare_results(before, after)


def _pages(data: bytes) -> list[str]:
    with pdfplumber.open(io.BytesIO(data)) as pdf:
        return [p.extract_text() or "" for p in pdf.pages]


def test_one_sheet_per_changed_finding_with_its_kind_and_number(comparison):
    c = comparison.counts()
    assert (c["appeared"], c["worse"], c["disappeared"]) == (1, 1, 1), c
    changes = changed_findings(comparison)
    pages = _pages(render_comparison_pdf(comparison, project=ProjectInfo(name="Hall", revision="D")))
    assert len(pages) == 1 + len(changes)
    assert "WORSE" in pages[0] and "before-hall.dxf" in pages[0] and "after-hall.dxf" in pages[0]
    for page, ch in zip(pages[1:], changes):
        side = comparison.before if ch.change == "disappeared" else comparison.after
        f = ch.before if ch.change == "disappeared" else ch.after
        number = next(n for n, g in numbered_findings(side.findings) if g is f)
        assert ch.change.upper() in page
        assert f"Finding {number} ({f.id})" in page and kind_style(f.kind).title.lower() in page
        assert f"{f.clear_width_m:.2f} m" in page
        # the same title block as a check's report: project fields, the sheet's own drawing, n of N
        assert "Hall" in page and "D" in page and side.plan.source in page
        assert f"{pages.index(page) + 1} of {len(pages)}" in page
    worse = next(p for p, ch in zip(pages[1:], changes) if ch.change == "worse")
    assert "0.68" in worse and "0.62" in worse          # before and after clear widths in the change line


def test_write_comparison_puts_report_pdf_beside_the_page(comparison, tmp_path):
    written = write_comparison(comparison, tmp_path / "cmp", reports=False, paper="letter")
    assert written["pdf"].name == "report.pdf" and written["pdf"].read_bytes().startswith(b"%PDF")
    with pdfplumber.open(written["pdf"]) as pdf:
        assert len(pdf.pages) == 4 and pdf.pages[0].width > pdf.pages[0].height    # landscape
    assert not (tmp_path / "none" / "report.pdf").exists()
    assert "pdf" not in write_comparison(comparison, tmp_path / "none", reports=False, pdf=False)


def test_compare_command_writes_report_pdf_with_the_revision(tmp_path):
    import ezdxf

    for name, doors in (("before.dxf", [0.70]), ("after.dxf", [0.62])):
        doc = ezdxf.new("R2013", setup=False)
        doc.header["$INSUNITS"] = 6
        plan = _rooms(doors, name)
        msp = doc.modelspace()
        for g in [*plan.walls, *(s.exterior for s in plan.solids)]:
            msp.add_lwpolyline(list(g.coords), close=True)
        doc.saveas(tmp_path / name)
    (tmp_path / "v.toml").write_text('name = "cart"\n[footprint]\nwidth = 0.62\nlength = 0.9\nmargin = 0.05\n')
    (tmp_path / "site.toml").write_text(
        '[stations]\nA = { x = 2.5, y = 2.0 }\nB = { x = 7.7, y = 2.0 }\n'
        f'[clearance]\nreference = "none"\n[analysis]\nheading_step = {STEP}\n[project]\nname = "Invented hall"\n')
    out = tmp_path / "cmp"
    assert main(["compare", str(tmp_path / "before.dxf"), str(tmp_path / "after.dxf"), "--vehicle",
                 str(tmp_path / "v.toml"), "--site", str(tmp_path / "site.toml"), "--quiet", "--no-reports",
                 "--revision", "R7", "--out", str(out)]) == 0
    pages = _pages((out / "report.pdf").read_bytes())
    assert len(pages) == 2 and "WORSE" in pages[0]      # the one blocked door got narrower
    assert "WORSE" in pages[1] and "R7" in pages[1] and "Invented hall" in pages[1] and "after.dxf" in pages[1]
