"""The pair outline of fleet traffic and its configuration-space slices.

This module owns the two vehicles abreast as one rigid body and the test of where it fits:
:func:`pair_outline` / :func:`pair_vehicle` (the checked vehicle with the vehicles it meets beside
it, ``gap_m`` apart; vehicle frame of the first vehicle, metres), :class:`PairSlices` (the pair's
slices on the check's heading cells, built only where the routes need them) and the two-way test
that marks each route sample where the pair fits across the route near the travel direction
(local frame, metres and degrees). :mod:`floorfit.analysis.traffic` turns the marks into passing
places and single-lane stretches.

Conventions of the pair outline (vehicle frame of the first vehicle: +x forward, +y left):
the first vehicle on the right, the other on its left (each keeps to its right when they
meet), bounding boxes centred on the same cross line, the gap measured across between the
footprints (outline plus margin). The floor between the two over the length they share
counts as part of the pair (an obstacle there is not passed between them), and the other
vehicle is taken both facing the other way (passing) and the same way (waiting beside,
overtaking): the pair outline is the union of both arrangements, which is the same shape
for outlines symmetric front to back about their box centre (rectangles). With several
other vehicles, their outlines are united in the same place (one slice build for the
fleet; exact when one of them covers the others). The reference point is the centre of
the pair's bounding box, so two equal vehicles give a pair symmetric under a half turn,
whose slices at h and h + 180° are built once.
"""

from __future__ import annotations

import numpy as np
import shapely
import shapely.affinity
from shapely.geometry import Polygon, box

from floorfit.analysis.context import CheckContext
from floorfit.analysis.traffic_routes import TrafficRoute
from floorfit.cspace.headings import HeadingCells, arc_deg
from floorfit.cspace.slices import build_slices
from floorfit.plan.site import Traffic
from floorfit.vehicles.rigid import Vehicle, vehicle_from_outline

__all__ = ["pair_outline", "pair_vehicle", "PairSlices"]


# -- the pair outline ------------------------------------------------------------------------
def _placed(fp: Polygon, turned: bool, cy: float) -> Polygon:
    """``fp`` (turned by a half turn if ``turned``) moved so its bounding box centre is (0, cy)."""
    if turned:
        fp = shapely.affinity.rotate(fp, 180.0, origin=(0.0, 0.0))
    x0, y0, x1, y1 = fp.bounds
    return shapely.affinity.translate(fp, -(x0 + x1) / 2.0, cy - (y0 + y1) / 2.0)


def pair_outline(first: Vehicle, others: list[Vehicle], gap_m: float) -> Polygon:
    """The rigid outline of ``first`` with each of ``others`` beside it on its left, ``gap_m`` apart.

    Footprints (outline plus margin) are used, so the outline needs no margin of its own. See
    the module docstring for the conventions. The reference point is the centre of the
    outline's bounding box; +x is the first vehicle's forward direction.
    """
    fa = first.footprint
    ha = fa.bounds[3] - fa.bounds[1]
    hb = max(o.footprint.bounds[3] - o.footprint.bounds[1] for o in others)
    total = ha + gap_m + hb
    ya = -total / 2.0 + ha / 2.0
    a = _placed(fa, False, ya)
    pieces: list[Polygon] = [a]
    for other in others:
        fb = other.footprint
        hbi = fb.bounds[3] - fb.bounds[1]
        yb = -total / 2.0 + ha + gap_m + hbi / 2.0
        for turned in (True, False):
            b = _placed(fb, turned, yb)
            pieces.append(b)
            xlo, xhi = max(a.bounds[0], b.bounds[0]), min(a.bounds[2], b.bounds[2])
            if xhi > xlo:
                pieces.append(box(xlo, ya, xhi, yb))      # the floor kept clear between the two
    shape = shapely.set_precision(shapely.union_all(pieces), 1e-9)
    if not isinstance(shape, Polygon):
        shape = shape.convex_hull
    return Polygon(shape.exterior).simplify(0.0)


def pair_vehicle(first: Vehicle, others: list[Vehicle], gap_m: float) -> Vehicle:
    """The pair as one rigid vehicle (mode omni, no margin), named after its members."""
    outline = pair_outline(first, others, gap_m)
    heights = [v.height_m for v in [first, *others]]
    height = None if any(h is None for h in heights) else max(heights)
    names = sorted({first.name, *(o.name for o in others)})
    return vehicle_from_outline(list(outline.exterior.coords), name=" + ".join(names), margin=0.0, mode="omni",
                                height_m=height, where="traffic pair outline")


def _traffic_vehicles(ctx: CheckContext, settings: Traffic) -> list[Vehicle]:
    """The vehicles the checked one meets: loaded from files, given as objects, or its own kind."""
    from floorfit.vehicles.loading import split_vehicle_file

    out: list[Vehicle] = []
    for item in settings.vehicles:
        if isinstance(item, Vehicle):
            out.append(item)
        else:
            vehicle, train = split_vehicle_file(item)
            out.append(vehicle)
            if train is not None:
                ctx.notes.append(f"traffic: {vehicle.name} is a train; passing is checked with its tractor only")
    return out or [ctx.vehicle]


# -- the pair's slices and the two-way test ---------------------------------------------------
class PairSlices:
    """The pair's configuration-space slices on the check's heading cells, built on demand: only
    the slices the routes' directions need (``components[k]`` for slice k of ``cells``)."""

    def __init__(self, ctx: CheckContext, cells: HeadingCells, vehicle: Vehicle, obstacles):
        self.ctx, self.cells, self.vehicle, self.obstacles = ctx, cells, vehicle, obstacles
        self.components: dict[int, np.ndarray] = {}
        self.tolerance_m = 0.0

    def build(self, ks) -> None:
        todo = np.array(sorted({int(k) for k in ks} - set(self.components)), dtype=int)
        if not len(todo):
            return
        if len(todo) + len(self.components) > len(self.cells) // 2:     # most of them: all in one go
            todo = np.array(sorted(set(range(len(self.cells))) - set(self.components)), dtype=int)
        c = self.cells
        sub = HeadingCells(c.headings[todo], c.below[todo], c.above[todo], c.step_deg)
        built = build_slices(self.ctx.plan, self.vehicle, cells=sub, workers=self.ctx.workers,
                             obstacles=self.obstacles)
        self.components.update(zip(todo.tolist(), built.components))
        self.tolerance_m = max(self.tolerance_m, float(built.tolerance_m))

    def meets(self, k: int, segs: np.ndarray) -> np.ndarray:
        """Indices into ``segs`` of the segments that meet slice k's free space (prepared polygons)."""
        comps = self.components[k]
        if not len(comps) or not len(segs):
            return np.zeros(0, dtype=int)
        _, hit = shapely.STRtree(segs).query(comps, predicate="intersects")
        return np.unique(hit)


def _nearest(heads: np.ndarray, theta: np.ndarray) -> np.ndarray:
    return np.concatenate([np.argmin(np.abs(arc_deg(heads[None, :], t[:, None])), axis=1)
                           for t in np.array_split(theta, max(1, len(theta) // 2000))]) \
        if len(theta) else np.zeros(0, dtype=int)


def _first_choice(cells: HeadingCells, axes: list[float], theta: np.ndarray, window_deg: float) -> np.ndarray:
    """For each direction, the slice of the nearest wall axis within the window (aisles run along
    the walls, so few slices serve most samples), else the nearest slice."""
    k = _nearest(cells.headings, theta)
    if axes:
        ax = np.asarray(axes, dtype=float)
        off = np.abs(arc_deg(ax[None, :], theta[:, None]))
        best = np.argmin(off, axis=1)
        near = off[np.arange(len(theta)), best] <= window_deg
        k[near] = _nearest(cells.headings, ax)[best[near]]
    return k


def _two_way(pair: PairSlices, routes: list[TrafficRoute], axes: list[float], window_deg: float) -> None:
    """Fill ``route.two_way`` for all routes: the pair fits with its centre on the cross-section at
    a slice heading within ``window_deg`` of the travel direction, either way round. First each
    sample's first-choice slice (both ways round), then, for the samples still undecided, every
    slice in the window; slices are built only when first needed."""
    if not routes:
        return
    p = np.vstack([r.p for r in routes])
    n = np.vstack([r.n for r in routes])
    d = np.vstack([r.d for r in routes])
    t0 = np.concatenate([r.t_neg for r in routes])
    t1 = np.concatenate([r.t_pos for r in routes])
    segs = shapely.linestrings(np.stack([p + t0[:, None] * n, p + t1[:, None] * n], axis=1))
    theta = np.degrees(np.arctan2(d[:, 1], d[:, 0]))
    heads = pair.cells.headings
    ok = np.zeros(len(p), dtype=bool)
    first = _first_choice(pair.cells, axes, theta, window_deg)
    flipped = _first_choice(pair.cells, axes, theta + 180.0, window_deg)
    pair.build(np.r_[first, flipped])
    for k in np.unique(np.r_[first, flipped]):
        idx = np.flatnonzero(((first == k) | (flipped == k)) & ~ok)
        ok[idx[pair.meets(int(k), segs[idx])]] = True
    todo = np.flatnonzero(~ok)
    if len(todo):
        off = np.abs(arc_deg(heads[None, :], theta[todo, None]))
        wanted = (np.minimum(off, 180.0 - off) <= window_deg).any(axis=0)
        pair.build(np.flatnonzero(wanted))
        for k in np.flatnonzero(wanted):
            idx = np.flatnonzero(~ok)
            if not len(idx):
                break
            off = np.abs(arc_deg(heads[k], theta[idx]))
            idx = idx[np.minimum(off, 180.0 - off) <= window_deg]
            if len(idx):
                ok[idx[pair.meets(int(k), segs[idx])]] = True
    start = 0
    for r in routes:
        r.two_way = ok[start:start + len(r.p)]
        start += len(r.p)
