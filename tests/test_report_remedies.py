"""Remedies are true: apply the stated change to the drawing and check again.

Small invented drawings, one per finding kind: the full remedy removes the finding, half of
it leaves the finding standing.
"""

from __future__ import annotations

import numpy as np
import pytest
from shapely.geometry import LineString, Point, Polygon, box
from shapely.ops import unary_union

from floorfit.analysis.check import run_check
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.plan.stations import Station
from floorfit.report.remedies import compute_remedy
from floorfit.vehicles.rigid import rectangle_vehicle

ROBOT = rectangle_vehicle(0.8, 0.6, margin=0.05, mode="differential", name="0.8 x 0.6 robot")
BOTH_SIDES = [Station("A", 3.0, 2.0, None, 5.0), Station("B", 3.0, 6.0, None, 5.0)]


def _door_plan(left: float, right: float) -> Plan:
    """A 6 × 8 m room split at y = 4 by a wall with an opening from x = left to x = right."""
    walls = [LineString([(0, 0), (6, 0), (6, 8), (0, 8), (0, 0)]),
             LineString([(0, 4), (left, 4)]), LineString([(right, 4), (6, 4)])]
    return Plan.from_geometries(walls, [])


def _only(result, kind):
    found = [f for f in result.findings if f.kind == kind]
    assert len(found) == 1, [(f.kind, f.cause, f.summary) for f in result.findings]
    return found[0]


def _kinds(result, kind):
    return [f for f in result.findings if f.kind == kind]


def test_blocked_doorway_widened_by_the_stated_amount_lets_the_vehicle_through():
    site = Site(required_clearance_m=0.0)
    left, right = 2.7, 3.3                                   # a 0.60 m opening; the robot needs 0.70 m
    result = run_check(_door_plan(left, right), ROBOT, BOTH_SIDES, site=site)
    f = _only(result, "blocked")
    assert f.cause == "width"
    remedy = compute_remedy(result, f)
    assert remedy.action == "widen" and remedy.target_m >= f.needed_width_m
    assert remedy.change_m == pytest.approx(remedy.target_m - f.clear_width_m)
    assert f"{remedy.target_m:.2f} m" in remedy.text and f"{remedy.change_m * 100:.0f} cm more" in remedy.text
    # the stated remedy: move one bounding edge (the right jamb) back by change_m
    fixed = run_check(_door_plan(left, right + remedy.change_m), ROBOT, BOTH_SIDES, site=site)
    assert not _kinds(fixed, "blocked") and fixed.reachable["A"]["B"]
    half = run_check(_door_plan(left, right + remedy.change_m / 2), ROBOT, BOTH_SIDES, site=site)
    assert _kinds(half, "blocked") and not half.reachable["A"]["B"]


def test_tight_doorway_widened_by_the_stated_amount_gives_the_clearance_asked():
    site = Site(required_clearance_m=0.45)
    left, right = 2.4, 3.6                                   # 1.20 m: passable, 0.30 m each side
    result = run_check(_door_plan(left, right), ROBOT, BOTH_SIDES, site=site)
    f = _only(result, "tight")
    remedy = compute_remedy(result, f)
    assert remedy.action == "widen"
    assert remedy.target_m >= f.needed_width_m == pytest.approx(0.6 + 2 * 0.45)
    fixed = run_check(_door_plan(left, right + remedy.change_m), ROBOT, BOTH_SIDES, site=site)
    assert not _kinds(fixed, "tight")
    half = run_check(_door_plan(left, right + remedy.change_m / 2), ROBOT, BOTH_SIDES, site=site)
    assert _kinds(half, "tight")


def _dead_end_plan(width: float) -> Plan:
    """A 6 × 6 m room with a dead-end aisle ``width`` wide and 4 m long off its right wall."""
    y0, y1 = 2.55, 2.55 + width
    walls = [LineString([(0, 0), (6, 0), (6, y0), (10, y0), (10, y1), (6, y1), (6, 6), (0, 6), (0, 0)])]
    return Plan.from_geometries(walls, [])


def test_no_turn_stretch_widened_to_the_stated_diameter_is_gone():
    site = Site(required_clearance_m=0.0)
    stations = [Station("A", 2.0, 2.0, None, 5.0)]
    result = run_check(_dead_end_plan(0.9), ROBOT, stations, site=site)
    f = _only(result, "no-turn")
    remedy = compute_remedy(result, f)
    assert remedy.action == "turn-room"
    # the turn-round circle of a reversing base is its footprint's smallest enclosing circle
    assert remedy.target_m >= 2 * np.hypot(0.45, 0.35)
    assert remedy.change_m == pytest.approx(remedy.target_m - 0.9, abs=0.03)   # widest spot: the aisle
    assert remedy.nearest_turn is not None and remedy.nearest_turn[0] < 6.0     # back in the room
    fixed = run_check(_dead_end_plan(0.9 + remedy.change_m), ROBOT, stations, site=site)
    assert not _kinds(fixed, "no-turn")
    half = run_check(_dead_end_plan(0.9 + remedy.change_m / 2), ROBOT, stations, site=site)
    assert _kinds(half, "no-turn")


def test_no_turn_dead_end_opened_by_the_stated_circles_is_gone():
    site = Site(required_clearance_m=0.0)
    stations = [Station("A", 2.0, 2.0, None, 5.0)]
    width = 0.9
    room = Polygon(_dead_end_plan(width).walls[0].coords)
    result = run_check(Plan.from_geometries([room.exterior], []), ROBOT, stations, site=site)
    f = _only(result, "no-turn")
    remedy = compute_remedy(result, f)
    assert 1 <= len(remedy.circles) <= 6

    def opened(diameter):
        holes = [Point(cx, cy).buffer(diameter / 2, 64) for cx, cy, _ in remedy.circles]
        return Plan.from_geometries([unary_union([room, *holes]).exterior], [])

    fixed = run_check(opened(remedy.target_m), ROBOT, stations, site=site)
    assert not _kinds(fixed, "no-turn")
    half = run_check(opened((width + remedy.target_m) / 2), ROBOT, stations, site=site)
    assert _kinds(half, "no-turn")


def test_height_block_raised_to_the_stated_height_is_gone():
    # a 2 m wide corridor between two rooms with a beam across it starting 2.1 m above the floor
    site = Site(required_clearance_m=0.0)
    tall = rectangle_vehicle(0.8, 0.6, margin=0.05, mode="differential", name="tall robot", height_m=2.4)
    walls = [LineString([(0, 0), (6, 0), (6, 8), (0, 8), (0, 0)]),
             LineString([(0, 4), (2, 4)]), LineString([(4, 4), (6, 4)])]

    def plan(bottom):
        return Plan.from_geometries(walls, [box(2, 3.9, 4, 4.1)],
                                    wall_heights=np.tile([0.0, np.inf], (len(walls), 1)),
                                    solid_heights=np.array([[bottom, 2.6]]))

    result = run_check(plan(2.1), tall, BOTH_SIDES, site=site)
    f = _only(result, "blocked")
    assert f.cause == "height"
    remedy = compute_remedy(result, f)
    assert remedy.action == "raise" and remedy.target_m == pytest.approx(2.4)
    assert remedy.change_m == pytest.approx(0.3)
    fixed = run_check(plan(2.1 + remedy.change_m), tall, BOTH_SIDES, site=site)
    assert not _kinds(fixed, "blocked") and fixed.reachable["A"]["B"]
    half = run_check(plan(2.1 + remedy.change_m / 2), tall, BOTH_SIDES, site=site)
    assert _kinds(half, "blocked")
