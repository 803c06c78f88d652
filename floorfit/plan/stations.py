"""Stations: the named places a vehicle must serve, and checks that they make sense on a plan.

Stations are in the drawing frame (metres, headings in degrees counter-clockwise from +x).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import shapely
from shapely.geometry import Point

from floorfit.errors import SiteError

__all__ = ["Station", "validate_stations", "outside_drawing", "likely_unit_hint"]


@dataclass(frozen=True)
class Station:
    """A place the vehicle must serve. Drawing frame, metres; heading in degrees CCW from +x or None."""

    name: str
    x: float
    y: float
    heading_deg: float | None = None
    heading_tolerance_deg: float = 5.0

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "x": self.x, "y": self.y, "heading_deg": self.heading_deg,
                "heading_tolerance_deg": self.heading_tolerance_deg}


#: Units a pose or station is most often given in by mistake, with metres per unit.
_LIKELY_UNITS = (("millimetres", 0.001), ("centimetres", 0.01), ("inches", 0.0254), ("feet", 0.3048))


def likely_unit_hint(plan, x: float, y: float) -> str:
    """``"; if these are millimetres: (6.50, 11.00) m"`` when reading (x, y) in another unit puts it
    inside the drawing's extent, else ``""``."""
    x0, y0, x1, y1 = plan.extent_m
    for name, f in _LIKELY_UNITS:
        if x0 <= x * f <= x1 and y0 <= y * f <= y1:
            return f"; if these are {name}: ({x * f:.2f}, {y * f:.2f}) m"
    return ""


def outside_drawing(plan, x: float, y: float, pad_m: float) -> str | None:
    """A one-line message when drawing-frame (x, y) lies more than ``pad_m`` outside the drawing's
    extent (with the likely unit when another unit would put it inside), else None."""
    x0, y0, x1, y1 = plan.extent_m
    if x0 - pad_m <= x <= x1 + pad_m and y0 - pad_m <= y <= y1 + pad_m:
        return None
    return (f"({x:g}, {y:g}) m lies outside the drawing (extent {x0:.1f}..{x1:.1f} × {y0:.1f}..{y1:.1f} m); "
            f"positions are in metres in the drawing frame{likely_unit_hint(plan, x, y)}")


def validate_stations(plan, stations: list[Station], source: str | None, *, inside_ok: bool = False) -> None:
    """Refuse duplicate names, non-finite or far-off coordinates and (unless ``inside_ok``, as
    when comparing layouts, where a station the new layout covers is a lost station) stations
    inside an obstacle."""
    names = set()
    x0, y0, x1, y1 = plan.extent_m
    pad = max(x1 - x0, y1 - y0) * 0.5 + 5.0
    solids = plan.solids
    tree = shapely.STRtree(solids) if len(solids) else None
    for s in stations:
        where = f"stations.{s.name}"
        if s.name in names:
            raise SiteError(f"station '{s.name}' is given twice", source, where)
        names.add(s.name)
        if not all(math.isfinite(v) for v in (s.x, s.y)):
            raise SiteError("station coordinates must be finite numbers", source, where)
        if not (x0 - pad <= s.x <= x1 + pad and y0 - pad <= s.y <= y1 + pad):
            raise SiteError(f"station at ({s.x:g}, {s.y:g}) m lies far outside the drawing "
                            f"(extent {x0:.1f}..{x1:.1f} × {y0:.1f}..{y1:.1f} m); stations are in metres "
                            f"in the drawing frame{likely_unit_hint(plan, s.x, s.y)}", source, where)
        if tree is not None and not inside_ok:
            lx, ly = plan.to_local(s.x, s.y)
            hit = tree.query(Point(lx, ly), predicate="within")
            if len(hit):
                raise SiteError(f"station at ({s.x:g}, {s.y:g}) m lies inside an obstacle", source, where)
