"""The sampled motion check against the sound slices (floorfit.motion.drivable.SliceMotionCheck).

Soundness and the stated tolerance are tested against brute force: the footprint placed
at dense poses of the true motion (2 mm, 0.1°) and measured against the obstacles
directly (floorfit.cspace.collision.PoseChecker). Small plan, 5° slices: fast on 2 cores.
"""

import math

import numpy as np
import pytest
import shapely
import shapely.affinity
from shapely.geometry import Polygon, box

import floorfit as ff
from floorfit.cspace.collision import PoseChecker, sample_motion
from floorfit.cspace.slices import build_slices
from floorfit.errors import InputError
from floorfit.motion import arc, rotate, rotate_and_drive, sample, straight
from floorfit.motion.drivable import (
    DriveLimits,
    drive_tolerance_m,
    segment_dicts,
)
from floorfit.motion.slice_checks import SliceMotionCheck, chord_error_m
from floorfit.plan.model import Plan

ARC_R = 1.0


@pytest.fixture(scope="module")
def world():
    room = box(0, 0, 8, 6)
    solids = [box(2.0, 2.0, 2.6, 4.2), Polygon([(5, 1), (6.2, 1.4), (5.6, 2.4)]), box(4.0, 4.5, 4.3, 6.0)]
    origin = (300.0, -40.0)          # geometry is given in the drawing frame; motions below are local

    def move(g):
        return shapely.affinity.translate(g, *origin)

    plan = Plan.from_geometries(walls=[move(room)], solids=[move(g) for g in solids], origin=origin)
    veh = ff.rectangle_vehicle(0.8, 0.5, reference_to_front=0.6, mode="car", min_turn_radius_m=ARC_R)
    slices = build_slices(plan, veh, heading_step_deg=5.0)
    return plan, veh, slices


def _random_motion(rng):
    x, y = rng.uniform(0.6, 7.4), rng.uniform(0.6, 5.4)
    pose = (x, y, rng.uniform(-math.pi, math.pi))
    kind = rng.integers(3)
    if kind == 0:
        return [straight(pose, rng.uniform(-1.2, 1.2))]
    if kind == 1:
        return [arc(pose, rng.uniform(-1.2, 1.2), int(rng.choice([-1, 1])), ARC_R)]
    return [rotate(pose, rng.uniform(-2.0, 2.0))]


def test_accepted_motions_are_clear_and_motions_clear_by_the_tolerance_are_accepted(world):
    plan, veh, slices = world
    limits = DriveLimits()
    check = SliceMotionCheck(slices, limits.check_step_m, limits.check_step_deg,
                             extra_margin_m=chord_error_m(ARC_R, limits.path_step_m))
    tol = drive_tolerance_m(slices, limits, ARC_R)
    assert 0 < tol < 0.1
    brute = PoseChecker(plan, veh.footprint)
    rng = np.random.default_rng(5)
    counts = {"accepted": 0, "rejected": 0, "clear-by-tolerance": 0}
    for _ in range(160):
        segs = _random_motion(rng)
        accepted = bool(check.is_free(sample(segs, limits.check_step_m, limits.check_step_deg)).all())
        dense = sample(segs, 0.002, 0.1)
        dense[:, 2] = np.degrees(dense[:, 2])
        clearance = float(brute.clearance(dense).min()) if not brute.collides(dense).any() else 0.0
        if accepted:
            counts["accepted"] += 1
            assert clearance > 0.0, segs            # sound: never accepts a colliding motion
            # and the output samples' linear interpolation is clear as well
            out = sample(segs, limits.path_step_m, limits.path_step_deg)
            out[:, 2] = np.degrees(out[:, 2])
            assert not brute.collides(sample_motion(out, step_m=0.002, step_deg=0.1, radius_m=veh.radius_m)).any()
        else:
            counts["rejected"] += 1
        if clearance > tol + 1e-3:
            counts["clear-by-tolerance"] += 1
            assert accepted, (segs, clearance, tol)   # errs by at most the stated tolerance
    assert counts["accepted"] >= 20 and counts["rejected"] >= 20 and counts["clear-by-tolerance"] >= 10


def test_heading_windows_follow_the_neighbouring_samples(world):
    _, _, slices = world
    check = SliceMotionCheck(slices, 0.02, 1.0)
    # a straight drive: interior samples keep their own heading only; the ends get ±step/2
    pts = sample([straight((4.0, 0.5, 0.3), 0.2)], 0.02, 1.0)
    deg = pts.copy()
    deg[:, 2] = np.degrees(deg[:, 2])
    lo, hi = check.windows(deg)
    assert np.allclose(lo[1:-1], 0) and np.allclose(hi[1:-1], 0)
    assert lo[0] == pytest.approx(-0.5) and hi[-1] == pytest.approx(0.5)
    # a rotation by 3° in 1° steps: half-way to each neighbour
    pts = sample([rotate((4.0, 0.5, 0.0), math.radians(3.0))], 0.02, 1.0)
    deg = pts.copy()
    deg[:, 2] = np.degrees(deg[:, 2])
    lo, hi = check.windows(deg)
    assert np.allclose(lo[1:-1], -0.5) and np.allclose(hi[1:-1], 0.5)
    # samples farther apart than the step are not neighbours
    lo, hi = check.windows(np.array([[1.0, 1.0, 0.0], [1.5, 1.0, 0.0]]))
    assert np.allclose(lo, -0.5) and np.allclose(hi, 0.5)


def test_forward_only_conversion_never_drives_backwards():
    # Regression (rotate_and_drive's lateral manoeuvre once drove backwards for a forward-only
    # base): a 0.9 x 0.6 base in a 0.8 m corridor cannot turn round (needs sqrt(l² + w²) =
    # 1.08 m, FIELD-NOTES), so a forward-only base cannot follow a path going backwards.
    floor = box(0, 0, 10, 0.8)
    shapely.prepare(floor)
    corners = np.array([[-0.45, -0.3], [0.45, -0.3], [0.45, 0.3], [-0.45, 0.3]])

    def is_free(poses):
        c, s = np.cos(poses[:, 2])[:, None], np.sin(poses[:, 2])[:, None]
        x = poses[:, 0:1] + c * corners[:, 0] - s * corners[:, 1]
        y = poses[:, 1:2] + s * corners[:, 0] + c * corners[:, 1]
        return shapely.contains(floor, shapely.polygons(np.stack([x, y], axis=-1)))

    back = np.array([[8.0, 0.4, 0.0], [5.0, 0.4, 0.0], [2.0, 0.4, 0.0]])
    assert rotate_and_drive(back, reverse=False, is_free=is_free) is None
    segs = rotate_and_drive(back, reverse=True, is_free=is_free)
    assert segs is not None and [s.direction for s in segs] == ["reverse"]
    assert segs[0].length_m == pytest.approx(6.0)


def test_drive_limits_reject_bad_values():
    with pytest.raises(InputError, match="check_step_m"):
        DriveLimits(check_step_m=0.0)
    with pytest.raises(InputError, match="max_expansions"):
        DriveLimits(max_expansions=0)
    with pytest.raises(InputError, match="time_limit_s"):
        DriveLimits(time_limit_s=-1.0)
    with pytest.raises(InputError, match="too coarse"):
        DriveLimits(path_step_deg=15.0)


def test_segment_dicts_are_in_the_drawing_frame_and_degrees():
    segs = [arc((1.0, 2.0, 0.0), 0.5 * math.pi, 1, 1.0), rotate((2.0, 3.0, 0.5 * math.pi), -0.5 * math.pi)]
    d = segment_dicts(segs, origin=(100.0, 200.0))
    assert d[0]["type"] == "arc" and d[0]["direction"] == "forward" and d[0]["radius_m"] == 1.0
    assert d[0]["angle_deg"] == pytest.approx(90.0) and d[0]["length_m"] == pytest.approx(0.5 * math.pi, abs=1e-6)
    assert d[0]["end"] == pytest.approx([102.0, 203.0, 90.0], abs=1e-6)
    assert d[1]["type"] == "rotate" and d[1]["direction"] is None and d[1]["angle_deg"] == pytest.approx(-90.0)
    assert d[1]["end"][2] == pytest.approx(0.0, abs=1e-9)
