"""The pieces that keep the car conversion's work bounded (issue #15): the exact check's cheap pre-test,
the vectorised Reeds–Shepp word costs and samples, and the greedy shortcut of long car paths.

Each fast piece is tested against the slow one it stands in for: the pre-test never rejects a piece the
exact check (:class:`floorfit.motion.slice_checks.ExactSliceCheck`) accepts; the word samples are those of
:func:`floorfit.motion.sample` on the word's segments; the cheapest words are those of
:func:`floorfit.motion.reeds_shepp_words` ordered by the search cost. Small plan, 5° slices.
"""

import math

import numpy as np
import pytest
import shapely
import shapely.affinity
from shapely.geometry import Polygon, box

import floorfit as ff
from floorfit.cspace.slices import build_slices
from floorfit.motion import arc, reeds_shepp_words, sample, straight
from floorfit.motion._words import word_cost, word_segments
from floorfit.motion.reeds_shepp import reeds_shepp_cheapest
from floorfit.motion.segments import direction_changes
from floorfit.motion.slice_checks import PRETEST_STEP_DEG, PRETEST_STEP_M, ExactSliceCheck
from floorfit.motion.subdivision import car_cost, shortcut_car, word_poses
from floorfit.plan.model import Plan

R = 0.9


@pytest.fixture(scope="module")
def exact():
    room = box(0, 0, 8, 6)
    solids = [box(2.0, 2.0, 2.6, 4.2), Polygon([(5, 1), (6.2, 1.4), (5.6, 2.4)]), box(4.0, 4.5, 4.3, 6.0)]
    origin = (120.0, 30.0)

    def move(g):
        return shapely.affinity.translate(g, *origin)

    plan = Plan.from_geometries(walls=[move(room)], solids=[move(g) for g in solids], origin=origin)
    veh = ff.rectangle_vehicle(0.8, 0.5, reference_to_front=0.6, mode="car", min_turn_radius_m=R)
    return ExactSliceCheck(build_slices(plan, veh, heading_step_deg=5.0))


def _pose(rng):
    return (rng.uniform(0.6, 7.4), rng.uniform(0.6, 5.4), rng.uniform(-math.pi, math.pi))


def test_word_samples_are_the_samples_of_the_word_segments():
    rng = np.random.default_rng(3)
    for _ in range(100):
        a, b = _pose(rng), _pose(rng)
        words = reeds_shepp_words(a, b, R)[:6]
        pts, owner = word_poses(a, words, R, 0.1, 5.0)
        for k, w in enumerate(words):
            ref = sample(word_segments(a, w, R), 0.1, 5.0)
            assert pts[owner == k].shape == ref.shape
            assert np.abs(pts[owner == k] - ref).max() < 1e-9


def test_cheapest_words_are_the_words_in_order_of_the_search_cost():
    rng = np.random.default_rng(4)
    goals = np.array([_pose(rng) for _ in range(40)])
    start = _pose(rng)
    # defaults: plain length, so the first is the shortest path
    for g, row in zip(goals, reeds_shepp_cheapest(start, goals, R, count=1)):
        assert abs(row[0][1].length_m - reeds_shepp_words(start, g, R)[0].length_m) < 1e-12
    rows = reeds_shepp_cheapest(start, goals, R, reverse_factor=2.0, change_cost=2 * R, arriving_sign=-1, count=3)
    for g, row in zip(goals, rows):
        ref = sorted(word_cost(w, R, 2.0, 2 * R, -1) for w in reeds_shepp_words(start, g, R))[:3]
        assert np.allclose([c for c, _ in row], ref, atol=1e-9)
        for c, w in row:
            assert abs(c - word_cost(w, R, 2.0, 2 * R, -1)) < 1e-9
            end = word_segments(start, w, R)[-1].end
            assert math.hypot(end[0] - g[0], end[1] - g[1]) < 1e-6
    # ``below``: only the words cheaper than the given costs
    below = np.full(len(goals), 4.0)
    for row in reeds_shepp_cheapest(start, goals, R, count=5, below=below):
        assert all(c < 4.0 for c, _ in row)


def test_the_pre_test_never_rejects_a_piece_the_exact_check_accepts(exact):
    rng = np.random.default_rng(8)
    accepted = rejected_early = 0
    for _ in range(60):
        a = _pose(rng)
        cands = [word_segments(a, w, R) for w in reeds_shepp_words(a, _pose(rng), R)[:4]]
        cands += [[straight(a, rng.uniform(-2, 2))], [arc(a, rng.uniform(-2, 2), 1, R)]]
        cands = [c for c in cands if c]
        maybe = exact.near_free(cands)
        for c, m in zip(cands, maybe):
            free = exact.free(c)
            assert m or not free
            accepted += free
            rejected_early += not m
        assert exact.first_free(cands) == next((k for k, c in enumerate(cands) if exact.free(c)), None)
    assert accepted > 20 and rejected_early > 100       # both kinds occur


def _edge_in_its_own_cell(exact):
    """A straight drive at heading 0 (no rounding in its poses) along a horizontal edge of a free-space
    component of the slice whose cell holds heading 0."""
    k = int(exact._cell_of(0.0))
    for comp in exact.slices.components[k]:
        ring = np.asarray(comp.exterior.coords)
        for (x0, y0), (x1, y1) in zip(ring[:-1], ring[1:]):
            if y0 == y1 and abs(x1 - x0) > 0.5:
                return straight((min(x0, x1), y0, 0.0), abs(x1 - x0)), comp
    raise AssertionError("no horizontal edge")


def test_a_path_along_the_free_space_boundary_passes_the_pre_test(exact):
    # the exact check accepts a drive along the boundary (covers); the pre-test's samples lie on it
    # only up to rounding, which its slack absorbs, while a millimetre outside is rejected
    seg, comp = _edge_in_its_own_cell(exact)
    assert exact.free([seg]) and exact.near_free([[seg]])[0]
    pts = sample([seg], PRETEST_STEP_M, PRETEST_STEP_DEG)
    h = seg.start[2]
    normal = np.array([-math.sin(h), math.cos(h)])
    outward = normal if not comp.covers(shapely.Point(*(pts[len(pts) // 2, :2] + 1e-3 * normal))) else -normal
    owner = np.zeros(len(pts), dtype=int)
    for shift, expected in ((1e-9, True), (1e-3, False)):
        moved = pts.copy()
        moved[:, :2] += shift * outward
        assert bool(exact.maybe_free(moved, owner, 1)[0]) == expected


def test_shortcut_shortens_a_long_zigzag_and_every_result_is_free(exact):
    # a path of 200 short forward/reverse pieces across open floor: the greedy hops remove the
    # manoeuvring (the old pass skipped car paths of more than 40 segments)
    pose = (1.0, 0.8, 0.0)
    segs = []
    for i in range(200):
        seg = straight(pose, 0.06 if i % 2 == 0 else -0.03)
        segs.append(seg)
        pose = seg.end
    assert exact.free(segs) and direction_changes(segs) == 199
    out = shortcut_car(segs, free=exact.free, maybe_free=exact.maybe_free, radius_m=R)
    assert exact.free(out)
    assert direction_changes(out) == 0 and car_cost(out, 2.0, 2 * R) < car_cost(segs, 2.0, 2 * R)
    end, goal = out[-1].end, segs[-1].end
    assert math.hypot(end[0] - goal[0], end[1] - goal[1]) < 1e-6 and abs(end[2] - goal[2]) < 1e-6
