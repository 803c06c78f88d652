"""``overlay.dxf``: the findings as CAD linework that lines up with the original drawing.

Everything is written in the drawing's **own units and frame** (metres converted back
with ``plan.metres_per_unit`` after adding ``plan.origin``), with ``$INSUNITS`` set to
match, so the overlay can be attached as an external reference (or inserted) at 0,0
with scale 1 over the drawing it was made from. The input drawing is never opened.

Layers follow the AIA/NCS field pattern (discipline prefix, major group, minor group),
with the prefix ``FF`` for floorfit; see :data:`LAYERS` and docs/report.md.
"""

from __future__ import annotations

import io
import math
from typing import Any

import ezdxf
import numpy as np
import shapely
from ezdxf.enums import TextEntityAlignment
from ezdxf.units import METER_FACTOR
from ezdxf.units import decode as unit_symbol

from floorfit import __version__
from floorfit.errors import InputError
from floorfit.report.geometry import parts
from floorfit.report.kinds import KIND_STYLES, kind_style, numbered_findings, plain_text

__all__ = ["LAYERS", "TRAFFIC_LAYERS", "FINDING_LAYERS", "finding_layer", "geometry_layer", "insunits_for",
           "overlay_dxf"]

#: Fixed layers: name → (AutoCAD colour index, description).
LAYERS: dict[str, tuple[int, str]] = {
    "FF-STAN-SYMB": (7, "floorfit: station symbols (circle, cross, heading line)"),
    "FF-STAN-IDEN": (7, "floorfit: station names"),
    "FF-FREE-OTLN": (3, "floorfit: where the reference point can be at some heading"),
    "FF-FREE-HDNG": (3, "floorfit: free space of the reference point at one representative heading"),
    "FF-TURN-OTLN": (4, "floorfit: where the vehicle can reverse its heading"),
    "FF-SPIN-OTLN": (5, "floorfit: where the vehicle can spin a full turn in place"),
    "FF-PATH-CNTR": (5, "floorfit: route centre lines (reference point path)"),
    "FF-PATH-SWPT": (4, "floorfit: swept area outlines of the routes"),
}

#: Layers of fleet traffic, present only when the check looked at it: name → (colour index, description).
TRAFFIC_LAYERS: dict[str, tuple[int, str]] = {
    "FF-TRAF-PASS": (94, "floorfit: passing places, where two vehicles can pass each other (floor strips)"),
    "FF-TRAF-SNGL": (130, "floorfit: single-lane stretches, where two vehicles cannot pass (floor strips)"),
    "FF-TRAF-WDTH": (130, "floorfit: narrowest cross-section of each single-lane stretch (the width it has)"),
    "FF-TRAF-IDEN": (7, "floorfit: passing place (P) and stretch (S) numbers"),
}

_TURN_LAYERS = {"fits": "FF-FREE-OTLN", "turns_around": "FF-TURN-OTLN", "rotates": "FF-SPIN-OTLN"}
_MARKER_RADIUS_M = (0.15, 1.5)   # metres: smallest and largest finding marker radius
_REL_UNIT_TOL = 1e-6             # relative tolerance when matching metres_per_unit to a unit


def finding_layer(kind: str) -> str:
    """Layer of the marker circle and number of a finding of ``kind`` (``FF-FIND-BLKD`` ...)."""
    return f"FF-FIND-{kind_style(kind).code}"


#: Kind → marker layer (unknown kinds go to ``FF-FIND-OTHR``).
FINDING_LAYERS: dict[str, str] = {kind: finding_layer(kind) for kind in KIND_STYLES}


def geometry_layer(kind: str, polygonal: bool) -> str:
    """Layer of a finding's geometry: areas ``FF-AREA-<code>``, lines ``FF-CUTS-<code>``."""
    return f"FF-{'AREA' if polygonal else 'CUTS'}-{kind_style(kind).code}"


def insunits_for(plan: Any) -> int:
    """The DXF ``$INSUNITS`` code whose length equals ``plan.metres_per_unit``.

    Matched by value (relative tolerance 1e-6) against ezdxf's unit table first, then
    by the unit name in ``plan.units``; 0 (unitless) when neither matches.
    """
    mpu = float(plan.metres_per_unit)
    for code, per_metre in enumerate(METER_FACTOR):
        if per_metre and abs(1.0 / per_metre - mpu) <= _REL_UNIT_TOL * mpu:
            return code
    name = str(plan.units).strip().lower()
    for code in range(len(METER_FACTOR)):
        if unit_symbol(code) == name:
            return code
    return 0


class _Frame:
    """Drawing-frame or local-frame metres → drawing units."""

    def __init__(self, plan: Any, source: str):
        self.mpu = float(plan.metres_per_unit)
        if not math.isfinite(self.mpu) or self.mpu <= 0:
            raise InputError(f"metres per drawing unit must be a positive number, not {self.mpu!r}",
                             source, "plan.metres_per_unit")
        self.origin = np.asarray(plan.origin, dtype=float)

    def drawing(self, x: float, y: float) -> tuple[float, float]:
        return x / self.mpu, y / self.mpu

    def local_coords(self, xy: np.ndarray) -> list[tuple[float, float]]:
        pts = (np.asarray(xy, dtype=float)[:, :2] + self.origin) / self.mpu
        return [(float(a), float(b)) for a, b in pts]

    def length(self, metres: float) -> float:
        return metres / self.mpu


_parts = parts


def _add_geometry(msp: Any, geom: Any, frame: _Frame, area_layer: str, line_layer: str) -> None:
    """Polygons as closed LWPOLYLINEs (exterior and holes) on ``area_layer``, lines as open
    LWPOLYLINEs on ``line_layer``; points are skipped (the marker shows them)."""
    for part in _parts(geom):
        if isinstance(part, shapely.Polygon):
            for ring in [part.exterior, *part.interiors]:
                pts = frame.local_coords(np.asarray(ring.coords))[:-1]
                if len(pts) >= 3:
                    msp.add_lwpolyline(pts, format="xy", close=True, dxfattribs={"layer": area_layer})
        elif isinstance(part, (shapely.LineString, shapely.LinearRing)):
            pts = frame.local_coords(np.asarray(part.coords))
            if len(pts) >= 2:
                msp.add_lwpolyline(pts, format="xy", close=isinstance(part, shapely.LinearRing),
                                   dxfattribs={"layer": line_layer})


def _marker_radius_m(plan: Any) -> float:
    x0, y0, x1, y1 = plan.extent_m
    diag = math.hypot(x1 - x0, y1 - y0)
    return min(max(0.012 * diag, _MARKER_RADIUS_M[0]), _MARKER_RADIUS_M[1])


def _dxf_text(value: Any) -> str:
    """One line of text safe for a DXF group value (no control characters)."""
    return plain_text(value).strip() or "?"


def _ensure_layer(doc: Any, name: str, colour: int, description: str) -> None:
    if name not in doc.layers:
        layer = doc.layers.add(name, color=colour)
        layer.description = description


def overlay_dxf(result: Any) -> bytes:
    """overlay.dxf (DXF R2013, UTF-8) as bytes, in the drawing's own units and frame."""
    plan = result.plan
    frame = _Frame(plan, str(plan.source))
    doc = ezdxf.new("R2013", units=insunits_for(plan), setup=True)
    doc.header.custom_vars.append("floorfit_overlay", f"floorfit {__version__}")
    doc.header.custom_vars.append("floorfit_source", _dxf_text(plan.source))
    msp = doc.modelspace()
    for name, (colour, description) in LAYERS.items():
        _ensure_layer(doc, name, colour, description)

    radius = frame.length(_marker_radius_m(plan))
    for number, f in numbered_findings(result.findings):
        style = kind_style(f.kind)
        title = style.title.lower()
        layer = finding_layer(f.kind)
        _ensure_layer(doc, layer, style.aci, f"floorfit: markers of {title} findings")
        centre = frame.drawing(f.x, f.y)
        msp.add_circle(centre, radius, dxfattribs={"layer": layer})
        text = msp.add_text(str(number), height=0.9 * radius, dxfattribs={"layer": layer})
        text.set_placement(centre, align=TextEntityAlignment.MIDDLE_CENTER)
        if f.geometry is not None:
            area, cut = geometry_layer(f.kind, True), geometry_layer(f.kind, False)
            _ensure_layer(doc, area, style.aci, f"floorfit: areas of {title} findings")
            _ensure_layer(doc, cut, style.aci, f"floorfit: lines of {title} findings")
            _add_geometry(msp, f.geometry, frame, area, cut)

    for s in result.stations:
        cx, cy = frame.drawing(s.x, s.y)
        msp.add_circle((cx, cy), radius, dxfattribs={"layer": "FF-STAN-SYMB"})
        msp.add_line((cx - radius, cy), (cx + radius, cy), dxfattribs={"layer": "FF-STAN-SYMB"})
        msp.add_line((cx, cy - radius), (cx, cy + radius), dxfattribs={"layer": "FF-STAN-SYMB"})
        if s.heading_deg is not None:
            h = math.radians(s.heading_deg)
            tip = (cx + 2.5 * radius * math.cos(h), cy + 2.5 * radius * math.sin(h))
            msp.add_line((cx, cy), tip, dxfattribs={"layer": "FF-STAN-SYMB"})
        name = msp.add_text(_dxf_text(s.name), height=0.9 * radius, dxfattribs={"layer": "FF-STAN-IDEN"})
        name.set_placement((cx + 1.3 * radius, cy + 1.3 * radius), align=TextEntityAlignment.BOTTOM_LEFT)

    for key, layer in _TURN_LAYERS.items():
        geom = result.turnability.get(key)
        if isinstance(geom, shapely.Geometry):
            _add_geometry(msp, geom, frame, layer, layer)

    rep = result.turnability.get("free_at_heading")
    if isinstance(rep, dict) and isinstance(rep.get("geometry"), shapely.Geometry):
        _add_geometry(msp, rep["geometry"], frame, "FF-FREE-HDNG", "FF-FREE-HDNG")

    for route in list(getattr(result, "routes", None) or []):
        pts = np.asarray(route.get("path", np.empty((0, 3))), dtype=float).reshape(-1, 3)
        if len(pts) >= 2:
            msp.add_lwpolyline([frame.drawing(x, y) for x, y, _ in pts], format="xy",
                               dxfattribs={"layer": "FF-PATH-CNTR"})
        if route.get("swept") is not None:
            _add_geometry(msp, route["swept"], frame, "FF-PATH-SWPT", "FF-PATH-SWPT")

    _add_traffic(doc, msp, getattr(result, "traffic", None), frame, radius)

    return _reproducible_bytes(doc)


def _reproducible_bytes(doc: Any) -> bytes:
    """The document as bytes that are the same on every run of the same input: ezdxf's fixed
    header dates and GUIDs instead of the clock and random ones, and the DXF classes in a fixed
    order (they are registered in an order that varies between runs)."""
    old = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True
    try:
        from ezdxf.document import CREATED_BY_EZDXF, ezdxf_marker_string

        doc.ezdxf_metadata()[CREATED_BY_EZDXF] = ezdxf_marker_string()     # set when the document was made
        doc.classes.add_required_classes(doc.dxfversion)
        doc.classes.classes = type(doc.classes.classes)(sorted(doc.classes.classes.items()))
        stream = io.StringIO()
        doc.write(stream)
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = old
    return doc.encode(stream.getvalue())


def _add_traffic(doc: Any, msp: Any, traffic: dict | None, frame: _Frame, radius: float) -> None:
    """Passing places and single-lane stretches (outlines, narrowest cross-sections, numbers); no
    layers at all when fleet traffic was not checked."""
    if traffic is None:
        return
    for name, (colour, description) in TRAFFIC_LAYERS.items():
        _ensure_layer(doc, name, colour, description)
    items = [("FF-TRAF-PASS", p) for p in traffic.get("passing_places", [])]
    items += [("FF-TRAF-SNGL", s) for s in traffic.get("stretches", [])]
    for layer, item in items:
        if item.get("geometry") is not None:
            _add_geometry(msp, item["geometry"], frame, layer, layer)
        text = msp.add_text(_dxf_text(item["id"]), height=0.9 * radius, dxfattribs={"layer": "FF-TRAF-IDEN"})
        text.set_placement(frame.drawing(item["x"], item["y"]), align=TextEntityAlignment.MIDDLE_CENTER)
    for s in traffic.get("stretches", []):
        ends = s.get("narrowest_local")
        if ends is not None:
            msp.add_lwpolyline(frame.local_coords(np.asarray(ends)), format="xy",
                               dxfattribs={"layer": "FF-TRAF-WDTH"})
