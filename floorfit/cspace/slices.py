"""Heading slices of the configuration space (plane × circle).

Each slice stands for one *heading cell* (see :mod:`floorfit.cspace.headings`). Two bounds are
built from the same machinery:

``"sound"`` (the default)
    The footprint is grown by ``2ρ·sin(Δ/2) + curve tolerance`` (ρ the footprint's
    radius about the reference point, Δ the largest rotation from the slice heading that
    stays in the cell). A point of the slice's free space is then clear **at every
    heading of the cell**: the vehicle may translate there at the slice heading and
    rotate anywhere within the cell. Errs towards "does not fit" by at most
    ``tolerance_m``.
``"optimistic"``
    The footprint is shrunk by the same amount. A position where the vehicle is clear at
    *some* heading of the cell lies in this slice, so a route that does not exist here
    does not exist at all. Errs towards "fits" by at most ``tolerance_m``.

Free space is limited to a rectangle around the plan (its obstacles' bounds grown by the
vehicle radius plus 1 m). Components smaller than ``MIN_COMPONENT_AREA_M2`` are dropped
(conservative for the sound bound).

Speed
-----
The obstacles are prepared once for all headings (:func:`floorfit.cspace.minkowski.prepare_obstacles`).
Obstacles farther apart than the footprint's diameter can never have overlapping
C-obstacles, so they are grouped into clusters once (:func:`obstacle_clusters`) and each
slice unions every cluster's pieces on its own; the cluster unions are disjoint and form
the C-obstacle directly. Headings are independent and run on a process pool
(``workers``); a single heading's union is not split (that does not pay).
"""

from __future__ import annotations

import math
import os
import signal
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field

import numpy as np
import shapely
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial.distance import pdist
from shapely.geometry import Polygon, box

from floorfit.cspace.headings import (
    HeadingCells,
    default_step_deg,
    dominant_directions_deg,
    make_heading_cells,
    rotation_displacement_m,
    wrap_deg,
)
from floorfit.cspace.minkowski import (
    ObstacleSet,
    cobstacle_pieces,
    cobstacle_rings,
    convex_parts,
    footprint_parts_at,
    prepare_obstacles,
)
from floorfit.plan.model import Plan
from floorfit.vehicles.rigid import Vehicle

try:                                   # integer polygon clipping (Vatti); the GEOS path is the fallback
    import pyclipper
except ImportError:                    # pragma: no cover - depends on the installation
    pyclipper = None

__all__ = ["SliceSet", "build_slices", "choose_headings", "obstacles_for", "obstacles_met", "obstacle_clusters",
           "SliceRecipe", "slice_recipe", "slice_domain", "cluster_reach_m", "run_slice_jobs", "slice_cobstacle",
           "slice_free", "free_components", "canonical_order", "union_polygons", "UNION_BACKEND", "CLIP_SCALE",
           "CLIP_GUARD_M", "MIN_COMPONENT_AREA_M2", "DOMAIN_PAD_M", "BOUNDS", "half_turn_twins",
           "CASCADE_MIN_RINGS", "CASCADE_GUARD_M", "CASCADE_LEAF", "CASCADE_FANOUT", "worker_count", "pool_size",
           "POOL_MIN_WORK",
           "shared_jobs", "TWIN_GROW_TOL_M", "cached_share"]

#: Free-space components smaller than this are dropped, square metres.
MIN_COMPONENT_AREA_M2 = 1e-6
#: Free space extends this far (plus the vehicle radius) beyond the obstacles, metres.
DOMAIN_PAD_M = 1.0
BOUNDS = ("sound", "optimistic")


def obstacles_for(plan: Plan, vehicle: Vehicle | None = None) -> ObstacleSet:
    """Heading-independent obstacle preparation for ``plan``.

    An obstacle counts where its height range (bottom, top) overlaps the vehicle's
    (0, height): bottom < height and top > 0. Without a vehicle height every obstacle
    reaching above the floor counts.
    """
    return prepare_obstacles(*obstacles_met(plan, vehicle))


def obstacles_met(plan: Plan, vehicle: Vehicle | None = None) -> tuple[np.ndarray, np.ndarray]:
    """The walls and solids of ``plan`` that count for ``vehicle`` (see :func:`obstacles_for`), local frame."""
    walls, solids = plan.walls, plan.solids
    height = getattr(vehicle, "height_m", None) if vehicle is not None else None
    h = np.inf if height is None else height
    if len(walls):
        walls = walls[(plan.wall_heights[:, 0] < h) & (plan.wall_heights[:, 1] > 0)]
    if len(solids):
        solids = solids[(plan.solid_heights[:, 0] < h) & (plan.solid_heights[:, 1] > 0)]
    return walls, solids


def choose_headings(plan: Plan, vehicle: Vehicle, *, heading_step_deg: float | None = None,
                    extra_headings=(), wall_directions: bool = True) -> HeadingCells:
    """Slice headings: a uniform step, the plan's dominant wall directions and ``extra_headings``.

    A vehicle of mode ``"fixed"`` gets exactly one heading (its ``fixed_heading_deg``, or
    the first extra heading).
    """
    if vehicle.mode == "fixed":
        h = vehicle.fixed_heading_deg
        if h is None:
            extra = list(extra_headings)
            h = extra[0] if extra else 0.0
        return make_heading_cells(0.0, only=[h])
    step = check_heading_step(heading_step_deg) if heading_step_deg is not None else default_step(plan, vehicle)
    extra = [float(h) for h in extra_headings]
    if wall_directions and len(plan.walls):
        for d in dominant_directions_deg(plan.walls):
            extra.extend([d, d + 90.0, d + 180.0, d + 270.0])
    return make_heading_cells(step, extra)


# --- heading step and stated tolerance (issue 16) ---
#: Smallest and largest heading step a user may ask for, degrees: below 0.1° a check needs
#: thousands of slices; above 45° a slice stands for more than an eighth of a turn.
MIN_HEADING_STEP_DEG = 0.1
MAX_HEADING_STEP_DEG = 45.0
#: The default step is refined (down to :data:`REFINE_STEPS_DEG`) until the stated sound
#: tolerance is at most this, metres.
TARGET_TOLERANCE_M = 0.03
REFINE_STEPS_DEG = (0.75, 0.5)


def check_heading_step(step_deg) -> float:
    """A user's heading step (degrees), refused unless finite and in [0.1, 45]."""
    from floorfit.errors import InputError

    try:
        step = float(step_deg)
    except (TypeError, ValueError):
        raise InputError(f"heading step must be a number of degrees, got {step_deg!r}", None,
                         "heading step") from None
    if not (math.isfinite(step) and MIN_HEADING_STEP_DEG <= step <= MAX_HEADING_STEP_DEG):
        raise InputError(f"heading step must be between {MIN_HEADING_STEP_DEG:g}° and {MAX_HEADING_STEP_DEG:g}°, "
                         f"got {step_deg:g}°", None, "heading step")
    return step


def default_step(plan: Plan, vehicle: Vehicle) -> float:
    """The default uniform heading step (degrees) for ``vehicle``.

    The coarsest step whose half-cell rotation moves no footprint point more than 1 cm
    (:func:`floorfit.cspace.headings.default_step_deg`), refined while the stated tolerance
    (:func:`sound_tolerance_m`) exceeds :data:`TARGET_TOLERANCE_M`; very large vehicles stop at
    the finest refinement and state a larger tolerance.
    """
    step = default_step_deg(vehicle.radius_m)
    parts = convex_parts(vehicle.footprint)
    for candidate in (step,) + tuple(s for s in REFINE_STEPS_DEG if s < step):
        step = candidate
        half = step / 2.0
        grow = rotation_displacement_m(vehicle.radius_m, half) + plan.curve_tolerance_m
        if sound_tolerance_m(parts, vehicle.footprint, half, grow) <= TARGET_TOLERANCE_M:
            break
    return step
# --- end heading step


def obstacle_clusters(obstacles: ObstacleSet, reach_m: float) -> np.ndarray:
    """Cluster label of every C-obstacle piece :func:`cobstacle_pieces` returns for ONE footprint part.

    Pieces of obstacles farther apart than ``reach_m`` (at least the footprint's diameter)
    can never have overlapping C-obstacles: if o1 − f1 = o2 − f2 then |o1 − o2| = |f1 − f2|.
    So each cluster of obstacles closer than ``reach_m`` to one another is unioned on its
    own and the results are disjoint. Labels run over the convex groups in order, then
    the non-convex solids.
    """
    geoms = []
    for G in obstacles.convex_groups:
        V = G.vertices
        geoms.append(shapely.linestrings(V) if V.shape[1] == 2 else shapely.polygons(V))
    if len(obstacles.nonconvex):
        geoms.append(np.asarray(obstacles.nonconvex, dtype=object))
    if not geoms:
        return np.zeros(0, dtype=np.int64)
    geoms = np.concatenate(geoms)
    # pairs whose bounding boxes come within reach, then the exact distance of those pairs
    # (five times faster than the tree's dwithin predicate on a real floor of 16,500 pieces)
    b = shapely.bounds(geoms)
    near = shapely.box(b[:, 0] - reach_m, b[:, 1] - reach_m, b[:, 2] + reach_m, b[:, 3] + reach_m)
    i, j = shapely.STRtree(geoms).query(near)
    upper = i < j
    i, j = i[upper], j[upper]
    close = shapely.distance(geoms[i], geoms[j]) <= reach_m
    i, j = i[close], j[close]
    n = len(geoms)
    graph = coo_matrix((np.ones(len(i), dtype=np.int8), (i, j)), shape=(n, n))
    return connected_components(graph, directed=False)[1]


def _piece_labels(obstacles: ObstacleSet, labels: np.ndarray, n_parts: int) -> np.ndarray:
    n_convex = sum(len(G) for G in obstacles.convex_groups)
    return np.concatenate([np.tile(labels[:n_convex], n_parts), labels[n_convex:]])


def _union_by_cluster(pieces: np.ndarray, labels: np.ndarray | None):
    """Union of ``pieces``; with cluster ``labels`` (disjoint clusters) one union per cluster."""
    if labels is None or len(pieces) != len(labels) or len(pieces) < 2:
        return shapely.union_all(pieces) if len(pieces) else Polygon()
    order = np.argsort(labels, kind="stable")
    cut = np.flatnonzero(np.diff(labels[order])) + 1
    if not len(cut):
        return shapely.union_all(pieces)
    polys = []
    for grp in np.split(pieces[order], cut):
        u = grp[0] if len(grp) == 1 else shapely.union_all(grp)
        polys.extend(g for g in shapely.get_parts(u) if shapely.get_type_id(g) == 3)
    return shapely.multipolygons(polys)


def slice_cobstacle(obstacles: ObstacleSet, parts: list[Polygon], heading: float, grow: float,
                    anchor_local: np.ndarray, labels: np.ndarray | None = None):
    """The C-obstacle of one slice: the union of ``O ⊕ (−P)`` over obstacles O and footprint parts P.

    ``parts`` (vehicle frame) are rotated to ``heading`` (degrees) and offset by ``grow``
    metres (mitre; negative values are taken as 0); ``anchor_local`` is the footprint point
    that translates non-convex solids; ``labels`` the clusters of
    :func:`obstacle_clusters` (optional, for speed only). Local frame, metres.
    """
    verts = footprint_parts_at(parts, heading, grow if grow >= 0 else 0.0)
    t = math.radians(heading)
    c, s = math.cos(t), math.sin(t)
    anchor = np.array([c * anchor_local[0] - s * anchor_local[1], s * anchor_local[0] + c * anchor_local[1]])
    pieces = cobstacle_pieces(obstacles, verts, anchor)
    piece_labels = _piece_labels(obstacles, labels, len(verts)) if labels is not None else None
    return _union_by_cluster(pieces, piece_labels)


def canonical_order(comps: np.ndarray) -> np.ndarray:
    """Components sorted by the lower-left corner of their bounds (then area), to 1e-9 m.

    The order does not depend on how the free space was computed (either overlay path, a
    full build or :func:`floorfit.cspace.incremental.update_slices`), so node numbers ``(k, i)``
    and anything that samples components in order agree between them.
    """
    if len(comps) < 2:
        return comps
    b = np.round(shapely.bounds(comps) * 1e9)
    order = np.lexsort((np.round(shapely.area(comps) * 1e9), b[:, 3], b[:, 2], b[:, 1], b[:, 0]))
    return comps[order]


def free_components(free) -> np.ndarray:
    """Polygon components of a free geometry (canonical order), without those under ``MIN_COMPONENT_AREA_M2``."""
    comps = shapely.get_parts(free)
    comps = comps[shapely.get_type_id(comps) == 3] if len(comps) else comps
    if len(comps):
        comps = comps[shapely.area(comps) > MIN_COMPONENT_AREA_M2]
    return canonical_order(comps)


#: How the slices' free space is computed: ``"clipper"`` (one Vatti sweep over all pieces on
#: an integer grid, pyclipper) when available, else ``"geos"`` (shapely unions by cluster).
UNION_BACKEND = "clipper" if pyclipper is not None else "geos"
#: Grid of the integer clipping: coordinates are multiples of 2**-40 m (about 0.9e-12 m).
CLIP_SCALE = float(2 ** 40)
#: The sound footprint is grown by this much more (metres): 4 grid steps, more than the
#: snapping can move a boundary (input vertices ½ step per coordinate, intersection points
#: ½ step in each of the two sweeps: at most 1.5·√2 steps), so a C-obstacle never shrinks
#: and poses that touch an obstacle are never inside the free space.
CLIP_GUARD_M = 4.0 / CLIP_SCALE


def _region_paths(region) -> list[np.ndarray]:
    rings = shapely.get_rings(shapely.get_parts(region))
    out = []
    for r in rings:
        c = np.asarray(r.coords)[:-1]
        if len(c) >= 3:
            out.append(np.round(c * CLIP_SCALE).astype(np.int64))
    return out


def _tree_polygons(tree) -> list:
    """Polygons of a pyclipper PolyTree (outer contours with their holes; islands in holes as new polygons)."""
    out = []
    stack = list(tree.Childs)
    while stack:
        node = stack.pop()
        shell = np.asarray(node.Contour, dtype=float) / CLIP_SCALE
        holes = [np.asarray(h.Contour, dtype=float) / CLIP_SCALE for h in node.Childs]
        out.append(shapely.Polygon(shell, holes))
        for h in node.Childs:
            stack.extend(h.Childs)
    return out


#: A cluster with at least this many rings is unioned divide-and-conquer (:func:`_cascade_union`);
#: smaller ones in one sweep. On a real drawing the walls form one cluster of thousands of
#: overlapping pieces, and one sweep over them all grows far worse than linearly.
CASCADE_MIN_RINGS = 512
#: Rings per leaf of the cascade (unioned in one sweep before the merges).
CASCADE_LEAF = 16
#: Neighbouring results merged in one sweep at each level of the cascade. On a real office
#: floor (16,500 rings in one cluster) leaves of 16 merged 8 at a time took 30 % less time
#: than leaves of 32 merged pairwise.
CASCADE_FANOUT = 8
#: Extra growth of the sound footprint (metres) when a cascade runs: every level of merges
#: may round an intersection point by half a grid step (at most √2/2 steps off the true
#: boundary), so 64 steps cover more than 80 levels, far beyond the ~log8(rings / leaf)
#: levels a cascade has.
CASCADE_GUARD_M = 64.0 / CLIP_SCALE


def _union_sweep(paths) -> list:
    pc = pyclipper.Pyclipper()
    pc.AddPaths(paths, pyclipper.PT_SUBJECT, True)
    return pc.Execute(pyclipper.CT_UNION, pyclipper.PFT_NONZERO, pyclipper.PFT_NONZERO)


def _morton_order(centres: np.ndarray) -> np.ndarray:
    """Indices of ``centres`` (N, 2) along a Z-order (Morton) curve over their bounds (stable on ties)."""
    lo = centres.min(axis=0)
    span = np.maximum(centres.max(axis=0) - lo, 1e-300)
    q = np.minimum((centres - lo) / span * 65535.0, 65535.0).astype(np.uint64)

    def spread(v):
        v = (v | (v << np.uint64(8))) & np.uint64(0x00FF00FF)
        v = (v | (v << np.uint64(4))) & np.uint64(0x0F0F0F0F)
        v = (v | (v << np.uint64(2))) & np.uint64(0x33333333)
        return (v | (v << np.uint64(1))) & np.uint64(0x55555555)

    return np.argsort(spread(q[:, 0]) | (spread(q[:, 1]) << np.uint64(1)), kind="stable")


def _cascade_union(paths: list, centres: np.ndarray) -> list:
    """Union of integer ``paths`` (non-zero winding) by divide and conquer, as GEOS's cascaded union does.

    The rings are ordered along a Z-order curve of their centres, unioned in leaves of
    :data:`CASCADE_LEAF` neighbours, then :data:`CASCADE_FANOUT` neighbouring results at a
    time are merged up a tree. Each sweep then sees only the edges of one neighbourhood, so
    the cost grows about as n·log n instead of with n times the edges crossing a scanline
    of the whole cluster. Deterministic: the same rings give the same result.
    """
    order = _morton_order(centres)
    level = [_union_sweep([paths[i] for i in order[a:a + CASCADE_LEAF]]) for a in range(0, len(order), CASCADE_LEAF)]
    while len(level) > 1:
        level = [_union_sweep([p for part in level[a:a + CASCADE_FANOUT] for p in part]) if a + 1 < len(level)
                 else level[a] for a in range(0, len(level), CASCADE_FANOUT)]
    return level[0] if level else []


def _cascades(counts: np.ndarray, groups: np.ndarray | None) -> bool:
    """True when some cluster of rings is big enough for :func:`_cascade_union`."""
    if groups is None:
        return len(counts) >= CASCADE_MIN_RINGS
    return bool(len(groups)) and int(np.bincount(groups).max()) >= CASCADE_MIN_RINGS


def _clip_free(coords: np.ndarray, counts: np.ndarray, groups: np.ndarray | None, region) -> np.ndarray | None:
    """``region`` minus the union of the rings (non-zero winding) on the integer grid; None if clipping fails.

    Rings of one obstacle cluster (``groups``: a cluster label per ring) are unioned on
    their own: in one sweep (few active edges per scanline), or divide-and-conquer
    (:func:`_cascade_union`) for a cluster of :data:`CASCADE_MIN_RINGS` rings or more. Then
    all cluster unions, which are disjoint, are subtracted from the region in one last sweep.
    """
    ints = np.round(coords * CLIP_SCALE).astype(np.int64)
    ends = np.cumsum(counts)
    starts = ends - counts
    if groups is None and len(counts) >= CASCADE_MIN_RINGS:
        groups = np.zeros(len(counts), dtype=np.int64)
    try:
        if groups is None or not len(counts):
            paths = [ints[a:b] for a, b in zip(starts, ends)]
        else:
            order = np.argsort(groups, kind="stable")
            paths = []
            centres = None
            for grp in np.split(order, np.flatnonzero(np.diff(groups[order])) + 1):
                if len(grp) == 1:
                    paths.append(ints[starts[grp[0]]:ends[grp[0]]])
                elif len(grp) >= CASCADE_MIN_RINGS:
                    if centres is None:
                        centres = np.add.reduceat(coords, starts, axis=0) / counts[:, None]
                    paths.extend(_cascade_union([ints[starts[i]:ends[i]] for i in grp], centres[grp]))
                else:
                    paths.extend(_union_sweep([ints[starts[i]:ends[i]] for i in grp]))
        pc = pyclipper.Pyclipper()
        pc.StrictlySimple = True
        if paths:
            pc.AddPaths(paths, pyclipper.PT_CLIP, True)
        pc.AddPaths(_region_paths(region), pyclipper.PT_SUBJECT, True)
        tree = pc.Execute2(pyclipper.CT_DIFFERENCE, pyclipper.PFT_EVENODD, pyclipper.PFT_NONZERO)
    except pyclipper.ClipperException:
        return None
    comps = free_components(np.asarray(_tree_polygons(tree), dtype=object))
    if len(comps) and not np.all(shapely.is_valid(comps)):
        return None
    return comps


def _polygon_paths(geoms) -> list[np.ndarray]:
    """Integer rings of polygons: shells counter-clockwise, holes clockwise (non-zero winding = inside)."""
    parts = shapely.get_parts(np.asarray(geoms, dtype=object))
    parts = parts[shapely.get_type_id(parts) == 3] if len(parts) else parts
    if not len(parts):
        return []
    rings = shapely.get_rings(shapely.orient_polygons(parts, exterior_cw=False))
    xy, idx = shapely.get_coordinates(rings, return_index=True)
    ints = np.round(xy * CLIP_SCALE).astype(np.int64)
    ends = np.cumsum(np.bincount(idx, minlength=len(rings)))
    starts = np.r_[0, ends[:-1]]
    return [ints[a:b - 1] for a, b in zip(starts, ends) if b - a >= 4]


def union_polygons(geoms) -> np.ndarray:
    """The union of polygons (local frame, metres) as its disjoint polygon components.

    With :data:`UNION_BACKEND` ``"clipper"``: one integer sweep, results on the
    2**-40 m grid; otherwise (or if that fails) ``shapely.union_all``.
    """
    if UNION_BACKEND == "clipper":
        try:
            pc = pyclipper.Pyclipper()
            pc.StrictlySimple = True
            paths = _polygon_paths(geoms)
            if not paths:
                return np.zeros(0, dtype=object)
            pc.AddPaths(paths, pyclipper.PT_SUBJECT, True)
            tree = pc.Execute2(pyclipper.CT_UNION, pyclipper.PFT_NONZERO, pyclipper.PFT_NONZERO)
            polys = np.asarray(_tree_polygons(tree), dtype=object)
            if not len(polys) or np.all(shapely.is_valid(polys)):
                return polys
        except pyclipper.ClipperException:
            pass
    parts = shapely.get_parts(shapely.union_all(np.asarray(geoms, dtype=object)))
    return parts[shapely.get_type_id(parts) == 3] if len(parts) else parts


def slice_free(obstacles: ObstacleSet, parts: list[Polygon], heading: float, grow: float, anchor_local: np.ndarray,
               region, labels: np.ndarray | None = None) -> np.ndarray:
    """Free-space components of one slice inside ``region`` (a polygon, local frame, metres).

    Same arguments as :func:`slice_cobstacle`. With :data:`UNION_BACKEND` ``"clipper"`` the
    C-obstacle pieces are subtracted from ``region`` in one integer sweep (results within
    about 1e-12 m of the GEOS path, which is used when pyclipper is missing or fails).
    """
    if UNION_BACKEND == "clipper":
        t = math.radians(heading)
        c, s = math.cos(t), math.sin(t)
        anchor = np.array([c * anchor_local[0] - s * anchor_local[1], s * anchor_local[0] + c * anchor_local[1]])
        verts = footprint_parts_at(parts, heading, grow if grow >= 0 else 0.0)
        coords, counts, owner = cobstacle_rings(obstacles, verts, anchor)
        groups = labels[owner] if labels is not None and len(labels) else None
        if grow > 0 and _cascades(counts, groups):
            # a sound slice whose union runs in levels: grow by the rounding those levels may add
            verts = footprint_parts_at(parts, heading, grow + CASCADE_GUARD_M)
            coords, counts, owner = cobstacle_rings(obstacles, verts, anchor)
        comps = _clip_free(coords, counts, groups, region)
        if comps is not None:
            return comps
    cobs = slice_cobstacle(obstacles, parts, heading, grow, anchor_local, labels)
    return free_components(shapely.difference(region, cobs))


def _slice_components(obstacles: ObstacleSet, parts: list[Polygon], heading: float, grow: float,
                      domain: Polygon, anchor_local: np.ndarray, labels: np.ndarray | None = None) -> np.ndarray:
    return slice_free(obstacles, parts, heading, grow, anchor_local, domain, labels)


# --- process-pool plumbing: the obstacle set is sent once per worker ------------------
_WORKER: dict = {}


def _init_worker(obstacles, domain, labels=None):
    _WORKER["obstacles"] = obstacles
    _WORKER["domain"] = domain
    _WORKER["labels"] = labels


def _worker_slice(args):
    parts, heading, grow, anchor = args
    return _slice_components(_WORKER["obstacles"], parts, heading, grow, _WORKER["domain"], anchor,
                             _WORKER.get("labels"))


#: Sub-samples per heading cell for the optimistic (inner) footprint.
OPTIMISTIC_SUBSAMPLES = 8


def _inner_footprint(footprint: Polygon, below_deg: float, above_deg: float, curve_tol: float) -> Polygon:
    """A polygon contained in the footprint at every heading of the cell (vehicle frame at the slice heading).

    The intersection of the footprint rotated to ``OPTIMISTIC_SUBSAMPLES + 1`` headings
    spanning the cell, shrunk by the largest displacement between samples
    (2ρ·sin(δ/4), δ the sample spacing) and by the curve tolerance. If the vehicle is
    clear at some heading of the cell, this inner polygon is clear at the slice heading.
    """
    span = below_deg + above_deg
    inner = footprint
    if span > 0:
        angles = np.linspace(-below_deg, above_deg, OPTIMISTIC_SUBSAMPLES + 1)
        for a in angles:
            inner = inner.intersection(shapely.affinity.rotate(footprint, float(a), origin=(0, 0)))
        rho = float(np.max(np.hypot(*shapely.get_coordinates(footprint).T)))
        erode = rotation_displacement_m(rho, span / OPTIMISTIC_SUBSAMPLES / 2.0) + curve_tol
    else:
        erode = curve_tol
    if erode > 0:
        inner = inner.buffer(-erode, join_style="mitre")
    return inner


def _inner_parts(inner: Polygon, footprint: Polygon) -> tuple[list[Polygon], np.ndarray]:
    polys = [g for g in shapely.get_parts(inner) if isinstance(g, Polygon) and g.area > 0]
    if not polys:   # vehicle smaller than the tolerance: keep a tiny square at its centre
        c = footprint.representative_point()
        polys = [box(c.x - 1e-6, c.y - 1e-6, c.x + 1e-6, c.y + 1e-6)]
    parts = [p for g in polys for p in convex_parts(g)]
    return parts, np.asarray(polys[0].exterior.coords[0])


@dataclass
class SliceSet:
    """Free space per heading slice, local frame, metres.

    ``components[k]`` holds slice k's free-space components (shapely Polygons);
    ``grow_m[k]`` the amount the footprint was grown (sound) or shrunk (optimistic) for
    slice k; ``tolerance_m`` the largest distance between the footprint used and the true
    one over all slices (Hausdorff distance, metres).
    """

    plan: Plan
    vehicle: Vehicle
    cells: HeadingCells
    components: list[np.ndarray]
    grow_m: np.ndarray
    bound: str
    tolerance_m: float
    domain: Polygon
    #: ``twins[k]``: the slice whose free space slice k shares (k itself when none; see
    #: :func:`half_turn_twins`), or None. Consumers may reuse work done for the twin.
    twins: np.ndarray | None = field(default=None, repr=False)
    #: Processes the slices were built on (0: none were built, all came from the cache).
    workers_used: int = field(default=1, repr=False, compare=False)
    #: Slices read from the disk cache instead of built (:mod:`floorfit.cspace.slicecache`).
    reused: int = field(default=0, repr=False, compare=False)
    _trees: list = field(default_factory=list, repr=False)

    @property
    def headings_deg(self) -> np.ndarray:
        return self.cells.headings

    def __len__(self) -> int:
        return len(self.cells)

    def tree(self, k: int) -> shapely.STRtree:
        if not self._trees:
            twins = self.twins if self.twins is not None else range(len(self.components))
            built: dict[int, shapely.STRtree] = {}
            for j, t in enumerate(twins):
                t = int(t)
                same = t in built and len(self.components[t]) == len(self.components[j]) and \
                    all(a is b for a, b in zip(self.components[t], self.components[j]))
                if not same:
                    built[t] = shapely.STRtree(self.components[j])
                self._trees.append(built[t])
        return self._trees[k]

    def free(self, k: int):
        """Slice k's free space as one geometry (local frame)."""
        return shapely.union_all(self.components[k]) if len(self.components[k]) else Polygon()

    def locate(self, x: float, y: float, heading_deg: float) -> tuple[int, int] | None:
        """(slice, component) whose free space contains local point (x, y) at this heading, or None."""
        k = self.cells.index_of(heading_deg)
        if abs(float(wrap_deg(self.cells.headings[k] - heading_deg))) > max(self.cells.max_turn[k], 1e-9) + 1e-9:
            return None
        hits = self.tree(k).query(shapely.Point(x, y), predicate="intersects")
        return (k, int(hits[0])) if len(hits) else None

    def are_free(self, poses) -> np.ndarray:
        """For (N, 3) local-frame poses (x, y, heading_deg): True where the pose lies in its slice's free space."""
        poses = np.asarray(poses, dtype=float).reshape(-1, 3)
        ks = self.cells.indices_of(poses[:, 2])
        out = np.zeros(len(poses), dtype=bool)
        for k in np.unique(ks):
            sel = ks == k
            pts = shapely.points(poses[sel, 0], poses[sel, 1])
            idx = self.tree(int(k)).query(pts, predicate="intersects")
            hit = np.zeros(sel.sum(), dtype=bool)
            hit[idx[0]] = True
            out[np.flatnonzero(sel)] = hit
        return out

    def settings(self) -> dict:
        """The settings that determine these slices (JSON-ready)."""
        step = self.cells.step_deg
        return {"bound": self.bound, "heading_step_deg": step, "headings": int(len(self.cells)),
                "tolerance_m": round(float(self.tolerance_m), 6), "margin_m": self.vehicle.margin_m,
                "curve_tolerance_m": self.plan.curve_tolerance_m,
                "min_component_area_m2": MIN_COMPONENT_AREA_M2}


@dataclass
class SliceRecipe:
    """What each slice of a :class:`SliceSet` is built from (see :func:`slice_recipe`).

    ``jobs[k] = (convex parts, heading °, grow m, anchor)``: footprint parts (vehicle frame)
    for slice k, its heading, the mitre offset applied after rotation and the footprint
    point used to translate non-convex solids. ``grow`` per slice (metres, ≥ 0),
    ``tolerance`` (metres, see :class:`SliceSet`), ``radius``: the largest distance from
    the reference point to any footprint point used, ``diameter``: the largest distance
    between two such points (metres).
    """

    jobs: list
    grow: np.ndarray
    tolerance: float
    radius: float
    diameter: float


def slice_recipe(plan: Plan, vehicle: Vehicle, cells: HeadingCells, bound: str) -> SliceRecipe:
    """Footprint parts, offsets and tolerance for every slice of ``cells`` (``bound``: sound / optimistic)."""
    if bound not in BOUNDS:
        raise ValueError(f"bound must be one of {BOUNDS}")
    fp = vehicle.footprint
    rho = vehicle.radius_m
    grow = np.array([rotation_displacement_m(rho, t) for t in cells.max_turn]) + plan.curve_tolerance_m
    parts = convex_parts(fp)
    if bound == "sound":
        anchor = np.asarray(fp.exterior.coords[0])
        # CLIP_GUARD_M: the grid snapping of the integer clipping must not shrink a C-obstacle
        jobs = [(parts, float(h), float(g) + CLIP_GUARD_M, anchor) for h, g in zip(cells.headings, grow)]
        gmax = float(grow.max())
        # --- sound tolerance (issue 16): the largest clearance a pose can have and still be
        # called blocked, measured for the widest cell (it bounds every narrower one)
        k_max = int(np.argmax(cells.max_turn)) if len(cells) else 0
        tolerance = sound_tolerance_m(parts, fp, float(cells.max_turn[k_max]) if len(cells) else 0.0, gmax)
        # --- end sound tolerance
    else:
        jobs = []
        cache: dict[tuple, tuple] = {}
        tolerance = 0.0
        for h, lo, hi in zip(cells.headings, cells.below, cells.above):
            key = (round(float(lo), 9), round(float(hi), 9))
            if key not in cache:
                inner = _inner_footprint(fp, float(lo), float(hi), plan.curve_tolerance_m)
                cache[key] = _inner_parts(inner, fp)
                tolerance = max(tolerance, float(shapely.hausdorff_distance(inner, fp)) if not inner.is_empty
                                else vehicle.radius_m)
            p, anchor = cache[key]
            jobs.append((p, float(h), 0.0, anchor))
        gmax = 0.0          # the inner footprints lie inside the footprint
    verts = np.vstack(footprint_parts_at(parts, 0.0, gmax))
    radius = float(np.max(np.hypot(verts[:, 0], verts[:, 1])))
    diameter = float(np.max(pdist(verts))) if len(verts) > 1 else 0.0
    return SliceRecipe(jobs, grow, tolerance, radius, diameter)


def sound_tolerance_m(parts: list[Polygon], footprint: Polygon, max_turn_deg: float, grow_m: float,
                      samples: int = 16, spacing_m: float = 0.002) -> float:
    """Largest clearance (metres) a pose can have and still lie outside its sound slice.

    A pose at heading h + δ (|δ| ≤ ``max_turn_deg``) is judged by the slice at h, whose
    footprint is the convex ``parts`` grown by ``grow_m`` (:func:`footprint_parts_at`). It is
    called blocked only if that grown footprint meets an obstacle, so only if the obstacle
    comes within sup over points p of the grown footprint of d(p, footprint turned by δ).
    This takes that distance over ``samples`` + 1 rotations spanning the cell and boundary
    points of the grown footprint ``spacing_m`` apart, plus what the sampling can miss (half
    the spacing; the rotation between samples, ρ·Δ/2). The grown footprint contains the
    footprint at every δ, so this is the Hausdorff distance between the two, maximised over δ.
    """
    if grow_m <= 0 and max_turn_deg <= 0:
        return 0.0
    grown = shapely.union_all([Polygon(v) for v in footprint_parts_at(parts, 0.0, grow_m)])
    pts = shapely.points(shapely.get_coordinates(shapely.segmentize(grown.boundary, spacing_m)))
    rho = float(np.max(np.hypot(*shapely.get_coordinates(footprint).T)))
    worst = 0.0
    deltas = np.linspace(-max_turn_deg, max_turn_deg, samples + 1) if max_turn_deg > 0 else np.zeros(1)
    for d in deltas:
        turned = shapely.affinity.rotate(footprint, float(d), origin=(0, 0))
        worst = max(worst, float(np.max(shapely.distance(pts, turned))))
    between = rotation_displacement_m(rho, max_turn_deg / samples / 2.0) if max_turn_deg > 0 else 0.0
    return worst + spacing_m / 2.0 + between


def slice_domain(bounds: tuple[float, float, float, float], vehicle: Vehicle) -> Polygon:
    """The rectangle free space is limited to: obstacle ``bounds`` grown by the vehicle radius plus ``DOMAIN_PAD_M``."""
    x0, y0, x1, y1 = bounds
    pad = vehicle.radius_m + DOMAIN_PAD_M
    return box(x0 - pad, y0 - pad, x1 + pad, y1 + pad)


def cluster_reach_m(recipe: SliceRecipe) -> float:
    """Distance (metres) beyond which two obstacles never share a C-obstacle in any slice of ``recipe``."""
    return recipe.diameter * (1.0 + 1e-9) + 1e-6


#: Slice building goes to a process pool only above this much work (obstacle pieces × slices):
#: below it, starting the processes costs more than they save. The results do not depend on it.
POOL_MIN_WORK = 100_000


def worker_count(workers: int | None) -> int:
    """Processes to use for ``workers`` (None or 0: every core this process may run on)."""
    if workers:
        return max(1, int(workers))
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):          # pragma: no cover - platforms without affinity
        return os.cpu_count() or 1


def _ignore_interrupt() -> None:
    # Ctrl-C reaches the whole process group: the parent stops the pool, workers stay quiet
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _init_pool_worker(obstacles, domain, labels=None):
    _ignore_interrupt()
    _init_worker(obstacles, domain, labels)


def run_slice_jobs(obstacles: ObstacleSet, jobs: list, domain: Polygon, labels: np.ndarray | None,
                   workers: int | None = 1, progress: Callable[[int, int], None] | None = None,
                   processes: int | None = None) -> list[np.ndarray]:
    """Free-space components of every job of a :class:`SliceRecipe`, on ``workers`` processes (None: all cores).

    Each slice is computed by the same function whichever process runs it, so the result is
    the same for any number of workers. Small runs (below :data:`POOL_MIN_WORK`, see
    :func:`pool_size`) stay in this process; ``processes`` overrides that choice.
    ``progress(done, total)`` is called as slices complete. Ctrl-C stops the pool and raises
    KeyboardInterrupt here.
    """
    n_workers = pool_size(obstacles, len(jobs), workers) if processes is None else max(1, int(processes))
    n_workers = min(n_workers, max(1, len(jobs)))
    total = len(jobs)
    if progress is not None:
        progress(0, total)
    if n_workers > 1:
        pool = ProcessPoolExecutor(max_workers=n_workers, initializer=_init_pool_worker,
                                   initargs=(obstacles, domain, labels))
        try:
            out = []
            # small chunks: Ctrl-C waits only for the slices the workers hold
            for comps in pool.map(_worker_slice, jobs, chunksize=max(1, min(2, len(jobs) // (8 * n_workers)))):
                out.append(comps)
                if progress is not None:
                    progress(len(out), total)
            pool.shutdown(wait=True)
            return out
        except BaseException:
            # no new slices start; the workers (which ignore Ctrl-C) finish the chunk they hold
            # and exit (terminating them instead makes the pool's manager thread report errors)
            pool.shutdown(wait=False, cancel_futures=True)
            raise
    out = []
    for p, h, g, a in jobs:
        out.append(_slice_components(obstacles, p, h, g, domain, a, labels))
        if progress is not None:
            progress(len(out), total)
    return out


def pool_size(obstacles: ObstacleSet, n_jobs: int, workers: int | None) -> int:
    """Processes to use for ``n_jobs`` slices of ``obstacles`` with ``workers`` asked for (None: all cores):
    1 for small runs (fewer than 8 slices, or below :data:`POOL_MIN_WORK` pieces × slices)."""
    n = min(worker_count(workers), max(1, n_jobs))
    return n if n > 1 and n_jobs >= 8 and obstacles.piece_count * n_jobs >= POOL_MIN_WORK else 1


def _half_turn_symmetric(parts: list[Polygon]) -> bool:
    """True when the union of ``parts`` (vehicle frame) is the same point set turned by 180° about the origin."""
    shape = shapely.union_all(parts) if len(parts) > 1 else parts[0]
    turned = shapely.transform(shape, lambda c: -c)
    return bool(shapely.equals(shape, turned))


#: Growths (metres) closer than this count as equal for :func:`half_turn_twins`.
TWIN_GROW_TOL_M = 1e-9


def shared_jobs(jobs: list, twins: np.ndarray) -> tuple[np.ndarray, list]:
    """The slices to compute (indices) and their jobs, each grown by the largest growth of its twins."""
    own = np.flatnonzero(twins == np.arange(len(twins)))
    grow = {int(k): jobs[k][2] for k in own}
    for k, t in enumerate(twins):
        grow[int(t)] = max(grow[int(t)], jobs[k][2])
    return own, [(jobs[k][0], jobs[k][1], grow[int(k)], jobs[k][3]) for k in own]


def half_turn_twins(cells: HeadingCells, jobs: list) -> np.ndarray:
    """For every slice, the index of the slice whose free space it shares (itself when none).

    A footprint that is the same point set turned by 180° about the reference point (a
    rectangle referenced at its centre) has the same C-obstacles at headings h and h + 180°:
    ``O ⊕ (−R(h + π)F) = O ⊕ R(h)F = O ⊕ (−R(h)F)``. Two such slices share one computation
    when their footprint parts are the same objects (the same cell shape) and their growths are
    equal to within :data:`TWIN_GROW_TOL_M` (cell widths computed from wrapped headings
    differ in the last bits); the slice at the lower index is computed, with the larger of
    the two growths (:func:`shared_jobs`), so it is sound for both.
    """
    twin = np.arange(len(jobs))
    if len(jobs) < 2:
        return twin
    symmetric: dict[int, bool] = {}
    index = {round(float(h), 9): k for k, h in enumerate(cells.headings)}
    for k, (parts, h, grow, _) in enumerate(jobs):
        if not parts:
            continue
        j = index.get(round(float(wrap_deg(h + 180.0)), 9))
        if j is None or j >= k or jobs[j][0] is not parts or abs(jobs[j][2] - grow) > TWIN_GROW_TOL_M:
            continue
        if id(parts) not in symmetric:
            symmetric[id(parts)] = _half_turn_symmetric(parts)
        if symmetric[id(parts)]:
            twin[k] = twin[j]
    return twin


def build_slices(plan: Plan, vehicle: Vehicle, *, heading_step_deg: float | None = None,
                 extra_headings=(), bound: str = "sound", workers: int | None = 1,
                 cells: HeadingCells | None = None, obstacles: ObstacleSet | None = None,
                 progress: Callable[[int, int], None] | None = None,
                 window: tuple[float, float, float, float] | None = None) -> SliceSet:
    """Build the free configuration space of ``vehicle`` in ``plan``, one slice per heading cell.

    Parameters
    ----------
    heading_step_deg : float, optional
        Uniform heading step, degrees. Default: the coarsest step whose rotation error
        stays below 1 cm for this vehicle (see :func:`floorfit.cspace.headings.default_step_deg`).
    extra_headings : iterable of float
        Headings (degrees) that get a slice of their own (start/goal, docking headings).
    bound : ``"sound"`` or ``"optimistic"``
        See the module docstring.
    workers : int or None
        Processes for the slices (headings are independent). None or 0: all cores. The
        free space is the same for any number (each slice is computed by the same code).
    progress : callable, optional
        ``progress(done, total)`` as slices complete (``total`` counts the slices computed:
        a footprint symmetric under a half turn shares slices between h and h + 180°).
    window : (xmin, ymin, xmax, ymax), optional
        Local frame, metres: build the free space inside this rectangle only (the slice
        domain is cut to it). Inside, it is the free space of the whole plan (only obstacles
        within the footprint's reach of the window are used); a path in it is a path in the
        plan, but a region cut by the window edge may continue outside it.
    """
    if bound not in BOUNDS:
        raise ValueError(f"bound must be one of {BOUNDS}")
    if cells is None:
        cells = choose_headings(plan, vehicle, heading_step_deg=heading_step_deg, extra_headings=extra_headings)
    recipe = slice_recipe(plan, vehicle, cells, bound)
    if window is None:
        obstacles = obstacles if obstacles is not None else obstacles_for(plan, vehicle)
        domain = slice_domain(obstacles.bounds, vehicle)
    else:
        # free space inside the window only: the obstacles within the footprint's reach of it
        # give every C-obstacle that meets it (a C-obstacle O ⊕ (−F) lies within that reach of O)
        walls, solids = obstacles_met(plan, vehicle)
        parts = shapely.get_parts(solids) if len(solids) else solids       # as prepare_obstacles takes them
        parts = parts[~shapely.is_empty(parts) & (shapely.area(parts) > 0)] if len(parts) else parts
        met = np.concatenate([walls, parts]) if len(parts) else walls
        b = shapely.bounds(met) if len(met) else np.zeros((1, 4))
        whole = (float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max()))
        domain = shapely.intersection(slice_domain(whole, vehicle), box(*window))
        if domain.is_empty or shapely.get_type_id(domain) != 3:
            raise ValueError(f"window {window} does not overlap the plan's slice domain")
        reach = recipe.radius * (1.0 + 1e-9) + 1e-6
        picked = []
        for geoms in (walls, solids):
            idx = shapely.STRtree(geoms).query(domain, predicate="dwithin", distance=reach) if len(geoms) else []
            picked.append(geoms[np.unique(idx)] if len(geoms) else geoms)
        obstacles = prepare_obstacles(picked[0], picked[1])
    # obstacles farther apart than the (grown) footprint's diameter never share a C-obstacle
    labels = obstacle_clusters(obstacles, cluster_reach_m(recipe))
    # a footprint symmetric under a half turn: headings h and h + 180° share one slice
    twin = half_turn_twins(cells, recipe.jobs)
    own, jobs = shared_jobs(recipe.jobs, twin)
    processes = pool_size(obstacles, len(cells), workers)
    done: dict[int, np.ndarray] = {}
    cache = _slice_cache(obstacles, domain, labels)
    if cache is not None:
        for k, job in zip(own.tolist(), jobs):
            hit = cache.get(job)
            if hit is not None:
                done[k] = hit
    todo = [(k, job) for k, job in zip(own.tolist(), jobs) if k not in done]
    if len(todo) < len(jobs):           # some came from the cache: the pool is sized for the rest
        processes = pool_size(obstacles, len(todo), workers)
    built = run_slice_jobs(obstacles, [job for _, job in todo], domain, labels, workers, progress, processes)
    for (k, job), c in zip(todo, built):
        done[k] = c
        if cache is not None:
            cache.put(job, c)
    comps = [done[k] if twin[k] == k else done[int(twin[k])].copy() for k in range(len(twin))]
    grow = recipe.grow
    return SliceSet(plan=plan, vehicle=vehicle, cells=cells, components=comps,
                    grow_m=grow if bound == "sound" else -grow, bound=bound,
                    tolerance_m=recipe.tolerance, domain=domain, twins=twin,
                    workers_used=min(processes, max(1, len(todo))) if todo else 0,
                    reused=len(jobs) - len(todo))


def cached_share(plan: Plan, vehicle: Vehicle, cells: HeadingCells, obstacles: ObstacleSet | None = None,
                 bound: str = "sound") -> float:
    """Share (0..1) of the slices :func:`build_slices` would compute that the disk cache already holds
    (0 when the cache is off)."""
    from floorfit.cspace.slicecache import active_cache_dir

    if active_cache_dir() is None:
        return 0.0
    obstacles = obstacles if obstacles is not None else obstacles_for(plan, vehicle)
    recipe = slice_recipe(plan, vehicle, cells, bound)
    domain = slice_domain(obstacles.bounds, vehicle)
    labels = obstacle_clusters(obstacles, cluster_reach_m(recipe))
    _, jobs = shared_jobs(recipe.jobs, half_turn_twins(cells, recipe.jobs))
    cache = _slice_cache(obstacles, domain, labels)
    return sum(cache.has(job) for job in jobs) / max(1, len(jobs))


def _slice_cache(obstacles: ObstacleSet, domain: Polygon, labels: np.ndarray | None):
    """The disk cache of slices when :func:`floorfit.cspace.slicecache.use_cache` turned it on, else None."""
    from floorfit.cspace.slicecache import SliceCache, active_cache_dir

    folder = active_cache_dir()
    if folder is None:
        return None
    settings = (UNION_BACKEND, CLIP_SCALE, CLIP_GUARD_M, CASCADE_MIN_RINGS, CASCADE_LEAF, CASCADE_FANOUT,
                CASCADE_GUARD_M, MIN_COMPONENT_AREA_M2)
    return SliceCache(folder, obstacles, domain, labels, settings)
