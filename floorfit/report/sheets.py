"""One sheet per finding: a close-up drawn to a standard scale, the vehicle at the deciding pose,
dimension lines, the drawing entities that bound the place, what it cuts off, and the remedy.

:func:`build_sheets` computes what each sheet shows (drawing frame, metres);
:func:`floorfit.report.closeup.draw_closeup` draws the close-up into a matplotlib axes whose size on paper
is known, so that the drawing is true to scale (1 m in the drawing is ``1000 / scale`` mm on the
sheet); :func:`floorfit.report.closeup.closeup_figure` makes the same close-up as a figure of its
own for the HTML report. The drawing entities that bound a place are looked up in
:mod:`floorfit.report.bounding_entities`.

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

import numpy as np
import shapely
import shapely.affinity
import shapely.ops

from floorfit.analysis.passages import min_width
from floorfit.analysis.turnability import NARROW_RANGE_DEG, format_heading_ranges
from floorfit.report.bounding_entities import Bound, _doorway_bound, _Obstacles
from floorfit.report.kinds import numbered_findings, plain_text
from floorfit.report.remedies import Remedy, RemedyContext, compute_remedy

__all__ = ["SCALES", "CONTEXT_M", "Sheet", "Pose", "Dimension", "build_sheets", "choose_scale", "VIEWPORT_MM"]

#: Standard architectural scales, largest drawing first.
SCALES = (20, 25, 50, 100, 200)
#: Plan around the pinch shown on each side, metres.
CONTEXT_M = 2.0
#: Size of the close-up on a landscape A4 sheet, millimetres (width, height).
VIEWPORT_MM = (178.0, 128.0)

_CIRCLE_NEED = "#8a3d8f"
_CIRCLE_HAVE = "#13876a"


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
            sheet.bounds.append(Bound("overhead", f"{obst.what(i)} starting {obst.bottom[i]:.2f} m above the floor",
                                      plain_text(obst.layer[i]), obst.handle[i],
                                      float(obst.geoms[i].distance(shapely.Point(lx, ly))), x, y, obst.id_name))


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
        out.append(("headings it fits at", headings_text(f.heading_ranges_deg)))
    return out


def headings_text(ranges: Any) -> str:
    """Heading ranges in the findings' own words ("-90° (aligned only)"): a range narrower than a
    wall direction's guard cell is that one heading (its edges are an artefact of the slicing)."""
    shown = []
    for a, b in ranges:
        a, b = float(a), float(b)
        if (b - a) % 360.0 < NARROW_RANGE_DEG:
            h = round((0.5 * (a + a + (b - a) % 360.0) + 180.0) % 360.0 - 180.0, 2)
            a = b = h
        shown.append((a, b))
    return format_heading_ranges(shown)


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
                 ctx: RemedyContext | None = None, obstacles: Any = None, only: Any = None) -> list[Sheet]:
    """The sheets of all findings, in report order (the numbers of the findings table); ``only``:
    a collection of some of ``result.findings`` to build the sheets of (the others keep their numbers)."""
    ctx = ctx or RemedyContext(result)
    obst = obstacles or _Obstacles(result.plan)
    sheets = []
    cuts = getattr(result, "cuts", {}) or {}
    chosen = None if only is None else {id(f) for f in only}
    for number, f in numbered_findings(result.findings):
        if chosen is not None and id(f) not in chosen:
            continue
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


def needed_width(vehicle: Any) -> float:
    """Smallest width of the vehicle's footprint (outline plus margin), metres."""
    return min_width(vehicle.footprint)
