"""Fleet traffic: where two vehicles can pass each other, and the single-lane stretches between.

Two vehicles side by side, facing opposite ways with a gap between them, are one rigid body:
the *pair outline* (:func:`floorfit.analysis.traffic_pair.pair_outline`). Its configuration-space
slices (the same machinery as the check's own, :func:`floorfit.cspace.slices.build_slices`, on
the check's heading cells) say where the two can be abreast: where they can pass each other, or
where one can wait beside the other while it passes. In a straight aisle of width W two vehicles
of widths w1 and w2 kept g apart are abreast iff W ≥ w1 + w2 + g (a geometric closed form).

Along the route the checked vehicle takes between every pair of connected stations
(:func:`floorfit.analysis.traffic_routes.station_routes`), samples every :data:`SAMPLE_STEP_M`
look across the route: the *cross-section* is the line through the sample, perpendicular to
the direction of travel, between the first obstacles on each side (its length is the width the
route has there).
A sample is *two-way* when the pair outline fits with its centre on that cross-section at
some slice heading within :data:`HEADING_WINDOW_DEG` of the travel direction (either way
round). Runs of samples that are not two-way are *single-lane*; their floor strips (the
cross-sections swept along the run), merged over all routes, are the single-lane
stretches, and the two-way strips are the passing places. A single-lane stretch is a
``single-lane`` finding, unless ``one_way`` is allowed and the stretch lies on a loop (the
floor where the vehicle fits still joins its ends without it), so that traffic can run
one way round.

The pair outline, its conventions and its slices are in :mod:`floorfit.analysis.traffic_pair`;
the routes, their samples and cross-sections in :mod:`floorfit.analysis.traffic_routes`.

Lengths are along the route, within one sample step plus the pair slices' tolerance; the
answers err towards "single-lane" (the sound bound). Local frame for geometry, drawing frame
in findings and in the ``traffic`` record, metres and degrees.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import shapely
from shapely.geometry import Point, Polygon

from floorfit.analysis.context import CheckContext, SliceStage
from floorfit.analysis.findings import Finding
from floorfit.analysis.naming import place_name
from floorfit.analysis.traffic_pair import PairSlices, _traffic_vehicles, _two_way, pair_vehicle
from floorfit.analysis.traffic_routes import TrafficRoute, _cross_sections, _sample, _straighten, station_routes
from floorfit.cspace.headings import dominant_directions_deg
from floorfit.cspace.slices import choose_headings, obstacles_for, obstacles_met
from floorfit.plan.site import Traffic
from floorfit.vehicles.rigid import Vehicle

__all__ = ["KIND", "SAMPLE_STEP_M", "HEADING_WINDOW_DEG", "traffic_stage", "PAIR_STEP_DEG"]

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
#: Two ends of a stretch closer than this (metres) are one end.
END_MERGE_M = 1.0


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
