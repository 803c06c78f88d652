"""Reachability against textbook closed forms, on both sides of each threshold.

Every "reachable" answer is re-checked by sampling the returned motion densely against
the obstacles (floorfit.testing.assert_path_clear).
"""

import math

import numpy as np
import pytest
import shapely
from scipy.optimize import minimize_scalar
from shapely.geometry import LineString, Polygon

import floorfit as ff
from floorfit.plan.model import Plan
from floorfit.testing import assert_path_clear

INCH = 0.0254


def corner_plan(a: float, b: float, arm: float = 6.0) -> Plan:
    """Closed L-shaped corridor: horizontal arm of width a (y in [0, a], x ≤ b), vertical arm of width b."""
    outline = Polygon([(-arm, 0), (b, 0), (b, a + arm), (0, a + arm), (0, a), (-arm, a)])
    return Plan.from_geometries(walls=[outline])


def moretti_length(a: float, b: float, w: float) -> float:
    # Longest rectangle of width w that turns a right-angle corner between corridors of widths
    # a and b: L* = min_t a/sin t + b/cos t − w/(sin t cos t)  (C. Moretti, "Moving a couch
    # around a corner", College Math. J. 33(3), 2002)
    f = lambda t: a / math.sin(t) + b / math.cos(t) - w / (math.sin(t) * math.cos(t))  # noqa: E731
    r = minimize_scalar(f, bounds=(1e-3, math.pi / 2 - 1e-3), method="bounded", options={"xatol": 1e-12})
    return float(r.fun)


def test_moretti_formula_instances():
    # FIELD-NOTES values, from the cited closed form; and the thin-rod limit (a^(2/3) + b^(2/3))^(3/2)
    assert moretti_length(3, 8, 1) == pytest.approx(12.856318, abs=1e-5)
    assert moretti_length(1, 1, 0.2) == pytest.approx(2.428427, abs=1e-5)
    assert moretti_length(1.5, 2.0, 0.6) == pytest.approx(3.724603, abs=1e-5)
    assert moretti_length(1.5, 2.0, 0.0) == pytest.approx((1.5 ** (2 / 3) + 2.0 ** (2 / 3)) ** 1.5, abs=1e-6)


def _route_corner(a, b, w, length, step=None):
    plan = corner_plan(a, b)
    veh = ff.rectangle_vehicle(length, w)
    start = (-4.0, a / 2, 0.0)
    goal = (b / 2, a + 4.0, 90.0)
    return plan, veh, ff.find_route(plan, veh, start, goal, heading_step_deg=step)


@pytest.mark.parametrize("a, b, w", [(1.0, 1.0, 0.2), (1.5, 2.0, 0.6), (1.0, 1.0, 0.1)])
def test_rectangle_around_corner_both_sides_of_closed_form(a, b, w):
    from floorfit.cspace.slices import default_step

    Lstar = moretti_length(a, b, w)
    step = default_step(corner_plan(a, b), ff.rectangle_vehicle(Lstar, w))
    # at the default step everywhere (an explicit step: no coarse try)
    plan, veh, r = _route_corner(a, b, w, Lstar - 0.2, step)
    # margin tied to the stated tolerance: the sound bound grows the vehicle by ≤ tolerance_m,
    # which shortens the admissible length by at most ~6 × tolerance at a 45° pinch
    assert 6 * r.tolerance_m < 0.2
    assert r.status == "reachable", r.notes
    assert_path_clear(plan, veh, r.path)
    assert np.allclose(r.path[0], (-4.0, a / 2, 0.0)) and np.allclose(r.path[-1], (b / 2, a + 4.0, 90.0))
    # the default query (coarse slices first, then refined near the pinch) answers the same, with a clear path
    _, _, q = _route_corner(a, b, w, Lstar - 0.2)
    assert q.status == "reachable", q.notes
    assert_path_clear(plan, veh, q.path)
    plan, veh, r = _route_corner(a, b, w, Lstar + 0.2, step)
    assert 6 * r.tolerance_m < 0.2
    assert r.status == "unreachable"
    # where it got stuck: in the horizontal arm, short of the corner
    assert r.stuck is not None and r.stuck["distance_to_goal_m"] > 1.0
    assert _route_corner(a, b, w, Lstar + 0.2)[2].status == "unreachable"


def test_ada_clear_floor_space_cannot_turn_between_36in_passages():
    # FIELD-NOTES: a 30 × 48 in clear floor space (ADA 2010 §305.3) cannot make a 90° turn between two
    # 36 in passages: Moretti's L* = 2√2·36 − 2·30 = 41.82 in < 48 in.
    a = 36 * INCH
    w = 30 * INCH
    assert moretti_length(a, a, w) / INCH == pytest.approx(2 * math.sqrt(2) * 36 - 60, abs=1e-4)
    _, _, r = _route_corner(a, a, w, 48 * INCH)
    assert r.status == "unreachable"


def corridor_plan(width: float, length: float = 6.0) -> Plan:
    return Plan.from_geometries(walls=[shapely.box(0, 0, length, width)])


@pytest.mark.parametrize("length, w", [(0.9, 0.6), (1.2, 0.5)])
def test_reversing_heading_in_straight_corridor_needs_diagonal(length, w):
    # Reversing heading in a straight corridor needs W ≥ √(l² + w²) (classic; FIELD-NOTES:
    # 0.9 × 0.6 → 1.0817 m)
    diag = math.hypot(length, w)
    veh = ff.rectangle_vehicle(length, w)
    wide = corridor_plan(diag + 0.06)
    r = ff.find_route(wide, veh, (3.0, (diag + 0.06) / 2, 0.0), (3.0, (diag + 0.06) / 2, 180.0))
    assert r.status == "reachable"
    assert_path_clear(wide, veh, r.path)
    narrow = corridor_plan(diag - 0.06)
    r = ff.find_route(narrow, veh, (3.0, (diag - 0.06) / 2, 0.0), (3.0, (diag - 0.06) / 2, 180.0))
    assert r.status == "unreachable"
    # but it can still drive from one end to the other at its heading
    r = ff.find_route(narrow, veh, (1.0, (diag - 0.06) / 2, 0.0), (5.0, (diag - 0.06) / 2, 0.0))
    assert r.status == "reachable"


def round_room(diameter: float, n: int = 180) -> Plan:
    # the room's wall polygon is circumscribed about the clear circle, so the clear radius is exact
    R = diameter / 2 / math.cos(math.pi / n)
    t = np.linspace(0, 2 * np.pi, n, endpoint=False)
    return Plan.from_geometries(walls=[LineString(np.c_[R * np.cos(t), R * np.sin(t)][list(range(n)) + [0]])])


def spin_region(slices, inside):
    """Where a full spin in place is possible inside ``inside``: the intersection of all sound slices."""
    region = inside
    for k in range(len(slices)):
        region = region.intersection(slices.free(k))
    return region


def test_rotation_in_place_needs_clear_circle_ada_turning_space():
    # ADA 2010 §304.3.1: 60 in turning circle. §305.3 clear floor space 30 × 48 in rotating about
    # its centre needs a circle of radius max|vertex − pivot| = √(15² + 24²) = 28.30 in (fits);
    # pivoting 12 in from the rear needs √(36² + 15²) = 39 in (does not) (FIELD-NOTES).
    room = round_room(60 * INCH)
    centre = ff.rectangle_vehicle(48 * INCH, 30 * INCH)
    rear = ff.rectangle_vehicle(48 * INCH, 30 * INCH, reference_to_front=36 * INCH)
    assert centre.radius_m / INCH == pytest.approx(math.hypot(15, 24), abs=1e-9)
    assert rear.radius_m / INCH == pytest.approx(39.0, abs=1e-9)
    s_centre = ff.build_slices(room, centre)
    s_rear = ff.build_slices(room, rear)
    inside = shapely.Point(0, 0).buffer(0.8)
    region = spin_region(s_centre, inside)
    assert region.contains(shapely.Point(0, 0))
    # the spin region is the disc of radius 30 in − 28.30 in (less the tolerance)
    radius = math.sqrt(region.area / math.pi)
    assert (30 - math.hypot(15, 24)) * INCH - s_centre.tolerance_m - 1e-3 <= radius <= (30 - math.hypot(15, 24)) * INCH
    assert spin_region(s_rear, inside).is_empty
    # with translation the rear-pivot chair can still reverse (its diagonal, 56.6 in, is < 60 in)
    # its reference point sits 12 in behind the centre: start centred facing +x, end centred facing −x
    r = ff.find_route(room, rear, (-12 * INCH, 0.0, 0.0), (12 * INCH, 0.0, 180.0))
    assert r.status == "reachable"
    assert_path_clear(room, rear, r.path)


def test_route_json_fields_and_frame_offset():
    # drawing far from the origin: the answer comes back in the drawing frame
    ox, oy = 5.0e5, -2.0e5
    plan = Plan.from_geometries(walls=[shapely.box(ox, oy, ox + 6, oy + 2)], origin=(ox, oy))
    veh = ff.rectangle_vehicle(0.9, 0.6, margin=0.05)
    r = ff.find_route(plan, veh, (ox + 1, oy + 1, 0), (ox + 5, oy + 1, 90))
    d = r.to_dict()
    assert d["reachable"] is True and d["status"] == "reachable"
    assert d["path"][0] == [ox + 1, oy + 1, 0.0] and d["path"][-1] == [ox + 5, oy + 1, 90.0]
    assert d["tolerance_m"] > 0 and d["settings"]["margin_m"] == 0.05 and d["settings"]["heading_step_deg"] > 0
    assert_path_clear(plan, veh, r.path)


def test_start_and_goal_in_collision_are_reported():
    plan = corridor_plan(1.0)
    veh = ff.rectangle_vehicle(0.9, 0.6)
    assert ff.find_route(plan, veh, (0.2, 0.5, 0), (3, 0.5, 0)).status == "start-blocked"
    assert ff.find_route(plan, veh, (3, 0.5, 0), (5.9, 0.5, 0)).status == "goal-blocked"
    # free but not reachable: it cannot turn to 90° in a corridor narrower than its diagonal
    r = ff.find_route(plan, veh, (3, 0.5, 0), (3, 0.5, 90))
    assert r.status == "unreachable" and r.stuck["distance_to_goal_m"] < 0.05


def test_building_drawn_at_odd_angle_gets_wall_aligned_headings():
    # a corridor only 2 cm wider than the vehicle, drawn at 17.5°: only headings within about
    # ±1.3° of the wall direction fit (FIELD-NOTES tilt formula), so the wall direction must be a slice
    length, w = 0.9, 0.6
    W = 0.62
    tilt = math.degrees(math.asin(W / math.hypot(length, w)) - math.atan2(w, length))
    assert tilt == pytest.approx(1.28, abs=0.01)   # FIELD-NOTES: 0.9 × 0.6 in 0.62 m → 1.28°
    corridor = shapely.affinity.rotate(shapely.box(0, 0, 8, W), 17.5, origin=(0, 0))
    plan = Plan.from_geometries(walls=[corridor])
    veh = ff.rectangle_vehicle(length, w, margin=0.0)
    c = shapely.affinity.rotate(shapely.Point(1.0, W / 2), 17.5, origin=(0, 0))
    g = shapely.affinity.rotate(shapely.Point(7.0, W / 2), 17.5, origin=(0, 0))
    r = ff.find_route(plan, veh, (c.x, c.y, 17.5), (g.x, g.y, 17.5), heading_step_deg=5.0)
    assert r.status == "reachable"
    assert 17.5 in set(np.round(r.path[:, 2], 6))
    assert_path_clear(plan, veh, r.path)
