"""Slices checked pose by pose against an independent collision library (python-fcl).

fcl is used with its GST_INDEP GJK solver (the default solver reported false collisions
between convex prisms on this machine kind; see ../shared/README.md). Obstacles and
footprints are extruded to prisms of equal height; a pose collides when the prisms do.
"""

import math

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon

import floorfit as ff
from floorfit.plan.model import Plan

fcl = pytest.importorskip("fcl")

_REQ = fcl.CollisionRequest(gjk_solver_type=fcl.GJKSolverType.GST_INDEP)


def _prism(poly: Polygon, z0=0.0, z1=1.0):
    ring = np.asarray(poly.exterior.coords)[:-1]
    if not Polygon(ring).exterior.is_ccw:
        ring = ring[::-1]
    n = len(ring)
    verts = np.vstack([np.c_[ring, np.full(n, z0)], np.c_[ring, np.full(n, z1)]])
    faces = [n] + list(range(n - 1, -1, -1)) + [n] + list(range(n, 2 * n))
    for i in range(n):
        j = (i + 1) % n
        faces += [4, i, j, n + j, n + i]
    return fcl.Convex(verts, n + 2, np.asarray(faces))


def _objects(polys):
    return [fcl.CollisionObject(_prism(p), fcl.Transform()) for p in polys]


def _collides(obstacles, foot_parts, pose) -> bool:
    x, y, h = pose
    t = math.radians(h)
    R = np.array([[math.cos(t), -math.sin(t), 0], [math.sin(t), math.cos(t), 0], [0, 0, 1]])
    for part in foot_parts:
        obj = fcl.CollisionObject(part, fcl.Transform(R, np.array([x, y, 0.0])))
        for o in obstacles:
            res = fcl.CollisionResult()
            if fcl.collide(obj, o, _REQ, res):
                return True
    return False


def _random_site(seed):
    rng = np.random.default_rng(seed)
    solids = [shapely.box(0, 0, 10, 0.2), shapely.box(0, 7.8, 10, 8),
              shapely.box(0, 0, 0.2, 8), shapely.box(9.8, 0, 10, 8)]
    for _ in range(9):
        cx, cy = rng.uniform(1.5, 8.5), rng.uniform(1.5, 6.5)
        w, h = rng.uniform(0.2, 1.5), rng.uniform(0.2, 1.5)
        solids.append(shapely.affinity.rotate(shapely.box(cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2),
                                              rng.uniform(0, 90)))
    return solids


@pytest.mark.parametrize("seed", [1, 2])
@pytest.mark.parametrize("shape", ["rectangle", "L"])
def test_sound_slices_never_call_a_colliding_pose_free(seed, shape):
    solids = _random_site(seed)
    plan = Plan.from_geometries(solids=solids)
    if shape == "rectangle":
        veh = ff.rectangle_vehicle(0.9, 0.6, reference_to_front=0.65)
        parts = [veh.footprint]
    else:  # robot towing a cart: non-convex outline, reference at the drive axle
        outline = [(0.4, -0.3), (0.4, 0.3), (-0.2, 0.3), (-0.2, 0.15),
                   (-1.2, 0.15), (-1.2, -0.15), (-0.2, -0.15), (-0.2, -0.3)]
        veh = ff.vehicle_from_outline(outline, name="tug+cart")
        parts = [shapely.box(-0.2, -0.3, 0.4, 0.3), shapely.box(-1.2, -0.15, -0.2, 0.15)]
        assert shapely.union_all(parts).symmetric_difference(veh.footprint).area < 1e-12
    foot = [_prism(p) for p in parts]
    obstacles = _objects(solids)
    sound = ff.build_slices(plan, veh, heading_step_deg=5.0)
    optimistic = ff.build_slices(plan, veh, heading_step_deg=5.0, bound="optimistic")
    rng = np.random.default_rng(100 + seed)
    poses = np.c_[rng.uniform(0, 10, 1500), rng.uniform(0, 8, 1500), rng.uniform(-180, 180, 1500)]
    free_sound = sound.are_free(poses)
    free_opt = optimistic.are_free(poses)
    oracle = np.array([_collides(obstacles, foot, p) for p in poses])
    # zero false "free" allowed: a pose the sound slices call free does not collide
    assert not np.any(free_sound & oracle)
    # and the optimistic slices contain every pose fcl finds clear
    assert not np.any(~free_opt & ~oracle)
    # sanity: both answers occur in the sample
    assert free_sound.sum() > 100 and oracle.sum() > 100
