"""Maneuver findings, swept routes and turn-around circles for the site check (floorfit.analysis.maneuvers).

Small L-shaped corridors and 5° slices keep these fast on shared 2-core machines.
"""

import math

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon

import floorfit as ff
from floorfit.analysis.findings import Station
from floorfit.analysis.maneuvers import (
    maneuver_findings,
    route_sweeps,
    swept_area,
    turnaround_circle,
)
from floorfit.cspace.collision import place_footprint
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slices import build_slices, choose_headings
from floorfit.errors import SiteError
from floorfit.motion import sample, swept_annulus
from floorfit.plan.model import Plan
from floorfit.testing import assert_path_clear

ARM = 12.0
R, FRONT, REAR, WIDTH = 2.0, 1.5, 0.3, 0.8      # tug: rear-axle reference, R = 2 m


def _tug(reverse=True):
    return ff.rectangle_vehicle(FRONT + REAR, WIDTH, reference_to_front=FRONT, mode="car", min_turn_radius_m=R,
                                reverse=reverse)


def _corner_site(width, vehicle):
    """An L of corridors ``width`` wide; A in the lower arm facing +x, B in the upright arm facing +y."""
    outline = Polygon([(0, 0), (ARM, 0), (ARM, ARM), (ARM - width, ARM), (ARM - width, width), (0, width)])
    plan = Plan.from_geometries(walls=[outline])
    stations = [Station("A", 2.0, width / 2, 0.0), Station("B", ARM - width / 2, ARM - 2.5, 90.0)]
    cells = choose_headings(plan, vehicle, heading_step_deg=5.0, extra_headings=[0.0, 90.0])
    slices = build_slices(plan, vehicle, cells=cells)
    return plan, stations, slices, build_roadmap(slices)


@pytest.fixture(scope="module")
def tight():
    veh = _tug()
    return (veh, *_corner_site(1.9, veh))


@pytest.fixture(scope="module")
def tight_check(tight):
    """maneuver_findings on the 1.9 m corner (run once: the searches take a second or two)."""
    veh, plan, stations, slices, G = tight
    drives, notes = {}, []
    findings = maneuver_findings(plan, veh, slices, stations, roadmap=G, notes=notes, pair_drives=drives)
    return findings, drives, notes


def test_a_corner_needing_reversing_is_a_maneuver_finding_at_the_first_cusp(tight, tight_check):
    veh, plan, *_ = tight
    findings, drives, _ = tight_check
    ab = drives[("A", "B")]
    assert ab.status == "found" and not ab.forward_found and ab.direction_changes >= 1
    mine = [f for f in findings if "A → B" in f.summary]
    assert len(mine) == 1
    f = mine[0]
    assert f.kind == "maneuver" and f.cause == "reversing" and not f.cuts_off
    assert f"A → B needs {ab.direction_changes} direction change" in f.summary
    # located at the first change of direction, which lies at the corner (x beyond the inner corner - R)
    cx, cy, _ = ab.drive.cusps()[0]
    assert (f.x, f.y) == pytest.approx(plan.to_drawing(cx, cy))
    assert cx > ARM - 2.0 - R
    assert f.geometry is not None and f.extent is not None
    # the maneuver itself is clear of the walls
    path = ab.drive.samples.copy()
    path[:, :2] += plan.origin
    assert_path_clear(plan, veh, path)


def test_a_corner_as_wide_as_the_swept_annulus_gives_no_finding_for_that_turn():
    # outer swept radius sqrt((R + w/2)^2 + d^2) (common practice, vehicle turning geometry) plus slack
    _, outer = swept_annulus(R, WIDTH, FRONT, REAR)
    veh = _tug()
    plan, stations, slices, G = _corner_site(outer + 0.1, veh)
    drives = {}
    findings = maneuver_findings(plan, veh, slices, stations, roadmap=G, pair_drives=drives)
    assert drives[("A", "B")].forward_found
    assert not [f for f in findings if "A → B" in f.summary]


def test_forward_only_car_without_a_path_gets_a_not_found_finding(tight):
    _, plan, stations, slices, G = tight
    veh = _tug(reverse=False)
    findings = maneuver_findings(plan, veh, slices, stations, roadmap=G)
    causes = {f.cause for f in findings}
    assert causes == {"not-found-within-limits"}
    assert all(f.kind == "maneuver" and "may not reverse" in f.summary for f in findings)


def test_other_modes_have_no_maneuver_findings(tight):
    _, plan, stations, slices, G = tight
    diff = ff.rectangle_vehicle(0.9, 0.6, mode="differential")
    assert maneuver_findings(plan, diff, slices, stations, roadmap=G) == []


def test_route_sweep_covers_every_footprint_along_the_route(tight, tight_check):
    veh, plan, stations, slices, G = tight
    _, drives, _ = tight_check
    (route,) = route_sweeps(plan, veh, slices, stations, [("A", "B")], roadmap=G, pair_drives=drives)
    assert route["from"] == "A" and route["to"] == "B" and route["status"] == "found"
    assert route["direction_changes"] == drives[("A", "B")].direction_changes
    path = route["path"]
    assert path.shape[1] == 3 and np.allclose(path[0], (2.0, 1.9 / 2, 0.0))      # drawing frame
    # brute force: the footprint at 2 mm / 0.1° samples of the true motion (local frame)
    dense = sample(drives[("A", "B")].drive.segments, 0.002, 0.1)
    dense[:, 2] = np.degrees(dense[:, 2])
    brute = shapely.union_all(place_footprint(veh.footprint, dense))
    swept = route["swept"]
    assert brute.difference(swept).area < 1e-8                 # covers the swept area
    assert swept.area - brute.area < swept.length * 0.005       # and exceeds it by a thin rim only
    assert route["swept_tolerance_m"] < 0.001
    assert_path_clear(plan, veh, path)


def test_route_sweep_of_an_omni_vehicle_and_unknown_names(tight):
    _, plan, stations, *_ = tight
    omni = ff.rectangle_vehicle(0.6, 0.5)
    oslices = build_slices(plan, omni, cells=choose_headings(plan, omni, heading_step_deg=5.0,
                                                             extra_headings=[0.0, 90.0]))
    (route,) = route_sweeps(plan, omni, oslices, stations, [("B", "A")])
    assert route["status"] == "found" and route["segments"] == [] and route["direction_changes"] == 0
    local = route["path"] - [*plan.origin, 0.0]
    assert shapely.covers(route["swept"], place_footprint(omni.footprint, local)).all()
    assert_path_clear(plan, omni, route["path"])
    with pytest.raises(SiteError, match="unknown station 'C'"):
        route_sweeps(plan, omni, oslices, stations, [("A", "C")])


def test_swept_area_of_a_pure_rotation_is_the_disc_of_the_footprint_radius():
    # rotating a full turn about the reference point sweeps the disc of radius max|vertex|
    # (FIELD-NOTES: rotating in place about a pivot needs a clear circle of radius max|vertex - pivot|)
    veh = ff.rectangle_vehicle(0.9, 0.6, mode="differential")
    poses = np.c_[np.zeros(181), np.zeros(181), np.linspace(0.0, 360.0, 181)]
    area, bulge = swept_area(veh, poses, step_m=0.05, step_deg=2.0)
    rho = math.hypot(0.45, 0.3)
    assert math.pi * rho ** 2 <= area.area <= math.pi * (rho + bulge + 1e-3) ** 2


INCH = 0.0254


def test_turnaround_circles_per_motion_mode():
    # forward-only car: a full circle at R sweeps the annulus' outer radius sqrt((R + w/2)^2 + d^2)
    # (common practice, vehicle turning geometry; FIELD-NOTES R 2.0, w 0.8, d 1.5 -> 2.830194)
    car = ff.rectangle_vehicle(1.5, 0.8, reference_to_front=1.5, mode="car", min_turn_radius_m=2.0, reverse=False)
    centre, radius, _ = turnaround_circle(car)
    assert radius == pytest.approx(2.830194, abs=1e-6) and abs(centre[1]) == pytest.approx(2.0)
    # forward-only differential: rotation in place about its reference point. FIELD-NOTES: a
    # 30 x 48 in rectangle pivoting 12 in from the rear needs a 78 in circle
    chair = ff.rectangle_vehicle(48 * INCH, 30 * INCH, reference_to_front=36 * INCH, mode="differential",
                                 reverse=False)
    centre, radius, _ = turnaround_circle(chair)
    assert 2 * radius / INCH == pytest.approx(78.0, abs=1e-6) and np.allclose(centre, 0)
    # reversing bases: the smallest enclosing circle; for a rectangle its diameter is the
    # diagonal sqrt(l² + w²), the width a corridor needs for reversing (FIELD-NOTES: 0.9 x 0.6 -> 1.0817 m)
    base = ff.rectangle_vehicle(0.9, 0.6, reference_to_front=0.7, mode="differential", reverse=True)
    centre, radius, _ = turnaround_circle(base)
    assert 2 * radius == pytest.approx(1.0817, abs=1e-4) and centre == pytest.approx([0.25, 0.0], abs=1e-6)
    _, radius, _ = turnaround_circle(ff.rectangle_vehicle(1.0, 0.5, mode="fixed", fixed_heading_deg=0.0))
    assert radius == math.inf
