"""Faster drive conversion gives the same answers: the lazily made steering candidates, the kept
point-in-cell answers of the exact check, the boxed car search tools; and the local repair of a
differential path's direction changes (route queries) keeps the path exact and joined.

Small plan, 5° slices: fast on 2 cores.
"""

import math

import numpy as np
import pytest
import shapely
import shapely.affinity
from shapely.geometry import Polygon, box

import floorfit as ff
from floorfit.cspace.raster import fill_polygons
from floorfit.cspace.slices import build_slices
from floorfit.motion import rotate, straight
from floorfit.motion.drivable import FOUND, DriveLimits, DrivePlan, cell_tilts_rad
from floorfit.motion.drivable_car import reference_grid, search_box_tools
from floorfit.motion.route_query import _clusters, _cusp_distances, _local_repair, _split_at
from floorfit.motion.segments import direction_changes, merge_segments, total_length
from floorfit.motion.slice_checks import ExactSliceCheck, SliceMotionCheck
from floorfit.motion.subdivision import differential_steer, subdivide
from floorfit.plan.model import Plan
from floorfit.testing import assert_path_clear


@pytest.fixture(scope="module")
def world():
    room = box(0, 0, 8, 6)
    solids = [box(2.0, 2.0, 2.6, 4.2), Polygon([(5, 1), (6.2, 1.4), (5.6, 2.4)]), box(4.0, 4.5, 4.3, 6.0)]
    origin = (300.0, -40.0)

    def move(g):
        return shapely.affinity.translate(g, *origin)

    plan = Plan.from_geometries(walls=[move(room)], solids=[move(g) for g in solids], origin=origin)
    veh = ff.rectangle_vehicle(0.8, 0.5, reference_to_front=0.6, mode="differential")
    slices = build_slices(plan, veh, heading_step_deg=5.0)
    return plan, veh, slices


def test_lazy_steering_candidates_give_the_same_subdivision_as_a_list(world):
    _, _, slices = world
    steer = differential_steer(True, cell_tilts_rad(slices))
    way = np.array([[0.8, 0.8, 0.0], [3.5, 1.2, 1.2], [3.2, 4.9, 2.6], [7.2, 5.2, -0.4], [7.0, 0.8, -1.5]])
    results = []
    for how in (steer, lambda a, b: list(steer(a, b))):
        exact = ExactSliceCheck(slices)
        res = subdivide(way, steer=how, free=exact.free, max_depth=18, max_checks=30_000)
        results.append(res)
    lazy, listed = results
    assert lazy.segments is not None and listed.segments is not None
    assert (lazy.checks, lazy.depth) == (listed.checks, listed.depth)
    assert [(s.kind, s.start, s.end) for s in lazy.segments] == [(s.kind, s.start, s.end) for s in listed.segments]


def test_lazy_candidates_stop_at_the_same_check_count(world):
    _, _, slices = world
    steer = differential_steer(True, cell_tilts_rad(slices))
    way = np.array([[1.0, 3.0, 0.0], [3.5, 3.0, 0.0]])       # through a solid: never free
    counts = []
    for how in (steer, lambda a, b: list(steer(a, b))):
        res = subdivide(way, steer=how, free=ExactSliceCheck(slices).free, max_depth=18, max_checks=40)
        counts.append((res.segments is None, res.limit, res.checks, res.failed_step))
    assert counts[0] == counts[1]
    assert counts[0][1] == "max_checks" and counts[0][2] == 40


def test_rotation_answers_kept_per_position_equal_fresh_ones(world):
    _, _, slices = world
    rng = np.random.default_rng(5)
    kept = ExactSliceCheck(slices)
    pts = [(rng.uniform(0.3, 7.7), rng.uniform(0.3, 5.7)) for _ in range(40)]
    for _ in range(400):
        x, y = pts[rng.integers(len(pts))]
        h0, dh = rng.uniform(-400, 400), rng.uniform(-380, 380)
        assert kept.rotation_free(x, y, h0, dh) == ExactSliceCheck(slices).rotation_free(x, y, h0, dh)
    assert 0 < len(kept._points) <= len(pts)        # one row of cell answers per position


def test_cell_of_one_heading_is_the_vectorised_answer(world):
    _, _, slices = world
    check = ExactSliceCheck(slices)
    rng = np.random.default_rng(2)
    starts = check._starts
    hs = np.concatenate([rng.uniform(-1000, 1000, 3000), starts, starts + 360.0, np.nextafter(starts, -np.inf)])
    assert [check._cell_of_one(h) for h in hs] == check._cell_of(hs).tolist()


def test_boxed_sampled_check_answers_as_the_whole_one_inside_the_box(world):
    _, _, slices = world
    limits = DriveLimits()
    box_ = (1.0, 0.5, 4.5, 3.5)
    sampled, grid = search_box_tools(slices, 0.5, limits, box_)
    whole = SliceMotionCheck(slices, limits.check_step_m, limits.check_step_deg, extra_margin_m=sampled.margin_m
                             - 0.5 * limits.check_step_m - 1e-9)
    rng = np.random.default_rng(7)
    poses = np.column_stack([rng.uniform(box_[0], box_[2], 3000), rng.uniform(box_[1], box_[3], 3000),
                             rng.uniform(-math.pi, math.pi, 3000)])
    got = sampled.is_free(poses)
    assert got.any() and not got.all()
    assert np.array_equal(got, whole.is_free(poses))
    # the grid of the box: the same cells as filling every component over the box
    full = np.zeros_like(grid.free)
    x0, y0 = grid.origin[0] - 0.5 * grid.cell_m, grid.origin[1] - 0.5 * grid.cell_m
    for comps in slices.components:
        if len(comps):
            full |= fill_polygons(comps, x0, y0, grid.cell_m, full.shape[1], full.shape[0])
    from scipy import ndimage
    full = ndimage.binary_dilation(full, structure=np.ones((3, 3), bool))
    assert np.array_equal(grid.free, full)
    assert np.array_equal(reference_grid(slices, 0.2, box=slices.domain.bounds).free,
                          reference_grid(slices, 0.2).free)


def test_split_at_and_clusters():
    segs = [rotate((0.0, 0.0, 0.0), 0.3), straight((0.0, 0.0, 0.3), 2.0)]
    segs = segs + [straight(segs[-1].end, -1.0)]
    cut, i = _split_at(segs, 0.5)
    assert i == 2 and len(cut) == 4
    assert math.isclose(cut[1].length_m, 0.5) and math.isclose(cut[2].length_m, 1.5)
    assert cut[2].end == pytest.approx(segs[1].end)
    assert _split_at(segs, 0.0)[1] == 1 and _split_at(segs, 3.0)[1] == 3
    assert _cusp_distances(segs) == [pytest.approx(2.0)]
    assert _clusters([1.0, 2.0, 9.0], 1.0) == [(1.0, 2.0), (9.0, 9.0)]


def test_local_repair_removes_a_needless_back_and_forth_and_keeps_the_ends(world):
    _, _, slices = world
    check = ExactSliceCheck(slices)
    limits = DriveLimits()
    a = (0.8, 0.8, 0.0)
    segs = [straight(a, 2.0)]
    segs.append(straight(segs[-1].end, -1.0))         # back ...
    segs.append(straight(segs[-1].end, 2.5))          # ... and forth again
    segs.append(rotate(segs[-1].end, math.pi / 2))
    segs.append(straight(segs[-1].end, 3.0))
    assert check.free(segs)
    dp = DrivePlan(FOUND, segments=merge_segments(segs))
    assert dp.direction_changes == 2
    out = _local_repair(slices, dp, [0.5, 0.75], limits, check, None)
    assert out is not None and out.found
    assert direction_changes(out.segments) < 2
    assert check.free(out.segments)
    assert out.segments[0].start == pytest.approx(a)
    end = out.segments[-1].end
    assert end[:2] == pytest.approx(segs[-1].end[:2], abs=1e-9)
    assert math.isclose(math.cos(end[2] - segs[-1].end[2]), 1.0, abs_tol=1e-9)
    for p, q in zip(out.segments, out.segments[1:]):     # joined: each piece starts where the last ended
        assert q.start[:2] == pytest.approx(p.end[:2], abs=1e-9)
    assert total_length(out.segments) <= total_length(segs) + 1e-9


def test_route_query_of_a_differential_base_stays_clear(world):
    plan, veh, _ = world
    res = ff.find_route(plan, veh, (300.8, -39.2, 180.0), (307.0, -35.0, 90.0), heading_step_deg=5.0)
    assert res.status == "reachable"
    assert_path_clear(plan, veh, res.path)
    assert res.direction_changes == direction_changes_of(res.segments)


def direction_changes_of(segment_dicts) -> int:
    dirs = [s["direction"] for s in segment_dicts if s["type"] != "rotate" and s["length_m"] > 0]
    return sum(1 for p, q in zip(dirs, dirs[1:]) if p != q)


def test_rotate_drive_rotate_costs_made_without_segments_match_the_segments():
    from floorfit.motion.poses import wrap_angle
    from floorfit.motion.subdivision import _rtr_options, _rtr_segments

    rng = np.random.default_rng(3)
    for _ in range(500):
        a = (rng.uniform(-50, 50), rng.uniform(-50, 50), rng.uniform(-20, 20))
        b = (a[0] + rng.normal(0, 3), a[1] + rng.normal(0, 3), rng.uniform(-20, 20))
        for cost, t1, drive, last in _rtr_options(a, b, reverse=True):
            spin, go, sync = _rtr_segments(a, t1, drive, last)
            assert last == float(wrap_angle(b[2] - go.end[2]))        # the same bits as from the segments
            assert cost == abs(t1) + abs(last) + (math.pi if drive < 0 else 0.0)
            assert spin.angle_deg == math.degrees(t1) and go.sign * go.length_m == drive
            assert sync.end[:2] == pytest.approx(b[:2], abs=1e-9)
            assert math.isclose(math.cos(sync.end[2] - b[2]), 1.0, abs_tol=1e-12)


def test_straights_and_turns_end_where_poses_along_puts_them_to_the_bit():
    # segments.straight and rotate compute their end pose in plain floats; it must be, bit for bit,
    # the pose poses_along (numpy) gives at the end of the segment, as it was computed before
    from floorfit.motion.segments import poses_along

    rng = np.random.default_rng(4)
    for _ in range(3000):
        a = (rng.uniform(-300, 300), rng.uniform(-300, 300), rng.uniform(-30, 30))
        v = float(rng.normal(0, 5)) if rng.random() > 0.05 else float(rng.choice([0.0, -0.0]))
        for seg in (rotate(a, v), straight(a, v)):
            assert seg.end == tuple(float(c) for c in poses_along(seg, [1.0])[0])
    a = (np.float64(1.5), np.float64(-2.0), np.float64(0.3))
    for seg in (rotate(a, 0.7), straight(a, -1.1)):
        assert seg.end == tuple(float(c) for c in poses_along(seg, [1.0])[0])
        assert all(type(c) is float for c in seg.start + seg.end)
