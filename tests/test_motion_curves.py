"""Reeds-Shepp and Dubins shortest paths against independent libraries and known values."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from floorfit.errors import InputError
from floorfit.motion import (
    dubins_length,
    dubins_path,
    reeds_shepp_length,
    reeds_shepp_path,
    sample,
    total_length,
)
from floorfit.motion._words import word_segments
from floorfit.motion.dubins import dubins_words
from floorfit.motion.reeds_shepp import reeds_shepp_words

PAIRS = 300


def _random_pairs(seed, n, spread, near=0):
    rng = np.random.default_rng(seed)
    starts = np.c_[rng.uniform(-spread, spread, (n, 2)), rng.uniform(-math.pi, math.pi, n)]
    goals = np.c_[rng.uniform(-spread, spread, (n, 2)), rng.uniform(-math.pi, math.pi, n)]
    # start and goal close in position: the cases with the most cusps and loops
    goals[:near, :2] = starts[:near, :2] + rng.uniform(-0.6, 0.6, (near, 2))
    return starts, goals


def _ompl_lengths(space_class, radius, starts, goals):
    ob = pytest.importorskip("ompl.base")
    ou = pytest.importorskip("ompl.util")
    ou.RNG.setSeed(7)
    space = space_class(ob)(radius)
    a, b = space.allocState(), space.allocState()
    out = []
    for s, g in zip(starts, goals):
        for state, pose in ((a, s), (b, g)):
            state.setX(pose[0])
            state.setY(pose[1])
            state.setYaw(pose[2])
        out.append(space.distance(a, b))
    return np.array(out)


def _pose_error(p, q):
    return max(abs(p[0] - q[0]), abs(p[1] - q[1]),
               abs((p[2] - q[2] + math.pi) % (2 * math.pi) - math.pi))


# --- independent libraries ------------------------------------------------------------

@pytest.mark.parametrize("radius", [0.5, 1.0, 2.7])
def test_reeds_shepp_length_equals_ompl(radius):
    # Oracle: OMPL 2.x ReedsSheppStateSpace.distance (implementation of Reeds & Shepp,
    # Pacific J. Math. 145(2), 1990), an independent program from PyPI ("ompl").
    starts, goals = _random_pairs(1, PAIRS, 4 * radius, near=60)
    ours = reeds_shepp_length(starts, goals, radius)
    ref = _ompl_lengths(lambda ob: ob.ReedsSheppStateSpace, radius, starts, goals)
    scale = np.maximum(1.0, ref)
    assert np.max(np.abs(ours - ref) / scale) < 1e-6


@pytest.mark.parametrize("radius", [0.5, 1.0, 2.7])
def test_dubins_length_equals_ompl(radius):
    # Oracle: OMPL 2.x DubinsStateSpace.distance (Dubins, Amer. J. Math. 79, 1957).
    starts, goals = _random_pairs(2, PAIRS, 4 * radius, near=60)
    ours = dubins_length(starts, goals, radius)
    ref = _ompl_lengths(lambda ob: ob.DubinsStateSpace, radius, starts, goals)
    scale = np.maximum(1.0, ref)
    assert np.max(np.abs(ours - ref) / scale) < 1e-6


def test_reeds_shepp_length_equals_rsplan():
    # Oracle: rsplan (PyPI), with length_tolerance=0.0 so that it returns the shortest
    # path rather than one with fewer segments.
    planner = pytest.importorskip("rsplan.planner")
    radius = 1.4
    starts, goals = _random_pairs(3, 200, 5.0, near=40)
    ours = reeds_shepp_length(starts, goals, radius)
    ref = np.array([planner.path(tuple(s), tuple(g), radius, 0.0, 0.1,
                                 length_tolerance=0.0).total_length
                    for s, g in zip(starts, goals)])
    assert np.max(np.abs(ours - ref) / np.maximum(1.0, ref)) < 1e-6


# --- published and hand-checked values -------------------------------------------------

def test_field_note_values():
    # FIELD-NOTES.md, "Reeds-Shepp / Dubins shortest lengths with R = 1" (checked there
    # against OMPL 2.0.1).
    assert dubins_length((0, 0, 0), (5, 0, 3), 1.0) == pytest.approx(8.272519, abs=1e-6)
    assert reeds_shepp_length((0, 0, 0), (5, 0, 3), 1.0) == pytest.approx(6.141130, abs=1e-6)
    # turning round on the spot: Dubins loops out and back (7 pi / 3), Reeds-Shepp
    # drives a half circle forward-reverse (pi)
    assert dubins_length((0, 0, 0), (0, 0, math.pi), 1.0) == pytest.approx(7 * math.pi / 3)
    assert reeds_shepp_length((0, 0, 0), (0, 0, math.pi), 1.0) == pytest.approx(math.pi)
    # straight behind: Dubins needs a full loop (3 + 2 pi), Reeds-Shepp just reverses
    assert dubins_length((0, 0, 0), (-3, 0, 0), 1.0) == pytest.approx(3 + 2 * math.pi)
    assert reeds_shepp_length((0, 0, 0), (-3, 0, 0), 1.0) == pytest.approx(3.0)
    segs = reeds_shepp_path((0, 0, 0), (-3, 0, 0), 1.0)
    assert [(s.kind, s.direction) for s in segs] == [("straight", "reverse")]


def test_lengths_scale_with_radius_and_coincident_poses_give_empty_paths():
    assert reeds_shepp_length((0, 0, 0), (10, 0, 6), 2.0) == pytest.approx(
        2.0 * reeds_shepp_length((0, 0, 0), (5, 0, 6), 1.0))
    assert reeds_shepp_path((1, 2, 3), (1, 2, 3), 1.0) == []
    assert dubins_path((1, 2, 3), (1, 2, 3), 1.0) == []


# --- the paths themselves -----------------------------------------------------------------

@pytest.mark.parametrize("family", ["reeds_shepp", "dubins"])
def test_every_candidate_word_reaches_the_goal(family):
    words_of = reeds_shepp_words if family == "reeds_shepp" else dubins_words
    starts, goals = _random_pairs(4, 150, 3.0, near=50)
    radius = 0.8
    worst = 0.0
    for s, g in zip(starts, goals):
        for word in words_of(s, g, radius):
            segs = word_segments(tuple(s), word, radius)
            end = segs[-1].end if segs else tuple(s)
            worst = max(worst, _pose_error(end, g))
            assert total_length(segs) == pytest.approx(word.length_m, abs=1e-9)
            if family == "dubins":
                assert all(seg.direction == "forward" for seg in segs)
    assert worst < 1e-9


@pytest.mark.parametrize("family", ["reeds_shepp", "dubins"])
def test_sampled_paths_end_at_goal_with_arcs_at_the_radius(family):
    path_of = reeds_shepp_path if family == "reeds_shepp" else dubins_path
    length_of = reeds_shepp_length if family == "reeds_shepp" else dubins_length
    starts, goals = _random_pairs(5, 100, 6.0, near=20)
    radius = 1.6
    for s, g in zip(starts, goals):
        segs = path_of(s, g, radius)
        pts = sample(segs, step_m=0.05, step_deg=2.0)
        assert _pose_error(pts[-1], g) < 1e-6
        assert _pose_error(pts[0], s) < 1e-12
        assert all(seg.radius_m >= radius for seg in segs if seg.kind == "arc")
        assert total_length(segs) == pytest.approx(length_of(s, g, radius), abs=1e-9)
        # consecutive segments join exactly
        for a, b in zip(segs, segs[1:]):
            assert a.end == b.start


# --- properties -------------------------------------------------------------------------

coords = st.floats(-8, 8, allow_nan=False)
angles = st.floats(-math.pi, math.pi, allow_nan=False)
poses = st.tuples(coords, coords, angles)


@settings(max_examples=150, deadline=None)
@given(poses, poses, st.floats(0.2, 3.0), st.tuples(coords, coords, angles))
def test_rigid_motion_invariance_and_order(start, goal, radius, move):
    mx, my, mh = move
    c, s = math.cos(mh), math.sin(mh)

    def moved(p):
        return (mx + c * p[0] - s * p[1], my + s * p[0] + c * p[1], p[2] + mh)

    rs = reeds_shepp_length(start, goal, radius)
    db = dubins_length(start, goal, radius)
    assert reeds_shepp_length(moved(start), moved(goal), radius) == pytest.approx(rs, abs=1e-7)
    assert dubins_length(moved(start), moved(goal), radius) == pytest.approx(db, abs=1e-7)
    # reversing allowed can only help; both are at least the straight-line distance
    euclid = math.hypot(goal[0] - start[0], goal[1] - start[1])
    assert euclid - 1e-9 <= rs <= db + 1e-9
    # Reeds-Shepp length is symmetric (a path driven backwards in time is a path)
    assert reeds_shepp_length(goal, start, radius) == pytest.approx(rs, abs=1e-7)


def test_bad_input_raises_input_error():
    with pytest.raises(InputError, match="radius"):
        reeds_shepp_length((0, 0, 0), (1, 0, 0), 0.0)
    with pytest.raises(InputError, match="radius"):
        dubins_path((0, 0, 0), (1, 0, 0), "wide")
    with pytest.raises(InputError, match="start"):
        reeds_shepp_path((0, 0), (1, 0, 0), 1.0)
    with pytest.raises(InputError):
        dubins_length((0, 0, float("inf")), (1, 0, 0), 1.0)
