"""Re-use heading slices after a local change to the plan (a layout comparison).

A planner moves a rack row and asks again. Only the C-obstacles near the change differ,
so :func:`update_slices` recomputes each slice inside a window around the changed
obstacles and splices the result into the old free space:

1. The changed obstacles are the symmetric difference of the two plans' obstacle sets
   (walls and solids compared exactly, with their height ranges).
2. The window W is the union of the changed obstacles' bounding boxes, each grown by the
   footprint's reach (the largest distance from the reference point to any point of the
   grown footprint) plus :data:`WINDOW_MARGIN_M`. Outside W no C-obstacle changed: a
   C-obstacle ``O ⊕ (−F)`` lies within that reach of O.
3. Inside W (and :data:`SEAM_OVERLAP_M` beyond it) the free space is rebuilt from the
   obstacles within reach (the same kernel and footprint parts as
   :func:`floorfit.cspace.slices.build_slices`); the old free space outside W is kept; the two
   are joined (they overlap along the seam) and cut into components again.

The result equals a full rebuild up to floating-point noise of the overlay (the tests
ask for less than 1e-9 m² of symmetric difference per slice). Plans in different local
frames (different ``origin``), or whose obstacle bounds moved (so the slice domain
changes), are rebuilt in full. Units: metres, local frame of the new plan.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Polygon, box

from floorfit.cspace.freespace import canonical_order, free_components, obstacle_clusters, slice_free, union_polygons
from floorfit.cspace.minkowski import ObstacleSet, prepare_obstacles
from floorfit.cspace.slices import (
    SliceSet,
    build_slices,
    cluster_reach_m,
    obstacles_met,
    shared_jobs,
    slice_domain,
    slice_recipe,
)
from floorfit.plan.model import Plan

__all__ = ["update_slices", "plan_changes", "PlanChanges", "obstacles_bounds", "WINDOW_MARGIN_M", "SEAM_OVERLAP_M",
           "MAX_WINDOW_SHARE"]

#: Extra margin (metres) added around the reach of the footprint when cutting the window.
WINDOW_MARGIN_M = 0.25
#: The free space is recomputed this far (metres) beyond the cut, so old and new overlap at the seam.
SEAM_OVERLAP_M = 0.05
#: A window larger than this share of the slice domain is not spliced: the slices are rebuilt in full.
MAX_WINDOW_SHARE = 0.5


@dataclass
class PlanChanges:
    """Obstacles of the old plan that are gone and of the new plan that are new (local frame, metres)."""

    removed: np.ndarray
    added: np.ndarray

    @property
    def empty(self) -> bool:
        return not len(self.removed) and not len(self.added)

    def bounds(self) -> list[tuple[float, float, float, float]]:
        """Bounding boxes of every changed obstacle."""
        geoms = np.concatenate([self.removed, self.added])
        return [tuple(map(float, b)) for b in shapely.bounds(geoms)] if len(geoms) else []


def _keys(geoms: np.ndarray, heights: np.ndarray, kind: str) -> list[bytes]:
    wkb = shapely.to_wkb(geoms, output_dimension=2) if len(geoms) else []
    return [kind.encode() + w + np.asarray(h, dtype=float).tobytes() for w, h in zip(wkb, heights)]


def plan_changes(old: Plan, new: Plan) -> PlanChanges:
    """Walls and solids present in one plan but not in the other (exact geometric equality, heights included).

    Both plans must share a local frame (same ``origin``); geometries are taken as stored.
    """
    removed, added = [], []
    for kind, a, ha, b, hb in (("w", old.walls, old.wall_heights, new.walls, new.wall_heights),
                               ("s", old.solids, old.solid_heights, new.solids, new.solid_heights)):
        ka, kb = _keys(a, ha, kind), _keys(b, hb, kind)
        sa, sb = set(ka), set(kb)
        removed.extend(g for g, k in zip(a, ka) if k not in sb)
        added.extend(g for g, k in zip(b, kb) if k not in sa)
    return PlanChanges(np.asarray(removed, dtype=object), np.asarray(added, dtype=object))


def _window(boxes: list[tuple[float, float, float, float]], grow: float) -> Polygon:
    """Union of the boxes, each grown by ``grow`` on every side (axis-aligned edges only)."""
    grown = [box(x0 - grow, y0 - grow, x1 + grow, y1 + grow) for x0, y0, x1, y1 in boxes]
    return shapely.union_all(grown) if grown else Polygon()


def _local_obstacles(plan: Plan, vehicle, window, reach: float) -> ObstacleSet:
    """Obstacles of ``plan`` within ``reach`` metres of ``window``, prepared as for a full build."""
    pick = []
    for geoms in obstacles_met(plan, vehicle):
        if len(geoms):
            idx = shapely.STRtree(geoms).query(window, predicate="dwithin", distance=reach)
            pick.append(geoms[np.unique(idx)])
        else:
            pick.append(geoms)
    return prepare_obstacles(pick[0], pick[1])


def obstacles_bounds(plan: Plan, vehicle) -> tuple[float, float, float, float]:
    """Bounds (local frame, metres) of the obstacles the vehicle meets, as the slice domain uses them."""
    walls, solids = obstacles_met(plan, vehicle)
    allg = np.concatenate([walls, solids]) if len(solids) else walls
    if not len(allg):
        return (0.0, 0.0, 0.0, 0.0)
    b = shapely.bounds(allg)
    return (float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max()))


def _polygon(shell, holes: list):
    return shapely.polygons(shell, holes=holes) if holes else shapely.polygons(shell)


def _splice(old_comps: np.ndarray, tree, cut, region, local_free) -> np.ndarray:
    """Old components outside ``cut`` joined with the free space recomputed over ``region`` (⊇ cut).

    ``region`` reaches a little beyond ``cut`` (:data:`SEAM_OVERLAP_M`) so that the old and
    the new free space overlap along the seam instead of meeting edge to edge: two
    separately rounded boundaries never leave a hairline gap that would split a component.
    Only the rings that meet ``region`` take part in the overlay: a component's holes whose
    regions lie clear of it (most of them on a big site) are set aside, and put back into
    whichever new component covers them afterwards. With U the set-aside hole regions
    (disjoint from the region) and Q the components without them,
    ``(P − W) ∪ L = ((Q − W) ∪ L) − U``.
    """
    touched = tree.query(region, predicate="intersects") if len(old_comps) else np.zeros(0, dtype=int)
    keep = np.ones(len(old_comps), dtype=bool)
    keep[touched] = False
    rx0, ry0, rx1, ry1 = shapely.bounds(region)
    cores, aside = [], []
    for poly in old_comps[touched]:
        holes = np.asarray(shapely.get_interior_ring(poly, np.arange(shapely.get_num_interior_rings(poly))),
                           dtype=object)
        if len(holes):
            # holes whose bounding box misses the region's are certainly clear of it
            b = shapely.bounds(holes)
            near = (b[:, 0] <= rx1) & (b[:, 2] >= rx0) & (b[:, 1] <= ry1) & (b[:, 3] >= ry0)
            aside.append(holes[~near])
            holes = holes[near]
        cores.append(_polygon(shapely.get_exterior_ring(poly), list(holes)))
    pieces = []
    if cores:
        pieces.append(shapely.difference(shapely.multipolygons(cores), cut))
    if not local_free.is_empty:
        pieces.append(local_free)
    parts = union_polygons(pieces) if pieces else np.zeros(0, dtype=object)
    aside = np.concatenate(aside) if aside else np.zeros(0, dtype=object)
    if len(aside) and len(parts):
        if len(parts) == 1:
            owner = np.zeros(len(aside), dtype=int)
        else:
            # a set-aside hole lies inside exactly one new component (its region was part of a core)
            inside = shapely.point_on_surface(shapely.polygons(aside))
            hole_i, part_i = shapely.STRtree(parts).query(inside, predicate="within")
            owner = np.full(len(aside), -1)
            owner[hole_i] = part_i
        for q in np.unique(owner[owner >= 0]):
            p = parts[q]
            parts[q] = _polygon(shapely.get_exterior_ring(p), list(p.interiors) + list(aside[owner == q]))
    parts = free_components(parts) if len(parts) else parts
    return canonical_order(np.concatenate([old_comps[keep], parts]) if len(parts) else old_comps[keep])


def update_slices(old: SliceSet, new_plan: Plan, changed_window_local=None, *, workers: int | None = 1) -> SliceSet:
    """Slices of ``new_plan`` for the same vehicle, headings and bound as ``old``, recomputed only near changes.

    Parameters
    ----------
    old : SliceSet
        Slices of the plan before the change.
    new_plan : Plan
        The changed plan (same local frame as ``old.plan`` for the fast path).
    changed_window_local : (xmin, ymin, xmax, ymax), optional
        A region (local frame, metres) the caller knows has changed; it is added to the
        changes found by comparing the two plans' obstacles.
    workers : int or None
        Processes for a full rebuild when one is needed (None: all cores).

    Returns
    -------
    SliceSet
        For ``new_plan``; its free space equals that of :func:`floorfit.cspace.slices.build_slices`
        with ``cells=old.cells`` and ``bound=old.bound`` up to overlay rounding.
    """
    vehicle = old.vehicle

    def rebuild() -> SliceSet:
        return build_slices(new_plan, vehicle, cells=old.cells, bound=old.bound, workers=workers)

    if tuple(old.plan.origin) != tuple(new_plan.origin):
        return rebuild()
    domain = slice_domain(obstacles_bounds(new_plan, vehicle), vehicle)
    if not shapely.equals_exact(domain, old.domain, tolerance=0.0):
        return rebuild()
    changes = plan_changes(old.plan, new_plan)
    boxes = changes.bounds()
    if changed_window_local is not None:
        x0, y0, x1, y1 = (float(v) for v in changed_window_local)
        boxes.append((min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1)))
    if not boxes:
        return SliceSet(plan=new_plan, vehicle=vehicle, cells=old.cells, components=list(old.components),
                        grow_m=old.grow_m, bound=old.bound, tolerance_m=old.tolerance_m, domain=old.domain)
    recipe = slice_recipe(new_plan, vehicle, old.cells, old.bound)
    reach = recipe.radius * (1.0 + 1e-9) + 1e-6
    cut = shapely.intersection(_window(boxes, reach + WINDOW_MARGIN_M), domain)
    if cut.area > MAX_WINDOW_SHARE * domain.area:
        return rebuild()                # most of the floor changed: splicing would cost more than it saves
    region = shapely.intersection(_window(boxes, reach + WINDOW_MARGIN_M + SEAM_OVERLAP_M), domain)
    local = _local_obstacles(new_plan, vehicle, region, reach + 1e-6)
    labels = obstacle_clusters(local, cluster_reach_m(recipe))
    # half-turn twins share one slice in a full build (floorfit.cspace.slices.half_turn_twins): here too
    twins = old.twins if old.twins is not None else np.arange(len(recipe.jobs))
    own, jobs = shared_jobs(recipe.jobs, twins)
    done = {}
    for k, (parts, heading, grow, anchor) in zip(own.tolist(), jobs):
        local_free = shapely.multipolygons(slice_free(local, parts, heading, grow, anchor, region, labels))
        done[k] = _splice(np.asarray(old.components[k], dtype=object), old.tree(k), cut, region, local_free)
    comps = [done[k] if int(twins[k]) == k else done[int(twins[k])].copy() for k in range(len(twins))]
    return SliceSet(plan=new_plan, vehicle=vehicle, cells=old.cells, components=comps, grow_m=old.grow_m,
                    bound=old.bound, tolerance_m=old.tolerance_m, domain=old.domain, twins=old.twins)
