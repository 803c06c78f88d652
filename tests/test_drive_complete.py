"""Drivable paths are complete relative to the holonomic analysis, with OMPL as a second opinion.

A small invented warehouse (rack rows, a partition with a doorway, columns) and three
footprints (a rectangle, an L-shaped bed mover, a long cart). Start and goal poses are drawn
with a fixed seed; for every pair the holonomic analysis connects, floorfit must return a
differential path and a car path (reverse allowed), and wherever OMPL's RRTConnect finds a
Reeds–Shepp path (OMPL 2.x, ``ReedsSheppStateSpace``, an independent program; seeded with
``ompl.util.RNG.setSeed`` before anything is allocated) for the footprint grown by the slices'
tolerance (the clearance the sound analysis promises to accept), floorfit must find both too. Every
returned path is re-checked by dense sampling against the exact obstacle geometry
(:func:`floorfit.testing.assert_path_clear`).

Path quality is asserted too: the differential path has at most two direction changes more
than the car path of the same query, and it stays within 1.3 × the holonomic route's length
on most pairs. The slow test runs 20 pairs per footprint (60 in all); the quick one 2 per
footprint.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon, box

import floorfit as ff
from floorfit.cspace.collision import PoseChecker
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slices import build_slices
from floorfit.plan.model import Plan
from floorfit.testing import assert_path_clear
from floorfit.vehicles.rigid import vehicle_from_outline

ORIGIN = (500.0, -300.0)
W, H = 16.0, 10.0
CAR_RADIUS_M = 1.0
OMPL_SECONDS = 1.0

FOOTPRINTS = {
    # a differential tote robot turning about its drive axle (off the centre)
    "rectangle": [(0.5, -0.3), (0.5, 0.3), (-0.3, 0.3), (-0.3, -0.3)],
    # an L-shaped bed mover
    "l-shape": [(0.5, -0.3), (0.5, 0.3), (-0.3, 0.3), (-0.3, -0.6), (0.1, -0.6), (0.1, -0.3)],
    # a long cart pushed from its front axle
    "long-cart": [(0.4, -0.3), (0.4, 0.3), (-1.6, 0.3), (-1.6, -0.3)],
}


def _world() -> tuple[Plan, list[Polygon]]:
    t = 0.15
    walls = [box(0, 0, W, t), box(0, H - t, W, H), box(0, 0, t, H), box(W - t, 0, W, H),
             # partition at x = 5 with a 1.6 m doorway
             box(5.0, 0, 5.2, 4.0), box(5.0, 5.6, 5.2, H)]
    solids = [box(7.0, 1.5, 8.2, 7.0), box(10.6, 1.5, 11.8, 7.0),       # two rack rows, 2.4 m aisle
              box(13.5, 3.0, 13.9, 3.4), box(2.0, 7.0, 2.4, 7.4),        # columns
              box(1.0, 1.0, 2.5, 2.0)]                                   # a machine
    move = lambda g: shapely.affinity.translate(g, *ORIGIN)  # noqa: E731
    plan = Plan.from_geometries(walls=[move(g) for g in walls], solids=[move(g) for g in solids], origin=ORIGIN)
    return plan, walls + solids


def _ompl_finds(obstacles: list[Polygon], footprint: Polygon, start, goal, seed: int) -> bool:
    """OMPL RRTConnect in the Reeds–Shepp space (radius CAR_RADIUS_M), exact footprint checks."""
    ob = pytest.importorskip("ompl.base")
    og = pytest.importorskip("ompl.geometric")
    ou = pytest.importorskip("ompl.util")
    ou.setLogLevel(ou.LOG_NONE)
    ou.RNG.setSeed(seed)                  # before allocating anything (repeatable runs)
    obst = shapely.union_all(obstacles)
    shapely.prepare(obst)
    ring = np.asarray(footprint.exterior.coords)

    def valid(state) -> bool:
        h = state.getYaw()
        c, s = math.cos(h), math.sin(h)
        pts = ring @ np.array([[c, s], [-s, c]]) + [state.getX(), state.getY()]
        return not obst.intersects(Polygon(pts))

    space = ob.ReedsSheppStateSpace(CAR_RADIUS_M)
    bounds = ob.RealVectorBounds(2)
    bounds.setLow(0, 0.0)
    bounds.setHigh(0, W)
    bounds.setLow(1, 0.0)
    bounds.setHigh(1, H)
    space.setBounds(bounds)
    ss = og.SimpleSetup(space)
    ss.setStateValidityChecker(valid)
    si = ss.getSpaceInformation()
    si.setStateValidityCheckingResolution(0.0005)      # of the space extent: about 1 cm
    a, b = space.allocState(), space.allocState()
    for state, pose in ((a, start), (b, goal)):
        state.setX(pose[0])
        state.setY(pose[1])
        # OMPL's SO(2) bounds are [-pi, pi): pi itself is out of bounds
        state.setYaw(math.remainder(math.radians(pose[2]), 2 * math.pi) if pose[2] != 180 else -math.pi)
    ss.setStartAndGoalStates(a, b, 0.01)
    ss.setPlanner(og.RRTConnect(si))
    return bool(ss.solve(OMPL_SECONDS)) and ss.haveExactSolutionPath()


def _pairs(plan, footprint, n: int, seed: int):
    """n start/goal pairs of poses where ``footprint`` is free (local frame), headings in whole degrees."""
    rng = np.random.default_rng(seed)
    check = PoseChecker(plan, footprint)
    out = []
    while len(out) < n:
        p = np.column_stack([rng.uniform(0.5, W - 0.5, 2), rng.uniform(0.5, H - 0.5, 2),
                             rng.integers(-179, 181, 2).astype(float)])
        if not check.collides(p).any():
            out.append((tuple(p[0]), tuple(p[1])))
    return out


def _run(fp_name: str, n: int, seed: int) -> list[dict]:
    plan, obstacles = _world()
    base = vehicle_from_outline(FOOTPRINTS[fp_name], name=fp_name, mode="omni")
    diff = dataclasses.replace(base, mode="differential")
    car = dataclasses.replace(base, mode="car", min_turn_radius_m=CAR_RADIUS_M)
    slices = build_slices(plan, base, heading_step_deg=5.0)
    G = build_roadmap(slices)
    # The sound analysis may call a motion blocked when its clearance is below the slices'
    # tolerance, so OMPL and the pose draw get the footprint grown by that tolerance: every
    # motion OMPL finds then has the clearance that the analysis promises to accept.
    grown = base.footprint.buffer(slices.tolerance_m, join_style="mitre")
    rows = []
    for k, (s, g) in enumerate(_pairs(plan, grown, n, seed)):
        sd = (s[0] + ORIGIN[0], s[1] + ORIGIN[1], s[2])
        gd = (g[0] + ORIGIN[0], g[1] + ORIGIN[1], g[2])
        kw = dict(slices=slices, roadmap=G, check_optimistic=False)
        hol = ff.find_route(plan, base, sd, gd, **kw)
        row = {"footprint": fp_name, "pair": k, "holonomic": hol.status, "holonomic_m": hol.length_m,
               "ompl": _ompl_finds(obstacles, grown, s, g, seed=1000 + k)}
        for name, v in (("differential", diff), ("car", car)):
            r = ff.find_route(plan, v, sd, gd, **kw)
            row[name] = r
            if r.status == "reachable":
                assert_path_clear(plan, v, r.path)
                assert r.tolerance_m <= slices.tolerance_m + 0.005
        rows.append(row)
    return rows


def _assert_complete_and_good(rows: list[dict]) -> dict:
    """Completeness on every pair; on every pair the differential path has at most two direction
    changes more than the car path."""
    connected = [r for r in rows if r["holonomic"] == "reachable"]
    over = []
    for r in rows:
        if r["ompl"]:           # OMPL found a car path: so must floorfit, for both bases
            assert r["differential"].status == "reachable", (r["footprint"], r["pair"], r["differential"].notes)
            assert r["car"].status == "reachable", (r["footprint"], r["pair"], r["car"].notes)
    for r in connected:         # complete relative to the holonomic analysis
        assert r["differential"].status == "reachable", (r["footprint"], r["pair"], r["differential"].notes)
        assert r["car"].status == "reachable", (r["footprint"], r["pair"], r["car"].notes)
        if r["differential"].direction_changes > r["car"].direction_changes + 2:
            over.append((r["footprint"], r["pair"], r["differential"].direction_changes, r["car"].direction_changes))
    assert not over, over
    ratios = [r["differential"].length_m / r["holonomic_m"] for r in connected if r["holonomic_m"] > 0.5]
    return {"connected": len(connected), "ompl": sum(r["ompl"] for r in rows), "length_ratios": ratios}


@pytest.mark.parametrize("fp_name", sorted(FOOTPRINTS))
def test_drivable_paths_wherever_the_holonomic_analysis_or_ompl_connects_quick(fp_name):
    rows = _run(fp_name, 2, seed=11)
    _assert_complete_and_good(rows)


@pytest.mark.slow
def test_drivable_paths_wherever_the_holonomic_analysis_or_ompl_connects_60_pairs():
    rows = []
    for fp_name in sorted(FOOTPRINTS):
        rows += _run(fp_name, 20, seed=3)
    summary = _assert_complete_and_good(rows)
    assert summary["connected"] >= 45
    # the differential path keeps close to the holonomic route where the corridor allows
    ratios = np.asarray(summary["length_ratios"])
    assert np.median(ratios) <= 1.3
