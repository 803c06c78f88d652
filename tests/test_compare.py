"""Comparing layouts: widening one door removes exactly one blocked finding and restores one pair."""

import base64
import json
import re

import ezdxf
import pytest
import shapely

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.compare import compare_layouts, compare_results, match_findings
from floorfit.analysis.findings import Finding, Station
from floorfit.cli import main
from floorfit.cspace.slicememo import sharing
from floorfit.plan.model import Plan
from floorfit.plan.site import Site

ROOM, WALL_T, HEIGHT = 5.0, 0.2, 4.0
NO_CLEARANCE = Site(required_clearance_m=0.0, clearance_reference="none")
VEHICLE = ff.rectangle_vehicle(0.9, 0.62, margin=0.05)          # needs 0.72 m
STATIONS = [Station("A", 2.5, 2.0), Station("B", 7.7, 2.0), Station("C", 12.9, 2.0)]


def wall_boxes(doors):
    """Internal walls (x0, y0, x1, y1) of rooms in a row; doors[i]: width of the door in wall i, centred."""
    boxes = []
    for i, d in enumerate(doors):
        x0 = (i + 1) * ROOM + i * WALL_T
        boxes += [(x0, 0, x0 + WALL_T, HEIGHT / 2 - d / 2), (x0, HEIGHT / 2 + d / 2, x0 + WALL_T, HEIGHT)]
    width = (len(doors) + 1) * ROOM + len(doors) * WALL_T
    return width, boxes


def rooms_plan(doors) -> Plan:
    width, boxes = wall_boxes(doors)
    return Plan.from_geometries(walls=[shapely.box(0, 0, width, HEIGHT)], solids=[shapely.box(*b) for b in boxes])


def rooms_dxf(path, doors) -> None:
    """The same rooms as a DXF in metres; walls as closed polylines on A-WALL."""
    doc = ezdxf.new("R2013", setup=False)
    doc.header["$INSUNITS"] = 6
    doc.layers.add("A-WALL")
    msp = doc.modelspace()
    width, boxes = wall_boxes(doors)
    for x0, y0, x1, y1 in [(0, 0, width, HEIGHT), *boxes]:
        msp.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True, dxfattribs={"layer": "A-WALL"})
    doc.saveas(path)


# 5° heading steps throughout: the doors are crossed at wall-aligned headings (narrow cells), so
# the verdicts do not depend on the step.
STEP = 5.0


def test_widening_one_door_removes_one_blocked_finding_and_restores_one_pair():
    # D-1 0.70 m and D-2 0.60 m both block a vehicle that needs 0.72 m; widening D-1 to 1.0 m
    before = run_check(rooms_plan([0.70, 0.60]), VEHICLE, STATIONS, site=NO_CLEARANCE, heading_step_deg=STEP)
    after = run_check(rooms_plan([1.00, 0.60]), VEHICLE, STATIONS, site=NO_CLEARANCE, heading_step_deg=STEP)
    c = compare_results(before, after)
    assert c.counts() == {"appeared": 0, "worse": 0, "disappeared": 1, "better": 0, "unchanged": 1}
    gone = c.of("disappeared")[0]
    assert gone.kind == "blocked" and gone.before.clear_width_m == pytest.approx(0.70, abs=1e-6)
    assert abs(gone.before.x - 5.1) <= 0.3                     # at D-1
    kept = c.of("unchanged")[0]
    assert kept.before.clear_width_m == pytest.approx(0.60, abs=1e-6) and kept.distance_m <= 0.3
    assert c.pairs_gained == [("A", "B")] and c.pairs_lost == []
    assert c.pairs_still_cut == [("A", "C"), ("B", "C")]
    assert not c.after_worse
    # the other way round: one finding appears, one pair is lost, AFTER is worse
    r = compare_results(after, before)
    assert r.counts()["appeared"] == 1 and r.counts()["disappeared"] == 0
    assert r.pairs_lost == [("A", "B")] and r.after_worse
    d = r.to_dict()
    assert d["after_worse"] is True and d["pairs"]["lost"] == [["A", "B"]]
    json.dumps(d, allow_nan=False)


def test_narrower_door_is_worse_and_wider_is_better():
    before = run_check(rooms_plan([0.60]), VEHICLE, STATIONS[:2], site=NO_CLEARANCE, heading_step_deg=STEP)
    after = run_check(rooms_plan([0.55]), VEHICLE, STATIONS[:2], site=NO_CLEARANCE, heading_step_deg=STEP)
    c = compare_results(before, after)
    assert [ch.change for ch in c.changes] == ["worse"]
    assert c.changes[0].what == ["clear width 0.600 → 0.550 m"]
    assert not c.after_worse                       # the pair was already cut: nothing lost
    assert [ch.change for ch in compare_results(after, before).changes] == ["better"]


def _finding(kind, x, y, **kw):
    return Finding(kind=kind, x=x, y=y, summary="", **kw)


def test_matching_by_kind_and_distance():
    before = [_finding("blocked", 0.0, 0.0), _finding("tight", 5.0, 0.0), _finding("blocked", 10.0, 0.0)]
    after = [_finding("blocked", 0.6, 0.6), _finding("blocked", 5.0, 0.0), _finding("blocked", 11.2, 0.0)]
    pairs = match_findings(before, after, match_distance_m=1.0)
    matched = [(i, j) for i, j, d in pairs if i is not None and j is not None]
    assert matched == [(0, 0)]                          # 0.85 m apart, same kind
    assert (1, None, None) in pairs and (None, 1, None) in pairs    # kinds differ: no match
    assert (2, None, None) in pairs and (None, 2, None) in pairs    # 1.2 m apart: too far
    # the closest pair wins when two are in reach
    pairs = match_findings([_finding("blocked", 0, 0)], [_finding("blocked", 0.9, 0), _finding("blocked", 0.2, 0)])
    assert (0, 1, pytest.approx(0.2)) in pairs


def test_compare_layouts_with_sizing_change():
    # the only door binds: widening it from 0.80 to 0.90 m raises the largest outline width from just
    # under 0.70 m to just under 0.80 m (door less the 0.10 m of margin; a slit passes bodies no wider)
    c = compare_layouts(rooms_plan([0.80]), rooms_plan([0.90]), VEHICLE, STATIONS[:2], site=NO_CLEARANCE,
                        heading_step_deg=STEP, size="width")
    s = c.sizing_dict()
    assert s["vary"] == "width"
    assert s["change_m"] == pytest.approx(0.10, abs=2 * s["precision_m"])
    assert 0.70 - 2 * s["precision_m"] <= s["before"]["largest_m"] < 0.70
    assert 0.80 - 2 * s["precision_m"] <= s["after"]["largest_m"] < 0.80
    assert not c.after_worse and c.pairs_lost == []



def test_after_slices_derived_from_before_give_the_answers_of_two_full_checks():
    # D-1 widened from 0.70 to 1.00 m and a 0.6 m cabinet added in the last room: compare derives
    # AFTER's slice sets (the check's and the clearance stage's grown vehicle) from BEFORE's near the
    # changed obstacles; findings, station pairs and settings equal those of two separate checks
    def plan(doors, cabinet=False):
        p = rooms_plan(doors)
        extra = [shapely.box(12.0, 0.8, 12.6, 1.4)] if cabinet else []
        return Plan.from_geometries(walls=list(p.walls), solids=list(p.solids) + extra)

    before, after = plan([0.70, 1.00]), plan([1.00, 1.00], cabinet=True)
    site = Site()                       # with the clearance requirement: tight findings too
    with sharing() as memo:
        c = compare_layouts(before, after, VEHICLE, STATIONS, site=site, heading_step_deg=STEP)
    assert memo.derived == 2            # the check's sound slices and the grown vehicle's
    b = run_check(before, VEHICLE, STATIONS, site=site, heading_step_deg=STEP, stations_inside_ok=True)
    a = run_check(after, VEHICLE, STATIONS, site=site, heading_step_deg=STEP, stations_inside_ok=True)
    full = compare_results(b, a)
    assert [f.to_dict() for f in c.after.findings] == [f.to_dict() for f in a.findings]
    assert c.after.reachable == a.reachable and c.after.settings == a.settings
    assert c.to_dict() == full.to_dict()
    assert c.counts() == {"appeared": 2, "worse": 0, "disappeared": 1, "better": 0, "unchanged": 1}
    assert c.pairs_gained == [("A", "B"), ("A", "C")] and c.pairs_lost == []


def test_compare_command_outputs_and_exit_codes(tmp_path, capsys):
    rooms_dxf(tmp_path / "before.dxf", [0.70, 0.60])
    rooms_dxf(tmp_path / "after.dxf", [1.00, 0.60])
    (tmp_path / "v.toml").write_text('name = "cart"\n[footprint]\nwidth = 0.62\nlength = 0.9\nmargin = 0.05\n')
    (tmp_path / "site.toml").write_text(
        '[stations]\nA = { x = 2.5, y = 2.0 }\nB = { x = 7.7, y = 2.0 }\nC = { x = 12.9, y = 2.0 }\n'
        f'[clearance]\nreference = "none"\n[analysis]\nheading_step = {STEP}\n')
    common = ["--vehicle", str(tmp_path / "v.toml"), "--site", str(tmp_path / "site.toml"), "--quiet"]
    out = tmp_path / "cmp"
    assert main(["compare", str(tmp_path / "before.dxf"), str(tmp_path / "after.dxf"), *common,
                 "--out", str(out)]) == 0
    d = json.loads((out / "comparison.json").read_text())
    assert d["counts"]["disappeared"] == 1 and d["counts"]["appeared"] == 0
    assert d["pairs"]["gained"] == [["A", "B"]] and d["pairs"]["lost"] == [] and d["after_worse"] is False
    assert d["findings"]["disappeared"][0]["before"]["clear_width_m"] == pytest.approx(0.70, abs=1e-6)
    # both full reports are there and linked; both plans embedded side by side with the legend
    page = (out / "comparison.html").read_text()
    assert (out / "before" / "report.html").is_file() and (out / "after" / "report.html").is_file()
    assert 'href="before/report.html"' in page and 'href="after/report.html"' in page
    images = re.findall(r'src="data:image/svg\+xml;base64,([^"]+)"', page)
    assert len(images) == 2 and all(base64.b64decode(i).lstrip().startswith(b"<?xml") for i in images)
    assert "gone in AFTER" in page and "appeared in AFTER" in page
    # stable JSON: the same comparison again (without the full reports) gives the same bytes
    again = tmp_path / "again"
    assert main(["compare", str(tmp_path / "before.dxf"), str(tmp_path / "after.dxf"), *common,
                 "--out", str(again), "--no-reports"]) == 0
    assert (again / "comparison.json").read_bytes() == (out / "comparison.json").read_bytes()
    assert not (again / "before").exists()
    # narrowing the door again loses the pair: exit 1
    assert main(["compare", str(tmp_path / "after.dxf"), str(tmp_path / "before.dxf"), *common,
                 "--out", str(tmp_path / "back"), "--no-reports"]) == 1
    assert "lost: A ↔ B" in capsys.readouterr().out
    # bad input: exit 2, one line naming the file
    assert main(["compare", str(tmp_path / "before.dxf"), str(tmp_path / "missing.dxf"), *common,
                 "--out", str(tmp_path / "x")]) == 2
    assert "missing.dxf" in capsys.readouterr().err
