"""Fleet traffic: where two vehicles can pass each other, and the single-lane stretches between.

Two vehicles side by side, facing opposite ways with a gap between them, are one rigid body:
the *pair outline* (:func:`pair_outline`). Its configuration-space slices (the same
machinery as the check's own, :func:`floorfit.cspace.slices.build_slices`, on the check's
heading cells) say where the two can be abreast: where they can pass each other, or where
one can wait beside the other while it passes. In a straight aisle of width W two vehicles
of widths w1 and w2 kept g apart are abreast iff W ≥ w1 + w2 + g (a geometric closed form).

Along the route the checked vehicle takes between every pair of connected stations
(:func:`station_routes`), samples every :data:`SAMPLE_STEP_M` look across the route: the
*cross-section* is the line through the sample, perpendicular to the direction of travel,
between the first obstacles on each side (its length is the width the route has there).
A sample is *two-way* when the pair outline fits with its centre on that cross-section at
some slice heading within :data:`HEADING_WINDOW_DEG` of the travel direction (either way
round). Runs of samples that are not two-way are *single-lane*; their floor strips (the
cross-sections swept along the run), merged over all routes, are the single-lane
stretches, and the two-way strips are the passing places. A single-lane stretch is a
``single-lane`` finding, unless ``one_way`` is allowed and the stretch lies on a loop (the
floor where the vehicle fits still joins its ends without it), so that traffic can run
one way round.

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

Lengths are along the route, within one sample step plus the pair slices' tolerance; the
answers err towards "single-lane" (the sound bound). Local frame for geometry, drawing frame
in findings and in the ``traffic`` record, metres and degrees.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import networkx as nx
import numpy as np
import shapely
import shapely.affinity
from shapely.geometry import Point, Polygon, box

from floorfit.analysis.context import CheckContext, SliceStage
from floorfit.analysis.findings import Finding
from floorfit.analysis.naming import place_name
from floorfit.cspace.headings import HeadingCells, arc_deg, dominant_directions_deg
from floorfit.cspace.roadmap import station_nodes
from floorfit.cspace.slices import build_slices, choose_headings, obstacles_for, obstacles_met
from floorfit.motion.route_query import route_in_slices
from floorfit.plan.site import Traffic
from floorfit.vehicles.rigid import Vehicle, vehicle_from_outline

__all__ = ["KIND", "SAMPLE_STEP_M", "HEADING_WINDOW_DEG", "pair_outline", "pair_vehicle", "station_routes",
           "traffic_stage", "TrafficRoute", "PairSlices", "PAIR_STEP_DEG"]

#: The finding kind of a single-lane stretch.
KIND = "single-lane"
#: Route sampling step, metres (lengths are within one step).
SAMPLE_STEP_M = 0.1
#: The pair may stand this far (degrees) off the direction of travel and still count as passing there.
HEADING_WINDOW_DEG = 10.0
#: Heading step of the pair's slices, degrees (wall directions get narrow cells of their own, so pairs
#: aligned with an aisle are checked nearly exactly; off the walls the pair is grown by up to
#: 2ρ·sin(step/2) and answers err towards single-lane).
PAIR_STEP_DEG = 5.0
#: Cross-sections reach at most this far each side (metres), or twice the pair width when that is more.
CROSS_REACH_M = 4.0
#: The direction of travel at a sample is the chord over this distance along the route (metres).
DIRECTION_CHORD_M = 1.0
#: Two ends of a stretch closer than this (metres) are one end.
END_MERGE_M = 1.0


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


# -- routes and their cross-sections ---------------------------------------------------------
@dataclass
class TrafficRoute:
    """One station pair's route, sampled: positions ``p`` (N, 2), unit directions ``d``, normals
    ``n``, cross-section extent ``t_neg`` ≤ 0 ≤ ``t_pos`` along ``n``, ``two_way`` flags,
    ``step`` (metres of route per sample). Local frame, metres."""

    a: str
    b: str
    p: np.ndarray
    d: np.ndarray
    step: float
    n: np.ndarray = field(init=False)
    t_neg: np.ndarray | None = None
    t_pos: np.ndarray | None = None
    two_way: np.ndarray | None = None

    def __post_init__(self) -> None:
        self.n = np.c_[-self.d[:, 1], self.d[:, 0]]

    @property
    def width(self) -> np.ndarray:
        return self.t_pos - self.t_neg


def _sample(xy: np.ndarray, step: float) -> tuple[np.ndarray, np.ndarray, float] | None:
    """Samples at the centres of equal pieces of the polyline ``xy`` (each at most ``step`` long),
    with the direction of travel as the chord over :data:`DIRECTION_CHORD_M` around each."""
    keep = np.r_[True, np.any(np.abs(np.diff(xy, axis=0)) > 1e-9, axis=1)]
    xy = xy[keep]
    if len(xy) < 2:
        return None
    cum = np.r_[0.0, np.cumsum(np.hypot(*np.diff(xy, axis=0).T))]
    total = float(cum[-1])
    if total <= 1e-6:
        return None
    count = max(1, math.ceil(total / step))
    s = (np.arange(count) + 0.5) * (total / count)
    at = np.c_[np.interp(s, cum, xy[:, 0]), np.interp(s, cum, xy[:, 1])]
    half = DIRECTION_CHORD_M / 2.0
    lo, hi = np.clip(s - half, 0.0, total), np.clip(s + half, 0.0, total)
    chord = np.c_[np.interp(hi, cum, xy[:, 0]) - np.interp(lo, cum, xy[:, 0]),
                  np.interp(hi, cum, xy[:, 1]) - np.interp(lo, cum, xy[:, 1])]
    length = np.hypot(chord[:, 0], chord[:, 1])
    length[length <= 1e-12] = 1.0
    return at, chord / length[:, None], total / count


def station_routes(ctx: CheckContext, cs: SliceStage, reach: dict) -> list[tuple[str, str, np.ndarray]]:
    """(from, to, local (N, 2) path) of the checked vehicle's roadmap route for every connected
    station pair, in station order."""
    comp: dict = {}
    for cid, nodes in enumerate(nx.connected_components(cs.roadmap)):
        for node in nodes:
            comp[node] = cid
    heads = cs.slices.cells.headings
    by = {s.name: s for s in ctx.stations}
    names = ctx.station_names
    nodes = {s.name: station_nodes(cs.slices, ctx.st_local[s.name], s.heading_deg, s.heading_tolerance_deg)
             for s in ctx.stations}
    out = []
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            if not (reach[a][b] or reach[b][a]):
                continue
            sa, sb = by[a], by[b]
            la, lb = ctx.st_local[a], ctx.st_local[b]
            na, nb = nodes[a], nodes[b]
            pair = next(((u, v) for u in na for v in nb if comp.get(u) == comp.get(v)), None)
            if pair is None:
                continue
            tries = [(float(heads[pair[0][0]]), float(heads[pair[1][0]]))]
            if sa.heading_deg is not None or sb.heading_deg is not None:
                tries.insert(0, (sa.heading_deg if sa.heading_deg is not None else tries[0][0],
                                 sb.heading_deg if sb.heading_deg is not None else tries[0][1]))
            for ha, hb in tries:
                status, path, _ = route_in_slices(cs.slices, cs.roadmap, (*la, ha), (*lb, hb))
                if status == "reachable":
                    out.append((a, b, np.asarray(path)[:, :2]))
                    break
    return out


def _straighten(xy: np.ndarray, fits, spacing: float = 0.5) -> np.ndarray:
    """The route pulled taut within ``fits`` (where the vehicle fits at some heading): from each
    point, on to the farthest later point (found by doubling, then halving) that a straight line
    inside ``fits`` reaches. Removes the detours a route takes to find room to turn."""
    if fits is None or fits.is_empty or len(xy) < 3:
        return xy
    line = shapely.LineString(xy)
    count = max(2, math.ceil(line.length / spacing) + 1)
    pts = shapely.get_coordinates(shapely.line_interpolate_point(line, np.linspace(0.0, line.length, count)))
    shapely.prepare(fits)

    def clear(i: int, j: int) -> bool:
        return bool(fits.covers(shapely.LineString([pts[i], pts[j]])))

    out, i, last = [pts[0]], 0, len(pts) - 1
    while i < last:
        good, step = i + 1, 1
        while good + step <= last and clear(i, good + step):
            good += step
            step *= 2
        lo, hi = good, min(good + step, last + 1)
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if clear(i, mid):
                lo = mid
            else:
                hi = mid
        out.append(pts[lo])
        i = lo
    return np.asarray(out)


def _cross_sections(route: TrafficRoute, tree: shapely.STRtree, geoms: np.ndarray, reach: float) -> None:
    """Fill ``route.t_neg`` / ``t_pos``: where the cross-section meets the first obstacle each side."""
    p, n = route.p, route.n
    m = len(p)
    t_pos, t_neg = np.full(m, reach), np.full(m, -reach)
    if len(geoms):
        segs = shapely.linestrings(np.stack([p - reach * n, p + reach * n], axis=1))
        si, oi = tree.query(segs, predicate="intersects")
        if len(si):
            hit = shapely.intersection(segs[si], geoms[oi])
            xy, k = shapely.get_coordinates(hit, return_index=True)
            owner = si[k]
            t = np.einsum("ij,ij->i", xy - p[owner], n[owner])
            pos, neg = t > 1e-9, t < -1e-9
            np.minimum.at(t_pos, owner[pos], t[pos])
            np.maximum.at(t_neg, owner[neg], t[neg])
            on = owner[~(pos | neg)]
            t_pos[on] = t_neg[on] = 0.0
    route.t_neg, route.t_pos = t_neg, t_pos


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


# -- strips, stretches, passing places ------------------------------------------------------
def _runs(flags: np.ndarray) -> list[tuple[int, int]]:
    """(first, last) index of every run of True in ``flags``."""
    d = np.diff(np.r_[0, flags.astype(np.int8), 0])
    return list(zip(np.flatnonzero(d == 1).tolist(), (np.flatnonzero(d == -1) - 1).tolist()))


def _strip(r: TrafficRoute, j0: int, j1: int, inset: float = 0.01):
    """The floor the cross-sections of samples j0..j1 sweep (a polygon, local frame)."""
    sl = slice(j0, j1 + 1)
    p, d, n = r.p[sl], r.d[sl], r.n[sl]
    t0, t1 = r.t_neg[sl] + inset, r.t_pos[sl] - inset
    half = 0.5 * r.step
    left = np.vstack([p[:1] - half * d[:1] + t1[:1, None] * n[:1], p + t1[:, None] * n,
                      p[-1:] + half * d[-1:] + t1[-1:, None] * n[-1:]])
    right = np.vstack([p[:1] - half * d[:1] + t0[:1, None] * n[:1], p + t0[:, None] * n,
                       p[-1:] + half * d[-1:] + t0[-1:, None] * n[-1:]])
    poly = Polygon(np.vstack([left, right[::-1]]))
    if not poly.is_valid:
        poly = shapely.make_valid(poly)
        poly = shapely.union_all([g for g in shapely.get_parts(poly) if isinstance(g, Polygon)])
    return poly


def _merge(pieces: list[tuple[int, int, int, Any]]) -> list[tuple[Any, list[tuple[int, int, int]]]]:
    """Union the strips (route, j0, j1, polygon) and group the runs by the part they fall in."""
    if not pieces:
        return []
    union = shapely.union_all([g for *_, g in pieces])
    parts = [g for g in shapely.get_parts(union) if isinstance(g, Polygon) and not g.is_empty]
    tree = shapely.STRtree(parts)
    groups: dict[int, list] = {}
    for ri, j0, j1, g in pieces:
        hit = tree.query(g.representative_point(), predicate="intersects")
        if len(hit):
            groups.setdefault(int(hit[0]), []).append((ri, j0, j1))
    return [(parts[i], groups[i]) for i in sorted(groups)]


def _door_or_label(plan, poly, x: float, y: float) -> str | None:
    """A doorway inside the strip names it; else the nearest label or doorway to (x, y)."""
    grown = poly.buffer(0.3)
    for door in plan.doors:
        if grown.covers(Point(door.x, door.y)):
            name = f"doorway {door.label}" if door.label else "doorway"
            return f"{name} ({door.width_m:.2f} m drawn)"
    return place_name(plan, x, y)


def _passing_places(ctx: CheckContext, routes: list[TrafficRoute]) -> list[dict]:
    pieces = [(ri, j0, j1, _strip(r, j0, j1)) for ri, r in enumerate(routes) for j0, j1 in _runs(r.two_way)]
    plan = ctx.plan
    places = []
    for poly, runs in _merge(pieces):
        pts = np.vstack([routes[ri].p[j0:j1 + 1] for ri, j0, j1 in runs])
        c = poly.centroid
        q = pts[np.argmin(np.hypot(pts[:, 0] - c.x, pts[:, 1] - c.y))]
        longest = max((j1 - j0 + 1) * routes[ri].step for ri, j0, j1 in runs)
        places.append({"x_local": float(q[0]), "y_local": float(q[1]), "geometry": poly,
                       "length_m": longest, "label": place_name(plan, float(q[0]), float(q[1])),
                       "pairs": sorted({(routes[ri].a, routes[ri].b) for ri, _, _ in runs})})
    places.sort(key=lambda pl: (round(pl["x_local"], 3), round(pl["y_local"], 3)))
    for i, pl in enumerate(places, 1):
        pl["id"] = f"P{i}"
    return places


def _ends(routes: list[TrafficRoute], runs: list[tuple[int, int, int]]) -> list[np.ndarray]:
    """Where the runs meet two-way floor (the sample just outside each run), merged within END_MERGE_M."""
    ends: list[np.ndarray] = []
    for ri, j0, j1 in runs:
        r = routes[ri]
        for j in (j0 - 1, j1 + 1):
            if 0 <= j < len(r.p) and r.two_way[j]:
                q = r.p[j]
                if all(math.hypot(*(q - e)) > END_MERGE_M for e in ends):
                    ends.append(q)
    return ends


def _on_loop(fits, poly, ends: list[np.ndarray]) -> bool:
    """True when the floor the vehicle fits on still joins all ``ends`` with the stretch taken out."""
    if fits is None or len(ends) < 2 or fits.is_empty:
        return False
    rest = shapely.difference(fits, poly.buffer(0.05))
    parts = list(shapely.get_parts(rest))
    holder = [next((i for i, g in enumerate(parts) if g.distance(Point(e)) <= 0.15), None) for e in ends]
    return holder[0] is not None and all(h == holder[0] for h in holder)


def _nearest_place(places: list[dict], q) -> tuple[dict, float] | None:
    if not places:
        return None
    dist = [pl["geometry"].distance(Point(q)) for pl in places]
    i = int(np.argmin(dist))
    return places[i], float(dist[i])


@dataclass
class _Pair:
    vehicle: Vehicle
    others: list[Vehicle]
    width: float
    length: float
    text: str


def _stretches(ctx: CheckContext, routes: list[TrafficRoute], places: list[dict], pair: _Pair,
               fits) -> list[dict]:
    pieces = [(ri, j0, j1, _strip(r, j0, j1)) for ri, r in enumerate(routes) for j0, j1 in _runs(~r.two_way)]
    plan = ctx.plan
    out = []
    for poly, runs in _merge(pieces):
        ri, j0, j1 = max(runs, key=lambda t: ((t[2] - t[1] + 1) * routes[t[0]].step, -t[0], -t[1]))
        r = routes[ri]
        length = (j1 - j0 + 1) * r.step
        mid = r.p[(j0 + j1) // 2]
        widths = np.concatenate([routes[a].width[b:c + 1] for a, b, c in runs])
        where = np.concatenate([np.arange(b, c + 1) for _, b, c in runs])
        owner = np.concatenate([np.full(c - b + 1, a) for a, b, c in runs])
        narrow = int(np.argmin(widths))
        nr, nj = routes[int(owner[narrow])], int(where[narrow])
        cut = (nr.p[nj] + nr.t_neg[nj] * nr.n[nj], nr.p[nj] + nr.t_pos[nj] * nr.n[nj])
        ends = _ends(routes, runs)
        inside = [s.name for s in ctx.stations if poly.buffer(0.1).covers(Point(ctx.st_local[s.name]))]
        end_info = []
        for e in ends:
            near = _nearest_place(places, e)
            end_info.append({"x_local": float(e[0]), "y_local": float(e[1]),
                             "passing_place": None if near is None else near[0]["id"],
                             "distance_m": None if near is None else near[1]})
        has = float(widths[narrow])
        if has >= pair.width and length < pair.length:
            continue        # wide enough and shorter than the pair: the route turning a corner, not a lane
        out.append({
            "geometry": poly, "x_local": float(mid[0]), "y_local": float(mid[1]), "length_m": length,
            "label": _door_or_label(plan, poly, float(mid[0]), float(mid[1])),
            "clear_width_m": has, "needed_width_m": pair.width, "widening_m": max(0.0, pair.width - has),
            "narrowest": cut, "pairs": sorted({(routes[a].a, routes[a].b) for a, _, _ in runs}),
            "ends": end_info, "stations_inside": inside, "dead_end": len(ends) <= 1,
            "one_way_possible": _on_loop(fits, poly, ends) if ctx.site.traffic.one_way else False,
        })
    out.sort(key=lambda s: (-round(s["length_m"], 6), round(s["x_local"], 3), round(s["y_local"], 3)))
    for i, s in enumerate(out, 1):
        s["id"] = f"S{i}"
    return out


def _summary(s: dict, pair: _Pair, places: dict) -> str:
    parts = [f"{s['length_m']:.1f} m single-lane stretch: {pair.text} cannot pass each other here"]
    if s["widening_m"] > 0:
        parts.append(f"clear width {s['clear_width_m']:.2f} m, passing needs {s['needed_width_m']:.2f} m "
                     f"(widen by {s['widening_m']:.2f} m)")
    else:
        parts.append(f"the width is there ({s['clear_width_m']:.2f} m, passing needs {s['needed_width_m']:.2f} m) "
                     f"but the pair does not fit along it (a bend, or obstacles along the way)")
    pairs = [f"{a}–{b}" for a, b in s["pairs"]]
    more = f" and {len(pairs) - 3} more" if len(pairs) > 3 else ""
    parts.append(f"on the route{'s' if len(pairs) != 1 else ''} {', '.join(pairs[:3])}{more}")
    ends = []
    for e in s["ends"]:
        pl = places.get(e["passing_place"])
        if pl is not None:
            ends.append(pl["id"] + (f" ({pl['label']})" if pl["label"] else ""))
    inside = f" ({', '.join(s['stations_inside'])} in it)" if s["stations_inside"] else ""
    if not s["ends"]:
        parts.append(f"no passing place anywhere along it{inside}: one vehicle must back out")
    elif s["dead_end"]:
        parts.append(f"a dead end{inside}: the other vehicle must wait at {ends[0]}")
    elif ends:
        parts.append("passing places at its ends: " + ", ".join(ends))
    return "; ".join(parts)


def _finding(ctx: CheckContext, s: dict, pair: _Pair, places: dict) -> Finding:
    plan = ctx.plan
    x, y = plan.to_drawing(s["x_local"], s["y_local"])
    x0, y0, x1, y1 = plan.geometry_to_drawing(s["geometry"]).bounds
    return Finding(kind=KIND, x=x, y=y, summary=_summary(s, pair, places), label=s["label"],
                   cause="width" if s["widening_m"] > 0 else "turn", clear_width_m=s["clear_width_m"],
                   needed_width_m=s["needed_width_m"], extent=(x0, y0, x1, y1), geometry=s["geometry"])


def _pair_text(first: Vehicle, others: list[Vehicle], gap_m: float) -> str:
    names = [f"another {o.name}" if o.name == first.name else f"the {o.name}" for o in others]
    return f"the {first.name} and {' or '.join(dict.fromkeys(names))} ({gap_m:.2f} m apart)"


def _drawing_xy(plan, x: float, y: float) -> list[float]:
    return [round(v, 4) for v in plan.to_drawing(x, y)]


def _record(ctx: CheckContext, settings: Traffic, pair: _Pair, pair_slices: PairSlices, routes, places,
            stretches):
    """The ``traffic`` record of the check result (drawing frame; ``geometry`` keys local, not for JSON)."""
    plan = ctx.plan
    for item in places + stretches:
        item["x"], item["y"] = plan.to_drawing(item.pop("x_local"), item.pop("y_local"))
        item["extent"] = list(plan.geometry_to_drawing(item["geometry"]).bounds)
        item["pairs"] = [list(p) for p in item["pairs"]]
    for s in stretches:
        for e in s["ends"]:
            e["x"], e["y"] = plan.to_drawing(e.pop("x_local"), e.pop("y_local"))
        (ax, ay), (bx, by) = s["narrowest"]
        s["narrowest"] = [_drawing_xy(plan, ax, ay), _drawing_xy(plan, bx, by)]
        s["narrowest_local"] = ((ax, ay), (bx, by))
    outline = pair.vehicle.outline
    return {
        "settings": {
            "vehicle": ctx.vehicle.name, "meets": [o.name for o in pair.others],
            "gap_m": settings.gap_m, "gap_reference": settings.gap_reference, "one_way": settings.one_way,
            "pair_width_m": pair.width, "pair_length_m": pair.length,
            "pair_outline": [[round(x, 6), round(y, 6)] for x, y in outline.exterior.coords[:-1]],
            "tolerance_m": round(float(pair_slices.tolerance_m), 6), "headings": len(pair_slices.components),
            "sample_step_m": SAMPLE_STEP_M, "heading_window_deg": HEADING_WINDOW_DEG,
            "station_pairs_routed": len(routes),
            "route_length_m": round(float(sum(len(r.p) * r.step for r in routes)), 4),
        },
        "passing_places": places,
        "stretches": stretches,
        "pair_geometry": outline,
    }


def traffic_stage(ctx: CheckContext, cs: SliceStage, reach: dict, fits=None) -> tuple[list[Finding], dict]:
    """Passing places and single-lane stretches along the routes between stations.

    Returns the ``single-lane`` findings and the ``traffic`` record for the check result
    (see the module docstring). ``fits``: where the checked vehicle fits at some heading
    (local frame), for the one-way test.
    """
    settings = ctx.site.traffic or Traffic()
    others = _traffic_vehicles(ctx, settings)
    pv = pair_vehicle(ctx.vehicle, others, settings.gap_m)
    x0, y0, x1, y1 = pv.outline.bounds
    pair = _Pair(pv, others, y1 - y0, x1 - x0, _pair_text(ctx.vehicle, others, settings.gap_m))
    same_height = pv.height_m == ctx.vehicle.height_m
    obstacles = cs.obstacles if same_height else obstacles_for(ctx.plan, pv)
    cells = choose_headings(ctx.plan, pv, heading_step_deg=max(PAIR_STEP_DEG, cs.cells.step_deg or 0.0))
    pair_slices = PairSlices(ctx, cells, pv, obstacles)
    ctx.progress("traffic: routes between stations")
    walls, solids = obstacles_met(ctx.plan, pv)
    geoms = np.asarray([g for g in list(walls) + list(solids) if g is not None and not g.is_empty], dtype=object)
    tree = shapely.STRtree(geoms)
    reach_m = max(CROSS_REACH_M, 2.0 * pair.width)
    routes = []
    for a, b, xy in station_routes(ctx, cs, reach):
        sampled = _sample(_straighten(xy, fits), SAMPLE_STEP_M)
        if sampled is None:
            continue
        r = TrafficRoute(a, b, sampled[0], sampled[1], sampled[2])
        _cross_sections(r, tree, geoms, reach_m)
        routes.append(r)
    ctx.progress(f"traffic: slices of the pair ({pair.width:.2f} × {pair.length:.2f} m) along the routes")
    walls_local = ctx.plan.walls
    axes = [float(a + 90.0 * i) for a in dominant_directions_deg(walls_local) for i in range(4)] \
        if len(walls_local) else []
    _two_way(pair_slices, routes, axes, HEADING_WINDOW_DEG)
    places = _passing_places(ctx, routes)
    stretches = _stretches(ctx, routes, places, pair, fits)
    if stretches:       # a passing strip reaching into a stretch (a cross-section up a side aisle) is not passing floor
        single = shapely.union_all([st["geometry"] for st in stretches])
        for pl in places:
            pl["geometry"] = shapely.difference(pl["geometry"], single)
    by_id = {pl["id"]: pl for pl in places}
    findings = []
    for s in stretches:
        s["finding"] = None
        if not s["one_way_possible"]:
            s["finding"] = _finding(ctx, s, pair, by_id)
            findings.append(s["finding"])
    if len(ctx.stations) > 1 and not routes:
        ctx.notes.append("traffic: no two stations are connected, so no route was looked at for passing")
    return findings, _record(ctx, settings, pair, pair_slices, routes, places, stretches)
