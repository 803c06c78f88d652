"""The optimised slice kernel agrees with a straightforward reference construction.

The reference is the original construction, kept here on purpose: every obstacle on its
own (wall segments, convex solids, a non-convex solid as its constrained Delaunay
triangles), convex ⊕ convex as the convex hull of all pairwise vertex sums (de Berg et
al., *Computational Geometry*, 3rd ed., ch. 13), one ``union_all`` per slice.
The optimised path merges obstacle pieces, builds the sums by edge merging, unions by
clusters and may run on a process pool; the free space and the reachability between
stations must come out the same.
"""

import sys
from pathlib import Path

import networkx as nx
import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import Polygon

import floorfit as ff
from floorfit.cspace import freespace
from floorfit.cspace.collision import PoseChecker
from floorfit.cspace.freespace import free_components
from floorfit.cspace.headings import make_heading_cells
from floorfit.cspace.minkowski import ConvexGroup, convex_sums, footprint_parts_at, is_convex, prepare_obstacles
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slices import SliceSet, build_slices, slice_domain, slice_recipe
from floorfit.plan.model import Plan

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))
from benchmarks.warehouse import FOOTPRINTS, warehouse  # noqa: E402  (the benchmark's site generator)


# --- the reference construction ------------------------------------------------------
def _ref_segments(geoms) -> list[np.ndarray]:
    segs = []
    for g in geoms:
        for part in shapely.get_parts(shapely.boundary(g) if isinstance(g, Polygon) else g):
            c = np.asarray(part.coords)
            segs.extend(np.stack([c[:-1], c[1:]], axis=1))
    return segs


def reference_cobstacle(plan: Plan, part_vertices) -> object:
    """∪ O ⊕ (−P) by convex hulls of pairwise vertex sums, obstacle by obstacle, one union.

    Non-convex solids are cut into constrained Delaunay triangles (exact for any footprint,
    also the disconnected inner footprints of the optimistic bound).
    """
    convex = [np.asarray(s.exterior.coords)[:-1] for s in plan.solids if is_convex(s)]
    for s in plan.solids:
        if not is_convex(s):
            tris = shapely.get_parts(shapely.constrained_delaunay_triangles(s))
            convex.extend(np.asarray(t.exterior.coords)[:-1] for t in tris if t.area > 0)
    pieces = []
    for P in part_vertices:
        for ob in convex + _ref_segments(plan.walls):
            pieces.append(shapely.MultiPoint((ob[:, None, :] - P[None, :, :]).reshape(-1, 2)).convex_hull)
    return shapely.union_all(pieces)


def reference_slices(plan: Plan, vehicle, cells, bound: str) -> SliceSet:
    recipe = slice_recipe(plan, vehicle, cells, bound)
    domain = slice_domain(prepare_obstacles(plan.walls, plan.solids).bounds, vehicle)
    comps = []
    for parts, heading, grow, _ in recipe.jobs:
        verts = footprint_parts_at(parts, heading, max(grow, 0.0))
        comps.append(free_components(shapely.difference(domain, reference_cobstacle(plan, verts))))
    return SliceSet(plan=plan, vehicle=vehicle, cells=cells, components=comps, grow_m=recipe.grow, bound=bound,
                    tolerance_m=recipe.tolerance, domain=domain)


# --- sites ------------------------------------------------------------------------------
def _circle(cx, cy, r, n=16):
    t = np.linspace(0, 2 * np.pi, n, endpoint=False)
    return Polygon(np.c_[cx + r * np.cos(t), cy + r * np.sin(t)])


def warehouse_plan(site) -> Plan:
    """The benchmark generator's geometry as a plan (no DXF round trip; invented data)."""
    walls = [shapely.LineString(r + r[:1]) for r in site.walls]
    solids = [Polygon(r) for r in site.rack_rings()]
    solids += [shapely.box(cx - h, cy - h, cx + h, cy + h) for cx, cy, h in site.flue_columns]
    solids += [_circle(cx, cy, r) for cx, cy, r in site.round_columns]
    solids += [Polygon(m) for m in site.machines]
    # non-convex solids for every generated size: an L-shaped machine and a frame with a hole
    solids.append(Polygon([(18.0, 0.6), (19.2, 0.6), (19.2, 1.0), (18.4, 1.0), (18.4, 1.6), (18.0, 1.6)]))
    solids.append(shapely.box(21.0, 0.6, 22.0, 1.6).difference(shapely.box(21.25, 0.85, 21.75, 1.35)))
    return Plan.from_geometries(walls=walls, solids=solids)


def vehicle(name: str):
    spec = FOOTPRINTS[name]
    return ff.vehicle_from_outline(spec["outline"], name=name, margin=spec["margin"], mode=spec["mode"])


@pytest.fixture(scope="module")
def small_site():
    site = warehouse(30.0, 18.0)
    return site, warehouse_plan(site)


def _stations_local(site, plan):
    return {n: plan.to_local(x, y) for n, (x, y, _) in site.stations.items()}


def _reach(slices: SliceSet, pts: dict) -> dict:
    """Station pairs joined in the roadmap (any heading at each station)."""
    G = build_roadmap(slices)
    comp = {n: i for i, c in enumerate(nx.connected_components(G)) for n in c}
    where = {}
    for name, (x, y) in pts.items():
        where[name] = {comp[(k, int(i))] for k in range(len(slices))
                       for i in slices.tree(k).query(shapely.Point(x, y), predicate="intersects")}
    names = sorted(pts)
    return {(a, b): bool(where[a] & where[b]) for i, a in enumerate(names) for b in names[i + 1:]}


# --- tests ------------------------------------------------------------------------------
def _convex(points) -> np.ndarray | None:
    # points on a 1 nm grid: plan coordinates come from drawings in metres; a hull with vertices
    # 1e-283 m apart (found by Hypothesis) is convex for GEOS but not for the edge directions
    # computed from those differences, and no drawing holds such geometry
    hull = shapely.set_precision(shapely.MultiPoint(points), 1e-9).convex_hull
    if hull.geom_type == "Polygon" and hull.area > 1e-6:
        return np.asarray(hull.exterior.coords)[:-1]
    if hull.geom_type == "LineString" and hull.length > 1e-6:
        return np.asarray(hull.coords)
    return None


_pts = st.lists(st.tuples(st.floats(-50, 50, allow_nan=False), st.floats(-50, 50, allow_nan=False)),
                min_size=2, max_size=12)


@settings(max_examples=200, deadline=None)
@given(_pts, _pts, st.integers(0, 4), st.booleans(), st.floats(-1e4, 1e4))
def test_edge_merge_sum_equals_hull_of_pairwise_sums(a_pts, b_pts, pad, clockwise, offset):
    A, B = _convex(a_pts), _convex(b_pts)
    if A is None or B is None or len(B) < 3:
        return
    A = A + offset                      # far from the origin, as plans are
    if pad:                             # padded rings repeat their last vertex
        A = np.vstack([A, np.repeat(A[-1:], pad, axis=0)])
    if clockwise:
        B = B[::-1]
    ours = shapely.polygons(convex_sums(ConvexGroup.of(A[None]), B))[0]
    ref = shapely.MultiPoint((A[:, None, :] + B[None, :, :]).reshape(-1, 2)).convex_hull
    assert ours.is_valid
    assert ours.area == pytest.approx(ref.area, rel=1e-12, abs=1e-12 * (1 + abs(offset)) ** 2)
    assert shapely.symmetric_difference(ours, ref).area <= 1e-9 * max(ref.area, 1.0)
    # de Berg et al. ch. 13: at most m + n edges once collinear vertices are dropped
    assert len(shapely.simplify(ours, 0).exterior.coords) - 1 <= len(np.unique(A, axis=0)) + len(B)


@pytest.mark.parametrize("fp", ["rect", "tugcart"])
@pytest.mark.parametrize("bound", ["sound", "optimistic"])
def test_optimised_slices_equal_reference_on_generated_site(small_site, fp, bound):
    site, plan = small_site
    veh = vehicle(fp)
    cells = make_heading_cells(45.0 if fp == "tugcart" else 30.0)     # few headings keep the reference quick
    ours = build_slices(plan, veh, cells=cells, bound=bound)
    ref = reference_slices(plan, veh, cells, bound)
    for k in range(len(cells)):
        a, b = ours.free(k), ref.free(k)
        assert a.area == pytest.approx(b.area, rel=1e-9)
        assert shapely.symmetric_difference(a, b).area < 1e-9
        assert len(ours.components[k]) == len(ref.components[k])
    assert _reach(ours, _stations_local(site, plan)) == _reach(ref, _stations_local(site, plan))


@pytest.mark.skipif(freespace.pyclipper is None, reason="pyclipper not installed: only the GEOS path exists")
@pytest.mark.parametrize("bound", ["sound", "optimistic"])
def test_integer_clipping_agrees_with_geos_overlay(small_site, monkeypatch, bound):
    # the two ways of forming the free space: one integer sweep (pyclipper) and GEOS unions
    _, plan = small_site
    veh = vehicle("tugcart")
    cells = make_heading_cells(45.0)
    monkeypatch.setattr(freespace, "UNION_BACKEND", "clipper")
    fast = build_slices(plan, veh, cells=cells, bound=bound)
    monkeypatch.setattr(freespace, "UNION_BACKEND", "geos")
    geos = build_slices(plan, veh, cells=cells, bound=bound)
    for a, b in zip(fast.components, geos.components):
        assert len(a) == len(b)
        assert np.all(shapely.is_valid(a))
        assert shapely.symmetric_difference(shapely.union_all(a), shapely.union_all(b)).area < 1e-9


@pytest.mark.parametrize("heading", [0.0, 37.1, -121.7])
def test_poses_touching_an_obstacle_are_never_free(heading):
    # poses on the exact C-obstacle boundary touch the obstacle (collide); the sound slice
    # must not call them free, whatever snapping the clipping does (coordinates off any grid)
    rng = np.random.default_rng(int(heading * 10) % 1000)
    x0, y0 = rng.uniform(10, 20, 2)
    obstacle = shapely.box(x0, y0, x0 + 1.2345678901, y0 + 0.7654321098)
    plan = Plan.from_geometries(walls=[shapely.box(0, 0, 40, 40).exterior], solids=[obstacle])
    veh = ff.rectangle_vehicle(0.9137, 0.6021, reference_to_front=0.6113)
    cells = make_heading_cells(0.0, only=[heading])          # one heading, no rotation allowance
    slices = build_slices(plan, veh, cells=cells)
    fp = np.asarray(shapely.affinity.rotate(veh.footprint, heading, origin=(0, 0)).exterior.coords)[:-1]
    ob = np.asarray(obstacle.exterior.coords)[:-1]
    exact = shapely.MultiPoint((ob[:, None, :] - fp[None, :, :]).reshape(-1, 2)).convex_hull
    ring = np.asarray(exact.exterior.coords)
    t = np.linspace(0, 1, 200, endpoint=False)[:, None]
    pts = np.vstack([a + t * (b - a) for a, b in zip(ring[:-1], ring[1:])])
    poses = np.c_[pts, np.full(len(pts), heading)]
    assert not slices.are_free(poses).any()
    # and just outside (1 µm) the same poses are free: the slice is not needlessly small
    outward = np.c_[shapely.get_coordinates(shapely.buffer(exact, 1e-6, join_style="mitre").exterior)[:-1],
                    np.full(len(ring) - 1, heading)]
    assert slices.are_free(outward).all()


def test_process_pool_gives_the_same_slices(small_site):
    _, plan = small_site
    veh = vehicle("round16")
    cells = make_heading_cells(30.0)
    one = build_slices(plan, veh, cells=cells, workers=1)
    two = build_slices(plan, veh, cells=cells, workers=2)
    for a, b in zip(one.components, two.components):
        assert len(a) == len(b)
        assert shapely.symmetric_difference(shapely.union_all(a), shapely.union_all(b)).area == 0.0


def test_merged_obstacle_pieces_keep_the_union(small_site):
    # bays drawn one by one become long convex pieces; the union of the pieces is unchanged
    _, plan = small_site
    prepared = prepare_obstacles(plan.walls, plan.solids)
    polys = [shapely.polygons(g.vertices) for g in prepared.convex_groups if g.vertices.shape[1] > 2]
    union_prepared = shapely.union_all(np.concatenate(polys))
    union_raw = shapely.union_all(plan.solids)
    assert shapely.symmetric_difference(union_prepared, union_raw).area < 1e-9
    assert prepared.piece_count < len(plan.solids) + sum(shapely.get_num_coordinates(plan.walls) - 1)


def test_sound_slices_stay_sound_against_pose_checks(small_site):
    # every pose the optimised sound slices call free is clear of the obstacles (direct test)
    _, plan = small_site
    veh = vehicle("tugcart")
    slices = build_slices(plan, veh, heading_step_deg=10.0)
    rng = np.random.default_rng(4)
    x0, y0, x1, y1 = plan.local_bounds()
    poses = np.c_[rng.uniform(x0, x1, 4000), rng.uniform(y0, y1, 4000), rng.uniform(-180, 180, 4000)]
    free = slices.are_free(poses)
    hit = PoseChecker(plan, veh.footprint).collides(poses[free])
    assert free.sum() > 500 and not hit.any()
