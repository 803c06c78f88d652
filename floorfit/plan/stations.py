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

__all__ = ["Station", "validate_stations"]


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


def validate_stations(plan, stations: list[Station], source: str | None) -> None:
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
                            f"in the drawing frame", source, where)
        if tree is not None:
            lx, ly = plan.to_local(s.x, s.y)
            hit = tree.query(Point(lx, ly), predicate="within")
            if len(hit):
                raise SiteError(f"station at ({s.x:g}, {s.y:g}) m lies inside an obstacle", source, where)
