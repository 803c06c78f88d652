"""Vehicles: footprint outline, safety margin and motion mode, read from TOML.

Vehicle frame: +x forward, +y left, origin at the *reference point* the pose refers to
(for a differential base the midpoint of the drive axle, its rotation centre; for a
car-like base the rear-axle centre). All lengths in metres.

Vehicle file (TOML)::

    name = "tote robot"
    [footprint]
    outline = [[0.55, -0.31], [0.55, 0.31], [-0.35, 0.31], [-0.35, -0.31]]
    margin = 0.05            # safety margin added all round, metres (default 0)
    [motion]
    mode = "differential"    # "omni", "differential", "car" or "fixed"

Rectangle shorthand instead of ``outline``: ``width``, ``length`` and
``reference_to_front`` (distance from the reference point forward to the front edge;
default ``length / 2``, the centre) and ``reference_to_left`` (to the left edge; default
``width / 2``).

``height`` (metres above the floor, in ``[footprint]``) makes the check height-aware: an
obstacle whose bottom is at or above it (a table top, a conveyor, a door header) does
not count. Without it the vehicle is treated as infinitely tall (every obstacle counts).

The outline can also come from a file, relative to the vehicle file: ``outline_dxf =
"robot.dxf"`` (a closed polyline; ``outline_layer``, ``outline_block`` and
``outline_units`` choose it) or ``factsheet = "agv.json"`` (a VDA 5050 factsheet: its 2-D
envelope, and its maximum height when ``height`` is not given).

Named outline states: a ``[loaded]`` table with any of the ``[footprint]`` keys describes
the vehicle with its load (a longer outline, a larger margin, a taller mast); choose it
with ``load_vehicle(path, state="loaded")`` (``--loaded`` on the command line).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import shapely
from shapely.geometry import Polygon

from floorfit.errors import VehicleError
from floorfit.tomlcheck import check_keys, get_bool, get_number, get_points, get_string, read_toml

__all__ = ["Vehicle", "load_vehicle", "vehicle_from_table", "rectangle_vehicle", "vehicle_from_outline", "MOTION_MODES",
           "PLAUSIBLE_SIZE_M"]

MOTION_MODES = ("omni", "differential", "car", "fixed")

#: A footprint whose largest dimension falls outside this range (metres) is refused as
#: a probable unit mistake (a 700 m robot was given in millimetres).
PLAUSIBLE_SIZE_M = (0.05, 30.0)


@dataclass(frozen=True)
class Vehicle:
    """A rigid vehicle. ``outline``: shapely Polygon in the vehicle frame, metres, without margin.

    ``footprint`` is the outline grown by ``margin_m`` all round with mitred corners, so
    that every point within ``margin_m`` of the outline is inside it (a sound envelope).
    """

    name: str
    outline: Polygon
    margin_m: float = 0.0
    mode: str = "omni"
    reverse: bool = True
    min_turn_radius_m: float | None = None
    fixed_heading_deg: float | None = None
    source: str | None = None
    height_m: float | None = None
    state: str = "default"

    @property
    def footprint(self) -> Polygon:
        """Outline plus margin (mitre joins contain the round offset), metres, vehicle frame."""
        if self.margin_m <= 0:
            return self.outline
        return self.outline.buffer(self.margin_m, join_style="mitre", mitre_limit=10.0)

    @property
    def radius_m(self) -> float:
        """Largest distance from the reference point to the footprint, metres."""
        xy = shapely.get_coordinates(self.footprint)
        return float(np.max(np.hypot(xy[:, 0], xy[:, 1])))

    @property
    def length_m(self) -> float:
        """Extent of the outline along +x (without margin), metres."""
        x0, _, x1, _ = self.outline.bounds
        return x1 - x0

    @property
    def width_m(self) -> float:
        """Extent of the outline along +y (without margin), metres."""
        _, y0, _, y1 = self.outline.bounds
        return y1 - y0

    def scaled(self, factor: float) -> Vehicle:
        """The same vehicle with the outline scaled about the reference point (margin unchanged)."""
        return replace(self, outline=shapely.affinity.scale(self.outline, factor, factor, origin=(0, 0)))

    def with_width(self, width_m: float) -> Vehicle:
        """The outline stretched along y about the axis of its bounds' centre to a new width."""
        _, y0, _, y1 = self.outline.bounds
        cy = 0.5 * (y0 + y1)
        return replace(self, outline=shapely.affinity.scale(self.outline, 1.0, width_m / (y1 - y0), origin=(0, cy)))

    def with_length(self, length_m: float) -> Vehicle:
        """The outline stretched along x about the reference point to a new length."""
        return replace(self, outline=shapely.affinity.scale(self.outline, length_m / self.length_m, 1.0,
                                                           origin=(0, 0)))

    def describe(self) -> dict:
        """A JSON-ready summary (metres)."""
        return {"name": self.name, "mode": self.mode, "length_m": round(self.length_m, 4),
                "width_m": round(self.width_m, 4), "margin_m": self.margin_m,
                "radius_m": round(self.radius_m, 4), "reverse": self.reverse,
                "min_turn_radius_m": self.min_turn_radius_m, "height_m": self.height_m, "state": self.state,
                "outline": [[round(x, 6), round(y, 6)] for x, y in self.outline.exterior.coords[:-1]]}


def rectangle_vehicle(length: float, width: float, *, reference_to_front: float | None = None,
                      reference_to_left: float | None = None, name: str = "rectangle",
                      margin: float = 0.0, mode: str = "omni", **kw) -> Vehicle:
    """A rectangular vehicle ``length`` × ``width`` metres.

    ``reference_to_front``: distance from the reference point to the front edge (default
    the centre, ``length / 2``); ``reference_to_left`` likewise to the left edge.
    """
    front = length / 2 if reference_to_front is None else reference_to_front
    left = width / 2 if reference_to_left is None else reference_to_left
    pts = [(front, left - width), (front, left), (front - length, left), (front - length, left - width)]
    return vehicle_from_outline(pts, name=name, margin=margin, mode=mode, **kw)


def vehicle_from_outline(points, *, name: str = "vehicle", margin: float = 0.0, mode: str = "omni",
                         source: str | None = None, where: str = "footprint.outline", **kw) -> Vehicle:
    """Validate an outline (vehicle frame, metres) and build a :class:`Vehicle`."""
    outline = _validated_outline(points, source, where)
    if mode not in MOTION_MODES:
        raise VehicleError(f"unknown motion mode '{mode}' (one of {', '.join(MOTION_MODES)})", source, "motion.mode")
    if margin < 0 or not math.isfinite(margin):
        raise VehicleError(f"margin must be a finite number ≥ 0, got {margin}", source, "footprint.margin")
    return Vehicle(name=name, outline=outline, margin_m=float(margin), mode=mode, source=source, **kw)


def _validated_outline(points, source, where) -> Polygon:
    pts = [(float(x), float(y)) for x, y in points]
    if len(pts) >= 2 and pts[0] == pts[-1]:
        pts = pts[:-1]
    if len(pts) < 3:
        raise VehicleError(f"outline needs at least 3 points, got {len(pts)}", source, where)
    if not all(math.isfinite(v) for p in pts for v in p):
        raise VehicleError("outline has a non-finite coordinate", source, where)
    poly = Polygon(pts)
    centred = np.asarray(pts) - np.mean(pts, axis=0)
    if np.linalg.matrix_rank(centred, tol=1e-9) < 2:
        raise VehicleError("outline has zero area (points are collinear or repeated)", source, where)
    if not poly.is_valid:
        reason = shapely.is_valid_reason(poly)
        raise VehicleError(f"outline is not a simple polygon ({reason}); list the corners in order "
                           f"around the vehicle", source, where)
    if poly.area <= 1e-9:
        raise VehicleError("outline has zero area (points are collinear or repeated)", source, where)
    x0, y0, x1, y1 = poly.bounds
    size = max(x1 - x0, y1 - y0)
    lo, hi = PLAUSIBLE_SIZE_M
    if size > hi:
        raise VehicleError(f"outline is {size:g} m across, which is not a plausible vehicle; vehicle files "
                           f"are in metres (was it given in millimetres?)", source, where)
    if size < lo:
        raise VehicleError(f"outline is only {size:g} m across, which is not a plausible vehicle; vehicle "
                           f"files are in metres", source, where)
    dist = poly.distance(shapely.Point(0, 0))
    if dist > size:
        raise VehicleError(f"the reference point (0, 0) lies {dist:.3g} m outside an outline only {size:.3g} m "
                           f"across; outline coordinates are relative to the reference point", source, where)
    if not poly.exterior.is_ccw:
        poly = shapely.geometry.polygon.orient(poly, 1.0)
    return poly


_TOP_KEYS = ("name", "footprint", "motion", "loaded")
_FOOTPRINT_KEYS = ("outline", "width", "length", "reference_to_front", "reference_to_left", "margin", "height",
                   "outline_dxf", "outline_layer", "outline_block", "outline_units", "factsheet")
_FILE_KEYS = ("outline_dxf", "factsheet")
STATES = ("default", "loaded")
_MOTION_KEYS = ("mode", "reverse", "min_turn_radius", "heading")


def load_vehicle(path: str | Path, state: str = "default") -> Vehicle:
    """Read and validate a vehicle TOML file. Raises :class:`VehicleError` (file, key, problem).

    ``state="loaded"`` applies the file's ``[loaded]`` table over ``[footprint]``.
    """
    return vehicle_from_table(read_toml(path, VehicleError), str(path), state=state)


# validates every key of the vehicle table in order (footprint, loaded, motion, outline source), one error per key
def vehicle_from_table(data: dict, src: str, *, state: str = "default", extra_keys: tuple[str, ...] = (),  # noqa: C901
                       default_mode: str = "omni") -> Vehicle:
    """Validate an already parsed vehicle table (``name``, ``[footprint]``, ``[motion]``, ``[loaded]``).

    ``extra_keys`` are further top-level tables a caller reads itself (a train's ``[cart]``).
    """
    check_keys(data, _TOP_KEYS + tuple(extra_keys), src, "", VehicleError)
    if state not in STATES:
        raise VehicleError(f"unknown vehicle state '{state}' (one of {', '.join(STATES)})", src)
    name = get_string(data, "name", src, "", VehicleError, default=Path(src).stem)
    fp = data.get("footprint")
    if not isinstance(fp, dict):
        raise VehicleError("missing [footprint] table (outline, or width and length)", src, "footprint")
    check_keys(fp, _FOOTPRINT_KEYS, src, "footprint.", VehicleError)
    prefix = "footprint."
    if "loaded" in data:
        loaded = data["loaded"]
        if not isinstance(loaded, dict):
            raise VehicleError("[loaded] must be a table of footprint keys", src, "loaded")
        check_keys(loaded, _FOOTPRINT_KEYS, src, "loaded.", VehicleError)
        if state == "loaded":
            rect_keys = ("width", "length", "reference_to_front", "reference_to_left")
            if "outline" in loaded:          # a loaded outline replaces the rectangle
                fp = {k: v for k, v in fp.items() if k not in rect_keys}
            elif any(k in loaded for k in rect_keys):   # rectangle keys replace an outline
                fp = {k: v for k, v in fp.items() if k != "outline"}
            fp = {**fp, **loaded}
            prefix = "loaded."
            name = f"{name} (loaded)"
    elif state == "loaded":
        raise VehicleError("no [loaded] table in this vehicle file", src, "loaded")
    margin = get_number(fp, "margin", src, prefix, VehicleError, default=0.0, minimum=0.0)
    height = get_number(fp, "height", src, prefix, VehicleError, minimum=0.01, maximum=30.0)
    motion = data.get("motion", {})
    if not isinstance(motion, dict):
        raise VehicleError("[motion] must be a table", src, "motion")
    check_keys(motion, _MOTION_KEYS, src, "motion.", VehicleError)
    mode = get_string(motion, "mode", src, "motion.", VehicleError, default=default_mode, choices=MOTION_MODES)
    reverse = get_bool(motion, "reverse", src, "motion.", VehicleError, default=True)
    radius = get_number(motion, "min_turn_radius", src, "motion.", VehicleError, minimum=0.0)
    heading = get_number(motion, "heading", src, "motion.", VehicleError, minimum=-360.0, maximum=360.0)
    if mode == "car" and (radius is None or radius <= 0):
        raise VehicleError("a car-like vehicle needs min_turn_radius above 0 (metres, at the reference point)",
                           src, "motion.min_turn_radius")
    extra = dict(reverse=reverse, min_turn_radius_m=radius, fixed_heading_deg=heading, height_m=height,
                 state=state)
    given = [k for k in ("outline", "outline_dxf", "factsheet") if k in fp]
    if len(given) > 1:
        raise VehicleError(f"give one of outline, outline_dxf or factsheet, not {' and '.join(given)}", src,
                           f"{prefix}{given[1]}")
    if "outline_dxf" in fp or "factsheet" in fp:
        for k in ("width", "length", "reference_to_front", "reference_to_left"):
            if k in fp:
                raise VehicleError(f"an outline file and the rectangle (width, length) exclude each other ('{k}')",
                                   src, f"{prefix}{k}")
        pts, file_height = _outline_from_file(fp, src, prefix, state)
        if extra["height_m"] is None and file_height is not None:
            extra["height_m"] = file_height
        return vehicle_from_outline(pts, name=name, margin=margin, mode=mode, source=src,
                                    where=f"{prefix}outline", **extra)
    for k in ("outline_layer", "outline_block", "outline_units"):
        if k in fp:
            raise VehicleError(f"'{k}' only applies with outline_dxf", src, f"{prefix}{k}")
    if "outline" in fp:
        for k in ("width", "length", "reference_to_front", "reference_to_left"):
            if k in fp:
                raise VehicleError(f"give either outline or the rectangle (width, length), not both ('{k}')",
                                   src, f"{prefix}{k}")
        pts = get_points(fp, "outline", src, prefix, VehicleError)
        return vehicle_from_outline(pts, name=name, margin=margin, mode=mode, source=src,
                                    where=f"{prefix}outline", **extra)
    width = get_number(fp, "width", src, prefix, VehicleError, required=True, minimum=0.0)
    length = get_number(fp, "length", src, prefix, VehicleError, required=True, minimum=0.0)
    front = get_number(fp, "reference_to_front", src, prefix, VehicleError)
    left = get_number(fp, "reference_to_left", src, prefix, VehicleError)
    front = length / 2 if front is None else front
    left = width / 2 if left is None else left
    pts = [(front, left - width), (front, left), (front - length, left), (front - length, left - width)]
    return vehicle_from_outline(pts, name=name, margin=margin, mode=mode, source=src,
                                where=prefix.rstrip("."), **extra)


def _outline_from_file(fp: dict, src: str, prefix: str, state: str):
    """Outline points (metres) and height (or None) from an outline DXF or a VDA 5050 factsheet."""
    base = Path(src).parent
    if "outline_dxf" in fp:
        from floorfit.plan.dxf.outline import outline_from_dxf
        name = get_string(fp, "outline_dxf", src, prefix, VehicleError)
        pts = outline_from_dxf(base / name, layer=get_string(fp, "outline_layer", src, prefix, VehicleError),
                               block=get_string(fp, "outline_block", src, prefix, VehicleError),
                               units=get_string(fp, "outline_units", src, prefix, VehicleError))
        return pts, None
    from floorfit.vehicles.factsheet import outline_from_factsheet
    name = get_string(fp, "factsheet", src, prefix, VehicleError)
    sheet = outline_from_factsheet(base / name)
    pts = sheet.get("loaded_outline") if state == "loaded" and sheet.get("loaded_outline") else sheet["outline"]
    return pts, sheet.get("height_m")
