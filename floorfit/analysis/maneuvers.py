"""Station-to-station drives for the site check: maneuver findings and swept routes.

Everything here works on the sound slices and roadmap of a check (local frame, metres,
degrees) and reports positions in the **drawing frame**, except ``geometry`` / ``swept``
values, which are local-frame shapely geometries for drawing.

``maneuver_findings``
    For a car-like vehicle: every ordered pair of stations that the holonomic roadmap
    connects is planned with a forward-only search first (Dubins completions); where
    that finds nothing within its limits and the vehicle may reverse, a search with
    reversing (Reeds–Shepp completions) follows. A pair served only with reversing is a
    ``maneuver`` finding (cause ``reversing``) at the first change of direction, with
    the number of direction changes. A forward-only vehicle whose search finds nothing
    gives a ``maneuver`` finding with cause ``not-found-within-limits`` (never
    "impossible": the holonomic analysis connects the pair).
``route_sweeps``
    For station pairs the user asks for: the path in the vehicle's motion mode and the
    area its footprint sweeps along it (dicts the report draws).
``turnaround_circle``
    Where a vehicle of each motion mode can certainly reverse its heading: the circle
    it needs clear (used for ``no-turn`` places).

Stations without a heading: the car tries to start facing the way the holonomic route
leaves the station, along the nearest wall direction, or the opposite way, and likewise
to arrive (nearest free slice heading where that pose is not free); the forward-only
search tries these combinations while its failures are quick.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from itertools import pairwise

import networkx as nx
import numpy as np
import shapely
from shapely.geometry import LineString

from floorfit.analysis.findings import Finding, Station
from floorfit.analysis.naming import place_name
from floorfit.cspace.collision import place_footprint, sample_motion
from floorfit.cspace.headings import arc_deg, wrap_deg
from floorfit.cspace.minkowski import convex_parts
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slices import SliceSet
from floorfit.errors import SiteError
from floorfit.motion import sample
from floorfit.motion.drivable import (
    FOUND,
    NOT_FOUND,
    DriveLimits,
    DrivePlan,
    segment_dicts,
)
from floorfit.motion.drivable_car import plan_car, reference_grid
from floorfit.motion.route_query import differential_plan, route_in_slices
from floorfit.motion.slice_checks import SliceMotionCheck, chord_error_m
from floorfit.plan.model import Plan
from floorfit.vehicles.rigid import Vehicle

__all__ = [
    "DriveContext",
    "MANEUVER_EXPANSION_BUDGET",
    "MANEUVER_LIMITS",
    "PairDrive",
    "maneuver_findings",
    "route_sweeps",
    "station_pair_drive",
    "swept_area",
    "turnaround_circle",
]

#: Search limits per station pair in the check (each pair may run two searches): counts only, no
#: wall-clock limit, so that the same inputs give the same findings on any machine and at any load.
MANEUVER_LIMITS = DriveLimits(max_expansions=6000, time_limit_s=None)
#: Car searches of one check: once their expansions add up to this, the pairs left are named in a
#: note instead of being searched (a count, like every limit that decides a finding).
MANEUVER_EXPANSION_BUDGET = 200_000
#: Forward-only searches per pair (combinations of candidate headings at stations without one).
MAX_HEADING_TRIES = 4
#: Stations without a heading: the travel direction is read this far (m) along the holonomic route.
TRAVEL_LOOKAHEAD_M = 0.5


@dataclass
class PairDrive:
    """The drive from station ``a`` to station ``b`` (local frame, degrees).

    ``status``: ``"found"``, ``"not-found-within-limits"``, ``"not-connected"`` (the
    holonomic roadmap does not connect them) or ``"station-blocked"`` (the vehicle does
    not fit at one of them). ``drive`` is the plan used (forward-only if that was found,
    else with reversing); ``forward_found`` whether a forward-only drive was found;
    ``holonomic`` the roadmap's path (local, degrees).
    """

    a: str
    b: str
    status: str
    drive: DrivePlan | None = None
    forward_found: bool = False
    start_local: tuple[float, float, float] | None = None
    goal_local: tuple[float, float, float] | None = None
    holonomic: np.ndarray | None = None
    reasons: list[str] = field(default_factory=list)
    #: node expansions of every car search run for this pair
    expansions: int = 0

    @property
    def direction_changes(self) -> int:
        return self.drive.direction_changes if self.drive is not None and self.drive.found else 0


class _Context:
    """Shared state for many pairs on one set of slices."""

    def __init__(self, plan: Plan, vehicle: Vehicle, slices: SliceSet, roadmap: nx.Graph | None,
                 limits: DriveLimits):
        self.plan = plan
        self.vehicle = vehicle
        self.slices = slices
        self.G = roadmap if roadmap is not None else build_roadmap(slices)
        self.limits = limits
        self.component = {}
        for cid, nodes in enumerate(nx.connected_components(self.G)):
            for n in nodes:
                self.component[n] = cid
        self.radius = vehicle.min_turn_radius_m if vehicle.mode == "car" else None
        self.check = SliceMotionCheck(slices, limits.check_step_m, limits.check_step_deg,
                                      extra_margin_m=chord_error_m(self.radius, limits.path_step_m))
        self._grid = None
        self._exact = None
        #: differential bases: a path found with at most this many direction changes is kept as it is
        self.accept_changes: int | None = None

    @property
    def exact(self):
        """One exact slice check shared by the differential conversions of every pair."""
        if self._exact is None:
            from floorfit.motion.slice_checks import ExactSliceCheck
            self._exact = ExactSliceCheck(self.slices, self.limits.path_step_m, self.limits.path_step_deg)
        return self._exact

    @property
    def grid(self):
        if self._grid is None and self.radius is not None:
            self._grid = reference_grid(self.slices, max(0.1, self.radius / 4.0))
        return self._grid

    def local(self, st: Station) -> tuple[float, float]:
        return self.plan.to_local(st.x, st.y)

    def nodes(self, st: Station) -> list:
        from floorfit.cspace.roadmap import station_nodes
        return station_nodes(self.slices, self.local(st), st.heading_deg, st.heading_tolerance_deg)


#: Shared state for the drives between many station pairs on one set of slices.
DriveContext = _Context


def _travel_heading(path: np.ndarray, at_start: bool) -> float | None:
    """Direction (deg) from the first (last) pose towards the route TRAVEL_LOOKAHEAD_M along it."""
    pts = path[:, :2] if at_start else path[::-1, :2]
    d = np.hypot(pts[:, 0] - pts[0, 0], pts[:, 1] - pts[0, 1])
    far = np.flatnonzero(d >= min(TRAVEL_LOOKAHEAD_M, float(d.max())) - 1e-12)
    if not len(far) or d.max() < 1e-6:
        return None
    q = pts[far[0]]
    h = math.degrees(math.atan2(q[1] - pts[0, 1], q[0] - pts[0, 0]))
    return float(wrap_deg(h if at_start else h + 180.0))


def _free_headings(ctx: _Context, xy, wanted: list[float]) -> list[float]:
    """For each wanted heading, itself if the vehicle passes the drive check there, else the
    nearest slice heading that does (duplicates within 1° dropped)."""
    heads = ctx.slices.cells.headings
    half = 0.5 * ctx.limits.check_step_deg
    out: list[float] = []
    for w in wanted:
        cands = [w] + [float(heads[k]) for k in np.argsort(np.abs(arc_deg(heads, w)))]
        poses = np.array([[xy[0], xy[1], h] for h in cands])
        ok = np.flatnonzero(ctx.check.free_in_windows(poses, -half * np.ones(len(poses)), half * np.ones(len(poses))))
        if len(ok):
            h = float(wrap_deg(cands[ok[0]]))
            if all(abs(float(arc_deg(h, o))) > 1.0 for o in out):
                out.append(h)
    return out


def _heading_candidates(ctx: _Context, xy, travel: float | None, fallback: float) -> list[float]:
    """Headings to try at a station without one: the way the holonomic route travels there,
    the nearest direction of the plan's walls (along an aisle), and the opposite way."""
    t = fallback if travel is None else travel
    wanted = [t]
    dirs = ctx.plan.principal_wall_directions_deg()
    if dirs:
        axes = np.array([d + 90.0 * k for d in dirs for k in range(4)])
        wanted.append(float(axes[np.argmin(np.abs(arc_deg(axes, t)))]))
    wanted.append(t + 180.0)
    found = _free_headings(ctx, xy, wanted)
    return found or [float(fallback)]


def station_pair_drive(ctx: _Context, a: Station, b: Station) -> PairDrive:
    """Plan the drive from station ``a`` to ``b`` in the vehicle's mode (see :class:`PairDrive`)."""
    na, nb = ctx.nodes(a), ctx.nodes(b)
    if not na or not nb:
        return PairDrive(a.name, b.name, "station-blocked")
    pair = next(((u, v) for u in na for v in nb if ctx.component[u] == ctx.component[v]), None)
    if pair is None:
        return PairDrive(a.name, b.name, "not-connected")
    heads = ctx.slices.cells.headings
    ax, ay = ctx.local(a)
    bx, by = ctx.local(b)
    ha = a.heading_deg if a.heading_deg is not None else float(heads[pair[0][0]])
    hb = b.heading_deg if b.heading_deg is not None else float(heads[pair[1][0]])
    status, hol, _ = route_in_slices(ctx.slices, ctx.G, (ax, ay, ha), (bx, by, hb))
    if status != "reachable":          # a docking heading between slice headings: use the slices'
        ha, hb = float(heads[pair[0][0]]), float(heads[pair[1][0]])
        status, hol, _ = route_in_slices(ctx.slices, ctx.G, (ax, ay, ha), (bx, by, hb))
    if status != "reachable":
        return PairDrive(a.name, b.name, "not-connected")
    out = PairDrive(a.name, b.name, NOT_FOUND, holonomic=hol)
    mode = ctx.vehicle.mode
    if mode == "car":
        starts = [a.heading_deg] if a.heading_deg is not None else \
            _heading_candidates(ctx, (ax, ay), _travel_heading(hol, True), ha)
        goals = [b.heading_deg] if b.heading_deg is not None else \
            _heading_candidates(ctx, (bx, by), _travel_heading(hol, False), hb)
        out.start_local, out.goal_local = (ax, ay, starts[0]), (bx, by, goals[0])
        fwd = None
        for sh, gh in [(sh, gh) for sh in starts for gh in goals][:MAX_HEADING_TRIES]:
            fwd = plan_car(ctx.slices, ctx.vehicle, (ax, ay, sh), (bx, by, gh), reverse=False,
                           limits=ctx.limits, grid=ctx.grid, check=ctx.check)
            out.reasons.append(f"forward only, headings {sh:.0f}° → {gh:.0f}°: {fwd.reason}")
            out.expansions += fwd.expansions
            if fwd.found:
                out.start_local, out.goal_local = (ax, ay, sh), (bx, by, gh)
                out.status, out.drive, out.forward_found = FOUND, fwd, True
                return out
            # other headings only while the searches fail fast (the space at this resolution exhausted)
            # and together stay within one search's expansions
            if not fwd.reason.startswith("searched every reachable cell") or \
                    out.expansions > ctx.limits.max_expansions:
                break
        out.drive = fwd
        if ctx.vehicle.reverse:
            rev = plan_car(ctx.slices, ctx.vehicle, out.start_local, out.goal_local, reverse=True,
                           limits=ctx.limits, grid=ctx.grid, check=ctx.check)
            out.expansions += rev.expansions
            out.reasons.append(f"with reversing: {rev.reason}")
            out.drive = rev
            if rev.found:
                out.status = FOUND
                # the shortcut pass may turn the reversing search's path into a forward-only one
                out.forward_found = all(sg.direction != "reverse" for sg in rev.segments)
        return out
    out.start_local, out.goal_local = tuple(hol[0]), tuple(hol[-1])
    if mode == "differential":
        dp = differential_plan(ctx.slices, ctx.G, hol, out.start_local, out.goal_local,
                               reverse=ctx.vehicle.reverse, limits=ctx.limits, check=ctx.exact,
                               accept_changes=ctx.accept_changes)
        out.reasons.append(dp.reason)
        out.drive = dp
        out.status = FOUND if dp.found else NOT_FOUND
        out.forward_found = dp.found and all(s.direction != "reverse" for s in dp.segments)
        return out
    out.status, out.forward_found = FOUND, True        # omni / fixed: the holonomic path itself
    return out


def _maneuver_span(dp: DrivePlan):
    """Local-frame polyline of the path from the segment before the first cusp to the one after
    the last, and the heading change over it (degrees)."""
    moving = [i for i, s in enumerate(dp.segments) if s.kind != "rotate" and s.length_m > 0]
    flips = [j for j, (p, q) in enumerate(pairwise(moving)) if dp.segments[p].direction != dp.segments[q].direction]
    first, last = moving[flips[0]], moving[flips[-1] + 1]
    part = dp.segments[first:last + 1]
    pts = sample(part, 0.1, 5.0)
    turn = float(arc_deg(math.degrees(part[0].start[2]), math.degrees(part[-1].end[2])))
    return LineString(pts[:, :2]), turn


def maneuver_findings(plan: Plan, vehicle: Vehicle, slices: SliceSet, stations: list[Station], *,
                      roadmap: nx.Graph | None = None, notes: list[str] | None = None,
                      limits: DriveLimits = MANEUVER_LIMITS, expansion_budget: int | None = MANEUVER_EXPANSION_BUDGET,
                      pair_drives: dict | None = None, max_direction_changes: int | None = None) -> list[Finding]:
    """``maneuver`` findings of a car-like vehicle between stations (drawing-frame positions).

    Every ordered pair of distinct stations that the roadmap ``roadmap`` (default: built
    from ``slices``) connects is planned (:func:`station_pair_drive`). A pair served only
    with reversing gives a finding at the first change of direction (kind ``maneuver``,
    cause ``reversing``; the summary gives the number of direction changes and the turn).
    Findings within a vehicle length of each other are merged. A forward-only vehicle
    with no path found gives cause ``not-found-within-limits``. Pairs a reversing vehicle
    could not be planned for within ``limits``, and pairs left once the searches have used
    ``expansion_budget`` node expansions in all, are reported in ``notes`` (a list appended to)
    instead. Other motion modes: [].
    ``pair_drives``: an optional dict filled with ``(a, b) -> PairDrive``.
    ``max_direction_changes``: with a manoeuvre budget, only pairs served within it give ``reversing``
    findings here; pairs over it and pairs without a path found are judged by
    :func:`floorfit.analysis.budget.budget_findings` (from ``pair_drives``).
    """
    if vehicle.mode != "car":
        return []
    notes = notes if notes is not None else []
    ctx = _Context(plan, vehicle, slices, roadmap, limits)
    spent = 0
    raw: list[tuple] = []
    skipped = []
    for a in stations:
        for b in stations:
            if a is b:
                continue
            if expansion_budget is not None and spent >= expansion_budget:
                skipped.append(f"{a.name} → {b.name}")
                continue
            pd = station_pair_drive(ctx, a, b)
            spent += pd.expansions
            if pair_drives is not None:
                pair_drives[(a.name, b.name)] = pd
            if pd.status in ("not-connected", "station-blocked"):
                continue                     # the holonomic findings explain these
            over = max_direction_changes is not None and pd.direction_changes > max_direction_changes
            if pd.status == FOUND and not pd.forward_found and pd.direction_changes > 0 and not over:
                raw.append(("reversing", pd))
            elif pd.status == NOT_FOUND and max_direction_changes is None:
                if vehicle.reverse:
                    notes.append(f"car path {a.name} → {b.name} not found within the search limits "
                                 f"(a path exists: the vehicle may reverse and the roadmap connects them)")
                else:
                    raw.append(("not-found-within-limits", pd))
    if skipped:
        notes.append(f"maneuver analysis stopped after {spent} search expansions (budget {expansion_budget}); "
                     f"not analysed: {', '.join(skipped)}")
    return _merge(plan, vehicle, raw)


def _merge(plan: Plan, vehicle: Vehicle, raw: list[tuple]) -> list[Finding]:
    groups: list[dict] = []
    near = max(vehicle.length_m, 1.0)
    for cause, pd in raw:
        if cause == "reversing":
            cx, cy, _ = pd.drive.cusps()[0]
            geom, turn = _maneuver_span(pd.drive)
        else:
            cx, cy = pd.goal_local[:2]
            geom, turn = None, float(arc_deg(pd.start_local[2], pd.goal_local[2]))
        for g in groups:
            if g["cause"] == cause and math.hypot(g["x"] - cx, g["y"] - cy) <= near:
                g["items"].append((pd, turn))
                if geom is not None:
                    g["geoms"].append(geom)
                break
        else:
            groups.append({"cause": cause, "x": cx, "y": cy, "items": [(pd, turn)],
                           "geoms": [geom] if geom is not None else []})
    out = []
    for g in groups:
        dx, dy = plan.to_drawing(g["x"], g["y"])
        if g["cause"] == "reversing":
            parts = [f"{pd.a} → {pd.b} needs {pd.direction_changes} direction change"
                     f"{'s' if pd.direction_changes != 1 else ''} (turn of {abs(t):.0f}°)" for pd, t in g["items"]]
            most = max(pd.direction_changes for pd, _ in g["items"])
            summary = (f"the vehicle cannot make this in one forward move (no forward-only path found within the "
                       f"search limits) but can with reversing, {most} direction change"
                       f"{'s' if most != 1 else ''} at most: " + "; ".join(parts))
        else:
            parts = [f"{pd.a} → {pd.b}" for pd, _ in g["items"]]
            summary = ("no forward path found within the search limits and the vehicle may not reverse "
                       "(the roadmap connects these stations): " + ", ".join(parts))
        geom = shapely.union_all(g["geoms"]) if g["geoms"] else None
        extent = None
        if geom is not None:
            x0, y0, x1, y1 = geom.bounds
            extent = (*plan.to_drawing(x0, y0), *plan.to_drawing(x1, y1))
        changes = max(pd.direction_changes for pd, _ in g["items"]) if g["cause"] == "reversing" else None
        out.append(Finding(kind="maneuver", cause=g["cause"], x=dx, y=dy, label=place_name(plan, g["x"], g["y"]),
                           summary=summary, extent=extent, cuts_off=[], geometry=geom, direction_changes=changes))
    return out


def swept_area(vehicle: Vehicle, samples_local: np.ndarray, *, step_m: float, step_deg: float,
               radius_m: float | None = None) -> tuple:
    """Area (local frame) covered by the vehicle footprint (outline plus margin) along a
    sampled motion, and the distance (m) by which it may exceed the true swept area.

    Consecutive samples (poses [x m, y m, heading deg], at most ``step_m`` / ``step_deg``
    apart) are joined by the convex hull of each convex part of the footprint at both
    poses, which holds the part's translation between them; the union is grown by the
    most a point's path can bulge beyond that hull: the chord error of the reference
    point's arc (``radius_m``, None for straight/rotate/linear motions) plus
    ``ρ(1 − cos(Δθ/2))`` for the rotation (ρ the footprint's radius).
    """
    poses = np.asarray(samples_local, dtype=float).reshape(-1, 3)
    fp = vehicle.footprint
    if len(poses) == 1:
        return place_footprint(fp, poses)[0], 0.0
    hulls = []
    for part in convex_parts(fp):
        ring = np.asarray(part.exterior.coords)[:-1]
        t = np.radians(poses[:, 2])
        c, s = np.cos(t)[:, None], np.sin(t)[:, None]
        xs = c * ring[None, :, 0] - s * ring[None, :, 1] + poses[:, 0:1]
        ys = s * ring[None, :, 0] + c * ring[None, :, 1] + poses[:, 1:2]
        pts = np.stack([xs, ys], axis=-1)                      # (N, m, 2)
        pair = np.concatenate([pts[:-1], pts[1:]], axis=1)     # (N-1, 2m, 2)
        hulls.append(shapely.convex_hull(shapely.multipoints(pair)))
    bulge = chord_error_m(radius_m, step_m) + vehicle.radius_m * (1.0 - math.cos(math.radians(step_deg) / 2.0))
    area = shapely.union_all(np.concatenate(hulls))
    return area.buffer(bulge + 1e-6, quad_segs=4), bulge


def route_sweeps(plan: Plan, vehicle: Vehicle, slices: SliceSet, stations: list[Station], pairs, *,
                 roadmap: nx.Graph | None = None, notes: list[str] | None = None,
                 limits: DriveLimits = MANEUVER_LIMITS, pair_drives: dict | None = None) -> list[dict]:
    """Swept routes for the station pairs ``pairs`` ((from, to) station names), for the report.

    Each dict: ``from``, ``to``, ``status`` (see :class:`PairDrive`), ``path`` ((N, 3)
    drawing frame [x, y, heading_deg], empty when not found), ``swept`` (local-frame
    shapely geometry of the area the footprint covers, None when not found),
    ``swept_tolerance_m`` (how far ``swept`` may exceed the true area), ``segments``
    (dicts as in :class:`floorfit.motion.route_query.RouteResult`), ``direction_changes``, ``length_m``.
    Omni and fixed vehicles follow the holonomic path (sampled every ``path_step_m`` /
    ``path_step_deg``). Unknown station names raise :class:`SiteError`.
    ``pair_drives``: results of :func:`maneuver_findings` to reuse.
    """
    by_name = {s.name: s for s in stations}
    for pair in pairs:
        if len(pair) != 2:
            raise SiteError(f"a route is a pair of station names, got {pair!r}", None, "routes")
        for name in pair:
            if name not in by_name:
                raise SiteError(f"route names unknown station '{name}' (known: {', '.join(by_name) or 'none'})",
                                None, "routes")
    notes = notes if notes is not None else []
    ctx = _Context(plan, vehicle, slices, roadmap, limits)
    out = []
    for a_name, b_name in pairs:
        pd = (pair_drives or {}).get((a_name, b_name)) or station_pair_drive(ctx, by_name[a_name], by_name[b_name])
        item = {"from": a_name, "to": b_name, "status": pd.status, "path": np.zeros((0, 3)), "swept": None,
                "swept_tolerance_m": None, "segments": [], "direction_changes": 0, "length_m": 0.0}
        if pd.status != FOUND:
            notes.append(f"route {a_name} → {b_name}: {pd.status}" + (f" ({pd.reasons[-1]})" if pd.reasons else ""))
            out.append(item)
            continue
        if pd.drive is not None:
            samples = pd.drive.samples
            item["segments"] = segment_dicts(pd.drive.segments, plan.origin)
            item["direction_changes"] = pd.drive.direction_changes
            item["length_m"] = round(pd.drive.length_m, 4)
            radius = ctx.radius
        else:
            samples = sample_motion(pd.holonomic, step_m=limits.path_step_m, step_deg=limits.path_step_deg,
                                    radius_m=0.0)
            item["length_m"] = round(float(np.sum(np.hypot(*np.diff(pd.holonomic[:, :2], axis=0).T))), 4)
            radius = None
        swept, bulge = swept_area(vehicle, samples, step_m=limits.path_step_m, step_deg=limits.path_step_deg,
                                  radius_m=radius)
        path = samples.copy()
        path[:, 0] += plan.origin[0]
        path[:, 1] += plan.origin[1]
        item.update(path=path, swept=swept, swept_tolerance_m=round(bulge, 6))
        out.append(item)
    return out


def turnaround_circle(vehicle: Vehicle) -> tuple[np.ndarray, float, str]:
    """A circle (centre in the vehicle frame, radius m) whose clear disc lets the vehicle reverse its heading.

    * omni, and differential or car bases that may reverse: the footprint's smallest
      enclosing circle (a holonomic turn about its centre; a base that is small-time
      locally controllable follows it with short manoeuvres, Laumond et al., IEEE T-RA
      10(5), 1994);
    * differential, forward only: the circle about the reference point through the
      farthest footprint point (rotation in place);
    * car, forward only: a full circle at the minimum turning radius, centre beside the
      reference point, radius = the outer radius of the swept annulus (common practice,
      vehicle turning geometry), the smaller of the left and right turn;
    * fixed: no turn (radius inf).

    Returns (centre, radius, how). A sufficient condition: tighter multi-point turns are
    not credited (errs towards "cannot turn").
    """
    fp = vehicle.footprint
    xy = shapely.get_coordinates(fp)
    if vehicle.mode == "fixed":
        return np.zeros(2), math.inf, "never rotates"
    if vehicle.mode == "omni" or (vehicle.mode in ("differential", "car") and vehicle.reverse):
        r = float(shapely.minimum_bounding_radius(fp))
        c = shapely.minimum_bounding_circle(fp).centroid
        return np.array([c.x, c.y]), r, "turn about the centre of the smallest enclosing circle"
    if vehicle.mode == "differential":
        return np.zeros(2), float(np.max(np.hypot(xy[:, 0], xy[:, 1]))), "rotation in place"
    R = float(vehicle.min_turn_radius_m)
    best = None
    for side in (1.0, -1.0):
        c = np.array([0.0, side * R])
        r = float(np.max(np.hypot(xy[:, 0] - c[0], xy[:, 1] - c[1])))
        if best is None or r < best[1]:
            best = (c, r)
    return best[0], best[1], "full circle forward at the minimum turning radius"
