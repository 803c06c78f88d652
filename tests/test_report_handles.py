"""The finding sheets name the drawing entities that bound a place: layer, entity type and the
DXF handle the importer keeps for every wall and solid (kept in step through its filtering)."""

from __future__ import annotations

import numpy as np
import pytest

from floorfit.analysis.check import run_check
from floorfit.plan.dxf import load_plan
from floorfit.plan.site import Site, apply_height_ranges
from floorfit.plan.stations import Station
from floorfit.report.sheets import build_sheets
from floorfit.vehicles.rigid import rectangle_vehicle
from tests.dxf_fixtures import new_drawing

ROBOT = rectangle_vehicle(0.8, 0.6, margin=0.05, mode="differential", name="0.8 x 0.6 robot")
STATIONS = [Station("A", 3.0, 2.0, None, 5.0), Station("B", 3.0, 6.0, None, 5.0)]


def _write_hall(path):
    """A 6 × 8 m room (LWPOLYLINE on A-WALL) split at y = 4 by two jamb LINEs with a 0.60 m
    doorway between x = 2.7 and 3.3, a column (closed LWPOLYLINE on A-COLS) in the lower room and
    a zero-length LINE (dropped by the importer). Returns the jambs' handles (left, right)."""
    d = new_drawing("R2000", "mm")
    m = d.msp
    m.add_line(d.u(1, 1), d.u(1, 1), dxfattribs={"layer": "A-WALL"})        # dropped: zero length
    m.add_lwpolyline([d.u(0, 0), d.u(6, 0), d.u(6, 8), d.u(0, 8)], close=True, dxfattribs={"layer": "A-WALL"})
    m.add_lwpolyline([d.u(5, 1), d.u(5.4, 1), d.u(5.4, 1.4), d.u(5, 1.4)], close=True,
                     dxfattribs={"layer": "A-COLS"})
    left = m.add_line(d.u(0, 4), d.u(2.7, 4), dxfattribs={"layer": "A-WALL"})
    right = m.add_line(d.u(3.3, 4), d.u(6, 4), dxfattribs={"layer": "A-WALL"})
    d.save(path)
    return left.dxf.handle, right.dxf.handle


@pytest.fixture(scope="module")
def hall(tmp_path_factory):
    path = tmp_path_factory.mktemp("handles") / "hall.dxf"
    jambs = _write_hall(path)
    return load_plan(path), jambs


def test_importer_keeps_one_handle_and_entity_type_per_obstacle(hall):
    plan, (left, right) = hall
    assert len(plan.wall_handles) == len(plan.walls) and len(plan.solid_handles) == len(plan.solids)
    assert len(plan.wall_types) == len(plan.walls) and len(plan.solid_types) == len(plan.solids)
    by_handle = dict(zip(plan.wall_handles, plan.walls))
    assert by_handle[left].length == pytest.approx(2.7) and by_handle[right].length == pytest.approx(2.7)
    assert set(plan.wall_types) == {"LINE", "LWPOLYLINE"} and list(plan.solid_types) == ["LWPOLYLINE"]
    assert all(h for h in plan.wall_handles) and all(h for h in plan.solid_handles)
    # heights from a site file replace the height ranges only: handles stay with their obstacles
    raised = apply_height_ranges(plan, {"A-COLS": (0.0, 2.0)})
    assert list(raised.wall_handles) == list(plan.wall_handles)
    assert list(raised.solid_handles) == list(plan.solid_handles)


def test_importer_keeps_handles_in_step_through_a_window(tmp_path):
    path = tmp_path / "hall.dxf"
    left, right = _write_hall(path)
    plan = load_plan(path, window=(-1.0 * 1000, 3.0 * 1000, 7.0 * 1000, 9.0 * 1000))     # upper room only
    assert len(plan.wall_handles) == len(plan.walls) and len(plan.solids) == len(plan.solid_handles) == 0
    lengths = {h: float(g.length) for h, g in zip(plan.wall_handles, plan.walls)}
    assert lengths[left] == pytest.approx(2.7) and lengths[right] == pytest.approx(2.7)


def test_doorway_sheet_names_both_jamb_walls_by_handle(hall):
    plan, (left, right) = hall
    result = run_check(plan, ROBOT, STATIONS, site=Site(required_clearance_m=0.0))
    blocked = [f for f in result.findings if f.kind == "blocked" and f.cause == "width"]
    assert len(blocked) == 1
    sheet = next(s for s in build_sheets(result) if s.finding is blocked[0])
    text = "\n".join(b.text() for b in sheet.bounds)
    assert f"handle #{left}" in text and f"handle #{right}" in text
    assert "not kept" not in text
    sides = [b for b in sheet.bounds if b.side.startswith("side")]
    assert {b.handle for b in sides} == {left, right}
    for b in sides:
        assert b.layer == "A-WALL" and b.entity == "linework (LINE)"
        assert np.isclose(b.y, 4.0, atol=1e-6)
