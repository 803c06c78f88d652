"""One sheet per finding: a close-up drawn to a standard scale, the vehicle at the deciding pose,
dimension lines, the drawing entities that bound the place, what it cuts off, and the remedy.

:func:`build_sheets` computes what each sheet shows (drawing frame, metres); :func:`draw_closeup`
draws the close-up into a matplotlib axes whose size on paper is known, so that the drawing is
true to scale (1 m in the drawing is ``1000 / scale`` mm on the sheet); :func:`closeup_figure`
makes the same close-up as a figure of its own for the HTML report.

The deciding pose per finding kind:

* blocked by width: the vehicle square to the opening, centred on it, as far in as it gets
  (its outline with margin just touching the bounding obstacles), coming from the side that
  keeps most stations;
* tight: the vehicle square to the pinch, centred, with the clearance band the site asks for;
* no-turn: the vehicle at the widest spot of the stretch, along it, with the clear circle a
  turn-round needs and the largest circle the stretch offers;
* blocked at a station: the vehicle at the station (its docking heading, else the heading at
  which it overlaps the obstacles least);
* blocked by height: a side view of the clear height against the vehicle height.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import matplotlib

matplotlib.use("Agg")  # noqa: E402

import numpy as np
import shapely
import shapely.affinity
import shapely.ops
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from matplotlib.patches import Circle, PathPatch, Rectangle

from floorfit.analysis.passages import min_width
from floorfit.report.figures import _line_segments, _polygon_path
from floorfit.report.geometry import parts
from floorfit.report.kinds import kind_style, numbered_findings, plain_text
from floorfit.report.remedies import Remedy, RemedyContext, compute_remedy

__all__ = ["SCALES", "CONTEXT_M", "Sheet", "Bound", "Pose", "Dimension", "build_sheets", "choose_scale",
           "draw_closeup", "closeup_figure", "VIEWPORT_MM"]

#: Standard architectural scales, largest drawing first.
SCALES = (20, 25, 50, 100, 200)
#: Plan around the pinch shown on each side, metres.
CONTEXT_M = 2.0
#: Size of the close-up on a landscape A4 sheet, millimetres (width, height).
VIEWPORT_MM = (178.0, 128.0)

_WALL = "#20262c"
_SOLID_FACE = "#b9bec4"
_OVERHEAD = "#7d8790"
_DOOR = "#13876a"
_POSE_FACE = "#dfe9f3"
_POSE_EDGE = "#1b3d5c"
_DIM = "#22313f"
_CIRCLE_NEED = "#8a3d8f"
_CIRCLE_HAVE = "#13876a"


@dataclass(frozen=True)
class Bound:
    """A drawing entity that bounds the place: which side, what, on which layer, its handle."""

    side: str
    entity: str          # "linework", "solid", "doorway", "overhead"
    layer: str
    handle: str | None
    distance_m: float
    x: float
    y: float
    id_name: str = "handle"

    def text(self) -> str:
        if self.handle:
            handle = f"handle #{self.handle}" if self.id_name == "handle" else f"{self.id_name} {self.handle}"
        else:
            handle = "handle not kept by the importer"
        layer = f"layer {self.layer}" if self.layer else "no layer"
        return (f"{self.side}: {self.entity} on {layer}, {handle}, nearest point ({self.x:.2f}, {self.y:.2f}) m")


@dataclass(frozen=True)
class Pose:
    """The vehicle pose a sheet draws (drawing frame, m, degrees) and why that pose."""

    x: float
    y: float
    heading_deg: float
    note: str
    envelope_m: float = 0.0      # clearance band drawn round the outline (tight places)


@dataclass(frozen=True)
class Dimension:
    """A dimension line from ``a`` to ``b`` (drawing frame), drawn ``offset_mm`` (on paper) to one side."""

    a: tuple[float, float]
    b: tuple[float, float]
    text: str
    offset_mm: float = 0.0
    emphasis: bool = False
    offset_m: float = 0.0        # further offset in drawing metres (clear of the vehicle outline)


@dataclass
class Sheet:
    """What the sheet of one finding shows."""

    number: int
    finding: Any
    centre: tuple[float, float]
    focus: tuple[float, float, float, float]
    scale: int
    cropped: bool
    remedy: Remedy
    pose: Pose | None = None
    dims: list[Dimension] = field(default_factory=list)
    circles: list[tuple[float, float, float, str, str]] = field(default_factory=list)  # x, y, d, label, colour
    bounds: list[Bound] = field(default_factory=list)
    pairs: list[tuple[str, str]] = field(default_factory=list)
    side_view: tuple[float, float] | None = None       # clear height, vehicle height
    numbers: list[tuple[str, str]] = field(default_factory=list)

    @property
    def scale_text(self) -> str:
        return f"1:{self.scale}"


def choose_scale(width_m: float, height_m: float, viewport_mm: tuple[float, float] = VIEWPORT_MM) -> tuple[int, bool]:
    """The largest standard scale at which a ``width_m`` × ``height_m`` area fits the viewport;
    (1:200, True) when none does (the close-up is then cropped round the finding)."""
    for s in SCALES:
        if width_m * 1000.0 / s <= viewport_mm[0] + 1e-9 and height_m * 1000.0 / s <= viewport_mm[1] + 1e-9:
            return s, False
    return SCALES[-1], True


# -- obstacles with their layers and handles ------------------------------------------------------
class _Obstacles:
    def __init__(self, plan: Any):
        self.plan = plan
        walls, solids = list(plan.walls), list(plan.solids)
        self.geoms = np.asarray(walls + solids, dtype=object)
        self.kind = np.array(["linework"] * len(walls) + ["solid"] * len(solids), dtype=object)
        self.layer = np.concatenate([np.asarray(plan.wall_layers, dtype=object),
                                     np.asarray(plan.solid_layers, dtype=object)]) if len(self.geoms) \
            else np.zeros(0, dtype=object)
        # the entity each obstacle came from: DXF handles, or element ids of a building model
        handles: list[str | None] = [None] * len(self.geoms)
        self.id_name = "handle"
        sources = (("wall_ids", "solid_ids", "element id"), ("wall_handles", "solid_handles", "handle"))
        for w_key, s_key, name in sources:
            wh, sh = getattr(plan, w_key, None), getattr(plan, s_key, None)
            if wh is not None and len(wh) == len(walls):
                handles[:len(walls)] = [None if h is None or h == "" else str(h) for h in wh]
                self.id_name = name
            if sh is not None and len(sh) == len(solids):
                handles[len(walls):] = [None if h is None or h == "" else str(h) for h in sh]
                self.id_name = name
        self.handle = handles
        heights = np.concatenate([np.asarray(plan.wall_heights).reshape(-1, 2),
                                  np.asarray(plan.solid_heights).reshape(-1, 2)])
        self.bottom = heights[:, 0] if len(heights) else np.zeros(0)
        self.floor = self.bottom <= 0
        self.tree = shapely.STRtree(self.geoms) if len(self.geoms) else None
        floor_geoms = self.geoms[self.floor] if len(self.geoms) else self.geoms
        self.floor_union = shapely.STRtree(floor_geoms) if len(floor_geoms) else None
        self.floor_geoms = floor_geoms

    def in_box(self, box: tuple[float, float, float, float]) -> np.ndarray:
        if self.tree is None:
            return np.zeros(0, dtype=int)
        return np.sort(self.tree.query(shapely.box(*box)))

    def nearest_bound(self, side: str, lx: float, ly: float, *, floor_only: bool = True) -> Bound | None:
        if self.tree is None:
            return None
        p = shapely.Point(lx, ly)
        idx = self.tree.query(p.buffer(0.05))
        cand = [int(i) for i in idx if not floor_only or self.floor[int(i)]]
        if not cand:
            near = self.tree.query_nearest(p, max_distance=5.0)
            cand = [int(i) for i in near if not floor_only or self.floor[int(i)]]
        if not cand:
            return None
        d = [self.geoms[i].distance(p) for i in cand]
        i = cand[int(np.argmin(d))]
        q = shapely.ops.nearest_points(self.geoms[i], p)[0]
        x, y = self.plan.to_drawing(q.x, q.y)
        return Bound(side, str(self.kind[i]), plain_text(self.layer[i]), self.handle[i], float(min(d)), x, y,
                     self.id_name)

    def collides(self, poly: Any) -> bool:
        if self.floor_union is None:
            return False
        return bool(len(self.floor_union.query(poly, predicate="intersects")))

    def overlap_area(self, poly: Any) -> float:
        if self.floor_union is None:
            return 0.0
        idx = self.floor_union.query(poly, predicate="intersects")
        area = 0.0
        for i in idx:
            g = self.floor_geoms[int(i)]
            area += poly.intersection(g).area if g.geom_type.endswith("Polygon") else poly.intersection(g).length * 0.01
        return area


def _placed(poly: Any, x: float, y: float, heading_deg: float) -> Any:
    h = math.radians(heading_deg)
    c, s = math.cos(h), math.sin(h)
    return shapely.affinity.affine_transform(poly, [c, -s, s, c, x, y])


def _unit(v: np.ndarray) -> np.ndarray:
    n = float(np.hypot(*v))
    return v / n if n > 0 else np.array([1.0, 0.0])


# -- per-kind contents -------------------------------------------------------------------------------
def _gap(f: Any, plan: Any, ctx: RemedyContext) -> tuple[np.ndarray, np.ndarray] | None:
    """The two obstacle points (local) bounding the finding's clear width."""
    g = f.geometry
    if isinstance(g, shapely.LineString) and len(g.coords) >= 2:
        xy = np.asarray(g.coords)[:, :2]
        return xy[0].copy(), xy[-1].copy()
    lx, ly = plan.to_local(f.x, f.y)
    w, q1, q2 = ctx.width_at(lx, ly)
    if q1 is None or q2 is None or not math.isfinite(w) or np.allclose(q1, q2):
        return None
    return np.asarray(q1, float), np.asarray(q2, float)


def _centred_pose(vehicle: Any, mid: np.ndarray, d: np.ndarray, t: float) -> tuple[float, float, float]:
    """Reference point and heading of the vehicle facing ``d``, its footprint centred on ``mid``
    sideways and its footprint's centre ``t`` behind ``mid`` along ``d`` (local frame)."""
    heading = math.degrees(math.atan2(d[1], d[0]))
    x0, y0, x1, y1 = vehicle.footprint.bounds
    cx, cy = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    n = np.array([-d[1], d[0]])
    ref = mid - d * (cx + t) - n * cy
    return float(ref[0]), float(ref[1]), heading


def _deepest_pose(vehicle: Any, obst: _Obstacles, mid: np.ndarray, d: np.ndarray) -> tuple[float, float, float] | None:
    """The pose square to the gap, centred, coming along ``d``: the smallest ``t`` (footprint
    centre behind the gap) at which the footprint is clear of the floor obstacles."""
    fp = vehicle.footprint
    length = float(fp.bounds[2] - fp.bounds[0])

    def clear(t: float) -> bool:
        x, y, h = _centred_pose(vehicle, mid, d, t)
        return not obst.collides(_placed(fp, x, y, h))

    hi = 0.5 * length + 0.02
    while not clear(hi):
        hi *= 1.6
        if hi > 8.0:
            return None
    lo = 0.0
    if clear(lo):
        return _centred_pose(vehicle, mid, d, lo)
    for _ in range(24):
        mid_t = 0.5 * (lo + hi)
        lo, hi = (lo, mid_t) if clear(mid_t) else (mid_t, hi)
    return _centred_pose(vehicle, mid, d, hi)


def _stations_side(result: Any, names: list[str], mid: np.ndarray, d: np.ndarray) -> float:
    """Sum of signed distances along ``d`` of the named stations from the gap (local frame)."""
    total = 0.0
    for s in result.stations:
        if s.name in names:
            lx, ly = result.plan.to_local(s.x, s.y)
            total += float(np.dot(np.array([lx, ly]) - mid, d))
    return total


def _width_contents(sheet: Sheet, result: Any, obst: _Obstacles, ctx: RemedyContext, tight: bool) -> None:
    f, plan, vehicle = sheet.finding, result.plan, result.vehicle
    gap = _gap(f, plan, ctx)
    if gap is None:
        return
    q1, q2 = gap
    mid = 0.5 * (q1 + q2)
    g = _unit(q2 - q1)
    d = np.array([-g[1], g[0]])
    if not tight:
        # come from the side away from the stations this place cuts off
        if _stations_side(result, list(f.cuts_off), mid, d) > 0:
            d = -d
        pose = _deepest_pose(vehicle, obst, mid, d)
        if pose is None:
            pose = _centred_pose(vehicle, mid, d, 0.0)
            note = "vehicle square to the opening, centred on it (no clear approach found close by)"
        else:
            note = ("vehicle square to the opening and centred on it, as far in as its outline with margin "
                    "gets before touching the bounding obstacles (deepest progress)")
        x, y = plan.to_drawing(pose[0], pose[1])
        sheet.pose = Pose(x, y, pose[2], note)
    else:
        req = float(f.required_clearance_m if f.required_clearance_m is not None
                     else result.settings.get("required_clearance_m") or 0.0)
        pose = _centred_pose(vehicle, mid, d, 0.0)
        x, y = plan.to_drawing(pose[0], pose[1])
        sheet.pose = Pose(x, y, pose[2], "vehicle square to the pinch and centred in it: the pose of least "
                          f"clearance; dashed: the {req:.2f} m clearance the site asks for", envelope_m=req)
    a = plan.to_drawing(*q1)
    b = plan.to_drawing(*q2)
    clear = float(f.clear_width_m) if f.clear_width_m is not None else float(np.hypot(*(q2 - q1)))
    needed = f.needed_width_m
    sheet.dims.append(Dimension(a, b, f"clear {clear:.2f} m", emphasis=True))
    if needed is not None:
        half = 0.5 * float(needed) * g
        na = plan.to_drawing(*(mid - half))
        nb = plan.to_drawing(*(mid + half))
        what = "needed" if not tight else "needed with clearance"
        beyond = 0.0
        if tight:      # past the front of the centred vehicle with its clearance band
            x0, _, x1, _ = vehicle.footprint.bounds
            beyond = 0.5 * (x1 - x0) + req
        sheet.dims.append(Dimension(na, nb, f"{what} {float(needed):.2f} m", offset_mm=7.0, offset_m=beyond))
    sheet.bounds += [b_ for b_ in (obst.nearest_bound("side A", *q1), obst.nearest_bound("side B", *q2)) if b_]


def _noturn_contents(sheet: Sheet, result: Any, obst: _Obstacles, ctx: RemedyContext) -> None:
    f, plan = sheet.finding, result.plan
    rem = sheet.remedy
    if rem.at is None:
        return
    wx, wy = rem.at
    lx, ly = plan.to_local(wx, wy)
    ranges = list(f.heading_ranges_deg or [])
    heading = 0.5 * (ranges[0][0] + ranges[0][1]) if ranges else 0.0
    if ranges and ranges[0][1] < ranges[0][0]:
        heading = 0.5 * (ranges[0][0] + ranges[0][1] + 360.0)
    sheet.pose = Pose(wx, wy, ((heading + 180.0) % 360.0) - 180.0,
                      "vehicle at the widest spot of the stretch, along it (a heading it fits at)")
    have = 2.0 * ctx.clearance_at(lx, ly)
    if math.isfinite(have):
        sheet.circles.append((wx, wy, have, f"widest here {have:.2f} m", _CIRCLE_HAVE))
        w, q1, q2 = ctx.width_at(lx, ly)
        if q1 is not None and q2 is not None and not np.allclose(q1, q2):
            sheet.dims.append(Dimension(plan.to_drawing(*q1), plan.to_drawing(*q2), f"clear {w:.2f} m",
                                        emphasis=True))
            sheet.bounds += [b for b in (obst.nearest_bound("side A", *q1), obst.nearest_bound("side B", *q2)) if b]
    if rem.target_m:
        sheet.circles.append((wx, wy, rem.target_m, f"turn-round needs {rem.target_m:.2f} m", _CIRCLE_NEED))


def _station_contents(sheet: Sheet, result: Any, obst: _Obstacles, ctx: RemedyContext) -> None:
    f, plan, vehicle = sheet.finding, result.plan, result.vehicle
    station = next((s for s in result.stations if s.name in f.cuts_off), None)
    lx, ly = plan.to_local(f.x, f.y)
    if station is not None and station.heading_deg is not None:
        heading, note = float(station.heading_deg), "vehicle at the station at its docking heading"
    else:
        best = (math.inf, 0.0)
        for h in np.arange(-180.0, 180.0, 5.0):
            a = obst.overlap_area(_placed(vehicle.footprint, lx, ly, float(h)))
            if a < best[0] - 1e-12:
                best = (a, float(h))
        heading, note = best[1], "vehicle at the station at the heading where it overlaps the obstacles least"
    sheet.pose = Pose(f.x, f.y, heading, note + " (the overlap is what is missing)")
    w, q1, q2 = ctx.width_at(lx, ly)
    if q1 is not None and q2 is not None and not np.allclose(q1, q2) and math.isfinite(w):
        sheet.dims.append(Dimension(plan.to_drawing(*q1), plan.to_drawing(*q2), f"clear {w:.2f} m", emphasis=True))
        sheet.bounds += [b for b in (obst.nearest_bound("side A", *q1), obst.nearest_bound("side B", *q2)) if b]


def _height_contents(sheet: Sheet, result: Any, obst: _Obstacles) -> None:
    f, plan = sheet.finding, result.plan
    if f.clear_height_m is not None:
        need = f.needed_height_m if f.needed_height_m is not None else math.nan
        sheet.side_view = (float(f.clear_height_m), float(need))
    lx, ly = plan.to_local(f.x, f.y)
    if obst.tree is not None:
        r = float(getattr(result.vehicle, "radius_m", 1.0)) + 0.5
        idx = [int(i) for i in obst.tree.query(shapely.Point(lx, ly).buffer(r)) if not obst.floor[int(i)]]
        if idx:
            i = min(idx, key=lambda j: obst.bottom[j])
            q = shapely.ops.nearest_points(obst.geoms[i], shapely.Point(lx, ly))[0]
            x, y = plan.to_drawing(q.x, q.y)
            sheet.bounds.append(Bound("overhead", f"{obst.kind[i]} starting {obst.bottom[i]:.2f} m above the floor",
                                      plain_text(obst.layer[i]), obst.handle[i],
                                      float(obst.geoms[i].distance(shapely.Point(lx, ly))), x, y, obst.id_name))


def _doorway_bound(result: Any, f: Any) -> Bound | None:
    plan = result.plan
    lx, ly = plan.to_local(f.x, f.y)
    best = None
    for door in plan.doors:
        d = math.hypot(door.x - lx, door.y - ly)
        if d <= 1.5 and (best is None or d < best[0]):
            best = (d, door)
    if best is None:
        return None
    door = best[1]
    x, y = plan.to_drawing(door.x, door.y)
    name = f"doorway {door.label}" if door.label else "doorway"
    return Bound("door", f"{plain_text(name)} ({door.width_m:.2f} m drawn, found as {door.source or 'door'})",
                 plain_text(door.layer), door.handle, best[0], x, y)


def _numbers(f: Any) -> list[tuple[str, str]]:
    out = []
    if f.clear_width_m is not None:
        out.append(("clear width", f"{f.clear_width_m:.2f} m"))
    if f.needed_width_m is not None:
        out.append(("width needed", f"{f.needed_width_m:.2f} m"))
    if f.clear_width_m is not None and f.needed_width_m is not None:
        diff = float(f.clear_width_m) - float(f.needed_width_m)
        out.append(("difference", f"{diff:+.2f} m ({'short by' if diff < 0 else 'spare'} "
                                  f"{abs(diff) * 100:.0f} cm)"))
    if f.clearance_m is not None:
        out.append(("clearance each side", f"{f.clearance_m:.2f} m"))
    if f.required_clearance_m is not None:
        out.append(("clearance asked", f"{f.required_clearance_m:.2f} m"))
    if f.clear_height_m is not None:
        out.append(("clear height", f"{f.clear_height_m:.2f} m"))
    if f.needed_height_m is not None:
        out.append(("vehicle height", f"{f.needed_height_m:.2f} m"))
    if f.direction_changes is not None:
        out.append(("direction changes", str(f.direction_changes)))
    if f.heading_ranges_deg:
        out.append(("headings it fits at", ", ".join(f"{a:g}° to {b:g}°" for a, b in f.heading_ranges_deg)))
    return out


def _focus(sheet: Sheet, result: Any) -> tuple[float, float, float, float]:
    f = sheet.finding
    xs, ys = [f.x], [f.y]
    g = f.geometry
    if isinstance(g, shapely.Geometry) and not g.is_empty:
        b = result.plan.geometry_to_drawing(g).bounds
        xs += [b[0], b[2]]
        ys += [b[1], b[3]]
    if sheet.pose is not None:
        r = float(getattr(result.vehicle, "radius_m", 0.5))
        xs += [sheet.pose.x - r, sheet.pose.x + r]
        ys += [sheet.pose.y - r, sheet.pose.y + r]
    for x, y, dia, _, _ in sheet.circles:
        xs += [x - dia / 2, x + dia / 2]
        ys += [y - dia / 2, y + dia / 2]
    for d in sheet.dims:
        xs += [d.a[0], d.b[0]]
        ys += [d.a[1], d.b[1]]
    return min(xs), min(ys), max(xs), max(ys)


def build_sheets(result: Any, *, viewport_mm: tuple[float, float] = VIEWPORT_MM,
                 ctx: RemedyContext | None = None, obstacles: Any = None) -> list[Sheet]:
    """The sheets of all findings, in report order (the numbers of the findings table)."""
    ctx = ctx or RemedyContext(result)
    obst = obstacles or _Obstacles(result.plan)
    sheets = []
    cuts = getattr(result, "cuts", {}) or {}
    for number, f in numbered_findings(result.findings):
        remedy = compute_remedy(result, f, ctx)
        sheet = Sheet(number=number, finding=f, centre=(f.x, f.y), focus=(f.x, f.y, f.x, f.y), scale=SCALES[0],
                      cropped=False, remedy=remedy, numbers=_numbers(f))
        if f.kind == "blocked" and f.cause == "height":
            _height_contents(sheet, result, obst)
        elif f.kind == "blocked" and f.cause == "station":
            _station_contents(sheet, result, obst, ctx)
        elif (f.kind == "blocked" and f.cause in ("width", "turn")) or f.kind == "tight":
            if f.kind == "tight" and f.cause == "station":
                _station_contents(sheet, result, obst, ctx)
            else:
                _width_contents(sheet, result, obst, ctx, tight=f.kind == "tight")
            if f.kind == "blocked" and f.cause == "turn" and remedy.target_m and remedy.at:
                sheet.circles.append((*remedy.at, remedy.target_m, f"turn-round needs {remedy.target_m:.2f} m",
                                      _CIRCLE_NEED))
        elif f.kind == "no-turn":
            _noturn_contents(sheet, result, obst, ctx)
        elif f.kind == "maneuver" and remedy.target_m:
            sheet.circles.append((f.x, f.y, remedy.target_m, f"forward turn needs {remedy.target_m:.2f} m",
                                  _CIRCLE_NEED))
        door = _doorway_bound(result, f)
        if door is not None:
            sheet.bounds.append(door)
        sheet.pairs = sorted({tuple(sorted(k)) for k, ids in cuts.items() if f.id and f.id in ids})
        x0, y0, x1, y1 = _focus(sheet, result)
        x0, y0, x1, y1 = x0 - CONTEXT_M, y0 - CONTEXT_M, x1 + CONTEXT_M, y1 + CONTEXT_M
        sheet.scale, sheet.cropped = choose_scale(x1 - x0, y1 - y0, viewport_mm)
        sheet.centre = ((f.x, f.y) if sheet.cropped else (0.5 * (x0 + x1), 0.5 * (y0 + y1)))
        sheet.focus = (x0, y0, x1, y1)
        sheets.append(sheet)
    return sheets


# -- drawing ------------------------------------------------------------------------------------------
def view_box(sheet: Sheet, viewport_mm: tuple[float, float] = VIEWPORT_MM) -> tuple[float, float, float, float]:
    """The drawing-frame box (m) the viewport shows at the sheet's scale."""
    w = viewport_mm[0] * sheet.scale / 1000.0
    h = viewport_mm[1] * sheet.scale / 1000.0
    cx, cy = sheet.centre
    return cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2


def _nice_bar(span_m: float) -> float:
    target = span_m / 4.0
    for v in (10.0, 5.0, 2.0, 1.0, 0.5, 0.25):
        if v <= target:
            return v
    return 0.25


def _scale_bar(ax: Any, box: tuple[float, float, float, float], scale: int) -> None:
    """A bar of alternating blocks in drawing metres at the lower left of the close-up."""
    x0, y0, x1, y1 = box
    length = _nice_bar(x1 - x0)
    n = 4 if length >= 1 else 2
    step = length / n
    pad = 0.04 * (y1 - y0)
    bx, by = x0 + pad, y0 + pad
    h = 1.6 * scale / 1000.0          # 1.6 mm on paper
    ax.add_patch(Rectangle((bx - 0.3 * pad, by - 0.3 * pad), length + 0.6 * pad + 0.3 * (x1 - x0) * 0.0,
                           h + 3.2 * scale / 1000.0 + 0.6 * pad, facecolor="#ffffff", edgecolor="none",
                           alpha=0.9, zorder=20))
    for i in range(n):
        ax.add_patch(Rectangle((bx + i * step, by), step, h, facecolor=_DIM if i % 2 == 0 else "#ffffff",
                               edgecolor=_DIM, linewidth=0.5, zorder=21))
    label = f"{length:g} m" if length >= 1 else f"{length * 1000:g} mm"
    ax.text(bx, by + h + 0.6 * scale / 1000.0, "0", fontsize=6, ha="center", va="bottom", color=_DIM, zorder=22)
    ax.text(bx + length, by + h + 0.6 * scale / 1000.0, label, fontsize=6, ha="center", va="bottom",
            color=_DIM, zorder=22)
    ax.text(bx + length + 2.5 * scale / 1000.0, by, f"scale 1:{scale}", fontsize=6.5, ha="left", va="bottom",
            color=_DIM, zorder=22, fontweight="bold")


def _draw_dimension(ax: Any, dim: Dimension, scale: int) -> None:
    a, b = np.asarray(dim.a, float), np.asarray(dim.b, float)
    u = _unit(b - a)
    n = np.array([-u[1], u[0]])
    total = dim.offset_mm * scale / 1000.0 + dim.offset_m
    off = n * total
    pa, pb = a + off, b + off
    if abs(total) > 1e-9:              # extension lines from the measured points
        ext = n * (0.8 * scale / 1000.0) * np.sign(total)
        ax.plot([a[0], pa[0] + ext[0]], [a[1], pa[1] + ext[1]], color=_DIM, linewidth=0.4, zorder=15)
        ax.plot([b[0], pb[0] + ext[0]], [b[1], pb[1] + ext[1]], color=_DIM, linewidth=0.4, zorder=15)
    colour = "#b3261e" if dim.emphasis else _DIM
    ax.annotate("", xy=tuple(pb), xytext=tuple(pa), zorder=16,
                arrowprops={"arrowstyle": "<|-|>,head_length=0.5,head_width=0.18", "color": colour,
                            "lw": 0.8, "shrinkA": 0, "shrinkB": 0})
    mid = 0.5 * (pa + pb)
    angle = math.degrees(math.atan2(u[1], u[0]))
    if angle > 90:
        angle -= 180
    elif angle < -90:
        angle += 180
    tn = n if total >= 0 else -n
    pos = mid + tn * (1.8 * scale / 1000.0)
    ax.text(pos[0], pos[1], dim.text, fontsize=7, rotation=angle, rotation_mode="anchor", ha="center",
            va="center", color=colour, zorder=17, fontweight="bold" if dim.emphasis else "normal",
            bbox={"boxstyle": "square,pad=0.12", "facecolor": "#ffffff", "edgecolor": "none", "alpha": 0.85},
            parse_math=False)


def draw_closeup(ax: Any, result: Any, sheet: Sheet,  # noqa: C901  (one drawing, layer by layer, in order)
                 viewport_mm: tuple[float, float] = VIEWPORT_MM, obstacles: Any = None) -> None:
    """Draw the close-up of ``sheet`` into ``ax``; the axes must be ``viewport_mm`` on paper, so that
    the drawing is at the sheet's scale."""
    plan = result.plan
    box = view_box(sheet, viewport_mm)
    x0, y0, x1, y1 = box
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("auto")
    ax.set_xticks([])
    ax.set_yticks([])
    for side in ax.spines.values():
        side.set_color("#6b7680")
        side.set_linewidth(0.6)
    ox, oy = plan.origin
    shift = np.array([ox, oy])
    obst = obstacles or _Obstacles(plan)
    pad = 0.05 * max(x1 - x0, y1 - y0)
    local_box = (x0 - ox - pad, y0 - oy - pad, x1 - ox + pad, y1 - oy + pad)
    idx = obst.in_box(local_box)
    clip = shapely.box(*local_box)
    solids = [shapely.intersection(obst.geoms[i], clip) for i in idx if obst.kind[i] == "solid" and obst.floor[i]]
    walls = [shapely.intersection(obst.geoms[i], clip) for i in idx if obst.kind[i] == "linework" and obst.floor[i]]
    over = [shapely.intersection(obst.geoms[i], clip) for i in idx if not obst.floor[i]]
    path = _polygon_path(solids, shift)
    if path is not None:
        ax.add_patch(PathPatch(path, facecolor=_SOLID_FACE, edgecolor=_WALL, linewidth=0.6, zorder=2))
    segs = _line_segments(walls, shift)
    if segs:
        ax.add_collection(LineCollection(segs, colors=_WALL, linewidths=1.1, zorder=3, capstyle="butt"))
    osegs = _line_segments(over, shift)
    if osegs:
        ax.add_collection(LineCollection(osegs, colors=_OVERHEAD, linewidths=0.8, linestyles=(0, (6, 2, 1, 2)),
                                         zorder=3))
    for door in plan.doors:
        dx, dy = door.x + ox, door.y + oy
        if x0 - 2 <= dx <= x1 + 2 and y0 - 2 <= dy <= y1 + 2:
            ax.add_patch(Circle((dx, dy), max(door.width_m, 1e-3) / 2, facecolor="none", edgecolor=_DOOR,
                                linewidth=0.6, linestyle=(0, (2, 2)), zorder=4))
    for lab in plan.labels:
        lx, ly = lab.x + ox, lab.y + oy
        if x0 <= lx <= x1 and y0 <= ly <= y1:
            ax.text(lx, ly, plain_text(lab.text), fontsize=6, color="#6a6a6a", style="italic", ha="center",
                    va="center", zorder=5, parse_math=False, clip_on=True)
    f = sheet.finding
    style = kind_style(f.kind)
    if isinstance(f.geometry, shapely.Geometry) and not f.geometry.is_empty:
        g = f.geometry
        polys = [p for p in parts(g) if isinstance(p, shapely.Polygon)]
        p = _polygon_path(polys, shift)
        if p is not None:
            ax.add_patch(PathPatch(p, facecolor=style.colour, alpha=0.18, edgecolor=style.colour, linewidth=0.6,
                                   zorder=5))
    for x, y, dia, label, colour in sheet.circles:
        ax.add_patch(Circle((x, y), dia / 2, facecolor="none", edgecolor=colour, linewidth=1.0,
                            linestyle=(0, (5, 2)) if colour == _CIRCLE_NEED else "-", zorder=9))
        ang = math.radians(35 if colour == _CIRCLE_NEED else -35)
        ax.text(x + dia / 2 * math.cos(ang), y + dia / 2 * math.sin(ang), " " + label, fontsize=6.5, color=colour,
                ha="left", va="center", zorder=18, parse_math=False,
                bbox={"boxstyle": "square,pad=0.1", "facecolor": "#ffffff", "edgecolor": "none", "alpha": 0.8})
    if sheet.pose is not None:
        _draw_pose(ax, result.vehicle, sheet.pose)
    for dim in sheet.dims:
        _draw_dimension(ax, dim, sheet.scale)
    for s in result.stations:
        if x0 <= s.x <= x1 and y0 <= s.y <= y1:
            ax.plot([s.x], [s.y], marker="h", markersize=8, markerfacecolor="#ffffff", markeredgecolor="#111111",
                    markeredgewidth=1.3, linestyle="none", zorder=12)
            ax.annotate(plain_text(s.name), (s.x, s.y), xytext=(6, 6), textcoords="offset points", fontsize=7,
                        fontweight="bold", zorder=13, parse_math=False)
    _draw_markers(ax, result, f, box, sheet.scale)
    _scale_bar(ax, box, sheet.scale)
    if sheet.side_view is not None:
        _side_view(ax, result.vehicle, sheet.side_view)


def _draw_markers(ax: Any, result: Any, f: Any, box: tuple[float, float, float, float], scale: int) -> None:
    """Numbered markers of the findings in view; this sheet's finding sits 9 mm up and right of its
    place, with a leader, so that it does not hide the dimensions."""
    x0, y0, x1, y1 = box
    lead = 9.0 * scale / 1000.0
    for number, other in numbered_findings(result.findings):
        if not (x0 <= other.x <= x1 and y0 <= other.y <= y1):
            continue
        st = kind_style(other.kind)
        big = other is f
        mx, my = (other.x + lead, other.y + lead) if big else (other.x, other.y)
        if big:
            ax.plot([other.x, mx], [other.y, my], color=st.colour, linewidth=0.7, zorder=19)
            ax.plot([other.x], [other.y], marker="o", markersize=2.5, color=st.colour, zorder=19)
        ax.plot([mx], [my], marker=st.marker, markersize=13 if big else 9, linestyle="none",
                markerfacecolor=st.colour if big else "#ffffff", markeredgecolor=st.colour,
                markeredgewidth=1.2, zorder=19)
        ax.annotate(str(number), (mx, my), xytext=(0, -1.2 if st.marker == "^" else 0),
                    textcoords="offset points", ha="center", va="center", fontsize=6.5 if big else 5.5,
                    fontweight="bold", color="#ffffff" if big else st.colour, zorder=20)


def _draw_pose(ax: Any, vehicle: Any, pose: Pose) -> None:
    if pose.envelope_m > 0:
        env = _placed(vehicle.outline.buffer(pose.envelope_m, join_style="mitre", mitre_limit=10.0),
                      pose.x, pose.y, pose.heading_deg)
        p = _polygon_path([env], np.zeros(2))
        if p is not None:
            ax.add_patch(PathPatch(p, facecolor="none", edgecolor=kind_style("tight").colour, linewidth=0.9,
                                   linestyle=(0, (4, 2)), zorder=10))
    fp = _placed(vehicle.footprint, pose.x, pose.y, pose.heading_deg)
    body = _placed(vehicle.outline, pose.x, pose.y, pose.heading_deg)
    p = _polygon_path([fp], np.zeros(2))
    if p is not None:
        ax.add_patch(PathPatch(p, facecolor=_POSE_FACE, edgecolor=_POSE_EDGE, linewidth=0.6,
                               linestyle=(0, (2, 1.5)), alpha=0.9, zorder=10))
    p = _polygon_path([body], np.zeros(2))
    if p is not None:
        ax.add_patch(PathPatch(p, facecolor="#a9c3dc", edgecolor=_POSE_EDGE, linewidth=1.0, alpha=0.85, zorder=11))
    h = math.radians(pose.heading_deg)
    length = 0.45 * max(float(getattr(vehicle, "length_m", 1.0)), 0.2)
    ax.annotate("", xy=(pose.x + length * math.cos(h), pose.y + length * math.sin(h)), xytext=(pose.x, pose.y),
                zorder=12, arrowprops={"arrowstyle": "-|>", "color": _POSE_EDGE, "lw": 1.0})
    ax.plot([pose.x], [pose.y], marker="+", markersize=7, color=_POSE_EDGE, markeredgewidth=1.0, zorder=12)


def _side_view(ax: Any, vehicle: Any, heights: tuple[float, float]) -> None:
    """A small side view (not to the plan's scale) of the clear height and the vehicle height."""
    clear, need = heights
    inset = ax.inset_axes([0.70, 0.62, 0.27, 0.34])
    top = max(clear, need if math.isfinite(need) else clear) * 1.25
    length = float(getattr(vehicle, "length_m", 1.0))
    inset.set_xlim(-0.2 * length, 1.8 * length)
    inset.set_ylim(0, top)
    inset.add_patch(Rectangle((0.2 * length, 0), length, need if math.isfinite(need) else 0.0,
                              facecolor="#a9c3dc", edgecolor=_POSE_EDGE, linewidth=0.8))
    inset.add_patch(Rectangle((-0.2 * length, clear), 2.0 * length, top - clear, facecolor=_SOLID_FACE,
                              edgecolor=_WALL, linewidth=0.8, hatch="///"))
    inset.axhline(0, color=_WALL, linewidth=1.0)
    inset.text(1.45 * length, clear / 2, f"clear\n{clear:.2f} m", fontsize=6, ha="center", va="center", color=_DIM)
    if math.isfinite(need):
        inset.text(0.7 * length, need / 2, f"vehicle\n{need:.2f} m", fontsize=6, ha="center", va="center",
                   color=_POSE_EDGE)
    inset.set_xticks([])
    inset.set_yticks([0, clear])
    inset.tick_params(labelsize=5)
    inset.set_title("side view (not to scale)", fontsize=6)


def closeup_figure(result: Any, sheet: Sheet, viewport_mm: tuple[float, float] = VIEWPORT_MM,
                   obstacles: Any = None) -> Figure:
    """The close-up of ``sheet`` alone, as a figure exactly ``viewport_mm`` in size (to scale when
    printed at 100 %)."""
    fig = Figure(figsize=(viewport_mm[0] / 25.4, viewport_mm[1] / 25.4))
    ax = fig.add_axes((0.0, 0.0, 1.0, 1.0))
    draw_closeup(ax, result, sheet, viewport_mm, obstacles)
    return fig


def sheet_obstacles(result: Any) -> _Obstacles:
    """The obstacle index the close-ups share (build once per report)."""
    return _Obstacles(result.plan)


def needed_width(vehicle: Any) -> float:
    """Smallest width of the vehicle's footprint (outline plus margin), metres."""
    return min_width(vehicle.footprint)
