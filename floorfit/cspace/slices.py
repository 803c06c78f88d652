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
C-obstacles, so they are grouped into clusters once
(:func:`floorfit.cspace.freespace.obstacle_clusters`) and each slice unions every cluster's
pieces on its own; the cluster unions are disjoint and form the C-obstacle directly
(:mod:`floorfit.cspace.freespace`). Headings are independent and run on a process pool
(``workers``, :mod:`floorfit.cspace.slicepool`); a single heading's union is not split (that
does not pay).

This module owns the choice of heading cells, the per-slice recipe (footprint parts,
growths, tolerance), half-turn twins, :class:`SliceSet` and :func:`build_slices`.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import shapely
from scipy.spatial.distance import pdist
from shapely.geometry import Polygon, box

from floorfit.cspace import freespace
from floorfit.cspace.freespace import CLIP_GUARD_M, MIN_COMPONENT_AREA_M2, obstacle_clusters
from floorfit.cspace.headings import (
    HeadingCells,
    default_step_deg,
    make_heading_cells,
    rotation_displacement_m,
    wrap_deg,
)
from floorfit.cspace.minkowski import (
    ObstacleSet,
    convex_parts,
    footprint_parts_at,
    prepare_obstacles,
)
from floorfit.cspace.slicepool import pool_size, run_slice_jobs
from floorfit.plan.model import Plan
from floorfit.vehicles.rigid import Vehicle

__all__ = ["SliceSet", "build_slices", "choose_headings", "obstacles_for", "obstacles_met",
           "SliceRecipe", "slice_recipe", "slice_domain", "cluster_reach_m", "DOMAIN_PAD_M", "BOUNDS",
           "half_turn_twins", "shared_jobs", "TWIN_GROW_TOL_M", "cached_share"]

#: Free space extends this far (plus the vehicle radius) beyond the obstacles, metres.
DOMAIN_PAD_M = 1.0
BOUNDS = ("sound", "optimistic")


def obstacles_for(plan: Plan, vehicle: Vehicle | None = None) -> ObstacleSet:
    """Heading-independent obstacle preparation for ``plan``.

    An obstacle counts where its height range (bottom, top) overlaps the vehicle's
    (0, height): bottom < height and top > 0. Without a vehicle height every obstacle
    reaching above the floor counts.
    """
    memo = _shared_memo()       # the same plan and height within one run: prepared once
    if memo is not None:
        return memo.obstacles(plan, vehicle, lambda: prepare_obstacles(*obstacles_met(plan, vehicle)))
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
    if wall_directions:
        for d in plan.principal_wall_directions_deg():
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
    #: Slices taken from the ``reuse`` slice set given to :func:`build_slices` instead of built.
    kept: int = field(default=0, repr=False, compare=False)
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
        if not len(poses):
            return out
        # poses grouped by slice (one sort), each group queried against its slice's tree
        order = np.argsort(ks, kind="stable")
        groups = np.split(order, np.flatnonzero(np.diff(ks[order])) + 1)
        pts = shapely.points(poses[:, 0], poses[:, 1])
        for sel in groups:
            idx = self.tree(int(ks[sel[0]])).query(pts[sel], predicate="intersects")
            out[sel[idx[0]]] = True
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
                 window: tuple[float, float, float, float] | None = None,
                 reuse: SliceSet | None = None) -> SliceSet:
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
    reuse : SliceSet, optional
        Slices built before for the same plan, vehicle and bound (whole plan): a slice whose
        job (footprint parts, heading, growth, anchor) is exactly one of theirs takes its free
        space from there instead of being computed again (a refined heading set keeps most of
        a coarse one's slices).
    """
    if bound not in BOUNDS:
        raise ValueError(f"bound must be one of {BOUNDS}")
    if cells is None:
        cells = choose_headings(plan, vehicle, heading_step_deg=heading_step_deg, extra_headings=extra_headings)
    memo = _shared_memo()       # slices shared within one run (size, compare): see floorfit.cspace.slicememo
    shared = memo.get(plan, vehicle, cells, bound, window, workers) if memo is not None else None
    if shared is not None:
        return shared
    recipe = slice_recipe(plan, vehicle, cells, bound)
    if window is None:
        obstacles = obstacles if obstacles is not None else obstacles_for(plan, vehicle)
        domain = slice_domain(obstacles.bounds, vehicle)
    else:
        obstacles, domain = _window_obstacles(plan, vehicle, window, recipe)
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
    kept = _take_known(done, own, jobs, reuse) if _reusable(reuse, plan, vehicle, bound, window, domain) else 0
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
    result = SliceSet(plan=plan, vehicle=vehicle, cells=cells, components=comps,
                      grow_m=grow if bound == "sound" else -grow, bound=bound,
                      tolerance_m=recipe.tolerance, domain=domain, twins=twin,
                      workers_used=min(processes, max(1, len(todo))) if todo else 0,
                      reused=len(jobs) - len(todo) - kept, kept=kept)
    if memo is not None:
        memo.put(result, window)
    return result


def _reusable(reuse: SliceSet | None, plan: Plan, vehicle: Vehicle, bound: str, window, domain) -> bool:
    """Whether ``reuse`` holds whole-plan slices of this plan, vehicle and bound (same domain)."""
    return (reuse is not None and window is None and reuse.plan is plan and reuse.bound == bound
            and (reuse.vehicle is vehicle or reuse.vehicle == vehicle) and reuse.domain.equals_exact(domain, 0.0))


def _take_known(done: dict, own: np.ndarray, jobs: list, reuse: SliceSet) -> int:
    """Put into ``done`` (slice index: components) every job of ``jobs`` not there yet that ``reuse``
    computed exactly; the number taken."""
    from floorfit.cspace.slicecache import job_digest

    known = _known_jobs(reuse)
    taken = 0
    for k, job in zip(own.tolist(), jobs):
        if k not in done:
            hit = known.get(job_digest(job))
            if hit is not None:
                done[k] = hit.copy()
                taken += 1
    return taken


def _known_jobs(slices: SliceSet) -> dict:
    """``{job digest: free-space components}`` of the slices ``slices`` computed (twins shared)."""
    from floorfit.cspace.slicecache import job_digest

    recipe = slice_recipe(slices.plan, slices.vehicle, slices.cells, slices.bound)
    twins = slices.twins if slices.twins is not None else np.arange(len(slices.cells))
    own, jobs = shared_jobs(recipe.jobs, twins)
    return {job_digest(job): slices.components[k] for k, job in zip(own.tolist(), jobs)}


def _window_obstacles(plan: Plan, vehicle: Vehicle, window, recipe: SliceRecipe) -> tuple[ObstacleSet, Polygon]:
    """Obstacles and slice domain of :func:`build_slices` inside ``window`` (local frame, metres)."""
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
    return obstacles, domain


def _shared_memo():
    """The in-memory slice memo of this run (:func:`floorfit.cspace.slicememo.sharing`), or None."""
    from floorfit.cspace.slicememo import active_memo

    return active_memo()


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
    # read at call time: tests and benchmarks switch these on the freespace module
    settings = (freespace.UNION_BACKEND, freespace.CLIP_SCALE, freespace.CLIP_GUARD_M, freespace.CASCADE_MIN_RINGS,
                freespace.CASCADE_LEAF, freespace.CASCADE_FANOUT, freespace.CASCADE_GUARD_M,
                freespace.MIN_COMPONENT_AREA_M2)
    return SliceCache(folder, obstacles, domain, labels, settings)
