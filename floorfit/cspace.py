"""Heading slices of the configuration space (plane × circle).

Each slice stands for one *heading cell* (see :mod:`floorfit.headings`). Two bounds are
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
"""

from __future__ import annotations

import math
import os
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field

import numpy as np
import shapely
from shapely.geometry import Polygon, box

from .headings import HeadingCells, default_step_deg, dominant_directions_deg, make_heading_cells, \
    rotation_displacement_m, wrap_deg
from .minkowski import ObstacleSet, cobstacle_pieces, convex_parts, footprint_parts_at, prepare_obstacles
from .plan import Plan
from .vehicle import Vehicle

__all__ = ["SliceSet", "build_slices", "choose_headings", "obstacles_for", "MIN_COMPONENT_AREA_M2",
           "DOMAIN_PAD_M", "BOUNDS"]

#: Free-space components smaller than this are dropped, square metres.
MIN_COMPONENT_AREA_M2 = 1e-6
#: Free space extends this far (plus the vehicle radius) beyond the obstacles, metres.
DOMAIN_PAD_M = 1.0
BOUNDS = ("sound", "optimistic")


def obstacles_for(plan: Plan, vehicle: Vehicle | None = None) -> ObstacleSet:
    """Heading-independent obstacle preparation for ``plan`` (the vehicle may filter by height)."""
    walls, solids = plan.walls, plan.solids
    height = getattr(vehicle, "height_m", None) if vehicle is not None else None
    if height is not None:
        walls = walls[plan.wall_heights[:, 0] < height] if len(walls) else walls
        solids = solids[plan.solid_heights[:, 0] < height] if len(solids) else solids
    return prepare_obstacles(walls, solids)


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
    step = heading_step_deg or default_step_deg(vehicle.radius_m)
    extra = [float(h) for h in extra_headings]
    if wall_directions and len(plan.walls):
        for d in dominant_directions_deg(plan.walls):
            extra.extend([d, d + 90.0, d + 180.0, d + 270.0])
    return make_heading_cells(step, extra)


def _slice_components(obstacles: ObstacleSet, parts: list[Polygon], heading: float, grow: float,
                      domain: Polygon, anchor_local: np.ndarray) -> np.ndarray:
    verts = footprint_parts_at(parts, heading, grow) if grow >= 0 else \
        footprint_parts_at(parts, heading, 0.0)
    t = math.radians(heading)
    c, s = math.cos(t), math.sin(t)
    anchor = np.array([c * anchor_local[0] - s * anchor_local[1], s * anchor_local[0] + c * anchor_local[1]])
    pieces = cobstacle_pieces(obstacles, verts, anchor)
    cobs = shapely.union_all(pieces) if len(pieces) else Polygon()
    free = shapely.difference(domain, cobs)
    comps = shapely.get_parts(free)
    comps = comps[shapely.get_type_id(comps) == 3] if len(comps) else comps
    if len(comps):
        comps = comps[shapely.area(comps) > MIN_COMPONENT_AREA_M2]
    return comps


# --- process-pool plumbing: the obstacle set is sent once per worker ------------------
_WORKER: dict = {}


def _init_worker(obstacles, domain):
    _WORKER["obstacles"] = obstacles
    _WORKER["domain"] = domain


def _worker_slice(args):
    parts, heading, grow, anchor = args
    return _slice_components(_WORKER["obstacles"], parts, heading, grow, _WORKER["domain"], anchor)


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
    _trees: list = field(default_factory=list, repr=False)

    @property
    def headings_deg(self) -> np.ndarray:
        return self.cells.headings

    def __len__(self) -> int:
        return len(self.cells)

    def tree(self, k: int) -> shapely.STRtree:
        if not self._trees:
            self._trees.extend(shapely.STRtree(c) for c in self.components)
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


def build_slices(plan: Plan, vehicle: Vehicle, *, heading_step_deg: float | None = None,
                 extra_headings=(), bound: str = "sound", workers: int | None = 1,
                 cells: HeadingCells | None = None, obstacles: ObstacleSet | None = None) -> SliceSet:
    """Build the free configuration space of ``vehicle`` in ``plan``, one slice per heading cell.

    Parameters
    ----------
    heading_step_deg : float, optional
        Uniform heading step, degrees. Default: the coarsest step whose rotation error
        stays below 1 cm for this vehicle (see :func:`floorfit.headings.default_step_deg`).
    extra_headings : iterable of float
        Headings (degrees) that get a slice of their own (start/goal, docking headings).
    bound : ``"sound"`` or ``"optimistic"``
        See the module docstring.
    workers : int or None
        Processes for the slices (headings are independent). None: all cores.
    """
    if bound not in BOUNDS:
        raise ValueError(f"bound must be one of {BOUNDS}")
    if cells is None:
        cells = choose_headings(plan, vehicle, heading_step_deg=heading_step_deg, extra_headings=extra_headings)
    obstacles = obstacles if obstacles is not None else obstacles_for(plan, vehicle)
    fp = vehicle.footprint
    rho = vehicle.radius_m
    grow = np.array([rotation_displacement_m(rho, t) for t in cells.max_turn]) + plan.curve_tolerance_m
    x0, y0, x1, y1 = obstacles.bounds
    pad = rho + DOMAIN_PAD_M
    domain = box(x0 - pad, y0 - pad, x1 + pad, y1 + pad)

    if bound == "sound":
        parts = convex_parts(fp)
        anchor = np.asarray(fp.exterior.coords[0])
        jobs = [(parts, float(h), float(g), anchor) for h, g in zip(cells.headings, grow)]
        gmax = float(grow.max())
        grown = shapely.union_all([p.buffer(gmax, join_style="mitre", mitre_limit=10.0) for p in parts]) \
            if gmax > 0 else fp
        tolerance = float(shapely.hausdorff_distance(grown, fp)) if gmax > 0 else 0.0
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
            parts, anchor = cache[key]
            jobs.append((parts, float(h), 0.0, anchor))

    n_workers = os.cpu_count() or 1 if workers is None else max(1, int(workers))
    if n_workers > 1 and len(jobs) >= 8:
        with ProcessPoolExecutor(max_workers=n_workers, initializer=_init_worker,
                                 initargs=(obstacles, domain)) as pool:
            comps = list(pool.map(_worker_slice, jobs, chunksize=max(1, len(jobs) // (4 * n_workers))))
    else:
        comps = [_slice_components(obstacles, p, h, g, domain, a) for p, h, g, a in jobs]
    return SliceSet(plan=plan, vehicle=vehicle, cells=cells, components=comps,
                    grow_m=grow if bound == "sound" else -grow, bound=bound,
                    tolerance_m=tolerance, domain=domain)
