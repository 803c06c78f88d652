"""Findings that agree with their own numbers (issue 16), on a real drawing and small invented ones.

Real drawing: plans-real #9 (JuPedSim "Gallery", LGPL-3.0-or-later, read in place): a walkable-area
polygon with obstacle polygons, where the site check used to report "tight" places with more
clearance than asked, clear widths of 0.00 m and 0.48 m for a 0.60 m vehicle it called passable.
"""

import shapely
from shapely.geometry import LineString

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.analysis.turnability import format_heading_ranges, heading_ranges
from floorfit.cspace.headings import make_heading_cells
from floorfit.plan.model import Plan
from floorfit.plan.site import Site

# ANSI/ITSDF B56.5 (2004 text) §4.7.4: 450 mm between obstructions and the vehicle
B565 = Site(required_clearance_m=0.45, clearance_reference="ANSI/ITSDF B56.5 §4.7.4")


def test_tight_findings_on_the_gallery_state_clearance_below_the_requirement(plans_real):
    plan = ff.load_plan(plans_real / "PedestrianDynamics__jupedsim__Gallery.dxf")
    stations = [Station("A", -15.0, 5.0), Station("B", 14.5, 5.0), Station("C", 3.0, -6.0),
                Station("D", -16.0, 18.5)]
    veh = ff.rectangle_vehicle(0.8, 0.6, name="0.6 x 0.8 robot")
    r = run_check(plan, veh, stations, site=B565, heading_step_deg=5.0)
    tight = [f for f in r.findings if f.kind == "tight"]
    assert tight
    for f in tight:
        # clearance >= requirement never gives "tight"
        assert f.clearance_m < f.required_clearance_m, f.summary
        # a passable place never states a clear width below the vehicle's 0.60 m
        assert f.clear_width_m is None or f.clear_width_m >= 0.60 - 1e-9, f.summary
        assert f.cuts_off == []          # passable: cuts nothing off
        assert "served" not in f.summary
    # the narrow exhibit passages measure 0.64-0.78 m: (w - 0.60) / 2 each side when centred
    narrow = [f for f in tight if f.clear_width_m is not None and f.clear_width_m < 0.8]
    assert narrow and all(abs(f.clearance_m - (f.clear_width_m - 0.6) / 2) < 0.01 for f in narrow)


def open_hall() -> Plan:
    """An open-plan building (invented): walls on the west and north only, 20 × 12 m, with a
    free-standing 3 × 2 m block inside; the floor west of the west wall lies outside it."""
    walls = [LineString([(0, 0), (0, 12), (20, 12)])]
    return Plan.from_geometries(walls=walls, solids=[shapely.box(9, 4, 12, 6), shapely.box(19.8, 0, 20, 0.2)])


STATIONS_HALL = [Station("IN", 4.0, 6.0), Station("OUT", 16.0, 8.0)]


def test_no_finding_outside_the_building_envelope():
    # a 2.0 x 1.0 m bed mover needs a 2.24 m circle to turn round (√(l² + w²), FIELD-NOTES): the
    # strips outside the west and north walls are "no-turn" stretches if the exterior is analysed
    # (plans-real #1 showed them outside the Barcelona Pavilion's walls)
    robot = ff.Vehicle(name="bed mover", outline=shapely.box(-1.0, -0.5, 1.0, 0.5), mode="differential")
    site = Site(required_clearance_m=0.0, clearance_reference="none", envelope="none")
    r = run_check(open_hall(), robot, STATIONS_HALL, site=site, heading_step_deg=5.0)
    assert any(f.kind == "no-turn" and f.x < 0 for f in r.findings)     # the exterior strips, when asked for
    assert any(f.kind == "no-turn" and f.y > 12 for f in r.findings)
    r = run_check(open_hall(), robot, STATIONS_HALL, site=Site(required_clearance_m=0.0, clearance_reference="none"),
                  heading_step_deg=5.0)
    hull = shapely.MultiPoint([(0, 0), (0, 12), (20, 12), (20, 0)]).convex_hull
    for f in r.findings:
        assert hull.buffer(r.settings["location_tolerance_m"]).contains(shapely.Point(f.x, f.y)), f.summary
    # and the turnability map does not show floor outside it
    fits = r.plan.geometry_to_drawing(r.turnability["fits"])
    assert fits.difference(hull.buffer(0.1)).area < 1e-6


def test_car_steered_vehicle_is_never_shown_spinning_in_place():
    car = ff.Vehicle(name="forklift", outline=shapely.box(-0.8, -0.5, 1.6, 0.5), mode="car", min_turn_radius_m=1.8)
    robot = ff.rectangle_vehicle(0.8, 0.6, name="robot")
    plan = Plan.from_geometries(walls=[shapely.box(0, 0, 14, 10).exterior])
    stations = [Station("A", 4.0, 5.0), Station("B", 10.0, 5.0)]
    site = Site(required_clearance_m=0.0, clearance_reference="none")
    assert run_check(plan, car, stations, site=site, heading_step_deg=10.0).turnability["rotates"] is None
    assert run_check(plan, robot, stations, site=site, heading_step_deg=10.0).turnability["rotates"].area > 10.0


def test_heading_range_of_a_wall_directions_narrow_cell_is_stated_as_that_heading():
    # a wall direction of -90° gets guard slices at ±0.1°, so its own cell spans -90.05° to -89.95°
    cells = make_heading_cells(5.0, [-90.0])
    free = abs(cells.headings + 90.0) < 1e-9
    assert heading_ranges(free, cells.headings, cells.below, cells.above) == [(-90.0, -90.0)]
    assert format_heading_ranges([(-90.0, -90.0), (85.5, 99.5)]) == "-90° (aligned only), 85.5° to 99.5°"
    wide = abs(cells.headings - 90.0) <= 5.0 + 1e-9
    assert heading_ranges(wide, cells.headings, cells.below, cells.above) == [(82.5, 97.5)]
