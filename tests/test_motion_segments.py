"""Path segments, sampling and their error bounds (floorfit.motion.segments / sampling)."""

import math

import numpy as np
import pytest

from floorfit.errors import InputError
from floorfit.motion import (
    arc,
    chord_deviation,
    direction_changes,
    merge_segments,
    motion_check_margin,
    pose_from_degrees,
    pose_to_degrees,
    rotate,
    sample,
    straight,
    total_length,
)
from floorfit.motion.segments import poses_along


def _chain(start, *makers):
    segs, pose = [], start
    for make in makers:
        seg = make(pose)
        segs.append(seg)
        pose = seg.end
    return segs


def test_straight_and_arc_end_poses():
    seg = straight((1.0, 2.0, math.pi / 2), -3.0)
    assert seg.direction == "reverse" and seg.length_m == 3.0
    assert seg.end == pytest.approx((1.0, -1.0, math.pi / 2))
    # quarter circle to the left, radius 2, from the origin: ends at (2, 2) facing +y
    left = arc((0.0, 0.0, 0.0), math.pi, 1, 2.0)
    assert left.angle_deg == pytest.approx(90.0)
    assert left.end == pytest.approx((2.0, 2.0, math.pi / 2))
    # the same circle driven in reverse turns the heading the other way
    back = arc((0.0, 0.0, 0.0), -math.pi, 1, 2.0)
    assert back.angle_deg == pytest.approx(-90.0)
    assert back.end == pytest.approx((-2.0, 2.0, -math.pi / 2))
    right = arc((0.0, 0.0, 0.0), math.pi, -1, 2.0)
    assert right.end == pytest.approx((2.0, -2.0, -math.pi / 2))
    spin = rotate((3.0, 4.0, 0.0), -math.pi / 3)
    assert spin.kind == "rotate" and spin.direction is None and spin.length_m == 0.0
    assert spin.end == pytest.approx((3.0, 4.0, -math.pi / 3))


def test_three_point_turn_counts_two_changes_and_rotations_are_ignored():
    turn = _chain((0.0, 0.0, 0.0),
                  lambda p: arc(p, 2.0, 1, 2.0),
                  lambda p: arc(p, -1.5, -1, 2.0),
                  lambda p: straight(p, 1.0))
    assert direction_changes(turn) == 2
    assert total_length(turn) == pytest.approx(4.5)
    with_spins = _chain((0.0, 0.0, 0.0),
                        lambda p: straight(p, 1.0),
                        lambda p: rotate(p, 1.0),
                        lambda p: straight(p, -1.0),
                        lambda p: rotate(p, -2.0),
                        lambda p: straight(p, -2.0))
    assert direction_changes(with_spins) == 1
    assert total_length(with_spins) == pytest.approx(4.0)
    assert direction_changes([]) == 0 and total_length([]) == 0.0


def test_sample_respects_steps_and_hits_every_segment_end():
    segs = _chain((0.5, -1.0, 0.3),
                  lambda p: straight(p, 1.23),
                  lambda p: arc(p, -2.7, 1, 1.5),
                  lambda p: rotate(p, 2.5),
                  lambda p: arc(p, 0.9, -1, 0.4))
    pts = sample(segs, step_m=0.05, step_deg=2.0)
    assert pts[0] == pytest.approx(segs[0].start)
    assert pts[-1] == pytest.approx(segs[-1].end, abs=1e-12)
    for seg in segs:  # every segment end is a sample
        assert np.min(np.abs(pts - np.asarray(seg.end)).max(axis=1)) < 1e-12
    steps = np.diff(pts, axis=0)
    # along an arc the chord is shorter than the arc, so chord <= step
    assert np.hypot(steps[:, 0], steps[:, 1]).max() <= 0.05 + 1e-12
    assert np.degrees(np.abs(steps[:, 2])).max() <= 2.0 + 1e-9
    assert sample([]).shape == (0, 3)


def test_chord_deviation_matches_dense_arc():
    # sagitta of a chord: R (1 - cos(s / 2R)) (circle geometry, any geometry textbook)
    radius, step = 1.7, 0.3
    fine = poses_along(arc((0.0, 0.0, 0.0), step, 1, radius), np.linspace(0, 1, 2001))
    a, b = fine[0, :2], fine[-1, :2]
    d = b - a
    off = np.abs(d[0] * (fine[:, 1] - a[1]) - d[1] * (fine[:, 0] - a[0])) / np.hypot(*d)
    assert off.max() == pytest.approx(chord_deviation(radius, step), rel=1e-6)
    assert chord_deviation(2.0, 0.05) == pytest.approx(2.0 * (1 - math.cos(0.0125)))


def test_motion_check_margin_bounds_every_body_point():
    # a body point 0.9 m from the reference point, on a tight arc: each intermediate
    # position is within the margin of the nearer sample
    seg = arc((0.0, 0.0, 0.2), 2.0, -1, 0.6)
    coarse = sample([seg], 0.05, 2.0)
    dense = poses_along(seg, np.linspace(0, 1, 4001))
    body = np.array([0.5, 0.7481980])  # |body| = 0.9 m
    reach = float(np.hypot(*body))

    def world(p):
        c, s = np.cos(p[:, 2]), np.sin(p[:, 2])
        return np.stack([p[:, 0] + c * body[0] - s * body[1],
                         p[:, 1] + s * body[0] + c * body[1]], axis=1)

    wc, wd = world(coarse), world(dense)
    gap = np.min(np.linalg.norm(wd[:, None, :] - wc[None, :, :], axis=2), axis=1).max()
    margin = motion_check_margin(0.05, 2.0, reach)
    assert gap <= margin
    assert gap > 0.5 * margin  # the bound is not loose by orders of magnitude


def test_merge_segments_joins_like_pieces_and_keeps_the_end():
    segs = _chain((0.0, 0.0, 0.0),
                  lambda p: straight(p, 1.0),
                  lambda p: straight(p, 0.5),
                  lambda p: straight(p, 0.0),
                  lambda p: arc(p, 0.4, 1, 2.0),
                  lambda p: arc(p, 0.6, 1, 2.0),
                  lambda p: rotate(p, 1.0),
                  lambda p: rotate(p, -0.25),
                  lambda p: arc(p, 0.6, -1, 2.0))
    merged = merge_segments(segs)
    assert [(s.kind, s.direction) for s in merged] == [
        ("straight", "forward"), ("arc", "forward"), ("rotate", None), ("arc", "forward")]
    assert merged[0].length_m == pytest.approx(1.5)
    assert merged[1].length_m == pytest.approx(1.0)
    assert merged[2].angle_deg == pytest.approx(math.degrees(0.75))
    assert merged[-1].end == pytest.approx(segs[-1].end, abs=1e-12)


def test_degree_helpers_round_trip():
    assert pose_from_degrees((1.0, 2.0, 90.0)) == pytest.approx((1.0, 2.0, math.pi / 2))
    arr = np.array([[0.0, 0.0, 180.0], [1.0, 1.0, -45.0]])
    back = pose_to_degrees(pose_from_degrees(arr))
    assert back == pytest.approx(arr)
    assert arr[0, 2] == 180.0  # input untouched


def test_bad_steps_raise_input_error():
    with pytest.raises(InputError, match="step_m"):
        sample([straight((0, 0, 0), 1.0)], step_m=0.0)
    with pytest.raises(InputError, match="step_deg"):
        sample([straight((0, 0, 0), 1.0)], step_deg=float("nan"))
