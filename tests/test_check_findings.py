"""Site-check findings on synthetic plans with known answers (locations and numbers asserted)."""

import math

import pytest
import shapely
from shapely.geometry import LineString, Polygon

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.plan.model import Doorway, Label, Plan
from floorfit.plan.site import Site


def two_rooms(door_width: float, wall_t: float = 0.2) -> Plan:
    """Two 6 × 5 m rooms side by side, a wall of thickness wall_t at x = 6 with a door centred at y = 2.5."""
    outer = shapely.box(0, 0, 12 + wall_t, 5)
    y0, y1 = 2.5 - door_width / 2, 2.5 + door_width / 2
    solids = [shapely.box(6, 0, 6 + wall_t, y0), shapely.box(6, y1, 6 + wall_t, 5)]
    return Plan.from_geometries(walls=[outer], solids=solids,
                                doors=[Doorway(6 + wall_t / 2, 2.5, door_width, label="D-1")],
                                labels=[Label("STORE", 3, 4), Label("LAB", 9, 4)])


STATIONS = [Station("A", 3.0, 2.5), Station("B", 9.0, 2.5)]
NO_CLEARANCE = Site(required_clearance_m=0.0, clearance_reference="none")


def test_door_narrower_than_vehicle_is_blocked_at_the_door_with_numbers():
    plan = two_rooms(0.70)
    veh = ff.rectangle_vehicle(0.9, 0.62, margin=0.05)       # needs 0.72 m
    r = run_check(plan, veh, STATIONS, site=NO_CLEARANCE)
    assert r.reachable["A"]["B"] is False and not r.passed
    blocked = [f for f in r.findings if f.kind == "blocked"]
    assert len(blocked) == 1
    f = blocked[0]
    # located in the doorway (within the stated location tolerance), exact clear width
    assert math.hypot(f.x - 6.1, f.y - 2.5) <= r.settings["location_tolerance_m"] + 0.1
    assert f.clear_width_m == pytest.approx(0.70, abs=1e-6)
    assert f.needed_width_m == pytest.approx(0.72, abs=1e-9)
    assert f.cause == "width"
    assert f.cuts_off in (["A"], ["B"])
    assert f.label and "D-1" in f.label
    assert r.cuts[("A", "B")] == [f.id]


def test_door_wider_than_vehicle_gives_no_blocked_finding():
    plan = two_rooms(0.90)
    veh = ff.rectangle_vehicle(0.9, 0.62, margin=0.05)
    r = run_check(plan, veh, STATIONS, site=NO_CLEARANCE)
    assert r.reachable["A"]["B"] is True and r.passed
    assert [f for f in r.findings if f.kind == "blocked"] == []


def test_tight_door_reports_clearance_found():
    # ANSI/ITSDF B56.5 §4.7.4 asks 450 mm between obstructions and the vehicle; a 0.90 m door
    # leaves (0.90 − 0.62) / 2 = 0.14 m each side for a 0.62 m wide vehicle.
    plan = two_rooms(0.90)
    veh = ff.rectangle_vehicle(0.9, 0.62, margin=0.05)
    site = Site(required_clearance_m=0.45, clearance_reference="ANSI/ITSDF B56.5 §4.7.4")
    r = run_check(plan, veh, STATIONS, site=site)
    tight = [f for f in r.findings if f.kind == "tight"]
    assert len(tight) == 1
    assert tight[0].clearance_m == pytest.approx(0.14, abs=1e-6)
    assert math.hypot(tight[0].x - 6.1, tight[0].y - 2.5) <= 0.3
    assert r.passed     # tight is a warning, not a failure


def dead_end_plan(aisle: float) -> Plan:
    """A 10 × 6 m hall (y 0..6) with a dead-end aisle of width `aisle`, 6 m deep, going up from y = 6."""
    x0 = 5 - aisle / 2
    x1 = 5 + aisle / 2
    ring = LineString([(0, 0), (10, 0), (10, 6), (x1, 6), (x1, 12), (x0, 12), (x0, 6), (0, 6), (0, 0)])
    return Plan.from_geometries(walls=[ring], labels=[Label("AISLE 3", 5, 9)])


def test_dead_end_aisle_narrower_than_turnaround_width_is_no_turn():
    # reversing heading in a straight corridor needs W ≥ √(l² + w²) (FIELD-NOTES): 1.0 × 0.72 → 1.233 m
    veh = ff.rectangle_vehicle(0.9, 0.62, margin=0.05)
    diag = math.hypot(1.0, 0.72)
    plan = dead_end_plan(diag - 0.13)          # 1.10 m
    r = run_check(plan, veh, [Station("HALL", 5, 3), Station("END", 5, 11)], site=NO_CLEARANCE)
    assert r.reachable["HALL"]["END"]
    nt = [f for f in r.findings if f.kind == "no-turn"]
    assert len(nt) == 1
    f = nt[0]
    assert f.cause == "dead-end" and "END" in f.summary
    x0, y0, x1, y1 = f.extent
    # the stretch lies in the aisle and covers most of its 6 m depth
    assert 4.4 <= x0 and x1 <= 5.6 and y0 >= 6.0 and y1 <= 12.0 and (y1 - y0) > 4.0
    # allowed headings: along the aisle both ways (and, at most, squarely across it, since the
    # 1.0 m long vehicle fits across a 1.10 m aisle), never diagonal
    mids = [(a + b) / 2 for a, b in f.heading_ranges_deg if a <= b]
    assert any(abs(m - 90) < 5 for m in mids) and any(abs(m + 90) < 5 for m in mids)
    for a, b in f.heading_ranges_deg:
        if a <= b:
            assert not (a <= 45 <= b) and not (a <= -45 <= b) and not (a <= 135 <= b)
    # the same aisle wide enough to turn in: no finding
    r = run_check(dead_end_plan(diag + 0.12), veh, [Station("HALL", 5, 3), Station("END", 5, 11)], site=NO_CLEARANCE)
    assert [f for f in r.findings if f.kind == "no-turn"] == []


def test_corner_too_tight_by_closed_form_is_blocked_as_a_turn():
    # Moretti (College Math. J. 33(3), 2002): a 0.4 m wide vehicle turns a corner between two 1.0 m
    # corridors only if shorter than 2√2·1.0 − 2·0.4 = 2.028 m. A 2.3 m vehicle cannot; a 1.7 m one can.
    outline = Polygon([(-6, 0), (1, 0), (1, 7), (0, 7), (0, 1), (-6, 1)])
    plan = Plan.from_geometries(walls=[outline])
    st = [Station("W", -4.5, 0.5, 0.0), Station("N", 0.5, 5.5, 90.0)]
    long = ff.rectangle_vehicle(2.3, 0.4)
    r = run_check(plan, long, st, site=NO_CLEARANCE)
    assert not r.reachable["W"]["N"]
    b = [f for f in r.findings if f.kind == "blocked"]
    assert len(b) == 1 and b[0].cause == "turn"
    assert -1.5 <= b[0].x <= 1.5 and -0.5 <= b[0].y <= 2.5     # at the corner
    short = ff.rectangle_vehicle(1.7, 0.4)
    r = run_check(plan, short, st, site=NO_CLEARANCE)
    assert r.reachable["W"]["N"] and [f for f in r.findings if f.kind == "blocked"] == []


def test_corner_of_a_corridor_between_rooms_is_blocked_as_a_turn_at_the_corner():
    # Two 4 × 4 m rooms joined by a 0.95 m corridor with one right-angle corner: a 2.0 × 0.6 m robot
    # (0.70 m with margin) drives the corridor's legs straight but cannot make the corner. The floor is
    # wide enough all along, so the block is at the corner, not wherever the raster first joins the
    # rooms: the middle of the corner (the centre of the widest circle there), at the corridor's width.
    w = 0.95
    floor = shapely.union_all([shapely.box(0, 0, 4, 4), shapely.box(4, 1.5, 8 + w, 1.5 + w),
                               shapely.box(8, 1.5, 8 + w, 6), shapely.box(6.5, 6, 10.5, 10)])
    plan = Plan.from_geometries(walls=[floor.exterior])
    veh = ff.rectangle_vehicle(2.0, 0.6, margin=0.05, mode="differential")
    r = run_check(plan, veh, [Station("A", 2.0, 2.0), Station("B", 8.5, 8.0)], site=NO_CLEARANCE)
    assert not r.reachable["A"]["B"]
    b = [f for f in r.findings if f.kind == "blocked"]
    assert len(b) == 1 and b[0].cause == "turn" and b[0].cuts_off == ["B"]
    radius = w * math.sqrt(2) / (1 + math.sqrt(2))      # touches both outer walls and the inner corner
    cx, cy = 8 + w - radius, 1.5 + radius
    assert math.hypot(b[0].x - cx, b[0].y - cy) <= r.settings["location_tolerance_m"], (b[0].x, b[0].y)
    assert b[0].clear_width_m == pytest.approx(w, abs=0.01)
    assert "cannot make the turn" in b[0].summary


def test_ample_space_has_no_findings():
    plan = Plan.from_geometries(walls=[shapely.box(0, 0, 20, 12)], solids=[shapely.box(8, 4, 12, 8)])
    veh = ff.rectangle_vehicle(0.9, 0.62, margin=0.05)
    r = run_check(plan, veh, [Station("P", 3, 3), Station("Q", 17, 9, 45.0)], site=NO_CLEARANCE)
    assert r.passed and r.findings == []
    assert r.reachable == {"P": {"P": True, "Q": True}, "Q": {"P": True, "Q": True}}


def test_station_inside_obstacle_is_an_input_error():
    from floorfit.errors import SiteError
    plan = two_rooms(0.9)
    with pytest.raises(SiteError, match="inside an obstacle"):
        run_check(plan, ff.rectangle_vehicle(0.9, 0.6), [Station("X", 6.1, 1.0)], site=NO_CLEARANCE)
