"""Hybrid A* for cars and rotate-and-drive for differential bases, in synthetic worlds.

Worlds are shapely polygons of free floor; a pose is free when the vehicle's
rectangle lies inside the floor polygon. Every found path is re-checked at a finer
sampling than the planners use (1 cm, 0.5 deg).
"""

import math

import numpy as np
import pytest
import shapely
from shapely.geometry import box

from floorfit.errors import InputError
from floorfit.motion import (
    OccupancyGrid,
    direction_changes,
    grid_distances,
    grid_heuristic,
    plan_car_path,
    rotate_and_drive,
    sample,
    swept_annulus,
)

# car: rear-axle reference, 0.3 m rear overhang, 1.5 m to the front, 0.8 m wide, R = 2 m
CAR = dict(rear=0.3, front=1.5, width=0.8)
CAR_RADIUS = 2.0
# differential base: 0.9 x 0.6 m about its centre
BASE = dict(rear=0.45, front=0.45, width=0.6)


def make_is_free(floor, rear, front, width):
    """is_free(poses) for a rectangle [-rear, front] x [-width/2, width/2] on ``floor``."""
    shapely.prepare(floor)
    corners = np.array([[-rear, -width / 2], [front, -width / 2],
                        [front, width / 2], [-rear, width / 2]])

    def is_free(poses):
        c, s = np.cos(poses[:, 2])[:, None], np.sin(poses[:, 2])[:, None]
        x = poses[:, 0:1] + c * corners[:, 0] - s * corners[:, 1]
        y = poses[:, 1:2] + s * corners[:, 0] + c * corners[:, 1]
        return shapely.contains(floor, shapely.polygons(np.stack([x, y], axis=-1)))

    return is_free


def assert_free_and_reaches(segments, is_free, start, goal, xy_tol=1e-6, heading_tol=1e-6):
    pts = sample(segments, step_m=0.01, step_deg=0.5)
    assert is_free(pts).all()
    assert np.allclose(pts[0], start, atol=1e-9)
    assert math.hypot(pts[-1, 0] - goal[0], pts[-1, 1] - goal[1]) <= xy_tol
    assert abs((pts[-1, 2] - goal[2] + math.pi) % (2 * math.pi) - math.pi) <= heading_tol
    for a, b in zip(segments, segments[1:]):
        assert np.allclose(a.end, b.start, atol=1e-9)


def corner_world(width, length=14.0):
    """An L of two corridors of ``width``: along +x from x = 0, then up along +y."""
    floor = shapely.union(box(0, 0, length, width), box(length - width, 0, length, length))
    return floor, (0.0, 0.0, length, length)


# --- hybrid A* ---------------------------------------------------------------------------

@pytest.mark.parametrize("reverse", [False, True])
def test_corner_as_wide_as_the_swept_radius_is_taken_forward_in_one_move(reverse):
    inner, outer = swept_annulus(CAR_RADIUS, CAR["width"], CAR["front"], CAR["rear"])
    width = outer + 0.05  # corridors at least the outer swept radius
    floor, bounds = corner_world(width)
    is_free = make_is_free(floor, **CAR)
    start = (1.0, width - CAR_RADIUS, 0.0)
    goal = (14.0 - width + CAR_RADIUS, 11.0, math.pi / 2)
    result = plan_car_path(start, goal, min_turn_radius=CAR_RADIUS, reverse=reverse,
                           is_free=is_free, bounds=bounds, max_expansions=5000)
    assert result.status == "found", result.reason
    assert direction_changes(result.segments) == 0
    assert all(s.direction == "forward" for s in result.segments)
    assert all(s.radius_m >= CAR_RADIUS for s in result.segments if s.kind == "arc")
    assert_free_and_reaches(result.segments, is_free, start, goal,
                            xy_tol=0.05, heading_tol=math.radians(2))


@pytest.mark.parametrize("reverse", [False, True])
def test_corner_too_tight_for_the_body_is_not_found(reverse):
    # A w-wide rectangle passes a right-angle corner between two a-wide corridors only
    # if it is at most 2 sqrt(2) a - 2 w long (Moretti, College Math. J. 33(3), 2002):
    # 1.228 m for a = 1.0, w = 0.8, against a 1.8 m long car. No motion passes.
    floor, bounds = corner_world(1.0, length=8.0)
    is_free = make_is_free(floor, **CAR)
    assert 2 * math.sqrt(2) * 1.0 - 2 * CAR["width"] < CAR["rear"] + CAR["front"]
    result = plan_car_path((1.0, 0.5, 0.0), (7.5, 6.5, math.pi / 2),
                           min_turn_radius=CAR_RADIUS, reverse=reverse, is_free=is_free,
                           bounds=bounds, max_expansions=20000)
    assert result.status == "not-found-within-limits"
    assert result.segments == [] and result.expansions > 0
    assert "searched every reachable cell" in result.reason


def dead_end_world(aisle_width, length):
    """An open yard (10 x 10 m) with an aisle of ``aisle_width`` leaving it along +x."""
    floor = shapely.union(box(0, 0, 10, 10), box(9.9, 4.0, 10 + length, 4.0 + aisle_width))
    return floor, (0.0, 0.0, 10 + length, 10.0)


def test_car_in_a_dead_end_leaves_only_in_reverse():
    # the aisle is narrower than the body diagonal sqrt(l^2 + w^2) = 1.97 m, so no
    # turning round inside it (FIELD-NOTES.md, reversing heading in a corridor)
    aisle = 1.5
    assert aisle < math.hypot(CAR["rear"] + CAR["front"], CAR["width"])
    floor, bounds = dead_end_world(aisle, 6.0)
    is_free = make_is_free(floor, **CAR)
    start, goal = (14.0, 4.0 + aisle / 2, 0.0), (4.0, 5.0, math.pi / 2)
    forward_only = plan_car_path(start, goal, min_turn_radius=CAR_RADIUS, reverse=False,
                                 is_free=is_free, bounds=bounds)
    assert forward_only.status == "not-found-within-limits"
    both = plan_car_path(start, goal, min_turn_radius=CAR_RADIUS, reverse=True,
                         is_free=is_free, bounds=bounds)
    assert both.status == "found", both.reason
    assert both.segments[0].direction == "reverse"
    assert direction_changes(both.segments) >= 1
    assert_free_and_reaches(both.segments, is_free, start, goal,
                            xy_tol=0.05, heading_tol=math.radians(2))


def test_grid_heuristic_guides_the_search_round_a_wall():
    # a wall between start and goal: the obstacle-free car heuristic points into it
    floor = box(0, 0, 16, 16).difference(box(7.0, 0.0, 9.0, 12.0))
    is_free = make_is_free(floor, **CAR)
    start, goal = (3.0, 3.0, math.pi / 2), (13.0, 3.0, -math.pi / 2)
    cell = 0.25
    centres = np.stack(np.meshgrid(np.arange(0, 16.01, cell), np.arange(0, 16.01, cell)), axis=-1)
    # a cell is free for the reference point when a disc of half its diagonal around its
    # centre touches the floor shrunk by nothing: over-approximate with the floor itself
    free = shapely.intersects(floor.buffer(cell), shapely.points(centres))
    grid = OccupancyGrid(free, (0.0, 0.0), cell)
    common = dict(min_turn_radius=CAR_RADIUS, reverse=True, is_free=is_free,
                  bounds=(0, 0, 16, 16), max_expansions=20000)
    guided = plan_car_path(start, goal, heuristic_grid=grid, **common)
    plain = plan_car_path(start, goal, **common)
    assert guided.status == "found" and plain.status == "found"
    assert guided.expansions < plain.expansions
    assert_free_and_reaches(guided.segments, is_free, start, goal,
                            xy_tol=0.05, heading_tol=math.radians(2))


def test_limits_and_bad_input_are_reported():
    floor, bounds = corner_world(3.0)
    is_free = make_is_free(floor, **CAR)
    start, goal = (1.0, 1.5, 0.0), (12.5, 11.0, math.pi / 2)
    capped = plan_car_path(start, goal, min_turn_radius=CAR_RADIUS, reverse=False,
                           is_free=is_free, bounds=bounds, max_expansions=3)
    assert capped.status == "not-found-within-limits"
    assert capped.expansions == 3 and "max_expansions" in capped.reason
    timed = plan_car_path(start, goal, min_turn_radius=CAR_RADIUS, reverse=False,
                          is_free=is_free, bounds=bounds, time_limit_s=1e-9)
    assert timed.status == "not-found-within-limits" and "time_limit_s" in timed.reason
    blocked = plan_car_path((0.1, 1.5, 0.0), goal, min_turn_radius=CAR_RADIUS, reverse=False,
                            is_free=is_free, bounds=bounds)
    assert blocked.status == "not-found-within-limits"
    assert blocked.reason == "the start pose is not free"
    with pytest.raises(InputError, match="outside the search bounds"):
        plan_car_path((-1.0, 1.5, 0.0), goal, min_turn_radius=CAR_RADIUS, reverse=False,
                      is_free=is_free, bounds=bounds)
    with pytest.raises(InputError, match="is_free"):
        plan_car_path(start, goal, min_turn_radius=CAR_RADIUS, reverse=False,
                      is_free=lambda p: np.ones(1, bool) if len(p) == 1 else np.ones(2, bool),
                      bounds=bounds)
    for bad in (dict(min_turn_radius=-1), dict(heading_bins=2.5), dict(goal_tolerance=0.05),
                dict(bounds=(0, 0, 0, 5)), dict(reverse_cost_factor=0.5)):
        kwargs = dict(min_turn_radius=CAR_RADIUS, reverse=False, is_free=is_free, bounds=bounds)
        kwargs.update(bad)
        with pytest.raises(InputError, match=next(iter(bad))):
            plan_car_path(start, goal, **kwargs)


def test_grid_distances_are_octile_paths():
    # 8-connected grid distances: max(dx, dy) + (sqrt 2 - 1) min(dx, dy) cells (the
    # "octile" distance, common practice for grid search)
    grid = OccupancyGrid(np.ones((10, 12), bool), (0.0, 0.0), 0.5)
    dist = grid_distances(grid, (0.0, 0.0))
    rows, cols = np.indices(dist.shape)
    octile = 0.5 * (np.maximum(rows, cols) + (math.sqrt(2) - 1) * np.minimum(rows, cols))
    assert np.allclose(dist, octile)
    # round a wall in column 5, rows 0..7: via cell (row 8, col 5), two octile legs
    free = np.ones((10, 10), bool)
    free[0:8, 5] = False
    dist = grid_distances(OccupancyGrid(free, (0.0, 0.0), 1.0), (0.0, 0.0))
    assert dist[0, 9] == pytest.approx(16 + 9 * (math.sqrt(2) - 1))
    assert math.isinf(dist[0, 5])
    lookup = grid_heuristic(OccupancyGrid(free, (0.0, 0.0), 1.0), (0.0, 0.0))
    assert lookup(np.array([[9.0, 0.0], [-5.0, -5.0]])) == pytest.approx(
        [dist[0, 9] / math.sqrt(4 - 2 * math.sqrt(2)) - math.sqrt(2), 0.0])


# --- rotate and drive --------------------------------------------------------------------

def test_differential_base_in_a_dead_end_leaves_only_in_reverse():
    # aisle 0.8 m < sqrt(0.9^2 + 0.6^2) = 1.0817 m: the base cannot turn round in it
    # (FIELD-NOTES.md, reversing heading in a straight corridor)
    aisle = 0.8
    assert aisle < math.hypot(0.9, 0.6)
    floor, _bounds = dead_end_world(aisle, 5.0)
    is_free = make_is_free(floor, **BASE)
    waypoints = np.array([[14.3, 4.4, 0.0], [11.0, 4.4, 0.0],
                          [5.0, 4.5, math.pi / 2], [5.0, 8.0, math.pi / 2]])
    assert is_free(waypoints).all()
    assert rotate_and_drive(waypoints, reverse=False, is_free=is_free) is None
    segs = rotate_and_drive(waypoints, reverse=True, is_free=is_free)
    assert segs is not None
    assert {s.kind for s in segs} <= {"rotate", "straight"}
    assert segs[0].direction == "reverse" or segs[1].direction == "reverse"
    assert_free_and_reaches(segs, is_free, waypoints[0], waypoints[-1], 1e-9, 1e-9)


def test_sideways_step_in_a_pocket_uses_small_manoeuvres():
    # two 0.66 m corridors offset by 0.1 m overlap over 1 m: the 0.9 m base must shift
    # sideways inside a 1.0 x 0.76 m pocket where it can tilt only a few degrees
    floor = shapely.union(box(0, 0, 3, 0.66), box(2, 0.1, 5, 0.76))
    is_free = make_is_free(floor, **BASE)
    waypoints = np.array([[0.6, 0.33, 0.0], [2.5, 0.33, 0.0], [2.5, 0.43, 0.0], [4.4, 0.43, 0.0]])
    assert is_free(waypoints).all()
    assert rotate_and_drive(waypoints, reverse=False, is_free=is_free) is None
    segs = rotate_and_drive(waypoints, reverse=True, is_free=is_free)
    assert segs is not None
    assert max(abs(s.angle_deg) for s in segs) < 10.0
    assert_free_and_reaches(segs, is_free, waypoints[0], waypoints[-1], 1e-9, 1e-9)


def test_dense_holonomic_path_becomes_few_rotations():
    floor, _bounds = corner_world(1.2, length=8.0)
    is_free = make_is_free(floor, **BASE)
    leg1 = np.c_[np.linspace(0.6, 7.4, 60), np.full(60, 0.6), np.zeros(60)]
    leg2 = np.c_[np.full(60, 7.4), np.linspace(0.6, 7.4, 60), np.full(60, math.pi / 2)]
    waypoints = np.concatenate([leg1, leg2])
    segs = rotate_and_drive(waypoints, reverse=False, is_free=is_free)
    assert segs is not None
    assert [s.kind for s in segs] == ["straight", "rotate", "straight"]
    assert segs[1].angle_deg == pytest.approx(90.0)
    assert_free_and_reaches(segs, is_free, waypoints[0], waypoints[-1], 1e-9, 1e-9)
    with pytest.raises(InputError, match="waypoints"):
        rotate_and_drive(waypoints[:, :2], reverse=False, is_free=is_free)
