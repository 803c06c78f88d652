"""The site check: reachability between stations, pinch points, no-turn stretches, tight spots.

``run_check(plan, vehicle, stations, site=...)`` returns a :class:`~floorfit.analysis.findings.CheckResult`.

How each finding kind is found
------------------------------
``blocked``
    The vehicle's roadmap splits into separate regions (connected components). A raster of
    floor clearance is swept from wide to narrow, joining regions where the widest
    connecting path allows (a maximin path problem); every join that still leaves at least
    a person's width (``person_width``) is a place where a person passes and the vehicle
    does not. Its clear width is measured exactly at the narrowest point nearby. If the
    clear width is at least what the vehicle needs to drive straight through, the cause is
    the turn (a corner or approach it cannot make).
``tight``
    The same analysis for the vehicle outline grown by the site's required clearance, kept
    where the plain vehicle (with its margin) does pass.
``no-turn``
    Floor where the vehicle fits but lies farther than a short move from any place where it
    can turn around (see :mod:`floorfit.analysis.turnability`).
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Callable

import networkx as nx
from networkx.utils import UnionFind
import numpy as np
import shapely
import shapely.ops
from scipy import ndimage
from shapely.geometry import Point, box

from floorfit.analysis.clearance_field import choose_cell_size, clearance_field, join_events
from floorfit.cspace.slices import SliceSet, build_slices, choose_headings, obstacles_for
from floorfit.errors import SiteError
from floorfit.analysis.findings import CheckResult, Finding
from floorfit.plan.stations import Station, validate_stations
from floorfit.cspace.headings import arc_deg
from floorfit.analysis.naming import place_name
from floorfit.analysis.passages import ObstacleIndex, min_width, narrowest_width_near
from floorfit.plan.model import Plan
from floorfit.cspace.raster import fill_polygons
from floorfit.cspace.roadmap import build_roadmap, station_nodes
from floorfit.plan.site import Site
from floorfit.cspace.sizelimits import check_problem_size
from floorfit.analysis.maneuvers import maneuver_findings, route_sweeps, turnaround_circle
from floorfit.analysis.turnability import heading_ranges, heading_raster, turn_region
from floorfit.vehicles.rigid import Vehicle

__all__ = ["run_check", "rank_findings", "MAP_MAX_CELLS", "PERSON_HEADROOM_M"]

#: The turnability map is sampled on at most this many cells (its cell size grows on big sites).
MAP_MAX_CELLS = 400_000
#: Headroom a person needs, metres: obstacles starting higher do not block people (common
#: practice; door heights are about 2.03 m / 80 in, from memory).
PERSON_HEADROOM_M = 2.0


def _noop(_msg: str) -> None:
    pass


class _Analysis:
    """Shared state of one check (local frame throughout)."""

    def __init__(self, plan, vehicle, stations, site, progress, workers, heading_step):
        self.plan = plan
        self.vehicle = vehicle
        self.stations = stations
        self.site = site
        self.progress = progress
        self.workers = workers
        self.heading_step = heading_step
        wb, sb = plan.wall_heights[:, 0], plan.solid_heights[:, 0]
        # floor-standing obstacles measure widths; overhead ones that the vehicle meets explain height blocks
        self.index = ObstacleIndex(plan.walls[wb <= 0], plan.solids[sb <= 0])
        h = vehicle.height_m if vehicle.height_m is not None else math.inf
        ow, os_ = (wb > 0) & (wb < h), (sb > 0) & (sb < h)
        self.overhead = list(plan.walls[ow]) + list(plan.solids[os_])
        self.overhead_bottom = np.concatenate([wb[ow], sb[os_]])
        self.overhead_tree = shapely.STRtree(self.overhead) if self.overhead else None
        self.st_local = {s.name: plan.to_local(s.x, s.y) for s in stations}

    # --- roadmap regions ----------------------------------------------------------
    def regions(self, slices: SliceSet, G: nx.Graph):
        comp_of = {}
        comps = list(nx.connected_components(G))
        for cid, c in enumerate(comps):
            for n in c:
                comp_of[n] = cid
        st_regions = {}
        for s in self.stations:
            nodes = station_nodes(slices, self.st_local[s.name], s.heading_deg, s.heading_tolerance_deg)
            st_regions[s.name] = sorted({comp_of[n] for n in nodes})
        return comps, comp_of, st_regions

    def seeds(self, slices: SliceSet, comps, st_regions, field, min_area):
        seeds = {}
        keep = set(r for rs in st_regions.values() for r in rs)
        edge = slices.domain.exterior
        for cid, c in enumerate(comps):
            big = max(slices.components[k][i].area for k, i in c) >= min_area
            exterior = cid not in keep and any(slices.components[k][i].intersects(edge) for k, i in c)
            if cid in keep or (big and not exterior):
                pts = []
                for k, i in c:
                    poly = slices.components[k][i]
                    p = poly.representative_point()
                    pts.append((p.x, p.y))
                for name, rs in st_regions.items():
                    if cid in rs:
                        pts.append(self.st_local[name])
                pts = np.asarray(pts)
                iy, ix = field.index_of(pts[:, 0], pts[:, 1])
                seeds[cid] = np.unique(np.c_[iy, ix], axis=0)
        return seeds

    def joins(self, slices, G, field, floor):
        """Join events between *places*: roadmap regions, with regions that hold the same floor
        facing the opposite way merged first (that is a no-turn matter, not a blocked passage)."""
        comps, comp_of, st_regions = self.regions(slices, G)
        min_area = 2.0 * self.vehicle.footprint.area
        seeds = self.seeds(slices, comps, st_regions, field, min_area)
        group = UnionFind(seeds)
        find = group.__getitem__

        ids = sorted(seeds)
        direction = {r: _mean_heading(slices, comps[r]) for r in ids}
        geoms = {r: self.side_geometry(slices, comps, [r]) for r in ids} if len(ids) <= 60 else {}
        for i, ra in enumerate(ids):
            for rb in ids[i + 1:]:
                if ra not in geoms or not _reversed(direction, [ra], [rb]):
                    continue
                inter = geoms[ra].intersection(geoms[rb])
                if not inter.is_empty and inter.area > 0.25 * min(geoms[ra].area, geoms[rb].area):
                    group.union(ra, rb)
        places: dict[int, set] = {}
        place_seeds: dict[int, list] = {}
        for r in ids:
            g = find(r)
            places.setdefault(g, set()).update(comps[r])
            place_seeds.setdefault(g, []).append(seeds[r])
        pseeds = {g: np.unique(np.vstack(v), axis=0) for g, v in place_seeds.items()}
        pcomps = [set() for _ in range(len(comps))]
        for g, nodes in places.items():
            pcomps[g] = nodes
        st_places = {n: sorted({find(r) for r in rs if r in seeds}) for n, rs in st_regions.items()}
        events = join_events(field, pseeds, floor)
        return pcomps, comp_of, st_places, pseeds, events

    def clear_height_near(self, x: float, y: float, radius: float) -> float | None:
        """Lowest bottom (m) of overhead obstacles the vehicle meets within ``radius`` of (x, y), or None."""
        if self.overhead_tree is None:
            return None
        idx = self.overhead_tree.query(Point(x, y).buffer(radius))
        return float(self.overhead_bottom[idx].min()) if len(idx) else None

    def locate(self, slices, comps, seeds, field, ev, union_sides):
        """Local (x, y) of a join; for regions that overlap in the plane, a point of the overlap."""
        x, y = field.centre_of(ev.iy, ev.ix)
        a_side, b_side = union_sides
        if a_side is not None and b_side is not None:
            inter = a_side.intersection(b_side)
            if not inter.is_empty and inter.area > 0:
                p = shapely.ops.nearest_points(inter, Point(x, y))[0]
                return p.x, p.y, True
            if ev.overlap:
                # the floor between the sides was never narrow: the block is where the vehicle's
                # regions come closest (an overhead obstacle, a corner)
                pa, pb = shapely.ops.nearest_points(a_side, b_side)
                return (pa.x + pb.x) / 2.0, (pa.y + pb.y) / 2.0, False
        return x, y, False

    def side_geometry(self, slices, comps, members, limit=240):
        polys = [slices.components[k][i] for cid in members for k, i in comps[cid]]
        if len(polys) > limit:
            step = len(polys) / limit
            polys = [polys[int(j * step)] for j in range(limit)]
        return shapely.union_all(polys) if polys else None


def _cells_to_geometry(mask: np.ndarray, x0: float, y0: float, cell: float):
    """Union of the boxes of True cells (row runs merged), local frame."""
    boxes = []
    for iy in np.flatnonzero(mask.any(axis=1)):
        row = mask[iy]
        d = np.diff(np.concatenate([[0], row.astype(np.int8), [0]]))
        starts, ends = np.flatnonzero(d == 1), np.flatnonzero(d == -1)
        for a, b in zip(starts, ends):
            boxes.append(box(x0 + a * cell, y0 + iy * cell, x0 + b * cell, y0 + (iy + 1) * cell))
    return shapely.union_all(boxes) if boxes else shapely.Polygon()


def _sides_of_events(events, regions):
    """For each event, the member regions of each side at the time of the join."""
    uf = UnionFind(regions)
    out = []
    for ev in events:
        groups = {frozenset(g) for g in uf.to_sets()}
        side_a = next(g for g in groups if ev.a in g)
        side_b = next(g for g in groups if ev.b in g)
        out.append((set(side_a), set(side_b)))
        uf.union(ev.a, ev.b)
    return out


def run_check(plan: Plan, vehicle: Vehicle, stations: list[Station], *, site: Site | None = None,
              heading_step_deg: float | None = None, workers: int | None = 1,
              progress: Callable[[str], None] | None = None, quick: bool = False,
              routes=None) -> CheckResult:
    """Check a site for a vehicle. Stations in the drawing frame (metres, degrees).

    ``quick=True`` finds reachability and blocked places only (no tight spots, no
    turnability map, no no-turn stretches): what sizing needs to name the binding place.
    ``routes``: (from, to) station-name pairs whose drivable path and swept area the report
    draws (default: the site file's ``[report] routes``).
    """
    site = site or Site()
    progress = progress or _noop
    validate_stations(plan, stations, site.path)
    step = heading_step_deg or site.heading_step_deg
    A = _Analysis(plan, vehicle, stations, site, progress, workers, step)
    extra = [s.heading_deg for s in stations if s.heading_deg is not None]
    cells = choose_headings(plan, vehicle, heading_step_deg=step, extra_headings=extra)
    check_problem_size(plan, len(cells))
    obstacles = obstacles_for(plan, vehicle)
    progress(f"slices: {len(cells)} headings")
    slices = build_slices(plan, vehicle, cells=cells, workers=workers, obstacles=obstacles)
    progress("roadmap")
    G = build_roadmap(slices)

    x0, y0, x1, y1 = plan.local_bounds()
    pad = 1.0
    bounds = (x0 - pad, y0 - pad, x1 + pad, y1 + pad)
    cell = choose_cell_size(bounds, 0.05)
    progress(f"clearance field ({cell * 100:.0f} cm cells)")
    pw = plan.wall_heights[:, 0] < PERSON_HEADROOM_M
    ps = plan.solid_heights[:, 0] < PERSON_HEADROOM_M
    field = clearance_field(plan.walls[pw], plan.solids[ps], bounds, cell)
    person = site.person_width_m
    floor = max(person / 2.0 - 0.75 * cell, cell)

    findings: list[Finding] = []
    needed = min_width(vehicle.footprint)
    _, _, st_graph = A.regions(slices, G)
    comps, comp_of, st_regions, seeds, events = A.joins(slices, G, field, floor)
    names = [s.name for s in stations]
    reach = {a: {b: bool(set(st_graph[a]) & set(st_graph[b])) for b in names} for a in names}
    notes: list[str] = []

    # stations where the vehicle does not fit at all
    for s in stations:
        if not st_graph[s.name]:
            lx, ly = A.st_local[s.name]
            hd = f" at heading {s.heading_deg:g}° (±{s.heading_tolerance_deg:g}°)" if s.heading_deg is not None else ""
            findings.append(Finding(
                kind="blocked", cause="station", x=s.x, y=s.y, label=place_name(plan, lx, ly),
                summary=f"the vehicle does not fit at station {s.name}{hd}",
                cuts_off=[s.name], needed_width_m=round(needed, 4)))
            notes.append(f"station {s.name}: the vehicle does not fit there{hd}")

    progress("pinch points")
    tree = nx.Graph()
    tree.add_nodes_from(seeds)
    sides = _sides_of_events(events, list(seeds))
    region_stations = {cid: [n for n in names if cid in st_regions[n]] for cid in seeds}
    for ev, (sa, sb) in zip(events, sides):
        ga = A.side_geometry(slices, comps, sa)
        gb = A.side_geometry(slices, comps, sb)
        lx, ly, overlap = A.locate(slices, comps, seeds, field, ev, (ga, gb))
        if ev.overlap or overlap:
            # no narrow floor between the sides (a turn or an overhead block): the floor there is
            # at least 2 × the join level wide; measure it at the raster join cell
            jx, jy = field.centre_of(ev.iy, ev.ix)
            w, _, _, q1, q2 = narrowest_width_near(A.index, jx, jy, radius=max(3 * cell, 0.15))
            px, py = lx, ly
        else:
            w, px, py, q1, q2 = narrowest_width_near(A.index, lx, ly, radius=max(3 * cell, 0.15))
            if w < person - 1e-6:
                continue      # not a passage a person uses: the regions are not walkably connected here
        st_a = sorted({n for r in sa for n in region_stations.get(r, [])})
        st_b = sorted({n for r in sb for n in region_stations.get(r, [])})
        cut = st_b if len(st_b) <= len(st_a) else st_a
        cause = "width" if w < needed + slices.tolerance_m else "turn"
        dx, dy = plan.to_drawing(px, py)
        label = place_name(plan, px, py)
        clear_h = A.clear_height_near(px, py, vehicle.radius_m + 0.5)
        if clear_h is not None and cause == "turn":
            cause = "height"
            need_h = f"{vehicle.height_m:.2f} m" if vehicle.height_m is not None else \
                "more (its height is not given, so it counts as unlimited)"
            summary = f"clear height {clear_h:.2f} m, the vehicle needs {need_h} (clear width {w:.2f} m would be enough)"
        elif cause == "width":
            summary = (f"clear width {w:.2f} m, the vehicle needs {needed:.2f} m (outline plus margin) to pass")
        else:
            summary = (f"clear width {w:.2f} m is enough to drive straight through ({needed:.2f} m), "
                       f"but the vehicle cannot make the turn here")
        if cut:
            summary += f"; cuts off {', '.join(cut)}"
        geom = shapely.LineString([q1, q2]) if q1 is not None and q2 is not None and not np.allclose(q1, q2) else None
        f = Finding(kind="blocked", cause=cause, x=dx, y=dy, label=label, summary=summary,
                    clear_width_m=round(w, 4), needed_width_m=round(needed, 4), cuts_off=cut, geometry=geom,
                    clear_height_m=None if cause != "height" else round(clear_h, 4),
                    needed_height_m=None if cause != "height" else vehicle.height_m)
        findings.append(f)
        tree.add_edge(ev.a, ev.b, finding=f)

    # where each unreachable pair is cut
    cuts: dict[tuple[str, str], list[Finding]] = {}
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            if reach[a][b]:
                continue
            found = []
            for ra in st_regions[a]:
                for rb in st_regions[b]:
                    if ra in tree and rb in tree and nx.has_path(tree, ra, rb):
                        path = nx.shortest_path(tree, ra, rb)
                        found = [tree.edges[u, v]["finding"] for u, v in zip(path[:-1], path[1:])]
                        found = [f for f in found if f is not None]
                        break
                if found:
                    break
            cuts[(a, b)] = found
            if not found and st_regions[a] and st_regions[b]:
                notes.append(f"{a} and {b} are not connected even for a person "
                             f"({person:.2f} m wide): separate parts of the drawing")

    # tight: the vehicle outline grown by the required clearance
    req = site.required_clearance_m
    if req > vehicle.margin_m + 1e-9 and stations and not quick:
        progress(f"clearance {req:.2f} m")
        grown = replace(vehicle, outline=vehicle.outline.buffer(req, join_style="mitre", mitre_limit=10.0),
                        margin_m=0.0, name=vehicle.name + " + clearance")
        gslices = build_slices(plan, grown, cells=choose_headings(plan, grown, heading_step_deg=step,
                                                                    extra_headings=extra),
                               workers=workers, obstacles=obstacles)
        gG = build_roadmap(gslices)
        gcomps, _, g_st, gseeds, gevents = A.joins(gslices, gG, field, floor)
        gsides = _sides_of_events(gevents, list(gseeds))
        blocked_xy = [(f.x, f.y) for f in findings if f.kind == "blocked"]
        outline_w = min_width(vehicle.outline)
        for s in stations:
            if st_regions[s.name] and not g_st.get(s.name):
                lx, ly = A.st_local[s.name]
                w, px, py, q1, q2 = narrowest_width_near(A.index, lx, ly, radius=0.3)
                clearance = max(0.0, (w - outline_w) / 2.0)
                findings.append(Finding(
                    kind="tight", cause="station", x=s.x, y=s.y, label=place_name(plan, lx, ly),
                    summary=(f"station {s.name} is served, but with about {clearance:.2f} m clearance each side "
                             f"where the site asks {req:.2f} m ({site.clearance_reference}); clear width {w:.2f} m"),
                    clear_width_m=round(w, 4), needed_width_m=round(outline_w + 2 * req, 4),
                    clearance_m=round(clearance, 4), required_clearance_m=req, cuts_off=[s.name]))
        for ev, (sa, sb) in zip(gevents, gsides):
            # keep only joins the plain vehicle makes: both sides in one plain region
            pa = _plain_regions(slices, comp_of, gslices, gcomps, sa)
            pb = _plain_regions(slices, comp_of, gslices, gcomps, sb)
            if not (pa & pb):
                continue
            ga = A.side_geometry(gslices, gcomps, sa)
            gb = A.side_geometry(gslices, gcomps, sb)
            lx, ly, overlap = A.locate(gslices, gcomps, gseeds, field, ev, (ga, gb))
            w, px, py, q1, q2 = narrowest_width_near(A.index, lx, ly, radius=max(3 * cell, 0.15))
            if overlap:
                px, py = lx, ly
                w, q1, q2 = A.index.width_at(px, py)
            dx, dy = plan.to_drawing(px, py)
            if any(math.hypot(dx - bx, dy - by) < 1.0 for bx, by in blocked_xy):
                continue
            clearance = max(0.0, (w - outline_w) / 2.0)
            g_names = {n for n in names for r in (sa | sb) if r in g_st.get(n, [])}
            summary = (f"passable, but with {clearance:.2f} m clearance each side where the site asks "
                       f"{req:.2f} m ({site.clearance_reference}); clear width {w:.2f} m")
            findings.append(Finding(kind="tight", cause="width" if not overlap else "turn", x=dx, y=dy,
                                    label=place_name(plan, px, py), summary=summary, clear_width_m=round(w, 4),
                                    needed_width_m=round(outline_w + 2 * req, 4), clearance_m=round(clearance, 4),
                                    required_clearance_m=req, cuts_off=sorted(g_names) if False else [],
                                    geometry=shapely.LineString([q1, q2]) if q1 is not None and not np.allclose(q1, q2)
                                    else None))

    # manoeuvres of car-like vehicles and swept routes
    pair_drives: dict = {}
    if vehicle.mode == "car" and len(stations) > 1 and not quick:
        progress("manoeuvres")
        findings.extend(maneuver_findings(plan, vehicle, slices, stations, roadmap=G, notes=notes,
                                          pair_drives=pair_drives))
    wanted = list(routes if routes is not None else site.routes)
    unknown = sorted({n for pair in wanted for n in pair} - set(names))
    if unknown:
        raise SiteError(f"route names a station that is not defined: {', '.join(unknown)}", site.path,
                        "report.routes")
    route_dicts = []
    if wanted and not quick:
        progress("swept routes")
        route_dicts = route_sweeps(plan, vehicle, slices, stations, wanted, roadmap=G, notes=notes,
                                   pair_drives=pair_drives)

    # turnability map and no-turn stretches
    if quick:
        return _finish(findings, cuts, slices, vehicle, person, req, site, cell, None, needed, plan, stations,
                       reach, {}, notes)
    progress("turnability map")
    map_cell = choose_cell_size(bounds, 0.1, MAP_MAX_CELLS)
    raster = heading_raster(slices, bounds, map_cell)
    counts = raster.counts
    turnability = {"heading_count": {"x0": raster.x0, "y0": raster.y0, "cell_m": map_cell,
                                     "counts": counts, "n_headings": len(slices)}}
    outside = _exterior(counts > 0, raster, stations, A.st_local)
    counts = np.where(outside, 0, counts)
    turnability["heading_count"]["counts"] = counts
    fits = counts > 0
    turnability["fits"] = _cells_to_geometry(fits, raster.x0, raster.y0, map_cell)
    turnability["rotates"] = _cells_to_geometry(counts == len(slices), raster.x0, raster.y0, map_cell) \
        if len(slices) > 1 else shapely.Polygon()
    # the free space (reference point) at one representative heading, for the CAD overlay
    rep_h = next((s.heading_deg for s in stations if s.heading_deg is not None), 0.0)
    k_rep = slices.cells.index_of(rep_h)
    rep = [c for c in slices.components[k_rep] if not c.intersects(slices.domain.exterior)
           or any(c.covers(Point(A.st_local[s.name])) for s in stations)]
    turnability["free_at_heading"] = {"heading_deg": float(slices.cells.headings[k_rep]),
                                      "geometry": shapely.union_all(rep) if rep else shapely.Polygon()}
    centre, rho_min, _how = turnaround_circle(vehicle)
    if vehicle.mode != "fixed" and len(slices) > 1 and math.isfinite(rho_min):
        troom = turn_region(obstacles, slices.domain, rho_min + plan.curve_tolerance_m)
        turnability["turns_around"] = troom.intersection(turnability["fits"].buffer(map_cell))
        tmask = fill_polygons(shapely.get_parts(troom), raster.x0, raster.y0, map_cell, *counts.shape[::-1])
        # the no-turn rule ignores places within a short move of a turn-around place
        reach_d = float(np.hypot(*centre)) + 0.5 * vehicle.length_m + map_cell
        far = ndimage.distance_transform_edt(~tmask) * map_cell > reach_d if tmask.any() else np.ones_like(tmask)
        noturn = fits & far
        lab, n = ndimage.label(noturn, structure=np.ones((3, 3), bool))
        min_cells = max(4, int(vehicle.footprint.area / map_cell ** 2))
        for L in range(1, n + 1):
            m = lab == L
            if m.sum() < min_cells:
                continue
            f = _noturn_finding(plan, vehicle, slices, raster, m, fits, stations, A.st_local)
            if f is not None:
                findings.append(f)
    else:
        notes.append(f"no-turn analysis is not done for motion mode '{vehicle.mode}'")

    result = _finish(findings, cuts, slices, vehicle, person, req, site, cell, map_cell, needed, plan, stations,
                     reach, turnability, notes)
    result.routes = route_dicts
    return result


def _finish(findings, cuts, slices, vehicle, person, req, site, cell, map_cell, needed, plan, stations, reach,
            turnability, notes) -> CheckResult:
    findings = rank_findings(findings)
    cuts_ids = {k: [f.id for f in v] for k, v in cuts.items()}
    settings = slices.settings()
    settings.update({
        "vehicle_mode": vehicle.mode, "person_width_m": person, "required_clearance_m": req,
        "clearance_reference": site.clearance_reference, "raster_cell_m": round(cell, 4),
        "map_cell_m": None if map_cell is None else round(map_cell, 4), "needed_width_m": round(needed, 4),
        "location_tolerance_m": round(3 * cell, 4), "vehicle_height_m": vehicle.height_m,
    })
    return CheckResult(plan=plan, vehicle=vehicle, settings=settings, stations=list(stations), reachable=reach,
                       findings=findings, cuts=cuts_ids, turnability=turnability, notes=notes)


def _mean_heading(slices, nodes) -> complex:
    """Area-weighted mean heading direction of roadmap nodes, as a unit-ish complex number."""
    z = 0j
    for k, i in nodes:
        z += slices.components[k][i].area * np.exp(1j * np.radians(slices.cells.headings[k]))
    return z


def _reversed(mean_dir, sa, sb, tol_deg: float = 30.0) -> bool:
    """True when the two sides' mean headings are opposite (within ``tol_deg``)."""
    za = sum(mean_dir[r] for r in sa if r in mean_dir)
    zb = sum(mean_dir[r] for r in sb if r in mean_dir)
    if abs(za) < 1e-12 or abs(zb) < 1e-12:
        return False
    diff = abs(np.degrees(np.angle(za / zb)))
    return diff > 180.0 - tol_deg


def _plain_regions(slices, comp_of, gslices, gcomps, members) -> set:
    """Plain-vehicle regions that hold the representative points of the grown vehicle's regions."""
    out = set()
    for cid in members:
        for k, i in list(gcomps[cid])[:20]:
            p = gslices.components[k][i].representative_point()
            kk = slices.cells.index_of(float(gslices.cells.headings[k]))
            for j in slices.tree(kk).query(p, predicate="intersects"):
                out.add(comp_of.get((kk, int(j))))
    out.discard(None)
    return out


def _exterior(fits: np.ndarray, raster, stations, st_local) -> np.ndarray:
    """Cells of floor connected to the map's border (outside the drawing), unless a station lies there."""
    lab, _ = ndimage.label(fits, structure=np.ones((3, 3), bool))
    border = np.unique(np.concatenate([lab[0], lab[-1], lab[:, 0], lab[:, -1]]))
    border = set(int(b) for b in border if b > 0)
    for s in stations:
        iy, ix = raster.index_of(*st_local[s.name])
        border.discard(int(lab[iy, ix]))
    return np.isin(lab, list(border)) if border else np.zeros_like(fits)


def _noturn_finding(plan, vehicle, slices, raster, mask, fits, stations, st_local):
    ys, xs = np.nonzero(mask)
    cx, cy = raster.centres()
    px, py = cx[xs], cy[ys]
    # the cell nearest the centroid, inside the stretch
    mx, my = px.mean(), py.mean()
    j = int(np.argmin(np.hypot(px - mx, py - my)))
    lx, ly = float(px[j]), float(py[j])
    # headings at which the vehicle can travel along the stretch: free over at least half of
    # the stretch's cells (a vehicle that fits across an aisle only at one spot is not listed)
    frac = raster.free[:, ys, xs].mean(axis=1)
    free = frac >= 0.5 * frac.max()
    ranges = heading_ranges(free, slices.cells.headings, slices.cells.below, slices.cells.above)
    # mouths: where the stretch meets floor from which the vehicle can turn
    ring = ndimage.binary_dilation(mask, np.ones((3, 3), bool), iterations=2) & fits & ~mask
    _, mouths = ndimage.label(ring, structure=np.ones((3, 3), bool))
    x0, x1 = px.min() - raster.cell / 2, px.max() + raster.cell / 2
    y0, y1 = py.min() - raster.cell / 2, py.max() + raster.cell / 2
    length = max(x1 - x0, y1 - y0)
    if length < vehicle.length_m:
        return None
    inside = []
    for s in stations:
        sx, sy = st_local[s.name]
        iy, ix = raster.index_of(sx, sy)
        if mask[iy, ix]:
            inside.append(s.name)
    dead = mouths <= 1
    rng = ", ".join(f"{a:g}° to {b:g}°" for a, b in ranges)
    what = "dead end: the vehicle must back out the way it came" if dead else \
        "the vehicle can pass through but cannot reverse its heading inside"
    summary = f"{length:.1f} m stretch where the vehicle cannot turn around ({what}); it fits only at headings {rng}"
    if inside:
        summary += f"; {', '.join(inside)} lie{'s' if len(inside) == 1 else ''} in it"
    dx0, dy0 = plan.to_drawing(x0, y0)
    dx1, dy1 = plan.to_drawing(x1, y1)
    dx, dy = plan.to_drawing(lx, ly)
    geom = _cells_to_geometry(mask, raster.x0, raster.y0, raster.cell)
    return Finding(kind="no-turn", cause="dead-end" if dead else "through", x=dx, y=dy,
                   label=place_name(plan, lx, ly), summary=summary, heading_ranges_deg=ranges,
                   extent=(dx0, dy0, dx1, dy1), cuts_off=[], geometry=geom,
                   clear_width_m=None, needed_width_m=None)


def rank_findings(findings: list[Finding]) -> list[Finding]:
    """Order findings (what cuts off stations first, then by kind and place) and number them F1, F2, …"""
    order = {"blocked": 0, "no-turn": 1, "tight": 2, "maneuver": 3}

    def key(f: Finding):
        return (0 if f.cuts_off else 1, -len(f.cuts_off), order.get(f.kind, 9), round(f.x, 3), round(f.y, 3))

    ranked = sorted(findings, key=key)
    for i, f in enumerate(ranked, 1):
        f.id = f"F{i}"
    return ranked
